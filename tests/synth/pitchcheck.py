#!/usr/bin/python3
"""Renders a MIDI file with FluidSynth and measures the pitch of every note.

The judge is a real synth: the fluidsynth command-line program of Debian 12
(2.3.1) with the TimGM6mb soundfont.  Every note of the file is found with
mido (note-on/off per channel, tempo map applied), its fundamental is measured
in the steady part of the note, and compared with what it should sound at.

What it should sound at comes either from an expectation file (JSON, see
load_expectations) or from a latticed config plus the performance that was
fed to latticed (--config C --input IN.mid): each input note's key is looked
up in ji_expect.py, which computes the exact just-intonation pitch with
fractions.  Output notes are paired with input notes by onset (within
ONSET_MATCH_S) and, inside a chord, in order of key (this only picks the
calibration of a note: each expected tone is looked for near its own pitch).

Two facts about the synth are modelled explicitly (measured on 2.3.1, see
tests/synth/README.md):
  1. Soundfont detune.  GM program 74 (Recorder) is nearly a sine with no
     vibrato, but sounds a little sharp: +3.05 cents up to key 96, +3.24
     from 97, +3.60 at 108 (silent above).  With MTS the step follows the
     tuned pitch instead of the key.  So each note is calibrated against a
     render of the same key, unbent, at its base pitch floored to whole
     cents (plain key, or retuned the way the file retunes it), and the
     measured offset is subtracted.
  2. Whole-cent floor.  FluidSynth truncates every voice pitch to whole
     absolute cents (A4 = 6900 cents) before playing it, for bends and MTS
     alike.  So "exact JI as stock FluidSynth can play it" is
     floor(exact cents).  A file has finite resolution too (a 14-bit bend
     step is 100 R / 8192 cents), so a correct file near a whole-cent
     boundary may land on either side of it: the check accepts every
     floor(c) with c within half a step of the exact pitch.
The table shows the error against exact JI ("vs JI") and against what
FluidSynth can play ("vs FS"); the pass/fail tolerance applies to "vs FS".

Measurement: Blackman-Harris window (4 terms), zero padding to 8x or more,
peak of the magnitude spectrum near each expected fundamental, parabolic
interpolation of the log magnitude.  In a chord the search around each tone
stops halfway to its neighbours; the peak must be a true local maximum and
no more than MAX_LEVEL_DROP_DB below the strongest one in the window.

Exit status: 0 all notes within tolerance, 1 a note out of tolerance or not
measurable, 2 bad input (file, config) or fluidsynth missing.
"""
import argparse
import json
import math
import os
import subprocess
import sys
import tempfile
import time
import wave
from fractions import Fraction

import mido
import numpy as np

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
import ji_expect  # noqa: E402

SOUNDFONT = "/usr/share/sounds/sf2/TimGM6mb.sf2"   # Debian timgm6mb-soundfont
PROGRAM = 74          # GM Recorder: near-sine, no vibrato (measured)
RATE = 48000
ATTACK_MIN_S = 0.35   # the Recorder's pitch settles this long after note-on,
ATTACK_CYCLES = 55    # or after this many cycles at low pitches (see attack_s)
RELEASE_S = 0.25      # and is silent 0.1 s after note-off
OFF_MARGIN_S = 0.02
MIN_CYCLES = 44       # 0.2 s at 220 Hz, 0.4 s at 110 Hz
LOBE_BINS = 8         # two Blackman-Harris main lobes (4 bins each) must not touch
MAX_WINDOW_S = 1.2
SEARCH_CENTS = 60     # how far from the expected pitch a lone note may be found
MAX_LEVEL_DROP_DB = 40
ONSET_MATCH_S = 0.005
MTS_HALF_STEP = 100 / 32768


class InputError(Exception):
    pass


def note_hz(key):
    return 440 * 2 ** ((key - 69) / 12)


def abs_cents(hz):
    """FluidSynth's absolute cents: 100 per key, A4 = 440 Hz = 6900."""
    return 6900 + 1200 * math.log2(float(hz) / 440)


# --- reading the MIDI file ---------------------------------------------------

class Note:
    def __init__(self, channel, key, on, bend_range, base_cents):
        self.channel = channel        # 0..15
        self.key = key
        self.on = on
        self.off = None
        self.bend_range = bend_range  # semitones, as RPN 0 last set it
        # the voice's pitch before bends: key * 100, or the MTS pitch of the
        # key when the channel has selected a tuning that sets it
        self.base_cents = base_cents
        # what it probably sounds at (the expected pitch once paired): sets
        # how long its attack lasts
        self.hz_guess = 440 * 2 ** ((base_cents - 6900) / 1200)

    def __repr__(self):
        return "Note(ch%d key%d %.3f-%.3f)" % (self.channel + 1, self.key, self.on, self.off)


def _mts_changes(data):
    """(bank, program, [(key, cents)]) of an MTS single-note tuning change
    (08 02, or the bank form 08 07), else None.  data = SysEx without F0/F7.
    Layout per the MIDI Tuning Standard: 7F|7E dev 08 02 prog count
    (key xx yy zz)*, or 7F|7E dev 08 07 bank prog count (key xx yy zz)*;
    the pitch is xx + (yy*128 + zz)/16384 semitones; 7F 7F 7F = no change."""
    d = list(data)
    if len(d) < 6 or d[0] not in (0x7E, 0x7F) or d[2] != 0x08:
        return None
    if d[3] == 0x02:
        bank, prog, count, body = 0, d[4], d[5], d[6:]
    elif d[3] == 0x07 and len(d) >= 7:
        bank, prog, count, body = d[4], d[5], d[6], d[7:]
    else:
        return None
    changes = []
    for i in range(min(count, len(body) // 4)):
        key, xx, yy, zz = body[4 * i:4 * i + 4]
        if (xx, yy, zz) != (0x7F, 0x7F, 0x7F):
            changes.append((key, 100 * xx + 100 * (yy * 128 + zz) / 16384))
    return bank, prog, changes


def read_notes(path):
    """Every note in the file, with times in seconds (mido applies tempo).
    Also follows what decides a voice's base pitch in FluidSynth: RPN 0
    (bend range), MTS single-note changes and RPN 3/4 (tuning program and
    bank select; a stored tuning is only used once a channel selects it)."""
    try:
        mf = mido.MidiFile(path)
    except (OSError, EOFError, ValueError, KeyError, IndexError) as e:
        why = "it ends in the middle of a chunk" if isinstance(e, EOFError) else \
            "%s: %s" % (type(e).__name__, e)
        raise InputError("%s: not a readable MIDI file (%s)" % (path, why))
    now = 0.0
    sounding = {}
    notes = []
    rpn = [[127, 127] for _ in range(16)]
    bend_range = [2] * 16        # FluidSynth's default (and GM's)
    tuning_bank = [0] * 16
    selected = [None] * 16       # (bank, program) chosen by RPN 3
    tunings = {}                 # (bank, program) -> {key: cents}
    for msg in mf:
        now += msg.time
        if msg.type == "control_change":
            ch = msg.channel
            if msg.control == 101:
                rpn[ch][0] = msg.value
            elif msg.control == 100:
                rpn[ch][1] = msg.value
            elif msg.control == 6 and rpn[ch] == [0, 0]:
                bend_range[ch] = msg.value
            elif msg.control == 6 and rpn[ch] == [0, 3]:
                selected[ch] = (tuning_bank[ch], msg.value)
            elif msg.control == 6 and rpn[ch] == [0, 4]:
                tuning_bank[ch] = msg.value
        elif msg.type == "sysex":
            change = _mts_changes(msg.data)
            if change:
                bank, prog, keys = change
                tunings.setdefault((bank, prog), {}).update(keys)
        elif msg.type == "note_on" and msg.velocity > 0:
            ch = msg.channel
            table = tunings.get(selected[ch], {}) if selected[ch] else {}
            n = Note(ch, msg.note, now, bend_range[ch], table.get(msg.note, 100 * msg.note))
            sounding.setdefault((ch, msg.note), []).append(n)
            notes.append(n)
        elif msg.type in ("note_off", "note_on"):
            queue = sounding.get((msg.channel, msg.note))
            if queue:
                queue.pop(0).off = now
    for n in notes:
        if n.off is None:
            n.off = now
    return notes, now


# --- rendering -----------------------------------------------------------------

def _render_copy(src, dst, tail_s=0.6):
    """The file as FluidSynth should play it: every program set to PROGRAM
    (instrument only; nothing that touches pitch), and a tail so the last
    release is rendered."""
    mf = mido.MidiFile(src)
    for track in mf.tracks:
        for i, msg in enumerate(track):
            if msg.type == "program_change":
                track[i] = msg.copy(program=PROGRAM)
    # ticks for the length at the fastest tempo in the file: at least that long
    fastest = min([m.tempo for tr in mf.tracks for m in tr if m.type == "set_tempo"] + [500000])
    length_ticks = int(mido.second2tick(mf.length + tail_s, mf.ticks_per_beat, fastest)) + 1
    head = mido.MidiTrack()
    for ch in range(16):
        if ch != 9:
            head.append(mido.Message("program_change", channel=ch, program=PROGRAM, time=0))
    # the longest track decides when the player stops
    head.append(mido.MetaMessage("end_of_track", time=length_ticks))
    if mf.type == 0:
        mf.type = 1
    mf.tracks.insert(0, head)
    mf.save(dst)


def fluidsynth_available():
    from shutil import which
    return which("fluidsynth") is not None and os.path.exists(SOUNDFONT)


def render(midi_path, workdir, name):
    """Renders to WAV; returns (mono samples as float array, seconds taken)."""
    copy = os.path.join(workdir, name + ".play.mid")
    wav = os.path.join(workdir, name + ".wav")
    _render_copy(midi_path, copy)
    cmd = ["fluidsynth", "-ni", "-q", "-F", wav, "-r", str(RATE), "-g", "0.5",
           "-o", "synth.chorus.active=0", "-o", "synth.reverb.active=0",
           SOUNDFONT, copy]
    t0 = time.monotonic()
    p = subprocess.run(cmd, capture_output=True, text=True)
    took = time.monotonic() - t0
    if p.returncode != 0 or not os.path.exists(wav):
        raise InputError("fluidsynth failed (%d): %s" % (p.returncode, p.stderr.strip()))
    with wave.open(wav) as w:
        if w.getsampwidth() != 2 or w.getframerate() != RATE:
            raise InputError("%s: expected 16-bit %d Hz WAV" % (wav, RATE))
        raw = np.frombuffer(w.readframes(w.getnframes()), dtype="<i2")
        x = raw.reshape(-1, w.getnchannels()).astype(np.float64).mean(axis=1)
    return x, took


# --- measuring -------------------------------------------------------------------

def blackman_harris(n):
    k = np.arange(n) * (2 * np.pi / (n - 1))
    return 0.35875 - 0.48829 * np.cos(k) + 0.14128 * np.cos(2 * k) - 0.01168 * np.cos(3 * k)


class Spectrum:
    def __init__(self, x, start_s, end_s):
        a, b = int(start_s * RATE), int(end_s * RATE)
        seg = x[a:b]
        self.length_s = len(seg) / RATE
        nfft = 1 << int(math.ceil(math.log2(8 * len(seg))))
        mag = np.abs(np.fft.rfft(seg * blackman_harris(len(seg)), nfft))
        self.db = 20 * np.log10(mag + 1e-12)
        self.hz_per_bin = RATE / nfft
        lo, hi = int(20 / self.hz_per_bin), int(16000 / self.hz_per_bin)
        self.strongest_db = float(self.db[lo:hi].max())

    def peak(self, f_lo, f_hi):
        """(Hz, dB) of the local maximum in [f_lo, f_hi], or None."""
        lo = max(int(math.ceil(f_lo / self.hz_per_bin)), 1)
        hi = min(int(f_hi / self.hz_per_bin), len(self.db) - 2)
        if hi - lo < 3:
            return None
        k = lo + int(np.argmax(self.db[lo:hi + 1]))
        if k in (lo, hi):
            return None        # rising towards the edge: no peak of its own here
        a, b, c = self.db[k - 1], self.db[k], self.db[k + 1]
        delta = 0.5 * (a - c) / (a - 2 * b + c)
        return (k + delta) * self.hz_per_bin, float(b - 0.25 * (a - c) * delta)


def attack_s(hz):
    """Time from note-on until the Recorder's pitch is steady.  The sample's
    attack is played slower the lower the pitch, so it lasts a number of
    cycles rather than a time (measured: at 60 Hz a window starting 0.5 s in
    reads +1.7 cents sharp, from 1.0 s on it reads true to 0.01 cent)."""
    return max(ATTACK_MIN_S, ATTACK_CYCLES / hz)


def _free_window(note, others):
    """Longest stretch of the note's steady part with no other note starting
    or ending (chord members that sound throughout are fine)."""
    pieces = [(note.on + attack_s(note.hz_guess), note.off - OFF_MARGIN_S)]
    for o in others:
        if o is note:
            continue
        for (a, b) in ((o.on - 0.01, o.on + attack_s(o.hz_guess)), (o.off - OFF_MARGIN_S, o.off + RELEASE_S)):
            cut = []
            for (s, e) in pieces:
                if b <= s or a >= e:
                    cut.append((s, e))
                else:
                    if a > s:
                        cut.append((s, a))
                    if b < e:
                        cut.append((b, e))
            pieces = cut
    if not pieces:
        return None
    s, e = max(pieces, key=lambda p: p[1] - p[0])
    if e - s > MAX_WINDOW_S:       # centre a shorter window in the steady part
        mid = (s + e) / 2
        s, e = mid - MAX_WINDOW_S / 2, mid + MAX_WINDOW_S / 2
    return (s, e) if e > s else None


def calibration_point(note):
    """What a note is calibrated against: the same key, unbent, at its base
    pitch rounded down to whole cents (the detune belongs to the base pitch,
    see calibrate)."""
    return note.key, math.floor(note.base_cents + 1e-9)


def calibrate(points, workdir):
    """Soundfont detune in cents for each (key, base cents): the key alone,
    unbent, at that base pitch -- plain for key * 100, else retuned by an MTS
    single-note change on a channel that selected the tuning with RPN 3.

    Why not just the plain key: the Recorder's detune is +3.05 cents up to
    key 96 and +3.24 from key 97 (+3.60 at 108) for plain and bent notes,
    whatever the bend; with MTS it steps at the tuned pitch instead
    (+3.24 from 9650 cents, whatever the key) -- measured on 2.3.1.
    Returns ({point: cents}, render seconds)."""
    mf = mido.MidiFile(ticks_per_beat=1000)     # 1 tick = 1 ms at 60 bpm
    tr = mido.MidiTrack()
    mf.tracks.append(tr)
    tr.append(mido.MetaMessage("set_tempo", tempo=1000000, time=0))
    for ch in (0, 1):
        tr.append(mido.Message("program_change", channel=ch, program=PROGRAM, time=0))
    for cc, v in ((101, 0), (100, 3), (6, 0), (101, 127), (100, 127)):
        tr.append(mido.Message("control_change", channel=1, control=cc, value=v, time=0))
    plan, t, gap_ms = [], 0.1, 100
    for key, base in sorted(points):
        ch = 0
        if base != 100 * key:
            ch = 1
            frac = -(-(base % 100) * 16384 // 100)   # round up: FluidSynth floors
            tr.append(mido.Message("sysex", time=gap_ms, data=[
                0x7F, 0x7F, 0x08, 0x02, 0, 1, key, base // 100, frac >> 7, frac & 0x7F]))
            gap_ms = 0
        hz = 440 * 2 ** ((base - 6900) / 1200)
        dur_ms = int(1000 * (attack_s(hz) + max(0.3, MIN_CYCLES / hz) + 0.1))
        plan.append((key, base, t, t + dur_ms / 1000))
        tr.append(mido.Message("note_on", channel=ch, note=key, velocity=100, time=gap_ms))
        tr.append(mido.Message("note_off", channel=ch, note=key, velocity=0, time=dur_ms))
        gap_ms = int(RELEASE_S * 1000)
        t += (dur_ms + gap_ms) / 1000
    path = os.path.join(workdir, "calibration.mid")
    mf.save(path)
    x, took = render(path, workdir, "calibration")
    detune = {}
    for key, base, on, off in plan:
        # the MTS word has 1/16384-semitone steps: sent lies 0..0.006 c above base
        frac = -(-(base % 100) * 16384 // 100)
        sent = 100 * (base // 100) + 100 * frac / 16384
        hz = 440 * 2 ** ((math.floor(sent) - 6900) / 1200)
        sp = Spectrum(x, on + attack_s(hz), off - OFF_MARGIN_S)
        pk = sp.peak(hz * 2 ** (-SEARCH_CENTS / 1200), hz * 2 ** (SEARCH_CENTS / 1200))
        if pk is None:
            raise InputError("calibration: no pitch found for key %d at %d cents" % (key, base))
        detune[(key, base)] = 1200 * math.log2(pk[0] / hz)
    return detune, took


# --- expectations ------------------------------------------------------------------

class Expect:
    def __init__(self, on, off, hz, key=None, label=""):
        self.on, self.off = on, off
        self.hz = Fraction(hz)
        self.key = key
        self.label = label


def load_expectations(path):
    """JSON: {"notes": [{"on": s, "off": s, "hz": "275" or 275.0,
    "key": 58, "label": "1.5"}, ...]}"""
    try:
        with open(path) as f:
            doc = json.load(f)
        return [Expect(float(n["on"]), float(n["off"]), n["hz"], n.get("key"), n.get("label", ""))
                for n in doc["notes"]]
    except (OSError, ValueError, KeyError, TypeError) as e:
        raise InputError("%s: expected {\"notes\": [{\"on\", \"off\", \"hz\", ...}]}: %s" % (path, e))


def expectations_from_input(config_path, input_mid):
    """The input performance's notes, each at the pitch ji_expect gives its key.
    Keys that are silent in the map are expected to be silent in the output."""
    try:
        params = ji_expect.Params.from_file(config_path) if config_path else ji_expect.Params()
        km = ji_expect.key_map(params)
    except Exception as e:   # configparser and ConfigError alike: a config problem
        raise InputError("%s: %s" % (config_path, e))
    notes, _ = read_notes(input_mid)
    return [Expect(n.on, n.off, km[n.key].hz, n.key, km[n.key].label)
            for n in notes if n.key in km]


def _groups(items, onset):
    items = sorted(items, key=onset)
    groups = []
    for it in items:
        if groups and onset(it) - onset(groups[-1][0]) <= ONSET_MATCH_S:
            groups[-1].append(it)
        else:
            groups.append([it])
    return groups


def pair(expects, notes):
    """[(Expect, Note or None, problem)] plus file notes nobody expected."""
    egroups = _groups(expects, lambda e: e.on)
    ngroups = _groups(notes, lambda n: n.on)
    used = set()
    pairs = []
    for eg in egroups:
        match = None
        for i, ng in enumerate(ngroups):
            if i not in used and abs(ng[0].on - eg[0].on) <= ONSET_MATCH_S:
                match = i
                break
        if match is None:
            pairs += [(e, None, "no note in the file starts at %.3f s" % e.on) for e in eg]
            continue
        used.add(match)
        ng = ngroups[match]
        if len(ng) != len(eg):
            pairs += [(e, None, "the file has %d notes at %.3f s, expected %d"
                       % (len(ng), e.on, len(eg))) for e in eg]
            continue
        es = sorted(eg, key=lambda e: e.hz)
        ns = sorted(ng, key=lambda n: (n.key, n.channel))
        for e, n in zip(es, ns):
            n.hz_guess = float(e.hz)
            pairs.append((e, n, None))
    extra = [n for i, ng in enumerate(ngroups) if i not in used for n in ng]
    return pairs, extra


# --- the check -------------------------------------------------------------------

class Result:
    def __init__(self, expect, note):
        self.expect = expect
        self.note = note
        self.measured_hz = None
        self.vs_ji = None
        self.vs_fs = None
        self.window = None
        self.problem = None
        self.ok = False

    def as_dict(self):
        n = self.note
        return {"on": self.expect.on, "key": self.expect.key, "label": self.expect.label,
                "channel": n.channel + 1 if n else None, "out_key": n.key if n else None,
                "expected_hz": float(self.expect.hz), "measured_hz": self.measured_hz,
                "vs_ji_cents": self.vs_ji, "vs_fs_cents": self.vs_fs,
                "window_s": self.window, "problem": self.problem, "ok": self.ok}


def _measure(res, x, detune, sounding_hz, tolerance, spectra, accept):
    e, n = res.expect, res.note
    f = float(e.hz)
    win = res.window
    if win not in spectra:          # chord members share one window
        spectra[win] = Spectrum(x, win[0], win[1])
    sp = spectra[win]
    # search up to SEARCH_CENTS, but never past halfway to a neighbour
    up, down = f * 2 ** (SEARCH_CENTS / 1200), f * 2 ** (-SEARCH_CENTS / 1200)
    gap = None
    for g in sounding_hz:
        if g > f:
            up = min(up, math.sqrt(f * g))
        elif g < f:
            down = max(down, math.sqrt(f * g))
        if g != f:
            gap = abs(g - f) if gap is None else min(gap, abs(g - f))
    need = max(MIN_CYCLES / f, 0.2, (LOBE_BINS / gap) if gap else 0)
    if sp.length_s < need:
        res.problem = "window %.2f s too short, needs %.2f s" % (sp.length_s, need)
        return
    pk = sp.peak(down, up)
    if pk is None or pk[1] < sp.strongest_db - MAX_LEVEL_DROP_DB:
        strongest = sp.peak(20, 16000)
        res.problem = "no tone within %.0f..%.0f Hz%s" % (
            down, up, "" if strongest is None else " (strongest peak %.2f Hz)" % strongest[0])
        return
    res.measured_hz = pk[0]
    played = abs_cents(pk[0]) - detune[calibration_point(n)]
    exact = abs_cents(e.hz)
    res.vs_ji = played - exact
    half_step = max(100 * n.bend_range / 16384, MTS_HALF_STEP)
    lo, hi = math.floor(exact - half_step), math.floor(exact + half_step)
    if accept == "bracket":
        hi = math.ceil(exact + half_step)
    nearest = min(max(round(played), lo), hi)
    res.vs_fs = played - nearest
    res.ok = abs(res.vs_fs) <= tolerance
    if not res.ok:
        res.problem = "off by %+.3f cents" % res.vs_fs


def check(midi_path, expects, tolerance, workdir, log=print, accept="floor"):
    """Renders, calibrates, measures; returns (all ok, summary dict).
    accept = "floor": a note must sound where stock FluidSynth plays an exact
    file (its whole-cent floor); "bracket": either whole cent around exact JI
    (for an encoder that compensates the floor on purpose)."""
    notes, length = read_notes(midi_path)
    pairs, extra = pair(expects, notes)
    t0 = time.monotonic()
    x, took = render(midi_path, workdir, "file")
    points = sorted({calibration_point(n) for _, n, _ in pairs if n is not None})
    detune, cal_took = calibrate(points, workdir) if points else ({}, 0.0)
    results = []
    spectra = {}
    by_note = {id(n): e for e, n, _ in pairs if n is not None}
    for e, n, problem in pairs:
        res = Result(e, n)
        results.append(res)
        if problem:
            res.problem = problem
            continue
        res.window = _free_window(n, notes)
        if res.window is None:
            res.problem = "no steady stretch free of other notes' attacks and releases"
            continue
        s, t = res.window
        sounding = [float(by_note[id(o)].hz) for o in notes
                    if o is not n and id(o) in by_note and o.on + attack_s(o.hz_guess) <= s and o.off >= t]
        _measure(res, x, detune, sounding, tolerance, spectra, accept)
    analysis = time.monotonic() - t0 - took - cal_took
    summary = {
        "file": midi_path, "notes_in_file": len(notes), "expected": len(expects),
        "unexpected_notes": [repr(n) for n in extra], "tolerance_cents": tolerance,
        "accept": accept,
        "render_s": took, "calibration_render_s": cal_took, "analysis_s": analysis,
        "audio_s": len(x) / RATE,
        "detune_cents": {"%d@%d" % k: v for k, v in detune.items()},
        "results": [r.as_dict() for r in results],
    }
    ok = all(r.ok for r in results) and not extra and bool(results)
    summary["ok"] = ok
    measured = [r for r in results if r.vs_fs is not None]
    summary["worst_vs_fs"] = max((abs(r.vs_fs) for r in measured), default=None)
    summary["worst_vs_ji"] = min((r.vs_ji for r in measured), default=None), \
        max((r.vs_ji for r in measured), default=None)
    if log:
        print_table(summary, log)
    return ok, summary


def print_table(s, log):
    log("%s: %d notes, %.1f s of audio rendered in %.3f s (calibration %.3f s), analysis %.2f s"
        % (s["file"], s["notes_in_file"], s["audio_s"], s["render_s"],
           s["calibration_render_s"], s["analysis_s"]))
    d = list(s["detune_cents"].values())
    if d:
        log("soundfont detune (program %d, plain keys): %+.4f .. %+.4f cents"
            % (PROGRAM, min(d), max(d)))
    log("  time  key label       ch out   expected Hz   measured Hz    vs JI    vs FS")
    for r in s["results"]:
        def num(v, fmt):
            return fmt % v if v is not None else "-".rjust(len(fmt % 0))
        log("%6.2f %4s %-10s %3s %3s %13.4f %13s %8s %8s  %s" % (
            r["on"], r["key"] if r["key"] is not None else "-", r["label"][:10],
            r["channel"] or "-", r["out_key"] if r["out_key"] is not None else "-",
            r["expected_hz"], num(r["measured_hz"], "%13.4f"),
            num(r["vs_ji_cents"], "%+8.3f"), num(r["vs_fs_cents"], "%+8.3f"),
            "ok" if r["ok"] else "FAIL: " + (r["problem"] or "")))
    for n in s["unexpected_notes"]:
        log("FAIL: unexpected note in the file: %s" % n)
    if s["worst_vs_fs"] is not None:
        log("worst |vs FS| %.4f cents (tolerance %.3f); vs JI from %+.3f to %+.3f cents"
            % (s["worst_vs_fs"], s["tolerance_cents"], s["worst_vs_ji"][0], s["worst_vs_ji"][1]))
    log("%s" % ("PASS" if s["ok"] else "FAIL"))


def main(argv=None):
    ap = argparse.ArgumentParser(
        description="Render a MIDI file with FluidSynth and check every note's pitch.")
    ap.add_argument("midi", help="the MIDI file to judge")
    src = ap.add_mutually_exclusive_group(required=True)
    src.add_argument("--expect", help="JSON file of expected notes")
    src.add_argument("--input", help="the performance the file was made from (needs --config)")
    ap.add_argument("--config", help="latticed config that maps the input's keys")
    ap.add_argument("--tolerance", type=float, required=True, help="cents, against FluidSynth's floor")
    ap.add_argument("--accept", choices=["floor", "bracket"], default="floor",
                    help="floor: where stock FluidSynth plays exact JI (default); "
                         "bracket: either whole cent around exact JI")
    ap.add_argument("--report", help="write the results as JSON here")
    ap.add_argument("--workdir", help="keep the rendered files here")
    a = ap.parse_args(argv)
    if not fluidsynth_available():
        print("pitchcheck: needs fluidsynth and %s (Debian: fluidsynth timgm6mb-soundfont)"
              % SOUNDFONT, file=sys.stderr)
        return 2
    try:
        expects = load_expectations(a.expect) if a.expect else \
            expectations_from_input(a.config, a.input)
        if a.workdir:
            os.makedirs(a.workdir, exist_ok=True)
            ok, summary = check(a.midi, expects, a.tolerance, a.workdir, accept=a.accept)
        else:
            with tempfile.TemporaryDirectory(prefix="pitchcheck.") as wd:
                ok, summary = check(a.midi, expects, a.tolerance, wd, accept=a.accept)
    except InputError as e:
        print("pitchcheck: %s" % e, file=sys.stderr)
        return 2
    if a.report:
        with open(a.report, "w") as f:
            json.dump(summary, f, indent=1)
    return 0 if ok else 1


if __name__ == "__main__":
    sys.exit(main())
