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
#   bend-view  latticed with the bend method again, followed by `latticed
#              view` with 10 event streams open (what 10 phones showing the
#              live page ask of it), read by busybox wget
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
# Where each program runs.  Under TCG a route's latency depends by half on
# which vCPU it and the player share (identical forwarders measured 0.09 ms
# on one and 0.12-0.15 ms on the other in the same run), so every route runs on
# the second vCPU and seqtool stream on the first: each route is then
# measured in the same place, and a ratio compares the programs' work.
if [ "$(nproc)" -ge 2 ]; then
	ON_ROUTE_CPU="taskset 2" ON_PLAYER_CPU="taskset 1"
	PLACEMENT="every route on vCPU 1, the player on vCPU 0"
else
	ON_ROUTE_CPU="" ON_PLAYER_CPU=""
	PLACEMENT="one vCPU: routes and player share it"
fi

# nanoseconds on a CPU of all threads of a process (the scheduler's clock)
cpu_ns() { cat /proc/"$1"/task/*/schedstat | awk '{ ns += $1 } END { printf "%.0f\n", ns }'; }

vm_step "latency: the forwarder and one latticed per method"
vm_start fwd $ON_ROUTE_CPU seqtool forward
vm_start fwdbend $ON_ROUTE_CPU seqtool forward --name fwd-bend --bend-before-notes
routes="--direct direct --route forwarder forwarder:in forwarder:out --route fwd-bend fwd-bend:in fwd-bend:out"
watch="forwarder:$vm_pid_fwd fwd-bend:$vm_pid_fwdbend"
# an instance per route: its name, its method the part before any "-"
INSTANCES="$METHODS bend-view"
PAGE_STREAMS=10
VIEW_URL=http://127.0.0.1:7316
# a shell variable per route: its name with "-" made "_" (fwd-bend)
var_of() { printf '%s_%s' "$1" "$2" | tr -- - _; }
for inst in $INSTANCES; do
	method=${inst%%-*}
	conf=/tmp/latency-$inst.conf
	# mts: each key on its own key, so held neighbours never share one
	sed -e "s/^method = bend$/method = $method/" -e "s/^client_name = .*/client_name = latticed-$inst/" \
		-e "s|^control_socket = .*|control_socket = /tmp/latticed-$inst/control|" latency.conf >"$conf"
	[ "$method" = mts ] && printf 'mts_key = own\n' >>"$conf"
	vm_start "$(var_of daemon "$inst")" $ON_ROUTE_CPU latticed run --config "$conf"
	routes="$routes --route $inst latticed-$inst:in latticed-$inst:synth"
done
vm_check "the forwarder's ports appear" sh -c 'seqtool wait forwarder:out --seconds 20 >/dev/null'
vm_check "the bending forwarder's ports appear" sh -c 'seqtool wait fwd-bend:out --seconds 20 >/dev/null'
for inst in $INSTANCES; do
	vm_check "latticed's ports appear ($inst)" \
		sh -c "seqtool wait latticed-$inst:synth --seconds 20 >/dev/null"
	eval "watch=\"\$watch $inst:\$$(var_of vm_pid_daemon "$inst")\""
done

# The view of bend-view and its page streams, on the loopback interface
vm_check "the loopback interface comes up" ifconfig lo 127.0.0.1 up
vm_start view $ON_ROUTE_CPU latticed view --socket /tmp/latticed-bend-view/control --listen 127.0.0.1:7316
vm_check "latticed view answers" sh -c "for i in \$(seq 100); do
	wget -q -O /dev/null $VIEW_URL/state && exit 0; sleep 0.2; done; exit 1"
for i in $(seq $PAGE_STREAMS); do
	vm_start "page$i" $ON_ROUTE_CPU wget -q -O "/tmp/page-stream-$i.txt" "$VIEW_URL/events"
done
sleep 1

# CPU use with no MIDI at all, once start-up is over
sleep 2
for w in $watch; do eval "$(var_of idle0 "${w%%:*}")=$(cpu_ns "${w#*:}")"; done
sleep $IDLE_S
for w in $watch; do
	eval "t0=\$$(var_of idle0 "${w%%:*}")"
	awk -v a="$t0" -v b="$(cpu_ns "${w#*:}")" -v s=$IDLE_S -v m="${w%%:*}" \
		'BEGIN { printf "idle %s %.2f\n", m, (b - a) / s / 1e7 }'
done >"$OUT/idle.txt"
cat "$OUT/idle.txt"

cpus=""
for w in $watch; do cpus="$cpus --cpu ${w%%:*} ${w#*:}"; done
for rate in $RATES; do
	vm_step "latency: $COUNT note events per route at $rate/s"
	# shellcheck disable=SC2086
	view0=$(cpu_ns "$vm_pid_view")
	timeout 300 $ON_PLAYER_CPU seqtool stream --rate "$rate" --count "$COUNT" $routes $cpus >"$OUT/stream-$rate.txt" 2>&1
	view1=$(cpu_ns "$vm_pid_view")
	cat "$OUT/stream-$rate.txt"
	# the view's CPU over the stream, as a share of one core during bend-view's
	# own turns (as seqtool gives the routes'), the only ones it has work in
	awk -v a="$view0" -v b="$view1" -v rate="$rate" -v n="$COUNT" \
		'BEGIN { printf "view %d %.1f\n", rate, 100 * (b - a) / 1e9 / (n / rate) }' >>"$OUT/view-cpu.txt"
done

# every page stream still open and fed: its process alive, its bytes counted
alive=0 bytes=""
for i in $(seq $PAGE_STREAMS); do
	eval "pid=\$vm_pid_page$i"
	kill -0 "$pid" 2>/dev/null && alive=$((alive + 1))
	bytes="$bytes $(wc -c <"/tmp/page-stream-$i.txt")"
done
vm_check "all $PAGE_STREAMS page streams stayed open" test "$alive" = "$PAGE_STREAMS"
# a page state with tones sounding ("sounding":N in view_model_page's JSON)
streams_saw_notes() {
	for f in /tmp/page-stream-*.txt; do
		grep -q '"sounding":[1-9]' "$f" || { echo "$f: no page state with a tone sounding"; return 1; }
	done
}
vm_check "every page stream received the notes" streams_saw_notes
echo "page streams: $alive open, bytes received:$bytes" >"$OUT/page-streams.txt"
for i in $(seq $PAGE_STREAMS); do kill "$(eval echo "\$vm_pid_page$i")" 2>/dev/null; done
vm_check "latticed view stops cleanly" vm_stop view

for inst in $INSTANCES; do
	conf=/tmp/latency-$inst.conf
	vm_check "latticed status answers ($inst)" sh -c "latticed status --config $conf >/tmp/status-$inst.txt"
	grep -E '^output synth|^  notes:|input overruns|left out' "/tmp/status-$inst.txt" |
		sed "s/^ */# latticed $inst: /" >"$OUT/status-$inst.txt"
	vm_check "latticed stops cleanly ($inst)" vm_stop "$(var_of daemon "$inst")"
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
	echo "# for ${IDLE_S} s; placement: $PLACEMENT"
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
	for rate in $RATES; do
		awk -v rate="$rate" '$1 == "stream" && $3 == rate { med[$2] = $9; p[$2] = $10 }
			END { if (med["bend"] > 0 && p["bend"] > 0 && ("bend-view" in med))
				printf "# bend-view / bend at %d/s: median %.2f, p99.9 %.2f\n", rate,
					med["bend-view"] / med["bend"], p["bend-view"] / p["bend"] }' "$OUT/stream-$rate.txt"
	done
	awk '{ printf "# latticed view (10 page streams), CPU during bend-view'"'"'s turns at %d/s: %s %% of one core\n", $2, $3 }' \
		"$OUT/view-cpu.txt" 2>/dev/null
	sed 's/^/# /' "$OUT/page-streams.txt" 2>/dev/null
	cat "$OUT"/status-*.txt 2>/dev/null
} >"$OUT/latency-table.txt"
cat "$OUT/latency-table.txt"
vm_finish
