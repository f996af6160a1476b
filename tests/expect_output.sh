#!/bin/sh
# expect_output.sh STATUS TEXT COMMAND...: runs COMMAND and checks that it
# exits with STATUS and prints exactly TEXT (stdout and stderr together).
want_status=$1
want_text=$2
shift 2
out=$("$@" 2>&1)
status=$?
if [ "$status" != "$want_status" ] || [ "$out" != "$want_text" ]; then
	echo "expected status $want_status and:"
	echo "$want_text"
	echo "got status $status and:"
	echo "$out"
	exit 1
fi
