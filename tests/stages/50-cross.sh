# Cross builds for the Raspberry Pi: arm64 (64-bit Raspberry Pi OS =
# Debian 12 arm64) and armhf (32-bit ARMv7), each built warning-free with
# the toolchain files in cmake/, tested under qemu-user, and packaged.
#
# Uses Debian multiarch: the target's libraries are the ordinary :arm64 /
# :armhf packages, installed beside the amd64 ones (all Multi-Arch: same).
# PortMidi's -dev package is not multiarch, and installing it for a second
# architecture would remove the amd64 one, so only the runtime libportmidi0
# is installed for the target; its header is the same on every architecture.
# Installing the target copies may upgrade a few amd64 packages to the
# archive's version (dpkg keeps Multi-Arch: same copies at one version).
#
# Every test runs except those labelled host-only (see tests/CMakeLists.txt).
# qemu emulates a Pi 4 core (cortex-a72) for arm64 and a Pi 2 core
# (cortex-a7, the smallest ARMv7 the armhf build targets) for armhf.
. "$LATTICED_SOURCE_DIR/tests/stages/lib.sh"

TARGET_LIBS="libasound2-dev libinih-dev libjson-c-dev libcmocka-dev libsystemd-dev libportmidi0 libmicrohttpd-dev"

foreign=$(dpkg --print-foreign-architectures | tr "\n" " ")
added=""
for arch in arm64 armhf; do
	case " $foreign " in
	*" $arch "*) ;;
	*)
		${LATTICED_SUDO:-} dpkg --add-architecture "$arch"
		added="$added $arch"
		;;
	esac
done
if [ -n "$added" ]; then
	echo "added foreign architectures:$added"
	${LATTICED_SUDO:-} apt-get -o DPkg::Lock::Timeout=600 update -qq
fi

target_packages=""
for arch in arm64 armhf; do
	for p in $TARGET_LIBS; do
		target_packages="$target_packages $p:$arch"
	done
done
# libc6-dev-*-cross must be named: the cross gcc only recommends it.
# shellcheck disable=SC2086
apt_install $BUILD_PACKAGES python3-mido dpkg-dev file \
	gcc-aarch64-linux-gnu libc6-dev-arm64-cross \
	gcc-arm-linux-gnueabihf libc6-dev-armhf-cross \
	qemu-user $target_packages

export LATTICED_CTEST_ARGS="-LE host-only"
for arch in arm64 armhf; do
	case $arch in
	arm64) toolchain=aarch64-linux-gnu QEMU_CPU=cortex-a72 ;;
	armhf) toolchain=arm-linux-gnueabihf QEMU_CPU=cortex-a7 ;;
	esac
	export QEMU_CPU
	echo "--- $arch (qemu cpu $QEMU_CPU)"
	deb_build_test "cross-$arch" "$arch" \
		-DCMAKE_TOOLCHAIN_FILE="$LATTICED_SOURCE_DIR/cmake/$toolchain.cmake"
	# The package must hold a binary for the target, not for the host.
	deb="$(ls "$LATTICED_BUILD_ROOT/cross-$arch"/latticed_*_"$arch".deb)"
	dpkg-deb --fsys-tarfile "$deb" | tar -xO ./usr/bin/latticed >"$LATTICED_BUILD_ROOT/cross-$arch/latticed.packaged"
	file "$LATTICED_BUILD_ROOT/cross-$arch/latticed.packaged"
	want=$(case $arch in arm64) echo "ARM aarch64" ;; armhf) echo "ARM, EABI5" ;; esac)
	file "$LATTICED_BUILD_ROOT/cross-$arch/latticed.packaged" | grep -q "$want" || {
		echo "50-cross: the $arch package does not hold a $want binary" >&2
		exit 1
	}
	dpkg-deb -f "$deb" Architecture Depends
done
