#!/usr/bin/env python3
"""End to end: running the show from the instrument, through the raw backend.

`latticed run` reads a FIFO (the player) and writes three outputs (bend to
a file, mts and mpe to FIFOs read here); every byte it writes is decoded by
burst_lib's receiver model (tests/attack/burst_lib.py, its sources named
there), never by latticed's own code.  Scenarios:

  - panic from MIDI: a CC on the control channel ends every note on every
    output, pass-through ones and pedals too; again while one synth has
    stopped reading under a flood (it is cut off), which must still end up
    silent once it reads again;
  - control on the playing channel: a bound controller and a key binding
    on the channel played steer and never reach the synth; other
    controllers and program changes do; a step past the last preset is
    logged;
  - `latticed root` by tone label and `home`, errors listing the labels;
  - `reload` says what it kept: the root, the preset, or neither;
  - the state file: a daemon killed mid-show comes back in its preset and
    root; a corrupt, stale or foreign file is ignored with one log line;
  - `latticed render` warns of control messages that select nothing.

Sources: MIDI 1.0 (status bytes, velocity 0 = note-off, switch controllers
read 0-63 off and 64-127 on; from memory for the last), the published CPS
definition (the hexany of 1 3 5 7, the dekany of 1 3 5 7 9: products of
two seeds reduced into the octave; common practice), A4 = key 69 = 440 Hz
(MTS, common practice).  What a binding does is our rule (latticed.conf(5),
[control]), marked "(our rule)".

    daemon_control_e2e.py LATTICED
"""
import json
import math
import os
import subprocess
import sys
import time
from fractions import Fraction
from itertools import combinations

sys.path.insert(0, os.path.join(os.path.dirname(os.path.abspath(__file__)), "attack"))
from burst_lib import Daemon, check, check_no_stuck, finish, print_figures  # noqa: E402

BIN = sys.argv[1]
TOLERANCE = 0.0005
THREE = [("a", "bend", "file"), ("b", "mts", "fifo"), ("c", "mpe", "fifo")]

CONTROL = """
[control]
channel = 16
panic = cc 119
preset_next = cc 64
preset_previous = cc 65
root_next = key 21
root_home = key 23

[preset dekany]
seeds = 1 3 5 7 9
"""


# ---- independent expectations ---------------------------------------------

def cps(seeds, k=2):
    """(ratio, label) of each tone, sorted by ratio, reduced into [1, 2)."""
    tones = {}
    for combo in combinations(seeds, k):
        r = Fraction(1)
        for s in combo:
            r *= s
        while r >= 2:
            r /= 2
        tones.setdefault(r, ".".join(str(s) for s in combo))
    return sorted(tones.items())


def folded(r):
    """Tone r (in [1, 2)) folded to within half an octave of 1/1: 3/2 -> 3/4."""
    return r / 2 if r * r > 2 else r


def pitch(key, seeds=(1, 3, 5, 7), root_key=57, root_hz=220.0, root=None):
    """Sequential layout; root: the label of the tone that is 1/1, or None."""
    tones = cps(seeds)
    i = key - root_key
    r = tones[i % len(tones)][0] * Fraction(2) ** (i // len(tones))
    if root:
        # re-rooting multiplies every pitch by the new 1/1's ratio, folded by a
        # period to stay within half a period (our rule, README)
        r *= folded(dict((label, t) for t, label in tones)[root])
    return 69 + 12 * math.log2(root_hz * float(r) / 440)


def wait_for(pred, timeout=5.0):
    end = time.time() + timeout
    while time.time() < end:
        if pred():
            return True
        time.sleep(0.05)
    return pred()


def state_of(d):
    st = d.status()
    return st.get("preset", {}).get("name"), st.get("root", {}).get("label")


def last_pitch(d, name="a"):
    d.settle()
    synth = d.synths[name]
    return synth.pitches[-1][0] if synth.pitches else None


# ---- panic from MIDI ----------------------------------------------------------

HOLD = bytes([0xB0, 64, 127, 0x90, 57, 90, 0x90, 64, 90,   # the pedal down, a chord
              0x99, 36, 100, 0x9B, 40, 80])              # a drum on 10, a bass on 12


def midi_panic():
    d = Daemon(BIN, THREE, extra=CONTROL)
    try:
        d.settle()
        d.play(HOLD)
        d.settle()
        for name, s in d.synths.items():
            check(len(s.stuck()) == 4, "panic: before it, %s sounds a chord and 2 pass-through notes (%s)"
                  % (name, s.stuck()))
        d.play(bytes([0xBF, 119, 127, 0xBF, 119, 0]))   # a momentary footswitch: press, release
        d.settle()
        check_no_stuck(d, "panic from CC 119 on channel 16 (our rule)")
        check(wait_for(lambda: "panic from the instrument" in d.log_text()), "panic: the log says so")
        for o in d.status().get("outputs", []):
            check(o.get("notes_held") == 0, "panic: status: output %s holds no note" % o["name"])
        d.play(bytes([0x80, 57, 0]))                    # the key still down: nothing to end
        d.settle()
        check_no_stuck(d, "panic: the held key's note-off")

        # under load: synth c stops reading; a flood of 12 000 pass-through pedal-ups
        # (each must be sent) outgrows its queue, it is cut off after a second, and
        # the panic behind the flood must still reach every output
        label = "panic under load"
        d.play(HOLD)
        d.settle()
        c = d.readers["c"]
        c.stall()
        time.sleep(0.2)
        d.play(bytes([0xB9, 64, 0]) * 12000 + bytes([0xBF, 119, 127, 0xBF, 119, 0]))
        reading = {n: s for n, s in d.synths.items() if n != "c"}

        def quiet():
            for r in (d.readers["a"], d.readers["b"]):
                r.poll()
            return all(not s.stuck() for s in reading.values())
        check(wait_for(quiet, timeout=10), "%s: a and b are silent while c still does not read (%s)"
              % (label, {n: s.stuck() for n, s in reading.items()}))
        st = d.status()
        print_figures(st, label + " (c stalled)")
        cut = [o for o in st.get("outputs", []) if o["name"] == "c"]
        check(cut and cut[0].get("cut_offs", 0) >= 1, "%s: c was cut off (%s)"
              % (label, cut[0].get("cut_offs") if cut else None))
        c.resume()
        st = d.settle()
        print_figures(st, label + " (c reading again)")
        check_no_stuck(d, label + ", c reading again")
    finally:
        d.close()


# ---- the playing channel, steps, misses ---------------------------------------

PLAYING = """
[control]
channel = playing
preset_next = cc 80
root_next = key 21
root_home = key 23

[preset dekany]
seeds = 1 3 5 7 9
"""


def playing_channel():
    d = Daemon(BIN, [("a", "bend", "file")], extra=PLAYING)
    try:
        d.settle()
        synth = d.synths["a"]
        seen = []
        feed = synth.on_message

        def record(kind, ch, data):
            seen.append((kind, ch, tuple(data)))
            feed(kind, ch, data)
        synth.on_message = record
        d.play(bytes([0x90, 60, 90]))                      # a note sounds on a pool channel
        d.play(bytes([0xB0, 80, 127, 0xB0, 80, 0]))         # the footswitch on the playing channel
        d.play(bytes([0x90, 21, 100, 0x80, 21, 0]))         # key 21: the next root
        d.play(bytes([0xB0, 1, 33, 0xC0, 5]))               # modulation, a program change: they play
        d.settle()
        check(state_of(d) == ("dekany", cps((1, 3, 5, 7, 9))[0][1]),
              "playing channel: CC 80 stepped to dekany, key 21 to its first tone (%s, %s)" % state_of(d))
        check(not any(k == 0xB0 and data[0] == 80 for k, _c, data in seen),
              "playing channel: CC 80 never reaches the synth (our rule)")
        check(not any(k == 0x90 and data[0] == 21 for k, _c, data in seen),
              "playing channel: key 21 never sounds (our rule)")
        check(any(k == 0xB0 and data == (1, 33) for k, _c, data in seen) and
              any(k == 0xC0 and data == (5,) for k, _c, data in seen),
              "playing channel: modulation and the program change reach the synth")
        d.play(bytes([0x90, 23, 100, 0x80, 23, 0, 0x90, 64, 90]))   # home, then a note
        got = last_pitch(d)
        want = pitch(64, seeds=(1, 3, 5, 7, 9))
        check(got is not None and abs(got - want) < TOLERANCE,
              "playing channel: key 64 after home in dekany at %s, JI %.4f" % (got, want))
        d.play(bytes([0xB0, 80, 127, 0xB0, 80, 0]))         # past the last preset, step_ends = stop
        check(wait_for(lambda: "selects nothing: already on the last preset (dekany, 2 of 2)" in d.log_text()),
              "a step past the last preset is logged (our rule: never silently ignored)")
        check(state_of(d)[0] == "dekany", "and stays on dekany")
    finally:
        d.close()


# ---- root by label, reload replies -----------------------------------------------

def root_and_reload():
    d = Daemon(BIN, [("a", "bend", "file")], extra=CONTROL)
    try:
        d.settle()
        rc, out, err = d.client("root", "1.5")
        check(rc == 0 and "root 1.5" in out, "root 1.5 by its label (%s%s)" % (out.strip(), err.strip()))
        d.play(bytes([0x90, 62, 90]))
        got, want = last_pitch(d), pitch(62, root="1.5")
        check(got is not None and abs(got - want) < TOLERANCE,
              "root 1.5: key 62 at %s, JI %.4f (times 5/4)" % (got, want))
        rc, out, err = d.client("root", "home")
        check(rc == 0 and "root home" in out, "root home (%s%s)" % (out.strip(), err.strip()))
        rc, out, err = d.client("root", "2.9")
        check(rc == 1 and all(label in err for _r, label in cps((1, 3, 5, 7))) and "expected home" in err,
              "root 2.9 refused, listing home, the numbers and every label (%s)" % err.strip())
        rc, out, err = d.client("root", "99")
        check(rc == 1 and "out of range, expected home, 0 (home) to 6" in err, "root 99 refused (%s)" % err.strip())

        good = open(d.conf).read()
        d.client("root", "1.5")
        rc, out, err = d.client("reload")
        check(rc == 0 and "still on preset main, root 1.5" in out,
              "reload keeps the root when its tone is still there (%s%s)" % (out.strip(), err.strip()))
        check(state_of(d) == ("main", "1.5"), "status after the reload: main, 1.5 (%s, %s)" % state_of(d))
        with open(d.conf, "w") as f:
            f.write(good.replace("[control]", "[lattice]\nseeds = 1 3 7 9\n\n[control]"))
        rc, out, err = d.client("reload")
        check(rc == 0 and "root reset to home: 1.5 is no longer a tone of main" in out,
              "reload says when it reset the root to home (%s%s)" % (out.strip(), err.strip()))
        check(wait_for(lambda: "root reset to home: 1.5 is no longer a tone of main" in d.log_text()),
              "and so does the log")
        d.play(bytes([0xBF, 64, 127, 0xBF, 64, 0]))
        check(wait_for(lambda: state_of(d) == ("dekany", "home")), "the footswitch steps to dekany")
        with open(d.conf, "w") as f:
            f.write(good.replace("[preset dekany]\nseeds = 1 3 5 7 9\n", ""))
        rc, out, err = d.client("reload")
        check(rc == 0 and "preset dekany is gone: now on preset main, root home" in out,
              "reload says when the preset is gone (%s%s)" % (out.strip(), err.strip()))
    finally:
        d.close()


# ---- the state file ------------------------------------------------------------

def state_file():
    d = Daemon(BIN, [("a", "bend", "file")], extra=CONTROL)
    path = os.path.join(d.dir, "state.json")
    dekany = cps((1, 3, 5, 7, 9))
    root = dekany[3][1]
    try:
        d.settle()
        check(not os.path.exists(path), "no state file before anything changed")
        d.play(bytes([0xBF, 64, 127, 0xBF, 64, 0]))         # the footswitch: dekany
        check(wait_for(lambda: state_of(d)[0] == "dekany"), "the footswitch steps to dekany")
        rc, out, err = d.client("root", root)
        check(rc == 0, "root %s (%s%s)" % (root, out.strip(), err.strip()))

        def saved():
            try:
                s = json.load(open(path))
            except (OSError, ValueError):
                return False
            return s.get("preset") == "dekany" and s.get("root") == root
        check(wait_for(saved, timeout=3), "the state file says dekany, root %s (%s)"
              % (root, open(path).read() if os.path.exists(path) else "none"))
        check(os.path.realpath(json.load(open(path))["config"]) == os.path.realpath(d.conf),
              "the state file names its config")
        check(not [f for f in os.listdir(d.dir) if f.startswith(".state.json")],
              "no temporary file left beside it")

        d.restart(kill=True)                                # a crash or the watchdog: SIGKILL
        check(state_of(d) == ("dekany", root), "after SIGKILL and a restart: dekany, root %s (%s, %s)"
              % ((root,) + state_of(d)))
        check("state: resuming preset dekany, root %s (from %s)" % (root, path) in d.log_text(),
              "the log says where it resumed")
        d.play(bytes([0x90, 62, 90, 0x80, 62, 0]))
        got, want = last_pitch(d), pitch(62, seeds=(1, 3, 5, 7, 9), root=root)
        check(got is not None and abs(got - want) < TOLERANCE,
              "after the restart key 62 sounds in dekany rooted on %s: %s, JI %.4f" % (root, got, want))

        def restart_with(text, why):
            d.stop()
            with open(path, "w") as f:
                f.write(text)
            mark = len(d.log_text())
            d.restart(kill=False)
            log = d.log_text()[mark:]
            lines = [l for l in log.splitlines() if "state: %s ignored: " % path in l]
            check(len(lines) == 1 and why in lines[0] and "starting on preset main, at home" in lines[0],
                  "state file %s: one log line naming the file and why (%s)" % (why, lines))
            check(state_of(d) == ("main", "home"), "and the daemon starts on main, at home")
        restart_with("{\"format\": 1, \"preset\": \"dek", "it is not a JSON object (corrupt)")
        restart_with(json.dumps({"format": 1, "config": os.path.realpath(d.conf), "preset": "gone",
                                 "root": "home"}), "preset 'gone' is no longer in the config")
        restart_with(json.dumps({"format": 1, "config": "/elsewhere/other.conf", "preset": "dekany",
                                 "root": "home"}), "it was written for /elsewhere/other.conf")
        restart_with(json.dumps({"format": 7, "config": os.path.realpath(d.conf), "preset": "dekany",
                                 "root": "home"}), "its format is not 1")
        check(d.proc.poll() is None, "the daemon runs")
    finally:
        d.close()


# ---- render: the same rule offline ----------------------------------------------

def render_misses():
    """A file whose program changes on the control channel name presets that
    do not exist: render says so once, with the count (our rule).  The file
    is a Standard MIDI File 1.0 format 0: MThd (length 6, format 0, one
    track, 96 ticks per quarter), one MTrk, delta times as single bytes."""
    import struct
    import tempfile
    tmp = tempfile.mkdtemp(prefix="latticed-render-")
    conf = os.path.join(tmp, "r.conf")
    with open(conf, "w") as f:
        f.write("[control]\nchannel = 16\n\n[preset dekany]\nseeds = 1 3 5 7 9\n")
    events = bytes([0, 0xCF, 9, 0, 0xCF, 5, 0, 0x90, 60, 90, 96, 0x80, 60, 0, 0, 0xFF, 0x2F, 0])
    smf = b"MThd" + struct.pack(">IHHH", 6, 0, 1, 96) + b"MTrk" + struct.pack(">I", len(events)) + events
    with open(os.path.join(tmp, "in.mid"), "wb") as f:
        f.write(smf)
    r = subprocess.run([BIN, "render", "--config", conf, os.path.join(tmp, "in.mid"),
                        os.path.join(tmp, "out.mid")], capture_output=True, text=True, timeout=60)
    want = ("warning: control: program change 5 on channel 16 (program_change) selects nothing: "
            "there are 2 presets, 0 to 1; still on preset main (2 such messages in the file)")
    check(r.returncode == 0 and want in r.stderr, "render warns of program changes that select nothing (%s)"
          % r.stderr.strip())


def main():
    render_misses()
    midi_panic()
    playing_channel()
    root_and_reload()
    state_file()
    return finish()


if __name__ == "__main__":
    sys.exit(main())
