#!/usr/bin/env bash
# Sets everything up and runs every test: lint, type check of the engine, a check that every model change
# has its migration, the test suite, the contract samples.
set -euo pipefail
cd "$(dirname "$0")/.."
scripts/bootstrap.sh test
.venv/bin/ruff check .
.venv/bin/mypy
.venv/bin/python manage.py makemigrations --check --dry-run
.venv/bin/python -m pytest "$@"
.venv/bin/python ../shared/contract/check.py
