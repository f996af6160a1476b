#!/usr/bin/env python3
"""Attacks on the control socket of `latticed run`, each one a regression test.

  - crashing clients: a request answered at once (unknown, or any request
    while the request queue is full) and the client gone before the reply
  - the protocol's edges: a last line without its newline, a line too long
    (its reply must arrive, not a reset), bytes that are not UTF-8 (never
    echoed raw into the JSON reply)
  - flooding clients that send requests and never read the replies: the
    daemon's memory stays bounded and the client is dropped with a log line
  - 100 idle connections, then `latticed panic` and SIGUSR1: both end the
    held chord
  - 1000 concurrent status calls, on raw sockets and as processes

Figures (memory, times) are printed, never judged against a clock.  The
limits checked are the daemon's own (our rule, latticed(8) CONTROL SOCKET):
replies of at most 256 KiB waiting per client, idle clients closed after
10 s.  MIDI facts: see daemon_harness.py.
Usage: control_attacks.py LATTICED_BINARY
"""
import json
import os
import selectors
import signal
import socket
import subprocess
import sys
import tempfile
import threading
import time

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
from daemon_harness import Daemon, binary_from_argv, check, read_all, read_line, summary  # noqa: E402

CHORD = [0x90, 60, 100, 64, 100, 67, 100]   # note-ons, channel 1, running status (MIDI 1.0)
IDLE_LIMIT_S = 10                           # CONTROL_IDLE_MS (our rule)
OUT_LIMIT_KB = 256                          # CONTROL_OUT_MAX (our rule)


def crashing_clients(d):
    d.play(CHORD)
    check(d.wait_notes(lambda n: len(n) == 3), "a chord of 3 notes sounds")
    for what, payload in (("an unknown request", b"bogus\n"),
                          ("300 status requests (the request queue fills)", b"status\n" * 300),
                          ("200 bad presets", b"preset \n" * 200),
                          ("a last line without its newline", b"bogus")):
        for _ in range(20):
            try:
                s = d.connect()
            except OSError:
                break           # it died
            s.sendall(payload)
            s.close()
        time.sleep(0.3)
        if not check(d.alive(), "the daemon lives through clients that send %s and close at once" % what):
            d.stop()        # a fresh one for the next attack, so each is judged on its own
            d.start()
            d.play(CHORD)
    # more status requests in flight than the request queue holds, from 10 clients
    socks = [d.connect() for _ in range(10)]
    for s in socks:
        s.sendall(b"status\n" * 100)
    for s in socks:
        s.close()
    time.sleep(0.5)
    check(d.alive(), "the daemon lives through 10 clients sending 100 status requests each and leaving")
    if d.alive():
        check(d.request(b"status").get("ok") is True, "status still answers after the crashing clients")
        check(len(d.notes()) == 3, "the chord still sounds (no note lost or stuck by the attack)")


def exchange(d, payload, lines):
    """Sends payload from a thread (it may be larger than the socket buffer)
    while reading `lines` reply lines; returns (lines, error of the sender)."""
    s = d.connect()
    s.settimeout(15)
    error = []

    def send():
        try:
            s.sendall(payload)
        except OSError as e:
            error.append(e)
    t = threading.Thread(target=send)
    t.start()
    got = []
    data = b""
    try:
        while len(got) < lines:
            chunk = s.recv(65536)
            if not chunk:
                break
            data += chunk
            while b"\n" in data and len(got) < lines:
                line, data = data.split(b"\n", 1)
                got.append(line)
    except OSError as e:
        error.append(e)
    t.join(15)
    s.close()
    return got, error


def protocol_edges(d):
    s = d.connect()
    s.sendall(b"status")
    s.shutdown(socket.SHUT_WR)
    data = read_all(s)
    s.close()
    try:
        ok = json.loads(data.decode("utf-8")).get("ok") is True
    except ValueError:
        ok = False
    check(ok, "a request without a trailing newline at the end gets its reply (%r)" % data[:60])

    got, error = exchange(d, b"x" * 300000 + b"\nstatus\n", 2)
    check(not error, "a 300 KB line: the sender sees no reset (%s)" % error)
    first = json.loads(got[0]) if got else {}
    check(first.get("ok") is False and "longer than" in first.get("error", ""),
          "a line too long gets its error reply (%r)" % got[:1])
    check(len(got) == 2 and json.loads(got[1]).get("ok") is True,
          "the connection goes on: the next line (status) is answered")

    for what, payload in (("bytes FF FE 80", b"\xff\xfe\x80 bogus\n"),
                          ("a preset name cut inside a UTF-8 sequence", b"preset \xc3\n"),
                          ("an unknown request whose echo is cut at 64 bytes",
                           b"bogus a" + "\u00e9".encode() * 40 + b"\n"),
                          ("a NUL byte", b"status\x00junk\n")):
        got, error = exchange(d, payload, 1)
        line = got[0] if got else b""
        try:
            reply = json.loads(line.decode("utf-8"))     # strict: raises on bad UTF-8
            valid = isinstance(reply, dict) and "ok" in reply
        except (UnicodeDecodeError, ValueError):
            valid = False
        check(valid, "%s: the reply is valid UTF-8 JSON (%r)" % (what, line[:100]))


def flood(d, request, seconds=6.0, runaway_mb=512):
    """Sends `request` without reading; returns (sent, dropped, base kB, peak kB, s)."""
    s = d.connect(blocking=False)
    base = d.status_kb("VmRSS")
    chunk = request * 256
    sent, dropped = 0, False
    start = time.time()
    sel = selectors.DefaultSelector()
    sel.register(s, selectors.EVENT_WRITE)
    while time.time() - start < seconds and d.alive():
        try:
            sent += s.send(chunk)
        except BlockingIOError:
            sel.select(0.05)
        except (BrokenPipeError, ConnectionResetError):
            dropped = True
            break
        if d.status_kb("VmRSS") - base > runaway_mb * 1024:
            break
    took = time.time() - start
    peak = d.status_kb("VmHWM") if d.alive() else 0
    s.close()
    return sent // len(request), dropped, base, peak, took


def flooding_clients(d):
    for request in (b"status\n", b"bogus\n"):
        name = request.strip().decode()
        n, dropped, base, peak, took = flood(d, request)
        print("figure: flood of '%s' never read: %d requests sent in %.2f s; daemon RSS %d kB before, peak %d kB"
              % (name, n, took, base, peak), flush=True)
        check(d.alive(), "'%s' flood: the daemon lives" % name)
        check(dropped, "'%s' flood: the client that never reads is dropped" % name)
        # bounded: what one client may queue, plus room for the allocator (our rule)
        check(peak - base < 32 * 1024, "'%s' flood: the daemon grew %d kB (< 32 MB)" % (name, peak - base))
    text = d.log_text()
    check("dropped: it does not read its replies" in text and "(pid %d," % os.getpid() in text,
          "the log names the dropped client (pid %d)" % os.getpid())
    if d.alive():
        check(d.request(b"status").get("ok") is True, "status answers after the floods")


def idle_clients_then_panic(d):
    d.play(CHORD)
    check(d.wait_notes(lambda n: len(n) == 3), "a chord of 3 notes sounds")
    idle = []
    for _ in range(100):
        try:
            idle.append(d.connect(blocking=False))
        except BlockingIOError:
            pass   # the listen backlog is full
    check(len(idle) == 100, "100 idle connections are taken (%d)" % len(idle))
    time.sleep(0.2)
    start = time.time()
    rc, out, err = d.client("panic", timeout=30)
    took = time.time() - start
    print("figure: latticed panic behind 100 idle connections answered in %.2f s" % took, flush=True)
    check(rc == 0 and "all notes off" in out, "latticed panic is served (%s%s)" % (out.strip(), err.strip()))
    check(d.wait_notes(lambda n: not n), "panic ended the chord (%s)" % d.notes())

    # idle connections are closed by the daemon: evicted, or after the idle limit
    start = time.time()
    sel = selectors.DefaultSelector()
    for s in idle:
        sel.register(s, selectors.EVENT_READ)
    closed = 0
    while closed < len(idle) and time.time() - start < IDLE_LIMIT_S + 15:
        for key, _ in sel.select(0.5):
            try:
                data = key.fileobj.recv(4096)
            except (ConnectionResetError, BlockingIOError):
                data = b""
            if not data:
                sel.unregister(key.fileobj)
                closed += 1
    print("figure: the daemon closed %d of the idle connections within %.1f s" % (closed, time.time() - start),
          flush=True)
    check(closed == len(idle), "every idle connection is closed by the daemon (%d of %d)" % (closed, len(idle)))
    for s in idle:
        s.close()


def sigusr1_panic(d):
    d.play(CHORD)
    check(d.wait_notes(lambda n: len(n) == 3), "a chord of 3 notes sounds")
    idle = []
    for _ in range(40):                                      # the client table is full
        try:
            idle.append(d.connect(blocking=False))
        except BlockingIOError:
            break
    d.proc.send_signal(signal.SIGUSR1)
    check(d.wait_notes(lambda n: not n), "SIGUSR1 ended the chord while the control socket is full")
    time.sleep(0.2)
    check(d.alive() and "SIGUSR1: ending every note on every output" in d.log_text(),
          "SIGUSR1 is logged and the daemon runs on")
    for s in idle:
        s.close()


def concurrent_sockets(d, count=1000):
    socks, refused = [], 0
    start = time.time()
    for _ in range(count):
        try:
            s = d.connect(blocking=False)
            s.send(b"status\n")
            socks.append(s)
        except (BlockingIOError, ConnectionRefusedError, BrokenPipeError, ConnectionResetError):
            refused += 1
    sel = selectors.DefaultSelector()
    buffers = {}
    for s in socks:
        sel.register(s, selectors.EVENT_READ)
        buffers[s] = b""
    answered = 0
    while buffers and time.time() - start < 120:
        for key, _ in sel.select(1.0):
            s = key.fileobj
            try:
                chunk = s.recv(65536)
            except (ConnectionResetError, BlockingIOError):
                chunk = b""
            buffers[s] += chunk
            if b"\n" in buffers[s] or not chunk:
                line = buffers.pop(s).split(b"\n")[0]
                try:
                    answered += json.loads(line).get("ok") is True
                except ValueError:
                    pass
                sel.unregister(s)
                s.close()
    for s in buffers:
        s.close()
    print("figure: %d concurrent status connections: %d answered, %d refused, in %.2f s"
          % (count, answered, refused, time.time() - start), flush=True)
    check(answered == count, "%d concurrent status connections all get a status (%d)" % (count, answered))


def concurrent_processes(d, count=1000):
    start = time.time()
    procs = []
    for _ in range(count):
        procs.append(subprocess.Popen([d.binary, "status", "--json", "--config", d.conf],
                                      stdout=subprocess.DEVNULL, stderr=subprocess.PIPE))
    failures = []
    for p in procs:
        _, err = p.communicate(timeout=300)
        if p.returncode != 0:
            failures.append(err.decode(errors="replace").strip())
    print("figure: %d concurrent 'latticed status' processes finished in %.2f s, %d failed"
          % (count, time.time() - start, len(failures)), flush=True)
    check(not failures, "%d concurrent 'latticed status' all answered (%s)" % (count, failures[:3]))


def main():
    binary = binary_from_argv()
    tmp = tempfile.mkdtemp(prefix="latticed-attack-")
    steps = [crashing_clients, protocol_edges, flooding_clients, idle_clients_then_panic,
             sigusr1_panic, concurrent_sockets, concurrent_processes]
    for step in steps:
        print("== %s" % step.__name__, flush=True)
        d = Daemon(binary, os.path.join(tmp, step.__name__))
        if not check(d.start(), "%s: the daemon starts" % step.__name__):
            d.stop()
            print(d.log_text())
            continue
        try:
            step(d)
        except Exception as e:     # a dead daemon refuses connections: that is a failure, go on
            check(False, "%s: %s: %s" % (step.__name__, type(e).__name__, e))
        finally:
            alive = d.alive()
            rc = d.stop()
            check(alive and rc == 0, "%s: the daemon ran to the end and stopped cleanly (exit %s)"
                  % (step.__name__, rc))
            if not alive or rc != 0:
                print("---- log\n" + d.log_text()[-3000:])
    return summary()


if __name__ == "__main__":
    sys.exit(main())
