#!/usr/bin/env bash
# Test against the newest releases of every dependency (not the pinned constraints.txt): a fresh
# virtual environment in .venv-latest, then the README's test command. When it passes, refresh the
# pins with: .venv-latest/bin/python -m pip freeze --exclude-editable > constraints.txt (keep the header).
set -euo pipefail
cd "$(dirname "$0")/.."
PY=$(command -v python3.11 || command -v python3)
"$PY" -m venv .venv-latest
.venv-latest/bin/python -m pip install -q --upgrade pip
.venv-latest/bin/python -m pip install -q --upgrade -e '.[test]'
.venv-latest/bin/python -m pip freeze --exclude-editable
.venv-latest/bin/python -m pytest -q
