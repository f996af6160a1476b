#!/usr/bin/env python3
"""Writes the golden check's performance: a seeded format 1 SMF of our own.

  make_performance.py OUT.mid

Four tracks: chords under the sustain pedal on channel 1, a melody with the
wheel and poly pressure on channel 2, drums on channel 10, and the control
channel 16 switching presets (program change) and roots (CC 20), plus a
tempo map and a SysEx.  Seeded, so the same bytes every run; the golden
check renders it with every golden config and compares fingerprints.
SMF layout: the Standard MIDI File 1.0 specification (MThd, MTrk, VLQ
delta times, running status not used here).
"""
import random
import sys


def vlq(value):
    out = [value & 0x7F]
    value >>= 7
    while value:
        out.insert(0, 0x80 | (value & 0x7F))
        value >>= 7
    return bytes(out)


def track(events):
    events.sort(key=lambda e: e[0])
    out, last = bytearray(), 0
    for tick, raw in events:
        out += vlq(tick - last) + raw
        last = tick
    out += b"\x00\xFF\x2F\x00"
    return b"MTrk" + len(out).to_bytes(4, "big") + bytes(out)


def main():
    rng = random.Random(20261203)
    conductor = [(0, b"\xFF\x51\x03\x07\xA1\x20"), (7680, b"\xFF\x51\x03\x06\x1A\x80"),
                 (0, b"\xF0\x05\x7E\x7F\x09\x01\xF7")]
    chords, melody, drums, control = [], [], [], []
    tick = 0
    for bar in range(160):
        pedal_down = bar % 4 != 3
        chords.append((tick, bytes([0xB0, 64, 127 if pedal_down else 0])))
        for key in rng.sample(range(45, 72), 3 + rng.randrange(2)):
            length = rng.randrange(120, 1800)
            chords.append((tick + rng.randrange(0, 30), bytes([0x90, key, rng.randrange(30, 128)])))
            chords.append((tick + length, bytes([0x80, key, 64])))
        t = tick
        while t < tick + 1920:
            key = rng.randrange(57, 92)
            length = rng.randrange(30, 480)
            melody.append((t, bytes([0x91, key, rng.randrange(1, 128)])))
            if rng.random() < 0.3:
                melody.append((t + 10, bytes([0xA1, key, rng.randrange(128)])))
            melody.append((t + length, bytes([0x91, key, 0])))
            if rng.random() < 0.25:
                for step in range(8):
                    v = 8192 + int(3000 * (step - 4) / 4)
                    melody.append((t + step * 12, bytes([0xE1, v & 0x7F, v >> 7])))
            if rng.random() < 0.2:
                melody.append((t, bytes([0xB1, 1, rng.randrange(128)])))
            t += rng.randrange(60, 480)
        for beat in range(4):
            key = rng.choice([36, 38, 42, 46])
            drums.append((tick + beat * 480, bytes([0x99, key, 100])))
            drums.append((tick + beat * 480 + 60, bytes([0x89, key, 0])))
        if bar % 8 == 0:
            control.append((tick, bytes([0xCF, (bar // 8) % 3])))
        if bar % 8 == 4:
            control.append((tick, bytes([0xBF, 20, rng.randrange(0, 7)])))
        tick += 1920
    data = b"MThd" + (6).to_bytes(4, "big") + (1).to_bytes(2, "big") + (5).to_bytes(2, "big") + \
        (480).to_bytes(2, "big")
    for events in (conductor, chords, melody, drums, control):
        data += track(events)
    with open(sys.argv[1], "wb") as f:
        f.write(data)


if __name__ == "__main__":
    main()
