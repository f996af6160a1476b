#!/usr/bin/env python3
"""Pass-through notes (channels an output does not retune: drums on 10, a
bass on 12) must end like retuned ones: by `latticed panic`, by SIGTERM,
when their source goes away, and at the end of `latticed render`, which
also counts them in its warning (our rules: README, "No note hangs").

The receiver model is burst_lib's (MIDI 1.0 rules named there): a note
sounds from its note-on until its note-off, and longer while a sustain
pedal on its channel is down.  The SMF written for the render scenario
follows the Standard MIDI File 1.0 layout (MThd length 6, format 0, one
MTrk, variable-length delta times, running status allowed) and is read
back with burst_lib's stream decoder after stripping the delta times.

    burst_passthrough.py LATTICED SCENARIO    SCENARIO: panic, sigterm, source, render
"""
import os
import struct
import subprocess
import sys
import tempfile
import time

from burst_lib import Daemon, Synth, check, check_no_stuck, finish

BIN, SCENARIO = sys.argv[1], sys.argv[2]

# drums on 10 (a kick held, a hi-hat released under the pedal of 10), a
# bass note on 12, and a retuned chord on 1 for comparison
HOLD = bytes([0xB9, 64, 127, 0x99, 36, 100, 0x99, 42, 90, 0x89, 42, 0,
              0x9B, 40, 80, 0x90, 57, 90, 0x90, 64, 90])


def sounding(d):
    return {name: s.stuck() for name, s in d.synths.items()}


def live(how):
    d = Daemon(BIN, [("a", "bend", "file"), ("b", "mts", "fifo"), ("c", "mpe", "fifo")])
    try:
        d.settle()
        d.play(HOLD)
        d.settle()
        for name, notes in sounding(d).items():
            check(len(notes) == 5, "%s: before the %s: the 3 pass-through and 2 retuned notes sound (%s)"
                  % (name, how, notes))
        if how == "panic":
            rc, out, err = d.client("panic")
            check(rc == 0 and "all notes off on every output" in out, "panic answers (%s%s)" % (out, err))
            d.settle()
        elif how == "source":
            os.close(d.player)
            d.player = os.open(os.devnull, os.O_WRONLY)
            end = time.time() + 10
            while time.time() < end and "source 0 gone" not in d.log_text():
                time.sleep(0.05)
            check("source 0 gone" in d.log_text(), "the log says the source went away")
            d.settle()
        else:
            rc = d.stop()
            check(rc == 0, "SIGTERM: exit status 0 (%s)" % rc)
            time.sleep(0.2)
            d.poll()
        check_no_stuck(d, "after the %s" % how)
        if how != "sigterm":
            st = d.status()
            for o in st.get("outputs", []):
                check(o.get("notes_held") == 0, "after the %s: status: output %s holds no note (%s)"
                      % (how, o["name"], o.get("notes_held")))
    finally:
        d.close()


# ---- render -----------------------------------------------------------------

def vlq(n):
    out = [n & 0x7F]
    n >>= 7
    while n:
        out.append(0x80 | (n & 0x7F))
        n >>= 7
    return bytes(reversed(out))


def smf(events, division=96):
    """Format 0: events = [(delta, bytes)]."""
    body = b"".join(vlq(dt) + ev for dt, ev in events) + vlq(0) + b"\xff\x2f\x00"
    return (b"MThd" + struct.pack(">IHHH", 6, 0, 1, division) +
            b"MTrk" + struct.pack(">I", len(body)) + body)


def smf_stream(data):
    """The MIDI bytes of a format 0 file's one track, in order (meta events
    and SysEx left out; running status kept as it is in the file)."""
    assert data[:4] == b"MThd"
    pos = 8 + struct.unpack(">I", data[4:8])[0]
    assert data[pos:pos + 4] == b"MTrk"
    length = struct.unpack(">I", data[pos + 4:pos + 8])[0]
    track, i, out, status = data[pos + 8:pos + 8 + length], 0, bytearray(), 0
    while i < len(track):
        while track[i] & 0x80:
            i += 1
        i += 1
        b = track[i]
        if b == 0xFF:
            n_at = i + 2
            n, j = 0, n_at
            while True:
                n = (n << 7) | (track[j] & 0x7F)
                j += 1
                if not track[j - 1] & 0x80:
                    break
            i = j + n
            continue
        if b in (0xF0, 0xF7):
            n, j = 0, i + 1
            while True:
                n = (n << 7) | (track[j] & 0x7F)
                j += 1
                if not track[j - 1] & 0x80:
                    break
            i = j + n
            continue
        if b & 0x80:
            status = b
            out.append(b)
            i += 1
        need = 1 if (status & 0xF0) in (0xC0, 0xD0) else 2
        out += track[i:i + need]
        i += need
    return bytes(out)


def render():
    tmp = tempfile.mkdtemp(prefix="latticed-burst-render-")
    src, dst = os.path.join(tmp, "in.mid"), os.path.join(tmp, "out.mid")
    conf = os.path.join(tmp, "render.conf")
    with open(conf, "w") as f:
        f.write("[output synth]\nmethod = bend\nchannels = 2-9\n")
    # the file ends with: a kick and a bass note never released, a hi-hat
    # released under the pedal of channel 10 left down, one retuned note
    # never released
    events = [(0, bytes([0xB9, 64, 127])), (0, bytes([0x99, 36, 100])), (0, bytes([0x99, 42, 90])),
              (48, bytes([0x89, 42, 0])), (0, bytes([0x9B, 40, 80])), (0, bytes([0x90, 57, 90])),
              (96, bytes([0x90, 60, 90])), (48, bytes([0x80, 60, 0]))]
    with open(src, "wb") as f:
        f.write(smf(events))
    r = subprocess.run([BIN, "render", "--config", conf, src, dst], capture_output=True, text=True, timeout=60)
    check(r.returncode == 0, "render exits 0 (%s)" % r.stderr.strip())
    synth = Synth("render")
    synth.feed(smf_stream(open(dst, "rb").read()))
    check(not synth.stuck(), "render: nothing left sounding at the end of the file (%s)" % synth.stuck())
    # 3 without a note-off (kick, bass, the retuned note), 1 held by a pedal (hi-hat)
    check("4 notes left hanging" in r.stderr and "3 without a note-off, 1 held by a pedal" in r.stderr,
          "render: the warning counts the pass-through notes (%s)" % r.stderr.strip())


def main():
    if SCENARIO == "render":
        render()
    else:
        live(SCENARIO)
    return finish()


if __name__ == "__main__":
    sys.exit(main())
