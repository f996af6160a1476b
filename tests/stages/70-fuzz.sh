# Fuzzing with libFuzzer (tests/fuzz/README.md): builds the three targets
# with clang (coverage + ASan + UBSan) and runs each for
# LATTICED_FUZZ_SECONDS (default 60) from its seed corpus.  Fails on any
# crash, leak, sanitizer report or broken promise; prints the executions
# each target reached.  New inputs go to the build tree, never to the
# committed corpus.
. "$LATTICED_SOURCE_DIR/tests/stages/lib.sh"
apt_install $BUILD_PACKAGES clang libclang-rt-14-dev
seconds="${LATTICED_FUZZ_SECONDS:-60}"
dir="$LATTICED_BUILD_ROOT/fuzz"
CC=clang cmake -S "$LATTICED_SOURCE_DIR" -B "$dir" -DCMAKE_C_COMPILER=clang -DLATTICED_WERROR=ON \
	-DLATTICED_FUZZ=ON -DLATTICED_TESTS=OFF -DCMAKE_BUILD_TYPE=RelWithDebInfo >/dev/null
cmake --build "$dir" -j2 --target fuzz_engine fuzz_smf fuzz_config

corpus="$LATTICED_SOURCE_DIR/tests/fuzz/corpus"
export ASAN_OPTIONS=detect_leaks=1:abort_on_error=1
export UBSAN_OPTIONS=print_stacktrace=1:halt_on_error=1
status=0
summary=""
for target in fuzz_engine fuzz_smf fuzz_config; do
	work="$dir/run/$target"
	rm -rf "$work"
	mkdir -p "$work/corpus" "$work/artifacts"
	seeds="$corpus/$target"
	max_len=4096
	if [ "$target" = fuzz_config ]; then
		seeds="$seeds $LATTICED_SOURCE_DIR/config"   # the shipped file and the examples
		max_len=16384
	fi
	echo "--- $target for ${seconds}s"
	# shellcheck disable=SC2086
	if "$dir/tests/fuzz/$target" -max_total_time="$seconds" -max_len=$max_len -timeout=25 \
		-rss_limit_mb=2048 -print_final_stats=1 -artifact_prefix="$work/artifacts/" \
		"$work/corpus" $seeds >"$work/log.txt" 2>&1; then
		result=ok
	else
		result=FAILED
		status=1
		sed -n '/ERROR\|fuzz_[a-z]*: /,$p' "$work/log.txt" | head -60
		for f in "$work"/artifacts/*; do
			[ -f "$f" ] && echo "input: $f ($(wc -c <"$f") bytes): $(od -An -tx1 -v "$f" | head -c 600)"
		done
	fi
	runs=$(sed -n 's/^stat::number_of_executed_units: *//p' "$work/log.txt" | tail -1)
	speed=$(sed -n 's/^stat::average_exec_per_sec: *//p' "$work/log.txt" | tail -1)
	cov=$(grep -o 'cov: [0-9]*' "$work/log.txt" | tail -1)
	echo "$target: $result, ${runs:-?} executions (${speed:-?}/s), $cov"
	summary="$summary
  $target: $result, ${runs:-?} executions in ${seconds}s, $cov"
done
echo "fuzz summary:$summary"
exit $status
