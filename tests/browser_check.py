"""The live page in a real browser: Debian's Chromium, headless, driven by
Selenium (chromium-driver, python3-selenium), on `latticed view` attached
to a raw-backend daemon.

  1. A harmonic chord played into the input FIFO lights exactly its tones
     and its face, and the page names it (kind, seeds, proportion); a
     subharmonic one too; released, everything goes dark.
  2. The daemon killed (SIGKILL: no goodbye): the page says plainly that
     latticed is gone; started again: the page comes back by itself.
  3. Screenshots with a chord held, portrait and landscape phone sizes,
     and of the daemon gone, into the artefact directory.
  4. Figures (printed, never pass/fail): note-on written to the FIFO to the
     tone lit in the page, median and p99 over 200 notes; and the daemon's
     MIDI latency (bench/raw_latency.c) with nothing attached, with a bare
     subscriber, with a view and 10 event streams, with 10 pages open.

Sources of the facts used:
  - MIDI 1.0: 9n note-on, 8n note-off.
  - `latticed table --json` for the chords and the keys that play each tone
    (our rule: the page agrees with the table).
  - The W3C WebDriver protocol through Selenium; the DevTools
    Emulation.setDeviceMetricsOverride command for phone screen sizes.
  - Firefox (Debian's firefox-esr) is driven through its own Marionette
    protocol (length-prefixed JSON, WebDriver commands; Mozilla's
    Marionette documentation), since Debian 12 ships no geckodriver: the
    same chord, release and daemon-gone checks, and a screenshot.

Usage: browser_check.py LATTICED RAW_LATENCY ARTEFACT_DIR
"""
import base64
import json
import os
import signal
import socket
import statistics
import subprocess
import sys
import tempfile
import threading
import time

sys.path.insert(0, os.path.join(os.path.dirname(os.path.abspath(__file__)), "attack"))
import daemon_harness as harness  # noqa: E402
from daemon_harness import check  # noqa: E402
from view_harness import EventStream, View, free_port  # noqa: E402

from selenium import webdriver  # noqa: E402
from selenium.webdriver.chrome.service import Service  # noqa: E402

CHROMIUM_FLAGS = ["--headless", "--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run",
                  "--disable-background-networking", "--disable-component-update", "--disable-sync",
                  "--disable-background-timer-throttling", "--disable-renderer-backgrounding"]
PHONES = {"portrait": (412, 860), "landscape": (860, 412)}


def browser(profile):
    opts = webdriver.ChromeOptions()
    opts.binary_location = "/usr/bin/chromium"
    for flag in CHROMIUM_FLAGS + ["--user-data-dir=" + profile]:
        opts.add_argument(flag)
    return webdriver.Chrome(service=Service("/usr/bin/chromedriver"), options=opts)


def phone(drv, name):
    w, h = PHONES[name]
    drv.execute_cdp_cmd("Emulation.setDeviceMetricsOverride",
                        {"width": w, "height": h, "deviceScaleFactor": 2, "mobile": True})


PAGE_JS = """
        const q = (s) => Array.from(document.querySelectorAll(s));
        return {
          link: document.getElementById('link-text').textContent,
          gone: !document.getElementById('gone').hidden,
          goneText: document.getElementById('gone-title').textContent + ' ' +
                    document.getElementById('gone-text').textContent,
          chord: document.getElementById('chord-name').textContent,
          detail: document.getElementById('chord-detail').textContent,
          preset: document.getElementById('preset').textContent,
          tones: q('#lattice g.tone').length,
          lit: q('#lattice g.tone.lit').map((g) => Number(g.dataset.tone)).sort((a, b) => a - b),
          faces: q('#lattice polygon.chord.lit').map((p) => Number(p.dataset.chord)),
        };"""


def page(drv):
    """What the page shows now, read from its DOM."""
    return drv.execute_script(PAGE_JS)


def wait_page(drv, pred, timeout=10.0):
    end = time.time() + timeout
    p = page(drv)
    while time.time() < end and not pred(p):
        time.sleep(0.02)
        p = page(drv)
    return p


def keys_for(tab, tones):
    """A key in 57..84 for each tone (first found), from the table."""
    out = []
    for t in tones:
        out.append(next(k["key"] for k in tab["keys"] if k["tone"] == t and 57 <= k["key"] <= 84))
    return out


def play(d, keys, on=True):
    d.play([b for k in keys for b in ((0x90, k, 100) if on else (0x80, k, 0))])


def check_chord(drv, d, tab, kind, shots=None):
    index, chord = next((i, c) for i, c in enumerate(tab["chords"]) if c["kind"] == kind)
    keys = keys_for(tab, chord["tones"])
    play(d, keys)
    p = wait_page(drv, lambda p: p["lit"] == sorted(chord["tones"]) and p["faces"] == [index])
    proportion = ":".join(str(x) for x in chord["proportion"])
    check(p["lit"] == sorted(chord["tones"]),
          "%s chord %s (keys %s): exactly its tones %s light up (lit: %s)" % (kind, proportion, keys, chord["tones"], p["lit"]))
    check(p["faces"] == [index], "its face chord-%d lights, no other (%s)" % (index, p["faces"]))
    check(p["chord"] == proportion and kind in p["detail"] and chord["seeds"] in p["detail"],
          "the page names it: '%s' / '%s'" % (p["chord"], p["detail"]))
    for name in shots or []:
        phone(drv, name)
        time.sleep(0.6)
        path = os.path.join(ARTEFACTS, "view-%s.png" % name)
        drv.save_screenshot(path)
        print("screenshot: %s" % path)
    play(d, keys, on=False)
    p = wait_page(drv, lambda p: not p["lit"] and not p["faces"])
    check(not p["lit"] and not p["faces"] and p["chord"] == "\u2013", "released: every tone and face goes dark")


def check_gone_and_back(drv, d, v):
    d.proc.send_signal(signal.SIGKILL)
    d.proc.wait()
    t0 = time.time()
    p = wait_page(drv, lambda p: p["gone"] and p["link"] == "latticed gone")
    check(p["gone"] and "latticed" in p["goneText"] and "not running" in p["goneText"],
          "the daemon killed: within %.1f s the page says '%s'" % (time.time() - t0, p["goneText"].strip()))
    drv.save_screenshot(os.path.join(ARTEFACTS, "view-gone.png"))
    d.log.close()
    os.close(d.player)
    d.player = None
    check(d.start(), "the daemon starts again")
    t0 = time.time()
    p = wait_page(drv, lambda p: p["link"] == "live" and not p["gone"])
    check(p["link"] == "live" and not p["gone"], "the page comes back by itself in %.1f s" % (time.time() - t0))


LATENCY_JS = """
  if (!window.latticedLit) {
    window.latticedLit = [];
    new MutationObserver((list) => {
      for (const m of list) {
        const g = m.target;
        if (g.classList && g.classList.contains('tone') && g.classList.contains('lit'))
          window.latticedLit.push([Number(g.dataset.tone), Date.now()]);
      }
    }).observe(document.getElementById('lattice'), {subtree: true, attributes: true, attributeFilter: ['class']});
  }
  const out = window.latticedLit; window.latticedLit = []; return out;"""


def measure_page_latency(drv, d, tab, notes=200):
    drv.execute_script(LATENCY_JS)
    tones = [t["index"] for t in tab["tones"]]
    keys = keys_for(tab, tones)
    lat = []
    for i in range(notes):
        tone, key = tones[i % len(tones)], keys[i % len(keys)]
        t0 = time.time()
        play(d, [key])
        lit_at = None
        end = t0 + 5
        while lit_at is None and time.time() < end:
            for t, ms in drv.execute_script(LATENCY_JS):
                if t == tone:
                    lit_at = ms / 1000.0
            if lit_at is None:
                time.sleep(0.002)
        if lit_at is not None:
            lat.append((lit_at - t0) * 1000)
        play(d, [key], on=False)
        wait_page(drv, lambda p: not p["lit"], 5)
        time.sleep(0.01)
    lat.sort()
    if len(lat) < notes:
        check(False, "every one of %d notes lit its tone (%d did)" % (notes, len(lat)))
    med = statistics.median(lat)
    p99 = lat[min(len(lat) - 1, int(len(lat) * 0.99))]
    print("FIGURE page: note-on into the FIFO to its tone lit in Chromium, %d notes: median %.1f ms, p99 %.1f ms, worst %.1f ms"
          % (len(lat), med, p99, lat[-1]))
    return med, p99


def open_tabs(drv, port, count):
    """count more tabs of the page; a browser opens at most 6 event streams
    per host name, so half use 127.0.0.1 and half localhost."""
    first = drv.current_window_handle
    handles = []
    for i in range(count):
        drv.switch_to.new_window("tab")
        drv.get("http://%s:%d/" % ("127.0.0.1" if i % 2 == 0 else "localhost", port))
        handles.append(drv.current_window_handle)
    live = 0
    for h in handles:
        drv.switch_to.window(h)
        live += wait_page(drv, lambda p: p["link"] == "live" and p["tones"] > 0)["link"] == "live"
    drv.switch_to.window(first)
    check(live == count, "%d pages follow the benchmark's daemon" % live)
    return handles


def close_tabs(drv, handles):
    first = drv.window_handles[0]
    for h in handles:
        drv.switch_to.window(h)
        drv.close()
    drv.switch_to.window(first)


def raw_latency(raw, binary, kind, drv=None, tmp=None):
    """bench/raw_latency's figures with, on its daemon: nothing ("none"), a
    subscriber of our own that only reads ("subscriber"), a view with 10
    event streams read here ("streams") or with 10 pages in Chromium ("pages")."""
    env = dict(os.environ)
    if kind != "none":
        env["RAW_LATENCY_WAIT"] = "1"
    proc = subprocess.Popen([raw, binary, "2000"], stdin=subprocess.PIPE, stdout=subprocess.PIPE,
                            text=True, env=env)
    view, readers, tabs, sub = None, [], [], None
    if kind != "none":
        sock = proc.stdout.readline().split("control socket ", 1)[1].strip()
        if kind == "subscriber":
            sub = socket.socket(socket.AF_UNIX, socket.SOCK_STREAM)
            sub.connect(sock)
            sub.sendall(b"subscribe\n")
            threading.Thread(target=lambda: [None for _ in iter(lambda: sub.recv(65536), b"")],
                             daemon=True).start()
            time.sleep(0.3)
        else:
            view = View(binary, sock, tmp, name="view-bench")
            view.start()
            view.wait_state(lambda s: s["daemon"] == "up")
            if kind == "streams":
                readers = [EventStream(view.port) for _ in range(10)]
                end = time.time() + 10
                while time.time() < end and not all(r.messages for r in readers):
                    time.sleep(0.05)
                check(all(r.messages for r in readers), "10 event streams follow the benchmark's daemon")
            else:
                tabs = open_tabs(drv, view.port, 10)
        proc.stdin.write("go\n")
        proc.stdin.flush()
    out, _ = proc.communicate(timeout=300)
    line = [ln.strip() for ln in out.splitlines() if "median" in ln]
    what = {"none": "nothing attached", "subscriber": "a bare subscriber (no view)",
            "streams": "a view with 10 event streams (no browser)", "pages": "a view with 10 pages in Chromium"}[kind]
    print("FIGURE MIDI latency through the daemon, %s: %s" % (what, line[0] if line else out))
    for r in readers:
        r.close()
    if sub:
        sub.close()
    if tabs:
        close_tabs(drv, tabs)
    if view:
        view.stop()
    return line[0] if line else ""


class Marionette:
    """Firefox's remote protocol: "LENGTH:JSON" messages; a command is
    [0, id, name, parameters], its answer [1, id, error, result]."""

    def __init__(self, port, timeout=60):
        end = time.time() + timeout
        while True:
            try:
                self.sock = socket.create_connection(("127.0.0.1", port), timeout=30)
                break
            except OSError:
                if time.time() > end:
                    raise
                time.sleep(0.2)
        self.buf, self.id = b"", 0
        self.read()  # the greeting

    def read(self):
        while b":" not in self.buf:
            self.buf += self.sock.recv(65536)
        n, rest = self.buf.split(b":", 1)
        while len(rest) < int(n):
            rest += self.sock.recv(65536)
        self.buf = rest[int(n):]
        return json.loads(rest[:int(n)])

    def __call__(self, name, params=None):
        self.id += 1
        data = json.dumps([0, self.id, name, params or {}]).encode()
        self.sock.sendall(str(len(data)).encode() + b":" + data)
        answer = self.read()
        if answer[2]:
            raise RuntimeError("%s: %s" % (name, answer[2]))
        return answer[3]

    def page(self):
        return self("WebDriver:ExecuteScript", {"script": PAGE_JS, "args": []})["value"]

    def wait_page(self, pred, timeout=10.0):
        end = time.time() + timeout
        p = self.page()
        while time.time() < end and not pred(p):
            time.sleep(0.05)
            p = self.page()
        return p


def check_firefox(binary, d, tab, tmp):
    v = View(binary, d.socket, tmp, name="view-firefox")
    v.start()
    profile = os.path.join(tmp, "firefox")
    os.makedirs(profile)
    port = free_port()
    with open(os.path.join(profile, "user.js"), "w") as f:
        f.write('user_pref("marionette.port", %d);\n' % port)
    ff = subprocess.Popen(["/usr/bin/firefox-esr", "--headless", "--marionette", "--no-remote",
                           "--profile", profile], stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
    try:
        m = Marionette(port)
        m("WebDriver:NewSession", {"capabilities": {}})
        m("WebDriver:SetWindowRect", {"width": PHONES["portrait"][0], "height": PHONES["portrait"][1]})
        m("WebDriver:Navigate", {"url": "http://127.0.0.1:%d/" % v.port})
        p = m.wait_page(lambda p: p["link"] == "live" and p["tones"] == len(tab["tones"]))
        check(p["link"] == "live" and p["tones"] == len(tab["tones"]), "Firefox: the page is live and draws the lattice")
        index, chord = next((i, c) for i, c in enumerate(tab["chords"]) if c["kind"] == "harmonic")
        keys = keys_for(tab, chord["tones"])
        play(d, keys)
        p = m.wait_page(lambda p: p["lit"] == sorted(chord["tones"]) and p["faces"] == [index])
        check(p["lit"] == sorted(chord["tones"]) and p["faces"] == [index] and
              p["chord"] == ":".join(str(x) for x in chord["proportion"]),
              "Firefox: the chord lights exactly its tones and face, named %s" % p["chord"])
        shot = m("WebDriver:TakeScreenshot", {"full": False})["value"]
        with open(os.path.join(ARTEFACTS, "view-firefox.png"), "wb") as f:
            f.write(base64.b64decode(shot))
        play(d, keys, on=False)
        p = m.wait_page(lambda p: not p["lit"] and not p["faces"])
        check(not p["lit"] and not p["faces"], "Firefox: released, it goes dark")
        v.stop()
        p = m.wait_page(lambda p: p["link"] == "no connection to latticed view")
        check(p["link"] == "no connection to latticed view" and p["gone"],
              "Firefox: the view stopped, the page says it lost the view")
    finally:
        ff.kill()
        ff.wait()
        if v.alive():
            v.stop()


def main():
    global ARTEFACTS
    if len(sys.argv) < 4:
        sys.exit("usage: browser_check.py LATTICED RAW_LATENCY ARTEFACT_DIR")
    binary, raw, ARTEFACTS = os.path.abspath(sys.argv[1]), os.path.abspath(sys.argv[2]), sys.argv[3]
    os.makedirs(ARTEFACTS, exist_ok=True)
    with tempfile.TemporaryDirectory(prefix="latticed-browser-") as tmp:
        d = harness.Daemon(binary, os.path.join(tmp, "daemon"))
        if not d.start():
            sys.exit("the daemon did not start:\n" + d.log_text())
        tab = json.loads(subprocess.run([binary, "table", "--json", "--config", d.conf],
                                        capture_output=True, text=True, check=True).stdout)
        v = View(binary, d.socket, tmp)
        check(v.start(), "latticed view starts")
        drv = browser(os.path.join(tmp, "profile"))
        try:
            phone(drv, "portrait")
            drv.get("http://127.0.0.1:%d/" % v.port)
            p = wait_page(drv, lambda p: p["link"] == "live" and p["tones"] == len(tab["tones"]))
            check(p["link"] == "live" and p["tones"] == len(tab["tones"]),
                  "the page is live and draws the %d tones" % len(tab["tones"]))
            check(p["preset"] == "main", "it names the preset (%s)" % p["preset"])
            errors = [e for e in drv.get_log("browser") if e["level"] == "SEVERE"]
            check(not errors, "the page loads with no console error (%s)" % errors[:1])
            check_chord(drv, d, tab, "harmonic", shots=["portrait", "landscape"])
            check_firefox(binary, d, tab, tmp)
            phone(drv, "portrait")
            check_chord(drv, d, tab, "subharmonic")
            check_gone_and_back(drv, d, v)
            measure_page_latency(drv, d, tab)
            d.stop()
            v.stop()
            # twice each, interleaved: the machine's load changes meanwhile
            for _ in range(2):
                for kind in ("none", "subscriber", "streams", "pages"):
                    raw_latency(raw, binary, kind, drv=drv, tmp=tmp)
        finally:
            drv.quit()
            if d.alive():
                d.stop()
            if v.alive():
                v.stop()
    return harness.summary()


ARTEFACTS = "."

if __name__ == "__main__":
    sys.exit(main())
