"""Attacks on `latticed view`: wrong tokens, requests too large or from
elsewhere, a browser that never reads, 100 clients at once, a peer on the
daemon's socket that sends garbage, a view that stops reading (the daemon
must not care), and the command line.  The view must keep serving or fail
with one clear line; the daemon must never be slowed or stopped by it.

Sources of the facts used:
  - RFC 9110 (HTTP semantics): 403, 404, 405 with Allow, 413, 421.
  - MIDI 1.0: 9n note-on, 8n note-off (the notes played into the daemon).
  - What the view promises (latticed(8), "latticed view"; view_http.h) is
    our rule; each check names it.
"""
import json
import os
import signal
import socket
import subprocess
import sys
import tempfile
import threading
import time

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
import daemon_harness as harness  # noqa: E402
from daemon_harness import check  # noqa: E402
from view_harness import EventStream, FakeDaemon, View, free_port  # noqa: E402


def chord(d, keys, on=True):
    d.play([b for k in keys for b in ((0x90, k, 100) if on else (0x80, k, 0))])


def check_tokens(binary, d, tmp):
    v = View(binary, d.socket, tmp, extra=["--control"], name="view-control")
    check(v.start(), "latticed view --control starts")
    token = v.token()
    check(token is not None and len(token) == 32, "it prints a token of 32 hex digits")
    for _ in range(50):
        status, reply = v.control("panic", "0" * 32)
    check(status == 403 and "token" in reply.get("error", ""), "a wrong token: 403 (our rule)")
    status, reply = v.control("panic", token[:-1])
    check(status == 403, "a token one character short: 403")
    status, reply = v.control("panic", None)
    check(status == 403, "no token: 403")
    time.sleep(0.2)
    refusals = v.log_text().count("control request from 127.0.0.1 refused")
    check(refusals == 1, "52 refusals in a second make one log line (%d)" % refusals)
    check("panic requested" not in d.log_text(), "nothing refused reached the daemon")
    status, reply = v.control("preset 0", token)
    check(status == 200 and reply.get("ok") is True, "the right token: the daemon does it (%s)" % reply.get("message"))
    status, reply = v.control("reload", token)
    check(status == 400, "a request the page may not make (reload): 400")
    status, reply = v.control("panic", token, origin="http://elsewhere.example")
    check(status == 403, "a POST whose Origin is another site: 403")
    status, _, _ = v.request("POST", "/control", body=b"x" * 5000,
                             headers={"X-Latticed-Token": token, "Content-Type": "text/plain"})
    check(status == 413, "a body of 5000 bytes: 413")
    status, headers, _ = v.request("PUT", "/")
    check(status == 405 and "GET" in headers.get("Allow", ""), "PUT: 405 with Allow")
    status, _, _ = v.get("/", headers={"Host": "rebound.example:%d" % v.port})
    check(status == 421, "a Host that is not the loopback, on a loopback view: 421")
    status, headers, _ = v.get("/")
    csp = headers.get("Content-Security-Policy", "")
    check(status == 200 and "script-src 'self'" in csp and "default-src 'none'" in csp,
          "the page comes with a Content-Security-Policy")
    check(not any(h.lower().startswith("access-control") for h in headers), "no CORS header")
    big = "a" * 20000
    try:
        status = v.get("/", headers={"X-Big": big})[0]
    except OSError:
        status = "closed"
    check(status in (431, 413, 400, "closed"), "20 KB of headers are refused (%s)" % status)
    check(v.get("/state")[0] == 200, "and the view still serves")
    v.stop()
    ro = View(binary, d.socket, tmp, name="view-readonly")
    ro.start()
    status, reply = ro.control("panic", "whatever-token-given-here")
    check(status == 403 and "read-only" in reply.get("error", ""), "without --control every control request: 403, read-only")
    ro.stop()


def check_slow_and_many(binary, d, tmp):
    v = View(binary, d.socket, tmp, name="view-load")
    check(v.start(), "a view for the load tests starts")
    stuck = EventStream(v.port, rcvbuf=2048, read=False)
    reader = EventStream(v.port)
    time.sleep(0.3)
    worst = 0.0
    for i in range(400):
        chord(d, [48 + i % 24, 52 + i % 24])
        chord(d, [48 + i % 24, 52 + i % 24], on=False)
        if i % 40 == 0:
            t0 = time.time()
            v.get("/state")
            worst = max(worst, time.time() - t0)
        time.sleep(0.002)
    # The view is sent at most 50 states a second (subscription.h), so its
    # streams get at most that many pages: 4 s more of changes fill the stuck
    # stream's buffers (its 2 KB and the view's 16 KB) for certain.
    end = time.time() + 4
    while time.time() < end:
        chord(d, [60, 64])
        time.sleep(0.01)
        chord(d, [60, 64], on=False)
        time.sleep(0.01)
    stuck_since = time.time()
    check(worst < 2.0, "a browser that never reads its stream: /state still answers (worst %.0f ms)" % (worst * 1000))
    st = v.wait_state(lambda s: s["lit"] == [])
    check(st is not None and st["lit"] == [], "the view followed every note to the end")
    # our rule: a page is sent each change of what sounds, at most 50 a second
    check(len(reader.messages) > 50 and not reader.closed, "a reading stream got %d messages" % len(reader.messages))

    # 100 clients at once: half fetch the page, half hold an event stream
    results = []

    def fetch():
        try:
            results.append(v.get("/", timeout=15)[0])
        except OSError as e:
            results.append(type(e).__name__)

    streams = []
    threads = [threading.Thread(target=fetch) for _ in range(50)]
    for i in range(50):
        try:
            streams.append(EventStream(v.port))
        except OSError:
            pass
    for t in threads:
        t.start()
    for t in threads:
        t.join()
    served = results.count(200)
    print("100 clients at once: %d of 50 page loads served (%s), %d streams opened" %
          (served, ", ".join(sorted({str(r) for r in results if r != 200})) or "no refusals", len(streams)))
    check(v.alive(), "the view lives through 100 clients at once")
    check(served >= 40, "open pages do not keep page loads out: %d of 50 served" % served)
    time.sleep(0.5)
    live = [s for s in streams if s.messages and not s.closed]
    check(len(live) <= 24 - 2, "at most 24 event streams at once, 2 held already (%d more live)" % len(live))
    for s in streams:
        s.close()
    reader.close()
    time.sleep(1.5)
    check(v.get("/state")[0] == 200, "once they leave, a new client is served at once")
    # the one that never read: closed by the view once it took nothing for 30 s
    end = stuck_since + 45
    while time.time() < end and "took nothing for its time limit" not in v.log_text():
        time.sleep(0.2)
    check("closed a connection from 127.0.0.1 that took nothing" in v.log_text(),
          "the stream that never read is closed by the view after its 30 s limit (%.0f s), with a log line"
          % (time.time() - stuck_since))
    stuck.close()
    log = v.log_text()
    check(log.count("view: http:") <= 4, "the refusals make few log lines (%d)" % log.count("view: http:"))
    v.stop()


def garbage_scripts():
    def say(data):
        return lambda conn, n: (conn.sendall(data), time.sleep(0.5))
    return [
        ("not JSON", say(b"hello, this is not latticed\n"), "not JSON"),
        ("JSON without an event", say(b'{"ok":true}\n'), "without an \"event\""),
        ("a state with a tone that is text",
         say(b'{"ok":true,"event":"state","generation":0,"presets":1,"preset":{"index":0,"name":"x"},'
             b'"root":{"slot":0,"label":"home"},"config":null,'
             b'"outputs":[{"index":0,"notes":[{"id":1,"tone":"three","preset":0,"generation":0}]}]}\n'),
         "\"tone\" is missing or not a whole number"),
        ("a note before the state", say(b'{"event":"note_on","output":0,"id":1,"tone":1,"preset":0,"generation":0}\n'),
         "before the state"),
        ("2 MiB without a newline", say(b"x" * (2 << 20)), "longer than"),
        ("binary bytes", say(bytes(range(256)) * 4 + b"\n"), "not JSON"),
        ("nothing at all", lambda conn, n: time.sleep(7), "sent no state within"),
    ]


def check_garbage(binary, tmp):
    path = os.path.join(tmp, "fake.sock")
    for name, script, want in garbage_scripts():
        fake = FakeDaemon(path, script)
        v = View(binary, path, tmp, name="view-garbage")
        v.start()
        end = time.time() + 12
        while time.time() < end and want not in v.log_text():
            time.sleep(0.05)
        log = v.log_text()
        line = [ln for ln in log.splitlines() if want in ln]
        check(bool(line) and path in line[0], "%s: one clear line naming the socket: %s" % (name, line[0][:150] if line else log[-300:]))
        st = v.state()
        check(st is not None and st["daemon"] == "down", "%s: the page says latticed is not there" % name)
        time.sleep(1.0)
        check(v.alive() and v.get("/")[0] == 200, "%s: the view keeps serving" % name)
        check(fake.connections >= 2, "%s: it tries again by itself (%d connections)" % (name, fake.connections))
        check(log.count(want) <= 2, "%s: the same trouble is not logged on every retry" % name)
        v.stop()
        fake.stop()


def check_view_stopped(binary, d, tmp):
    """A view that stops reading (SIGSTOP): the daemon drops it and plays on.

    The view takes states (`subscribe states`: at most 50 a second), so to
    make them pile up fast each carries many notes: twelve held while a
    thirteenth comes and goes."""
    v = View(binary, d.socket, tmp, name="view-stopped")
    v.start()
    v.wait_state(lambda s: s["daemon"] == "up")
    v.proc.send_signal(signal.SIGSTOP)
    d.notes()
    before = d.sounding.note_ons
    held = list(range(60, 72))
    chord(d, held)
    t0 = time.time()
    rounds = 0
    while time.time() - t0 < 60 and "dropped: it fell behind" not in d.log_text():
        chord(d, [72])
        time.sleep(0.004)
        chord(d, [72], on=False)
        time.sleep(0.004)
        rounds += 1
    chord(d, held, on=False)
    d.wait_notes(lambda n: d.sounding.note_ons - before >= len(held) + rounds and not n, 10)
    check("subscriber" in d.log_text() and "dropped: it fell behind" in d.log_text(),
          "the daemon drops the stopped view's subscription with a log line (after %d changes, %.1f s)"
          % (2 * rounds, time.time() - t0))
    check(d.sounding.note_ons - before == len(held) + rounds and not d.notes(),
          "every one of its %d note-ons reached the synth, every note ended" % (len(held) + rounds))
    t1 = time.time()
    ok = d.request(b"status").get("ok")
    check(ok and time.time() - t1 < 1.0, "the daemon answers status at once (%.0f ms)" % ((time.time() - t1) * 1000))
    print("%d changes in %.1f s with the view stopped" % (2 * rounds, t1 - t0))
    v.proc.send_signal(signal.SIGCONT)
    st = v.wait_state(lambda s: s["daemon"] == "up", 15)
    check(st is not None and st["daemon"] == "up", "SIGCONT: the view subscribes again by itself")
    v.stop()


def check_command_line(binary, tmp):
    def run(*args):
        r = subprocess.run([binary, "view"] + list(args), capture_output=True, text=True, timeout=20)
        return r.returncode, r.stdout, r.stderr
    code, out, _ = run("--help")
    check(code == 0 and "--listen ADDR:PORT" in out and "7316" in out, "view --help: 0, names --listen and the port")
    code, _, err = run("--listen", "nowhere")
    check(code == 2 and "expected ADDR:PORT" in err, "a bad --listen: 2 and what was expected")
    code, _, err = run("--token-file", "/dev/null")
    check(code == 2 and "--control" in err, "--token-file without --control: 2")
    short = os.path.join(tmp, "short.token")
    with open(short, "w") as f:
        f.write("abc\n")
    os.chmod(short, 0o600)
    code, _, err = run("--control", "--token-file", short, "--socket", "/nonexistent")
    check(code == 1 and short in err and "16 to 127" in err, "a token file with a short token: 1, one line naming it")
    taken = socket.socket()
    taken.bind(("127.0.0.1", 0))
    taken.listen(1)
    code, _, err = run("--socket", "/nonexistent", "--listen", "127.0.0.1:%d" % taken.getsockname()[1])
    check(code == 1 and "cannot listen" in err, "a port already taken: 1, %s" % err.strip()[:100])
    taken.close()
    good = os.path.join(tmp, "good.token")
    with open(good, "w") as f:
        f.write("a-token-of-our-own-choosing\n")
    os.chmod(good, 0o644)
    v = View(binary, "/nonexistent/socket", tmp, extra=["--control", "--token-file", good], name="view-tokenfile")
    v.start()
    log = v.log_text()
    check("can be read by other users" in log and "a-token-of-our-own" not in log,
          "a token file others can read gets a warning; its token is not printed")
    st = v.state()
    check(st and st["daemon"] == "down" and "nothing answers at /nonexistent/socket" in st["message"],
          "no daemon: the page says so plainly (%s)" % (st["message"] if st else None))
    v.stop()


def main():
    binary = harness.binary_from_argv()
    with tempfile.TemporaryDirectory(prefix="latticed-view-attacks-") as tmp:
        check_command_line(binary, tmp)
        d = harness.Daemon(binary, os.path.join(tmp, "daemon"))
        if not d.start():
            sys.exit("the daemon did not start:\n" + d.log_text())
        check_tokens(binary, d, tmp)
        check_slow_and_many(binary, d, tmp)
        check_view_stopped(binary, d, tmp)
        check(d.alive(), "the daemon is still running after all of it")
        d.stop()
        check_garbage(binary, tmp)
    return harness.summary()


if __name__ == "__main__":
    sys.exit(main())
