"""`subscribe` on the control socket, end to end: a raw-backend daemon on a
FIFO, subscribers over its Unix socket, Python's standard library only.

Sources of the facts used:
  - MIDI 1.0 Detailed Specification: 9n note-on (velocity 0 = note-off),
    8n note-off, Bn 40 (CC 64) sustain pedal, >= 64 down; Cn program change.
  - `latticed table --json` for which tone and period each key plays (our
    rule: what a subscriber hears agrees with the table).
  - The protocol itself (latticed(8), "Subscribing") is our rule; each check
    says which part of it.
"""
import json
import os
import signal
import socket
import subprocess
import sys
import tempfile
import time

sys.path.insert(0, os.path.join(os.path.dirname(os.path.abspath(__file__)), "attack"))
import daemon_harness as harness  # noqa: E402
from daemon_harness import check  # noqa: E402

CONFIG = """\
[lattice]
seeds = 1 3 5 7
choose = 2

[preset wide]
seeds = 1 3 5 9
{extra}
[control]
channel = 16
program_change = preset

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


class Subscriber:
    """One subscription and the picture its lines make (our rule: a state
    replaces everything; note_on adds, note_off removes, tuning replaces)."""

    def __init__(self, daemon, rcvbuf=None, request=b"subscribe"):
        self.sock = socket.socket(socket.AF_UNIX, socket.SOCK_STREAM)
        if rcvbuf:
            self.sock.setsockopt(socket.SOL_SOCKET, socket.SO_RCVBUF, rcvbuf)
        self.sock.connect(daemon.socket)
        self.sock.sendall(request + b"\n")
        self.buf = b""
        self.lines = []
        self.notes = {}
        self.tuning = None
        self.states = []
        self.closed = False

    def read(self, timeout=0.5):
        """Reads what is there within timeout; the new lines."""
        self.sock.settimeout(timeout)
        fresh = []
        end = time.time() + timeout
        while time.time() < end:
            try:
                chunk = self.sock.recv(65536)
            except socket.timeout:
                break
            except ConnectionResetError:
                chunk = b""
            if not chunk:
                self.closed = True
                break
            self.buf += chunk
            while b"\n" in self.buf:
                line, self.buf = self.buf.split(b"\n", 1)
                msg = json.loads(line.decode("utf-8"))
                self.apply(msg)
                fresh.append(msg)
            self.sock.settimeout(max(0.01, end - time.time()))
        self.lines += fresh
        return fresh

    def wait(self, pred, timeout=5.0):
        end = time.time() + timeout
        while time.time() < end:
            self.read(0.05)
            if pred(self):
                return True
        return pred(self)

    def apply(self, msg):
        kind = msg.get("event")
        if kind == "state":
            self.states.append(msg)
            self.notes = {(o["index"], n["id"]): n for o in msg["outputs"] for n in o["notes"]}
            self.tuning = {k: msg[k] for k in ("preset", "root", "generation", "presets")}
        elif kind == "note_on":
            self.notes[(msg["output"], msg["id"])] = msg
        elif kind == "note_off":
            self.notes.pop((msg["output"], msg["id"]), None)
        elif kind == "tuning":
            self.tuning = {k: msg[k] for k in ("preset", "root", "generation", "presets")}

    def keys(self):
        return sorted(n["key"] for n in self.notes.values())

    def close(self):
        self.sock.close()


def table(daemon):
    out = subprocess.run([daemon.binary, "table", "--json", "--config", daemon.conf],
                         capture_output=True, text=True, check=True).stdout
    return json.loads(out)


def start_daemon(binary, directory, extra=""):
    d = harness.Daemon(binary, directory)
    with open(d.conf, "w") as f:
        f.write(CONFIG.format(dir=directory, socket=d.socket, extra=extra))
    if not d.start():
        sys.exit("the daemon did not start:\n" + d.log_text())
    return d


def chord_keys(tab):
    """Keys in 57..80 playing the tones of the first harmonic chord."""
    chord = next(c for c in tab["chords"] if c["kind"] == "harmonic")
    keys = []
    for tone in chord["tones"]:
        keys.append(next(k["key"] for k in tab["keys"] if k["tone"] == tone and 57 <= k["key"] <= 80))
    return keys


def on(keys, channel=0):
    return [b for k in keys for b in (0x90 | channel, k, 100)]


def off(keys, channel=0):
    return [b for k in keys for b in (0x80 | channel, k, 0)]


def check_state_and_notes(d, tab):
    s = Subscriber(d)
    s.wait(lambda s: s.states)
    st = s.states[0] if s.states else {}
    check(st.get("ok") is True and st.get("why") == "subscribed", "the first line is the state (ok, why subscribed)")
    check(st.get("preset") == {"index": 0, "name": "main"} and st.get("root") == {"slot": 0, "label": "home"},
          "the state names preset main and root home")
    check(st.get("config") == d.conf and st.get("presets") == 2, "the state gives the config path and 2 presets")
    check([o["name"] for o in st.get("outputs", [])] == ["synth"] and not s.notes, "one output, nothing sounding")

    keys = chord_keys(tab)
    d.play(on(keys))
    s.wait(lambda s: len(s.notes) == 3)
    by_key = {k["key"]: k for k in tab["keys"]}
    ons = [m for m in s.lines if m.get("event") == "note_on"]
    check(sorted(m["key"] for m in ons) == sorted(keys), "a note_on per key of the chord %s" % keys)
    check(all(m["tone"] == by_key[m["key"]]["tone"] and m["period"] == by_key[m["key"]]["period"] for m in ons),
          "each note_on's tone and period are the table's for its key")
    check(all(m["preset"] == 0 and m["generation"] == 0 and m["output"] == 0 and m["channel"] == 1 for m in ons),
          "each note_on says output 0, preset 0, generation 0, channel 1")
    check(len({m["id"] for m in ons}) == 3, "the three notes have three ids")

    late = Subscriber(d)
    late.wait(lambda s: s.states)
    check(late.keys() == sorted(keys), "a subscriber joining mid-chord finds the chord in its state")

    d.play([0xB0, 64, 127] + off(keys))
    s.read(0.4)
    check(len(s.notes) == 3, "with the sustain pedal down, released keys still sound (no note_off)")
    d.play([0xB0, 64, 0])
    s.wait(lambda s: not s.notes)
    offs = [m for m in s.lines if m.get("event") == "note_off"]
    check(sorted(m["id"] for m in offs) == sorted(m["id"] for m in ons) and not s.notes,
          "the pedal up ends all three, each note_off with its note_on's id")
    late.wait(lambda s: not s.notes)
    check(not late.notes, "the late subscriber saw them end too")
    late.close()
    return s


def check_tuning(d, s, tab):
    s.lines.clear()
    ok = d.request(b"preset wide")
    s.wait(lambda s: s.tuning and s.tuning["preset"]["index"] == 1)
    check(ok.get("ok") and s.tuning["preset"] == {"index": 1, "name": "wide"}, "preset wide over the socket: a tuning event")
    wide = json.loads(subprocess.run([d.binary, "table", "--json", "--preset", "wide", "--config", d.conf],
                                     capture_output=True, text=True, check=True).stdout)
    d.request(b"root 2")
    s.wait(lambda s: s.tuning["root"]["slot"] == 2)
    check(s.tuning["root"] == {"slot": 2, "label": wide["tones"][1]["label"]},
          "root 2: the tuning event labels it with tone 1's seeds (%s)" % wide["tones"][1]["label"])
    d.play([0xCF, 0])  # program change 1 on channel 16, the control channel
    s.wait(lambda s: s.tuning["preset"]["index"] == 0)
    check(s.tuning["preset"] == {"index": 0, "name": "main"} and s.tuning["root"]["slot"] == 0,
          "a program change on the control channel (MIDI): a tuning event, preset main, root home")


def check_reload(d, s, tab):
    keys = chord_keys(tab)
    d.play(on(keys[:1]))
    s.wait(lambda s: len(s.notes) == 1)
    with open(d.conf) as f:
        text = f.read()
    with open(d.conf, "w") as f:
        f.write(text.replace("[control]", "[preset narrow]\nseeds = 1 3 5 11\n\n[control]"))
    s.lines.clear()
    code, out, err = d.client("reload")
    s.wait(lambda s: any(m.get("event") == "reload" for m in s.lines) and s.tuning["generation"] == 1)
    rel = [m for m in s.lines if m.get("event") == "reload"]
    check(code == 0 and rel and rel[0]["generation"] == 1 and rel[0]["presets"] == 3,
          "reload: a reload event, generation 1, 3 presets")
    check(s.tuning["generation"] == 1 and s.tuning["presets"] == 3, "then a tuning event of generation 1")
    d.play(on(keys[1:2]))
    late = Subscriber(d)
    late.wait(lambda s: len(s.notes) == 2)
    gens = {n["key"]: n["generation"] for n in late.notes.values()}
    check(gens == {keys[0]: 0, keys[1]: 1}, "a new subscriber's state: the note from before the reload keeps generation 0, the new one 1 (%s)" % gens)
    d.play(off(keys[:2]))
    s.wait(lambda s: not s.notes)
    before = hangups(d)
    late.close()
    wait_hangups(d, before + 1)  # its place is free before check_limits counts to 8


def hangups(d):
    return d.log_text().count("the subscriber hung up")


def wait_hangups(d, count, timeout=20.0):
    """Until the daemon has logged `count` subscribers hanging up (a loaded machine may take long)."""
    deadline = time.time() + timeout
    while hangups(d) < count and time.time() < deadline:
        time.sleep(0.05)
    return hangups(d) >= count


def check_limits(d, s):
    more = [Subscriber(d) for _ in range(7)]  # 8 with s
    for m in more:
        m.wait(lambda m: m.states)
    check(all(m.states for m in more), "8 subscribers at once each get their state")
    ninth = socket.socket(socket.AF_UNIX, socket.SOCK_STREAM)
    ninth.connect(d.socket)
    ninth.settimeout(5)
    ninth.sendall(b"subscribe\n")
    reply = json.loads(harness.read_line(ninth))
    check(reply.get("ok") is False and "at most 8" in reply.get("error", ""),
          "the 9th is refused: %s" % reply.get("error"))
    ninth.close()
    check(d.request(b"status").get("ok") is True, "status still answers with 8 subscribers")
    before = hangups(d)
    for m in more:
        m.close()
    check(wait_hangups(d, before + 7), "each one that hung up is logged as such")


def check_idle(d, s):
    idle = d.connect()
    time.sleep(11.0)
    s.read(0.2)
    check(not s.closed, "a subscriber quiet for 11 s is still open (no idle limit)")
    idle.settimeout(2)
    try:
        gone = idle.recv(100) == b""
    except (socket.timeout, ConnectionResetError):
        gone = False
    check(gone, "an ordinary client quiet for 10 s was closed meanwhile")
    idle.close()


def check_slow_subscriber(d, s):
    """One that never reads is dropped; the reader and the synth lose nothing."""
    stuck = Subscriber(d, rcvbuf=4096)
    time.sleep(0.2)
    d.notes()
    before = d.sounding.note_ons
    rounds = 0
    while rounds < 5000 and "dropped: it fell behind" not in d.log_text():
        keys = [48 + (rounds % 24), 49 + (rounds % 24)]
        d.play(on(keys) + off(keys))
        if rounds % 10 == 0:
            s.read(0.01)
        time.sleep(0.001)
        rounds += 1
    print("the stuck subscriber was dropped after %d rounds of 2 notes" % rounds)
    s.wait(lambda s: len([m for m in s.lines if m.get("event") == "note_off"]) >= 2 * rounds or s.states[-1].get("why") != "subscribed", 10)
    d.wait_notes(lambda n: d.sounding.note_ons - before >= 2 * rounds and not n, 10)
    log = d.log_text()
    check(log.count("dropped: it fell behind the events") == 1,
          "the subscriber that never reads is dropped with one log line")
    check(d.sounding.note_ons - before == 2 * rounds and not d.notes(),
          "the synth got all %d note-ons and every note ended" % (2 * rounds))
    s.wait(lambda s: not s.notes, 5)
    check(not s.notes, "the reading subscriber's picture ends empty")
    stuck.close()


def check_flood(d, s):
    """12 KB in one write: the reader's picture ends right (state or events)."""
    s.lines.clear()
    data = []
    for i in range(2000):
        k = 36 + i % 48
        data += [0x90, k, 90, 0x80, k, 0]
    d.play(data)
    d.wait_notes(lambda n: not n, 10)
    s.wait(lambda s: not s.notes and len(s.lines) > 0, 10)
    states = [m for m in s.lines if m.get("event") == "state"]
    events = len(s.lines) - len(states)
    print("flood of 2000 notes: %d event lines, %d fresh states (%s), events lost in all: %s"
          % (events, len(states), ", ".join(m["why"] for m in states) or "none",
             states[-1]["events_lost"] if states else 0))
    check(not s.notes, "after the flood the reader's picture is empty, as the synth is (left: %s)" % list(s.notes.values())[:4])
    if any(m["why"] == "events lost" for m in states):
        check("found the event ring full" in d.log_text(), "lost events are logged")


def check_states(d, tab):
    """`subscribe states` (latticed(8), "Subscribing"; our rule): the state
    first, then a fresh state per change and no events, at most one every
    20 ms however fast the notes come, the last change always told."""
    bogus = Subscriber(d, request=b"subscribe everything")
    bogus.read(1.0)
    reply = bogus.lines[0] if bogus.lines else {}
    check(reply.get("ok") is False and "states" in reply.get("error", ""),
          "subscribe with an unknown word: an error naming states (%s)" % reply.get("error"))
    bogus.close()
    s = Subscriber(d, request=b"subscribe states")
    s.wait(lambda s: s.states)
    check(s.states and s.states[0].get("why") == "subscribed", "subscribe states: the first line is the state")
    keys = chord_keys(tab)
    d.play(on(keys))
    s.wait(lambda s: s.keys() == sorted(keys))
    check(s.keys() == sorted(keys) and s.states[-1].get("why") == "changed",
          "a chord: a state (why changed) with its keys (%s)" % s.keys())
    d.play(off(keys))
    s.wait(lambda s: not s.notes)
    check(not s.notes, "released: a state with nothing sounding")
    s.lines.clear()
    data = []
    for i in range(2000):
        k = 36 + i % 48
        data += [0x90, k, 90, 0x80, k, 0]
    t0 = time.time()
    d.play(data)
    d.wait_notes(lambda n: not n, 10)
    s.wait(lambda s: s.lines and not s.notes, 10)
    time.sleep(0.3)
    s.read(0.2)
    took = time.time() - t0
    events = [m for m in s.lines if m.get("event") != "state"]
    states = [m for m in s.lines if m.get("event") == "state"]
    print("subscribe states, 2000 notes in one write: %d states in %.2f s, %d other lines"
          % (len(states), took, len(events)))
    check(not events, "no event lines to a subscriber of states (%s)" % events[:2])
    check(states and len(states) <= took * 50 + 2,
          "at most one state per 20 ms: %d states in %.2f s" % (len(states), took))
    check(not s.notes, "the last state says nothing sounds, as the synth has it")
    # notes a few milliseconds apart for a second: states keep coming, 50 a second at most
    s.lines.clear()
    t0 = time.time()
    for i in range(300):
        k = 48 + i % 24
        d.play(on([k]) + off([k - 1 if i else k]))
        time.sleep(0.003)
    d.play(off(range(36, 84)))
    d.wait_notes(lambda n: not n, 10)
    s.wait(lambda s: s.lines and not s.notes, 10)
    time.sleep(0.3)
    s.read(0.2)
    took = time.time() - t0
    states = [m for m in s.lines if m.get("event") == "state"]
    print("subscribe states, 300 notes 3 ms apart: %d states in %.2f s" % (len(states), took))
    check(took * 5 <= len(states) <= took * 50 + 2,
          "a state every 20 ms or more while notes keep coming: %d in %.2f s" % (len(states), took))
    check(not s.notes, "and the last one says nothing sounds")
    before = hangups(d)
    s.close()
    wait_hangups(d, before + 1)


def check_resubscribe(d):
    d.play(on([60]))
    d.wait_notes(lambda n: len(n) == 1, 10)  # the daemon has played it: nobody saw it go by
    s = Subscriber(d)
    s.wait(lambda s: s.states)
    check(s.keys() == [60], "a note played while nobody subscribed is in the next subscriber's state")
    d.play(off([60]))
    s.wait(lambda s: not s.notes)
    return s


def main():
    binary = harness.binary_from_argv()
    with tempfile.TemporaryDirectory(prefix="latticed-subscribe-") as tmp:
        d = start_daemon(binary, tmp)
        tab = table(d)
        s = check_state_and_notes(d, tab)
        check_tuning(d, s, tab)
        check_reload(d, s, tab)
        check_limits(d, s)
        check_idle(d, s)
        check_slow_subscriber(d, s)
        check_flood(d, s)
        check_states(d, tab)
        s.close()
        time.sleep(0.3)
        s = check_resubscribe(d)
        st = Subscriber(d, request=b"subscribe states")
        st.wait(lambda st: st.states)
        d.proc.send_signal(signal.SIGTERM)
        s.wait(lambda s: s.closed, 10)
        st.wait(lambda st: st.closed, 10)
        check(s.lines and s.lines[-1].get("event") == "shutdown" and s.closed,
              "SIGTERM: the subscriber gets a shutdown event, then the end of the stream")
        check(st.lines and st.lines[-1].get("event") == "shutdown" and st.closed,
              "SIGTERM: a subscriber of states gets the shutdown event too")
        d.stop()
        if harness.FAILS:
            print(d.log_text())
    return harness.summary()


if __name__ == "__main__":
    sys.exit(main())
