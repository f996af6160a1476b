#!/usr/bin/env python3
"""Checks `latticed table --keys` (one keyboard period for a player).

Each key row is read from the text and compared with `latticed table
--json` for the same preset and root (whose numbers table_json_check.py
recomputes with exact fractions):
  - the note name of a key: C C# D ... B, octave = key // 12 - 1, so key 60
    is C4 and key 69 is A4 (common practice; ISO 16 / MTS key numbering);
  - the tone and its label, the ratio to 1/1 as an exact fraction:
    ratio(tone) * period^p, times the root's ratio (the JSON's, checked by
    table_json_check.py);
  - the 12-TET note it sounds nearest and the cents off it, as the JSON's
    out_key and cents_off;
  - the rows are one keyboard period (our rule, as `latticed draw --what
    keys`): N keys for N tones (sequential), the map's slot count (table),
    the period in whole 12-TET keys (nearest), from the key of tone 0;
  - each chord's keys play its tones, one key per tone, in rising pitch,
    all within those rows (our rule).
Usage: table_keys_check.py LATTICED_BINARY SOURCE_DIR
"""
import json
import math
import os
import re
import subprocess
import sys
from fractions import Fraction

NAMES = ["C", "C#", "D", "D#", "E", "F", "F#", "G", "G#", "A", "A#", "B"]


def note_name(key):
    return f"{NAMES[key % 12]}{key // 12 - 1}"


def run(binary, *args):
    return subprocess.run([binary, "table", *args], check=True, capture_output=True,
                          text=True).stdout


def check(binary, config, args, period_keys):
    doc = json.loads(run(binary, "--config", config, *args, "--json"))
    text = run(binary, "--config", config, *args, "--keys")
    keys = {k["key"]: k for k in doc["keys"]}
    period = Fraction(doc["lattice"]["period"])
    shift = Fraction(doc["root"]["ratio"])
    tones = doc["tones"]
    rows = {}
    for line in text.splitlines():
        m = re.match(r"^  +(\d+)  (\S+) +(-|\d+)  (.*)$", line)
        if not m:
            continue
        key, name, tone, rest = int(m[1]), m[2], m[3], m[4].split()
        assert name == note_name(key), (config, line)
        rows[key] = line
        if tone == "-":
            assert rest == ["silent"] and key not in keys, (config, line)
            continue
        if rest[-1] == "MIDI":
            continue
        k = keys[key]
        assert int(tone) == k["tone"] and rest[0] == tones[k["tone"]]["label"], (config, line)
        want = Fraction(tones[k["tone"]]["ratio"]) * period ** k["period"] * shift
        assert Fraction(rest[1]) == want, (config, line, want)
        assert rest[2] == note_name(k["out_key"]), (config, line)
        assert abs(float(rest[3]) - k["cents_off"]) < 0.0006, (config, line)
    first = min(rows)
    assert sorted(rows) == list(range(first, first + period_keys)), (config, sorted(rows))
    # tone 0 in period 0 starts the stretch
    assert first in keys and keys[first]["tone"] == 0 and keys[first]["period"] == 0, config
    chords = [c for c in doc["chords"]]
    lines = [l for l in text.splitlines() if re.match(r"^  (harmonic|subharmonic) ", l)]
    assert len(lines) == len(chords), (config, len(lines), len(chords))
    playable = 0
    for c, line in zip(chords, lines):
        m = re.search(r"  ((\d+ )+)\(", line)
        if not m:
            assert "not within one keyboard period" in line, (config, line)
            continue
        played = [int(x) for x in m[1].split()]
        assert sorted(keys[p]["tone"] for p in played) == sorted(c["tones"]), (config, line, c)
        hz = [keys[p]["hz"] for p in played]
        assert hz == sorted(hz) and all(p in rows for p in played), (config, line)
        assert line.split("(")[-1].split(")")[0].split() == [note_name(p) for p in played]
        playable += 1
    print(f"{config} {' '.join(args)}: {len(rows)} keys, {playable} of {len(chords)} chords on keys")


def main():
    binary, src = sys.argv[1:3]
    conf = lambda p: os.path.join(src, p)
    check(binary, conf("config/latticed.conf"), [], 6)
    check(binary, conf("config/latticed.conf"), ["--root", "1.5"], 6)
    check(binary, conf("config/examples/eikosany.conf"), [], 20)
    check(binary, conf("config/examples/tritave.conf"), ["--root", "home"], 19)  # 3/1 = 19.02 keys
    check(binary, conf("config/examples/white-keys.conf"), [], 12)
    check(binary, conf("tests/golden/configs/presets-bend.conf"), ["--preset", "1", "--root", "3"], 10)
    print("table_keys_check: all checks passed")


if __name__ == "__main__":
    main()
