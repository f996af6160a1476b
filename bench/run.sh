#!/bin/sh
# Benchmarks of the event path and of offline rendering: figures to read,
# never a pass/fail test (README.md, "Benchmarks").
#
#   bench/run.sh [BUILD_DIR]     default build-bench (configured and built here)
#
# Prints one table:
#   - events per second of bench/engine_bench's fixed performance (10^6
#     MIDI messages as bytes through parser, engine and encoder), per method;
#   - instructions per note-on, note-off, CC and pitch bend, per method,
#     counted by valgrind's callgrind (the inclusive cost of engine_bench's
#     play_note_ons / play_note_offs / play_controls / play_wheel divided by
#     the messages each played; 2*10^5 events per run);
#   - wall and CPU time and the peak resident memory (max RSS) of
#     `latticed render` on generated Standard MIDI Files of about 1, 10 and
#     50 MB (tests/render_bench.py; RENDER_SIZES=1,10 to change), beside
#     the goal of twice the input plus 16 MB.
# Needs valgrind (apt-get install valgrind) for the instruction counts and
# python3 for the renders; each part says so and is skipped when they are
# missing.
set -eu
top=$(cd "$(dirname "$0")/.." && pwd)
build=${1:-$top/build-bench}
[ -f "$build/CMakeCache.txt" ] || cmake -S "$top" -B "$build" -DCMAKE_BUILD_TYPE=RelWithDebInfo >/dev/null
cmake --build "$build" -j2 --target engine_bench latticed >/dev/null
bench="$build/bench/engine_bench"
latticed="$build/latticed"
tmp=$(mktemp -d)
trap 'rm -rf "$tmp"' EXIT

# 1. speed, best of three runs
for i in 1 2 3; do
	"$bench" --events 1000000 >"$tmp/speed.$i"
done

best_speed() { # method -> best events/s of the three runs
	cat "$tmp"/speed.* | awk -v m="$1" '$1 == m { v = $6 + 0; if (v > best) best = v } END { printf "%.0f", best }'
}

# 2. instructions per message kind
have_callgrind=no
if command -v valgrind >/dev/null 2>&1 && command -v callgrind_annotate >/dev/null 2>&1; then
	have_callgrind=yes
	for m in bend mts mpe; do
		valgrind --tool=callgrind --callgrind-out-file="$tmp/cg.$m" \
			"$bench" --method "$m" --events 200000 >"$tmp/counts.$m" 2>/dev/null
		callgrind_annotate --inclusive=yes --auto=no "$tmp/cg.$m" >"$tmp/annotate.$m" 2>/dev/null
	done
fi

per_kind() { # method function count-field -> instructions per message
	ir=$(awk -v f="engine_bench.c:$2" 'index($0, f) { gsub(",", "", $1); print $1; exit }' "$tmp/annotate.$1")
	n=$(sed -n "s/.*(\([0-9]*\) note-on, \([0-9]*\) note-off, \([0-9]*\) CC, \([0-9]*\) bend).*/\\$3/p" "$tmp/counts.$1")
	if [ -n "$ir" ] && [ -n "$n" ] && [ "$n" -gt 0 ]; then
		echo $((ir / n))
	else
		echo "?"
	fi
}

# 3. time and memory of offline renders, 1, 10 and 50 MB files
render_figures=""
if ! "$latticed" render --help >/dev/null 2>&1; then
	render_figures="skipped: $latticed has no render command yet"
elif ! command -v python3 >/dev/null 2>&1; then
	render_figures="skipped: python3 is needed to generate the files and read the peak RSS"
else
	render_figures=$(python3 "$top/tests/render_bench.py" "$latticed" "$top" "$tmp/render" \
		--sizes "${RENDER_SIZES:-1,10,50}" | grep -v '^      ') ||
		render_figures="failed: a render exited non-zero (see above)"
fi

cpu=$(sed -n 's/^model name[[:space:]]*: //p' /proc/cpuinfo 2>/dev/null | head -1)
echo "machine: ${cpu:-unknown CPU}, $(nproc 2>/dev/null || echo '?') cores, $(uname -m), $(uname -sr)"
echo "engine_bench: 10^6 messages (chords, pedal, wheel, CCs) as bytes through parser -> engine -> encoder"
echo
printf '%-7s %14s %14s %14s %10s %10s\n' method "events/s" "Ir/note-on" "Ir/note-off" "Ir/CC" "Ir/bend"
for m in bend mts mpe; do
	if [ "$have_callgrind" = yes ]; then
		on=$(per_kind "$m" play_note_ons 1)
		off=$(per_kind "$m" play_note_offs 2)
		cc=$(per_kind "$m" play_controls 3)
		pb=$(per_kind "$m" play_wheel 4)
	else
		on="-" off="-" cc="-" pb="-"
	fi
	printf '%-7s %14s %14s %14s %10s %10s\n' "$m" "$(best_speed "$m")" "$on" "$off" "$cc" "$pb"
done
[ "$have_callgrind" = yes ] || echo "(instruction counts skipped: valgrind is not installed)"
echo
echo "latticed render --config config/latticed.conf (bend, mts, mpe) on generated files of ~1, 10 and 50 MB:"
echo "$render_figures"

# arm64 (the Raspberry Pi target) under qemu-user: events per second of the
# same performance, EMULATED (qemu translates every instruction, so this is
# no measure of a real Pi; it shows the arm64 build runs the same path).
# The cross build comes from `tests/run-all.sh cross`.
arm64_bench="$top/build-tests/cross-arm64/bench/engine_bench"
echo
if [ -x "$arm64_bench" ] && command -v qemu-aarch64 >/dev/null 2>&1; then
	echo "arm64 engine_bench under qemu-aarch64 (QEMU_CPU=cortex-a72), emulated, not a Pi:"
	QEMU_CPU=cortex-a72 qemu-aarch64 "$arm64_bench" | awk '{ printf "  %-6s %12s events/s (emulated)\n", $1, $6 }'
else
	echo "arm64: no cross build at $arm64_bench (run tests/run-all.sh cross first) or no qemu-aarch64"
fi
