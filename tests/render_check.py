#!/usr/bin/env python3
"""Checks `latticed render` end to end with a decoder that is not ours.

  render_check.py LATTICED_BINARY SOURCE_DIR WORKDIR

Hand-made Standard MIDI Files (written here byte by byte) are rendered with
the shipped config/latticed.conf turned to each method (bend, mts, mpe, and
bend with bend_factor = 127/128), and every output file is read back by the
SMF reader in this file and played into the model synth in this file.
Nothing here uses latticed's code; the expected pitches come from the
config's lattice, recomputed with exact fractions:
  - CPS tones: every product of `choose` seeds, reduced into [1, period),
    duplicates merged, sorted (definition of a combination product set;
    the 1 3 5 7 hexany's tones as published: Wikipedia "Hexany");
  - sequential layout: key root_key + i plays tone i mod N in period
    floor(i / N) at root_hz * ratio * period^floor(i / N) (our documented
    model, latticed.conf(5));
  - note number n = 69 + 12 log2(f / 440) (ISO 16 A4 = 440 Hz = key 69;
    MTS numbering).
The model synth follows the standards:
  - SMF 1.0: chunks, VLQ delta times, running status for channel messages
    only (this reader refuses it after meta or SysEx events, so the strict
    writer is checked), F0/F7/FF events, end-of-track last in each track;
    tracks played together, equal ticks in track order (common practice of
    players);
  - MIDI 1.0: note-on velocity 0 is a note-off; pitch bend 14 bits LSB
    first, centre 8192, value 0 = -R semitones; RPN 0 (CC101 0, CC100 0,
    CC6 n) sets R, default 2 (GM, common practice); sustain CC64 >= 64 holds
    released notes;
  - MTS: single-note tuning change F0 7F dd 08 02 tt ll [kk xx yy zz] F7,
    real time (retunes sounding notes at once); bulk dump F0 7E dd 08 01 tt
    name[16] [xx yy zz]*128 cs F7; word = key + 14-bit fraction / 16384;
    a channel plays tuning program tt only after RPN 3 (CC101 0, CC100 3,
    CC6 tt) selected it;
  - MPE: the MCM (RPN 6 on channel 1, CC6 = member count) makes channels
    2 .. 1+n members and resets the ranges to 48 (members) and 2 (master);
    a member note sounds at key + member bend + master bend;
  - FluidSynth 2.3 plays 127/128 of every bend (its default pitch-wheel
    modulator, src/synth/fluid_mod.c; measured): the bend_factor run models
    that synth.
Checks: every note sounds within half a quantisation step of its exact
pitch at its note-on and at the end of every tick it sounds through (the
wheel, the sustain pedal and other notes must not disturb it); each output
note starts and ends at the ticks of its input note, in the input note's
track; nothing sounds at the end; set-up messages come at tick 0 after the
leading meta events of the first track with channel events; meta events
(tempo map, text, names) and the input SysEx are unchanged at the same
ticks; one end-of-track per track, last, at the input's tick; format and
division (also SMPTE) preserved; a format 2 file is one performance per
track; pass-through channel events unchanged; '-' reads stdin and writes
stdout; truncated input, unwritable directories, write failures and bad
command lines give the documented exit status and message and leave no
file behind.
"""
import configparser
import itertools
import math
import os
import re
import resource
import signal
import subprocess
import sys
from fractions import Fraction

FAILS = []


def check(cond, what):
    if not cond:
        FAILS.append(what)
        print("FAIL:", what, file=sys.stderr)
    return cond


# ---- SMF writing (inputs) -------------------------------------------------

def vlq(value):
    out = [value & 0x7F]
    value >>= 7
    while value:
        out.insert(0, 0x80 | (value & 0x7F))
        value >>= 7
    return bytes(out)


def meta(t, kind, data):
    return (t, bytes([0xFF, kind]) + vlq(len(data)) + bytes(data))


def sysex(t, body):
    """body: the bytes after F0, ending in F7 (SMF 1.0)"""
    return (t, b"\xF0" + vlq(len(body)) + bytes(body))


def ch(t, *msg):
    return (t, bytes(msg))


def track_bytes(events, running_status=True, end_of_track=None):
    """events: (tick, raw event) in order; channel messages are written with
    running status when the status repeats (SMF 1.0 allows it)."""
    out = bytearray()
    last, status = 0, None
    for tick, raw in events:
        assert tick >= last
        out += vlq(tick - last)
        last = tick
        if raw[0] < 0xF0:
            if running_status and raw[0] == status:
                out += raw[1:]
            else:
                out += raw
            status = raw[0]
        else:
            out += raw
            status = None
    eot = last if end_of_track is None else end_of_track
    out += vlq(eot - last) + b"\xFF\x2F\x00"
    return b"MTrk" + len(out).to_bytes(4, "big") + bytes(out)


def smf_bytes(fmt, division, tracks, ends=None):
    head = b"MThd" + (6).to_bytes(4, "big") + fmt.to_bytes(2, "big") + \
        len(tracks).to_bytes(2, "big") + division.to_bytes(2, "big")
    ends = ends or [None] * len(tracks)
    return head + b"".join(track_bytes(t, end_of_track=e) for t, e in zip(tracks, ends))


# ---- SMF reading (outputs), strict -----------------------------------------

class Event:
    def __init__(self, tick, kind, data, status=None, meta_type=None, index=0):
        self.tick, self.kind, self.data = tick, kind, data
        self.status, self.meta_type, self.index = status, meta_type, index

    def __repr__(self):
        return "Event(%d, %s, %s, %s)" % (self.tick, self.kind,
                                          self.status if self.status is not None else self.meta_type,
                                          self.data.hex())


def read_vlq(data, i):
    value = 0
    for n in range(4):
        b = data[i]
        i += 1
        value = (value << 7) | (b & 0x7F)
        if not b & 0x80:
            return value, i
    raise ValueError("VLQ longer than 4 bytes at %d" % i)


def data_length(status):
    return 1 if status & 0xF0 in (0xC0, 0xD0) else 2


def read_smf(data):
    assert data[:4] == b"MThd", "no MThd"
    hlen = int.from_bytes(data[4:8], "big")
    assert hlen == 6, "strict writer: MThd length 6"
    fmt, ntracks, division = (int.from_bytes(data[8 + 2 * k:10 + 2 * k], "big") for k in range(3))
    pos = 14
    tracks = []
    for _ in range(ntracks):
        assert data[pos:pos + 4] == b"MTrk", "expected MTrk at %d" % pos
        length = int.from_bytes(data[pos + 4:pos + 8], "big")
        body = data[pos + 8:pos + 8 + length]
        assert len(body) == length, "chunk runs past the end"
        pos += 8 + length
        events, i, tick, status = [], 0, 0, None
        while i < len(body):
            delta, i = read_vlq(body, i)
            tick += delta
            b = body[i]
            if b == 0xFF:
                t = body[i + 1]
                n, i = read_vlq(body, i + 2)
                events.append(Event(tick, "meta", body[i:i + n], meta_type=t, index=len(events)))
                i += n
                status = None
            elif b in (0xF0, 0xF7):
                n, i = read_vlq(body, i + 1)
                events.append(Event(tick, "sysex" if b == 0xF0 else "escape", body[i:i + n],
                                    index=len(events)))
                i += n
                status = None
            else:
                if b & 0x80:
                    assert b < 0xF0, "status %02X in a file" % b
                    status = b
                    i += 1
                else:
                    assert status is not None, "data byte without running status (strict writer)"
                n = data_length(status)
                d = body[i:i + n]
                assert all(x < 0x80 for x in d)
                i += n
                events.append(Event(tick, "midi", d, status=status, index=len(events)))
        eots = [e for e in events if e.kind == "meta" and e.meta_type == 0x2F]
        assert len(eots) == 1 and events[-1] is eots[0], "exactly one end-of-track, last"
        tracks.append(events)
    assert pos == len(data), "bytes after the last track"
    return fmt, division, tracks


def merged(tracks, indices=None):
    """Events of the given tracks by tick, then track, then file order."""
    indices = range(len(tracks)) if indices is None else indices
    return sorted(((e.tick, t, e.index, e) for t in indices for e in tracks[t]),
                  key=lambda x: x[:3])


# ---- the lattice, from the config ------------------------------------------

def reduce_into(r, period):
    while r >= period:
        r /= period
    while r < 1:
        r *= period
    return r


class Lattice:
    def __init__(self, conf_path):
        cp = configparser.ConfigParser(inline_comment_prefixes=(";",))
        cp.read(conf_path)
        seeds = [Fraction(s) for s in cp["lattice"]["seeds"].split()]
        choose = int(cp["lattice"]["choose"])
        self.period = Fraction(cp["lattice"]["period"])
        assert cp["lattice"].get("unison", "none") == "none", "this test models unison = none"
        assert cp["keys"].get("layout", "sequential") == "sequential", \
            "this test models the sequential layout"
        assert int(cp["keys"].get("transpose", "0")) == 0
        self.root_key = int(cp["pitch"]["root_key"])
        self.root_hz = Fraction(cp["pitch"]["root_hz"])
        self.tones = sorted(set(reduce_into(math.prod(c), self.period)
                                for c in itertools.combinations(seeds, choose)))
        if seeds == [1, 3, 5, 7] and choose == 2 and self.period == 2:
            # Wikipedia "Hexany": the 1 3 5 7 hexany
            assert self.tones == [Fraction(35, 32), Fraction(5, 4), Fraction(21, 16),
                                  Fraction(3, 2), Fraction(7, 4), Fraction(15, 8)], self.tones

    def note(self, key):
        i = key - self.root_key
        n = len(self.tones)
        f = self.root_hz * self.tones[i % n] * self.period ** (i // n)
        return 69 + 12 * math.log2(float(f) / 440)


# ---- the model synth --------------------------------------------------------

class Channel:
    def __init__(self):
        self.rpn = (127, 127)
        self.range = 2.0           # GM default, semitones
        self.range_set = False
        self.bend = 8192
        self.program = None        # MTS tuning program selected by RPN 3
        self.sustain = False


class Synth:
    def __init__(self, method, factor):
        self.method, self.factor = method, factor
        self.ch = [Channel() for _ in range(16)]
        self.tunings = {}          # program -> {key: note}
        self.members = None        # MPE member channels
        self.mcm_seen = False
        self.sounding = {}         # (channel, key) -> note dict
        self.errors = []

    def bend_semis(self, c):
        return (self.ch[c].bend - 8192) / 8192 * self.ch[c].range * self.factor

    def half_step(self, c):
        return self.ch[c].range * 100 / 8192 / 2 * self.factor

    def pitch(self, c, key):
        """sounding pitch (note number) and the rounding allowed (cents)"""
        if self.method == "mpe":
            p = key + self.bend_semis(c) + self.bend_semis(0)
            return p, self.half_step(c) + self.half_step(0)
        base, tol = key, 0.0
        if self.method == "mts":
            tuned = self.tunings.get(self.ch[c].program, {})
            if key in tuned:
                base, tol = tuned[key], 100 / 16384 / 2
        return base + self.bend_semis(c), tol + self.half_step(c)

    def control(self, c, cc, v):
        s = self.ch[c]
        if cc == 101:
            s.rpn = (v, s.rpn[1])
        elif cc == 100:
            s.rpn = (s.rpn[0], v)
        elif cc == 6 and s.rpn == (0, 0):
            s.range, s.range_set = float(v), True
        elif cc == 6 and s.rpn == (0, 3):
            s.program = v
        elif cc == 6 and s.rpn == (0, 6) and c == 0:
            self.members = set(range(1, 1 + v))
            self.mcm_seen = True
            self.ch[0].range = 2.0
            for m in self.members:
                self.ch[m].range = 48.0
        elif cc == 121:
            # Reset All Controllers (MIDI 1.0 / GM RP-015; FluidSynth 2.3 measured):
            # bend centred, pedal up, RPN selection null; bend range and tuning kept
            s.bend, s.rpn = 8192, (127, 127)
            self.control(c, 64, 0)
        elif cc == 120:
            # All Sound Off (MIDI 1.0 channel mode message): silent at once
            for k in [k for k in self.sounding if k[0] == c]:
                del self.sounding[k]
        elif cc == 123:
            # All Notes Off: every note released; a held pedal still holds them
            for k in [k for k in self.sounding if k[0] == c]:
                self.note_off(c, k[1], None)
        elif cc == 64:
            s.sustain = v >= 64
            if not s.sustain:
                for k in [k for k, n in self.sounding.items()
                          if n["released"] and not self.sustained(k[0])]:
                    del self.sounding[k]

    def sustained(self, c):
        """MPE: the master channel's pedal holds the whole zone"""
        if self.method == "mpe" and self.members and c in self.members and self.ch[0].sustain:
            return True
        return self.ch[c].sustain

    def sysex(self, body):
        b = list(body)
        if len(b) >= 6 and b[0] == 0x7F and b[2:4] == [0x08, 0x02]:
            prog, count = b[4], b[5]
            words = b[6:6 + 4 * count]
            assert b[6 + 4 * count] == 0xF7 and len(b) == 7 + 4 * count
            for k in range(count):
                kk, xx, yy, zz = words[4 * k:4 * k + 4]
                self.tunings.setdefault(prog, {})[kk] = xx + ((yy << 7) | zz) / 16384
        elif len(b) >= 5 and b[0] == 0x7E and b[2:4] == [0x08, 0x01]:
            prog = b[4]
            words = b[21:21 + 384]
            for kk in range(128):
                xx, yy, zz = words[3 * kk:3 * kk + 3]
                if (xx, yy, zz) != (0x7F, 0x7F, 0x7F):
                    self.tunings.setdefault(prog, {})[kk] = xx + ((yy << 7) | zz) / 16384

    def note_on(self, c, key, velocity, tick, track):
        if (c, key) in self.sounding and not self.sounding[(c, key)]["released"]:
            self.errors.append("tick %d: note-on %d on channel %d while it sounds" % (tick, key, c + 1))
        self.sounding[(c, key)] = {"velocity": velocity, "start": tick, "track": track,
                                   "released": False, "end": None, "channel": c, "key": key}
        return self.sounding[(c, key)]

    def note_off(self, c, key, tick):
        n = self.sounding.get((c, key))
        if n is None or n["released"]:
            return None
        n["released"] = True
        n["end"] = tick
        if not self.sustained(c):
            del self.sounding[(c, key)]
        return n


def expected_pitch(lattice, key, wheel, wheel_range_cents=200.0):
    """the exact pitch of input key under the player's wheel (input channel 1)"""
    return lattice.note(key) + (wheel - 8192) / 8192 * wheel_range_cents / 100


def input_performance(tracks, indices, retuned_channel=0):
    """From the input: each note (by its unique velocity) with key, start,
    end and track, and the wheel value after each tick."""
    notes, open_notes, wheel, wheel_at = {}, {}, 8192, {}
    for tick, t, _, e in merged(tracks, indices):
        if e.kind != "midi" or e.status & 0x0F != retuned_channel:
            continue
        kind = e.status & 0xF0
        if kind == 0x90 and e.data[1] > 0:
            assert e.data[1] not in notes, "test input: velocities must be unique"
            notes[e.data[1]] = {"key": e.data[0], "start": tick, "track": t, "end": None}
            open_notes[e.data[0]] = e.data[1]
        elif kind == 0x80 or kind == 0x90:
            v = open_notes.pop(e.data[0], None)
            if v is not None:
                notes[v]["end"] = tick
        elif kind == 0xE0:
            wheel = e.data[0] | (e.data[1] << 7)
        elif kind == 0xB0 and e.data[0] == 121:
            wheel = 8192  # Reset All Controllers centres the wheel (MIDI 1.0, RP-015)
        wheel_at[tick] = wheel
    return notes, wheel_at


def wheel_after(wheel_at, tick):
    best = 8192
    for t in sorted(wheel_at):
        if t > tick:
            break
        best = wheel_at[t]
    return best


def play(name, lattice, method, factor, in_tracks, out_tracks, indices, setup_track,
         pass_channel=9, release_tick=None, check_lead=True):
    """Plays output tracks `indices` into the model synth and checks every note."""
    synth = Synth(method, factor)
    notes, wheel_at = input_performance(in_tracks, indices)
    seen = {}
    events = merged(out_tracks, indices)
    last_tick = None

    def check_sounding(tick):
        wheel = wheel_after(wheel_at, tick)
        for n in synth.sounding.values():
            v = n["velocity"]
            if v not in notes:
                continue
            got, tol = synth.pitch(n["channel"], n["key"])
            want = expected_pitch(lattice, notes[v]["key"], wheel)
            check(abs(got - want) * 100 <= tol + 1e-6,
                  "%s: tick %d: note of input key %d (channel %d, key %d) sounds %.4f cents from its pitch (allowed %.4f)"
                  % (name, tick, notes[v]["key"], n["channel"] + 1, n["key"], (got - want) * 100, tol))

    setup_done_at = None
    for tick, t, _, e in events:
        if last_tick is not None and tick != last_tick:
            check_sounding(last_tick)
        last_tick = tick
        if e.kind == "sysex":
            synth.sysex(e.data)
            continue
        if e.kind != "midi":
            continue
        c, kind = e.status & 0x0F, e.status & 0xF0
        if c == pass_channel:
            continue
        if kind == 0xB0:
            synth.control(c, e.data[0], e.data[1])
        elif kind == 0xE0:
            synth.ch[c].bend = e.data[0] | (e.data[1] << 7)
        elif kind == 0x90 and e.data[1] > 0:
            v = e.data[1]
            check(v in notes, "%s: output note-on with velocity %d that no input note has" % (name, v))
            if v not in notes:
                continue
            check(v not in seen, "%s: input note %d sent twice" % (name, v))
            n = synth.note_on(c, e.data[0], v, tick, t)
            seen[v] = n
            check(tick == notes[v]["start"], "%s: note %d starts at %d, input at %d"
                  % (name, v, tick, notes[v]["start"]))
            check(t == notes[v]["track"], "%s: note %d in track %d, input in %d"
                  % (name, v, t, notes[v]["track"]))
            if method == "bend" or method == "mts":
                check(synth.ch[c].range_set, "%s: note-on on channel %d before its bend range (RPN 0)"
                      % (name, c + 1))
            if method == "mts":
                prog = synth.ch[c].program
                check(prog is not None, "%s: note-on on channel %d before RPN 3 selected a tuning"
                      % (name, c + 1))
                check(e.data[0] in synth.tunings.get(prog, {}),
                      "%s: tick %d: key %d played before its tuning word was sent" % (name, tick, e.data[0]))
            if method == "mpe":
                check(synth.mcm_seen and c in synth.members,
                      "%s: note-on on channel %d, not an MPE member after the MCM" % (name, c + 1))
            got, tol = synth.pitch(c, e.data[0])
            want = expected_pitch(lattice, notes[v]["key"], wheel_after(wheel_at, tick))
            check(abs(got - want) * 100 <= tol + 1e-6,
                  "%s: tick %d: input key %d starts %.4f cents from its pitch (allowed %.4f)"
                  % (name, tick, notes[v]["key"], (got - want) * 100, tol))
        elif kind == 0x80 or kind == 0x90:
            n = synth.note_off(c, e.data[0], tick)
            check(n is not None, "%s: tick %d: note-off for channel %d key %d, which does not sound"
                  % (name, tick, c + 1, e.data[0]))
            if n is not None:
                want_end = notes[n["velocity"]]["end"]
                if want_end is None:
                    want_end = release_tick
                check(tick == want_end, "%s: note %d ends at %d, input at %s"
                      % (name, n["velocity"], tick, want_end))
    if last_tick is not None:
        check_sounding(last_tick)
    check(not synth.errors, "%s: %s" % (name, synth.errors))
    check(set(seen) == set(notes), "%s: input notes missing in the output: %s"
          % (name, sorted(set(notes) - set(seen))))
    check(not synth.sounding, "%s: still sounding at the end: %s" % (name, list(synth.sounding)))
    # the set-up: at tick 0 in the set-up track, after its leading metas,
    # before its first channel event from the input
    first = [e for e in out_tracks[setup_track] if e.kind != "meta"]
    check(first and first[0].tick == 0 and first[0].kind == "midi" and first[0].status & 0xF0 == 0xB0
          and first[0].data[0] in (100, 101),
          "%s: track %d does not start with the set-up RPN at tick 0" % (name, setup_track))
    lead_in = [e for e in in_tracks[setup_track] if e.tick == 0]
    lead_meta = list(itertools.takewhile(lambda e: e.kind == "meta", lead_in))
    got_lead = list(itertools.takewhile(lambda e: e.kind == "meta", out_tracks[setup_track]))
    check(not check_lead or
          [(e.meta_type, e.data) for e in lead_meta] == [(e.meta_type, e.data) for e in got_lead],
          "%s: leading meta events of track %d moved" % (name, setup_track))
    return synth


def same_file_parts(name, in_tracks, out_tracks):
    """metas (tempo map, texts) and input SysEx/escapes unchanged at the same ticks"""
    check(len(in_tracks) == len(out_tracks), "%s: track count" % name)
    for t, (a, b) in enumerate(zip(in_tracks, out_tracks)):
        ma = [(e.tick, e.meta_type, e.data) for e in a if e.kind == "meta"]
        mb = [(e.tick, e.meta_type, e.data) for e in b if e.kind == "meta"]
        check(ma == mb, "%s: track %d meta events differ:\n  %s\n  %s" % (name, t, ma, mb))

        def not_mts(e):
            return not (len(e.data) > 3 and e.data[0] in (0x7E, 0x7F) and e.data[2] == 0x08)
        sa = [(e.tick, e.kind, e.data) for e in a if e.kind in ("sysex", "escape")]
        sb = [(e.tick, e.kind, e.data) for e in b if e.kind in ("sysex", "escape") and not_mts(e)]
        check(sa == sb, "%s: track %d SysEx differ:\n  %s\n  %s" % (name, t, sa, sb))
        # pass-through channel (10): unchanged, same track, same ticks
        pa = [(e.tick, e.status, e.data) for e in a if e.kind == "midi" and e.status & 0x0F == 9]
        pb = [(e.tick, e.status, e.data) for e in b if e.kind == "midi" and e.status & 0x0F == 9]
        check(pa == pb, "%s: track %d channel 10 events differ" % (name, t))


# ---- the inputs -------------------------------------------------------------

def performance_tracks():
    """Format 1, 480 ticks per quarter: a conductor track, chords with the
    sustain pedal and a SysEx, a melody with the pitch wheel and a drum."""
    conductor = [
        meta(0, 0x03, b"render check"),
        meta(0, 0x58, [4, 2, 24, 8]),
        meta(0, 0x51, (500000).to_bytes(3, "big")),
        meta(960, 0x01, b"a text meta"),
        meta(1920, 0x51, (400000).to_bytes(3, "big")),
        meta(3840, 0x51, (600000).to_bytes(3, "big")),
        meta(5760, 0x06, b"end"),
    ]
    chords = [
        meta(0, 0x03, b"chords"),
        ch(0, 0xC0, 19),
        ch(0, 0xB0, 7, 100),
        # a triad, keys 57 60 61 (tones 0, 3 and 4 of period 0)
        ch(0, 0x90, 57, 10), ch(0, 0x90, 60, 11), ch(0, 0x90, 61, 12),
        sysex(480, [0x7E, 0x7F, 0x06, 0x01, 0xF7]),
        ch(900, 0xB0, 64, 127),
        ch(960, 0x80, 57, 0), ch(960, 0x80, 60, 0), ch(960, 0x90, 61, 0),
        # under the pedal: a chord an octave up and beyond
        ch(960, 0x90, 63, 13), ch(960, 0x90, 66, 14), ch(960, 0x90, 70, 15),
        ch(1440, 0x80, 63, 40), ch(1440, 0x80, 66, 40), ch(1440, 0x80, 70, 40),
        ch(1900, 0xB0, 64, 0),
        ch(1920, 0x90, 52, 16), ch(1920, 0x90, 56, 17), ch(1920, 0x90, 59, 18), ch(1920, 0x90, 62, 19),
        ch(3840, 0x90, 52, 0), ch(3840, 0x90, 56, 0), ch(3840, 0x90, 59, 0), ch(3840, 0x90, 62, 0),
        ch(3840, 0x90, 45, 20), ch(3840, 0x90, 51, 21),
        ch(5700, 0x80, 45, 0), ch(5700, 0x80, 51, 0),
    ]
    melody = [
        meta(0, 0x03, b"melody"),
        ch(0, 0x99, 36, 100),
        ch(120, 0x89, 36, 0),
        ch(240, 0x90, 69, 30), ch(480, 0x90, 69, 0),
        ch(480, 0x90, 72, 31), ch(720, 0x90, 72, 0),
        ch(720, 0x90, 74, 32),
        # the wheel moves while notes sound: +25 cents, then back
        ch(840, 0xE0, 0x00, 0x48),
        ch(1000, 0xE0, 0x00, 0x44),
        # reset all controllers while notes are held: wheel centred, pedal up
        ch(1100, 0xB0, 121, 0),
        ch(1200, 0x80, 74, 64),
        ch(1320, 0xE0, 0x00, 0x40),
        ch(1440, 0x99, 38, 90), ch(1460, 0x89, 38, 0),
        ch(1920, 0x90, 75, 33), ch(2400, 0x80, 75, 0),
        ch(2400, 0x90, 76, 34), ch(2880, 0x80, 76, 0),
        ch(2880, 0x90, 80, 35), ch(3360, 0x80, 80, 0),
        ch(3360, 0x90, 81, 36), ch(3840, 0x80, 81, 0),
        ch(3840, 0x90, 63, 37), ch(4800, 0x80, 63, 0),
        ch(4800, 0x90, 64, 38), ch(5600, 0x80, 64, 0),
    ]
    return [conductor, chords, melody]


# ---- running latticed --------------------------------------------------------

def run(binary, args, stdin=None, preexec=None):
    return subprocess.run([binary] + args, input=stdin, capture_output=True,
                          preexec_fn=preexec)


def make_config(src, work, name, replace):
    text = open(os.path.join(src, "config", "latticed.conf")).read()
    for old, new in replace:
        pattern = re.compile(r"^" + re.escape(old) + r"$", re.M)
        assert len(pattern.findall(text)) == 1, "config/latticed.conf has no single line '%s'" % old
        text = pattern.sub(new, text)
    path = os.path.join(work, name + ".conf")
    with open(path, "w") as f:
        f.write(text)
    return path


def leftovers(directory, keep):
    return sorted(set(os.listdir(directory)) - set(keep))


def main():
    binary, src, work = sys.argv[1], sys.argv[2], sys.argv[3]
    os.makedirs(work, exist_ok=True)
    for f in os.listdir(work):
        os.unlink(os.path.join(work, f))
    lattice = Lattice(os.path.join(src, "config", "latticed.conf"))

    perf = smf_bytes(1, 480, performance_tracks())
    in_path = os.path.join(work, "in.mid")
    with open(in_path, "wb") as f:
        f.write(perf)
    _, _, in_tracks = read_smf(perf)

    methods = [
        ("bend", 1.0, []),
        ("mts", 1.0, [("method = bend", "method = mts")]),
        ("mpe", 1.0, [("method = bend", "method = mpe"), ("mpe_members = 15", "mpe_members = 8")]),
        ("bend-fluidsynth", 127 / 128, [("bend_factor = 1", "bend_factor = 127/128")]),
    ]
    outputs = {}
    for name, factor, replace in methods:
        conf = make_config(src, work, name, replace)
        out_path = os.path.join(work, "out-%s.mid" % name)
        r = run(binary, ["render", "--config", conf, in_path, out_path])
        if not check(r.returncode == 0, "%s: exit %d: %s" % (name, r.returncode, r.stderr.decode())):
            continue
        check(r.stderr == b"", "%s: a clean render prints nothing, got %r" % (name, r.stderr))
        data = open(out_path, "rb").read()
        outputs[name] = data
        fmt, division, out_tracks = read_smf(data)
        check(fmt == 1 and division == 480, "%s: format %d division %d" % (name, fmt, division))
        method = name.split("-")[0]
        play(name, lattice, method, factor, in_tracks, out_tracks, range(3), setup_track=1)
        same_file_parts(name, in_tracks, out_tracks)
        for t, (a, b) in enumerate(zip(in_tracks, out_tracks)):
            check(a[-1].tick == b[-1].tick, "%s: track %d ends at %d, input at %d"
                  % (name, t, b[-1].tick, a[-1].tick))
        if method == "mts":
            notes_on = [e for e in out_tracks[1] + out_tracks[2]
                        if e.kind == "midi" and e.status & 0xF0 == 0x90 and e.data[1] > 0
                        and e.status & 0x0F != 9]
            check(all(e.status & 0x0F == 1 for e in notes_on),
                  "mts: input channel 1 plays on the first output channel (2)")
        conf_for_verbose = conf

    # an independent library, when present, reads our output too
    try:
        import mido
        for name, data in outputs.items():
            p = os.path.join(work, "out-%s.mid" % name)
            mf = mido.MidiFile(p)
            ons = sum(1 for tr in mf.tracks for m in tr if m.type == "note_on" and m.velocity > 0)
            check(ons == sum(1 for tr in in_tracks for e in tr if e.kind == "midi"
                             and e.status & 0xF0 == 0x90 and e.data[1] > 0),
                  "%s: mido counts %d note-ons" % (name, ons))
    except ImportError:
        print("note: python3-mido not installed, the mido read-back was skipped")

    # stdin and stdout
    bend_conf = os.path.join(work, "bend.conf")
    r = run(binary, ["render", "--config", bend_conf, "-", "-"], stdin=perf)
    check(r.returncode == 0 and r.stdout == outputs.get("bend"),
          "'-' '-': stdin to stdout gives the same bytes (exit %d, %r)" % (r.returncode, r.stderr))

    # verbose: one summary line
    r = run(binary, ["render", "-v", "--config", conf_for_verbose, in_path, os.path.join(work, "v.mid")])
    lines = r.stderr.decode().splitlines()
    check(r.returncode == 0 and len(lines) == 1 and "events in" in lines[0] and "notes" in lines[0],
          "--verbose prints one summary line: %r" % lines)

    # format 0 with SMPTE division (25 fps, 40 ticks per frame: 1 ms ticks, SMF 1.0)
    smpte = ((256 - 25) << 8) | 40
    f0 = smf_bytes(0, smpte, [[
        meta(0, 0x03, b"smpte"),
        meta(0, 0x54, [0x20, 0, 0, 0, 0]),
        ch(0, 0x90, 58, 50), ch(0, 0x90, 62, 51),
        ch(500, 0x90, 58, 0), ch(500, 0x90, 62, 0),
        ch(500, 0x90, 65, 52), ch(1000, 0x80, 65, 0),
    ]])
    p0 = os.path.join(work, "f0.mid")
    open(p0, "wb").write(f0)
    r = run(binary, ["render", "--config", bend_conf, p0, os.path.join(work, "f0-out.mid")])
    if check(r.returncode == 0, "format 0 SMPTE: exit %d %r" % (r.returncode, r.stderr)):
        out0 = open(os.path.join(work, "f0-out.mid"), "rb").read()
        check(out0[8:10] == b"\x00\x00" and out0[12:14] == f0[12:14],
              "format 0 stays 0 and the SMPTE division is kept (%s)" % out0[8:14].hex())
        _, _, t_in = read_smf(f0)
        _, _, t_out = read_smf(out0)
        play("format 0", lattice, "bend", 1.0, t_in, t_out, [0], setup_track=0)
        same_file_parts("format 0", t_in, t_out)

    # format 2: each track its own performance, with its own set-up
    pattern = [meta(0, 0x03, b"pattern"), ch(0, 0x90, 60, 60), ch(480, 0x80, 60, 0),
               ch(480, 0x90, 64, 61), ch(960, 0x80, 64, 0)]
    pattern2 = [ch(0, 0x90, 59, 62), ch(0, 0x90, 63, 63), ch(720, 0x80, 59, 0), ch(720, 0x80, 63, 0)]
    f2 = smf_bytes(2, 96, [pattern, pattern2])
    p2 = os.path.join(work, "f2.mid")
    open(p2, "wb").write(f2)
    r = run(binary, ["render", "--config", bend_conf, p2, os.path.join(work, "f2-out.mid")])
    if check(r.returncode == 0, "format 2: exit %d %r" % (r.returncode, r.stderr)):
        out2 = open(os.path.join(work, "f2-out.mid"), "rb").read()
        fmt, _, t_out = read_smf(out2)
        _, _, t_in = read_smf(f2)
        check(fmt == 2, "format 2 stays 2")
        for t in range(2):
            play("format 2 track %d" % t, lattice, "bend", 1.0, t_in, t_out, [t], setup_track=t)

    # notes the input leaves hanging: released at the last tick, with a warning
    hang = smf_bytes(1, 480, [[meta(0, 0x51, (500000).to_bytes(3, "big"))], [
        ch(0, 0x90, 60, 70), ch(0, 0xB0, 64, 127),
        ch(480, 0x90, 62, 71), ch(600, 0x80, 62, 0),
        ch(960, 0x90, 64, 72), ch(1200, 0x80, 64, 0),
    ]], ends=[1920, 1440])
    ph = os.path.join(work, "hang.mid")
    open(ph, "wb").write(hang)
    r = run(binary, ["render", "--config", bend_conf, ph, os.path.join(work, "hang-out.mid")])
    err = r.stderr.decode()
    check(r.returncode == 0 and re.search(r"3 notes left hanging .*\(1 without a note-off, 2 held by a pedal\).* tick 1920", err),
          "hanging notes: one warning line naming them: %r" % err)
    if r.returncode == 0:
        _, _, t_out = read_smf(open(os.path.join(work, "hang-out.mid"), "rb").read())
        _, _, t_in = read_smf(hang)
        play("hanging", lattice, "bend", 1.0, t_in, t_out, [0, 1], setup_track=1, release_tick=1920)
        check(t_out[1][-1].tick == 1920, "hanging: the releasing track ends at the file's last tick")

    # lenient reading, strict writing: a tempo event of 4 bytes (SMF 1.0 says
    # 3) is left out with its byte offset; a format 0 file with two tracks
    # (SMF 1.0: format 0 has one) is written as format 1
    odd = smf_bytes(0, 96, [[meta(0, 0x51, [0x07, 0xA1, 0x20, 0x00]), ch(0, 0x90, 60, 80),
                             ch(96, 0x80, 60, 0)], [ch(0, 0x90, 64, 81), ch(96, 0x80, 64, 0)]])
    po = os.path.join(work, "odd.mid")
    open(po, "wb").write(odd)
    r = run(binary, ["render", "--config", bend_conf, po, os.path.join(work, "odd-out.mid")])
    err = r.stderr.decode()
    check(r.returncode == 0 and re.search(r"odd\.mid: byte 22: meta event 51 with 4 data bytes, expected 3; left out", err)
          and "written as format 1" in err, "odd input: left-out tempo and format 0 -> 1 reported: %r" % err)
    if r.returncode == 0:
        fmt, _, t_out = read_smf(open(os.path.join(work, "odd-out.mid"), "rb").read())
        _, _, t_in = read_smf(odd)
        check(fmt == 1 and not any(e.kind == "meta" and e.meta_type == 0x51 for e in t_out[0]),
              "odd input: format 1 and no tempo event in the output")
        play("odd", lattice, "bend", 1.0, t_in, t_out, [0, 1], setup_track=0, check_lead=False)

    # a truncated file: exit 1, the byte offset, no output file
    cut = os.path.join(work, "cut.mid")
    open(cut, "wb").write(perf[:len(perf) - 7])
    before = os.listdir(work)
    r = run(binary, ["render", "--config", bend_conf, cut, os.path.join(work, "cut-out.mid")])
    check(r.returncode == 1, "truncated input: exit 1, got %d" % r.returncode)
    check(re.match(r"^latticed render: %s: byte \d+: " % re.escape(cut), r.stderr.decode()),
          "truncated input names the byte offset: %r" % r.stderr)
    check(leftovers(work, before) == [], "truncated input: nothing written (%s)" % leftovers(work, before))

    r = run(binary, ["render", "--config", bend_conf, "-", os.path.join(work, "cut-out.mid")],
            stdin=perf[:100])
    check(r.returncode == 1 and re.match(r"^latticed render: standard input: byte \d+: ", r.stderr.decode()),
          "truncated stdin: exit 1 and the offset: %r" % r.stderr)

    # a write failure after the temporary file was made (file size limit,
    # SIGXFSZ ignored so write() fails with EFBIG): exit 1, nothing left
    def small_files():
        signal.signal(signal.SIGXFSZ, signal.SIG_IGN)
        resource.setrlimit(resource.RLIMIT_FSIZE, (200, 200))
    before = os.listdir(work)
    r = run(binary, ["render", "--config", bend_conf, in_path, os.path.join(work, "big-out.mid")],
            preexec=small_files)
    check(r.returncode == 1 and "big-out.mid: cannot write" in r.stderr.decode(),
          "write failure: exit 1 and a message: %d %r" % (r.returncode, r.stderr))
    check(leftovers(work, before) == [], "write failure: temporary file removed (%s)"
          % leftovers(work, before))

    # an existing output is replaced only by a complete file
    keep = os.path.join(work, "keep.mid")
    open(keep, "wb").write(b"old")
    r = run(binary, ["render", "--config", bend_conf, in_path, keep], preexec=small_files)
    check(r.returncode == 1 and open(keep, "rb").read() == b"old",
          "write failure leaves the old output file as it was")
    os.unlink(keep)

    # a directory nobody may write to (as root: /proc, which refuses new files)
    if os.geteuid() != 0:
        locked = os.path.join(work, "locked")
        os.mkdir(locked)
        os.chmod(locked, 0o555)
    else:
        locked = "/proc"
    r = run(binary, ["render", "--config", bend_conf, in_path, os.path.join(locked, "out.mid")])
    check(r.returncode == 1 and "cannot create a file in %s" % locked in r.stderr.decode(),
          "unwritable directory: exit 1 and a message: %d %r" % (r.returncode, r.stderr))
    check(not os.path.exists(os.path.join(locked, "out.mid")), "unwritable directory: no file")
    if locked != "/proc":
        check(os.listdir(locked) == [], "unwritable directory: nothing left")
        os.chmod(locked, 0o755)

    # command-line and config errors
    r = run(binary, ["render", "--config", bend_conf, in_path])
    check(r.returncode == 2 and b"expected IN.mid and OUT.mid" in r.stderr, "one argument: exit 2")
    r = run(binary, ["render", "--config", bend_conf, in_path, "a.mid", "b.mid"])
    check(r.returncode == 2 and b"unexpected argument 'b.mid'" in r.stderr, "three arguments: exit 2")
    r = run(binary, ["render", "--frob", in_path, "x.mid"])
    check(r.returncode == 2, "unknown option: exit 2")
    r = run(binary, ["render", "--config", bend_conf, "--output", "nosuch", in_path,
                     os.path.join(work, "x.mid")])
    check(r.returncode == 1 and b"no output 'nosuch'" in r.stderr and b"'synth'" in r.stderr,
          "unknown output: exit 1 and the outputs listed: %r" % r.stderr)
    bad = os.path.join(work, "bad.conf")
    open(bad, "w").write("[lattice]\nseeds = 1 3 5 7\nchoose = 5\n")
    r = run(binary, ["render", "--config", bad, in_path, os.path.join(work, "x.mid")])
    check(r.returncode == 1 and r.stderr.decode().startswith(bad + ":3: "),
          "bad config: exit 1 and FILE:LINE: %r" % r.stderr)
    r = run(binary, ["render", "--config", bend_conf, os.path.join(work, "none.mid"),
                     os.path.join(work, "x.mid")])
    check(r.returncode == 1 and r.stderr.decode().startswith(
        "latticed render: %s: cannot open: No such file" % os.path.join(work, "none.mid")),
        "missing input: exit 1: %r" % r.stderr)
    check(not os.path.exists(os.path.join(work, "x.mid")), "failed runs wrote no x.mid")

    if FAILS:
        print("render_check: %d checks failed" % len(FAILS))
        return 1
    print("render_check: all checks passed (%d outputs decoded)" % len(outputs))
    return 0


if __name__ == "__main__":
    sys.exit(main())
