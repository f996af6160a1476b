#!/bin/sh
# The latticed command line as a user meets it: help, version, exit
# statuses (0 ok, 1 failed work, 2 bad command line), the default table and
# one-line config errors with their line numbers.
# Usage: cli_test.sh LATTICED_BINARY SOURCE_DIR
set -u
bin=$1
src=$2
tmp=$(mktemp -d)
trap 'rm -rf "$tmp"' EXIT
fails=0
check() { # check DESCRIPTION COMMAND...: the command must succeed
	desc=$1
	shift
	if ! "$@"; then
		echo "FAIL: $desc" >&2
		fails=$((fails + 1))
	fi
}
status_is() { # status_is WANT COMMAND...
	want=$1
	shift
	"$@" >"$tmp/out" 2>"$tmp/err"
	got=$?
	[ "$got" -eq "$want" ] || { echo "exit $got, wanted $want: $*" >&2; cat "$tmp/err" >&2; return 1; }
}

check "--help exits 0" status_is 0 "$bin" --help
check "--help lists table" grep -q '^  table ' "$tmp/out"
check "--help lists render" grep -q '^  render ' "$tmp/out"
check "--version exits 0" status_is 0 "$bin" --version
check "--version prints the name" grep -q '^latticed [0-9]' "$tmp/out"
check "no command is a usage error" status_is 2 "$bin"
check "unknown command is a usage error" status_is 2 "$bin" frobnicate
check "unknown command is named" grep -q "unknown command 'frobnicate'" "$tmp/err"
check "unknown option is a usage error" status_is 2 "$bin" table --frob
check "table --help exits 0" status_is 0 "$bin" table --help

# The default hexany: six tones (1 3 5 7, common practice) and eight triads.
check "default table" status_is 0 "$bin" table --config "$src/config/latticed.conf"
for r in 35/32 5/4 21/16 3/2 7/4 15/8; do
	check "tone $r listed" grep -Eq "^ +[0-9]+ +[0-9.]+ +$r " "$tmp/out"
done
check "four harmonic triads" test "$(grep -Ec '^  harmonic ' "$tmp/out")" -eq 4
check "four subharmonic triads" test "$(grep -Ec '^  subharmonic ' "$tmp/out")" -eq 4
for p in 4:5:6 5:6:7 6:7:8 7:8:10 10:12:15; do
	check "chord $p listed" grep -q " $p\$" "$tmp/out"
done

# A broken config: one line, FILE:LINE, exit 1, nothing on stdout.
printf '[lattice]\nseeds = 1 3 5 7\nchoose = 5\n' >"$tmp/bad.conf"
check "broken config fails" status_is 1 "$bin" table --config "$tmp/bad.conf"
check "one error line" test "$(wc -l <"$tmp/err")" -eq 1
check "error names file and line" grep -q "^$tmp/bad.conf:3: choose is 5, expected" "$tmp/err"
check "no table printed" test ! -s "$tmp/out"
check "missing config fails" status_is 1 "$bin" table --config "$tmp/none.conf"
check "missing config is named" grep -q "^$tmp/none.conf: cannot open: No such file" "$tmp/err"

# JSON is one valid object; the full check is table_json_check.py.
check "json exits 0" status_is 0 "$bin" table --json --config "$src/config/latticed.conf"
check "json starts with {" test "$(head -c1 "$tmp/out")" = "{"

# --preset takes a name or a number, as `latticed preset` does; a wrong one
# is named with the presets there are (our rule), the same for draw.
presets="$src/tests/golden/configs/presets-bend.conf"
check "table --preset 1" status_is 0 "$bin" table --config "$presets" --preset 1
check "--preset 1 is the second preset" grep -q '^presets  main \[dekany\] tritave' "$tmp/out"
check "table --preset by name" status_is 0 "$bin" table --config "$presets" --preset tritave
for cmd in table draw; do
	check "$cmd --preset 7 fails" status_is 1 "$bin" $cmd --config "$presets" --preset 7
	check "$cmd --preset 7 lists the presets" grep -q \
		"^latticed $cmd: $presets has no preset '7', expected a number from 0 to 2 or a name: 0=main, 1=dekany, 2=tritave\$" "$tmp/err"
done
# --root as `latticed root`: a number (tone n-1), a label or home
check "table --root 3" status_is 0 "$bin" table --config "$src/config/latticed.conf" --root 3
check "--root 3 is said" grep -q '^root     3: tone 2 (3.7) is 1/1, every pitch times 21/16' "$tmp/out"
check "table --root label" status_is 0 "$bin" table --config "$src/config/latticed.conf" --root 3.7 --keys
check "--root label as 3" grep -q '^preset   main, root 3.7 (every pitch times 21/16)' "$tmp/out"
check "table --root home" status_is 0 "$bin" table --config "$src/config/latticed.conf" --root home --json
check "--root 9 fails" status_is 1 "$bin" table --config "$src/config/latticed.conf" --root 9
check "--root 9 says what is expected" grep -q \
	"^latticed table: preset main has no root '9', expected home, a number from 0 to 6" "$tmp/err"
# one form at a time; the --syx options only with --syx
check "--json --keys is a usage error" status_is 2 "$bin" table --json --keys
check "--program without --syx" status_is 2 "$bin" table --program 3
check "--device 127 is refused" status_is 2 "$bin" table --syx "$tmp/t.syx" --device 127
check "no file for a bad --syx" test ! -e "$tmp/t.syx"
check "--syx into a missing folder" status_is 1 "$bin" table --syx "$tmp/none/t.syx"
check "--syx error names the file" grep -q "^latticed table: $tmp/none/t.syx: " "$tmp/err"
# without --config: the system config, or the defaults with the path looked at
check "table without a config" status_is 0 "$bin" table
check "the config read is named" grep -Eq '^config   (/.*latticed\.conf|\(built-in defaults: there is no /.*/latticed/latticed\.conf\))$' "$tmp/out"

[ "$fails" -eq 0 ] && echo "cli_test: all checks passed"
[ "$fails" -eq 0 ]
