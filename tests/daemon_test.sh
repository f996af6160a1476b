#!/bin/sh
# End-to-end test of `latticed run` through the raw backend (FIFOs and
# files, no MIDI system needed): the checks and their sources are in
# tests/daemon_e2e.py, which needs only Python's standard library.
# Usage: daemon_test.sh LATTICED_BINARY PYTHON3 [--systemd]
# (--systemd: the binary was built with libsystemd; check its sd_notify messages)
set -eu
here=$(cd "$(dirname "$0")" && pwd)
bin=$1
python=$2
shift 2
exec "$python" "$here/daemon_e2e.py" "$bin" "$@"
