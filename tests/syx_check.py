#!/usr/bin/env python3
"""Checks `latticed table --syx FILE` against the MIDI Tuning Standard.

The .syx file is read here byte by byte, with the layouts of the MIDI
Tuning Standard (MMA, "MIDI Tuning Messages", MIDI 1.0 Detailed
Specification addendum), never with latticed's own builders:
  - bulk tuning dump, non-real-time universal SysEx: F0 7E <device ID> 08 01
    <tuning program> <16 ASCII characters of name> <128 x xx yy zz>
    <checksum> F7, 408 bytes [MTS];
  - single-note tuning change, real-time universal SysEx: F0 7F <device ID>
    08 02 <tuning program> <ll> <ll x kk xx yy zz> F7 [MTS]; latticed sends
    the 128 keys as two messages of 64 (our rule);
  - a frequency word: xx the 12-TET key at or below, yy zz the fraction of
    a semitone in 1/16384 steps, high 7 bits first; key 69 = A4 = 440 Hz,
    f = 440 * 2^((xx + (128 yy + zz)/16384 - 69) / 12) [MTS; ISO 16];
  - the checksum: the spec says "XOR of 7E, <device ID>, nn, tt, <388
    bytes>" while its own layout holds 16 + 384 = 400 bytes there (sources
    disagree on the span); every byte from 7E to the last data byte, XORed
    and masked to 7 bits, is the reading that counts each byte the layout
    has [MTS].
Every key's word is compared with the key's exact frequency, computed here
with fractions.Fraction: root_hz * ratio(tone) * period^p (the key map,
read from `latticed table --json`, whose numbers table_json_check.py checks
the same way), times the root's ratio under --root (the tone's ratio, over
the period when it lies above half of it: our rule, as `latticed root`
does).  A key that plays nothing keeps its 12-TET pitch, kk 00 00 (our
rule).  The word must be within half a step (100/16384/2 cents) of exact.
Usage: syx_check.py LATTICED_BINARY SOURCE_DIR WORK_DIR
"""
import json
import math
import os
import subprocess
import sys
from fractions import Fraction

STEP_CENTS = 100 / 16384


def run(binary, *args):
    return subprocess.run([binary, "table", *args], check=True, capture_output=True)


def config_pitch(config):
    """[pitch] root_hz of a config (not in the JSON), default 220."""
    root_hz, section = Fraction(220), None
    if config is None:
        return root_hz
    for line in open(config):
        line = line.split(";")[0].strip()
        if line.startswith("["):
            section = line.strip("[]").strip()
        elif "=" in line and section == "pitch":
            key, value = (x.strip() for x in line.split("=", 1))
            if key == "root_hz":
                root_hz = Fraction(value)
    return root_hz


def expected_cents(doc, root_hz, root):
    """{key: exact pitch in cents above key 0's 12-TET pitch} for sounding keys."""
    period = Fraction(doc["lattice"]["period"])
    ratios = [Fraction(t["ratio"]) for t in doc["tones"]]
    shift = Fraction(1)
    if root > 0:
        shift = ratios[root - 1]
        if shift * shift > period:  # above half the period: folded down
            shift /= period
    out = {}
    for entry in doc["keys"]:
        f = root_hz * ratios[entry["tone"]] * period ** entry["period"] * shift
        out[entry["key"]] = 1200 * math.log2(f / 440) + 6900
    return out


def word_cents(xx, yy, zz):
    return 100 * (xx + (yy * 128 + zz) / 16384)


def check_words(name, words, want):
    for key, (xx, yy, zz) in enumerate(words):
        assert max(xx, yy, zz) < 0x80, (name, key)
        if key in want:
            err = abs(word_cents(xx, yy, zz) - want[key])
            assert err <= STEP_CENTS / 2 + 1e-7, (name, key, (xx, yy, zz), err)
        else:
            assert (xx, yy, zz) == (key, 0, 0), (name, key, (xx, yy, zz))


def parse_bulk(name, data, device, program, title):
    assert len(data) == 408, (name, len(data))
    assert data[:6] == bytes([0xF0, 0x7E, device, 0x08, 0x01, program]), (name, data[:6].hex())
    assert data[-1] == 0xF7, name
    text = data[6:22].decode("ascii")
    assert text == title[:16].ljust(16), (name, text)
    check = 0
    for b in data[1:406]:
        check ^= b
    assert data[406] == check & 0x7F, (name, data[406], check & 0x7F)
    return [tuple(data[22 + 3 * k:25 + 3 * k]) for k in range(128)]


def parse_single(name, data, device, program):
    words = [None] * 128
    assert len(data) == 2 * (8 + 4 * 64), (name, len(data))
    for m in range(2):
        msg = data[m * 264:(m + 1) * 264]
        assert msg[:7] == bytes([0xF0, 0x7F, device, 0x08, 0x02, program, 64]), (name, msg[:7].hex())
        assert msg[-1] == 0xF7, name
        for i in range(64):
            kk, xx, yy, zz = msg[7 + 4 * i:11 + 4 * i]
            assert kk == 64 * m + i, (name, kk)
            words[kk] = (xx, yy, zz)
    return words


def case(binary, work, config, preset, root, single, device, program):
    args = [] if config is None else ["--config", config]
    if preset is not None:
        args += ["--preset", preset]
    if root is not None:
        args += ["--root", root]
    doc = json.loads(run(binary, *args, "--json").stdout)
    slot = doc["root"]["slot"]
    want = expected_cents(doc, config_pitch(config), slot)
    path = os.path.join(work, "t.syx")
    extra = ["--single-note"] if single else []
    if device is not None:
        extra += ["--device", str(device)]
    if program is not None:
        extra += ["--program", str(program)]
    summary = run(binary, *args, "--syx", path, *extra).stdout.decode()
    data = open(path, "rb").read()
    dev = 0x7F if device is None else device  # 7F: all devices [MTS]
    prog = 0 if program is None else program
    name = f"{config} {preset} {root} {'single' if single else 'bulk'}"
    if single:
        words = parse_single(name, data, dev, prog)
    else:
        title = doc["preset"] + ("" if slot == 0 else "@" + doc["root"]["label"])
        words = parse_bulk(name, data, dev, prog, title)
    check_words(name, words, want)
    assert summary.startswith(path + ": "), summary
    # the same bytes on standard output
    assert run(binary, *args, "--syx", "-", *extra).stdout == data, name
    print(f"{name}: {len(data)} bytes, {len(want)} keys retuned, the others 12-TET")
    return data


def main():
    binary, src, work = sys.argv[1:4]
    os.makedirs(work, exist_ok=True)
    conf = lambda p: os.path.join(src, p)
    case(binary, work, conf("config/latticed.conf"), None, None, False, None, None)
    case(binary, work, conf("config/latticed.conf"), None, "3", True, 16, 5)
    case(binary, work, conf("config/examples/eikosany.conf"), None, "home", False, 0, 127)
    case(binary, work, conf("config/examples/tritave.conf"), None, "4", False, None, None)
    case(binary, work, conf("config/examples/tritave.conf"), None, "4", True, None, None)
    case(binary, work, conf("tests/golden/configs/mts.conf"), None, "1.(9/8).(5/4)", False, None, 9)
    case(binary, work, conf("tests/golden/configs/presets-bend.conf"), "1", "2", False, None, None)
    # a preset and root by name: the dump's name holds both, cut to 16
    data = case(binary, work, conf("tests/golden/configs/presets-bend.conf"), "1", None, True, None, None)
    assert len(data) == 528
    print("syx_check: all checks passed")


if __name__ == "__main__":
    main()
