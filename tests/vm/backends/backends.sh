#!/bin/sh
# vm_backends: the ALSA and PortMidi backends through src/io/include/midi_io.h,
# driven by io_probe (input thread + output thread, every message sent on
# unchanged) between seqtool players and recorders.
. ./vmlib.sh
OUT=${LATTICED_VM_OUT:-/tmp}
LOG=/tmp/probe.log

# log_count PATTERN: lines of the probe's log that match (grep -E)
log_count() {
	grep -cE "$1" "$LOG" 2>/dev/null || true
}

# wait_log N PATTERN [S]: until PATTERN has matched N lines of the log
wait_log() {
	left=$(( ${3:-10} * 20 ))
	while [ "$(log_count "$2")" -lt "$1" ]; do
		[ "$left" -gt 0 ] || { echo "wait_log: '$2' not seen $1 times"; tail -n 20 "$LOG"; return 1; }
		usleep 50000
		left=$((left - 1))
	done
}

# in_order FILE PATTERN...: each pattern matches a line after the one before
in_order() {
	f=$1
	shift
	awk -v n="$#" 'BEGIN { for (i = 1; i < ARGC; i++) p[i] = ARGV[i]; ARGC = 1; k = 1 }
		k <= n && $0 ~ p[k] { k++ }
		END { exit k <= n }' "$@" <"$f"
}

describe() {
	before=$(log_count '^describe: ')
	kill -USR1 "$vm_pid_probe"
	wait_log $((before + 2)) '^describe: ' 5
}

# ---------------------------------------------------------------------------
vm_step "ALSA: list, and the error for a user without access"
io_probe alsa list | tee /tmp/list.txt
vm_check "list shows Midi Through as both input and output" \
	grep -qE '^ +14:0 +both +Midi Through:Midi Through Port-0$' /tmp/list.txt
vm_check "list leaves out the System client" sh -c '! grep -q "System" /tmp/list.txt'
ls -l /dev/snd/seq
echo 'player:x:1000:1000::/tmp:/bin/sh' >>/etc/passwd
su player -c 'io_probe alsa open' >/tmp/denied.txt 2>&1
cat /tmp/denied.txt
vm_check "a user without access gets one line with the fix" sh -c \
	'[ "$(cat /tmp/denied.txt)" = "io_probe: no permission to open the ALSA sequencer /dev/snd/seq; add the user to the audio group ('"'"'usermod -aG audio USER'"'"', then log in again)" ]'

vm_step "ALSA: forward from a player to a recorder, both found by pattern"
vm_start rec1 seqtool record --name Recorder --port RecorderIn - "$OUT/alsa-forward.txt" --count 19 \
	--seconds 60 --ready /tmp/rec1.ready
vm_wait_file /tmp/rec1.ready
vm_start probe io_probe alsa forward --in 'Player*' --out 'Recorder:*' --seconds 200
# vm_start's log of the probe is the one the checks read
LOG=/tmp/probe.log
vm_check "output connected to the recorder by pattern" wait_log 1 '^output-connected 0 Recorder:RecorderIn$' 20
vm_check "the player plays (vanishing and coming back mid-way)" \
	seqtool play --name Player --port PlayerKeys --await-subscriber 20 - alsa-performance.txt
vm_check "all 19 messages recorded" vm_wait rec1
vm_check "recording equals the performance byte for byte" \
	seqtool compare alsa-performance.txt "$OUT/alsa-forward.txt"
vm_check "the 300-byte SysEx arrived whole and unbroken" \
	grep -q "(2 SysEx in 2 chunks).*0 broken SysEx" /tmp/rec1.log
vm_check "source connected, gone when the player vanished, back under the same number" \
	in_order "$LOG" '^source-connected 0 Player:PlayerKeys$' '^source-gone 0 Player:PlayerKeys$' \
	'^source-connected 0 Player:PlayerKeys$'
vm_check "the player leaving at the end is reported too" wait_log 2 '^source-gone 0 Player:PlayerKeys$'

vm_step "ALSA: the recorder vanishes and comes back"
vm_check "output gone when the recorder left" wait_log 1 '^output-gone 0 Recorder:RecorderIn$'
vm_start rec2 seqtool record --name Recorder --port RecorderIn - "$OUT/alsa-second.txt" --count 4 \
	--seconds 60 --ready /tmp/rec2.ready
vm_wait_file /tmp/rec2.ready
vm_check "output connected again by pattern" wait_log 2 '^output-connected 0 Recorder:RecorderIn$'
vm_check "the player plays again" seqtool play --name Player --port PlayerKeys --await-subscriber 20 - second.txt
vm_check "4 messages recorded" vm_wait rec2
vm_check "second recording equals its performance" seqtool compare second.txt "$OUT/alsa-second.txt"
vm_check "output gone again" wait_log 2 '^output-gone 0 Recorder:RecorderIn$'

vm_step "ALSA: connections made by others (aconnect, seqtool) count too"
vm_start rec3 seqtool record --name Recorder --port RecorderIn - /tmp/rec3.txt --seconds 60 --ready /tmp/rec3.ready
vm_wait_file /tmp/rec3.ready
vm_check "recorder connected by pattern" wait_log 3 '^output-connected 0 Recorder:RecorderIn$'
describe
vm_check "describe names the destination" grep -qE '^describe: synth \([0-9]+:1\): to Recorder:RecorderIn \([0-9]+:0\)' "$LOG"
vm_check "aconnect -d takes it away" aconnect -d latticed:1 Recorder:0
vm_check "output gone" wait_log 3 '^output-gone 0 Recorder:RecorderIn$'
vm_check "aconnect puts it back" aconnect latticed:1 Recorder:0
vm_check "output connected" wait_log 4 '^output-connected 0 Recorder:RecorderIn$'
vm_check "aconnect connects Midi Through to our input" aconnect "Midi Through:0" latticed:0
vm_check "a source for it" wait_log 1 '^source-connected 0 Midi Through:Midi Through Port-0$'
describe
vm_check "describe lists the source" grep -qE '^describe: in \([0-9]+:0\): source 0 Midi Through:Midi Through Port-0 \(14:0\)' "$LOG"
vm_check "aconnect -d takes it away" aconnect -d "Midi Through:0" latticed:0
vm_check "the source is gone" wait_log 1 '^source-gone 0 Midi Through:Midi Through Port-0$'
printf '0 92 30 40\n10 82 30 40\n' >/tmp/direct.txt
vm_check "seqtool play connects itself to latticed:in" seqtool play --name Direct latticed:in /tmp/direct.txt
vm_check "a source for it, gone when it left" \
	in_order "$LOG" '^source-connected 0 Direct:out$' '^source-gone 0 Direct:out$'
usleep 300000
vm_check "recorder stops" vm_stop rec3
vm_check "the notes it played reached the recorder" seqtool compare /tmp/direct.txt /tmp/rec3.txt

vm_step "ALSA: the input queue overflows; what was lost is rebuilt from the kernel"
# 5000 CCs in 20 ms while io_probe sleeps (SIGUSR2): more than the kernel's
# input queue for a client holds (at most 2000 events).  The player then
# exits, and the notices of that are lost in the full queue too.
vm_start flood seqtool play --name Flood latticed:in flood.txt
vm_check "flood player connected" wait_log 1 '^source-connected 0 Flood:out$'
kill -USR2 "$vm_pid_probe"
vm_check "io_probe stops reading" wait_log 1 '^pause: 4 s$'
vm_check "the flood player finishes and leaves" vm_wait flood
vm_check "io_probe reads again" wait_log 1 '^pause: over$' 10
vm_check "the loss is reported for every source (INPUT_LOST -1)" wait_log 1 '^input-lost -1 $' 5
vm_check "its source is reported gone all the same (held notes get ended)" \
	wait_log 1 '^source-gone 0 Flood:out$' 5
describe
vm_check "describe counts the overrun" grep -qE '^describe: in .*; input overruns: 1 \(events lost; queue of [0-9]+ events\)' "$LOG"

vm_step "ALSA: latency through io_probe (figures only; TCG is 10-50x slower than a real machine)"
# seqtool latency subscribes itself to latticed:in and latticed:synth.
seqtool latency --count 1000 latticed:in latticed:synth | tee "$OUT/latency-io-probe-alsa.txt"
vm_check "latency measured" grep -q "^loaded " "$OUT/latency-io-probe-alsa.txt"
vm_check "probe stops cleanly" vm_stop probe
vm_check "send never refused a message" grep -qE '^totals: .* 0 refused by send, 0 lost' "$LOG"

# ---------------------------------------------------------------------------
vm_step "PortMidi: list, and a loop through Midi Through"
io_probe portmidi list | tee /tmp/pmlist.txt
vm_check "PortMidi lists Midi Through as input and output" \
	sh -c 'grep -cE "^ +[0-9]+ +(input|output) +Midi Through Port-0 \(ALSA\)$" /tmp/pmlist.txt | grep -qx 2'
vm_check "11 channel messages, a 300-byte SysEx and a clock come back unchanged" \
	io_probe portmidi loop --in 'Midi Through*' --out 'Midi Through*' --seconds 20

vm_step "PortMidi: forward from a player device to a recorder device"
vm_start rec4 seqtool record --name Recorder --port RecorderIn - "$OUT/pm-forward.txt" --count 14 \
	--seconds 60 --ready /tmp/rec4.ready
vm_wait_file /tmp/rec4.ready
vm_start player seqtool play --name Player --port PlayerKeys --await-subscriber 30 - pm-performance.txt
seqtool wait Player:PlayerKeys >/dev/null
LOG=/tmp/pm.log
vm_start pm io_probe portmidi forward --in 'PlayerKeys' --out 'RecorderIn' --seconds 60
vm_check "output opened by name" wait_log 1 '^output-connected 0 RecorderIn$' 20
vm_check "source opened by name" wait_log 1 '^source-connected 0 PlayerKeys$' 20
vm_check "player finished" vm_wait player
vm_check "all 14 messages recorded" vm_wait rec4
vm_check "recording equals the performance byte for byte" seqtool compare pm-performance.txt "$OUT/pm-forward.txt"
vm_check "probe stops cleanly" vm_stop pm

vm_step "PortMidi: devices that appear after start, while nothing is open"
LOG=/tmp/pmlate.log
vm_start pmlate io_probe portmidi forward --in 'LateKeys' --out 'LateSynth' --seconds 60
sleep 1
vm_start rec5 seqtool record --name Late --port LateSynth - /tmp/late.txt --count 4 --seconds 60 --ready /tmp/rec5.ready
vm_wait_file /tmp/rec5.ready
vm_start player2 seqtool play --name Late2 --port LateKeys --await-subscriber 30 - second.txt
vm_check "found by the rescan within 5 s" wait_log 1 '^source-connected 0 LateKeys$' 5
vm_check "output too" wait_log 1 '^output-connected 0 LateSynth$' 1
vm_check "player finished" vm_wait player2
vm_check "4 messages recorded" vm_wait rec5
vm_check "recording equals the performance" seqtool compare second.txt /tmp/late.txt
vm_check "probe stops cleanly" vm_stop pmlate

vm_finish
