# The amd64 Debian package: built like a release (tests/stages/lib.sh
# deb_build_test), checked by lintian, then installed, removed and purged
# in a clean Debian 12 chroot by tests/stages/package-chroot.sh.
. "$LATTICED_SOURCE_DIR/tests/stages/lib.sh"
apt_install $BUILD_PACKAGES python3 dpkg-dev file lintian debootstrap

deb_build_test package-amd64 amd64
deb=$(ls "$LATTICED_BUILD_ROOT"/package-amd64/latticed_*_amd64.deb)

echo "--- lintian"
# Warnings fail too: each accepted tag is overridden, with its reason, in
# packaging/deb/lintian-overrides.  Lintian says it prefers not to run as
# root; it only reads the package here.
lint_ok=yes
lintian --fail-on error,warning --display-info --pedantic --show-overrides "$deb" \
	>"$LATTICED_BUILD_ROOT/package-amd64/lintian.txt" 2>&1 || lint_ok=no
grep -v '^running with root privileges' "$LATTICED_BUILD_ROOT/package-amd64/lintian.txt" || true
[ "$lint_ok" = yes ] || {
	echo "60-package: lintian reports errors or warnings (above)" >&2
	exit 1
}

# The chroot part needs root (debootstrap, chroot); the build above does not.
${LATTICED_SUDO:-} env LATTICED_SOURCE_DIR="$LATTICED_SOURCE_DIR" LATTICED_BUILD_ROOT="$LATTICED_BUILD_ROOT" \
	sh "$LATTICED_SOURCE_DIR/tests/stages/package-chroot.sh" "$deb"
