#!/bin/sh
# vm_latency: a benchmark, not a test of speed.  `seqtool stream` plays
# note events (on and off, four held at once, up three octaves of an
# eikosany so every key sounds) at 1 000 and 10 000 per second, scheduled
# by the kernel, and times each through a route with the kernel's stamps:
#   direct     a plain subscription (the kernel alone)
#   forwarder  `seqtool forward`, one thread that reads an event and writes
#              it (the reference: what any user-space program must cost)
#   fwd-bend   the same forwarder sending a pitch bend before each note-on
#              in the same write (what retuning by bend must cost at least)
#   bend, mts, mpe  latticed run with latency.conf and each method
# The routes take turns of 100 events in one stream, so whatever else the
# host runs weighs on all of them alike.  The table (median and p99.9 of
# each, their ratio to the forwarder's, events lost, CPU use while
# streaming and at idle) goes to /out/latency-table.txt, which the stage
# prints.
. ./vmlib.sh
OUT=${LATTICED_VM_OUT:-/tmp}
COUNT=${LATENCY_EVENTS:-10000}
RATES=${LATENCY_RATES:-"1000 10000"}
METHODS="bend mts mpe"
IDLE_S=5

# nanoseconds on a CPU of all threads of a process (the scheduler's clock)
cpu_ns() { cat /proc/"$1"/task/*/schedstat | awk '{ ns += $1 } END { printf "%.0f\n", ns }'; }

vm_step "latency: the forwarder and one latticed per method"
vm_start fwd seqtool forward
vm_start fwdbend seqtool forward --name fwd-bend --bend-before-notes
routes="--direct direct --route forwarder forwarder:in forwarder:out --route fwd-bend fwd-bend:in fwd-bend:out"
watch="forwarder:$vm_pid_fwd fwd-bend:$vm_pid_fwdbend"
for method in $METHODS; do
	conf=/tmp/latency-$method.conf
	# mts: each key on its own key, so held neighbours never share one
	sed -e "s/^method = bend$/method = $method/" -e "s/^client_name = .*/client_name = latticed-$method/" \
		-e "s|^control_socket = .*|control_socket = /tmp/latticed-$method/control|" latency.conf >"$conf"
	[ "$method" = mts ] && printf 'mts_key = own\n' >>"$conf"
	vm_start "daemon_$method" latticed run --config "$conf"
	routes="$routes --route $method latticed-$method:in latticed-$method:synth"
done
vm_check "the forwarder's ports appear" sh -c 'seqtool wait forwarder:out --seconds 20 >/dev/null'
vm_check "the bending forwarder's ports appear" sh -c 'seqtool wait fwd-bend:out --seconds 20 >/dev/null'
for method in $METHODS; do
	vm_check "latticed's ports appear ($method)" \
		sh -c "seqtool wait latticed-$method:synth --seconds 20 >/dev/null"
	eval "watch=\"\$watch $method:\$vm_pid_daemon_$method\""
done

# CPU use with no MIDI at all, once start-up is over
sleep 2
# a shell variable per route: its name with "-" made "_" (fwd-bend)
var_of() { printf 'idle0_%s' "$1" | tr -- - _; }
for w in $watch; do eval "$(var_of "${w%%:*}")=$(cpu_ns "${w#*:}")"; done
sleep $IDLE_S
for w in $watch; do
	eval "t0=\$$(var_of "${w%%:*}")"
	awk -v a="$t0" -v b="$(cpu_ns "${w#*:}")" -v s=$IDLE_S -v m="${w%%:*}" \
		'BEGIN { printf "idle %s %.2f\n", m, (b - a) / s / 1e7 }'
done >"$OUT/idle.txt"
cat "$OUT/idle.txt"

cpus=""
for w in $watch; do cpus="$cpus --cpu ${w%%:*} ${w#*:}"; done
for rate in $RATES; do
	vm_step "latency: $COUNT note events per route at $rate/s"
	# shellcheck disable=SC2086
	timeout 300 seqtool stream --rate "$rate" --count "$COUNT" $routes $cpus >"$OUT/stream-$rate.txt" 2>&1
	cat "$OUT/stream-$rate.txt"
done

for method in $METHODS; do
	conf=/tmp/latency-$method.conf
	vm_check "latticed status answers ($method)" sh -c "latticed status --config $conf >/tmp/status-$method.txt"
	grep -E '^output synth|^  notes:|input overruns|left out' "/tmp/status-$method.txt" |
		sed "s/^ */# latticed $method: /" >"$OUT/status-$method.txt"
	vm_check "latticed stops cleanly ($method)" vm_stop "daemon_$method"
done
vm_check "the forwarder stops" vm_stop fwd
vm_check "the bending forwarder stops" vm_stop fwdbend

# The table: one line per route and rate; ratios to the forwarder at that rate.
{
	echo "# latency in the test VM under qemu TCG (code runs 10-50x slower than on real hardware):"
	echo "# $COUNT note events per route and rate, the routes taking turns of 100, scheduled by"
	echo "# the kernel and stamped by it at both ends, in ms; ratio: to the one-thread forwarder"
	echo "# at the same rate; ratio-fb: the median's ratio to fwd-bend, the forwarder that adds"
	echo "# a pitch bend before each note-on; lost: never came back; other: messages besides the"
	echo "# notes (bends, tuning changes); cpu: % of one core while streaming; idle: with no MIDI"
	echo "# for ${IDLE_S} s"
	printf '%-10s %6s %5s %9s %6s %9s %6s %8s %9s %6s %6s %5s\n' route rate lost median ratio p99.9 ratio \
		ratio-fb max other cpu% idle
	for rate in $RATES; do
		awk -v rate="$rate" '
			FILENAME ~ /idle/ { idle[$2] = $3; next }
			$1 == "stream" && $3 == rate { n++; name[n] = $2; lost[$2] = $6; other[$2] = $8
				med[$2] = $9; p[$2] = $10; max[$2] = $11 }
			$1 == "cpu" { cpu[$2] = $4 }
			END {
				rm = med["forwarder"]; rp = p["forwarder"]; rb = med["fwd-bend"]
				for (i = 1; i <= n; i++) {
					r = name[i]
					c = r in cpu ? cpu[r] : "-"
					id = r in idle ? idle[r] : "-"
					ratio_m = rm > 0 ? med[r] / rm : 0
					ratio_p = rp > 0 ? p[r] / rp : 0
					ratio_b = rb > 0 ? med[r] / rb : 0
					printf "%-10s %6d %5d %9.4f %6.2f %9.4f %6.2f %8.2f %9.4f %6d %6s %5s\n", r, rate,
						lost[r], med[r], ratio_m, p[r], ratio_p, ratio_b, max[r], other[r], c, id
				}
				if (n == 0)
					printf "%-10s %6d not measured (seqtool stream did not finish)\n", "all", rate
			}' "$OUT/idle.txt" "$OUT/stream-$rate.txt"
	done
	cat "$OUT"/status-*.txt 2>/dev/null
} >"$OUT/latency-table.txt"
cat "$OUT/latency-table.txt"
vm_finish
