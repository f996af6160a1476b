#!/usr/bin/env python3
"""A recreated input FIFO: while `latticed run --backend raw` runs, its
input FIFO is removed and made again with mkfifo (as a script restarting
a player does).  latticed must read the new FIFO and say so in its log (our rule);
notes played into it reach the synth and end when released.  A second
round removes the FIFO while a writer still holds the old one open and
mid-chord: the old writer's notes must end (its source is gone), then the
new FIFO plays.

Checked with burst_lib's receiver model (MIDI 1.0 rules named there).

    burst_fifo_recreated.py LATTICED
"""
import os
import sys
import time

from burst_lib import Daemon, check, check_no_stuck, finish


def wait_log(d, text, times=1, timeout=10.0):
    end = time.time() + timeout
    while time.time() < end:
        if d.log_text().count(text) >= times:
            return True
        time.sleep(0.05)
    return False


def open_writer(path, timeout=5.0):
    """A writer on the FIFO, once latticed has it open for reading (ENXIO
    until then: POSIX open(2) of a FIFO with O_NONBLOCK and no reader)."""
    end = time.time() + timeout
    while True:
        try:
            return os.open(path, os.O_WRONLY | os.O_NONBLOCK)
        except OSError:
            if time.time() > end:
                return None
            time.sleep(0.05)


def recreate(d):
    os.unlink(d.in_path)
    os.mkfifo(d.in_path)


def main():
    d = Daemon(sys.argv[1], [("a", "bend", "file")])
    a = d.synths["a"]
    try:
        d.play(bytes([0x90, 57, 90, 0x80, 57, 0]))
        d.settle()
        check(a.note_ons == 1 and not a.stuck(), "the first FIFO plays")
        os.close(d.player)              # the player goes; latticed reopens the FIFO by name
        check(wait_log(d, "source 0 gone"), "the writer's leaving is logged")
        time.sleep(0.3)

        # 1. removed and made again, no writer on the old one
        recreate(d)
        check(wait_log(d, "made again"), "the log says the input FIFO was made again and reopened")
        d.player = open_writer(d.in_path)
        if not check(d.player is not None, "latticed has the new FIFO open for reading"):
            return finish()
        d.play(bytes([0x90, 60, 90]))
        d.settle()
        check(a.note_ons == 2, "a note played into the new FIFO reaches the synth (%d note-ons)" % a.note_ons)
        d.play(bytes([0x80, 60, 0]))
        d.settle()
        check_no_stuck(d, "new FIFO")

        # 2. removed and made again while a writer holds the old one mid-chord
        d.play(bytes([0x90, 64, 90, 0x90, 67, 90]))
        d.settle()
        check(len(a.stuck()) == 2, "the old writer's chord sounds (%s)" % a.stuck())
        old = d.player
        recreate(d)
        check(wait_log(d, "made again", times=2), "the second recreation is logged too")
        d.settle()
        check_no_stuck(d, "old FIFO replaced mid-chord: the old writer's notes ended")
        d.player = open_writer(d.in_path)
        os.close(old)
        if not check(d.player is not None, "latticed has the second new FIFO open for reading"):
            return finish()
        d.play(bytes([0x90, 62, 90, 0x80, 62, 0]))
        d.settle()
        check(a.note_ons == 5, "the new FIFO plays after the replacement (%d note-ons)" % a.note_ons)
        check_no_stuck(d, "after the replacement")
        rc = d.stop()
        check(rc == 0, "SIGTERM: exit status 0 (%s)" % rc)
    finally:
        d.close()
    return finish()


if __name__ == "__main__":
    sys.exit(main())
