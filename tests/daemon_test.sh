#!/bin/sh
# End-to-end test of `latticed run` through the raw backend (FIFOs and
# files, no MIDI system needed): the checks and their sources are in
# tests/daemon_e2e.py, which needs only Python's standard library.
# Usage: daemon_test.sh LATTICED_BINARY [PYTHON3]
set -eu
here=$(cd "$(dirname "$0")" && pwd)
exec "${2:-python3}" "$here/daemon_e2e.py" "$1"
