#!/bin/sh
# Hear the difference: the demo performance (config/demo/hexany-demo.mid)
# retuned by `latticed render` and as played (12-TET), both rendered to WAV
# with FluidSynth and the TimGM6mb General MIDI soundfont.
#
# Usage: scripts/demo.sh [OUTPUT_DIR]      (default: build/demo)
# Builds latticed when needed; installs fluidsynth and timgm6mb-soundfont
# from Debian when missing (through sudo unless run as root; set SUDO= to
# change that).  Prints the paths of the two WAV files.
set -eu

here=$(cd "$(dirname "$0")/.." && pwd)
build=${LATTICED_BUILD_DIR:-$here/build}
out=${1:-$build/demo}
soundfont=/usr/share/sounds/sf2/TimGM6mb.sf2
if [ "$(id -u)" -eq 0 ]; then
	SUDO=${SUDO-}
else
	SUDO=${SUDO-sudo}
fi

if [ ! -f "$build/CMakeCache.txt" ]; then
	cmake -S "$here" -B "$build" >/dev/null
fi
cmake --build "$build" -j2 --target latticed >/dev/null

missing=""
command -v fluidsynth >/dev/null 2>&1 || missing="$missing fluidsynth"
[ -f "$soundfont" ] || missing="$missing timgm6mb-soundfont"
if [ -n "$missing" ]; then
	echo "installing:$missing"
	# shellcheck disable=SC2086
	${SUDO} apt-get -o DPkg::Lock::Timeout=600 install -y --no-install-recommends $missing
fi

mkdir -p "$out"
demo=$here/config/demo/hexany-demo.mid
retuned=$out/hexany-demo-just.mid
"$build/latticed" render --config "$here/config/demo/fluidsynth.conf" "$demo" "$retuned"

# -ni: no shell, no MIDI input; -F: render the files to a WAV as fast as possible
fluidsynth -ni -q -g 0.5 -r 44100 -F "$out/hexany-demo-just.wav" "$soundfont" "$retuned"
fluidsynth -ni -q -g 0.5 -r 44100 -F "$out/hexany-demo-12tet.wav" "$soundfont" "$demo"

echo "just intonation (retuned by latticed): $out/hexany-demo-just.wav"
echo "12-TET (the same performance as played): $out/hexany-demo-12tet.wav"
