#!/usr/bin/python3
"""What every MIDI key must sound at, computed from a latticed config alone.

This is the yardstick the synth checks measure against.  It deliberately
shares nothing with latticed: no C core, no `latticed table` JSON.  It reads
the INI file with Python's configparser and does all arithmetic with exact
fractions (fractions.Fraction); floats appear only when a frequency is turned
into cents.

Model (the definitions below are the trade's, restated):
  - A combination product set (CPS) k)n: every product of k of the n seeds,
    reduced into [1, period) by whole periods; equal products are one tone;
    tones sorted ascending (combination product sets: common practice;
    Wikipedia "Hexany" for the 2)4 case).
  - unison = a.b: that product becomes 1/1, every tone is divided by it and
    reduced again.
  - 1/1 sounds at root_hz; tone t in period p sounds at
    root_hz * ratio(t) * period^p.
  - Layouts (latticed.conf(5)):
      sequential  key root_key + i plays tone i mod N in period floor(i / N);
      table       key root_key + i plays slot i mod M in keyboard period
                  floor(i / M); a slot is '.', a tone index or a label, with
                  an optional +N / -N period shift;
      nearest     every tone in every period goes to the 12-TET key nearest
                  its pitch (ties go up); a taken key passes it to the next
                  free key above; tones are placed from the lowest pitch up.
    transpose T moves the finished map: key k plays what k - T played.
  - A pitch MIDI cannot express is silent: below key 0 (8.1758 Hz) or above
    the highest MTS frequency word 7F 7F 7E (MMA MIDI Tuning Standard: 7F 7F
    7F means "no change").
  - Note numbers: f = 440 * 2^((n - 69) / 12) (ISO 16 A4 = 440 Hz = key 69;
    MIDI Tuning Standard numbering); cents = 1200 log2 (Wikipedia "Cent").

Usage:
  ji_expect.py [--config FILE] [--json]   print the key table
  ji_expect.py --selfcheck                check against published CPS facts
"""
import argparse
import configparser
import itertools
import json
import math
import sys
from fractions import Fraction

DEFAULTS = {
    ("lattice", "seeds"): "1 3 5 7",
    ("lattice", "choose"): "2",
    ("lattice", "period"): "2/1",
    ("lattice", "unison"): "none",
    ("pitch", "root_key"): "57",
    ("pitch", "root_hz"): "220",
    ("keys", "layout"): "sequential",
    ("keys", "map"): "",
    ("keys", "transpose"): "0",
}

# Highest MTS word 7F 7F 7E: key 127 plus 16382/16384 of a semitone.
MTS_TOP_NOTE = 127 + Fraction(16382, 16384)


class ConfigError(Exception):
    pass


def note_of_hz(hz):
    """Fractional MIDI note number of a frequency (A4 = 440 Hz = 69)."""
    return 69 + 12 * math.log2(float(hz) / 440)


def cents_of(ratio):
    return 1200 * math.log2(float(ratio))


def reduce_into(r, period):
    while r >= period:
        r /= period
    while r < 1:
        r *= period
    return r


def parse_ratio(text, what):
    try:
        r = Fraction(text.strip())
    except (ValueError, ZeroDivisionError):
        raise ConfigError("%s: '%s' is not a ratio" % (what, text))
    if r <= 0:
        raise ConfigError("%s: '%s' is not positive" % (what, text))
    return r


class Params:
    """The config values ji_expect needs, with latticed's defaults."""

    def __init__(self, values=None):
        v = dict(DEFAULTS)
        v.update(values or {})
        self.seed_text = v[("lattice", "seeds")].split()
        self.seeds = [parse_ratio(s, "seeds") for s in self.seed_text]
        self.choose = int(v[("lattice", "choose")])
        self.period = parse_ratio(v[("lattice", "period")], "period")
        if self.period <= 1:
            raise ConfigError("period must be above 1")
        self.unison = v[("lattice", "unison")].strip()
        self.root_key = int(v[("pitch", "root_key")])
        self.root_hz = Fraction(v[("pitch", "root_hz")].strip())
        self.layout = v[("keys", "layout")].strip()
        self.map = v[("keys", "map")].split()
        self.transpose = int(v[("keys", "transpose")])
        if not 1 <= self.choose < len(self.seeds):
            raise ConfigError("choose must be 1 to %d" % (len(self.seeds) - 1))
        if self.layout not in ("sequential", "nearest", "table"):
            raise ConfigError("unknown layout '%s'" % self.layout)

    @classmethod
    def from_file(cls, path):
        cp = configparser.ConfigParser(inline_comment_prefixes=(";",),
                                       comment_prefixes=(";",),
                                       interpolation=None, strict=False)
        with open(path) as f:
            cp.read_file(f)
        values = {}
        for (section, key) in DEFAULTS:
            if cp.has_option(section, key):
                # configparser joins continuation lines with '\n'
                values[(section, key)] = " ".join(cp.get(section, key).split())
        return cls(values)


class Tone:
    def __init__(self, ratio, label):
        self.ratio = ratio
        self.label = label
        self.labels = [label]   # every product that landed here

    def __repr__(self):
        return "Tone(%s, %s)" % (self.ratio, self.label)


def seed_mask_of_label(params, label):
    """'1.3' -> tuple of seed indices; a repeated text takes the next seed."""
    used = []
    for part in label.split("."):
        for i, text in enumerate(params.seed_text):
            if text == part and i not in used:
                used.append(i)
                break
        else:
            raise ConfigError("'%s' names no seed (of %s)" % (label, params.seed_text))
    return tuple(sorted(used))


def lattice_tones(params):
    """Sorted distinct tones of the CPS, each with the labels that made it."""
    unison = Fraction(1)
    if params.unison != "none":
        idx = seed_mask_of_label(params, params.unison)
        if len(idx) != params.choose:
            raise ConfigError("unison must join %d seeds" % params.choose)
        unison = reduce_into(math.prod(params.seeds[i] for i in idx), params.period)
    by_ratio = {}
    for combo in itertools.combinations(range(len(params.seeds)), params.choose):
        product = math.prod(params.seeds[i] for i in combo)
        r = reduce_into(reduce_into(product, params.period) / unison, params.period)
        label = ".".join(params.seed_text[i] for i in combo)
        if r in by_ratio:
            by_ratio[r].labels.append(label)
        else:
            by_ratio[r] = Tone(r, label)
    return [by_ratio[r] for r in sorted(by_ratio)]


def in_midi_range(hz):
    n = note_of_hz(hz)
    return 0 <= n <= float(MTS_TOP_NOTE)


class KeyPitch:
    def __init__(self, key, tone, period, hz, label):
        self.key = key
        self.tone = tone
        self.period = period
        self.hz = hz            # Fraction, exact
        self.label = label

    def as_dict(self):
        return {"key": self.key, "tone": self.tone, "period": self.period,
                "label": self.label, "hz": str(self.hz),
                "hz_float": float(self.hz), "note": note_of_hz(self.hz)}


def _pitch(params, tones, t, p):
    return params.root_hz * tones[t].ratio * params.period ** p


def _parse_slot(params, tones, text):
    """Table slot: '.', index or label, optional +N/-N -> (tone, shift) or None."""
    if text == ".":
        return None
    shift = 0
    body = text
    for sign in "+-":
        pos = text.rfind(sign)
        if pos > 0:
            body, shift = text[:pos], int(text[pos:])
            break
    if body.isdigit():
        t = int(body)
        if t >= len(tones):
            raise ConfigError("map slot '%s': only %d tones" % (text, len(tones)))
        return t, shift
    for t, tone in enumerate(tones):
        for lab in tone.labels:
            if seed_mask_of_label(params, lab) == seed_mask_of_label(params, body):
                return t, shift
    raise ConfigError("map slot '%s' names no tone" % text)


def key_map(params):
    """{key: KeyPitch} for every key that sounds."""
    tones = lattice_tones(params)
    n = len(tones)
    raw = {}
    if params.layout == "sequential":
        for key in range(128):
            i = key - params.root_key
            t, p = i % n, i // n          # Python floors, as the model asks
            raw[key] = (t, p)
    elif params.layout == "table":
        slots = [_parse_slot(params, tones, s) for s in params.map]
        if not slots:
            raise ConfigError("layout = table needs a map")
        m = len(slots)
        for key in range(128):
            i = key - params.root_key
            slot = slots[i % m]
            if slot is not None:
                raw[key] = (slot[0], i // m + slot[1])
    else:  # nearest
        candidates = []
        low, top = 440 * 2 ** (-69 / 12), 440 * 2 ** ((float(MTS_TOP_NOTE) - 69) / 12)
        logp = math.log(float(params.period))
        for t in range(n):
            base = float(params.root_hz * tones[t].ratio)
            # every period in which this tone sounds inside MIDI's range
            for p in range(math.floor(math.log(low / base) / logp) - 1,
                           math.ceil(math.log(top / base) / logp) + 2):
                hz = _pitch(params, tones, t, p)
                if in_midi_range(hz):
                    candidates.append((hz, t, p))
        taken = {}
        for hz, t, p in sorted(candidates):
            key = math.floor(note_of_hz(hz) + 0.5)
            while key in taken:
                key += 1
            if key <= 127:
                taken[key] = (t, p)
        raw = taken
    result = {}
    for key, (t, p) in raw.items():
        k = key + params.transpose
        if not 0 <= k <= 127:
            continue
        hz = _pitch(params, tones, t, p)
        if in_midi_range(hz):
            result[k] = KeyPitch(k, t, p, hz, tones[t].label)
    return dict(sorted(result.items()))


# --- cross-checks against published facts ----------------------------------

def selfcheck():
    failures = []

    def check(cond, what):
        print("%s  %s" % ("ok  " if cond else "FAIL", what))
        if not cond:
            failures.append(what)

    # The 1 3 5 7 hexany: products 3 5 7 15 21 35 reduced into the octave
    # (Wikipedia "Hexany", its 1*3*5*7 example; common practice).
    hexany = Params()
    ratios = [t.ratio for t in lattice_tones(hexany)]
    check(ratios == [Fraction(35, 32), Fraction(5, 4), Fraction(21, 16),
                     Fraction(3, 2), Fraction(7, 4), Fraction(15, 8)],
          "1 3 5 7 hexany = 35/32 5/4 21/16 3/2 7/4 15/8 (Wikipedia 'Hexany')")

    # Tone counts of k)n CPS are C(n, k): hexany 2)4 = 6, eikosany 3)6 = 20
    # (Wikipedia "Hexany"; published eikosany papers: "3)6 1.3.5.7.9.11
    # Eikosany", 20 notes).
    eiko = Params({("lattice", "seeds"): "1 3 5 7 9 11",
                   ("lattice", "choose"): "3"})
    eiko_tones = lattice_tones(eiko)
    check(len(lattice_tones(hexany)) == 6, "hexany has 6 tones")
    check(len(eiko_tones) == 20, "1 3 5 7 9 11 eikosany has 20 tones")
    # Two members written out in the published 1.3.5.7.9.11 eikosany tables
    # (from memory): 1.3.5 = 15/8 and 7.9.11 = 693/512 before normalising.
    er = {t.label: t.ratio for t in eiko_tones}
    check(er.get("1.3.5") == Fraction(15, 8) and er.get("7.9.11") == Fraction(693, 512),
          "eikosany 1.3.5 = 15/8, 7.9.11 = 693/512 (from memory)")
    # With unison 1.3.5 (the usual normalisation), 1.3.5 is 1/1 and the set
    # keeps 20 tones (computed).
    eiko_u = Params({("lattice", "seeds"): "1 3 5 7 9 11",
                     ("lattice", "choose"): "3", ("lattice", "unison"): "1.3.5"})
    eu = lattice_tones(eiko_u)
    check(len(eu) == 20 and eu[0].ratio == 1 and eu[0].label == "1.3.5",
          "eikosany with unison 1.3.5 starts at 1/1 (computed)")
    # Merges: seeds 1 3 5 15 choose 2 give 1*15 = 3*5; 5 tones (computed).
    merged = lattice_tones(Params({("lattice", "seeds"): "1 3 5 15"}))
    check(len(merged) == 5 and any(len(t.labels) == 2 for t in merged),
          "1 3 5 15 choose 2: 1.15 and 3.5 merge, 5 tones (computed)")

    # Key model: root_key 57 plays tone 0 in period 0: 35/32 * 220 Hz.
    km = key_map(hexany)
    check(km[57].hz == Fraction(35, 32) * 220 and km[57].tone == 0,
          "key 57 = 35/32 * 220 Hz = 240.625 Hz (our documented key model)")
    check(km[63].hz == Fraction(35, 32) * 440 and km[56].hz == Fraction(15, 8) * 110,
          "key 63 one period up, key 56 = 15/8 one period down")
    # Key 27 would be 7.52 Hz, below key 0 (8.1758 Hz): silent.
    check(27 not in km and 28 in km, "keys below MIDI key 0's pitch are silent")

    # nearest: 35/32 above 220 Hz is +155.1 cents over key 57 -> key 59.
    near = key_map(Params({("keys", "layout"): "nearest"}))
    check(near[59].hz == Fraction(35, 32) * 220 and near[68].hz == Fraction(15, 8) * 220
          and 57 not in near,
          "nearest: 240.6 Hz (+155.1 c over key 57) on key 59, 412.5 Hz on key 68, key 57 silent")
    # table: a 12-slot map of the hexany on white/black keys.
    tab = key_map(Params({("keys", "layout"): "table",
                          ("keys", "map"): "0 . 1 . 2 3 . 4 . 5 . 3.7+1"}))
    check(tab[57].hz == Fraction(35, 32) * 220 and 58 not in tab
          and tab[68].hz == Fraction(21, 16) * 440 and tab[69].hz == Fraction(35, 32) * 440,
          "table: slot 0 on key 57, '.' silent, '3.7+1' one period up, repeats after 12 keys")
    return failures


def main(argv=None):
    ap = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    ap.add_argument("--config")
    ap.add_argument("--json", action="store_true")
    ap.add_argument("--selfcheck", action="store_true")
    a = ap.parse_args(argv)
    if a.selfcheck:
        failures = selfcheck()
        print("%d failed" % len(failures))
        return 1 if failures else 0
    try:
        params = Params.from_file(a.config) if a.config else Params()
        km = key_map(params)
    except (ConfigError, OSError, configparser.Error) as e:
        print("ji_expect: %s: %s" % (a.config or "(defaults)", e), file=sys.stderr)
        return 2
    if a.json:
        print(json.dumps([k.as_dict() for k in km.values()], indent=1))
    else:
        for k in km.values():
            print("%3d  tone %2d  period %2d  %-10s %12.4f Hz" %
                  (k.key, k.tone, k.period, k.label, float(k.hz)))
    return 0


if __name__ == "__main__":
    sys.exit(main())
