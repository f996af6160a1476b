# Shared by the stage scripts: package installation and a CMake build+test.
# Sourced by the numbered stages, never run on its own.
set -eu
: "${LATTICED_SOURCE_DIR:?run through tests/run-all.sh}"
: "${LATTICED_BUILD_ROOT:?run through tests/run-all.sh}"

# apt_install PKG...: installs what is missing, waiting for other apt runs.
apt_install() {
	missing=""
	for p in "$@"; do
		dpkg-query -W -f='${Status}' "$p" 2>/dev/null | grep -q "install ok installed" ||
			missing="$missing $p"
	done
	[ -z "$missing" ] && return 0
	echo "installing:$missing"
	# shellcheck disable=SC2086
	${LATTICED_SUDO:-} env DEBIAN_FRONTEND=noninteractive apt-get -o DPkg::Lock::Timeout=600 install -y -qq --no-install-recommends $missing >/dev/null
}

BUILD_PACKAGES="build-essential cmake pkg-config python3 libinih-dev libjson-c-dev libcmocka-dev libsystemd-dev libasound2-dev libportmidi-dev libmicrohttpd-dev"

# cmake_build_test DIR [cmake args...]: configure, build warning-free, run ctest.
# Extra ctest arguments (e.g. -LE host-only) come from $LATTICED_CTEST_ARGS.
cmake_build_test() {
	dir="$LATTICED_BUILD_ROOT/$1"
	shift
	cmake -S "$LATTICED_SOURCE_DIR" -B "$dir" -DLATTICED_WERROR=ON "$@" >/dev/null
	cmake --build "$dir" -j2
	# shellcheck disable=SC2086
	(cd "$dir" && ctest --output-on-failure -j2 ${LATTICED_CTEST_ARGS:-})
}

# deb_build_test DIR DEBIAN_ARCH [cmake args...]: cmake_build_test configured
# the way the package is built (prefix /usr, Debian's hardening flags for
# that architecture), then cpack writes DIR/latticed_VERSION_ARCH.deb.
deb_build_test() {
	deb_dir=$1
	deb_arch=$2
	shift 2
	buildflags() {
		DEB_HOST_ARCH=$deb_arch DEB_BUILD_MAINT_OPTIONS=hardening=+all dpkg-buildflags --get "$1"
	}
	CFLAGS="$(buildflags CPPFLAGS) $(buildflags CFLAGS)" LDFLAGS="$(buildflags LDFLAGS)" \
		cmake_build_test "$deb_dir" -DCMAKE_INSTALL_PREFIX=/usr "$@"
	rm -f "$LATTICED_BUILD_ROOT/$deb_dir"/latticed_*.deb
	(cd "$LATTICED_BUILD_ROOT/$deb_dir" && cpack -G DEB >/dev/null)
	ls -l "$LATTICED_BUILD_ROOT/$deb_dir"/latticed_*_"$deb_arch".deb
}
