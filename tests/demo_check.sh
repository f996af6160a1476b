#!/bin/sh
# The committed demo (config/demo/hexany-demo.mid) is exactly what
# scripts/make-demo.py writes, and its config renders it without a warning
# (no steal, no clamped bend, nothing left hanging).
# Usage: demo_check.sh LATTICED_BINARY PYTHON3 SOURCE_DIR
set -u
bin=$1
python=$2
src=$3
tmp=$(mktemp -d)
trap 'rm -rf "$tmp"' EXIT
"$python" "$src/scripts/make-demo.py" --check "$src/config/demo/hexany-demo.mid" || exit 1
if ! "$bin" render --config "$src/config/demo/fluidsynth.conf" \
	"$src/config/demo/hexany-demo.mid" "$tmp/out.mid" 2>"$tmp/err"; then
	echo "FAIL: the demo does not render:" >&2
	cat "$tmp/err" >&2
	exit 1
fi
if [ -s "$tmp/err" ]; then
	echo "FAIL: the demo renders with warnings:" >&2
	cat "$tmp/err" >&2
	exit 1
fi
echo "demo_check: the demo is reproducible and renders cleanly"
