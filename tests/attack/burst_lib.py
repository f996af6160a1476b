"""Shared parts of the burst attacks (tests/attack/burst_*.py): a daemon on
FIFOs and files through the raw backend, readers that can stall, and a
MIDI 1.0 receiver model that says which notes a synth would still sound.

Python standard library only.  Sources of the facts used:
  - MIDI 1.0 Detailed Specification: status bytes (8n note-off, 9n note-on,
    velocity 0 = note-off, Bn control change, Cn program, Dn channel
    pressure, En pitch bend LSB first, centre 8192), running status
    (system common and SysEx cancel it, real-time bytes F8-FF change
    nothing), the sustain pedal (CC64, >= 64 is down) keeps released notes
    sounding until it goes up, sostenuto (CC66) keeps the notes that were
    down when it went down, All Notes Off (CC123) releases notes but the
    pedals keep holding them, All Sound Off (CC120) silences at once,
    Reset All Controllers (CC121) lifts the pedals and centres the bend,
    the mode messages (CC124-127) act as All Notes Off, System Reset (FF)
    returns the receiver to its power-up state; RPN 0 (CC101/100 = 0/0,
    CC6 = semitones) sets the bend range, +-2 by default.
  - MIDI Tuning Standard: real-time single-note change F0 7F dev 08 02 prog
    n [key xx yy zz]... F7 and the bulk dump F0 7E dev 08 01 prog name
    [128 x xx yy zz] cs F7; xx = semitone, yyzz = 14-bit fraction.
  - MPE (RP-053): the MPE configuration message (RPN 6 on the master
    channel) sets member bend ranges to 48 and the master's to 2; a bend
    on the master channel moves every note of the zone, added to the
    member's own bend.
  - Combination product sets: the hexany of 1 3 5 7 is the six products of
    two seeds reduced into the octave (published CPS definition; common
    practice); key 69 = A 440 Hz, 12 per octave (MTS, common practice).
"""
import fcntl
import json
import math
import os
import select
import signal
import subprocess
import tempfile
import threading
import time
from fractions import Fraction
from itertools import combinations

FAILS = []


def check(cond, what):
    print(("ok: " if cond else "FAIL: ") + what, flush=True)
    if not cond:
        FAILS.append(what)
    return cond


def finish():
    if FAILS:
        print("%d check(s) failed" % len(FAILS))
        return 1
    print("all checks passed")
    return 0


# ---- independent expectations --------------------------------------------

def hexany():
    tones = set()
    for a, b in combinations((1, 3, 5, 7), 2):
        r = Fraction(a * b)
        while r >= 2:
            r /= 2
        tones.add(r)
    return sorted(tones)


def ji_pitch(key, root_key=57, root_hz=220.0):
    """Sequential layout: key root_key+i plays tone i mod 6 in period i div 6."""
    tones = hexany()
    i = key - root_key
    hz = root_hz * float(tones[i % len(tones)]) * 2 ** (i // len(tones))
    return 69 + 12 * math.log2(hz / 440)


# ---- a MIDI 1.0 receiver model ----------------------------------------------

class Synth:
    """Decodes one output's byte stream and keeps what a receiver sounds.

    A note is sounding from its note-on until its note-off, or later while
    a pedal holds it.  Each note-on needs its own note-off: two note-ons on
    one key need two (our rule for counting; receivers differ)."""

    def __init__(self, name, mpe_master=None):
        self.name = name
        self.mpe_master = mpe_master      # 0 for a lower zone, 15 for an upper one
        self.status = 0
        self.data = []
        self.sysex = None
        self.bend = [8192] * 16
        self.range = [2.0] * 16
        self.rpn = [(127, 127)] * 16
        self.mts = {}
        self.down = {}                    # (ch, key) -> note-ons not yet released
        self.held = set()                 # (ch, key) released, kept by a pedal
        self.sustain = [False] * 16
        self.sostenuto = [False] * 16
        self.latched = [set() for _ in range(16)]
        self.base = {}                    # (ch, key) -> pitch without the bends
        self.note_ons = 0
        self.note_offs = 0
        self.pitches = []                 # (pitch, half a bend step) at each note-on
        self.bends_under_notes = 0        # bend changes while the channel sounds
        self.bytes = 0

    # -- bytes
    def feed(self, data):
        self.bytes += len(data)
        for b in data:
            if b >= 0xF8:
                if b == 0xFF:
                    self.reset()
                continue
            if self.sysex is not None:
                if b < 0x80:
                    self.sysex.append(b)
                    continue
                if b == 0xF7:
                    self.on_sysex(self.sysex)
                self.sysex = None
                if b == 0xF7:
                    continue
            if b == 0xF0:
                self.sysex = []
                self.status = 0
            elif b >= 0xF0:
                self.status = 0
            elif b >= 0x80:
                self.status, self.data = b, []
            elif self.status:
                self.data.append(b)
                need = 1 if (self.status & 0xF0) in (0xC0, 0xD0) else 2
                if len(self.data) == need:
                    self.on_message(self.status & 0xF0, self.status & 0x0F, self.data)
                    self.data = []

    def on_sysex(self, body):
        if len(body) >= 6 and body[0] == 0x7F and body[2] == 0x08 and body[3] == 0x02:
            n = body[5]
            for i in range(n):
                key, xx, yy, zz = body[6 + 4 * i:10 + 4 * i]
                self.mts[key] = xx + ((yy << 7) | zz) / 16384
        elif len(body) >= 5 + 16 + 384 and body[0] == 0x7E and body[2] == 0x08 and body[3] == 0x01:
            words = body[5 + 16:5 + 16 + 384]
            for key in range(128):
                xx, yy, zz = words[3 * key:3 * key + 3]
                if (xx, yy, zz) != (0x7F, 0x7F, 0x7F):
                    self.mts[key] = xx + ((yy << 7) | zz) / 16384

    # -- what sounds
    def sounding_channel(self, ch):
        return any(c == ch for (c, _k) in self.down) or any(c == ch for (c, _k) in self.held)

    def pitch_now(self, ch, key):
        p = self.base[(ch, key)] + (self.bend[ch] - 8192) / 8192 * self.range[ch]
        if self.mpe_master is not None and ch != self.mpe_master:
            m = self.mpe_master
            p += (self.bend[m] - 8192) / 8192 * self.range[m]
        return p

    def release(self, ch, key):
        left = self.down.get((ch, key), 0)
        if not left:
            return
        if left > 1:
            self.down[(ch, key)] = left - 1
            return
        del self.down[(ch, key)]
        if self.sustain[ch] or (self.sostenuto[ch] and key in self.latched[ch]):
            self.held.add((ch, key))

    def let_go(self, ch):
        for (c, k) in list(self.held):
            if c == ch and not self.sustain[ch] and not (self.sostenuto[ch] and k in self.latched[ch]):
                self.held.discard((c, k))

    def all_notes_off(self, ch):
        for (c, k) in list(self.down):
            if c == ch:
                self.down[(c, k)] = 1
                self.release(c, k)

    def all_sound_off(self, ch):
        for (c, k) in list(self.down):
            if c == ch:
                del self.down[(c, k)]
        self.held = {(c, k) for (c, k) in self.held if c != ch}

    def reset(self):
        for ch in range(16):
            self.all_sound_off(ch)
            self.sustain[ch] = self.sostenuto[ch] = False
            self.bend[ch] = 8192

    def on_message(self, kind, ch, d):
        if kind == 0x90 and d[1] > 0:
            key = d[0]
            self.held.discard((ch, key))
            self.latched[ch].discard(key)     # a new note: sostenuto did not catch it
            self.down[(ch, key)] = self.down.get((ch, key), 0) + 1
            self.base[(ch, key)] = self.mts.get(key, float(key))
            self.note_ons += 1
            self.pitches.append((self.pitch_now(ch, key), self.range[ch] / 16384))
        elif kind in (0x80, 0x90):
            self.note_offs += 1
            self.release(ch, d[0])
        elif kind == 0xE0:
            value = d[0] | (d[1] << 7)
            if value != self.bend[ch] and self.sounding_channel(ch):
                self.bends_under_notes += 1
            self.bend[ch] = value
        elif kind == 0xB0:
            self.control(ch, d[0], d[1])

    def control(self, ch, cc, v):
        msb, lsb = self.rpn[ch]
        if cc == 101:
            self.rpn[ch] = (v, lsb)
        elif cc == 100:
            self.rpn[ch] = (msb, v)
        elif cc == 6 and self.rpn[ch] == (0, 0):
            self.range[ch] = float(v)
        elif cc == 6 and self.rpn[ch] == (0, 6) and self.mpe_master is not None:
            for c in range(16):
                self.range[c] = 2.0 if c == self.mpe_master else 48.0
        elif cc == 64:
            self.sustain[ch] = v >= 64
            self.let_go(ch)
        elif cc == 66:
            if v >= 64 and not self.sostenuto[ch]:
                self.latched[ch] = {k for (c, k) in self.down if c == ch}
            self.sostenuto[ch] = v >= 64
            self.let_go(ch)
        elif cc == 120:
            self.all_sound_off(ch)
        elif cc == 121:
            self.sustain[ch] = self.sostenuto[ch] = False
            self.bend[ch] = 8192
            self.let_go(ch)
        elif cc >= 123:
            self.all_notes_off(ch)

    def stuck(self):
        """Notes a receiver would still sound: (channel 1-16, key)."""
        return sorted({(c + 1, k) for (c, k) in self.down} | {(c + 1, k) for (c, k) in self.held})


# ---- where the outputs go ---------------------------------------------------

class FileTail:
    """A regular-file output: everything the daemon appended."""

    def __init__(self, path, synth):
        self.path, self.synth, self.offset = path, synth, 0

    def poll(self):
        try:
            with open(self.path, "rb") as f:
                f.seek(self.offset)
                data = f.read()
        except FileNotFoundError:
            return
        self.offset += len(data)
        self.synth.feed(data)


WIDE_PIPE_BYTES = 1 << 20  # Linux's pipe-max-size default (pipe(7))


class FifoReader(threading.Thread):
    """A FIFO output read in the background, as a synth would; stall() stops
    reading (the pipe fills, the daemon's writes would block), resume()
    goes on.  The pipe is made small (one page) so a stall bites soon."""

    def __init__(self, path, synth, pipe_size=4096):
        super().__init__(daemon=True)
        self.path, self.synth = path, synth
        self.lock = threading.Lock()
        self.buf = bytearray()
        self.reading = threading.Event()
        self.reading.set()
        self.fd = os.open(path, os.O_RDONLY | os.O_NONBLOCK)
        if pipe_size:
            try:
                fcntl.fcntl(self.fd, fcntl.F_SETPIPE_SZ, pipe_size)
            except (AttributeError, OSError):
                pass
        self.start()

    def run(self):
        while True:
            self.reading.wait()
            with self.lock:
                fd = self.fd
            if fd < 0:
                time.sleep(0.01)
                continue
            try:
                r, _, _ = select.select([fd], [], [], 0.02)
                if not r or not self.reading.is_set():
                    continue
                with self.lock:
                    data = os.read(fd, 65536) if fd == self.fd else b""
            except BlockingIOError:
                continue
            except (OSError, ValueError):
                continue
            if not data:
                time.sleep(0.01)
                continue
            with self.lock:
                self.buf += data

    def hang_up(self):
        """The synth closes the FIFO (unsubscribes) but keeps sounding."""
        self.stall()
        time.sleep(0.1)
        self.poll()
        with self.lock:
            os.close(self.fd)
            self.fd = -1

    def connect_again(self):
        self.fd = os.open(self.path, os.O_RDONLY | os.O_NONBLOCK)
        self.resume()

    def stall(self):
        self.reading.clear()

    def resume(self):
        self.reading.set()

    def poll(self):
        with self.lock:
            data, self.buf = bytes(self.buf), bytearray()
        self.synth.feed(data)


# ---- the daemon ---------------------------------------------------------------

# every method leaves channels 10-16 free, for pass-through notes
OUTPUT_KEYS = {
    "bend": "method = bend\nchannels = 2-9\n",
    "mts": "method = mts\nchannels = 1\n",
    "mpe": "method = mpe\nmpe_members = 8\n",
}


class Daemon:
    """latticed run --backend raw, input from a FIFO, outputs as given:
    outputs = [(name, method, kind)], kind "file", "fifo" (a one-page pipe)
    or "wide-fifo" (a pipe that holds a whole burst's answer, so a reader
    slowed by a loaded machine never holds the daemon back)."""

    def __init__(self, binary, outputs, extra_input="", running_status=False, extra=""):
        self.binary = binary
        self.dir = tempfile.mkdtemp(prefix="latticed-burst-")
        self.conf = os.path.join(self.dir, "burst.conf")
        self.in_path = os.path.join(self.dir, "in.fifo")
        os.mkfifo(self.in_path)
        text = ("[daemon]\nbackend = raw\ncontrol_socket = %s/control\nrealtime_priority = none\n"
                "lock_memory = no\nstate_file = %s/state.json\n\n[input]\nconnect = %s\n%s\n"
                % (self.dir, self.dir, self.in_path, extra_input))
        self.outputs = []
        for name, method, kind in outputs:
            fifo = kind in ("fifo", "wide-fifo")
            path = os.path.join(self.dir, name + (".fifo" if fifo else ".bin"))
            if fifo:
                os.mkfifo(path)
            text += "[output %s]\n%sconnect = %s\n%s\n" % (
                name, OUTPUT_KEYS[method], path,
                "running_status = yes\n" if running_status else "")
            self.outputs.append((name, method, kind, path))
        text += extra  # more sections: [control], [preset NAME], ...
        with open(self.conf, "w") as f:
            f.write(text)
        self.log_path = os.path.join(self.dir, "log.txt")
        self.log = open(self.log_path, "w")
        self.proc = subprocess.Popen([binary, "run", "--config", self.conf], stderr=self.log)
        self.synths, self.readers = {}, {}
        for name, method, kind, path in self.outputs:
            synth = Synth(name, mpe_master=0 if method == "mpe" else None)
            self.synths[name] = synth
            if kind == "fifo":
                self.readers[name] = FifoReader(path, synth)
            elif kind == "wide-fifo":
                self.readers[name] = FifoReader(path, synth, WIDE_PIPE_BYTES)
            else:
                self.readers[name] = FileTail(path, synth)
        self.wait_ready()
        self.player = os.open(self.in_path, os.O_WRONLY)

    def wait_ready(self):
        """Until the daemon answers on its control socket (at most 10 s)."""
        for _ in range(500):
            if os.path.exists(os.path.join(self.dir, "control")) and self.proc.poll() is None:
                r = subprocess.run([self.binary, "status", "--socket", os.path.join(self.dir, "control")],
                                   capture_output=True, timeout=30)
                if r.returncode == 0:
                    return
            time.sleep(0.02)

    def restart(self, kill=True):
        """The daemon dies (SIGKILL: a crash, or the watchdog) or stops, and
        starts again with the same config, FIFOs and files."""
        if kill:
            self.proc.kill()
            self.proc.wait()
        else:
            self.stop()
        self.proc = subprocess.Popen([self.binary, "run", "--config", self.conf], stderr=self.log)
        self.wait_ready()

    def play(self, data):
        view = memoryview(bytes(data))
        while view:
            n = os.write(self.player, view)
            view = view[n:]

    def client(self, *args):
        r = subprocess.run([self.binary] + list(args) + ["--config", self.conf],
                           capture_output=True, text=True, timeout=30)
        return r.returncode, r.stdout, r.stderr

    def status(self):
        rc, out, err = self.client("status", "--json")
        if rc != 0:
            check(False, "status --json answers (%s)" % err.strip())
            return {"outputs": []}
        return json.loads(out)

    def poll(self):
        for r in self.readers.values():
            r.poll()

    def settle(self, timeout=30.0):
        """Waits until every message queued has gone out and been read."""
        end = time.time() + timeout
        last = None
        while time.time() < end:
            st = self.status()
            outs = st.get("outputs", [])
            done = all(o["sent"] + o.get("send_drops", 0) >= o["queued"] for o in outs)
            time.sleep(0.15)
            self.poll()
            sizes = tuple(s.bytes for s in self.synths.values())
            if done and sizes == last:
                return st
            last = sizes
        self.poll()
        return self.status()

    def log_text(self):
        self.log.flush()
        with open(self.log_path) as f:
            return f.read()

    def stop(self):
        if self.proc.poll() is None:
            self.proc.send_signal(signal.SIGTERM)
            try:
                return self.proc.wait(timeout=20)
            except subprocess.TimeoutExpired:
                self.proc.kill()
                return self.proc.wait()
        return self.proc.returncode

    def close(self):
        if self.proc.poll() is None:
            self.proc.kill()
            self.proc.wait()
        try:
            os.close(self.player)
        except (OSError, TypeError):
            pass
        self.log.close()
        print("---- daemon log (last lines)")
        print("\n".join(open(self.log_path).read().splitlines()[-25:]))


def print_figures(st, label):
    """What the daemon says it shed or dropped, per output."""
    for o in st.get("outputs", []):
        shed = o.get("shed", {})
        print("figures: %s: output %s (%s): %d queued, %d sent, held %d; shed %s; queue_drops %s, "
              "send_drops %s, refused %s" % (
                  label, o["name"], o["method"], o["queued"], o["sent"], o.get("notes_held", -1),
                  json.dumps(shed, sort_keys=True) if shed else "(not reported)",
                  o.get("queue_drops"), o.get("send_drops"), o.get("refused", "(not reported)")),
              flush=True)
    inp = st.get("input", {})
    if inp:
        print("figures: %s: input %s" % (label, json.dumps(inp, sort_keys=True)), flush=True)


def note_pairs(count, channel=0, low=48, high=88, velocity=100):
    """count note-on/note-off pairs, 6 bytes each, keys walking up and down."""
    out = bytearray()
    span = high - low + 1
    for i in range(count):
        step = i % (2 * span)
        key = low + (step if step < span else 2 * span - 1 - step)
        out += bytes([0x90 | channel, key, velocity, 0x80 | channel, key, 0])
    return out


def check_no_stuck(d, label, still_down=()):
    """Every output sounds nothing but the notes in still_down (channel-free
    list of JI pitches the player still holds)."""
    for name, synth in d.synths.items():
        stuck = synth.stuck()
        check(len(stuck) == len(still_down),
              "%s: %s: %d note(s) still sounding, expected %d: %s (%d note-ons, %d note-offs)"
              % (label, name, len(stuck), len(still_down), stuck[:12], synth.note_ons, synth.note_offs))
