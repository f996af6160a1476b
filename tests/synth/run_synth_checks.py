#!/usr/bin/python3
"""The real-synth pitch checks: FluidSynth judges whether latticed is in tune.

  run_synth_checks.py selfcheck [--workdir D]
      ji_expect's cross-checks, then proves that pitchcheck bites, on MIDI
      files written here by a small reference encoder (our own scenarios):
        a  bend, RPN 0 range 2, bends scaled by 128/127        -> passes 1.0 c
        b  as a, one chord note 5 cents sharp                  -> that note fails
        c  MTS single-note tuning change + RPN 3 program select -> passes
        d  c without the RPN 3                                 -> every note fails
        e1 range 48 (MPE member default), each note bent the
           whole interval from its period's 1/1, with 128/127  -> passes
        e2 e1 without the 128/127 correction                   -> fails, 7/4 at -7.6 c
  run_synth_checks.py latticed BINARY [--workdir D]
      writes a performance and one config per output method, runs
      `latticed render --config C --output synth in.mid out.mid` and checks
      out.mid against ji_expect.  Exits 77 (CTest: skipped) when the binary
      has no render command.

Exit status 0 pass, 1 fail, 2 set-up problem, 77 skipped.
"""
import argparse
import math
import os
import shutil
import subprocess
import sys
import tempfile
import time

import mido

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
import ji_expect  # noqa: E402
import pitchcheck  # noqa: E402

SKIP = 77
# Against "exact JI as FluidSynth can play it" the residual of a correct file
# is measurement noise (< 0.01 c, measured); an encoder error shows up as a
# whole cent wherever it moves a pitch across a whole-cent boundary, or as
# itself when larger.  Any tolerance between 0.05 and 0.95 gives the same
# verdicts; 0.5 sits in the middle (stricter than the 1.0 cent asked of
# these files, so "passes" below means "passes within 1.0" as well).
TOLERANCE_CENTS = 0.5

# FluidSynth plays every bend at 127/128 of its nominal size (2.3.1, and
# still 2.4.x).  These keys go into every [output] section of the configs
# written for bend and mpe, so latticed compensates.  The key names are not
# settled yet: set them here when the option lands in latticed (an empty
# dict writes no correction, and the checks then show what an uncorrected
# output sounds like).
SYNTH_CORRECTION = {"bend_factor": "127/128"}

# --- the performance: scenario of our own ---------------------------------------
# Single notes across the range of the default hexany (root_key 57 = 240.6 Hz)
# and chords of 2-4 notes from its harmonic and subharmonic families, with no
# octave or 3:1 inside a chord (a harmonic would sit on a fundamental).
# TimGM6mb's Recorder is silent above key 108 (measured), so the top note
# stays below 4186 Hz.
# (start s, duration s, keys)
PERFORMANCE = [
    (0.50, 2.00, [45]),                 # 60.2 Hz: slow attack, long window
    (2.80, 1.20, [51, 54]),             # 120.3, 165 Hz
    (4.30, 1.60, [50]),                 # 103.1 Hz
    (6.20, 1.20, [58, 60, 61]),         # 5:6:7 (275, 330, 385 Hz)
    (7.70, 1.00, [56]),
    (9.00, 1.00, [61, 63, 65]),         # 4:5:6 (385, 481.25, 577.5 Hz)
    (10.30, 0.90, [63]),
    (11.50, 1.30, [52, 54, 55, 57]),    # 137.5, 165, 192.5, 240.6 Hz
    (13.10, 0.90, [70]),
    (14.30, 1.00, [64, 66, 67, 68]),    # 10:12:14:15
    (15.60, 0.90, [76]),
    (16.80, 1.00, [73, 74, 75, 76]),    # 1540 .. 2200 Hz
    (18.10, 0.90, [79]),
    (19.30, 0.90, [81]),                # 3850 Hz
]
TEMPO_CHANGE_S = 8.0      # 120 bpm before, 150 bpm after: tests the tempo map
TPB = 480


def _ticks(t):
    if t <= TEMPO_CHANGE_S:
        return round(t * 960)                                   # 120 bpm
    return round(TEMPO_CHANGE_S * 960) + round((t - TEMPO_CHANGE_S) * 1200)  # 150 bpm


def performance_for(params):
    """PERFORMANCE moved onto the keys that play the same tones (same tone,
    same period) in another layout, so every config hears the same music."""
    sequential = ji_expect.key_map(ji_expect.Params())
    target = {(kp.tone, kp.period): k for k, kp in ji_expect.key_map(params).items()}
    return [(start, dur, [target[(sequential[k].tone, sequential[k].period)] for k in keys])
            for start, dur, keys in PERFORMANCE]


def write_performance(path, channel=0, performance=None):
    events = [(0, 0, mido.MetaMessage("set_tempo", tempo=500000)),
              (0, 1, mido.Message("program_change", channel=channel, program=pitchcheck.PROGRAM)),
              (_ticks(TEMPO_CHANGE_S), 0, mido.MetaMessage("set_tempo", tempo=400000))]
    for start, dur, keys in performance or PERFORMANCE:
        for k in keys:
            events.append((_ticks(start), 2, mido.Message("note_on", channel=channel, note=k, velocity=96)))
            events.append((_ticks(start + dur), 0, mido.Message("note_off", channel=channel, note=k)))
    _save(path, events, TPB)


def _save(path, events, tpb):
    """events: (tick, order, message); order sorts events of one tick."""
    mf = mido.MidiFile(type=0, ticks_per_beat=tpb)
    tr = mido.MidiTrack()
    mf.tracks.append(tr)
    last = 0
    for tick, _, msg in sorted(events, key=lambda e: (e[0], e[1])):
        tr.append(msg.copy(time=tick - last))
        last = tick
    tr.append(mido.MetaMessage("end_of_track", time=0))
    mf.save(path)


# --- a small reference encoder for the self-checks -----------------------------------
# Written from the standards, not from latticed: MIDI 1.0 RPN 0 / pitch bend
# (14 bits, centre 8192, LSB first), MIDI Tuning Standard single-note tuning
# change F0 7F <dev> 08 02 <prog> <count> (<key> <xx> <yy> <zz>)* F7 and RPN 3
# tuning program select.

BEND_POOL = [1, 2, 3, 4, 5, 6, 7, 8, 10, 11, 12, 13, 14, 15]   # channels 2-9, 11-16


def _rpn(ch, lsb, value):
    return [mido.Message("control_change", channel=ch, control=101, value=0),
            mido.Message("control_change", channel=ch, control=100, value=lsb),
            mido.Message("control_change", channel=ch, control=6, value=value),
            mido.Message("control_change", channel=ch, control=101, value=127),
            mido.Message("control_change", channel=ch, control=100, value=127)]


def _performance_notes(path):
    notes, _ = pitchcheck.read_notes(path)
    return notes


def encode_bend(perf, out, bend_range, synth_factor, sharpen=None, whole_interval=False,
                params=None):
    """Channel rotation with pitch bend.  synth_factor: how much of a bend the
    synth plays (127/128 for FluidSynth, 1 for a spec-true synth); bends are
    divided by it.  whole_interval: send every note on the key of its
    period's 1/1 (root_hz must be a 12-TET key) and bend the whole ratio.
    sharpen: (onset, key, cents) to detune one note on purpose."""
    km = ji_expect.key_map(params or ji_expect.Params())
    root_note = ji_expect.note_of_hz(220)
    events = []
    for ch in BEND_POOL:
        for m in _rpn(ch, 0, bend_range):
            events.append((0, 0, m))
        events.append((0, 0, mido.Message("program_change", channel=ch, program=pitchcheck.PROGRAM)))
    rotation = 0
    for n in _performance_notes(perf):
        kp = km[n.key]
        note = ji_expect.note_of_hz(kp.hz)
        out_key = round(root_note) + 12 * kp.period if whole_interval else round(note)
        cents = (note - out_key) * 100
        if sharpen and abs(sharpen[0] - n.on) < 1e-6 and sharpen[1] == n.key:
            cents += sharpen[2]
        value = 8192 + round(cents / synth_factor / (100 * bend_range) * 8192)
        assert 0 <= value <= 16383, (n, value)
        ch = BEND_POOL[rotation % len(BEND_POOL)]
        rotation += 1
        on, off = round(n.on * 1000), round(n.off * 1000)
        events.append((on, 1, mido.Message("pitchwheel", channel=ch, pitch=value - 8192)))
        events.append((on, 2, mido.Message("note_on", channel=ch, note=out_key, velocity=96)))
        events.append((off, 0, mido.Message("note_off", channel=ch, note=out_key)))
    events.append((0, -1, mido.MetaMessage("set_tempo", tempo=500000)))
    _save(out, events, 500)     # 1 tick = 1 ms


def mts_word(hz):
    """MTS frequency word: key at or below, then 14-bit fraction of a semitone."""
    n = ji_expect.note_of_hz(hz)
    key = math.floor(n)
    frac = round((n - key) * 16384)
    if frac == 16384:
        key, frac = key + 1, 0
    return [key, frac >> 7, frac & 0x7F]


def encode_mts(perf, out, select_program=True, program=0, params=None):
    """Every performance key retuned in place (key 58 sounds 275 Hz), on one
    channel, by one real-time single-note tuning change."""
    km = ji_expect.key_map(params or ji_expect.Params())
    notes = _performance_notes(perf)
    keys = sorted({n.key for n in notes})
    data = [0x7F, 0x7F, 0x08, 0x02, program, len(keys)]
    for k in keys:
        data += [k] + mts_word(km[k].hz)
    events = [(0, -1, mido.MetaMessage("set_tempo", tempo=500000)),
              (0, 0, mido.Message("program_change", channel=0, program=pitchcheck.PROGRAM)),
              (0, 1, mido.Message("sysex", data=data))]
    if select_program:
        events += [(0, 2, m) for m in _rpn(0, 3, program)]
    for n in notes:
        events.append((round(n.on * 1000), 3, mido.Message("note_on", channel=0, note=n.key, velocity=96)))
        events.append((round(n.off * 1000), 0, mido.Message("note_off", channel=0, note=n.key)))
    _save(out, events, 500)


# --- self-checks ------------------------------------------------------------------------

def selfcheck(workdir):
    print("== ji_expect against published CPS facts")
    if ji_expect.selfcheck():
        return 1
    perf = os.path.join(workdir, "performance.mid")
    write_performance(perf)
    expects = pitchcheck.expectations_from_input(None, perf)
    failures = []
    figures = []

    def run(name, path, want_ok, verify=None):
        print("\n== scenario %s: %s (expect %s)" % (name, os.path.basename(path),
                                                  "PASS" if want_ok else "FAIL"))
        ok, s = pitchcheck.check(path, expects, TOLERANCE_CENTS, workdir)
        good = ok == want_ok
        why = ""
        if good and verify:
            why = verify(s) or ""
            good = not why
        figures.append((name, s))
        if not good:
            failures.append("%s: %s" % (name, why or ("passed" if ok else "failed")))
            print(">> scenario %s did not behave as expected %s" % (name, why))
        else:
            print(">> scenario %s behaved as expected" % name)

    a = os.path.join(workdir, "a_bend2.mid")
    encode_bend(perf, a, 2, 127 / 128)
    run("a", a, True)

    # the middle note of the 5:6:7 chord, 5 cents sharp
    b = os.path.join(workdir, "b_bend2_one_off.mid")
    encode_bend(perf, b, 2, 127 / 128, sharpen=(6.20, 60, 5.0))

    def only_that_note(s):
        bad = [(round(r["on"], 3), r["key"]) for r in s["results"] if not r["ok"]]
        if bad != [(6.20, 60)]:
            return "expected only key 60 at 6.20 s to fail, got %s" % bad
        r = [r for r in s["results"] if not r["ok"]][0]
        if not 4.0 <= r["vs_fs_cents"] <= 6.0:
            return "the sharpened note measured %+.3f cents, expected about +5" % r["vs_fs_cents"]
    run("b", b, False, only_that_note)

    c = os.path.join(workdir, "c_mts.mid")
    encode_mts(perf, c)
    run("c", c, True)

    d = os.path.join(workdir, "d_mts_no_rpn3.mid")
    encode_mts(perf, d, select_program=False)

    def all_fail(s):
        # Untuned, every key plays 12-TET.  A note may still "pass" when an
        # untuned chord member happens to sound near its JI pitch (key 52
        # plays 164.81 Hz, the 3/2 on key 54 is 165 Hz: -1.955 cents, which
        # FluidSynth's floor makes -1.0): accept only such coincidences.
        for r in s["results"]:
            if r["ok"]:
                near = [k for k in range(128) if abs(1200 * math.log2(
                    pitchcheck.note_hz(k) / r["expected_hz"])) < 2.5]
                chord = [x["out_key"] for x in s["results"] if abs(x["on"] - r["on"]) < 0.005]
                if not set(near) & set(chord):
                    return "key %s at %.2f s passed although the tuning was never selected" \
                        % (r["key"], r["on"])
    run("d", d, False, all_fail)

    e1 = os.path.join(workdir, "e1_bend48_corrected.mid")
    encode_bend(perf, e1, 48, 127 / 128, whole_interval=True)
    run("e1", e1, True)

    e2 = os.path.join(workdir, "e2_bend48_uncorrected.mid")
    encode_bend(perf, e2, 48, 1.0, whole_interval=True)

    def seven_fourths_flat(s):
        # a 968.826-cent bend played at 127/128 is 7.569 cents flat (computed);
        # the bend step (0.586 c at range 48) and FluidSynth's floor add up to
        # -1.3..+0.3 cents: between -8.9 and -7.2 against exact JI
        sevens = [r for r in s["results"] if r["label"] == "1.7"]
        if not sevens:
            return "no 7/4 in the performance"
        off = [r["vs_ji_cents"] for r in sevens if not (-8.9 <= (r["vs_ji_cents"] or 0) <= -7.2)]
        if off:
            return "7/4 notes measured %s cents, expected about -7.6" % off
        print("   7/4 notes, vs exact JI: %s" % " ".join("%+.3f" % r["vs_ji_cents"] for r in sevens))
    run("e2", e2, False, seven_fourths_flat)

    print("\n== self-check figures")
    for name, s in figures:
        d = list(s["detune_cents"].values())
        print("%-3s worst |vs FS| %7.4f c, vs JI %+8.3f..%+8.3f c, render %.3f s for %.1f s audio, "
              "detune %+.4f..%+.4f c" % (name, s["worst_vs_fs"] or 0, s["worst_vs_ji"][0] or 0,
                                         s["worst_vs_ji"][1] or 0, s["render_s"], s["audio_s"],
                                         min(d), max(d)))
    if failures:
        print("SELF-CHECK FAILED: " + "; ".join(failures))
        return 1
    print("self-check passed: pitchcheck passes correct files and catches every planted fault")
    return 0


# --- the real thing: latticed render -----------------------------------------------------

def _has_render(binary):
    try:
        p = subprocess.run([binary, "--help"], capture_output=True, text=True, timeout=30)
    except OSError as e:
        raise RuntimeError("cannot run %s: %s" % (binary, e))
    return any(line.split()[:1] == ["render"] for line in (p.stdout + p.stderr).splitlines())


LATTICED_CASES = [
    # name, [keys] lines, [output synth] lines (without the correction)
    ("bend2", [], {"method": "bend", "channels": "2-16", "bend_range": "2"}),
    ("bend48", [], {"method": "bend", "channels": "2-16", "bend_range": "48"}),
    ("mts", [], {"method": "mts", "channels": "1"}),
    ("mpe", [], {"method": "mpe", "channels": "2-16", "bend_range": "48"}),
    ("bend2-nearest", ["layout = nearest"], {"method": "bend", "channels": "2-16", "bend_range": "2"}),
]


def write_config(path, keys_lines, output):
    lines = ["; written by tests/synth/run_synth_checks.py",
             "[lattice]", "seeds = 1 3 5 7", "choose = 2", "period = 2/1", "",
             "[pitch]", "root_key = 57", "root_hz = 220", "",
             "[keys]"] + (keys_lines or ["layout = sequential"]) + ["", "[output synth]"]
    lines += ["%s = %s" % kv for kv in output.items()]
    if output["method"] in ("bend", "mpe"):
        lines += ["%s = %s" % kv for kv in SYNTH_CORRECTION.items()]
    with open(path, "w") as f:
        f.write("\n".join(lines) + "\n")


def _correction_hint(message):
    if any("'%s'" % k in message for k in SYNTH_CORRECTION):
        return (" -- latticed does not know the FluidSynth correction key; set "
                "SYNTH_CORRECTION in tests/synth/run_synth_checks.py")
    return ""


def table_agrees(binary, conf):
    """Does `latticed table --json` put every key where ji_expect does?  A
    disagreement here means a render failure is about the key map, not about
    how the pitch is sent.  Returns a problem or None."""
    import json
    p = subprocess.run([binary, "table", "--config", conf, "--json"], capture_output=True, text=True)
    if p.returncode != 0:
        return "latticed table failed: %s%s" % (p.stderr.strip(), _correction_hint(p.stderr))
    try:
        theirs = {k["key"]: float(k["hz"]) for k in json.loads(p.stdout)["keys"]}
    except (ValueError, KeyError, TypeError) as e:
        return "latticed table --json: unexpected layout (%s)" % e
    ours = ji_expect.key_map(ji_expect.Params.from_file(conf))
    if set(ours) != set(theirs):
        return "keys that sound differ: only ji_expect %s, only latticed %s" % (
            sorted(set(ours) - set(theirs)), sorted(set(theirs) - set(ours)))
    bad = [k for k in ours if abs(float(ours[k].hz) - theirs[k]) > 1e-6 + 1e-9 * theirs[k]]
    if bad:
        return "keys %s: ji_expect %s Hz, latticed %s Hz" % (
            bad[:5], [float(ours[k].hz) for k in bad[:5]], [theirs[k] for k in bad[:5]])
    return None


def latticed_checks(binary, workdir):
    if not os.access(binary, os.X_OK):
        print("run_synth_checks: %s is not an executable" % binary, file=sys.stderr)
        return 2
    if not _has_render(binary):
        print("SKIP: %s has no 'render' command yet; the latticed-vs-FluidSynth checks "
              "need `latticed render`" % binary)
        return SKIP
    print("== latticed table against ji_expect")
    problems = []
    for name, keys_lines, output in LATTICED_CASES:
        conf = os.path.join(workdir, name + ".conf")
        write_config(conf, keys_lines, output)
        problem = table_agrees(binary, conf)
        print("%s  %s%s" % ("FAIL" if problem else "ok  ", name, ": " + problem if problem else ""))
        if problem:
            problems.append("table " + name)
    failures, figures = problems, []
    for name, keys_lines, output in LATTICED_CASES:
        conf = os.path.join(workdir, name + ".conf")
        out = os.path.join(workdir, name + ".out.mid")
        perf = os.path.join(workdir, name + ".in.mid")
        write_config(conf, keys_lines, output)
        write_performance(perf, performance=performance_for(ji_expect.Params.from_file(conf)))
        print("\n== latticed render, %s" % name)
        t0 = time.monotonic()
        p = subprocess.run([binary, "render", "--config", conf, "--output", "synth", perf, out],
                           capture_output=True, text=True)
        took = time.monotonic() - t0
        if p.returncode != 0:
            msg = (p.stderr or p.stdout).strip()
            print("FAIL: latticed render exited %d: %s%s" % (p.returncode, msg, _correction_hint(msg)))
            failures.append(name)
            continue
        expects = pitchcheck.expectations_from_input(conf, perf)
        try:
            ok, s = pitchcheck.check(out, expects, TOLERANCE_CENTS, workdir)
        except pitchcheck.InputError as e:
            print("FAIL: %s" % e)
            failures.append(name)
            continue
        s["latticed_s"] = took
        figures.append((name, s))
        if not ok:
            failures.append(name)
    print("\n== latticed figures")
    for name, s in figures:
        print("%-14s %s worst |vs FS| %7.4f c, vs JI %+8.3f..%+8.3f c, latticed %.3f s, render %.3f s"
              % (name, "PASS" if s["ok"] else "FAIL", s["worst_vs_fs"] or 0,
                 s["worst_vs_ji"][0] or 0, s["worst_vs_ji"][1] or 0, s["latticed_s"], s["render_s"]))
    if failures:
        print("FAILED: " + " ".join(failures))
        return 1
    print("latticed render is in tune on FluidSynth for: %s" % " ".join(n for n, _, _ in LATTICED_CASES))
    return 0


def main(argv=None):
    ap = argparse.ArgumentParser(description="Real-synth pitch checks (FluidSynth).")
    ap.add_argument("what", choices=["selfcheck", "latticed"])
    ap.add_argument("binary", nargs="?", help="the latticed executable (for 'latticed')")
    ap.add_argument("--workdir", help="keep every file written here")
    a = ap.parse_args(argv)
    if not pitchcheck.fluidsynth_available():
        print("run_synth_checks: needs fluidsynth and %s (Debian packages fluidsynth "
              "timgm6mb-soundfont)" % pitchcheck.SOUNDFONT, file=sys.stderr)
        return 2
    if a.what == "latticed" and not a.binary:
        ap.error("'latticed' needs the path of the latticed executable")
    wd = a.workdir or tempfile.mkdtemp(prefix="synthcheck.")
    os.makedirs(wd, exist_ok=True)
    try:
        if a.what == "selfcheck":
            return selfcheck(wd)
        return latticed_checks(a.binary, wd)
    except pitchcheck.InputError as e:
        print("run_synth_checks: %s" % e, file=sys.stderr)
        return 1
    finally:
        if not a.workdir:
            shutil.rmtree(wd, ignore_errors=True)


if __name__ == "__main__":
    sys.exit(main())
