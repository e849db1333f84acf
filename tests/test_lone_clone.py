"""A newcomer clones the repository alone: the README's test command must pass there, and the engine's tests
must run without Django. The shared contract samples live beside this repository only on the team's machines
(`../shared`), so CI (`.ci/run`) runs them, after `make test`."""

import re
import subprocess
import sys
from pathlib import Path

ROOT = Path(__file__).parents[1]


def _commands(path: Path) -> list[str]:
    """The script's lines that run something (comments and blank lines left out)."""
    return [line.strip() for line in path.read_text().splitlines() if line.strip() and not line.strip().startswith("#")]


def test_make_test_needs_nothing_beside_the_repository():
    for script in (ROOT / "Makefile", ROOT / "scripts" / "test.sh", ROOT / "scripts" / "bootstrap.sh"):
        outside = [line for line in _commands(script) if "../" in line]
        assert outside == [], f"{script.relative_to(ROOT)} reaches outside the repository: {outside}"


def test_ci_runs_the_shared_contract_samples_after_make_test_when_they_are_beside_it():
    lines = _commands(ROOT / ".ci" / "run")
    make_test = lines.index("make test")
    check = next(index for index, line in enumerate(lines) if "../shared/contract/check.py" in line)
    assert make_test < check
    guard = " ".join(lines[make_test:check + 1])
    assert re.search(r"-[de] \.\./shared", guard), "the samples run only when ../shared is there"


def test_the_engine_tests_run_without_django():
    result = subprocess.run([sys.executable, "-m", "pytest", "tests/rules/test_physics.py", "-p", "no:django", "-q",
                             "-p", "no:cacheprovider"], cwd=ROOT, capture_output=True, text=True, timeout=300)
    assert result.returncode == 0, result.stdout[-2000:] + result.stderr[-2000:]
    assert re.search(r"\d+ passed", result.stdout)
