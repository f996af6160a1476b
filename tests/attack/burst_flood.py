#!/usr/bin/env python3
"""Burst attack: one 12 KB write of 2000 note on/off pairs (and variants
with pedals and the wheel) into `latticed run --backend raw` with three
outputs of one method (a regular file and two FIFOs read at once).

Checked on every output with the receiver model of burst_lib (MIDI 1.0,
MTS, MPE rules named there): no note left sounding, every note-on at a
just-intonation pitch of the hexany (so each bend or tuning went out before
its note, in order), no bend moved under a sounding note unless the wheel
moved it (the engine's promise, our rule), the wheel's last position
(centre) reached the note held through the burst, and the daemon's own
count of held notes agrees with the stream.  The figures of what was shed
are printed.

    burst_flood.py LATTICED METHOD        METHOD: bend, mts or mpe
"""
import sys

from burst_lib import (Daemon, check, check_no_stuck, finish, ji_pitch, note_pairs,
                       print_figures)

BIN, METHOD = sys.argv[1], sys.argv[2]
TOLERANCE = 0.0005   # semitones: half a bend step at +-2 is 0.00012, an MTS step 0.00006

# the note held through the wheel burst, below the keys the burst plays
# (a second note-on on its key would end it: our engine's rule)
PROBE = 44


def jiset(low=40, high=92):
    return [ji_pitch(k) for k in range(low, high + 1)]


def check_pitches(d, label, since):
    want = jiset()
    for name, synth in d.synths.items():
        # within half a bend step of the channel's range (half an MTS step
        # is smaller than TOLERANCE)
        bad = [p for p, half_step in synth.pitches[since[name]:]
               if min(abs(p - w) for w in want) > max(TOLERANCE, half_step + 1e-9)]
        check(not bad, "%s: %s: every note-on at a JI pitch of the hexany (%d of %d off, e.g. %s)"
              % (label, name, len(bad), len(synth.pitches) - since[name], bad[:3]))


def held_agrees(d, st, label, expected):
    for o in st.get("outputs", []):
        check(o.get("notes_held") == expected,
              "%s: status says output %s holds %s note(s), the stream says %d"
              % (label, o["name"], o.get("notes_held"), expected))


def burst_plain(d):
    label = "%s plain burst" % METHOD
    since = {n: len(s.pitches) for n, s in d.synths.items()}
    bends = {n: s.bends_under_notes for n, s in d.synths.items()}
    data = note_pairs(2000)
    check(len(data) == 12000, "the burst is one 12 000-byte write")
    d.play(data)
    st = d.settle()
    print_figures(st, label)
    check_no_stuck(d, label)
    check_pitches(d, label, since)
    for name, synth in d.synths.items():
        check(synth.bends_under_notes == bends[name],
              "%s: %s: no bend moved under a sounding note (%d)" % (label, name,
                                                                   synth.bends_under_notes - bends[name]))
    held_agrees(d, st, label, 0)


def burst_pedals(d):
    """Sustain down every 50 pairs and up 25 pairs later; sostenuto over a
    held chord; everything let go at the end of the same write."""
    label = "%s burst with pedals" % METHOD
    since = {n: len(s.pitches) for n, s in d.synths.items()}
    data = bytearray([0x90, 50, 90, 0x90, 53, 90, 0xB0, 66, 127, 0x80, 50, 0, 0x80, 53, 0])
    pairs = note_pairs(2000)
    for i in range(2000):
        if i % 50 == 0:
            data += bytes([0xB0, 64, 127])
        elif i % 50 == 25:
            data += bytes([0xB0, 64, 0])
        data += pairs[6 * i:6 * i + 6]
    data += bytes([0xB0, 64, 0, 0xB0, 66, 0])
    d.play(data)
    st = d.settle()
    print_figures(st, label)
    check_no_stuck(d, label)
    check_pitches(d, label, since)
    held_agrees(d, st, label, 0)


def burst_wheel(d):
    """A note held through a burst of pairs mixed with wheel sweeps that end
    at the centre: afterwards the held note sounds at its JI pitch again."""
    label = "%s burst with the wheel" % METHOD
    d.play(bytes([0x90, PROBE, 100]))
    d.settle()
    data = bytearray()
    pairs = note_pairs(2000)
    for i in range(2000):
        value = int(8192 + 8000 * ((i % 200) - 100) / 100)
        data += bytes([0xE0, value & 0x7F, value >> 7, 0xD0, i % 128])
        data += pairs[6 * i:6 * i + 6]
    data += bytes([0xE0, 0x00, 0x40, 0xD0, 0])   # centre, no pressure
    d.play(data)
    st = d.settle()
    print_figures(st, label)
    want = ji_pitch(PROBE)
    for name, synth in d.synths.items():
        down = list(synth.down)
        check(len(down) == 1, "%s: %s: only the held note sounds (%s)" % (label, name, down[:8]))
        if down:
            ch, key = down[0]
            got = synth.pitch_now(ch, key)
            check(abs(got - want) < max(TOLERANCE, synth.range[ch] / 16384 + 1e-9),
                  "%s: %s: the wheel is back at the centre: the held note sounds at %.4f, JI %.4f"
                  % (label, name, got, want))
    held_agrees(d, st, label, 1)
    d.play(bytes([0x80, PROBE, 0]))
    st = d.settle()
    check_no_stuck(d, label + ", note released")
    held_agrees(d, st, label + ", note released", 0)


def main():
    d = Daemon(BIN, [("a", METHOD, "file"), ("b", METHOD, "fifo"), ("c", METHOD, "fifo")])
    try:
        d.settle()
        burst_plain(d)
        burst_pedals(d)
        burst_wheel(d)
        # the same figures in the text form of status, for people (our rule)
        st = d.status()
        rc, text, err = d.client("status")
        for o in st.get("outputs", []):
            shed = o.get("shed", {})
            line = "under load: %d new notes and %d system messages left out, %d controller values merged" % (
                shed.get("note_ons", -1), shed.get("system", -1), shed.get("values_merged", -1))
            check(rc == 0 and line in text, "latticed status shows output %s's figures: %s" % (o["name"], line))
        rc = d.stop()
        check(rc == 0, "SIGTERM: exit status 0 (%s)" % rc)
        d.poll()
        check_no_stuck(d, "%s after SIGTERM" % METHOD)
    finally:
        d.close()
    return finish()


if __name__ == "__main__":
    sys.exit(main())
