#!/usr/bin/env python3
"""Writes config/demo/hexany-demo.mid, the demo performance, byte by byte.

  scripts/make-demo.py [OUT.mid]      write the file (default: config/demo/hexany-demo.mid)
  scripts/make-demo.py --check FILE   exit 1 unless FILE is exactly what this script writes

"Around the hexany", a piece of our own, about 45 seconds: the 1 3 5 7
hexany as an organ walks around its octahedron, from each harmonic triad
to a subharmonic triad that shares two of its tones and on, one voice
moving at a time; a piano melody on the tones of each chord, with the
sustain pedal changed at every chord and a little scoop of the pitch wheel
into some notes; a ritardando at the end.

The file is an ordinary 12-TET performance: every tone is played on the
12-TET key nearest to it, as config/demo/fluidsynth.conf (layout =
nearest) maps it.  Played as it is, it is the 12-TET approximation of the
piece (the 7/4 chords become diminished and dominant-seventh sounds);
retuned by `latticed render`, every tone sounds at its just ratio.
Python's standard library only; no randomness, so the bytes are the same
every time.
"""
import math
import os
import sys

TPQ = 480
BAR = 4 * TPQ
ROOT_HZ = 220.0  # 1/1 of config/demo/fluidsynth.conf

# The hexany on 1 3 5 7: each tone is the product of two seeds, reduced
# into the octave.  Label -> ratio.
TONES = {
    "5.7": 35 / 32, "1.5": 5 / 4, "3.7": 21 / 16,
    "1.3": 3 / 2, "1.7": 7 / 4, "3.5": 15 / 8,
}


def key(label, period=0):
    """the 12-TET key nearest to the tone (key 69 = A4 = 440 Hz)"""
    hz = ROOT_HZ * TONES[label] * 2 ** period
    return round(69 + 12 * math.log2(hz / 440))


# The nearest layout gives each tone its own key: check there is no clash.
assert len({key(t) for t in TONES}) == len(TONES)

# (harmonic: the three tones sharing a seed; subharmonic: the three
# products inside three seeds).  Each chord: (tone, period) from low to high.
CHORDS = [
    ("H7", [("1.7", -2), ("1.7", 0), ("5.7", 1), ("3.7", 1)]),   # 4:5:6 on 7/4
    ("S1", [("3.5", -2), ("3.5", 0), ("5.7", 1), ("3.7", 1)]),   # 1/7:1/6:1/5, no seed 1
    ("H3", [("1.3", -2), ("1.3", 0), ("3.5", 0), ("3.7", 1)]),   # 4:5:7 on 3/2
    ("S5", [("1.3", -2), ("1.3", 0), ("1.7", 0), ("3.7", 1)]),   # no seed 5
    ("H1", [("1.5", -2), ("1.5", 0), ("1.3", 0), ("1.7", 0)]),   # 5:6:7
    ("S7", [("1.5", -2), ("1.5", 0), ("1.3", 0), ("3.5", 0)]),   # 10:12:15
    ("H5", [("1.5", -2), ("1.5", 0), ("3.5", 0), ("5.7", 1)]),   # 4:6:7 on 5/4
    ("S3", [("1.5", -2), ("1.5", 0), ("1.7", 0), ("5.7", 1)]),   # no seed 3
    ("H7", [("1.7", -2), ("1.7", 0), ("5.7", 1), ("3.7", 1)]),
    ("S1", [("3.5", -2), ("3.5", 0), ("5.7", 1), ("3.7", 1)]),
    ("H7", [("1.7", -2), ("1.7", 0), ("5.7", 1), ("3.7", 1)]),
    ("H7", [("1.7", -3), ("1.7", -2), ("1.7", 0), ("5.7", 1), ("3.7", 1)]),
]

# Melody per bar: (tone, period, beats, scoop into the note?)
MELODY = [
    [("3.7", 1, 2, True), ("1.7", 1, 1, False), ("5.7", 2, 1, False)],
    [("3.5", 1, 2, False), ("3.7", 1, 1, False), ("5.7", 1, 1, False)],
    [("1.3", 1, 1, False), ("3.5", 1, 1, False), ("3.7", 2, 2, False)],
    [("1.7", 1, 2, True), ("1.3", 1, 1, False), ("3.7", 1, 1, False)],
    [("1.5", 1, 2, False), ("1.3", 1, 1, False), ("1.7", 1, 1, False)],
    [("3.5", 1, 2, True), ("1.3", 1, 1, False), ("1.5", 1, 1, False)],
    [("5.7", 1, 1, False), ("1.5", 1, 1, False), ("3.5", 1, 2, False)],
    [("1.7", 1, 2, False), ("1.5", 1, 1, False), ("5.7", 1, 1, False)],
    [("3.7", 1, 1, True), ("1.7", 1, 1, False), ("5.7", 2, 2, False)],
    [("3.5", 1, 3, False), ("3.7", 1, 1, False)],
    [("1.7", 1, 4, True)],
    [("3.7", 1, 2, False), ("1.7", 1, 2, False)],
]
# A scoop opens a bar only: the pedal is up then, so the wheel bends the
# new note alone and not the notes the pedal would still hold.

TEMPI = [(0, 66), (10 * BAR, 60), (11 * BAR, 54), (11 * BAR + 2 * TPQ, 46)]

ORGAN, PIANO = 0, 1           # input channels 1 and 2
ORGAN_PROGRAM, PIANO_PROGRAM = 16, 0  # GM drawbar organ, acoustic grand


def vlq(value):
    out = [value & 0x7F]
    value >>= 7
    while value:
        out.insert(0, 0x80 | (value & 0x7F))
        value >>= 7
    return bytes(out)


def meta(tick, kind, data):
    return (tick, 0, bytes([0xFF, kind]) + vlq(len(data)) + bytes(data))


def msg(tick, *b, order=1):
    """order: events at one tick go offs (0) before the rest (1)"""
    return (tick, order, bytes(b))


def track(events, end):
    events = sorted(events, key=lambda e: (e[0], e[1]))
    out, last = bytearray(), 0
    for tick, _, raw in events:
        out += vlq(tick - last) + raw
        last = tick
    out += vlq(end - last) + b"\xFF\x2F\x00"
    return b"MTrk" + len(out).to_bytes(4, "big") + bytes(out)


def organ_track():
    ev = [meta(0, 0x03, b"organ: hexany triads"),
          msg(0, 0xC0 | ORGAN, ORGAN_PROGRAM), msg(0, 0xB0 | ORGAN, 7, 90),
          msg(0, 0xB0 | ORGAN, 91, 40)]
    for bar, (_, tones) in enumerate(CHORDS):
        start = bar * BAR
        length = BAR if bar < len(CHORDS) - 1 else 2 * BAR
        for tone, period in tones:
            k = key(tone, period)
            velocity = 62 if period < 0 else 70
            ev.append(msg(start, 0x90 | ORGAN, k, velocity))
            ev.append(msg(start + length, 0x80 | ORGAN, k, 64, order=0))
    return ev


def piano_track():
    ev = [meta(0, 0x03, b"piano: melody"),
          msg(0, 0xC0 | PIANO, PIANO_PROGRAM), msg(0, 0xB0 | PIANO, 7, 110),
          msg(0, 0xB0 | PIANO, 91, 50)]
    for bar, notes in enumerate(MELODY):
        start = bar * BAR
        # the pedal changes with the chord: up on the beat, down just after
        if bar:
            ev.append(msg(start, 0xB0 | PIANO, 64, 0, order=0))
        ev.append(msg(start + 60, 0xB0 | PIANO, 64, 127))
        t = start
        for i, (tone, period, beats, scoop) in enumerate(notes):
            k = key(tone, period)
            length = beats * TPQ
            if scoop:
                assert i == 0, "a scoop opens a bar"
                # from about 30 cents flat up to the pitch in a sixteenth
                ev.append(msg(t, 0xE0 | PIANO, 0, 0x40 - 10, order=0))
                for step in range(1, 9):
                    value = 8192 - 1280 + step * 160
                    ev.append(msg(t + step * 15, 0xE0 | PIANO, value & 0x7F, value >> 7))
            velocity = 88 if i == 0 else 76
            ev.append(msg(t, 0x90 | PIANO, k, velocity))
            ev.append(msg(t + length - 20, 0x80 | PIANO, k, 64, order=0))
            t += length
    end = len(CHORDS) * BAR + BAR
    ev.append(msg(end - TPQ, 0xB0 | PIANO, 64, 0))
    return ev


def conductor_track():
    ev = [meta(0, 0x03, b"Around the hexany (latticed demo)"),
          meta(0, 0x01, b"1 3 5 7 hexany: harmonic triads and their subharmonic partners"),
          meta(0, 0x58, [4, 2, 24, 8])]
    for tick, bpm in TEMPI:
        ev.append(meta(tick, 0x51, round(60_000_000 / bpm).to_bytes(3, "big")))
    return ev


def demo_bytes():
    end = len(CHORDS) * BAR + BAR
    tracks = [conductor_track(), organ_track(), piano_track()]
    head = b"MThd" + (6).to_bytes(4, "big") + (1).to_bytes(2, "big") + \
        len(tracks).to_bytes(2, "big") + TPQ.to_bytes(2, "big")
    return head + b"".join(track(t, end) for t in tracks)


def main(argv):
    data = demo_bytes()
    here = os.path.dirname(os.path.abspath(__file__))
    if len(argv) == 3 and argv[1] == "--check":
        with open(argv[2], "rb") as f:
            same = f.read() == data
        print("%s %s what scripts/make-demo.py writes" % (argv[2], "is" if same else "is NOT"))
        return 0 if same else 1
    if len(argv) > 2 or (len(argv) == 2 and argv[1].startswith("-")):
        print(__doc__.strip().splitlines()[2], file=sys.stderr)
        return 2
    path = argv[1] if len(argv) == 2 else os.path.join(here, "..", "config", "demo",
                                                        "hexany-demo.mid")
    with open(path, "wb") as f:
        f.write(data)
    seconds = 0.0
    tempi = TEMPI + [(len(CHORDS) * BAR + BAR, None)]
    for (t0, bpm), (t1, _) in zip(tempi, tempi[1:]):
        seconds += (t1 - t0) / TPQ * 60 / bpm
    print("wrote %s: %d bytes, %.1f s" % (os.path.normpath(path), len(data), seconds))
    return 0


if __name__ == "__main__":
    sys.exit(main(sys.argv))
