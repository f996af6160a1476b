#!/bin/sh
# vm_daemon: `latticed run` on the VM's kernel sequencer, between seqtool
# clients: the player "Keys" (performance.txt) and the synth "Synth" that
# records what latticed sends.  Here: what the daemon's log, status and
# exit status say at each step of the performance.  The recordings are
# checked on the host afterwards, note by note, by check_stream.py
# (ctest vm_daemon_stream, vm_daemon_stream_portmidi).
. ./vmlib.sh
OUT=${LATTICED_VM_OUT:-/tmp}
CONF=/tmp/daemon.conf
LOG=/tmp/daemon.log

# The configs latticed runs, also kept in /out for check_stream.py.
cp daemon.conf "$CONF"
cp daemon.conf pm.conf "$OUT/"
sed 's/^root_hz = 220$/root_hz = 231/' daemon.conf >"$OUT/daemon-reload.conf"
awk '{ print } /^seeds = 1 3 5 7 9$/ { print "choose = 9" }' daemon.conf >"$OUT/daemon-broken.conf"
broken_line=$(grep -n '^choose = 9$' "$OUT/daemon-broken.conf" | cut -d: -f1)

# status_until RE FILE: `latticed status --json` into FILE until it matches RE (10 s)
status_until() {
	left=200
	until latticed status --json --config "$CONF" >"$2" 2>&1 && grep -qE "$1" "$2"; do
		[ "$left" -gt 0 ] || { echo "status_until: '$1' not in:"; cat "$2"; return 1; }
		usleep 50000
		left=$((left - 1))
	done
}

# ---------------------------------------------------------------------------
vm_step "ALSA: latticed connects to the synth and the player by pattern"
vm_start rec1 seqtool record --name Synth --port in - "$OUT/synth-1.txt" --seconds 240 --ready /tmp/rec1.ready
vm_wait_file /tmp/rec1.ready
vm_start daemon latticed run --config "$CONF"
vm_check "latticed's ports appear" sh -c 'seqtool wait latticed:synth --seconds 20 >/dev/null'
vm_check "the MIDI threads run at real-time priority 40" \
	vm_wait_log $LOG 1 '^info: MIDI threads at real-time priority 40 \(SCHED_FIFO\)$'
vm_check "output synth connected to Synth:in by its pattern, set-up sent" \
	vm_wait_log $LOG 1 '^info: output synth: connected to Synth:in; sending its set-up$' 20
vm_start player seqtool play --name Keys --port out --await-subscriber 30 - performance.txt
vm_check "the player Keys:out connected by pattern" \
	vm_wait_log $LOG 1 '^info: input: source [0-9]+ connected: Keys:out$' 20

vm_step "ALSA: the player vanishes mid-chord and comes back"
vm_check "its three held notes were ended" \
	vm_wait_log $LOG 1 '^notice: input: source [0-9]+ gone: Keys:out; its notes were ended \(3\)$' 30
vm_check "connected again by pattern" vm_wait_log $LOG 2 '^info: input: source [0-9]+ connected: Keys:out$' 20

vm_step "ALSA: status and ports while a chord is held"
vm_check "the player holds its chord" vm_wait_file /tmp/held 30
vm_check "latticed status --json lists the 3 held notes" status_until '"notes_held": 3' "$OUT/status-held.json"
for key in 60 67 71; do
	vm_check "  ... among them key $key" grep -q "\"in_key\": $key," "$OUT/status-held.json"
done
vm_check "  ... on the ALSA backend, both ports connected" sh -c "grep -q '\"backend\": \"alsa\"' $OUT/status-held.json &&
	grep -q 'in ([0-9]*:0): source [0-9]* Keys:out' $OUT/status-held.json &&
	grep -q 'synth ([0-9]*:1): to Synth:in' $OUT/status-held.json"
latticed ports --backend alsa >"$OUT/ports.txt" 2>&1
cat "$OUT/ports.txt"
vm_check "latticed ports lists the player (an input for latticed)" grep -qE '^ +[0-9]+:0 +input +Keys:out$' "$OUT/ports.txt"
vm_check "latticed ports lists the synth (an output for latticed)" grep -qE '^ +[0-9]+:0 +output +Synth:in$' "$OUT/ports.txt"

vm_step "ALSA: SIGHUP with a broken config"
cp "$OUT/daemon-broken.conf" "$CONF"
kill -HUP "$vm_pid_daemon"
vm_check "the failed reload is logged, the old configuration kept" \
	vm_wait_log $LOG 1 "^error: reload of $CONF failed; still running the previous configuration\$"
vm_check "the log line names FILE:LINE ($CONF:$broken_line)" grep -q "^error: $CONF:$broken_line: choose is 9" $LOG
vm_check "latticed status still answers" sh -c "latticed status --config $CONF >/tmp/status-broken.txt"
cat /tmp/status-broken.txt
vm_check "  ... with the main tuning and no reload counted" \
	grep -q '^tuning:  preset main, root home (presets: 0=main 1=dekany; 0 reload(s))$' /tmp/status-broken.txt
vm_check "  ... and the chord still held" grep -q '^  held notes: 3' /tmp/status-broken.txt
touch /tmp/broken-done

vm_step "ALSA: SIGHUP with a good config"
vm_check "the player played on" vm_wait_file /tmp/after-broken 30
cp "$OUT/daemon-reload.conf" "$CONF"
kill -HUP "$vm_pid_daemon"
vm_check "the reload is logged" vm_wait_log $LOG 1 "^notice: reloaded $CONF: "
vm_check "status counts it" status_until '"reloads": 1,' /tmp/status-reloaded.json
touch /tmp/reloaded

vm_step "ALSA: latticed stalls, its input queue overflows, a note-off is lost"
vm_check "the player holds key 62" vm_wait_file /tmp/stall-note 30
vm_check "  ... latticed has it" status_until '"notes_held": 1,' /tmp/status-stall.json
kill -STOP "$vm_pid_daemon"
# 3000 events in 30 ms: more than the 2000 latticed's queue holds
awk 'BEGIN { print "0 B0 01 00"; for (i = 1; i < 3000; i++) printf "+0.01 01 %02X\n", i % 128 }' >/tmp/flood.txt
vm_check "a flood player fills latticed's input queue" seqtool play --name Flood latticed:in /tmp/flood.txt
touch /tmp/stalled
vm_check "the player releases key 62 (into the full queue)" vm_wait_file /tmp/stall-done 30
kill -CONT "$vm_pid_daemon"
vm_check "latticed reads on and says what was lost and what it did" vm_wait_log $LOG 1 \
	'^warning: input: events from every source were lost \(the input queue overflowed: latticed did not read in time\); 1 held note\(s\) ended so that none hangs \(1 time\(s\) so far\)$'
vm_check "no note is left held" status_until '"notes_held": 0,' /tmp/status-resumed.json
vm_check "status counts the overrun" grep -q 'input overruns: 1 (events lost' /tmp/status-resumed.json
touch /tmp/resumed

vm_step "ALSA: the synth goes away and comes back"
vm_check "the player released everything" vm_wait_file /tmp/part5-done 30
vm_check "the synth stops (its port disappears)" vm_stop rec1
vm_check "latticed sees it go" vm_wait_log $LOG 1 '^notice: output synth: Synth:in went away; nothing listens now$'
vm_start rec2 seqtool record --name Synth --port in - "$OUT/synth-2.txt" --seconds 240 --ready /tmp/rec2.ready
vm_wait_file /tmp/rec2.ready
vm_check "the new synth is connected by pattern and gets the set-up again" \
	vm_wait_log $LOG 2 '^info: output synth: connected to Synth:in; sending its set-up$' 20
touch /tmp/synth-back

vm_step "ALSA: SIGTERM while a chord is held"
vm_check "the player holds its last chord" vm_wait_file /tmp/final-chord 30
vm_check "latticed status: 3 notes held" status_until '"notes_held": 3' /tmp/status-final.json
vm_check "SIGTERM: latticed exits with status 0" vm_stop daemon
vm_check "  ... after ending every note, as its log says" sh -c "grep -q '^notice: SIGTERM: ending every note and stopping\$' $LOG &&
	grep -q '^notice: stopped\$' $LOG"
touch /tmp/stopped
vm_check "the player finished" vm_wait player
usleep 200000
vm_check "the synth stops" vm_stop rec2
vm_check "the control socket is gone" test ! -e /tmp/latticed/control
cp $LOG "$OUT/daemon.log"

# ---------------------------------------------------------------------------
vm_step "PortMidi: Midi Through into latticed, latticed to a synth port"
LOG=/tmp/pmdaemon.log
vm_start pmrec seqtool record --name PmSynth --port PmSynthIn - "$OUT/pm-synth.txt" --seconds 120 \
	--ready /tmp/pmrec.ready
vm_wait_file /tmp/pmrec.ready
vm_start pmdaemon latticed run --config pm.conf
vm_check "input: Midi Through Port-0 opened by name" \
	vm_wait_log $LOG 1 '^info: input: source [0-9]+ connected: Midi Through Port-0' 20
vm_check "output synth: PmSynthIn opened by name" \
	vm_wait_log $LOG 1 '^info: output synth: connected to PmSynthIn' 20
vm_check "the player plays into Midi Through" seqtool play "Midi Through:Midi Through Port-0" pm-performance.txt
usleep 300000
vm_check "latticed status answers on PortMidi" sh -c 'latticed status --config pm.conf >/tmp/pmstatus.txt'
cat /tmp/pmstatus.txt
vm_check "  ... with every note played and ended" grep -q '^  held notes: 0' /tmp/pmstatus.txt
vm_check "SIGTERM: exit status 0" vm_stop pmdaemon
vm_check "the synth stops" vm_stop pmrec
cp $LOG "$OUT/pmdaemon.log"

vm_finish
