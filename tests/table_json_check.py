#!/usr/bin/env python3
"""Checks `latticed table --json` with tools that are not ours.

The JSON is parsed by Python's json module, and every number in it is
recomputed here from the config's parameters with exact fractions
(fractions.Fraction), not with latticed's core:
  - CPS tones: every product of `choose` seeds, reduced into [1, period),
    sorted (definition of a combination product set; common practice);
  - cents = 1200 log2(r) (Wikipedia "Cent (music)");
  - sequential layout: key root_key + i plays tone i mod N in period
    floor(i / N) at root_hz * r * period^floor(i/N) (our documented model);
  - nearest 12-TET key and deviation from f = 440 * 2^((n - 69)/12)
    (ISO 16 A4 = 440 Hz = key 69, MTS numbering);
  - bend = 8192 + round(c / (100 R) * 8192), clamped (MIDI 1.0 14-bit bend,
    centre 8192);
  - MTS word: key at or below, 14-bit fraction big-endian (MMA MIDI Tuning);
  - with ROOT (`--root ROOT`, as `latticed root` re-roots a running daemon):
    every sounding key's pitch times the root tone's ratio, over the period
    when that ratio lies above half of it (our rule); keys keep their tones,
    and a key silent at home stays silent (our rule).
Usage: table_json_check.py LATTICED_BINARY CONFIG [ROOT]
"""
import itertools
import json
import math
import subprocess
import sys
from fractions import Fraction


def reduce_into(r, period):
    while r >= period:
        r /= period
    while r < 1:
        r *= period
    return r


def main():
    binary, config = sys.argv[1], sys.argv[2]
    root_args = ["--root", sys.argv[3]] if len(sys.argv) > 3 else []
    out = subprocess.run([binary, "table", "--config", config, "--json", *root_args],
                         check=True, capture_output=True, text=True).stdout
    doc = json.loads(out)

    seeds = [Fraction(s) for s in doc["lattice"]["seeds"]]
    k = doc["lattice"]["choose"]
    period = Fraction(doc["lattice"]["period"])
    unison = Fraction(1)
    if doc["lattice"]["unison"] is not None:
        # the named product (seeds joined by '.', a ratio seed in
        # parentheses: our label syntax) becomes 1/1
        unison = math.prod(Fraction(s.strip("()"))
                           for s in doc["lattice"]["unison"].split("."))
    products = sorted(set(reduce_into(math.prod(c) / unison, period)
                          for c in itertools.combinations(seeds, k)))
    tones = doc["tones"]
    assert len(tones) == len(products), (len(tones), len(products))
    for i, (t, r) in enumerate(zip(tones, products)):
        assert t["index"] == i
        assert Fraction(t["ratio"]) == r, (t, r)
        assert abs(t["cents"] - 1200 * math.log2(r)) < 1e-6, t

    n_seeds = len(seeds)
    harmonic = [c for c in doc["chords"] if c["kind"] == "harmonic"]
    sub = [c for c in doc["chords"] if c["kind"] == "subharmonic"]
    assert len(harmonic) == math.comb(n_seeds, k - 1)
    assert len(sub) == math.comb(n_seeds, k + 1)
    for c in doc["chords"]:
        # the proportion is the chord itself: consecutive members keep the
        # ratios of their tones (up to whole periods), lowest terms
        p = c["proportion"]
        assert math.gcd(*p) == 1 and p == sorted(p), c
        for a, b, ta, tb in zip(p, p[1:], c["tones"], c["tones"][1:]):
            step = Fraction(b, a) / (products[tb] / products[ta])
            while step >= period:
                step /= period
            while step < 1:
                step *= period
            assert step == 1, c

    # the config file's [pitch] values are not in the JSON: read them here
    root_key, root_hz = 57, Fraction(220)
    section = None
    for line in open(config):
        line = line.split(";")[0].strip()
        if line.startswith("["):
            section = line.strip("[]")
        elif "=" in line and section == "pitch":
            key, value = (x.strip() for x in line.split("=", 1))
            if key == "root_key":
                root_key = int(value)
            elif key == "root_hz":
                root_hz = Fraction(value)
    shift = Fraction(1)
    slot = doc["root"]["slot"]
    if slot > 0:
        shift = products[slot - 1]
        if shift * shift > period:
            shift /= period
    assert Fraction(doc["root"]["ratio"]) == shift, doc["root"]
    in_midi = lambda note: 0 <= note <= 127 + 16382 / 16384  # MTS: 00 00 00 .. 7F 7F 7E
    bend_range = doc["outputs"][0]["bend_range"]
    n = len(products)
    seen = set()
    for entry in doc["keys"]:
        key = entry["key"]
        seen.add(key)
        i = key - root_key
        tone, per = i % n, i // n
        assert entry["tone"] == tone and entry["period"] == per, entry
        home = float(root_hz * products[tone] * period ** per)
        assert in_midi(69 + 12 * math.log2(home / 440)), entry
        hz = float(root_hz * products[tone] * period ** per * shift)
        assert abs(entry["hz"] - hz) < 1e-6 * hz, (entry, hz)
        note = 69 + 12 * math.log2(hz / 440)
        out = min(127, round(note))
        assert entry["out_key"] == out, entry
        cents = (note - out) * 100
        assert abs(entry["cents_off"] - cents) < 1e-5, entry
        bend = 8192 + math.floor(cents / (100 * bend_range) * 8192 + 0.5)
        assert entry["bend"] == max(0, min(16383, bend)), entry
        whole = math.floor(note)
        frac = math.floor((note - whole) * 16384 + 0.5)
        if frac == 16384:
            whole, frac = whole + 1, 0
        assert entry["mts"] == [whole, frac >> 7, frac & 0x7F], entry
        assert in_midi(note)
    # every other key is silent or out of range, and the lists agree
    others = set(doc["silent_keys"]) | set(doc["out_of_range_keys"])
    assert seen | others == set(range(128)) and not (seen & others)
    for key in doc["out_of_range_keys"]:
        i = key - root_key
        hz = float(root_hz * products[i % n] * period ** (i // n))
        note = 69 + 12 * math.log2(hz / 440)
        moved = 69 + 12 * math.log2(hz * float(shift) / 440)
        assert not in_midi(note) or not in_midi(moved), key
    print(f"{config} root {doc['root']['label']}: {len(tones)} tones, "
          f"{len(doc['chords'])} chords, {len(doc['keys'])} keys checked")


if __name__ == "__main__":
    main()
