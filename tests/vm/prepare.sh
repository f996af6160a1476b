#!/bin/sh
# Prepares everything the VM tests need: the Debian packages that build and
# boot the test VM, and a Debian kernel with its sound modules in a cache.
#
# The kernel is Debian's own (the package the archive offers for
# linux-image-amd64), fetched with `apt-get download` and unpacked into the
# cache only; nothing is installed into the host's /boot.  From it we keep:
#   vmlinux   the uncompressed ELF kernel: qemu boots it directly (PVH), which
#             saves the ~5 s it takes to decompress the bzImage under TCG
#   modules/  the sound and virtio modules, decompressed (busybox modprobe
#             cannot read .ko.xz), with a modules.dep
# A second run with the same kernel version downloads nothing.
#
#   tests/vm/prepare.sh            install packages, fill the cache
#   LATTICED_VM_CACHE=DIR          cache folder (default $LATTICED_BUILD_ROOT/vm-cache,
#                                  or build-tests/vm-cache in the source tree)
#   LATTICED_SUDO=sudo             prefix for apt-get when not root
#   LATTICED_VM_NO_INSTALL=1       skip the package step (packages known present)
set -eu

top=$(cd "$(dirname "$0")/../.." && pwd)
cache="${LATTICED_VM_CACHE:-${LATTICED_BUILD_ROOT:-$top/build-tests}/vm-cache}"
say() { echo "vm-prepare: $*"; }
die() { echo "vm-prepare: error: $*" >&2; exit 1; }

# --- host packages ----------------------------------------------------------
# qemu-system-x86 runs the VM; busybox-static is the VM's whole userland;
# cpio packs the initramfs; xz-utils unpacks kernel and modules; kmod's depmod
# writes modules.dep; libasound2-dev and libportmidi-dev build the test clients;
# alsa-utils is not needed by the harness but puts aconnect/aseqdump at hand
# for debugging inside the VM.
packages="qemu-system-x86 busybox-static cpio xz-utils kmod binutils alsa-utils
libasound2-dev libportmidi-dev libasound2-data"
if [ "${LATTICED_VM_NO_INSTALL:-0}" != 1 ]; then
	missing=""
	for p in $packages; do
		dpkg-query -W -f='${Status}' "$p" 2>/dev/null | grep -q "install ok installed" ||
			missing="$missing $p"
	done
	if [ -n "$missing" ]; then
		say "installing:$missing"
		# shellcheck disable=SC2086
		${LATTICED_SUDO:-} env DEBIAN_FRONTEND=noninteractive \
			apt-get -o DPkg::Lock::Timeout=600 install -y -qq --no-install-recommends $missing >/dev/null ||
			die "apt-get install failed for:$missing"
	fi
fi
for tool in qemu-system-x86_64 cpio xz depmod; do
	command -v "$tool" >/dev/null 2>&1 || die "$tool not found after installing packages"
done
[ -x /bin/busybox ] && /bin/busybox --list 2>/dev/null | grep -qx modprobe ||
	die "/bin/busybox is missing or has no modprobe applet (package busybox-static)"

# --- which kernel -------------------------------------------------------------
# The candidate of linux-image-amd64 depends on exactly one linux-image-VER-amd64.
mkdir -p "$cache"
pkg=$(apt-cache depends linux-image-amd64 2>/dev/null |
	sed -n 's/^ *Depends: \(linux-image-[0-9][^ ]*-amd64\)$/\1/p' | head -n 1)
if [ -z "$pkg" ]; then
	if [ -f "$cache/kernel.env" ]; then
		say "apt-cache offers no linux-image-amd64; keeping the cached kernel"
		exit 0
	fi
	die "apt-cache knows no linux-image-amd64 (run 'apt-get update' first)"
fi
kver=${pkg#linux-image-}
kdir="$cache/linux-$kver"
if [ -f "$kdir/complete" ]; then
	say "kernel $kver cached in $kdir"
	printf 'LATTICED_VM_KVER=%s\n' "$kver" >"$cache/kernel.env.new"
	mv "$cache/kernel.env.new" "$cache/kernel.env"
	exit 0
fi

# --- fetch and unpack -------------------------------------------------------
say "fetching $pkg"
work="$cache/work.$$"
rm -rf "$work"
mkdir -p "$work"
trap 'rm -rf "$work"' EXIT
if ! (cd "$work" && apt-get download "$pkg" >/dev/null 2>"$work/download.err"); then
	cat "$work/download.err" >&2
	if [ -f "$cache/kernel.env" ]; then
		. "$cache/kernel.env"
		if [ -f "$cache/linux-$LATTICED_VM_KVER/complete" ]; then
			say "apt-get download $pkg failed; keeping the cached kernel $LATTICED_VM_KVER"
			exit 0
		fi
	fi
	die "apt-get download $pkg failed (is 'apt-get update' needed?)"
fi
deb=$(ls "$work"/*.deb)
say "unpacking $(basename "$deb")"
mkdir -p "$work/root"
# Only the kernel image and the module trees we use (the package holds ~400 MB).
mods="lib/modules/$kver/kernel"
dpkg-deb --fsys-tarfile "$deb" |
	tar -x -C "$work/root" --wildcards \
		"./boot/vmlinuz-$kver" \
		"./$mods/sound/soundcore.ko*" \
		"./$mods/sound/core/*" \
		"./$mods/sound/drivers/*" \
		"./$mods/drivers/virtio/*" \
		"./$mods/drivers/block/virtio_blk.ko*" \
		"./lib/modules/$kver/modules.builtin*" \
		"./lib/modules/$kver/modules.order"
rm -f "$deb"

# vmlinuz is a bzImage whose payload is one XZ stream: find its magic
# (FD 37 7A 58 5A 00) and unpack the stream to the ELF vmlinux.
vmlinuz="$work/root/boot/vmlinuz-$kver"
[ -f "$vmlinuz" ] || die "$pkg has no boot/vmlinuz-$kver"
found=""
for off in $(LC_ALL=C grep -obUaP '\xfd7zXZ\x00' "$vmlinuz" | cut -d: -f1); do
	if tail -c +$((off + 1)) "$vmlinuz" | xz -dc --single-stream >"$work/vmlinux" 2>/dev/null &&
		[ "$(head -c 4 "$work/vmlinux" | od -An -tx1 | tr -d ' ')" = 7f454c46 ]; then
		found=$off
		break
	fi
done
[ -n "$found" ] || die "no XZ-compressed ELF kernel inside $vmlinuz"

# Decompressed modules and their dependency list.
mroot="$work/modules"
mkdir -p "$mroot/lib/modules"
mv "$work/root/lib/modules/$kver" "$mroot/lib/modules/$kver"
find "$mroot" -name '*.ko.xz' -exec xz -d {} +
depmod -b "$mroot" "$kver" ||
	die "depmod failed for the modules of $kver"
for m in snd-seq-dummy snd-seq snd-seq-midi-event snd-virmidi snd-hrtimer; do
	grep -q "/$m.ko:" "$mroot/lib/modules/$kver/modules.dep" ||
		die "$pkg has no module $m (is it built in?)"
done

rm -rf "$kdir"
mkdir -p "$kdir"
mv "$work/vmlinux" "$kdir/vmlinux"
mv "$mroot" "$kdir/modules"
echo "$pkg" >"$kdir/complete"
printf 'LATTICED_VM_KVER=%s\n' "$kver" >"$cache/kernel.env"
# Older kernels are dropped: the archive no longer offers them anyway.
for old in "$cache"/linux-*; do
	[ "$old" = "$kdir" ] || rm -rf "$old"
done
say "kernel $kver ready in $kdir ($(du -sh "$kdir" | cut -f1))"
