#!/usr/bin/env python3
"""A synth that hangs up and connects again: three FIFO outputs (bend, mts,
mpe) read by synths that close their FIFO while a chord sounds under the
sustain pedal, as an unsubscribed synth keeps sounding what it got.  The
player lets go of the chord and the pedal while nobody listens; then the
synths open their FIFOs again.  latticed must end what it had sent them
before it sends the set-up again, so nothing is left sounding (our rule).

Checked with burst_lib's receiver model (MIDI 1.0: a note released under
the sustain pedal sounds until the pedal goes up; All Notes Off releases,
All Sound Off silences; sources there).

    burst_reconnect.py LATTICED
"""
import sys
import time

from burst_lib import Daemon, check, check_no_stuck, finish


def wait_log(d, text, times, timeout=10.0):
    end = time.time() + timeout
    while time.time() < end:
        if d.log_text().count(text) >= times:
            return True
        time.sleep(0.05)
    return False


def main():
    d = Daemon(sys.argv[1], [("b", "bend", "fifo"), ("m", "mts", "fifo"), ("p", "mpe", "fifo")])
    try:
        d.settle()
        d.play(bytes([0xB0, 64, 127, 0x90, 57, 90, 0x90, 60, 90, 0x90, 64, 90, 0x99, 36, 100]))
        d.settle()
        for name, synth in d.synths.items():
            check(len(synth.stuck()) == 4, "%s: the chord and a drum sound (%s)" % (name, synth.stuck()))
        for reader in d.readers.values():
            reader.hang_up()
        # released while nobody listens: the first writes find the readers gone
        d.play(bytes([0x80, 57, 0, 0x80, 60, 0, 0x80, 64, 0, 0x89, 36, 0, 0xB0, 64, 0]))
        check(wait_log(d, "went away; nothing listens now", 3), "latticed sees all three synths go")
        d.play(bytes([0x90, 67, 80, 0x80, 67, 0]))   # a note nobody hears
        time.sleep(0.3)
        for reader in d.readers.values():
            reader.connect_again()
        check(wait_log(d, "sending its set-up", 6), "the synths are connected again and get their set-up")
        d.settle()
        check_no_stuck(d, "after the synths came back")
        d.play(bytes([0x90, 62, 90, 0x80, 62, 0]))
        d.settle()
        for name, synth in d.synths.items():
            check(synth.note_ons == 5, "%s: a new note plays after the reconnection (%d note-ons)"
                  % (name, synth.note_ons))
        check_no_stuck(d, "after a new note")
        rc = d.stop()
        check(rc == 0, "SIGTERM: exit status 0 (%s)" % rc)
    finally:
        d.close()
    return finish()


if __name__ == "__main__":
    sys.exit(main())
