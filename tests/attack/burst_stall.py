#!/usr/bin/env python3
"""Stalled-reader attack: three outputs of one method; the synth on FIFO c
stops reading (its pipe is one page, so it fills at once) while the player
holds a chord under the sustain pedal, plays a 12 KB burst of pairs with
wheel sweeps ending at the centre, and lets the pedal go; then it reads
again for a while, and only then is the chord released.

Checked with burst_lib's receiver model (MIDI 1.0, MTS, MPE, sources
there): on every output, the stalled one included, nothing is left
sounding; while the chord is held the wheel is back at the centre (the
chord sounds at its JI pitches); the outputs that kept reading lost
nothing to the stalled one (they played as many notes as the file did,
our rule); the daemon's count of held notes matches the stream.  A second
round stalls c again for longer, with more waiting than a reserve can hold
(500 held pass-through notes, their note-offs, 12 000 pedal-ups and 2 000
more pairs): still nothing may be left sounding anywhere.  Figures are
printed.

    burst_stall.py LATTICED METHOD        METHOD: bend, mts or mpe
"""
import sys
import time

from burst_lib import Daemon, check, check_no_stuck, finish, ji_pitch, note_pairs, print_figures

BIN, METHOD = sys.argv[1], sys.argv[2]
TOLERANCE = 0.0005
CHORD = (41, 44, 46)      # below the keys the burst plays (burst_lib.note_pairs)
STALL_SECONDS = 1.5


def chord_at_ji(d, label):
    want = sorted(ji_pitch(k) for k in CHORD)
    for name, synth in d.synths.items():
        # within half a bend step of each note's channel
        notes = sorted((synth.pitch_now(ch, key), max(TOLERANCE, synth.range[ch] / 16384 + 1e-9))
                       for (ch, key) in synth.down)
        got = [p for p, _tol in notes]
        check(len(got) == len(want) and all(abs(g - w) < tol for (g, tol), w in zip(notes, want)),
              "%s: %s: the held chord sounds at its JI pitches, wheel centred (%s, JI %s)"
              % (label, name, ["%.4f" % g for g in got], ["%.4f" % w for w in want]))


def round_one(d):
    label = "%s stalled reader" % METHOD
    c = d.readers["c"]
    d.play(bytes([0xB0, 64, 127] + [b for k in CHORD for b in (0x90, k, 90)]))
    d.settle()
    c.stall()
    time.sleep(0.2)
    data = bytearray()
    pairs = note_pairs(2000)
    for i in range(2000):
        value = int(8192 + 8000 * ((i % 100) - 50) / 50)
        data += bytes([0xE0, value & 0x7F, value >> 7])
        data += pairs[6 * i:6 * i + 6]
    data += bytes([0xE0, 0x00, 0x40, 0xB0, 64, 0])
    d.play(data)
    time.sleep(STALL_SECONDS)
    st = d.status()
    print_figures(st, label + " (c stalled)")
    c.resume()
    st = d.settle()
    print_figures(st, label + " (c reading again)")
    chord_at_ji(d, label)
    counts = {n: s.note_ons for n, s in d.synths.items()}
    print("figures: %s: note-ons that reached each synth: %s" % (label, counts))
    check(counts["b"] >= counts["a"] * 0.9,
          "%s: the synth that kept reading lost nothing to the stalled one (b %d, a %d note-ons)"
          % (label, counts["b"], counts["a"]))
    for o in st.get("outputs", []):
        check(o.get("notes_held") == len(CHORD),
              "%s: status: output %s holds %s note(s), the stream %d" % (label, o["name"],
                                                                       o.get("notes_held"), len(CHORD)))
    d.play(bytes([b for k in CHORD for b in (0x80, k, 0)]))
    st = d.settle()
    check_no_stuck(d, label)
    for o in st.get("outputs", []):
        check(o.get("notes_held") == 0, "%s: status: output %s holds no note" % (label, o["name"]))


def round_two(d):
    """More waiting messages than the reserve holds: 500 pass-through notes
    (channels 10-16) held, c stalls, then their note-offs, 12 000 pedal-ups
    on channel 10 (each one passed on) and 2 000 pairs, while c stays
    stalled for longer than latticed waits for a synth (1 s)."""
    label = "%s stalled reader, 500 held notes" % METHOD
    c = d.readers["c"]
    keys = [(ch, key) for ch in range(9, 16) for key in range(30, 102)][:500]
    d.play(bytes(b for ch, key in keys for b in (0x90 | ch, key, 100)))
    d.settle()
    c.stall()
    time.sleep(0.2)
    data = bytearray(b for ch, key in keys for b in (0x80 | ch, key, 0))
    data += bytes([0xB9, 64, 0]) * 12000
    data += note_pairs(2000)
    d.play(data)
    time.sleep(STALL_SECONDS + 1.0)
    print_figures(d.status(), label + " (c stalled)")
    c.resume()
    st = d.settle()
    print_figures(st, label + " (c reading again)")
    check_no_stuck(d, label)
    for o in st.get("outputs", []):
        check(o.get("notes_held") == 0, "%s: status: output %s holds no note" % (label, o["name"]))


def main():
    # b keeps reading through a wide pipe: what it plays depends on c's stall
    # alone, not on how soon a loaded machine runs its reader
    d = Daemon(BIN, [("a", METHOD, "file"), ("b", METHOD, "wide-fifo"), ("c", METHOD, "fifo")])
    try:
        d.settle()
        round_one(d)
        round_two(d)
        rc = d.stop()
        check(rc == 0, "SIGTERM: exit status 0 (%s)" % rc)
        d.poll()
        check_no_stuck(d, "%s after SIGTERM" % METHOD)
    finally:
        d.close()
    return finish()


if __name__ == "__main__":
    sys.exit(main())
