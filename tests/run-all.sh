#!/bin/sh
# Builds latticed and runs every test on a fresh Debian 12 machine.
#
# Installs the Debian packages each stage needs (as root, or through sudo
# when run by another user), then runs the stages in tests/stages/ in name order.  Each
# stage is a shell script that installs what it needs, builds into its own
# directory under $LATTICED_BUILD_ROOT (default: build-tests) and exits
# non-zero on failure.  All stages run even if one fails; the exit status
# is non-zero if any failed.
#
#   tests/run-all.sh              run every stage
#   tests/run-all.sh native sanitizers  run only stages whose name contains a word
set -u
top=$(cd "$(dirname "$0")/.." && pwd)
cd "$top" || exit 1
export LATTICED_SOURCE_DIR="$top"
export LATTICED_BUILD_ROOT="${LATTICED_BUILD_ROOT:-$top/build-tests}"
export DEBIAN_FRONTEND=noninteractive
mkdir -p "$LATTICED_BUILD_ROOT"

if [ "$(id -u)" -eq 0 ]; then
	LATTICED_SUDO=""
elif command -v sudo >/dev/null 2>&1; then
	LATTICED_SUDO="sudo"
else
	echo "run-all.sh: installing Debian packages needs root; run it as root or install sudo" >&2
	exit 1
fi
export LATTICED_SUDO

$LATTICED_SUDO apt-get -o DPkg::Lock::Timeout=600 update -qq || {
	echo "run-all.sh: apt-get update failed; check the network or /etc/apt/sources.list" >&2
	exit 1
}

failed=""
passed=""
start_all=$(date +%s)
for stage in tests/stages/[0-9]*.sh; do
	name=$(basename "$stage" .sh)
	if [ $# -gt 0 ]; then
		wanted=no
		for w in "$@"; do
			case "$name" in *"$w"*) wanted=yes ;; esac
		done
		[ "$wanted" = yes ] || continue
	fi
	echo "=== stage $name"
	start=$(date +%s)
	if sh "$stage"; then
		passed="$passed $name($(( $(date +%s) - start ))s)"
	else
		echo "=== stage $name FAILED" >&2
		failed="$failed $name"
	fi
done
echo "=== passed:${passed:- none}"
echo "=== total time: $(( $(date +%s) - start_all )) s"
if [ -n "$failed" ]; then
	echo "=== FAILED:$failed" >&2
	exit 1
fi
echo "=== all stages passed"
