# The live page in a real browser (tests/browser_check.py): Debian's
# Chromium, headless, driven by Selenium through chromium-driver, opens the
# page of `latticed view` attached to a raw-backend daemon: chords light
# exactly their tones and face and are named, released they go dark, the
# daemon killed and started again is shown gone and back; Firefox ESR
# (driven through its own Marionette protocol, Debian 12 has no
# geckodriver) lights and names the same chord.  Screenshots
# (portrait and landscape phone sizes, the daemon gone) go to
# $LATTICED_BUILD_ROOT/browser/artefacts; the figures printed (page latency
# over 200 notes, the daemon's MIDI latency with and without 10 pages open)
# are measurements, never pass/fail.  Chromium runs as root here, hence
# --no-sandbox; it gets a fresh profile and no network beyond loopback.
. "$LATTICED_SOURCE_DIR/tests/stages/lib.sh"
apt_install $BUILD_PACKAGES chromium chromium-driver python3-selenium firefox-esr
dir="$LATTICED_BUILD_ROOT/browser"
cmake -S "$LATTICED_SOURCE_DIR" -B "$dir" -DLATTICED_WERROR=ON -DCMAKE_BUILD_TYPE=RelWithDebInfo >/dev/null
cmake --build "$dir" -j2 --target latticed raw_latency
# Debian's python3, which has the selenium module
/usr/bin/python3 "$LATTICED_SOURCE_DIR/tests/browser_check.py" "$dir/latticed" "$dir/raw_latency" \
	"$dir/artefacts"
