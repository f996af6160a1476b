#!/usr/bin/env python3
"""`latticed render` onto files that are not its own, and odd inputs.

  files:  a FIFO (read here), a character device (made with mknod as root;
          else /dev/null, checked to stay a device), a symbolic link to
          /proc/self/fd/1, a link to a regular file, a regular file with its
          mode, an empty output name
  sticky: (root only, else exit 77) another user's symbolic link in a
          sticky world-writable directory is refused and its target kept;
          root's own link there is followed
  odd:    a hanging note whose track ends more than 2^28 ticks before the
          file's last event; tempo 0
  large:  a file whose output is larger than what render keeps in memory
          (4 MB; the rest waits in a scratch file): the same bytes onto a
          regular file, standard output and a FIFO, every track's note-ons
          in that track, every note ended; with TMPDIR unusable, the same
          bytes all the same (kept in memory) and a warning naming it

Sources: Standard MIDI File 1.0 (MThd/MTrk chunks, big-endian lengths,
variable-length delta times of at most 0x0FFFFFFF, meta FF 2F 00 End of
Track, FF 51 03 tempo in microseconds per quarter note, running status);
MIDI 1.0 (9n note-on, 8n note-off, velocity 0 = note-off); mknod(2) and
devices.txt of the Linux kernel (1,3 is the null device); proc(5) and
fs.protected_symlinks for the sticky-directory rule.  What is refused and
what is written in place is our rule (latticed(8), render).
Usage: render_attacks.py LATTICED_BINARY [files|sticky|odd|large]
"""
import os
import stat
import struct
import subprocess
import sys
import tempfile
import threading
import time

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
sys.path.insert(1, os.path.dirname(os.path.dirname(os.path.abspath(__file__))))
from daemon_harness import binary_from_argv, check, summary  # noqa: E402
from render_bench import make_file  # noqa: E402

CONFIG = "[lattice]\nseeds = 1 3 5 7\nchoose = 2\n\n[output synth]\nmethod = bend\nchannels = 2-9\n"
VLQ_MAX = 0x0FFFFFFF


def vlq(n):
    out = [n & 0x7F]
    n >>= 7
    while n:
        out.append(0x80 | (n & 0x7F))
        n >>= 7
    return bytes(reversed(out))


def track(events):
    """events: (delta, bytes); End of Track appended."""
    body = b"".join(vlq(d) + e for d, e in events) + vlq(0) + b"\xff\x2f\x00"
    return b"MTrk" + struct.pack(">I", len(body)) + body


def smf(fmt, tracks, division=96):
    return b"MThd" + struct.pack(">IHHH", 6, fmt, len(tracks), division) + b"".join(tracks)


def parse(data):
    """-> list of tracks, each a list of (tick, status, bytes); raises on bad input."""
    assert data[:4] == b"MThd"
    _, _, ntracks, _ = struct.unpack(">IHHH", data[4:14])
    pos, tracks = 14, []
    for _ in range(ntracks):
        assert data[pos:pos + 4] == b"MTrk"
        (length,) = struct.unpack(">I", data[pos + 4:pos + 8])
        end, pos, tick, status, events = pos + 8 + length, pos + 8, 0, 0, []
        while pos < end:
            delta = 0
            while True:
                b = data[pos]
                pos += 1
                delta = (delta << 7) | (b & 0x7F)
                if not b & 0x80:
                    break
            tick += delta
            if data[pos] == 0xFF:
                n = data[pos + 2]     # meta lengths here are < 128
                events.append((tick, 0xFF, data[pos + 1:pos + 3 + n]))
                pos += 3 + n
                continue
            if data[pos] & 0x80:
                status = data[pos]
                pos += 1
            size = 1 if status & 0xF0 in (0xC0, 0xD0) else 2
            events.append((tick, status, data[pos:pos + size]))
            pos += size
        tracks.append(events)
    return tracks


def unpaired_notes(tracks):
    """Note-ons without a later note-off, all tracks merged in tick order."""
    merged = sorted((e for t in tracks for e in t), key=lambda e: e[0])
    held = {}
    for tick, status, data in merged:
        kind, ch = status & 0xF0, status & 0x0F
        if kind == 0x90 and data[1] > 0:
            held[(ch, data[0])] = held.get((ch, data[0]), 0) + 1
        elif kind in (0x80, 0x90) and held.get((ch, data[0])):
            held[(ch, data[0])] -= 1
        elif kind == 0xB0 and data[0] == 123:
            held = {k: v for k, v in held.items() if k[0] != ch}
    return {k: v for k, v in held.items() if v}


class Render:
    def __init__(self, binary, tmp):
        self.binary, self.tmp = binary, tmp
        self.conf = os.path.join(tmp, "render.conf")
        with open(self.conf, "w") as f:
            f.write(CONFIG)
        self.input = os.path.join(tmp, "in.mid")
        with open(self.input, "wb") as f:
            f.write(smf(0, [track([(0, b"\x90\x3c\x64"), (96, b"\x80\x3c\x40")])]))
        reference = os.path.join(tmp, "reference.mid")
        rc, _, err = self.run(self.input, reference)
        assert rc == 0, err
        with open(reference, "rb") as f:
            self.expected = f.read()

    def run(self, src, dst, timeout=30, **kw):
        r = subprocess.run([self.binary, "render", "--config", self.conf, src, dst],
                           capture_output=True, timeout=timeout, **kw)
        return r.returncode, r.stdout, r.stderr.decode(errors="replace")


def fifo_reader(path, got, done):
    fd = os.open(path, os.O_RDONLY | os.O_NONBLOCK)   # does not wait for a writer
    # longer than a render may take (r.run's 120 s): a reader that left
    # first would leave the render waiting in open() for a reader forever,
    # as a FIFO open does (fifo(7)), and fail a slow machine's run
    deadline = time.time() + 150
    data, seen_writer = b"", False
    while time.time() < deadline:
        try:
            chunk = os.read(fd, 65536)
        except BlockingIOError:
            seen_writer = True
            time.sleep(0.01)
            continue
        if chunk:
            data += chunk
            seen_writer = True
        elif seen_writer and data:
            break                                    # the writer closed
        else:
            time.sleep(0.01)
    os.close(fd)
    got.append(data)
    done.set()


def files(r):
    tmp = r.tmp
    # a FIFO: written through, still a FIFO
    fifo = os.path.join(tmp, "synth.fifo")
    os.mkfifo(fifo)
    got, done = [], threading.Event()
    reader = threading.Thread(target=fifo_reader, args=(fifo, got, done), daemon=True)
    reader.start()
    time.sleep(0.1)
    rc, _, err = r.run(r.input, fifo)
    done.wait(25)
    check(rc == 0, "render onto a FIFO: exit 0 (%s)" % err.strip())
    check(stat.S_ISFIFO(os.lstat(fifo).st_mode), "the FIFO is still a FIFO")
    check(got and got[0] == r.expected, "the FIFO's reader got the whole file (%d of %d bytes)"
          % (len(got[0]) if got else 0, len(r.expected)))

    # a character device: the null device (1,3)
    device = os.path.join(tmp, "null")
    try:
        os.mknod(device, 0o666 | stat.S_IFCHR, os.makedev(1, 3))
        with open(device, "wb") as f:
            f.write(b"probe")          # a file system mounted nodev refuses this
    except OSError:
        device = "/dev/null"
    before = os.lstat(device)
    check(stat.S_ISCHR(before.st_mode), "%s is a character device before" % device)
    rc, _, err = r.run(r.input, device)
    after = os.lstat(device)
    check(rc == 0, "render onto the character device %s: exit 0 (%s)" % (device, err.strip()))
    check(stat.S_ISCHR(after.st_mode) and after.st_rdev == before.st_rdev and
          stat.S_IMODE(after.st_mode) == stat.S_IMODE(before.st_mode),
          "%s is still the same character device, mode %o" % (device, stat.S_IMODE(after.st_mode)))
    if device == "/dev/null" and not stat.S_ISCHR(after.st_mode) and os.geteuid() == 0:
        os.unlink(device)              # put the machine's /dev/null back
        os.mknod(device, 0o666 | stat.S_IFCHR, os.makedev(1, 3))

    # a symbolic link to /proc/self/fd/1: the bytes come out on standard output
    link = os.path.join(tmp, "stdout.mid")
    os.symlink("/proc/self/fd/1", link)
    rc, out, err = r.run(r.input, link)
    check(rc == 0 and out == r.expected, "render onto a link to /proc/self/fd/1 writes standard output "
          "(exit %d, %d bytes) %s" % (rc, len(out), err.strip()))
    check(os.path.islink(link) and os.readlink(link) == "/proc/self/fd/1", "the link is still the link")

    # a link to a regular file: that file is replaced, the link stays
    target = os.path.join(tmp, "take.mid")
    with open(target, "wb") as f:
        f.write(b"old take")
    os.chmod(target, 0o640)
    link = os.path.join(tmp, "latest.mid")
    os.symlink("take.mid", link)
    rc, _, err = r.run(r.input, link)
    check(rc == 0 and open(target, "rb").read() == r.expected,
          "render through a link to a regular file replaces that file (%s)" % err.strip())
    check(os.path.islink(link) and stat.S_IMODE(os.stat(target).st_mode) == 0o640,
          "the link stays a link and the file keeps its mode 0640")
    leftovers = [n for n in os.listdir(tmp) if n.startswith(".")]
    check(not leftovers, "no temporary file is left behind (%s)" % leftovers)

    # a link to nothing, and an empty name: one clear line each
    dangling = os.path.join(tmp, "dangling.mid")
    os.symlink("nowhere/none.mid", dangling)
    rc, _, err = r.run(r.input, dangling)
    check(rc == 1 and "symbolic link to nothing" in err and os.path.islink(dangling),
          "a dangling link is refused and kept (%s)" % err.strip())
    rc, _, err = r.run(r.input, "")
    check(rc == 2 and "file name is empty" in err and "rename" not in err,
          "render in.mid '': exit 2, 'file name is empty' (%s)" % err.strip())


def sticky(r):
    if os.geteuid() != 0:
        print("SKIP: the sticky-directory check needs root (to own a link as another user)")
        sys.exit(77)
    shared = os.path.join(r.tmp, "shared")
    os.mkdir(shared)
    os.chmod(shared, 0o1777)
    victim = os.path.join(r.tmp, "root-only.mid")
    with open(victim, "wb") as f:
        f.write(b"precious")
    link = os.path.join(shared, "take.mid")
    os.symlink(victim, link)
    os.lchown(link, 65534, 65534)          # made by user nobody
    rc, _, err = r.run(r.input, link)
    check(rc == 1 and "another user" in err and "protected_symlinks" in err,
          "root refuses another user's link in a sticky world-writable directory (%s)" % err.strip())
    check(open(victim, "rb").read() == b"precious", "the file the link points at is untouched")
    check(os.path.islink(link), "the link is left as it was")
    os.unlink(link)
    os.symlink(victim, link)               # root's own link there is followed
    rc, _, err = r.run(r.input, link)
    check(rc == 0 and open(victim, "rb").read() == r.expected, "root's own link there is followed (%s)"
          % err.strip())


def odd(r):
    # format 1: track 0 holds a note-on that is never ended and ends at tick 0;
    # track 1 runs past 2^28 ticks, so the file's last tick is beyond one delta time
    late = smf(1, [track([(0, b"\x90\x3c\x64")]),
                   track([(VLQ_MAX, b"\xff\x01\x01a"), (0x200, b"\xff\x01\x01b")])])
    src = os.path.join(r.tmp, "late.mid")
    with open(src, "wb") as f:
        f.write(late)
    dst = os.path.join(r.tmp, "late-out.mid")
    rc, _, err = r.run(src, dst)
    check(rc == 0, "a hanging note more than 2^28 ticks before the end renders (%s)" % err.strip())
    check("more than %d ticks" % VLQ_MAX in err and "released from tick %d" % VLQ_MAX in err,
          "with a warning saying where and why (%s)" % err.strip())
    if rc == 0:
        tracks = parse(open(dst, "rb").read())
        offs = [e for e in tracks[0] if e[1] & 0xF0 == 0x80 or (e[1] & 0xF0 == 0x90 and e[2][1] == 0)]
        check(offs and offs[-1][0] == VLQ_MAX and not unpaired_notes(tracks),
              "the note-off is in its track at tick %d and every note ends (%s)" % (VLQ_MAX, offs[-1:]))

    # tempo 0: FF 51 03 00 00 00 at tick 0 in a format 0 file
    zero = smf(0, [track([(0, b"\xff\x51\x03\x00\x00\x00"), (0, b"\x90\x3c\x64"), (96, b"\x80\x3c\x40")])])
    src = os.path.join(r.tmp, "tempo0.mid")
    with open(src, "wb") as f:
        f.write(zero)
    rc, _, err = r.run(src, os.path.join(r.tmp, "tempo0-out.mid"))
    # the event's delta time starts at byte 22: MThd (14 bytes) + MTrk header (8)
    check(rc == 0 and "byte 22: tempo 0" in err and "warning" in err,
          "tempo 0 renders with a warning naming its byte (%s)" % err.strip())
    out = parse(open(os.path.join(r.tmp, "tempo0-out.mid"), "rb").read()) if rc == 0 else [[]]
    check((0, 0xFF, b"\x51\x03\x00\x00\x00") in out[0], "the tempo event is copied unchanged")


def note_ons(tracks):
    return [sum(1 for _, status, data in t if status & 0xF0 == 0x90 and data[1] > 0) for t in tracks]


def large(r):
    src = os.path.join(r.tmp, "large.mid")
    data = make_file(3_200_000)    # four players and a conductor, in time order across tracks
    with open(src, "wb") as f:
        f.write(data)
    dst = os.path.join(r.tmp, "large-out.mid")
    rc, _, err = r.run(src, dst, timeout=120)
    check(rc == 0, "a 3.2 MB file renders (%s)" % err.strip()[-200:])
    out = open(dst, "rb").read() if rc == 0 else b""
    check(len(out) > 4 << 20, "its output (%d bytes) is larger than the 4 MB kept in memory" % len(out))
    rc, stdout, err = r.run(src, "-", timeout=120)
    check(rc == 0 and stdout == out, "onto standard output: the same bytes (%d)" % len(stdout))
    fifo = os.path.join(r.tmp, "large.fifo")
    os.mkfifo(fifo)
    got, done = [], threading.Event()
    threading.Thread(target=fifo_reader, args=(fifo, got, done), daemon=True).start()
    time.sleep(0.1)
    rc, _, err = r.run(src, fifo, timeout=120)
    done.wait(25)
    check(rc == 0 and got and got[0] == out, "onto a FIFO: the same bytes (%d)" % len(got[0] if got else b""))
    if out:
        tracks_in, tracks_out = parse(data), parse(out)
        check(note_ons(tracks_out) == note_ons(tracks_in),
              "each track's note-ons stay in their track (%s)" % note_ons(tracks_out))
        check(not unpaired_notes(tracks_out), "every note ends")
    # no room for the scratch file: kept in memory, and the user is told
    target = os.path.join(r.tmp, "kept.mid")
    env = dict(os.environ, TMPDIR=os.path.join(r.tmp, "missing"))
    rc, _, err = r.run(src, target, timeout=120, env=env)
    told = [line for line in err.splitlines() if "TMPDIR" in line]
    check(rc == 0 and len(told) == 1 and "missing" in told[0] and "kept in memory" in told[0],
          "TMPDIR unusable: exit 0 with a warning naming it (%s)" % told)
    check(rc == 0 and open(target, "rb").read() == out, "and the same bytes")


def main():
    binary = binary_from_argv()
    parts = sys.argv[2:] or ["files", "odd", "large"]
    tmp = tempfile.mkdtemp(prefix="latticed-render-attack-")
    r = Render(binary, tmp)
    for part in parts:
        print("== %s" % part, flush=True)
        {"files": files, "sticky": sticky, "odd": odd, "large": large}[part](r)
    return summary()


if __name__ == "__main__":
    sys.exit(main())
