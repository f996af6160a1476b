#!/bin/sh
# vm_connect: connecting latticed by name on the VM's kernel sequencer.
# A recorder named as FluidSynth names itself ("FLUID Synth", port "Synth
# input port"), a player "Keys"; latticed runs with no connect patterns.
# aconnect (alsa-utils) resolves a client name but reads what follows the
# colon as a port number, so "latticed:synth" becomes latticed's port 0,
# its input, which the kernel refuses as a sender; the numbers from
# `latticed ports` work.  `latticed connect` takes names, patterns and
# numbers and refuses what names no port or several.
. ./vmlib.sh
OUT=${LATTICED_VM_OUT:-/tmp}
LOG=/tmp/daemon.log

# number NAME: the client:port `latticed ports` shows for the port NAME
number() {
	awk -v name="$1" '{ n = $1; $1 = ""; $2 = ""; sub(/^  */, ""); if ($0 == name) print n }' "$OUT/ports.txt"
}

vm_step "a synth and latticed, not connected"
vm_start synth seqtool record --name "FLUID Synth" --port "Synth input port" - "$OUT/synth.txt" \
	--seconds 120 --ready /tmp/synth.ready
vm_wait_file /tmp/synth.ready
vm_start daemon latticed run --config connect.conf
vm_check "latticed's ports appear" sh -c 'seqtool wait latticed:synth --seconds 20 >/dev/null'
latticed ports >"$OUT/ports.txt" 2>&1
cat "$OUT/ports.txt"
synth=$(number "latticed:synth")
input=$(number "latticed:in")
fluid=$(number "FLUID Synth:Synth input port")
vm_check "latticed ports shows latticed:synth with its number ($synth)" sh -c "echo '$synth' | grep -qE '^[0-9]+:1\$'"
vm_check "  ... latticed:in ($input) and the synth ($fluid)" sh -c "echo '$input $fluid' | grep -qE '^[0-9]+:0 [0-9]+:0\$'"
vm_check "  ... and how to connect two of them" grep -q '^Connect two: latticed connect SRC DST' "$OUT/ports.txt"

vm_step "aconnect by names takes latticed's port 0"
vm_check "aconnect latticed:synth 'FLUID Synth' fails" sh -c '! aconnect latticed:synth "FLUID Synth" 2>/tmp/aconnect.err'
cat /tmp/aconnect.err
vm_check "  ... the kernel refused it (Operation not permitted)" grep -q 'Operation not permitted' /tmp/aconnect.err
vm_check "aconnect with the numbers from latticed ports works" aconnect "$synth" "$fluid"
vm_check "latticed sees its synth" \
	vm_wait_log $LOG 1 '^info: output synth: connected to FLUID Synth:Synth input port; sending its set-up$' 20
vm_check "aconnect -d undoes it" aconnect -d "$synth" "$fluid"
vm_check "  ... latticed sees it go" vm_wait_log $LOG 1 '^notice: output synth: FLUID Synth:Synth input port went away' 20

vm_step "latticed connect by name and pattern"
vm_check "latticed connect latticed:synth 'FLUID*'" sh -c "latticed connect latticed:synth 'FLUID*' >/tmp/c1.out"
cat /tmp/c1.out
vm_check "  ... says what it connected, with the numbers" \
	grep -qx "connected latticed:synth ($synth) -> FLUID Synth:Synth input port ($fluid)" /tmp/c1.out
vm_check "  ... latticed sees its synth again" \
	vm_wait_log $LOG 2 '^info: output synth: connected to FLUID Synth:Synth input port; sending its set-up$' 20
vm_check "the same again: already connected, exit 0" sh -c "latticed connect synth 'FLUID Synth' >/tmp/c2.out"
vm_check "  ... and said so" grep -q '^already connected: latticed:synth' /tmp/c2.out
vm_start player seqtool play --name Keys --port out --await-subscriber 30 - performance.txt
vm_check "the player's port appears" sh -c 'seqtool wait Keys:out --seconds 20 >/dev/null'
vm_check "latticed connect 'Keys*' latticed:in" latticed connect 'Keys*' latticed:in
vm_check "  ... latticed has its source" vm_wait_log $LOG 1 '^info: input: source [0-9]+ connected: Keys:out$' 20
vm_check "the player played its note" vm_wait player
usleep 300000

vm_step "what latticed connect refuses"
vm_check "a pattern naming several ports (exit 1)" sh -c '! latticed connect "*" latticed:in 2>/tmp/e1'
cat /tmp/e1
vm_check "  ... lists them and asks for one" grep -q "^latticed connect: '\*' matches [0-9]* ports that send: .*; expected one" /tmp/e1
vm_check "a port that only receives as SRC (exit 1)" sh -c '! latticed connect latticed:in "FLUID*" 2>/tmp/e2'
cat /tmp/e2
vm_check "  ... says no sending port matches and lists those there are" \
	grep -q "^latticed connect: no port that sends (a keyboard, latticed's output) matches 'latticed:in'; such ports: .*latticed:synth ($synth)" /tmp/e2
vm_check "nothing matching DST (exit 1)" sh -c '! latticed connect latticed:synth "Nothing*" 2>/tmp/e3'
vm_check "a missing argument is a usage error (exit 2)" sh -c 'latticed connect latticed:synth 2>/dev/null; test $? -eq 2'

vm_step "latticed connect --disconnect, by numbers"
vm_check "disconnect by numbers" sh -c "latticed connect --disconnect '$synth' '$fluid' >/tmp/d1.out"
vm_check "  ... said so" grep -qx "disconnected latticed:synth ($synth) -> FLUID Synth:Synth input port ($fluid)" /tmp/d1.out
vm_check "  ... latticed sees it go" vm_wait_log $LOG 2 '^notice: output synth: FLUID Synth:Synth input port went away' 20
vm_check "again: not connected, exit 0" sh -c "latticed connect -d '$synth' '$fluid' | grep -q '^not connected: '"
vm_check "latticed stops on SIGTERM" vm_stop daemon
cp $LOG "$OUT/daemon.log"

vm_step "a config's connect list by client:port number"
sed "s/^channels = 2-3\$/channels = 2-3\nconnect = $fluid/; s|^control_socket = .*|control_socket = none|" \
	connect.conf >/tmp/by-number.conf
LOG=/tmp/daemon2.log
vm_start daemon2 latticed run --config /tmp/by-number.conf
vm_check "connect = $fluid connects the synth" \
	vm_wait_log $LOG 1 '^info: output synth: connected to FLUID Synth:Synth input port; sending its set-up$' 20
vm_check "latticed stops on SIGTERM" vm_stop daemon2
vm_check "the synth stops" vm_stop synth
vm_check "the synth got the note through latticed (key 60 = 3/2, out on key 64 = 40)" grep -qE '^[0-9.]+ 9[12] 40 64$' "$OUT/synth.txt"
vm_finish
