#!/usr/bin/env bash
# Creates (or refreshes) .venv with a Python >= 3.12 and the project's dependencies.
# Usage: scripts/bootstrap.sh [runtime|test]
set -euo pipefail
cd "$(dirname "$0")/.."
extras="${1:-runtime}"

python_ok() { "$1" -c 'import sys; sys.exit(0 if sys.version_info >= (3, 12) else 1)' 2>/dev/null; }

find_python() {
  local candidate
  for candidate in "${EARSHOT_PYTHON:-}" python3.13 python3.12 \
      "$(pyenv root 2>/dev/null)"/versions/3.13*/bin/python3 "$(pyenv root 2>/dev/null)"/versions/3.12*/bin/python3 \
      "$HOME"/.pyenv/versions/3.13*/bin/python3 "$HOME"/.pyenv/versions/3.12*/bin/python3 python3; do
    [ -n "$candidate" ] || continue
    if command -v "$candidate" >/dev/null 2>&1 && python_ok "$candidate"; then
      command -v "$candidate"
      return 0
    fi
  done
  return 1
}

if [ ! -x .venv/bin/python ] || ! python_ok .venv/bin/python; then
  if ! python=$(find_python); then
    echo "Earshot needs Python 3.12 or newer (Django 6.1 requires it), and none was found." >&2
    echo "Install one (for example 'pyenv install 3.12' or your system's python3.12 package)," >&2
    echo "or point EARSHOT_PYTHON at it, then run this again." >&2
    exit 1
  fi
  echo "Creating .venv with $python ($("$python" --version))"
  rm -rf .venv
  "$python" -m venv .venv
fi

stamp=".venv/.installed-$extras"
if [ ! -f "$stamp" ] || [ pyproject.toml -nt "$stamp" ]; then
  .venv/bin/python -m pip install --quiet --upgrade pip
  if [ "$extras" = "test" ]; then
    .venv/bin/python -m pip install --quiet -e ".[test]"
  else
    .venv/bin/python -m pip install --quiet -e .
  fi
  touch "$stamp"
fi
