# Native build with -Werror and the whole cmocka suite.
# python3-mido: independent SMF cross-check (tests/smf_mido_check.py).
. "$LATTICED_SOURCE_DIR/tests/stages/lib.sh"
apt_install $BUILD_PACKAGES python3-mido
cmake_build_test native -DCMAKE_BUILD_TYPE=RelWithDebInfo
