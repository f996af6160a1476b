#!/bin/sh
# vm_latency: a benchmark, not a test of speed.  seqtool latency's probes
# (note-on, then note-off) go once through latticed (latticed:in ->
# latticed:synth) and once by a direct subscription; the kernel stamps
# both ends with one queue.  At idle and with 10 000 events/s of filler
# into the route (CC 1 on channel 1: latticed reads and handles every one,
# and passes it on only to a channel where the probe sounds).  The table
# goes to /out/latency-table.txt, which the stage prints.
. ./vmlib.sh
OUT=${LATTICED_VM_OUT:-/tmp}
COUNT=${LATENCY_PROBES:-2000}

vm_step "latency: latticed between the probe ports"
vm_start daemon latticed run --config latency.conf
vm_check "latticed's ports appear" sh -c 'seqtool wait latticed:synth --seconds 20 >/dev/null'
# Figures, not checks: a run that could not finish (a host too busy) shows
# up in the table as a missing row, not as a failure.
timeout 120 seqtool latency --count "$COUNT" --direct | tee "$OUT/latency-direct.txt"
timeout 120 seqtool latency --count "$COUNT" latticed:in latticed:synth | tee "$OUT/latency-latticed.txt"
vm_check "latticed status answers" sh -c 'latticed status --config latency.conf >/tmp/status.txt'
cat /tmp/status.txt
vm_check "latticed stops cleanly" vm_stop daemon

# The columns of seqtool latency: phase probes lost filler/s path-median path-p99.9 ...
awk -v probes="$COUNT" '
	FNR == 1 { route = FILENAME ~ /latticed/ ? "latticed" : "direct" }
	$1 == "idle" || $1 == "loaded" {
		got[route, $1] = $2; lost[route, $1] = $3; rate[route, $1] = $4
		med[route, $1] = $5; p999[route, $1] = $6
	}
	/^# (idle|loaded): / { notes = notes "# " route ", " substr($0, 3) "\n" }
	END {
		print "# latency in the test VM under qemu TCG emulation (code runs 10-50x slower than on"
		print "# real hardware): kernel timestamps, probe sent -> probe received, in ms; " probes " probes"
		print "# per phase, 2 ms apart; loaded: 10 000 CC/s of filler into the same route (filler/s: reached)"
		printf "%-7s %9s %9s %9s %6s %9s %9s %6s %5s %5s\n", "phase", "filler/s", "direct", "latticed",
			"ratio", "direct", "latticed", "ratio", "lost", "lost"
		printf "%-7s %9s %9s %9s %6s %9s %9s %6s %5s %5s\n", "", "latticed", "median", "median", "",
			"p99.9", "p99.9", "", "dir.", "latt."
		split("idle loaded", phases, " ")
		for (i = 1; i <= 2; i++) {
			ph = phases[i]
			if (got["latticed", ph] == "" || got["direct", ph] == "")
				continue
			d = med["direct", ph]; l = med["latticed", ph]
			dp = p999["direct", ph]; lp = p999["latticed", ph]
			printf "%-7s %9d %9.4f %9.4f %6.0f %9.4f %9.4f %6.1f %5d %5d\n", ph, rate["latticed", ph], d, l,
				(d > 0 ? l / d : 0), dp, lp, (dp > 0 ? lp / dp : 0), lost["direct", ph], lost["latticed", ph]
		}
		printf "%s", notes
	}' "$OUT/latency-direct.txt" "$OUT/latency-latticed.txt" >"$OUT/latency-table.txt"
for phase in idle loaded; do
	grep -q "^$phase " "$OUT/latency-table.txt" ||
		echo "# $phase: not measured (seqtool latency did not finish in time)" >>"$OUT/latency-table.txt"
done
grep -E '^output synth|^  notes:|input overruns' /tmp/status.txt | sed 's/^ */# latticed: /' >>"$OUT/latency-table.txt"
cat "$OUT/latency-table.txt"
vm_finish
