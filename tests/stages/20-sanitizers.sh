# The whole suite again under AddressSanitizer + UndefinedBehaviorSanitizer.
. "$LATTICED_SOURCE_DIR/tests/stages/lib.sh"
apt_install $BUILD_PACKAGES python3-mido libxml2-utils librsvg2-bin
export ASAN_OPTIONS=detect_leaks=1:abort_on_error=1
export UBSAN_OPTIONS=print_stacktrace=1:halt_on_error=1
cmake_build_test asan -DCMAKE_BUILD_TYPE=Debug -DLATTICED_SANITIZE=ON
