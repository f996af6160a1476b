#!/bin/sh
# vm_smoke: the VM harness and its clients against the kernel's own
# "Midi Through" port (snd-seq-dummy), which hands every event back unchanged.
. ./vmlib.sh
THRU="Midi Through:Midi Through Port-0"
OUT=${LATTICED_VM_OUT:-/tmp}

vm_step "sequencer ports"
seqtool list | tee /tmp/ports.txt
vm_check "Midi Through is listed with its port" grep -q "	Midi Through	Midi Through Port-0	RW" /tmp/ports.txt
vm_check "a port is found by its name" sh -c 'seqtool wait "Midi Through:Midi Through Port-0" | grep -q ":0$"'

vm_step "play into Midi Through while recording it"
vm_start rec seqtool record "$THRU" "$OUT/recording.txt" --seconds 60 --ready /tmp/rec.ready
vm_wait_file /tmp/rec.ready
vm_check "play the performance (with vanish and reappear)" seqtool play "$THRU" performance.txt
vm_check "recorder stops cleanly" vm_stop rec
vm_check "recording matches byte for byte, times within 25 ms" \
	seqtool compare --time-tolerance 25 performance.txt "$OUT/recording.txt"
vm_check "the 300-byte SysEx came in 2 chunks and was joined" grep -q "(2 SysEx in 3 chunks)" /tmp/rec.log

vm_step "what seqtool sends, as alsa-utils' aseqdump reads it"
# aseqdump decodes events with its own code: pitch bend as the sequencer's
# signed value (0 = centre, -8192..8191; alsa-lib seq_event.h), a Note On
# with velocity 0 printed as "Note off" without a velocity, a real Note Off
# with one (alsa-utils aseqdump.c, as seen in its output here).
printf '0 90 3C 00\n5 80 3C 40\n10 E0 00 00\n20 E0 7F 7F\n30 E0 00 40\n40 F0 7D 01 02 03 F7\n' >/tmp/x.txt
vm_start dump aseqdump -p "$THRU"
until seqtool list | grep -q "	aseqdump	"; do usleep 20000; done
vm_check "play into Midi Through" seqtool play "$THRU" /tmp/x.txt
vm_check "aseqdump stops cleanly" vm_stop dump
vm_check "velocity-0 Note On stays a Note On" grep -Eq "Note off +0, note 60$" /tmp/dump.log
vm_check "Note Off keeps its velocity" grep -Eq "Note off +0, note 60, velocity 64$" /tmp/dump.log
vm_check "bend 00 00 is -8192" grep -Eq "Pitch bend +0, value -8192$" /tmp/dump.log
vm_check "bend 7F 7F is 8191" grep -Eq "Pitch bend +0, value 8191$" /tmp/dump.log
vm_check "bend 00 40 is 0" grep -Eq "Pitch bend +0, value 0$" /tmp/dump.log
vm_check "SysEx bytes unchanged" grep -Eq "System exclusive +F0 7D 01 02 03 F7$" /tmp/dump.log

vm_step "a player that waits to be connected, a recorder others connect to"
printf '0 90 30 40\n10 80 30 40\n' >/tmp/short.txt
vm_start keys seqtool play --name Keys --port out --await-subscriber 10 - /tmp/short.txt
seqtool wait Keys:out >/dev/null
vm_check "recording from Keys:out once it appears" \
	seqtool record Keys:out /tmp/keys.txt --count 2 --seconds 10
vm_check "player finished" vm_wait keys
vm_check "both notes recorded" seqtool compare /tmp/short.txt /tmp/keys.txt
vm_start synth seqtool record --name Synth --port in - /tmp/synth.txt --seconds 20 --ready /tmp/synth.ready
vm_wait_file /tmp/synth.ready
vm_check "playing into Synth:in" seqtool play Synth:in /tmp/short.txt
vm_check "recorder without a source stops cleanly" vm_stop synth
vm_check "both notes recorded by Synth:in" seqtool compare /tmp/short.txt /tmp/synth.txt

vm_step "vanish and reappear"
printf '0 90 3C 64\n300 vanish\n1300 reappear\n1400 80 3C 40\n' >/tmp/vanish.txt
vm_start vanisher seqtool play --name Vanisher "$THRU" /tmp/vanish.txt
vm_check "the player's port appears" sh -c 'seqtool wait Vanisher:out >/dev/null'
vm_check "its port is gone after 'vanish'" seqtool wait --gone Vanisher:out --seconds 5
vm_check "and back after 'reappear'" sh -c 'seqtool wait Vanisher:out --seconds 5 >/dev/null'
vm_check "the player finished" vm_wait vanisher

vm_step "PortMidi"
pmcheck list | tee /tmp/pm.txt
vm_check "PortMidi lists Midi Through as input and output" \
	sh -c 'grep -c "	Midi Through Port-0$" /tmp/pm.txt | grep -qx 2'
vm_check "PortMidi loop through Midi Through" pmcheck loop

vm_step "latency (figures only; TCG runs code 10-50x slower than a real machine)"
seqtool latency --count 2000 --direct | tee "$OUT/latency-direct.txt"
vm_check "latency of a direct subscription measured" grep -q "^loaded " "$OUT/latency-direct.txt"
seqtool latency --count 2000 "$THRU" "$THRU" | tee "$OUT/latency-midi-through.txt"
vm_check "latency through Midi Through measured" grep -q "^loaded " "$OUT/latency-midi-through.txt"

vm_finish
