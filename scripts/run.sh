#!/usr/bin/env bash
# Install the app into .venv, create the SQLite database, load the demo scenario, serve it.
set -euo pipefail
cd "$(dirname "$0")/.."
python3 -m venv .venv
.venv/bin/pip install --quiet --upgrade pip
.venv/bin/pip install --quiet -e .
.venv/bin/planner init
.venv/bin/planner demo
exec .venv/bin/planner serve --host "${PLANNER_HOST:-127.0.0.1}" --port "${PLANNER_PORT:-5000}"
