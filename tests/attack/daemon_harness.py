"""A `latticed run --backend raw` under attack, for the scripts in tests/attack/.

The daemon reads a FIFO (the player, kept open here) and writes one output,
a regular file, decoded here with an independent MIDI 1.0 reader: which
notes sound now.  Python's standard library only.

Sources of the facts used:
  - MIDI 1.0 Detailed Specification: status bytes (8n note-off, 9n note-on,
    velocity 0 = note-off, Bn control change), running status, real-time
    bytes (F8-FF) anywhere, SysEx F0 ... F7; CC 120 (All Sound Off) and
    CC 123 (All Notes Off) end every note of their channel.
  - Linux proc(5): VmRSS and VmHWM in /proc/PID/status (resident set now
    and at its peak, in kB).
"""
import json
import os
import signal
import socket
import subprocess
import sys
import time

FAILS = []
PASSES = []


def check(cond, what):
    print(("ok: " if cond else "FAIL: ") + what, flush=True)
    (PASSES if cond else FAILS).append(what)
    return cond


def summary():
    """The plain closing line; the exit status for the script."""
    print("%d passed, %d failed" % (len(PASSES), len(FAILS)))
    return 1 if FAILS else 0


class Sounding:
    """Which (channel, key) pairs sound in a MIDI 1.0 byte stream."""

    def __init__(self):
        self.status, self.data, self.in_sysex = 0, [], False
        self.notes = set()
        self.note_ons = 0

    def feed(self, data):
        for b in data:
            if b >= 0xF8:
                continue
            if self.in_sysex:
                if b == 0xF7 or b >= 0x80:
                    self.in_sysex = False
                if b < 0x80 or b == 0xF7:
                    continue
            if b == 0xF0:
                self.in_sysex, self.status = True, 0
                continue
            if b >= 0x80:
                self.status, self.data = (b if b < 0xF0 else 0), []
                continue
            if not self.status:
                continue
            self.data.append(b)
            need = 1 if (self.status & 0xF0) in (0xC0, 0xD0) else 2
            if len(self.data) == need:
                self.message(self.status & 0xF0, self.status & 0x0F, self.data)
                self.data = []

    def message(self, kind, ch, data):
        if kind == 0x90 and data[1] > 0:
            self.notes.add((ch, data[0]))
            self.note_ons += 1
        elif kind in (0x80, 0x90):
            self.notes.discard((ch, data[0]))
        elif kind == 0xB0 and data[0] in (120, 123):
            self.notes = {n for n in self.notes if n[0] != ch}


CONFIG = """\
[daemon]
backend = raw
control_socket = {socket}
realtime_priority = none
lock_memory = no

[input]
connect = {dir}/in.fifo

[output synth]
method = bend
channels = 2-9
connect = {dir}/synth.bin
"""


class Daemon:
    """One daemon in its own directory; `socket` may be any path to test."""

    def __init__(self, binary, directory, socket_path=None):
        self.binary, self.dir = binary, directory
        os.makedirs(directory, exist_ok=True)
        self.socket = socket_path or os.path.join(directory, "run", "control")
        self.conf = os.path.join(directory, "daemon.conf")
        with open(self.conf, "w") as f:
            f.write(CONFIG.format(dir=directory, socket=self.socket))
        fifo = os.path.join(directory, "in.fifo")
        if not os.path.exists(fifo):
            os.mkfifo(fifo)
        self.log_path = os.path.join(directory, "log.txt")
        self.proc = None
        self.player = None
        self.sounding = Sounding()
        self.offset = 0

    def start(self, wait=True):
        self.log = open(self.log_path, "w")
        # Under AddressSanitizer freed blocks wait in a quarantine (256 MB by
        # default) and would count as the daemon's growth; a small one still
        # catches a use after a recent free.  No effect on other builds.
        env = dict(os.environ)
        env["ASAN_OPTIONS"] = ":".join(filter(None, [env.get("ASAN_OPTIONS"), "quarantine_size_mb=8"]))
        self.proc = subprocess.Popen([self.binary, "run", "--config", self.conf], stderr=self.log, env=env)
        if not wait:
            return True
        end = time.time() + 20
        while time.time() < end and self.proc.poll() is None:
            if os.path.exists(self.socket):
                try:
                    if self.request(b"status").get("ok"):
                        self.player = os.open(os.path.join(self.dir, "in.fifo"), os.O_WRONLY)
                        return True
                except OSError:
                    pass
            time.sleep(0.02)
        return False

    def alive(self):
        return self.proc is not None and self.proc.poll() is None

    def stop(self):
        if self.player is not None:
            os.close(self.player)
            self.player = None
        if self.alive():
            self.proc.send_signal(signal.SIGTERM)
            try:
                self.proc.wait(timeout=20)
            except subprocess.TimeoutExpired:
                self.proc.kill()
                self.proc.wait()
        self.log.close()
        return self.proc.returncode

    def log_text(self):
        if not self.log.closed:
            self.log.flush()
        with open(self.log_path, errors="replace") as f:
            return f.read()

    def connect(self, blocking=True):
        s = socket.socket(socket.AF_UNIX, socket.SOCK_STREAM)
        if not blocking:
            s.setblocking(False)
        s.connect(self.socket)
        return s

    def request(self, line, timeout=10.0):
        """One request on a fresh connection; the reply as a dict."""
        s = self.connect()
        s.settimeout(timeout)
        try:
            s.sendall(line + b"\n")
            return json.loads(read_line(s).decode("utf-8"))
        finally:
            s.close()

    def client(self, *args, timeout=60):
        r = subprocess.run([self.binary] + list(args) + ["--config", self.conf],
                           capture_output=True, text=True, timeout=timeout)
        return r.returncode, r.stdout, r.stderr

    def status_kb(self, field):
        with open("/proc/%d/status" % self.proc.pid) as f:
            for line in f:
                if line.startswith(field + ":"):
                    return int(line.split()[1])
        return 0

    def play(self, data):
        os.write(self.player, bytes(data))

    def notes(self):
        """The notes sounding on the output now."""
        try:
            with open(os.path.join(self.dir, "synth.bin"), "rb") as f:
                f.seek(self.offset)
                data = f.read()
        except FileNotFoundError:
            data = b""
        self.offset += len(data)
        self.sounding.feed(data)
        return set(self.sounding.notes)

    def wait_notes(self, pred, timeout=5.0):
        end = time.time() + timeout
        while time.time() < end:
            if pred(self.notes()):
                return True
            time.sleep(0.01)
        return pred(self.notes())


def read_line(s):
    data = b""
    while not data.endswith(b"\n"):
        chunk = s.recv(65536)
        if not chunk:
            break
        data += chunk
    return data


def read_all(s, timeout=10.0):
    s.settimeout(timeout)
    data = b""
    try:
        while True:
            chunk = s.recv(65536)
            if not chunk:
                break
            data += chunk
    except (socket.timeout, ConnectionResetError):
        pass
    return data


def binary_from_argv():
    if len(sys.argv) < 2:
        sys.exit("usage: %s LATTICED_BINARY" % sys.argv[0])
    return os.path.abspath(sys.argv[1])
