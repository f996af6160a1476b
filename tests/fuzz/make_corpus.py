#!/usr/bin/env python3
"""Writes the hand-made seed corpus of the fuzz targets (tests/fuzz/corpus/).

Each seed is a small scenario of our own, written byte by byte from the
standards: MIDI 1.0 messages (running status, real-time bytes, SysEx),
Standard MIDI Files (SMF 1.0 chunks, delta times as variable-length
quantities) and latticed.conf text.  The files are committed; run this
again only to change them:  python3 tests/fuzz/make_corpus.py
"""
import os
import struct

HERE = os.path.dirname(os.path.abspath(__file__))


def write(target, name, data):
    d = os.path.join(HERE, "corpus", target)
    os.makedirs(d, exist_ok=True)
    if isinstance(data, str):
        data = data.encode()
    with open(os.path.join(d, name), "wb") as f:
        f.write(bytes(data))


# ---- fuzz_engine: 6 header bytes (see fuzz_engine.c) + a MIDI stream ----------

def on(ch, key, vel=100):
    return [0x90 | ch, key, vel]


def off(ch, key, vel=0):
    return [0x80 | ch, key, vel]


def cc(ch, num, val):
    return [0xB0 | ch, num, val]


def bend(ch, value):
    return [0xE0 | ch, value & 0x7F, value >> 7]


def chord_piece(ch=0):
    """Chords, sustain pedal, wheel, mod wheel, expression, pressure."""
    s = []
    s += cc(ch, 7, 100) + [0xC0 | ch, 5]
    s += on(ch, 60) + on(ch, 64) + on(ch, 67)
    s += cc(ch, 64, 127)
    s += off(ch, 60) + off(ch, 64) + off(ch, 67)
    s += on(ch, 62) + on(ch, 65) + on(ch, 69)
    s += bend(ch, 8192 + 2000) + bend(ch, 8192 - 3000) + bend(ch, 8192)
    s += cc(ch, 1, 64) + cc(ch, 11, 90) + [0xD0 | ch, 70] + [0xA0 | ch, 65, 40]
    s += cc(ch, 64, 0)
    s += [0x90 | ch, 62, 0, 65, 0, 69, 0]  # running status, velocity-0 note-offs
    return s


def engine_seeds():
    seeds = {}
    seeds["bend_chords"] = [0, 0, 0, 0, 0, 0] + chord_piece()
    seeds["bend_3_channels_steal"] = [0x08, 1, 0, 0, 0, 0] + \
        sum((on(0, k) for k in range(48, 60)), []) + sum((off(0, k) for k in range(48, 60)), [])
    seeds["bend_share_only_1_channel"] = [0x04, 2, 0x10, 0, 0, 0] + \
        on(0, 60) + on(0, 66) + on(0, 61) + off(0, 60) + off(0, 66) + off(0, 61)
    seeds["mts_nearest"] = [0x01, 3, 0, 0, 0, 0] + chord_piece()
    seeds["mts_own_bulk_bank"] = [0x31, 3, 0, 0, 0, 0x2C] + chord_piece()
    seeds["mts_two_inputs"] = [0x01, 3, 0x04, 0, 0, 0] + chord_piece(0) + chord_piece(1)
    seeds["mpe_out_4_members"] = [0x02, 4 << 3, 0, 0, 0, 0] + chord_piece()
    seeds["mpe_out_upper_zone"] = [0x42, 0x80 | (7 << 3), 0, 0, 0, 1] + chord_piece()
    # an MPE controller (lower zone, all channels): per-note bend, pressure, CC74
    mpe_in = []
    for i, key in enumerate((60, 64, 67)):
        mpe_in += on(1 + i, key) + bend(1 + i, 8192 + 300 * (i + 1)) + [0xD1 + i, 50] + cc(1 + i, 74, 80)
    mpe_in += cc(0, 64, 127) + bend(0, 9000)
    for i, key in enumerate((60, 64, 67)):
        mpe_in += off(1 + i, key)
    mpe_in += cc(0, 64, 0)
    seeds["mpe_in_bend_out"] = [0, 5, 0x09, 0, 0, 1] + mpe_in
    seeds["mpe_in_mpe_out"] = [0x02, 0, 0x09, 0, 0, 0] + mpe_in
    seeds["mpe_in_mts_out"] = [0x01, 0, 0x09, 0, 0, 0] + mpe_in
    # control channel 16: program change picks presets, CC20 moves the 1/1, CC21 preset
    ctl = on(0, 60) + [0xCF, 1] + on(0, 62) + cc(15, 20, 3) + on(0, 64) + cc(15, 21, 3) + on(0, 65)
    ctl += cc(15, 20, 0) + off(0, 60) + off(0, 62) + off(0, 64) + off(0, 65) + [0xCF, 0]
    seeds["control_channel_presets"] = [0x80, 0, 0, 0x7F, 0, 0] + ctl
    seeds["control_mts_bulk"] = [0x91, 3, 0, 0x7F, 0, 0] + ctl
    # reserved keys: 0.. pick presets, 12.. move the 1/1
    seeds["reserved_keys"] = [0, 0, 0, 0x80, 0x30, 0] + \
        on(0, 1) + off(0, 1) + on(0, 14) + off(0, 14) + chord_piece() + on(0, 12) + off(0, 12)
    # the player's RPN 0 (wheel range 12), an NRPN, then the wheel
    rpn = on(0, 60) + cc(0, 101, 0) + cc(0, 100, 0) + cc(0, 6, 12) + cc(0, 38, 50)
    rpn += cc(0, 99, 1) + cc(0, 98, 8) + cc(0, 6, 64) + cc(0, 101, 0) + cc(0, 100, 0)
    rpn += bend(0, 16383) + bend(0, 0) + off(0, 60)
    seeds["player_rpn_nrpn"] = [0, 0, 0, 0, 0x02, 0] + rpn
    # channel mode messages from the player: all sound off, reset all controllers, all notes off
    modes = on(0, 60) + cc(0, 64, 127) + on(0, 62) + cc(0, 121, 0) + on(0, 64)
    modes += cc(0, 120, 0) + on(0, 65) + cc(0, 123, 0) + cc(0, 66, 127) + on(0, 67) + cc(0, 124, 0)
    seeds["channel_modes"] = [0, 0, 0, 0, 0, 0] + modes
    # real-time bytes inside messages and SysEx, a stray data byte, undefined bytes,
    # a SysEx cut short, an MTS single-note change from the player, a system reset
    rt = [0x90, 60, 0xF8, 100, 0xFE, 62, 100, 0x45, 0xF0, 0x7D, 0xF8, 0x01, 0xF7]
    rt += [0xF0, 0x7F, 0x7F, 0x08, 0x02, 0x00, 0x01, 64, 0x40, 0x00, 0x00, 0xF7]
    rt += [0xF0, 0x01, 0x02, 0x90, 61, 90, 0xF2, 0x10, 0x20, 0xFA, 0xFC]
    rt += [0x80, 60, 0, 62, 0, 61, 0, 0xFF] + on(0, 70) + off(0, 70)
    seeds["stream_oddities"] = [0, 0, 0, 0, 0, 0] + rt
    # pass-through drums on channel 10 next to an input on channel 1
    drums = on(9, 36) + on(0, 60) + off(9, 36) + cc(9, 7, 80) + off(0, 60) + on(9, 38) + off(9, 38)
    seeds["passthrough_drums"] = [0, 3, 0, 0, 0, 0] + drums
    # three devices (F5 switches), one unplugged (F4), a panic (F9), a reload (FD)
    multi = on(0, 60) + [0xF5] + on(0, 60) + on(0, 64) + [0xF5] + on(0, 67)
    multi += [0xF4, 0xF5] + off(0, 60) + [0xFD] + on(0, 61) + [0xF9] + on(0, 62) + [0xFD]
    multi += [0xF5] + off(0, 64) + [0xF5, 0xF5] + off(0, 67)
    seeds["three_sources_panic_reload"] = [0x80, 0, 0x04, 0x1F, 0, 0] + multi
    # a sostenuto passage
    sost = on(0, 48) + cc(0, 66, 127) + off(0, 48) + on(0, 60) + off(0, 60) + on(0, 62)
    sost += cc(0, 64, 127) + off(0, 62) + cc(0, 66, 0) + cc(0, 64, 0)
    seeds["sostenuto"] = [0, 1, 0, 0, 0, 0] + sost
    for name, data in seeds.items():
        write("fuzz_engine", name, data)


# ---- fuzz_smf: Standard MIDI Files ------------------------------------------------

def vlq(n):
    out = [n & 0x7F]
    n >>= 7
    while n:
        out.insert(0, 0x80 | (n & 0x7F))
        n >>= 7
    return out


def chunk(kind, body):
    return list(kind.encode()) + list(struct.pack(">I", len(body))) + list(body)


def mthd(fmt, ntracks, division):
    return chunk("MThd", struct.pack(">HHH", fmt, ntracks, division))


def track(events, eot=True):
    body = []
    for delta, ev in events:
        body += vlq(delta) + ev
    if eot:
        body += [0, 0xFF, 0x2F, 0]
    return chunk("MTrk", body)


def smf_seeds():
    seeds = {}
    seeds["format0_notes"] = mthd(0, 1, 96) + track([
        (0, [0xFF, 0x51, 3, 0x07, 0xA1, 0x20]),
        (0, [0x90, 60, 100]), (48, [64, 90]), (48, [0x80, 60, 0]), (0, [64, 0]),
    ])
    seeds["format1_tempo_sysex"] = mthd(1, 2, 480) + track([
        (0, [0xFF, 0x03, 5] + list(b"piano")),
        (0, [0xFF, 0x58, 4, 4, 2, 24, 8]),
        (0, [0xFF, 0x59, 2, 0, 0]),
        (0, [0xF0, 5, 0x7E, 0x7F, 0x09, 0x01, 0xF7]),
    ]) + track([
        (0, [0xB0, 64, 127]), (10, [0xE0, 0, 0x40]), (0, [0x90, 62, 80]),
        (0, [0xFF, 0x01, 2, 0x68, 0x69]), (200, [62, 0]), (0, [0xC0, 9]),
        (0, [0xD0, 33]), (0, [0xA0, 62, 5]), (0x0FFFFFFF, [0xB0, 64, 0]),
    ])
    seeds["no_end_of_track"] = mthd(0, 1, 24) + track([(0, [0x90, 60, 1]), (1, [60, 0])], eot=False)
    seeds["smpte_division"] = mthd(2, 1, ((256 - 25) << 8) | 40) + track([
        (0, [0xFF, 0x54, 5, 96, 0, 0, 0, 0]), (5, [0x91, 70, 70]), (5, [0x81, 70, 70])])
    seeds["escape_and_packets"] = mthd(1, 1, 96) + track([
        (0, [0xF0, 3, 0x43, 0x12, 0x00]), (10, [0xF7, 2, 0x01, 0xF7]), (0, [0xF7, 1, 0xF8]),
        (0, [0xFF, 0x7F, 3, 0x00, 0x00, 0x41]), (0, [0xFF, 0x20, 1, 3])])
    seeds["unknown_chunk_long_header"] = chunk("MThd", struct.pack(">HHHH", 1, 1, 96, 0)) + \
        chunk("XFIH", b"\x01\x02\x03") + track([(0, [0x90, 60, 100]), (96, [0x80, 60, 64])]) + [0, 0]
    seeds["zero_tracks"] = mthd(1, 0, 96)
    seeds["truncated"] = (mthd(0, 1, 96) + track([(0, [0x90, 60, 100])]))[:-3]
    for name, data in seeds.items():
        write("fuzz_smf", name, data)


# ---- fuzz_config: latticed.conf text (config/ is added as a seed at run time) -----

def config_seeds():
    seeds = {}
    seeds["presets_and_control"] = """[lattice]
seeds = 1 3 5 7
[preset dekany]
seeds = 1 3 5 7 9
root_key = 60
[preset tritave]
period = 3/1
layout = nearest
[control]
channel = 16
program_change = preset
root_cc = 20
preset_cc = 21
preset_keys = 0
root_keys = 12
[output synth]
method = bend
channels = 2-9
polyphony = steal
"""
    seeds["mts_and_mpe_outputs"] = """[input]
channels = 1-4
wheel_range = 150c
[output tuned]
method = mts
channels = 11-16
mts_program = 3
mts_bank = 1
mts_device = 16
mts_bulk = yes
mts_key = own
running_status = yes
[output zone]
method = mpe
mpe_zone = upper
mpe_members = 7
bend_range = 24
bend_factor = 127/128
cents_offset = -3.05
"""
    seeds["mpe_controller"] = """[input]
mpe = lower
mpe_bend_range = 48
[output synth]
channels = 2-16
bend_range = 48
"""
    seeds["table_with_labels"] = """[lattice]
seeds = 1 3 5 7
choose = 2
unison = 1.3
[keys]
layout = table
map = 1.3 . 1.5 . 3.5+1 1.7 . 5.7-1 . 0 . .
  3 4
transpose = -12
"""
    seeds["errors"] = """[lattice]
seeds = 1 3 5 7
seeds = 2 3
choose = 9
[nowhere]
x = 1
[output]
method = sideways
[output a b]
channels = 0-17
[control]
channel = 1
not a line
"""
    seeds["twelve_seeds"] = """[lattice]
seeds = 1 3 5 7 9 11 13 15 17 19 21 23
choose = 6
"""
    for name, text in seeds.items():
        write("fuzz_config", name, text)


if __name__ == "__main__":
    engine_seeds()
    smf_seeds()
    config_seeds()
