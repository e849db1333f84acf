#!/usr/bin/env bash
# Sets everything up and starts Earshot on SQLite with the demo data, at http://127.0.0.1:8000/
set -euo pipefail
cd "$(dirname "$0")/.."
scripts/bootstrap.sh runtime
mkdir -p var
.venv/bin/python manage.py migrate --no-input
.venv/bin/python manage.py seed_demo
echo
echo "Open http://${EARSHOT_ADDRESS:-127.0.0.1:8000}/ and log in with one of the accounts above."
exec .venv/bin/python manage.py runserver "${EARSHOT_ADDRESS:-127.0.0.1:8000}"
