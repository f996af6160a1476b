#!/bin/sh
# Golden check: what latticed prints and writes must stay byte for byte what
# it was when the files in tests/golden/expected/ were made, for every
# shipped, example, demo and golden config.  A change meant to keep
# behaviour (a refactor, a speed-up) passes unchanged; a change meant to
# alter output regenerates them with --update and says so in its commit.
#
#   check.sh LATTICED ENGINE_GOLDEN SOURCE_DIR WORK_DIR [--update]
#
# Compared: `latticed table` (text and --json, every preset, stderr too),
# `latticed render -v` of the demo and of a seeded performance
# (make_performance.py) for every output of every config (SHA-256 of the
# file and the summary lines), and engine_golden's stream fingerprints.
set -u
latticed=$1 engine_golden=$2 src=$3 work=$4 update=${5:-}
expected="$src/tests/golden/expected"
rm -rf "$work" && mkdir -p "$work/tables" || exit 1
cd "$src" || exit 1

configs="config/latticed.conf $(ls config/examples/*.conf config/demo/*.conf tests/golden/configs/*.conf)"
python3 tests/golden/make_performance.py "$work/performance.mid" || exit 1

for conf in $configs; do
	id=$(echo "$conf" | tr '/' '_' | sed 's/\.conf$//')
	presets="main $(sed -n 's/^\[preset \(.*\)\]$/\1/p' "$conf")"
	for p in $presets; do
		"$latticed" table --config "$conf" --preset "$p" >"$work/tables/$id.$p.txt" 2>&1
		echo "exit $?" >>"$work/tables/$id.$p.txt"
		"$latticed" table --config "$conf" --preset "$p" --json >"$work/tables/$id.$p.json" 2>&1
		echo "exit $?" >>"$work/tables/$id.$p.json"
	done
	outputs=$(sed -n 's/^\[output \(.*\)\]$/\1/p' "$conf")
	for o in $outputs; do
		for input in config/demo/hexany-demo.mid "$work/performance.mid"; do
			name=$(basename "$input")
			"$latticed" render -v --config "$conf" --output "$o" "$input" "$work/out.mid" \
				>"$work/log" 2>&1
			rc=$?
			sum=$(sha256sum <"$work/out.mid" | cut -d' ' -f1)
			echo "$conf [$o] $name: exit $rc sha256 $sum"
			sed "s|$work/||g" "$work/log"
			rm -f "$work/out.mid"
		done
	done
done >"$work/renders.txt"
"$engine_golden" >"$work/engine-streams.txt" || exit 1

if [ "$update" = "--update" ]; then
	rm -rf "$expected" && mkdir -p "$expected" &&
		cp -r "$work/tables" "$work/renders.txt" "$work/engine-streams.txt" "$expected/" &&
		echo "golden: updated $expected" && exit 0
	exit 1
fi
status=0
for f in renders.txt engine-streams.txt; do
	if ! diff -u "$expected/$f" "$work/$f"; then
		echo "golden: $f differs from tests/golden/expected/$f" >&2
		status=1
	fi
done
if ! diff -ru "$expected/tables" "$work/tables"; then
	echo "golden: the tables differ from tests/golden/expected/tables" >&2
	status=1
fi
[ $status -eq 0 ] && echo "golden: $(ls "$work/tables" | wc -l) tables, $(grep -c sha256 "$work/renders.txt") renders and $(wc -l <"$work/engine-streams.txt") engine streams as before"
exit $status
