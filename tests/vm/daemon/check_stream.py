#!/usr/bin/env python3
"""Checks what latticed sent to a recording synth in the VM tests.

    check_stream.py --config CONF --performance PERF [--dir DIR] RECORDING...

PERF is the seqtool performance the player played into latticed, CONF the
config latticed ran with, each RECORDING a `seqtool record` file of what a
synth received from latticed (in order: a synth that left and a new one that
came).  "# check:" lines in PERF say what happened between two of its steps:

    # check: reload FILE     latticed now runs FILE (new notes take its tunings)
    # check: status FILE     FILE holds `latticed status --json` taken here

(FILE relative to DIR).  Independently of latticed's code, this computes
every key's just-intonation pitch from CONF with fractions.Fraction,
decodes the recordings as a synth would, and checks:
  - every synth gets the set-up first: RPN 0 (the bend range) on every
    channel of the pool, before any note, and once;
  - the k-th note-on that comes out answers the k-th note the player played,
    and sounds at that key's exact JI pitch in the tuning chosen at that
    moment, plus the player's wheel, within half a bend step;
  - a bend on a channel with a sounding note (held, or ringing in the
    sustain pedal) only ever follows the player's wheel;
  - every note-on has exactly one note-off on its channel and key, and at
    the end of each recording nothing sounds;
  - the held notes `latticed status --json` listed, with tone and ratio.

Sources:
  - MIDI 1.0 Detailed Specification: note-on 9n with velocity 0 is a
    note-off; 8n note-off; Bn control change (64 sustain pedal, 120 all sound
    off, 123 all notes off); En pitch bend LSB first, 14-bit, centre 8192;
    RPN 0 (CC 101/100 = 0/0, data entry CC 6 = semitones, CC 38 = cents) is
    the pitch-bend sensitivity, 2 semitones until set (common practice).
    A bend value v moves the pitch by (v - 8192) / 8192 times the range
    (common practice; the player's wheel the same way over wheel_range).
  - Combination product sets: every product of `choose` of the seeds,
    reduced into one period (published CPS definition; common practice).
  - Note numbers: 69 = A 440 Hz, 12 per octave (MIDI Tuning Standard,
    common practice).
  - latticed.conf(5) for what the config keys mean (the sequential layout:
    key root_key + i plays tone i mod N in period i div N), and its
    defaults where CONF leaves a key out.
"""
import argparse
import configparser
import json
import math
import os
import sys
from fractions import Fraction
from itertools import combinations

FAILS = []
CHECKS = [0]


def check(cond, what):
    CHECKS[0] += 1
    if not cond:
        print("FAIL:", what)
        FAILS.append(what)
    return cond


def ok(what):
    print("ok:", what)


# ---- the config, as latticed.conf(5) describes it ---------------------------

LATTICE_DEFAULTS = {"seeds": "1 3 5 7", "choose": "2", "period": "2/1", "unison": "none",
                    "root_key": "57", "root_hz": "220", "layout": "sequential", "transpose": "0"}


def channel_list(text):
    """MIDI channels 1-16 as numbers and ranges; a range skips 10 (latticed.conf(5))."""
    out = []
    for part in text.split(","):
        part = part.strip()
        if "-" in part:
            a, b = (int(x) for x in part.split("-"))
            out += [c for c in range(a, b + 1) if c != 10]
        else:
            out.append(int(part))
    return [c - 1 for c in out]


class Tuning:
    def __init__(self, name, keys):
        self.name = name
        if keys["layout"] != "sequential" or keys["unison"] != "none" or int(keys["transpose"]) != 0:
            raise SystemExit("check_stream.py: only the sequential layout without unison or transpose is modelled")
        self.seeds = [Fraction(s) for s in keys["seeds"].split()]
        self.choose = int(keys["choose"])
        self.period = Fraction(keys["period"])
        self.root_key = int(keys["root_key"])
        self.root_hz = Fraction(keys["root_hz"])
        tones, labels = set(), {}
        for combo in combinations(range(len(self.seeds)), self.choose):
            r = Fraction(1)
            for i in combo:
                r *= self.seeds[i]
            while r >= self.period:
                r /= self.period
            while r < 1:
                r *= self.period
            tones.add(r)
            # our label syntax: seeds joined by '.', a ratio seed in parentheses
            labels.setdefault(r, ".".join(
                f"({t})" if "/" in t else t
                for t in (keys["seeds"].split()[i] for i in combo)))
        self.tones = sorted(tones)
        self.labels = labels

    def tone_of(self, key):
        i = key - self.root_key
        return self.tones[i % len(self.tones)], i // len(self.tones)

    def pitch(self, key):
        """The key's exact pitch as a (fractional) MIDI note number."""
        tone, period = self.tone_of(key)
        hz = self.root_hz * tone * self.period ** period
        return 69 + 12 * (math.log2(hz.numerator) - math.log2(hz.denominator) - math.log2(440))


class Config:
    def __init__(self, path):
        p = configparser.ConfigParser(inline_comment_prefixes=(";",), comment_prefixes=(";", "#"),
                                      strict=False, interpolation=None)
        try:
            with open(path) as f:
                p.read_file(f)
        except (OSError, configparser.Error) as e:
            raise SystemExit("check_stream.py: cannot read the config %s: %s" % (path, e))
        base = dict(LATTICE_DEFAULTS)
        for section in ("lattice", "pitch", "keys"):
            if p.has_section(section):
                base.update(p[section])
        self.tunings = [Tuning("main", base)]
        for section in p.sections():
            if section.startswith("preset "):
                keys = dict(base)
                keys.update(p[section])
                self.tunings.append(Tuning(section[len("preset "):].strip(), keys))
        inp = p["input"] if p.has_section("input") else {}
        self.in_channels = channel_list(inp.get("channels", "1"))
        wheel = inp.get("wheel_range", "2")
        self.wheel_semitones = float(wheel[:-1]) / 100 if wheel.endswith("c") else float(wheel)
        ctl = p["control"] if p.has_section("control") else {}
        c = ctl.get("channel", "none")
        self.control_channel = None if c == "none" else int(c) - 1
        self.program_selects = ctl.get("program_change", "preset") == "preset"
        k = ctl.get("preset_keys", "none")
        self.preset_keys = None if k == "none" else int(k)
        outs = [s for s in p.sections() if s.startswith("output ")]
        if not outs:
            raise SystemExit("check_stream.py: %s has no [output] section" % path)
        out = p[outs[0]]
        if out.get("method", "bend") != "bend" or Fraction(out.get("bend_factor", "1")) != 1 or \
           float(out.get("cents_offset", "0")) != 0:
            raise SystemExit("check_stream.py: only method = bend without factor or offset is modelled")
        self.pool = channel_list(out.get("channels", "2-16"))
        self.bend_range = int(out.get("bend_range", "2"))


# ---- the performance: what the player did -----------------------------------

def data_count(status):
    kind = status & 0xF0
    if kind in (0xC0, 0xD0):
        return 1
    if kind < 0xF0:
        return 2
    return {0xF1: 1, 0xF2: 2, 0xF3: 1}.get(status, 0)


def performance_steps(path):
    """(kind, payload, line) per step: ("midi", bytes), ("vanish"|"reappear"|
    "mark"|"await", None) or ("check", [words]); running status as seqtool."""
    steps, running = [], 0
    with open(path) as f:
        for number, line in enumerate(f, 1):
            stripped = line.strip()
            if stripped.startswith("# check:"):
                steps.append(("check", stripped[len("# check:"):].split(), number))
                continue
            words = line.split("#", 1)[0].split()
            if not words:
                continue
            if words[1] in ("vanish", "reappear", "mark", "await"):
                steps.append((words[1], None, number))
                if words[1] == "reappear":
                    running = 0
                continue
            data = [int(w, 16) for w in words[1:]]
            i = 0
            while i < len(data):
                if data[i] >= 0x80:
                    status = data[i]
                    i += 1
                else:
                    status = running
                if status == 0xF0:
                    end = data.index(0xF7, i)
                    steps.append(("midi", [0xF0] + data[i:end + 1], number))
                    i = end + 1
                    running = 0
                    continue
                n = data_count(status)
                steps.append(("midi", [status] + data[i:i + n], number))
                i += n
                running = status if status < 0xF0 else (running if status >= 0xF8 else 0)
    return steps


class Note:
    """One note the player played, as latticed should sound it."""

    def __init__(self, index, key, tuning, epoch, line):
        self.index, self.key, self.tuning, self.epoch, self.line = index, key, tuning, epoch, line
        self.pitch = tuning.pitch(key)
        self.out = None   # (channel, key) it went out on


class Expectation:
    """Walks the performance: the notes, the wheel, the tuning changes."""

    def __init__(self, config, perf_path, directory):
        self.notes = []
        self.wheel = [8192]          # the wheel's values in the order played; 0: centre at start
        self.statuses = []           # (json path, [notes held then], tuning name)
        cfg = config
        tunings, preset = cfg.tunings, 0
        down = {}                    # input key -> Note
        for kind, payload, line in performance_steps(perf_path):
            if kind == "check":
                what, arg = payload[0], os.path.join(directory, payload[1])
                if what == "reload":
                    name = tunings[preset].name
                    tunings = Config(arg).tunings
                    # a reload keeps the preset of the same name, else the main tuning
                    preset = next((i for i, t in enumerate(tunings) if t.name == name), 0)
                elif what == "status":
                    self.statuses.append((arg, sorted(down.values(), key=lambda n: n.key),
                                          tunings[preset].name))
                continue
            if kind == "vanish":
                down.clear()         # the player is gone: latticed ends its notes
                continue
            if kind != "midi":
                continue
            status, ch = payload[0] & 0xF0, payload[0] & 0x0F
            if payload[0] >= 0xF0:
                continue
            if ch == cfg.control_channel:
                if status == 0xC0 and cfg.program_selects and payload[1] < len(tunings):
                    preset = payload[1]
                elif status == 0x90 and payload[2] > 0 and self.steer(cfg, tunings, payload[1]) is not None:
                    preset = self.steer(cfg, tunings, payload[1])
                continue
            if ch not in cfg.in_channels:
                continue
            if status == 0x90 and payload[2] > 0:
                chosen = self.steer(cfg, tunings, payload[1])
                if chosen is not None:
                    preset = chosen
                    continue
                note = Note(len(self.notes), payload[1], tunings[preset], len(self.wheel) - 1, line)
                self.notes.append(note)
                down[payload[1]] = note
            elif status == 0x80 or status == 0x90:
                down.pop(payload[1], None)
            elif status == 0xE0:
                self.wheel.append(payload[1] | payload[2] << 7)

    @staticmethod
    def steer(cfg, tunings, key):
        if cfg.preset_keys is not None and cfg.preset_keys <= key < cfg.preset_keys + len(tunings):
            return key - cfg.preset_keys
        return None


# ---- the recordings: what a synth heard -------------------------------------

def recording_messages(path):
    with open(path) as f:
        for number, line in enumerate(f, 1):
            words = line.split("#", 1)[0].split()
            if words:
                yield number, float(words[0]), [int(w, 16) for w in words[1:]]


class Synth:
    """A synth's view of one recording, checked against the expectation."""

    def __init__(self, cfg, expect, state, path):
        self.cfg, self.expect, self.state, self.path = cfg, expect, state, path
        self.bend = [8192] * 16
        self.range = [2.0] * 16          # MIDI 1.0 default until RPN 0 says otherwise
        self.range_set = [False] * 16
        self.setups = [0] * 16           # RPN 0 before the first note: the set-up
        self.played = False
        self.rpn = [(127, 127)] * 16
        self.sustain = [False] * 16
        self.down = {}                   # (ch, key) -> Note
        self.ringing = {}                # (ch, key) -> Note, released under the pedal
        self.tol = cfg.bend_range / 8192 / 2 + 1e-9   # half a bend step, in semitones

    def where(self, number):
        return "%s:%d" % (os.path.basename(self.path), number)

    def pitch_now(self, ch, key):
        return key + (self.bend[ch] - 8192) / 8192 * self.range[ch]

    def wheel_offset(self, epoch):
        return (self.expect.wheel[epoch] - 8192) / 8192 * self.cfg.wheel_semitones

    def sounding(self):
        return list(self.down.items()) + list(self.ringing.items())

    def all_at_wheel(self, number, epoch, when, skip=None):
        """Every note sounding (outside channel `skip`) was moved to the wheel's value `epoch`."""
        off = self.wheel_offset(epoch)
        for (c, k), other in self.sounding():
            now = self.pitch_now(c, k)
            if c != skip:
                check(abs(now - (other.pitch + off)) <= self.tol,
                      "%s: when %s, key %d (channel %d) sounded at %.5f, not %.5f (wheel %+.4f)"
                      % (self.where(number), when, other.key, c + 1, now, other.pitch + off, off))

    def feed(self, number, msg):
        st = self.state
        status, ch = msg[0] & 0xF0, msg[0] & 0x0F
        if msg[0] >= 0xF0:
            return
        if status == 0x90 and msg[2] > 0:
            key = msg[1]
            if not check(ch in self.cfg.pool, "%s: a note on channel %d, outside the pool" % (self.where(number), ch + 1)):
                return
            check(self.range_set[ch], "%s: a note on channel %d before its RPN 0 set-up" % (self.where(number), ch + 1))
            if not check(st["next"] < len(self.expect.notes),
                         "%s: more notes came out than the player played" % self.where(number)):
                return
            note = self.expect.notes[st["next"]]
            st["next"] += 1
            self.played = True
            check((ch, key) not in self.down and (ch, key) not in self.ringing,
                  "%s: note-on on channel %d key %d, which sounds already" % (self.where(number), ch + 1, key))
            note.out = (ch, key)
            check(note.epoch >= st["epoch"], "%s: the note of performance line %d comes after a later wheel value"
                  % (self.where(number), note.line))
            st["epoch"] = max(st["epoch"], note.epoch)
            want = note.pitch + self.wheel_offset(st["epoch"])
            got = self.pitch_now(ch, key)
            st["notes"] += 1
            check(abs(got - want) <= self.tol,
                  "%s: key %d (performance line %d, %s) sounds at %.5f, JI %.5f (wheel %+.4f), off by %.2f cents"
                  % (self.where(number), note.key, note.line, note.tuning.name, got, note.pitch,
                     self.wheel_offset(st["epoch"]), 100 * (got - want)))
            self.all_at_wheel(number, st["epoch"], "key %d started" % note.key)
            self.down[(ch, key)] = note
        elif status in (0x80, 0x90):
            key = msg[1]
            if (ch, key) in self.down:
                note = self.down.pop((ch, key))
                st["offs"] += 1
                if self.sustain[ch]:
                    self.ringing[(ch, key)] = note
            else:
                check(False, "%s: note-off on channel %d key %d, which no note-on started (or a second one)"
                      % (self.where(number), ch + 1, key))
        elif status == 0xB0:
            cc, v = msg[1], msg[2]
            msb, lsb = self.rpn[ch]
            if cc == 101:
                self.rpn[ch] = (v, lsb)
            elif cc == 100:
                self.rpn[ch] = (msb, v)
            elif cc == 6 and self.rpn[ch] == (0, 0):
                self.range[ch] = float(v)
                self.range_set[ch] = True
                if not self.played:
                    self.setups[ch] += 1
                check(v == self.cfg.bend_range, "%s: RPN 0 sets %d semitones on channel %d, not %d"
                      % (self.where(number), v, ch + 1, self.cfg.bend_range))
            elif cc == 38 and self.rpn[ch] == (0, 0):
                self.range[ch] = math.floor(self.range[ch]) + v / 100
            elif cc == 64:
                self.sustain[ch] = v >= 64
                if not self.sustain[ch]:
                    for k in [k for k in self.ringing if k[0] == ch]:
                        del self.ringing[k]
            elif cc in (120, 123):
                held = [k for k in self.down if k[0] == ch]
                check(not held, "%s: %s on channel %d ends notes that got no note-off: %s"
                      % (self.where(number), "all sound off" if cc == 120 else "all notes off", ch + 1, held))
                for k in held:
                    del self.down[k]
                for k in [k for k in self.ringing if k[0] == ch]:
                    del self.ringing[k]
        elif status == 0xE0:
            value = msg[1] | msg[2] << 7
            on_ch = [(k, n) for k, n in self.sounding() if k[0] == ch]
            old = self.bend[ch]
            self.bend[ch] = value
            if not on_ch or value == old:
                return
            st["wheel_moves"] += 1
            # which of the player's wheel values (from the current one on) puts every note here?
            for j in range(st["epoch"], len(self.expect.wheel)):
                off = self.wheel_offset(j)
                if all(abs(self.pitch_now(c, k) - (n.pitch + off)) <= self.tol for (c, k), n in on_ch):
                    if j > st["epoch"]:
                        self.all_at_wheel(number, st["epoch"], "the wheel moved on", skip=ch)
                    st["epoch"] = j
                    return
            check(False, "%s: the bend of channel %d moved under key(s) %s, and no later wheel value of "
                  "the player explains it" % (self.where(number), ch + 1, [n.key for _k, n in on_ch]))

    def finish(self):
        self.all_at_wheel(0, self.state["epoch"], "the recording ended")
        left = sorted(n.key for _k, n in self.sounding())
        check(not left, "%s: still sounding at the end of the recording: keys %s" %
              (os.path.basename(self.path), left))


def check_status(path, held, tuning_name):
    try:
        with open(path) as f:
            st = json.load(f)
    except (OSError, ValueError) as e:
        check(False, "%s: no status JSON (%s)" % (path, e))
        return
    out = st["outputs"][0]
    name = os.path.basename(path)
    check(st["preset"]["name"] == tuning_name, "%s: preset %s, expected %s" % (name, st["preset"]["name"], tuning_name))
    check(out["notes_held"] == len(held), "%s: %d notes held, expected %d" % (name, out["notes_held"], len(held)))
    by_key = {n["in_key"]: n for n in out["notes"]}
    check(sorted(by_key) == [n.key for n in held], "%s: held keys %s, expected %s"
          % (name, sorted(by_key), [n.key for n in held]))
    for note in held:
        got = by_key.get(note.key)
        if not got:
            continue
        tone, _period = note.tuning.tone_of(note.key)
        check(got.get("ratio") == "%d/%d" % (tone.numerator, tone.denominator) and
              got.get("tone") == note.tuning.labels[tone],
              "%s: key %d is %s %s, expected %s %s" % (name, note.key, got.get("tone"), got.get("ratio"),
                                                       note.tuning.labels[tone], tone))
        check(abs(got.get("cents", 0) - 1200 * math.log2(tone)) < 0.001, "%s: cents of key %d" % (name, note.key))
        check(note.out is not None and (got.get("out_channel"), got.get("out_key")) == (note.out[0] + 1, note.out[1]),
              "%s: key %d went out on channel %s key %s, the stream says %s"
              % (name, note.key, got.get("out_channel"), got.get("out_key"),
                 None if note.out is None else (note.out[0] + 1, note.out[1])))


def main():
    ap = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    ap.add_argument("--config", required=True)
    ap.add_argument("--performance", required=True)
    ap.add_argument("--dir", default=".")
    ap.add_argument("recordings", nargs="+")
    a = ap.parse_args()
    cfg = Config(os.path.join(a.dir, a.config))
    expect = Expectation(cfg, a.performance, a.dir)
    state = {"next": 0, "epoch": 0, "notes": 0, "offs": 0, "wheel_moves": 0}
    for rec in a.recordings:
        path = os.path.join(a.dir, rec)
        if not check(os.path.exists(path), "no recording %s" % path):
            continue
        synth = Synth(cfg, expect, state, path)
        messages = 0
        for number, _ms, msg in recording_messages(path):
            synth.feed(number, msg)
            messages += 1
        synth.finish()
        missing = [c + 1 for c in cfg.pool if not synth.range_set[c]]
        check(not missing, "%s: no RPN 0 set-up on channel(s) %s" % (rec, missing))
        # latticed sends the set-up once per connection (latticed(8) run)
        twice = [c + 1 for c in cfg.pool if synth.setups[c] > 1]
        check(not twice, "%s: the set-up came more than once on channel(s) %s" % (rec, twice))
        ok("%s: %d messages decoded" % (rec, messages))
    check(state["next"] == len(expect.notes), "%d of the player's %d notes came out"
          % (state["next"], len(expect.notes)))
    check(state["offs"] == state["notes"], "%d note-ons, %d note-offs" % (state["notes"], state["offs"]))
    check(state["wheel_moves"] > 0, "the wheel moved sounding notes at least once")
    for path, held, tuning_name in expect.statuses:
        check_status(path, held, tuning_name)
    tunings = sorted({n.tuning.name + (" %s Hz" % float(n.tuning.root_hz)) for n in expect.notes})
    print("%d notes in %s, %d bends under sounding notes, %d wheel values; %d checks, %d failed"
          % (state["notes"], ", ".join(tunings), state["wheel_moves"], len(expect.wheel) - 1, CHECKS[0], len(FAILS)))
    if FAILS:
        return 1
    ok("every note at its JI pitch (within half a bend step), one note-off each, bends only with the wheel")
    return 0


if __name__ == "__main__":
    sys.exit(main())
