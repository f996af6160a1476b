# Valgrind memcheck on the engine, config and SMF tests: zero errors and
# zero definite or indirect leaks (tests/CMakeLists.txt, LATTICED_VALGRIND_TESTS),
# and a planted leak that must fail under the same options.
. "$LATTICED_SOURCE_DIR/tests/stages/lib.sh"
apt_install $BUILD_PACKAGES valgrind
dir="$LATTICED_BUILD_ROOT/valgrind"
cmake -S "$LATTICED_SOURCE_DIR" -B "$dir" -DLATTICED_WERROR=ON -DLATTICED_VALGRIND_TESTS=ON \
	-DCMAKE_BUILD_TYPE=RelWithDebInfo >/dev/null
cmake --build "$dir" -j2
(cd "$dir" && ctest --output-on-failure -j2 -L valgrind)
