#!/bin/sh
# Runs a command inside a small qemu VM that has a real ALSA sequencer.
#
# The host kernel may have no sound support at all, so the VM boots Debian's
# own kernel (prepared by tests/vm/prepare.sh) under TCG with an initramfs
# built here for each run: static busybox, the files given with --files and
# --add, the shared libraries those ELF files need, /usr/share/alsa, and the
# sound modules.  Its /init loads snd-seq-dummy first (so "Midi Through" is
# client 14), then snd-seq-midi-event, snd-hrtimer and snd-virmidi, checks
# /dev/snd/seq, runs COMMAND in /test and powers off.
#
#   run.sh [OPTIONS] -- COMMAND [ARG...]
#
#   --files DIR      copy DIR's contents into /test (repeatable; later wins)
#   --add FILE       copy one file into /test (repeatable)
#   --env NAME=VAL   set a variable for COMMAND (repeatable)
#   --out DIR        after COMMAND, copy the guest's /out folder to DIR on
#                    the host (through a raw virtio disk holding a tar file);
#                    what an earlier run left in DIR is removed first
#   --out-size MB    size of that disk (default 64)
#   --timeout S      whole run, boot to power-off (default 300)
#   --log-dir DIR    keep console.log (kernel console), payload.log (COMMAND's
#                    output) and the initramfs there; default: a temporary
#                    folder removed after a successful run
#   --smp N, --mem MB   VM size (default 2 vCPUs, 512 MB)
#   --quiet          do not echo COMMAND's output while it runs
#
# Inside, COMMAND runs with cwd /test, PATH=/test:/bin, HOME=/tmp, stdin
# /dev/null, stdout+stderr on the VM's second serial port (kept apart from
# kernel messages); LATTICED_VM_OUT=/out names the folder copied out by --out.
#
# Exit status: COMMAND's own; 124 when the run timed out; 125 when the VM
# could not be built or did not boot or COMMAND's end was never reported
# (the tail of the kernel console is printed then).
#
# Environment: LATTICED_VM_KERNEL_ARGS (added to the kernel command line),
# LATTICED_VM_CACHE (see prepare.sh), LATTICED_VM_ACCEL=tcg|kvm|auto
# (default auto: KVM only when the CPU shows vmx/svm and /dev/kvm opens, with
# a boot watchdog that falls back to TCG).
set -eu

top=$(cd "$(dirname "$0")/../.." && pwd)
cache="${LATTICED_VM_CACHE:-${LATTICED_BUILD_ROOT:-$top/build-tests}/vm-cache}"
prog="vm-run"
HARNESS_FAIL=125

die() {
	echo "$prog: error: $*" >&2
	exit $HARNESS_FAIL
}
usage() {
	echo "usage: run.sh [--files DIR] [--add FILE] [--env N=V] [--out DIR] [--timeout S] [--log-dir DIR] -- COMMAND [ARG...]" >&2
	exit 2
}
# Quotes one word for /bin/sh: 'it'\''s'.
shquote() {
	printf "'%s'" "$(printf '%s' "$1" | sed "s/'/'\\\\''/g")"
}

files=""
adds=""
envs=""
outdir=""
outsize=64
timeout=300
logdir=""
smp=2
mem=512
quiet=0
nl='
'
while [ $# -gt 0 ]; do
	case "$1" in
	--files) [ $# -ge 2 ] || usage; [ -d "$2" ] || die "--files $2: not a folder"; files="$files$2$nl"; shift 2 ;;
	--add) [ $# -ge 2 ] || usage; [ -f "$2" ] || die "--add $2: no such file"; adds="$adds$2$nl"; shift 2 ;;
	--env)
		[ $# -ge 2 ] || usage
		case "$2" in [A-Za-z_]*=*) ;; *) die "--env $2: expected NAME=VALUE" ;; esac
		envs="${envs}export ${2%%=*}=$(shquote "${2#*=}")$nl"
		shift 2 ;;
	--out) [ $# -ge 2 ] || usage; outdir=$2; shift 2 ;;
	--out-size) [ $# -ge 2 ] || usage; outsize=$2; shift 2 ;;
	--timeout) [ $# -ge 2 ] || usage; timeout=$2; shift 2 ;;
	--log-dir) [ $# -ge 2 ] || usage; logdir=$2; shift 2 ;;
	--smp) [ $# -ge 2 ] || usage; smp=$2; shift 2 ;;
	--mem) [ $# -ge 2 ] || usage; mem=$2; shift 2 ;;
	--quiet) quiet=1; shift ;;
	--) shift; break ;;
	*) usage ;;
	esac
done
[ $# -gt 0 ] || usage
for n in "$timeout" "$outsize" "$smp" "$mem"; do
	case "$n" in '' | *[!0-9]*) die "expected a whole number, got '$n'" ;; esac
done

[ -f "$cache/kernel.env" ] || die "no prepared kernel in $cache (run tests/vm/prepare.sh first)"
. "$cache/kernel.env"
kdir="$cache/linux-$LATTICED_VM_KVER"
vmlinux="$kdir/vmlinux"
mods="$kdir/modules/lib/modules/$LATTICED_VM_KVER"
[ -f "$kdir/complete" ] && [ -f "$vmlinux" ] || die "kernel cache $kdir is incomplete (run tests/vm/prepare.sh)"
command -v qemu-system-x86_64 >/dev/null || die "qemu-system-x86_64 not found (run tests/vm/prepare.sh)"
[ -x /bin/busybox ] || die "/bin/busybox not found (run tests/vm/prepare.sh)"

if [ -n "$logdir" ]; then
	mkdir -p "$logdir"
	work=$(cd "$logdir" && pwd)
	keep=1
else
	work=$(mktemp -d "${TMPDIR:-/tmp}/latticed-vm.XXXXXX")
	keep=0
fi
root="$work/root"
rm -rf "$root" "$work/console.log" "$work/payload.log" "$work/out.img"
mkdir -p "$root"
# Results of an earlier run must not pass for this one's.  Only a folder
# this script filled (it holds the marker, or is the log folder's out/) is
# emptied.
if [ -n "$outdir" ] && [ -d "$outdir" ]; then
	if [ -e "$outdir/.latticed-vm-out" ] || { [ -n "$logdir" ] &&
		[ "$(cd "$outdir" && pwd)" = "$work/out" ]; }; then
		find "$outdir" -mindepth 1 -delete
	elif [ -n "$(ls -A "$outdir")" ]; then
		die "--out $outdir holds files of something else; give an empty or new folder"
	fi
fi
qemu_pid=""
tail_pid=""
cleanup() {
	[ -n "$tail_pid" ] && kill "$tail_pid" 2>/dev/null || true
	[ -n "$qemu_pid" ] && kill "$qemu_pid" 2>/dev/null || true
	rm -rf "$root"
	[ "$keep" = 1 ] || rm -rf "$work"
}
trap cleanup EXIT
trap 'exit 130' INT TERM

# --- initramfs --------------------------------------------------------------
# Copies never go through an existing path: a staged file could otherwise be
# written through a busybox applet symlink onto the host's /bin/busybox.
put() { # put SRC DEST-IN-ROOT
	mkdir -p "$root$(dirname "$2")"
	rm -f "$root$2"
	cp -L "$1" "$root$2"
}
mkdir -p "$root/bin" "$root/proc" "$root/sys" "$root/dev" "$root/tmp" "$root/out" \
	"$root/test" "$root/etc" "$root/root" "$root/run" "$root/var/tmp"
ln -s ../run "$root/var/run"
put /bin/busybox /bin/busybox
for a in $(/bin/busybox --list); do
	[ "$a" = busybox ] || ln -s busybox "$root/bin/$a"
done
ln -s bin "$root/sbin"
mkdir -p "$root/usr"
ln -s ../bin "$root/usr/bin"
ln -s ../bin "$root/usr/sbin"

printf '%s' "$files" | while IFS= read -r d; do
	[ -n "$d" ] || continue
	(cd "$d" && find . \( -type f -o -type l \)) | while IFS= read -r f; do
		put "$d/$f" "/test/${f#./}"
	done
done
printf '%s' "$adds" | while IFS= read -r f; do
	[ -n "$f" ] && put "$f" "/test/$(basename "$f")"
done

# Shared libraries of every ELF file in /test, at the paths ldd names.
find "$root/test" -type f | while IFS= read -r f; do
	[ "$(head -c 4 "$f" | od -An -tx1 | tr -d ' ')" = 7f454c46 ] || continue
	ldd "$f" 2>/dev/null | sed -n 's/.*=> \(\/[^ ]*\) (.*/\1/p; s/^[[:space:]]*\(\/[^ ]*\) (.*/\1/p'
done | sort -u >"$work/libs.txt"
while IFS= read -r lib; do
	[ -f "$lib" ] || die "library $lib (needed by a file in /test) not found"
	put "$lib" "$lib"
done <"$work/libs.txt"
if [ -s "$work/libs.txt" ]; then
	printf '/lib/x86_64-linux-gnu\n/usr/lib/x86_64-linux-gnu\n' >"$root/etc/ld.so.conf"
	ldconfig -r "$root" -X 2>/dev/null || die "ldconfig -r failed"
fi
# libasound reads its configuration from here; the UCM and topology trees
# are for sound cards and much bigger, so they stay out.
if [ -d /usr/share/alsa ]; then
	mkdir -p "$root/usr/share/alsa"
	(cd /usr/share/alsa && tar -cf - --exclude=./ucm --exclude=./ucm2 --exclude=./topology .) |
		tar -xf - -C "$root/usr/share/alsa"
fi
mkdir -p "$root/lib/modules"
cp -R "$mods" "$root/lib/modules/"
printf 'root:x:0:0:root:/root:/bin/sh\n' >"$root/etc/passwd"
printf 'root:x:0:\naudio:x:29:\n' >"$root/etc/group"

{
	printf 'cd /test\n'
	printf '%s' "$envs"
	printf 'exec'
	for w in "$@"; do printf ' %s' "$(shquote "$w")"; done
	printf '\n'
} >"$root/command"

disk=""
[ -n "$outdir" ] && disk=yes
cat >"$root/init" <<EOF
#!/bin/sh
# Generated by tests/vm/run.sh: set up the sequencer, run /command, power off.
export PATH=/test:/bin HOME=/tmp LATTICED_VM_OUT=/out
mount -t proc proc /proc
mount -t sysfs sysfs /sys
mount -t devtmpfs devtmpfs /dev
mount -t tmpfs tmpfs /tmp
mount -t tmpfs tmpfs /run
mkdir -p /dev/shm /dev/pts
mount -t tmpfs tmpfs /dev/shm
mount -t devpts devpts /dev/pts
exec </dev/null >/dev/console 2>&1
echo "latticed-vm: init started at \$(cut -d' ' -f1 /proc/uptime) s"
fail() {
	echo "latticed-vm: setup failed: \$*"
	echo "latticed-vm: exit $HARNESS_FAIL"
	poweroff -f
}
# snd-seq-dummy first, so that Midi Through becomes client 14.
for m in snd-seq-dummy snd-seq-midi-event snd-hrtimer snd-virmidi${disk:+ virtio_pci virtio_blk}; do
	modprobe \$m || fail "modprobe \$m"
done
[ -c /dev/snd/seq ] || fail "no /dev/snd/seq after loading the modules"
stty -F /dev/ttyS1 raw -echo 2>/dev/null || fail "no second serial port"
echo "latticed-vm: running"
sh /command </dev/null >/dev/ttyS1 2>&1
status=\$?
# Stop what COMMAND left behind so its last output reaches the port.
kill -TERM -1 2>/dev/null
usleep 200000
kill -KILL -1 2>/dev/null
if [ -n "$disk" ]; then
	[ -b /dev/vda ] || fail "no output disk /dev/vda"
	tar -cf /dev/vda -C /out . || fail "could not write /out to the output disk"
fi
sync
echo "latticed-vm: exit \$status"
poweroff -f
EOF
chmod +x "$root/init"
(cd "$root" && find . | cpio -o -H newc -R 0:0 --quiet) >"$work/initrd.cpio" ||
	die "could not pack the initramfs"
rm -rf "$root"

# --- boot -----------------------------------------------------------------
accel=${LATTICED_VM_ACCEL:-auto}
if [ "$accel" = auto ]; then
	accel=tcg
	if grep -qwE 'vmx|svm' /proc/cpuinfo 2>/dev/null && [ -r /dev/kvm ] && [ -w /dev/kvm ]; then
		accel=kvm
	fi
fi

if [ -n "$outdir" ]; then
	truncate -s "${outsize}M" "$work/out.img"
fi

# boot ACCEL WATCHDOG: runs qemu in the background; returns its exit status,
# or 124 on timeout, or 126 when WATCHDOG seconds pass without /init starting.
boot() {
	: >"$work/console.log"
	: >"$work/payload.log"
	drive=""
	[ -n "$outdir" ] && drive="-drive file=$work/out.img,format=raw,if=virtio,cache=unsafe"
	cpu="-cpu max"
	[ "$1" = kvm ] && cpu="-cpu host"
	# Under TCG the kernel falls back to the HPET clocksource, every clock
	# read an emulated device access, and its CPU-bug mitigations (page
	# table isolation above all) flush qemu's TLB on every system call;
	# together they made each sequencer event cost several times what it
	# does with the TSC and without them (tests/vm/README.md).  The VM
	# holds nothing to protect.
	kargs="mitigations=off"
	[ "$1" = tcg ] && kargs="$kargs tsc=reliable clocksource=tsc"
	# shellcheck disable=SC2086
	timeout -k 5 "$timeout" qemu-system-x86_64 -M pc -accel "$1" $cpu -m "$mem" -smp "$smp" \
		-nodefaults -display none -no-reboot -no-user-config \
		-kernel "$vmlinux" -initrd "$work/initrd.cpio" \
		-append "console=ttyS0 quiet panic=-1 rdinit=/init $kargs ${LATTICED_VM_KERNEL_ARGS:-}" \
		-serial "file:$work/console.log" -serial "file:$work/payload.log" \
		$drive >"$work/qemu.log" 2>&1 &
	qemu_pid=$!
	if [ "$quiet" = 0 ]; then
		tail -s 0.1 -n +1 -f --pid="$qemu_pid" "$work/payload.log" | tr -d '\r' &
		tail_pid=$!
	fi
	if [ "$2" -gt 0 ]; then
		waited=0
		while kill -0 "$qemu_pid" 2>/dev/null && ! grep -q 'latticed-vm: init started' "$work/console.log"; do
			if [ "$waited" -ge "$2" ]; then
				kill "$qemu_pid" 2>/dev/null
				wait "$qemu_pid" 2>/dev/null || true
				qemu_pid=""
				return 126
			fi
			sleep 1
			waited=$((waited + 1))
		done
	fi
	rc=0
	wait "$qemu_pid" || rc=$?
	qemu_pid=""
	if [ -n "$tail_pid" ]; then
		wait "$tail_pid" 2>/dev/null || true
		tail_pid=""
	fi
	return "$rc"
}

start=$(date +%s.%N)
rc=0
if [ "$accel" = kvm ]; then
	boot kvm 20 || rc=$?
	if [ "$rc" = 126 ]; then
		echo "$prog: no boot under KVM within 20 s; using TCG" >&2
		accel=tcg
		rc=0
		boot tcg 0 || rc=$?
	fi
else
	boot "$accel" 0 || rc=$?
fi
elapsed=$(echo "$start $(date +%s.%N)" | awk '{ printf "%.1f", $2 - $1 }')

console_tail() {
	echo "--- last lines of the kernel console ($work/console.log):" >&2
	tr -d '\r' <"$work/console.log" | tail -n 30 >&2
	if [ -s "$work/qemu.log" ]; then
		echo "--- qemu said:" >&2
		tail -n 10 "$work/qemu.log" >&2
	fi
	keep=1
	echo "--- logs kept in $work" >&2
}

if [ "$rc" = 124 ]; then
	echo "$prog: error: timed out after $timeout s ($accel)" >&2
	console_tail
	exit 124
fi
status=$(tr -d '\r' <"$work/console.log" | sed -n 's/^latticed-vm: exit \([0-9][0-9]*\)$/\1/p' | tail -n 1)
if [ -z "$status" ]; then
	if grep -q 'latticed-vm: init started' "$work/console.log"; then
		echo "$prog: error: the VM stopped before COMMAND's end was reported (qemu status $rc)" >&2
	else
		echo "$prog: error: the VM did not boot to /init (qemu status $rc)" >&2
	fi
	console_tail
	exit $HARNESS_FAIL
fi
if grep -q 'latticed-vm: setup failed' "$work/console.log"; then
	echo "$prog: error: VM setup failed" >&2
	console_tail
	exit $HARNESS_FAIL
fi
if [ "$quiet" = 1 ] && [ "$status" != 0 ]; then
	tr -d '\r' <"$work/payload.log" >&2
fi

if [ -n "$outdir" ]; then
	mkdir -p "$outdir"
	: >"$outdir/.latticed-vm-out"
	tar -xf "$work/out.img" -C "$outdir" || {
		echo "$prog: error: could not unpack the output disk" >&2
		keep=1
		exit $HARNESS_FAIL
	}
fi
booted=$(tr -d '\r' <"$work/console.log" | sed -n 's/^latticed-vm: init started at \([0-9.]*\) s$/\1/p')
echo "$prog: COMMAND exited with $status; /init started ${booted:-?} s after kernel start, whole run ${elapsed} s ($accel)" >&2
exit "$status"
