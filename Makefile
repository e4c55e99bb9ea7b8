# Two entry points for a fresh Debian machine with Python 3.11 (see README.md).
.PHONY: run test

run:
	bash scripts/run.sh

test:
	bash scripts/test.sh
