# The daemon's threads under ThreadSanitizer: the queue tests (two threads,
# 10^6 items), the output side the two MIDI threads hand between them
# (test_output_side), the end-to-end daemon tests (daemon, daemon_control), the
# subscription test (the event ring between the input and main threads) and the burst attacks
# (tests/attack/burst_*).  Any data race fails them.
. "$LATTICED_SOURCE_DIR/tests/stages/lib.sh"
apt_install $BUILD_PACKAGES
export TSAN_OPTIONS="halt_on_error=1 exitcode=66"
dir="$LATTICED_BUILD_ROOT/tsan"
cmake -S "$LATTICED_SOURCE_DIR" -B "$dir" -DLATTICED_WERROR=ON -DCMAKE_BUILD_TYPE=Debug \
	-DCMAKE_C_FLAGS="-fsanitize=thread -O1 -g" -DCMAKE_EXE_LINKER_FLAGS="-fsanitize=thread" >/dev/null
cmake --build "$dir" -j2
(cd "$dir" && ctest --output-on-failure -R 'test_spsc_queue|test_log_ring|test_event_ring|test_output_side|^daemon$|^daemon_control$|^subscription$|^burst_')
