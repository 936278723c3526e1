#!/usr/bin/env bash
# Run the test suite (creates and fills .venv on first use). Extra arguments go to pytest,
# e.g. scripts/test.sh tests/test_cycle.py -q. The tests run on every core (pytest-xdist's -n auto;
# give -n 0 to run them in this process, e.g. for a debugger).
source "$(dirname "${BASH_SOURCE[0]}")/env.sh"
exec .venv/bin/python -m pytest -p no:cacheprovider -n auto "$@"
