"""The import contracts in pyproject.toml (import-linter): the apps depend one way, the engine on nothing of
the web app. `make test` runs `lint-imports`; these tests also show that a wrong-way import is caught."""

import os
import shutil
import subprocess
import sys
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]


def lint_imports(cwd: Path) -> subprocess.CompletedProcess:
    command = Path(sys.executable).with_name("lint-imports")
    return subprocess.run([str(command), "--no-cache", "--no-logo"], cwd=cwd, capture_output=True, text=True,
                          timeout=300, env={**os.environ, "PYTHONPATH": str(cwd)})


def copy_of_the_code(tmp_path: Path) -> Path:
    for package in ("projectapp", "rules"):
        shutil.copytree(ROOT / package, tmp_path / package, ignore=shutil.ignore_patterns("__pycache__", "static",
                                                                                          "fonts", "data"))
    shutil.copy(ROOT / "pyproject.toml", tmp_path / "pyproject.toml")
    return tmp_path


def test_the_code_keeps_every_import_contract():
    result = lint_imports(ROOT)
    assert result.returncode == 0, result.stdout + result.stderr
    assert "3 kept, 0 broken" in result.stdout


def test_designs_importing_reviews_breaks_the_layers(tmp_path):
    code = copy_of_the_code(tmp_path)
    models = code / "projectapp" / "designs" / "models.py"
    models.write_text(models.read_text() + "\nfrom projectapp.reviews import services  # noqa: E402\n")
    result = lint_imports(code)
    assert result.returncode == 1
    assert "The apps depend one way" in result.stdout and "BROKEN" in result.stdout
    assert "projectapp.designs.models -> projectapp.reviews.services" in result.stdout


def test_the_engine_importing_django_breaks_its_contract(tmp_path):
    code = copy_of_the_code(tmp_path)
    physics = code / "rules" / "physics.py"
    physics.write_text(physics.read_text() + "\nimport django  # noqa: E402\n")
    result = lint_imports(code)
    assert result.returncode == 1 and "rules.physics -> django" in result.stdout
