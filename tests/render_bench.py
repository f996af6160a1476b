#!/usr/bin/env python3
"""Benchmark: `latticed render` on generated MIDI files; prints figures only.

  render_bench.py LATTICED_BINARY SOURCE_DIR WORKDIR [--sizes MB,MB,...]

Generates (seeded, not committed) a format 1 file of about 1 MB (or each
size given, default 1): four tracks of overlapping chords and melodies on
channel 1 with the sustain pedal, the pitch wheel, a controller stream and
tempo changes; a larger file repeats the 1 MB one's tracks end to end.  It
renders each with each method and prints wall time, CPU time, the peak
resident memory of the latticed process (GNU time, else getrusage of the
child) and that memory beside the goal of twice the input plus 16 MB.  It
fails only if a render fails; the figures are for people, not a pass/fail
limit.
"""
import os
import random
import re
import subprocess
import sys
import time


def vlq(value):
    out = [value & 0x7F]
    value >>= 7
    while value:
        out.insert(0, 0x80 | (value & 0x7F))
        value >>= 7
    return bytes(out)


def track(events):
    events.sort(key=lambda e: e[0])
    out, last = bytearray(), 0
    for tick, raw in events:
        out += vlq(tick - last) + raw
        last = tick
    out += b"\x00\xFF\x2F\x00"
    return b"MTrk" + len(out).to_bytes(4, "big") + bytes(out)


def make_file(target_bytes):
    rng = random.Random(20261202)
    conductor = [(0, b"\xFF\x51\x03\x07\xA1\x20")]
    players = [[], [], [], []]
    size, tick = 0, 0
    while size < target_bytes:
        for p, events in enumerate(players):
            start = tick + rng.randrange(0, 60)
            if p == 0:
                for key in rng.sample(range(45, 70), 3):
                    length = rng.randrange(120, 960)
                    events.append((start, bytes([0x90, key, rng.randrange(1, 128)])))
                    events.append((start + length, bytes([0x80, key, 64])))
                    size += 8
            else:
                key = rng.randrange(57, 90)
                length = rng.randrange(30, 300)
                events.append((start, bytes([0x90, key, rng.randrange(1, 128)])))
                events.append((start + length, bytes([0x90, key, 0])))
                size += 8
            if p == 1 and rng.random() < 0.3:
                events.append((start + 10, bytes([0xE0, 0, rng.randrange(0x38, 0x48)])))
                size += 4
            if p == 2 and rng.random() < 0.5:
                events.append((start + 5, bytes([0xB0, 1, rng.randrange(128)])))
                size += 4
        if rng.random() < 0.05:
            players[0].append((tick, bytes([0xB0, 64, 127])))
            players[0].append((tick + 200, bytes([0xB0, 64, 0])))
            size += 8
        if rng.random() < 0.01:
            conductor.append((tick, b"\xFF\x51\x03" + rng.randrange(300000, 800000).to_bytes(3, "big")))
        tick += 120
    tracks = [conductor] + players
    head = b"MThd" + (6).to_bytes(4, "big") + (1).to_bytes(2, "big") + \
        len(tracks).to_bytes(2, "big") + (480).to_bytes(2, "big")
    return head + b"".join(track(t) for t in tracks)


def make_large(target_bytes):
    """The 1 MB file's tracks, each repeated end to end (its running status
    and delta times carry on from one copy to the next)."""
    base = make_file(min(target_bytes, 1_000_000))
    copies = max(1, round(target_bytes / len(base)))
    if copies == 1:
        return base
    head, pos, tracks = base[:14], 14, []
    while pos < len(base):
        length = int.from_bytes(base[pos + 4:pos + 8], "big")
        body = base[pos + 8:pos + 8 + length]
        assert body.endswith(b"\x00\xFF\x2F\x00")
        body = body[:-4] * copies + b"\x00\xFF\x2F\x00"
        tracks.append(b"MTrk" + len(body).to_bytes(4, "big") + body)
        pos += 8 + length
    return head + b"".join(tracks)


def render(binary, conf, src, dst):
    """Runs one render; peak RSS through GNU time when it is installed,
    because the kernel carries a parent's peak across fork and exec into
    the child's getrusage figure (this script holds the generated file)."""
    cmd = [binary, "render", "-v", "--config", conf, src, dst]
    gnu_time = "/usr/bin/time" if os.path.exists("/usr/bin/time") else None
    if gnu_time:
        cmd = [gnu_time, "-f", "rss_kb=%M"] + cmd
    start = time.monotonic()
    proc = subprocess.Popen(cmd, stderr=subprocess.PIPE)
    err = proc.stderr.read().decode()
    _, status, usage = os.wait4(proc.pid, 0)
    wall = time.monotonic() - start
    proc.stderr.close()
    rc = os.waitstatus_to_exitcode(status)
    rss_mb = usage.ru_maxrss / 1024
    rss_note = " (upper bound: includes this script)"
    m = re.search(r"^rss_kb=(\d+)$", err, re.M)
    if m:
        rss_mb, rss_note = int(m.group(1)) / 1024, ""
        err = err[:m.start()] + err[m.end():]
    return rc, wall, usage, rss_mb, rss_note, err


def main():
    binary, source, work = sys.argv[1], sys.argv[2], sys.argv[3]
    sizes = [1]
    if len(sys.argv) == 6 and sys.argv[4] == "--sizes":
        sizes = [int(x) for x in sys.argv[5].split(",")]
    os.makedirs(work, exist_ok=True)
    base = open(os.path.join(source, "config", "latticed.conf")).read()
    failed = False
    for mb in sizes:
        data = make_large(mb * 1_000_000)
        src = os.path.join(work, "bench-%dmb.mid" % mb)
        with open(src, "wb") as f:
            f.write(data)
        bound = (2 * len(data) + (16 << 20)) / (1 << 20)
        print("input: %s, %d bytes (memory goal: 2 x input + 16 MB = %.1f MB)" % (src, len(data), bound))
        for method in ("bend", "mts", "mpe"):
            conf = os.path.join(work, "bench-%s.conf" % method)
            with open(conf, "w") as f:
                f.write(re.sub(r"^method = bend$", "method = " + method, base, flags=re.M))
            dst = os.path.join(work, "bench-%s-out.mid" % method)
            rc, wall, usage, rss_mb, rss_note, err = render(binary, conf, src, dst)
            if rc != 0:
                print("%s: render failed (exit %d): %s" % (method, rc, err))
                failed = True
                continue
            print("%-4s  wall %.3f s  cpu %.3f s  max RSS %.1f MB%s (%.2f x input)  output %d bytes"
                  % (method, wall, usage.ru_utime + usage.ru_stime, rss_mb, rss_note,
                     rss_mb * (1 << 20) / len(data), os.path.getsize(dst)))
            for line in err.strip().splitlines():
                print("      " + line)
            os.unlink(dst)
        os.unlink(src)
    return 1 if failed else 0


if __name__ == "__main__":
    sys.exit(main())
