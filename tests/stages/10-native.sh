# Native build with -Werror and the whole cmocka suite.
# python3-mido: independent SMF cross-check (tests/smf_mido_check.py).
# libxml2-utils, librsvg2-bin: xmllint and rsvg-convert read the SVGs of
# latticed draw (tests/draw_check.py).
. "$LATTICED_SOURCE_DIR/tests/stages/lib.sh"
apt_install $BUILD_PACKAGES python3-mido libxml2-utils librsvg2-bin
cmake_build_test native -DCMAKE_BUILD_TYPE=RelWithDebInfo
