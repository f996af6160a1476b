#!/bin/sh
# package-chroot.sh DEB: installs, runs, removes and purges a latticed
# package in a clean Debian 12 chroot.  Run by stage 60 (as root).
#
# The chroot is a debootstrap minbase of bookworm from the mirror the host's
# apt uses; it is made once and kept as a tarball under
# $LATTICED_BUILD_ROOT/package-chroot-cache (with debootstrap's .deb cache
# and the .debs apt fetched into it), and unpacked fresh for every run.
# Delete that directory to start cold.  In the chroot:
#   apt-get install ./latticed_*.deb   dependencies come from the archive;
#                                      the service user exists, never root
#   latticed --version, latticed table on the installed config
#   apt-get remove                     the config stays, the binary goes
#   apt-get purge + autoremove         the config, the user, its state and
#                                      every file of the package are gone:
#                                      the file list equals the one before
#                                      the install, apt's own records aside
set -eu
: "${LATTICED_SOURCE_DIR:?run through tests/run-all.sh}"
: "${LATTICED_BUILD_ROOT:?run through tests/run-all.sh}"
deb=${1:?usage: package-chroot.sh DEB}

# The host's Debian mirror: the first deb822 URIs or one-line `deb` entry
# that serves bookworm itself (not -security or -updates).
host_mirror() {
	for f in /etc/apt/sources.list.d/*.sources; do
		[ -f "$f" ] || continue
		awk '
			/^[ \t]*$/ { if (uri && suite) { print uri; exit } uri = ""; suite = 0; next }
			/^URIs:/ { uri = $2 }
			/^Suites:/ { for (i = 2; i <= NF; i++) if ($i == "bookworm") suite = 1 }
			END { if (uri && suite) print uri }
		' "$f"
	done
	[ -f /etc/apt/sources.list ] &&
		awk '$1 == "deb" && $3 == "bookworm" { print $2 }' /etc/apt/sources.list
}
mirror=$(host_mirror | head -n 1)
[ -n "$mirror" ] || {
	echo "60-package: no bookworm entry in /etc/apt/sources.list(.d); cannot debootstrap" >&2
	exit 1
}

cache="$LATTICED_BUILD_ROOT/package-chroot-cache"
root="$LATTICED_BUILD_ROOT/package-chroot"
tarball="$cache/bookworm-minbase.tar"
mkdir -p "$cache/debootstrap" "$cache/apt"
in_root() { chroot "$root" env -i PATH=/usr/sbin:/usr/bin:/sbin:/bin LC_ALL=C.UTF-8 \
	DEBIAN_FRONTEND=noninteractive "$@"; }

t0=$(date +%s)
rm -rf "$root"
if [ ! -f "$tarball" ]; then
	echo "--- debootstrap bookworm minbase from $mirror (cached for next runs)"
	debootstrap --variant=minbase --cache-dir="$cache/debootstrap" bookworm "$root" "$mirror" \
		>"$cache/debootstrap.log" 2>&1 || {
		tail -n 20 "$cache/debootstrap.log" >&2
		echo "60-package: debootstrap failed (log: $cache/debootstrap.log)" >&2
		exit 1
	}
	# Never start services in the chroot (invoke-rc.d, deb-systemd-invoke).
	printf '#!/bin/sh\nexit 101\n' >"$root/usr/sbin/policy-rc.d"
	chmod 755 "$root/usr/sbin/policy-rc.d"
	in_root apt-get clean
	tar -C "$root" -cf "$tarball.tmp" . && mv "$tarball.tmp" "$tarball"
else
	mkdir -p "$root"
	tar -C "$root" -xf "$tarball"
fi
t1=$(date +%s)
echo "chroot ready in $((t1 - t0)) s"

cp /etc/resolv.conf "$root/etc/resolv.conf"
# No /dev/pts in the chroot: dpkg's log pty would only print an error.
echo 'Dpkg::Use-Pty "0";' >"$root/etc/apt/apt.conf.d/90latticed-test"
cp "$cache"/apt/*.deb "$root/var/cache/apt/archives/" 2>/dev/null || true
in_root apt-get -qq update

# What the root holds before the package, to compare after the purge.
# Left out because they change by design: apt's and dpkg's records, logs
# and caches; /run (adduser's lock file; a tmpfs on a booted system); the
# shadow suite's one-step backups /etc/passwd- group- shadow- gshadow-,
# which every account change on Debian rewrites.
snapshot() {
	(cd "$root" && find . -xdev \( -path ./proc -o -path ./sys -o -path ./dev \
		-o -path ./var/lib/dpkg -o -path ./var/lib/apt -o -path ./var/cache \
		-o -path ./var/log -o -path ./tmp -o -path ./run \
		-o -path ./etc/apt/apt.conf.d/90latticed-test \
		-o -path './etc/*-' \) -prune -o -print | sort)
}
snapshot >"$cache/files-before"
accounts_before=$(cat "$root/etc/passwd" "$root/etc/group" "$root/etc/shadow" "$root/etc/gshadow" | md5sum)

fail() {
	echo "60-package: $*" >&2
	exit 1
}

echo "--- install $(basename "$deb")"
cp "$deb" "$root/tmp/"
in_root apt-get install -y -qq --no-install-recommends "/tmp/$(basename "$deb")" >"$root/tmp/install.log" 2>&1 || {
	cat "$root/tmp/install.log" >&2
	fail "apt-get install of the package failed"
}
cp "$root"/var/cache/apt/archives/*.deb "$cache/apt/" 2>/dev/null || true

version=$(in_root latticed --version) || fail "latticed --version failed"
echo "latticed --version: $version"
case "$version" in
*"$(dpkg-deb -f "$deb" Version)"*) ;;
*) fail "latticed --version does not name the package version" ;;
esac
in_root latticed table >"$root/tmp/table.out" || fail "latticed table failed on the installed config"
head -n 3 "$root/tmp/table.out"
[ -s "$root/tmp/table.out" ] || fail "latticed table printed nothing"

conffiles=$(in_root dpkg-query -W -f='${Conffiles}' latticed)
echo "$conffiles" | grep -q '^ /etc/latticed/latticed.conf ' ||
	fail "/etc/latticed/latticed.conf is not a conffile"
account=$(in_root getent passwd latticed) || fail "no system user latticed"
echo "service account: $account"
uid=$(echo "$account" | cut -d: -f3)
gid=$(echo "$account" | cut -d: -f4)
if [ "$uid" -eq 0 ] || [ "$uid" -ge 1000 ]; then
	fail "latticed is not a system user (uid $uid)"
fi
[ "$gid" = "$(in_root getent group audio | cut -d: -f3)" ] || fail "latticed's group is not audio"
[ "$(in_root stat -c %U:%G:%a /var/lib/latticed)" = latticed:audio:750 ] || fail "/var/lib/latticed is not latticed:audio mode 750"
for page in man8/latticed.8.gz man5/latticed.conf.5.gz; do
	[ ! -f "$LATTICED_SOURCE_DIR/doc/$(basename "$page" .gz)" ] ||
		gzip -t "$root/usr/share/man/$page" || fail "man page $page missing or not gzip"
done

# Units: recorded on install, so that a purge removes the links of a
# unit the admin enabled.  Play that admin: make the links
# `systemctl enable` makes for WantedBy= (minbase has no systemctl).
units=$(dpkg-deb -c "$deb" | awk '{ print $6 }' | sed -n 's|^\./lib/systemd/system/\([^/@]*\.service\)$|\1|p')
for u in $units; do
	for target in $(sed -n 's/^WantedBy=//p' "$root/lib/systemd/system/$u"); do
		mkdir -p "$root/etc/systemd/system/$target.wants"
		ln -s "/lib/systemd/system/$u" "$root/etc/systemd/system/$target.wants/$u"
		echo "enabled $u for $target"
	done
done

echo "--- remove"
echo "; changed by the admin" >>"$root/etc/latticed/latticed.conf"
in_root apt-get remove -y -qq latticed >/dev/null || fail "apt-get remove failed"
[ -f "$root/etc/latticed/latticed.conf" ] || fail "remove deleted /etc/latticed/latticed.conf"
grep -q '; changed by the admin' "$root/etc/latticed/latticed.conf" || fail "remove changed the config"
[ ! -e "$root/usr/bin/latticed" ] || fail "remove left /usr/bin/latticed"
in_root getent passwd latticed >/dev/null || fail "remove deleted the user (kept until purge)"

echo "--- purge"
in_root apt-get purge -y -qq latticed >/dev/null || fail "apt-get purge failed"
in_root apt-get autoremove --purge -y -qq >/dev/null || fail "apt-get autoremove failed"
[ ! -e "$root/etc/latticed" ] || fail "purge left /etc/latticed"
[ ! -e "$root/var/lib/latticed" ] || fail "purge left /var/lib/latticed"
! in_root getent passwd latticed >/dev/null || fail "purge left the user latticed"
[ "$(cat "$root/etc/passwd" "$root/etc/group" "$root/etc/shadow" "$root/etc/gshadow" | md5sum)" = "$accounts_before" ] ||
	fail "purge left the account files different from before the install"
snapshot >"$cache/files-after"
if ! diff "$cache/files-before" "$cache/files-after" >"$cache/files-diff"; then
	cat "$cache/files-diff" >&2
	fail "files differ after purge + autoremove (above: < gone, > left behind)"
fi
echo "purge left nothing behind ($(wc -l <"$cache/files-before") paths compared)"

rm -rf "$root"
echo "package test: $(( $(date +%s) - t0 )) s from chroot set-up to purge"
