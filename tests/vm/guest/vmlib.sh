# vmlib.sh: helpers for test scripts that run inside the test VM.
# Source it first: `. ./vmlib.sh` (run.sh puts it in /test, the cwd).
#
#   vm_step TEXT              print a heading
#   vm_check TEXT CMD...      run CMD; count and print "ok - TEXT" or "FAIL - TEXT"
#   vm_start NAME CMD...      run CMD in the background, output to /tmp/NAME.log
#   vm_stop NAME              SIGTERM it, wait for it, print its log; returns its status
#   vm_wait NAME              wait for it to end by itself, print its log; returns its status
#   vm_wait_file FILE [S]     wait up to S seconds (default 10) for FILE to exist
#   vm_wait_log FILE N RE [S] wait up to S seconds (default 10) until N lines of FILE
#                             match the extended regular expression RE
#   vm_finish                 print "N passed, N failed"; exit 1 if any failed
#
# The whole busybox userland is there (sh, awk, grep, diff, cmp, ...), plus
# what run.sh put into /test.  Results written to $LATTICED_VM_OUT (/out)
# reach the host when run.sh was given --out.

vm_passed=0
vm_failed=0

vm_step() {
	echo "=== $*"
}

vm_check() {
	vm_text=$1
	shift
	if "$@"; then
		vm_passed=$((vm_passed + 1))
		echo "ok - $vm_text"
	else
		vm_failed=$((vm_failed + 1))
		echo "FAIL - $vm_text (status $?: $*)"
	fi
}

vm_start() {
	vm_name=$1
	shift
	"$@" >"/tmp/$vm_name.log" 2>&1 &
	eval "vm_pid_$vm_name=\$!"
}

vm_stop() {
	vm_end "$1" TERM
}

vm_wait() {
	vm_end "$1" ""
}

vm_end() {
	eval "vm_pid=\${vm_pid_$1:-}"
	if [ -z "$vm_pid" ]; then
		echo "vm_stop/vm_wait: nothing started as '$1'"
		return 1
	fi
	[ -z "$2" ] || kill -"$2" "$vm_pid" 2>/dev/null
	wait "$vm_pid"
	vm_status=$?
	eval "vm_pid_$1="
	sed "s/^/[$1] /" "/tmp/$1.log"
	return $vm_status
}

vm_wait_file() {
	vm_left=$(( ${2:-10} * 50 ))
	while [ ! -e "$1" ]; do
		[ "$vm_left" -gt 0 ] || { echo "vm_wait_file: no $1 after ${2:-10} s"; return 1; }
		usleep 20000
		vm_left=$((vm_left - 1))
	done
}

vm_wait_log() {
	vm_left=$(( ${4:-10} * 20 ))
	while vm_n=$(grep -cE "$3" "$1" 2>/dev/null); [ "${vm_n:-0}" -lt "$2" ]; do
		if [ "$vm_left" -le 0 ]; then
			echo "vm_wait_log: '$3' not seen $2 times in $1 within ${4:-10} s; its end:"
			tail -n 15 "$1"
			return 1
		fi
		usleep 50000
		vm_left=$((vm_left - 1))
	done
}

vm_finish() {
	echo "$vm_passed passed, $vm_failed failed"
	[ "$vm_failed" -eq 0 ]
}
