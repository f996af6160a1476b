#!/bin/sh
# vm_latency: a benchmark, not a test of speed.  `seqtool stream` plays
# note events (on and off, four held at once, up three octaves of an
# eikosany so every key sounds) at 1 000 and 10 000 per second, scheduled
# by the kernel, and times each through a route with the kernel's stamps:
#   direct     a plain subscription (the kernel alone)
#   forwarder  `seqtool forward`, one thread that reads an event and writes
#              it (the reference: what any user-space program must cost)
#   bend, mts, mpe  latticed run with latency.conf and each method
# all in this one VM run.  The table (median and p99.9 of each, their ratio
# to the forwarder's, events lost, CPU use while streaming and at idle)
# goes to /out/latency-table.txt, which the stage prints.
. ./vmlib.sh
OUT=${LATTICED_VM_OUT:-/tmp}
COUNT=${LATENCY_EVENTS:-10000}
RATES=${LATENCY_RATES:-"1000 10000"}
IDLE_S=5

# user + system ticks of a process (the name in field 2 has no spaces here)
ticks() { awk '{ print $14 + $15 }' "/proc/$1/stat"; }

# stream NAME RATE PID TO FROM: one measurement into $OUT/stream-NAME-RATE.txt
stream() {
	timeout 120 seqtool stream --rate "$2" --count "$COUNT" --cpu "$3" "$4" "$5" \
		>"$OUT/stream-$1-$2.txt" 2>&1
	cat "$OUT/stream-$1-$2.txt"
}

vm_step "latency: a direct subscription"
for rate in $RATES; do
	timeout 120 seqtool stream --rate "$rate" --count "$COUNT" --direct >"$OUT/stream-direct-$rate.txt" 2>&1
	cat "$OUT/stream-direct-$rate.txt"
done

vm_step "latency: the one-thread forwarder"
vm_start fwd seqtool forward
vm_check "the forwarder's ports appear" sh -c 'seqtool wait forwarder:out --seconds 20 >/dev/null'
for rate in $RATES; do
	stream forwarder "$rate" "$vm_pid_fwd" forwarder:in forwarder:out
done
vm_check "the forwarder stops" vm_stop fwd

for method in bend mts mpe; do
	vm_step "latency: latticed, method $method"
	conf=/tmp/latency-$method.conf
	# mts: each key on its own key, so held neighbours never share one
	sed "s/^method = bend$/method = $method/" latency.conf >"$conf"
	[ "$method" = mts ] && printf 'mts_key = own\n' >>"$conf"
	vm_start daemon latticed run --config "$conf"
	vm_check "latticed's ports appear ($method)" sh -c 'seqtool wait latticed:synth --seconds 20 >/dev/null'
	t0=$(ticks "$vm_pid_daemon")
	sleep $IDLE_S
	t1=$(ticks "$vm_pid_daemon")
	# 100 ticks a second (USER_HZ): ticks per second are % of one core
	awk -v a="$t0" -v b="$t1" -v s=$IDLE_S -v m="$method" 'BEGIN { printf "idle %s %.1f\n", m, (b - a) / s }' \
		>"$OUT/idle-$method.txt"
	for rate in $RATES; do
		stream "$method" "$rate" "$vm_pid_daemon" latticed:in latticed:synth
	done
	vm_check "latticed status answers ($method)" sh -c "latticed status --config $conf >/tmp/status-$method.txt"
	grep -E '^output synth|^  notes:|input overruns|shed|merged' "/tmp/status-$method.txt" |
		sed "s/^ */# latticed $method: /" >"$OUT/status-$method.txt"
	vm_check "latticed stops cleanly ($method)" vm_stop daemon
done

# The table: one line per route and rate; ratios to the forwarder at that rate.
{
	echo "# latency in the test VM under qemu TCG (code runs 10-50x slower than on real hardware):"
	echo "# $COUNT note events per row scheduled by the kernel, stamped by it at both ends, in ms;"
	echo "# ratio: to the one-thread forwarder at the same rate; lost: never came back;"
	echo "# cpu: % of one core while streaming (idle: latticed with no MIDI for ${IDLE_S} s)"
	printf '%-10s %6s %6s %9s %6s %9s %6s %9s %5s %6s %5s\n' route rate lost median ratio p99.9 ratio max \
		other cpu% idle
	for rate in $RATES; do
		for route in direct forwarder bend mts mpe; do
			ref=$(awk '$1 == "stream" { print $8, $9 }' "$OUT/stream-forwarder-$rate.txt" 2>/dev/null)
			idle=$(awk '{ print $3 }' "$OUT/idle-$route.txt" 2>/dev/null)
			awk -v route="$route" -v rate="$rate" -v ref="${ref:-0 0}" -v idle="${idle:--}" '
				$1 == "stream" { got = 1; lost = $5; med = $8; p = $9; max = $10; other = $7 }
				$1 == "cpu" { cpu = $4 }
				END {
					split(ref, r, " ")
					if (!got) { printf "%-10s %6s not measured (seqtool stream did not finish)\n", route, rate; exit }
					printf "%-10s %6d %6d %9.4f %6.2f %9.4f %6.2f %9.4f %5d %6s %5s\n", route, rate, lost,
						med, r[1] > 0 ? med / r[1] : 0, p, r[2] > 0 ? p / r[2] : 0, max, other,
						cpu == "" ? "-" : cpu, idle
				}' "$OUT/stream-$route-$rate.txt" 2>/dev/null ||
				printf '%-10s %6s not measured\n' "$route" "$rate"
		done
	done
	cat "$OUT"/status-*.txt 2>/dev/null
} >"$OUT/latency-table.txt"
cat "$OUT/latency-table.txt"
vm_finish
