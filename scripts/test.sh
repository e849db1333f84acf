#!/usr/bin/env bash
# Sets everything up and runs every test: lint, type check of the engine, the import contracts (the apps'
# layers, the engine's independence: pyproject.toml), a check that every model change has its migration, the
# test suite. It needs nothing beside the repository; the shared contract samples
# (../shared, on the team's machines) are run by CI, .ci/run, after this.
set -euo pipefail
cd "$(dirname "$0")/.."
scripts/bootstrap.sh test
# The browser tests drive Debian's Chromium. As root on a Debian-like machine, install it when missing;
# elsewhere they skip with a message saying how to get it (and CI, which sets CI, fails instead).
if [ ! -x /usr/bin/chromium ] && [ "$(id -u)" = 0 ] && command -v apt-get >/dev/null 2>&1; then
  apt-get update -qq && DEBIAN_FRONTEND=noninteractive apt-get install -y -qq --no-install-recommends chromium
fi
.venv/bin/ruff check .
.venv/bin/mypy
.venv/bin/lint-imports --no-cache --no-logo
.venv/bin/python manage.py makemigrations --check --dry-run
.venv/bin/python -m pytest "$@"
