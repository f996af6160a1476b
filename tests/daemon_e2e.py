#!/usr/bin/env python3
"""End-to-end test of `latticed run` through the raw backend, natively.

The daemon reads a FIFO (the player) and writes two outputs: a regular
file (method bend) and a FIFO read here (method mts).  Everything it
writes is decoded here, independently of latticed's own code, and every
sounding pitch is compared with the just-intonation pitch computed here
from the lattice definition with fractions.Fraction.

Sources of the facts used:
  - MIDI 1.0 Detailed Specification: status bytes (8n note-off, 9n note-on,
    velocity 0 = note-off, Bn control change, En pitch bend LSB first,
    14-bit, centre 8192), running status, RPN 0 (CC101/100 = 0/0, CC6 =
    semitones) sets the pitch-bend range.
  - MIDI Tuning Standard (MIDI 1.0 supplement, CA-020 for real-time
    single-note changes): F0 7F dev 08 02 prog n [key xx yy zz]... F7, the
    frequency word xx = semitone, yyzz = 14-bit fraction of a semitone.
  - Combination product sets: the hexany of 1 3 5 7 is the six products of
    two seeds (3 5 7 15 21 35) reduced into one octave (published CPS
    definition; common practice).
  - Equal temperament note numbers: 69 = A 440 Hz, 12 per octave (MIDI
    Tuning Standard, common practice).
"""
import json
import math
import os
import re
import signal
import subprocess
import sys
import tempfile
import threading
import time
from fractions import Fraction
from itertools import combinations

BIN = sys.argv[1]
WITH_SYSTEMD = "--systemd" in sys.argv[2:]
FAILS = []


def check(cond, what):
    if cond:
        print("ok:", what)
    else:
        print("FAIL:", what)
        FAILS.append(what)


# ---- independent expectations -------------------------------------------

def cps(seeds, k, period=Fraction(2)):
    """Sorted tones of a combination product set, reduced into [1, period)."""
    tones = set()
    for combo in combinations(seeds, k):
        r = Fraction(1)
        for s in combo:
            r *= s
        while r >= period:
            r /= period
        while r < 1:
            r *= period
        tones.add(r)
    return sorted(tones)


def labels(seeds, k, period=Fraction(2)):
    """ratio -> label (seeds joined by '.'), first product in lexicographic order."""
    out = {}
    for combo in combinations(seeds, k):
        r = Fraction(1)
        for s in combo:
            r *= s
        while r >= period:
            r /= period
        out.setdefault(r, ".".join(str(s) for s in combo))
    return out


def note_of_hz(hz):
    return 69 + 12 * math.log2(hz / 440)


def expected_pitch(key, seeds=(1, 3, 5, 7), k=2, root_key=57, root_hz=220.0,
                   shift=Fraction(1)):
    """Sequential layout: key root_key+i plays tone i mod N in period i div N."""
    tones = cps(seeds, k)
    i = key - root_key
    tone = tones[i % len(tones)]
    period = i // len(tones)
    return note_of_hz(root_hz * float(tone * shift) * 2 ** period)


def fold_half_period(r, period=Fraction(2)):
    """The shift that makes tone r the 1/1, folded to within half a period."""
    cents = 1200 * math.log2(r)
    half = 600 * math.log2(period)
    while cents > half:
        r /= period
        cents = 1200 * math.log2(r)
    while cents < -half:
        r *= period
        cents = 1200 * math.log2(r)
    return r


# ---- an independent MIDI 1.0 stream decoder ------------------------------

class Decoder:
    """Decodes a byte stream into (channel message) events and tracks what a
    synth would sound: per channel bend and bend range, per key MTS words."""

    def __init__(self, name):
        self.name = name
        self.status = 0
        self.data = []
        self.sysex = None
        self.bend = [8192] * 16
        self.bend_range = [2.0] * 16  # MIDI 1.0 default: +-2 semitones (common practice)
        self.rpn = [(127, 127)] * 16
        self.mts = {}                 # key -> exact note number
        self.sounding = {}            # (ch, key) -> pitch at note-on
        self.events = []              # ("on"/"off"/"bend"/"cc", ch, a, b)
        self.notes_on = []            # (ch, key, pitch)
        self.bend_while_sounding = []

    def feed(self, data):
        for b in data:
            if b >= 0xF8:
                continue                      # real-time: anywhere, no effect here
            if self.sysex is not None:
                if b == 0xF7:
                    self.on_sysex(self.sysex + [b])
                    self.sysex = None
                    continue
                if b < 0x80:
                    self.sysex.append(b)
                    continue
                self.sysex = None             # cut short (MIDI 1.0: ended)
            if b == 0xF0:
                self.sysex = [b]
                self.status = 0
                continue
            if b >= 0x80:
                self.status = b if b < 0xF0 else 0
                self.data = []
                continue
            if not self.status:
                continue
            self.data.append(b)
            need = 1 if (self.status & 0xF0) in (0xC0, 0xD0) else 2
            if len(self.data) == need:
                self.on_message(self.status, self.data)
                self.data = []               # running status: keep self.status

    def on_sysex(self, msg):
        # MTS real-time single note tuning change: F0 7F dev 08 02 prog n ...
        if len(msg) >= 8 and msg[1] == 0x7F and msg[3] == 0x08 and msg[4] == 0x02:
            n = msg[6]
            body = msg[7:-1]
            for i in range(n):
                key, xx, yy, zz = body[4 * i:4 * i + 4]
                self.mts[key] = xx + ((yy << 7) | zz) / 16384

    def on_message(self, status, data):
        kind, ch = status & 0xF0, status & 0x0F
        if kind == 0x90 and data[1] > 0:
            key = data[0]
            if key in self.mts:
                pitch = self.mts[key] + (self.bend[ch] - 8192) / 8192 * self.bend_range[ch]
            else:
                pitch = key + (self.bend[ch] - 8192) / 8192 * self.bend_range[ch]
            self.sounding[(ch, key)] = pitch
            self.notes_on.append((ch, key, pitch))
            self.events.append(("on", ch, key, pitch))
        elif kind == 0x80 or kind == 0x90:
            self.sounding.pop((ch, data[0]), None)
            self.events.append(("off", ch, data[0], None))
        elif kind == 0xE0:
            value = data[0] | (data[1] << 7)
            if any(c == ch for (c, _k) in self.sounding) and value != self.bend[ch]:
                self.bend_while_sounding.append((ch, value))
            self.bend[ch] = value
            self.events.append(("bend", ch, value, None))
        elif kind == 0xB0:
            cc, v = data
            msb, lsb = self.rpn[ch]
            if cc == 101:
                self.rpn[ch] = (v, lsb)
            elif cc == 100:
                self.rpn[ch] = (msb, v)
            elif cc == 6 and self.rpn[ch] == (0, 0):
                self.bend_range[ch] = float(v)
            elif cc in (120, 123):
                for key in [k for (c, k) in self.sounding if c == ch]:
                    self.sounding.pop((ch, key))
            self.events.append(("cc", ch, cc, v))


class FileTail:
    """Reads what the daemon appended to a regular file."""

    def __init__(self, path, decoder):
        self.path, self.decoder, self.offset = path, decoder, 0

    def poll(self):
        try:
            with open(self.path, "rb") as f:
                f.seek(self.offset)
                data = f.read()
        except FileNotFoundError:
            return
        self.offset += len(data)
        self.decoder.feed(data)


class FifoReader(threading.Thread):
    """Reads the daemon's FIFO output (a synth listening) in the background."""

    def __init__(self, path, decoder):
        super().__init__(daemon=True)
        self.path, self.decoder = path, decoder
        self.lock = threading.Lock()
        self.buf = bytearray()
        self.fd = os.open(path, os.O_RDONLY | os.O_NONBLOCK)

    def run(self):
        import select
        while True:
            r, _, _ = select.select([self.fd], [], [], 0.05)
            if not r:
                continue
            try:
                data = os.read(self.fd, 65536)
            except BlockingIOError:
                continue
            if not data:
                time.sleep(0.01)
                continue
            with self.lock:
                self.buf += data

    def poll(self):
        with self.lock:
            data, self.buf = bytes(self.buf), bytearray()
        self.decoder.feed(data)


def wait_for(pred, outputs, timeout=5.0):
    end = time.time() + timeout
    while time.time() < end:
        for o in outputs:
            o.poll()
        if pred():
            return True
        time.sleep(0.01)
    for o in outputs:
        o.poll()
    return pred()


# ---- the scenario -----------------------------------------------------------

CONFIG = """\
[daemon]
backend = raw
control_socket = {dir}/run/control
state_file = {dir}/state.json
realtime_priority = none
lock_memory = no

[input]
connect = {dir}/in.fifo

[preset low]
root_hz = 110

[output synth]
method = bend
channels = 2-9
running_status = yes
connect = {dir}/synth.bin

[output mts]
method = mts
channels = 1
connect = {dir}/mts.fifo
"""


def notify_checks(tmp, conf):
    """sd_notify(3) protocol: datagrams on $NOTIFY_SOCKET; the watchdog
    period comes in $WATCHDOG_USEC and pings are due every half of it
    (sd_watchdog_enabled(3))."""
    import socket
    path = os.path.join(tmp, "notify.sock")
    sock = socket.socket(socket.AF_UNIX, socket.SOCK_DGRAM)
    sock.bind(path)
    sock.settimeout(0.05)
    env = dict(os.environ, NOTIFY_SOCKET=path, WATCHDOG_USEC="400000")
    os.mkfifo(os.path.join(tmp, "in2.fifo"))
    conf2 = os.path.join(tmp, "n.conf")
    with open(conf2, "w") as f:
        f.write(open(conf).read().replace("in.fifo", "in2.fifo").replace("/run/control", "/run2/control")
                .replace("mts.fifo", "mts2.bin"))
    p = subprocess.Popen([BIN, "run", "--config", conf2], env=env, stderr=subprocess.DEVNULL)
    got = []

    def collect(seconds):
        end = time.time() + seconds
        while time.time() < end:
            try:
                got.append(sock.recv(4096).decode())
            except socket.timeout:
                pass
    try:
        collect(1.2)
        check(got and got[0] == "READY=1", "systemd: READY=1 first (%s)" % got[:2])
        check(any(m.startswith("STATUS=Running") for m in got), "systemd: a STATUS= line")
        pings = sum(1 for m in got if m == "WATCHDOG=1")
        check(pings >= 3, "systemd: WATCHDOG=1 about every 0.2 s with no MIDI (%d in 1.2 s)" % pings)
        got.clear()
        p.send_signal(signal.SIGHUP)
        collect(0.5)
        check("RELOADING=1" in got and "READY=1" in got[got.index("RELOADING=1"):],
              "systemd: RELOADING=1 then READY=1 around a reload (%s)" % got)
        got.clear()
        p.send_signal(signal.SIGTERM)
        rc = p.wait(timeout=10)
        collect(0.1)
        check(rc == 0 and "STOPPING=1" in got, "systemd: STOPPING=1 on SIGTERM (%s, rc %s)" % (got, rc))
    finally:
        if p.poll() is None:
            p.kill()
            p.wait()
        sock.close()


def main():
    tmp = tempfile.mkdtemp(prefix="latticed-e2e-")
    conf = os.path.join(tmp, "t.conf")
    with open(conf, "w") as f:
        f.write(CONFIG.format(dir=tmp))
    os.mkfifo(os.path.join(tmp, "in.fifo"))
    os.mkfifo(os.path.join(tmp, "mts.fifo"))
    log_path = os.path.join(tmp, "log.txt")
    log = open(log_path, "w")
    proc = subprocess.Popen([BIN, "run", "--config", conf], stderr=log)

    def client(*args):
        r = subprocess.run([BIN] + list(args) + ["--config", conf], capture_output=True, text=True,
                           timeout=30)
        return r.returncode, r.stdout, r.stderr

    def status():
        rc, out, err = client("status", "--json")
        check(rc == 0, "status --json exits 0 (%s)" % err.strip())
        try:
            return json.loads(out)
        except ValueError:
            check(False, "status --json prints JSON (%r)" % out[:200])
            return {"outputs": [], "sources": [], "preset": {}, "root": {}}

    def log_text():
        log.flush()
        with open(log_path) as f:
            return f.read()

    synth = Decoder("synth")
    mts = Decoder("mts")
    outputs = [FileTail(os.path.join(tmp, "synth.bin"), synth)]
    try:
        # the daemon is up when its control socket answers
        ok = False
        for _ in range(200):
            if os.path.exists(os.path.join(tmp, "run", "control")):
                ok = True
                break
            time.sleep(0.02)
        check(ok, "the daemon creates its control socket")
        mode = os.stat(os.path.join(tmp, "run", "control")).st_mode & 0o777
        check(mode == 0o660, "control socket mode is 0660 (%o)" % mode)

        # a synth starts listening on the FIFO output after the daemon: it
        # gets its set-up (RPN 3 tuning program select on channel 1)
        reader = FifoReader(os.path.join(tmp, "mts.fifo"), mts)
        reader.start()
        outputs.append(reader)
        check(wait_for(lambda: any(e[0] == "cc" and e[2] == 101 and e[3] == 0 for e in mts.events),
                       outputs), "a late FIFO reader gets the MTS output's set-up")

        # the player: one writer that stays connected
        player = os.open(os.path.join(tmp, "in.fifo"), os.O_WRONLY)

        def play(*msgs):
            os.write(player, bytes(b for m in msgs for b in m))

        # 1. a chord on channel 1, held (running status inside the input too)
        play([0x90, 57, 100, 60, 100, 64, 100])
        check(wait_for(lambda: len(synth.notes_on) >= 3 and len(mts.notes_on) >= 3, outputs),
              "three note-ons reach both outputs")
        for dec in (synth, mts):
            for (ch, key, pitch), in_key in zip(dec.notes_on[:3], (57, 60, 64)):
                want = expected_pitch(in_key)
                check(abs(pitch - want) < 0.0005,
                      "%s: key %d sounds at %.4f, JI %.4f" % (dec.name, in_key, pitch, want))

        # 2. status shows the held notes with their tones
        st = status()
        out = {o["name"]: o for o in st["outputs"]}
        check(st["backend"] == "raw", "status names the backend")
        check(st["preset"]["name"] == "main" and st["root"]["label"] == "home",
              "status: preset main, root home")
        check(out["synth"]["notes_held"] == 3, "status: 3 notes held on synth")
        lab = labels((1, 3, 5, 7), 2)
        tones = cps((1, 3, 5, 7), 2)
        by_key = {n["in_key"]: n for n in out["synth"]["notes"]}
        for key in (57, 60, 64):
            r = tones[(key - 57) % 6]
            n = by_key.get(key, {})
            check(n.get("ratio") == "%d/%d" % (r.numerator, r.denominator) and n.get("tone") == lab[r],
                  "status: key %d plays %s = %s (got %s %s)" % (key, lab[r], r, n.get("tone"), n.get("ratio")))
            check(abs(n.get("cents", 0) - 1200 * math.log2(r)) < 0.001, "status: cents of key %d" % key)
            sounding_ch = [ch for (ch, k, _p) in synth.notes_on if k == n.get("out_key")]
            check(sounding_ch and n.get("out_channel") == sounding_ch[0] + 1,
                  "status: out channel of key %d matches the stream" % key)
        check(out["synth"]["queue_drops"] == 0 and out["synth"]["send_drops"] == 0, "no drops")
        # running_status = yes (MIDI 1.0 running status): the file holds fewer
        # bytes than three per message
        size = os.path.getsize(os.path.join(tmp, "synth.bin"))
        check(size < 3 * out["synth"]["sent"], "running status saves bytes (%d bytes for %d messages)"
              % (size, out["synth"]["sent"]))
        check(len(st["sources"]) == 1 and st["sources"][0]["connected"], "status: the source is connected")

        # 3. preset: new notes only; the held chord keeps its bend
        rc, o, e = client("preset", "low")
        check(rc == 0 and "preset low" in o, "preset low accepted (%s%s)" % (o.strip(), e.strip()))
        before = len(synth.notes_on)
        play([0x90, 67, 90])
        check(wait_for(lambda: len(synth.notes_on) > before, outputs), "a note after the preset change")
        want = expected_pitch(67, root_hz=110.0)
        check(abs(synth.notes_on[-1][2] - want) < 0.0005,
              "preset low: key 67 at %.4f, wanted %.4f" % (synth.notes_on[-1][2], want))
        check(not synth.bend_while_sounding, "no bend moved under a sounding note (%s)" % synth.bend_while_sounding)
        rc, o, e = client("preset", "nosuch")
        check(rc == 1 and "no preset 'nosuch'" in e, "unknown preset refused with exit 1 (%s)" % e.strip())
        rc, o, e = client("preset", "0")
        check(rc == 0 and "preset main" in o, "preset by number")

        # 4. root 4: tone 3 (3/2) becomes 1/1 for new notes
        rc, o, e = client("root", "4")
        check(rc == 0 and "root 1.3" in o, "root 4 makes 1.3 the 1/1 (%s%s)" % (o.strip(), e.strip()))
        before = len(synth.notes_on)
        play([0x90, 58, 90])
        check(wait_for(lambda: len(synth.notes_on) > before, outputs), "a note after the root change")
        # re-rooting multiplies every pitch by the new 1/1's ratio, folded by a
        # period to stay within half a period (our model, README): 3/2 -> 3/4
        want = expected_pitch(58, shift=fold_half_period(tones[3]))
        got = synth.notes_on[-1][2]
        check(abs(got - want) < 0.0005, "root 4: key 58 at %.4f, wanted %.4f" % (got, want))
        # status says what the held note sounds at, the root included: 5/4
        # (key 58) times 3/4 = 15/16 of 220 Hz (exact fractions), the preset
        # and root it began under, the key's name (key 60 = C4: common practice)
        sounds = tones[1] * fold_half_period(tones[3])
        hz = 220 * sounds
        st = status()
        n = {x["in_key"]: x for x in st["outputs"][0]["notes"]}.get(58, {})
        check(n.get("preset") == "main" and n.get("root") == "1.3" and
              n.get("sounds", {}).get("ratio") == "%d/%d" % (sounds.numerator, sounds.denominator) and
              abs(n.get("sounds", {}).get("hz", 0) - float(hz)) < 0.0005,
              "status --json: key 58 after root 4 sounds %s = %.3f Hz (%s)" % (sounds, float(hz), n))
        rc, text, e = client("status")
        row = [line for line in text.splitlines() if re.match(r"^ +0 +1 +58 A#3 ", line)]
        check(rc == 0 and len(row) >= 1 and row[0].split()[4:9] ==
              ["main", "1.3", "1.5", "%d/%d" % (sounds.numerator, sounds.denominator), "%.3f" % float(hz)],
              "status: key 58 after root 4 reads main 1.3 1.5 %s %.3f (%s)" % (sounds, float(hz), row))
        rc, o, e = client("root", "99")
        check(rc == 1 and "out of range" in e, "root 99 refused (%s)" % e.strip())
        rc, o, e = client("root", "0")
        check(rc == 0 and "root home" in o, "root 0 = home")
        check(not synth.bend_while_sounding, "still no bend under sounding notes")

        # 5. SIGHUP with a broken config: logged with FILE:LINE, old state kept
        good = open(conf).read()
        with open(conf, "w") as f:
            f.write(good.replace("[preset low]\nroot_hz = 110", "[preset low]\nroot_hz = 110\nchoose = 9"))
        bad_line = good.splitlines().index("root_hz = 110") + 2
        proc.send_signal(signal.SIGHUP)
        check(wait_for(lambda: "reload of %s failed" % conf in log_text(), []),
              "a broken reload is logged as failed")
        check(("%s:%d: choose is 9" % (conf, bad_line)) in log_text(),
              "the log names FILE:LINE of the error (%s:%d)" % (conf, bad_line))
        before = len(synth.notes_on)
        play([0x90, 59, 90])
        check(wait_for(lambda: len(synth.notes_on) > before, outputs), "a note after the failed reload")
        check(abs(synth.notes_on[-1][2] - expected_pitch(59)) < 0.0005, "the old tuning still plays")
        check(proc.poll() is None, "the daemon still runs")

        # SIGHUP with a good config: new notes take it
        with open(conf, "w") as f:
            f.write(good.replace("[preset low]", "[pitch]\nroot_hz = 230\n\n[preset low]"))
        proc.send_signal(signal.SIGHUP)
        check(wait_for(lambda: "reloaded %s" % conf in log_text(), []), "a good reload is logged")
        before = len(synth.notes_on)
        play([0x90, 62, 90])
        check(wait_for(lambda: len(synth.notes_on) > before, outputs), "a note after the reload")
        want = expected_pitch(62, root_hz=230.0)
        check(abs(synth.notes_on[-1][2] - want) < 0.0005,
              "after reload: key 62 at %.4f, wanted %.4f" % (synth.notes_on[-1][2], want))
        rc, o, e = client("reload")
        check(rc == 0 and "reloaded" in o, "latticed reload (%s%s)" % (o.strip(), e.strip()))
        st = status()
        check(st["reloads"] == 2, "status counts two reloads")
        check(not synth.bend_while_sounding, "no bend under sounding notes across reloads")

        # 6. the player's FIFO writer goes away mid-chord: its notes end
        sounding_before = len(synth.sounding)
        check(sounding_before >= 5, "notes are sounding (%d)" % sounding_before)
        os.close(player)
        check(wait_for(lambda: not synth.sounding and not mts.sounding, outputs),
              "the writer vanished: every note got its note-off (%s)" % synth.sounding)
        check(wait_for(lambda: "source 0 gone" in log_text(), []), "the log says the source is gone")

        # a new writer connects and plays; then SIGTERM ends its notes
        player = os.open(os.path.join(tmp, "in.fifo"), os.O_WRONLY)
        before = len(synth.notes_on)
        play([0x91 - 1, 57, 80, 61, 80])
        check(wait_for(lambda: len(synth.notes_on) >= before + 2 and len(synth.sounding) == 2, outputs),
              "a new writer plays")
        proc.send_signal(signal.SIGTERM)
        rc = proc.wait(timeout=10)
        check(rc == 0, "SIGTERM: exit status 0 (%s)" % rc)
        time.sleep(0.2)
        check(wait_for(lambda: not synth.sounding and not mts.sounding, outputs, timeout=2),
              "SIGTERM: every sounding note ended (%s %s)" % (synth.sounding, mts.sounding))
        offs = [e for e in synth.events[-80:] if e[0] == "cc" and e[2] == 123]
        check(len(offs) >= 8, "SIGTERM: all-notes-off on every pool channel")
        check(not os.path.exists(os.path.join(tmp, "run", "control")), "the socket file is removed")
        os.close(player)

        # every note-on matched by a note-off on the same channel and key
        for dec in (synth, mts):
            open_notes = {}
            for ev in dec.events:
                if ev[0] == "on":
                    open_notes[(ev[1], ev[2])] = open_notes.get((ev[1], ev[2]), 0) + 1
                elif ev[0] == "off" and open_notes.get((ev[1], ev[2])):
                    open_notes[(ev[1], ev[2])] -= 1
            check(not any(open_notes.values()), "%s: every note-on has its note-off" % dec.name)

        # 7. no daemon: one clear line, exit 1
        r = subprocess.run([BIN, "status", "--socket", "/nonexistent/latticed/control"],
                           capture_output=True, text=True)
        check(r.returncode == 1, "no daemon: exit 1")
        check(r.stderr == "latticed: no daemon at /nonexistent/latticed/control (is 'latticed run' running?)\n",
              "no daemon: the one-line message (%r)" % r.stderr)
        rc, o, e = client("panic")
        check(rc == 1 and "no daemon at %s/run/control" % tmp in e, "panic without a daemon (%s)" % e.strip())
        r = subprocess.run([BIN, "status", "--frob"], capture_output=True, text=True)
        check(r.returncode == 2, "a bad option: exit 2")
        r = subprocess.run([BIN, "ports", "--backend", "raw"], capture_output=True, text=True)
        check(r.returncode == 0 and "raw backend" in r.stdout, "ports works without a daemon")
        r = subprocess.run([BIN, "run", "--backend", "jack"], capture_output=True, text=True)
        check(r.returncode == 2 and "backend 'jack' is not in this build" in r.stderr, "unknown backend")
        # a missing input FIFO: one line with the fix, exit 1
        with open(conf, "w") as f:
            f.write(good.replace("in.fifo", "missing.fifo"))
        r = subprocess.run([BIN, "run", "--config", conf], capture_output=True, text=True, timeout=10)
        check(r.returncode == 1 and "cannot open input %s/missing.fifo" % tmp in r.stderr and "mkfifo" in r.stderr,
              "a missing input: one line naming it and the fix (%s)" % r.stderr.strip())
        # the ALSA backend (when built) on a machine without the sequencer:
        # one line naming what is missing, exit 1 (same check on every backend)
        version = subprocess.run([BIN, "--version"], capture_output=True, text=True).stdout
        if "alsa" in version and not os.path.exists("/dev/snd/seq"):
            with open(conf, "w") as f:
                f.write(good)
            r = subprocess.run([BIN, "run", "--config", conf, "--backend", "alsa"],
                               capture_output=True, text=True, timeout=10)
            lines = r.stderr.splitlines()
            check(r.returncode == 1 and len(lines) == 1 and lines[0].startswith("error: ") and
                  "/dev/snd/seq" in lines[0] and "modprobe snd-seq" in lines[0],
                  "no sequencer: one error line naming /dev/snd/seq and the fix, exit 1 (%r)" % r.stderr)
        with open(conf, "w") as f:
            f.write(good)
        if WITH_SYSTEMD:
            notify_checks(tmp, conf)
    finally:
        if proc.poll() is None:
            proc.kill()
            proc.wait()
        log.close()
        print("---- daemon log")
        print(open(log_path).read())
    if FAILS:
        print("%d check(s) failed" % len(FAILS))
        return 1
    print("all checks passed")
    return 0


if __name__ == "__main__":
    sys.exit(main())
