#!/usr/bin/env bash
# Install everything the tests need, make sure PostgreSQL is up, run the whole suite.
set -euo pipefail
cd "$(dirname "$0")/.."
python3 -m venv .venv
.venv/bin/pip install --quiet --upgrade pip
.venv/bin/pip install --quiet -e '.[test]'

# Browser tests drive Debian's chromium (never `playwright install`).
if [ -d tests/e2e ] && [ ! -x /usr/bin/chromium ]; then
  apt-get update -qq && apt-get install -y -qq chromium >/dev/null
fi

# The PostgreSQL tests need the server at 127.0.0.1:5432 (started on these machines; start it if stopped).
if ! pg_isready -q -h 127.0.0.1 -p 5432 2>/dev/null; then
  pg_ctlcluster --skip-systemctl-redirect "$(ls /etc/postgresql | head -n 1)" main start || true
  for _ in $(seq 1 20); do pg_isready -q -h 127.0.0.1 -p 5432 && break; sleep 0.5; done
fi

exec .venv/bin/python -m pytest "$@"
