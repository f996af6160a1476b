# Native build with -Werror and the whole cmocka suite.
. "$LATTICED_SOURCE_DIR/tests/stages/lib.sh"
apt_install $BUILD_PACKAGES
cmake_build_test native -DCMAKE_BUILD_TYPE=RelWithDebInfo
