# Live-MIDI tests against a real ALSA sequencer inside a qemu VM booting
# Debian's kernel (tests/vm/README.md).  The kernel is downloaded once into
# $LATTICED_VM_CACHE (default $LATTICED_BUILD_ROOT/vm-cache) and reused.
. "$LATTICED_SOURCE_DIR/tests/stages/lib.sh"
apt_install $BUILD_PACKAGES
export LATTICED_VM_CACHE="${LATTICED_VM_CACHE:-$LATTICED_BUILD_ROOT/vm-cache}"
sh "$LATTICED_SOURCE_DIR/tests/vm/prepare.sh"
dir="$LATTICED_BUILD_ROOT/vm"
cmake -S "$LATTICED_SOURCE_DIR" -B "$dir" -DLATTICED_WERROR=ON -DLATTICED_VM_TESTS=ON \
	-DCMAKE_BUILD_TYPE=RelWithDebInfo -DLATTICED_VM_CACHE="$LATTICED_VM_CACHE" >/dev/null
cmake --build "$dir" -j2
status=0
(cd "$dir" && ctest -L vm --output-on-failure -j2) || status=$?
# Benchmarks print figures, they do not pass or fail: show what the VM measured.
for f in "$dir"/tests/vm/*/out/latency*.txt; do
	[ -f "$f" ] || continue
	echo "--- $(basename "$(dirname "$(dirname "$f")")"): $(basename "$f" .txt)"
	cat "$f"
done
exit $status
