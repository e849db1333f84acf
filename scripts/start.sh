#!/usr/bin/env bash
# Sets everything up and starts Earshot on SQLite with the demo data, at http://127.0.0.1:8000/
set -euo pipefail
cd "$(dirname "$0")/.."
scripts/bootstrap.sh runtime
mkdir -p var
.venv/bin/python manage.py migrate --no-input
echo
echo "Example checklist (rules/examples/orchard-probe.json):"
.venv/bin/python manage.py evaluate rules/examples/orchard-probe.json || true
exec .venv/bin/python manage.py runserver "${EARSHOT_ADDRESS:-127.0.0.1:8000}"
