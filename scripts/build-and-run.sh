#!/bin/sh
# Builds latticed on a fresh Debian 12 / Raspberry Pi OS machine and starts
# the daemon on the shipped default configuration (config/latticed.conf).
#
# Installs the build dependencies (as root, or through sudo), builds into
# build/, then runs `latticed run` on the default config in the foreground:
# its log goes to the terminal, Ctrl-C stops it (every note is ended
# first).  Extra arguments run another command instead, e.g.:
#   scripts/build-and-run.sh table --json
#   scripts/build-and-run.sh run --backend null
set -eu
top=$(cd "$(dirname "$0")/.." && pwd)
cd "$top"

if [ "$(id -u)" -eq 0 ]; then
	sudo=""
elif command -v sudo >/dev/null 2>&1; then
	sudo="sudo"
else
	echo "build-and-run.sh: installing Debian packages needs root; run it as root or install sudo" >&2
	exit 1
fi
packages="build-essential cmake pkg-config libinih-dev libjson-c-dev libsystemd-dev libasound2-dev libportmidi-dev"
missing=""
for p in $packages; do
	dpkg-query -W -f='${Status}' "$p" 2>/dev/null | grep -q "install ok installed" || missing="$missing $p"
done
if [ -n "$missing" ]; then
	echo "installing:$missing"
	$sudo apt-get update -qq
	# shellcheck disable=SC2086
	$sudo env DEBIAN_FRONTEND=noninteractive apt-get install -y -qq --no-install-recommends $missing >/dev/null
fi

cmake -S . -B build -DLATTICED_TESTS=OFF >/dev/null
cmake --build build -j"$(nproc)" >/dev/null

if [ $# -eq 0 ]; then
	set -- run
	echo "starting latticed on config/latticed.conf; Ctrl-C stops it" >&2
fi
command=$1
shift
exec build/latticed "$command" --config config/latticed.conf "$@"
