#!/usr/bin/env bash
# Sets everything up and runs every test: lint, type check of the engine, the test suite, the contract samples.
set -euo pipefail
cd "$(dirname "$0")/.."
scripts/bootstrap.sh test
.venv/bin/ruff check .
.venv/bin/mypy
.venv/bin/python -m pytest "$@"
.venv/bin/python ../shared/contract/check.py
