#!/usr/bin/env python3
"""Checks `latticed draw` with tools that are not ours.

Every SVG is parsed by Python's XML parser (expat) and, when installed, by
xmllint (libxml2) and rendered by rsvg-convert (librsvg), general-purpose
libraries.  What the drawings must hold is recomputed here:
  - CPS tones: every product of `choose` seeds, reduced into [1, period),
    optionally divided by the unison member (definition of a combination
    product set; common practice), each labelled with its seeds;
  - counts: the hexany (2 of 4) is an octahedron, 6 vertices, 12 edges,
    4 + 4 triangles (Wikipedia "Hexany"); the 2-of-5 dekany has 5 tetrads
    and 10 triads, the eikosany 15 + 15 tetrads (Wilson's CPS structure,
    from memory); a tone of k of n seeds has k (n - k) neighbours
    (combinatorics);
  - an edge joins tones whose seed labels differ in exactly one seed;
  - the hexany's six tones form a regular hexagon (the octahedron seen
    along a 3-fold axis, the familiar drawing; common practice);
  - key names: key 60 = C4, 69 = A4 (MIDI note numbering, common practice);
    the keys chart's cents agree with `latticed table --json`;
  - a chord's keys sound its proportion: frequency ratios from the table's
    Hz equal the chord's integers (exact up to float rounding).
Usage: draw_check.py LATTICED_BINARY SOURCE_DIR WORK_DIR
"""
import itertools
import json
import math
import os
import re
import shutil
import stat
import subprocess
import sys
import threading
import xml.etree.ElementTree as ET
from fractions import Fraction

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
from table_json_check import reduce_into  # noqa: E402

SVG = "{http://www.w3.org/2000/svg}"
BIN = SRC = WORK = None
FAILS = []


def check(ok, what):
    if not ok:
        FAILS.append(what)
        print("FAIL:", what, file=sys.stderr)


def run(*args, want=0):
    p = subprocess.run([BIN, *args], capture_output=True)
    check(p.returncode == want, f"exit {p.returncode}, wanted {want}: {' '.join(args)}: "
          f"{p.stderr.decode(errors='replace').strip()}")
    return p


def write_conf(name, text):
    path = os.path.join(WORK, name)
    with open(path, "w") as f:
        f.write(text)
    return path


def parse(data, what):
    """The SVG as an element tree; xmllint agrees it is well-formed."""
    root = ET.fromstring(data)
    check(root.tag == SVG + "svg", f"{what}: root is {root.tag}")
    if shutil.which("xmllint"):
        p = subprocess.run(["xmllint", "--noout", "-"], input=data, capture_output=True)
        check(p.returncode == 0, f"{what}: xmllint: {p.stderr.decode(errors='replace')}")
    for el in root.iter():
        check(el.tag != SVG + "script", f"{what}: has a script")
        for name, value in el.attrib.items():
            check(not name.startswith("on"), f"{what}: event attribute {name}")
            check("http:" not in value and "https:" not in value or name == "xmlns",
                  f"{what}: external reference {value}")
    return root


def by_class(root, cls):
    return [el for el in root.iter() if cls in el.get("class", "").split()]


def expected_tones(conf):
    """{label: ratio} from the config's [lattice], in exact fractions."""
    seeds, k, period, unison = None, 2, Fraction(2), None
    for line in open(conf):
        line = line.split(";")[0].strip()
        if "=" not in line:
            continue
        key, value = (s.strip() for s in line.split("=", 1))
        if key == "seeds":
            seeds = value.split()
        elif key == "choose":
            k = int(value)
        elif key == "period":
            period = Fraction(value)
        elif key == "unison" and value != "none":
            unison = value
    u = math.prod(Fraction(s.strip("()")) for s in unison.split(".")) if unison else Fraction(1)
    # labels join the seeds with '.', a ratio seed in parentheses (our rule)
    def label(c):
        return ".".join(f"({s})" if "/" in s else s for s in c)
    return {label(c): reduce_into(math.prod(Fraction(s) for s in c) / u, period)
            for c in itertools.combinations(seeds, k)}, k, len(seeds)


def texts(el):
    return [t.text for t in el.iter(SVG + "text")]


def check_lattice(conf, name, counts):
    """counts: (tones, edges, [(kind, how many, of size)])."""
    svg = run("draw", "--config", conf).stdout
    root = parse(svg, name)
    tones = by_class(root, "tone")
    edges = by_class(root, "edge")
    edges = [e for e in edges if e.get("data-tones")]
    chords = [c for c in by_class(root, "chord") if c.get("id")]
    want_tones, want_edges, want_chords = counts
    check(len(tones) == want_tones, f"{name}: {len(tones)} tones, wanted {want_tones}")
    check(len(edges) == want_edges, f"{name}: {len(edges)} edges, wanted {want_edges}")
    for kind, many, size in want_chords:
        got = [c for c in chords if c.get("data-kind") == kind
               and len(c.get("data-tones").split()) == size]
        check(len(got) == many, f"{name}: {len(got)} {kind} chords of {size}, wanted {many}")
    check(len(chords) == sum(m for _, m, _ in want_chords), f"{name}: {len(chords)} chords")

    # every tone's label and ratio, as the config defines them
    expect, k, n = expected_tones(conf)
    seen = {}
    for t in tones:
        i = int(t.get("data-tone"))
        check(t.get("id") == f"tone-{i}", f"{name}: tone id {t.get('id')}")
        label, ratio = t.get("data-seeds"), t.get("data-ratio")
        seen[i] = label
        check(label in expect and Fraction(ratio) == expect[label],
              f"{name}: tone {label} = {ratio}, wanted {expect.get(label)}")
        words = texts(t)
        check(label in words and ratio in words, f"{name}: tone {i} shows {words}")
        cents = 1200 * math.log2(Fraction(ratio))
        check(abs(float(t.get("data-cents")) - cents) < 0.0006, f"{name}: tone {i} cents")
    check(sorted(seen.values()) == sorted(expect), f"{name}: labels {sorted(seen.values())}")

    # edges: exactly one seed swapped
    for e in edges:
        a, b = (seen[int(x)] for x in e.get("data-tones").split())
        sa, sb = set(a.split(".")), set(b.split("."))
        check(len(sa - sb) == 1 and len(sb - sa) == 1, f"{name}: edge {a} - {b}")
    # the JSON table's chords, index by index
    doc = json.loads(run("table", "--config", conf, "--json").stdout)
    for c in chords:
        i = int(c.get("data-chord"))
        ref = doc["chords"][i]
        check(c.get("id") == f"chord-{i}" and c.get("data-kind") == ref["kind"],
              f"{name}: chord {i} kind")
        check([int(x) for x in c.get("data-tones").split()] == ref["tones"], f"{name}: chord {i} tones")
        check(c.get("data-proportion") == ":".join(map(str, ref["proportion"] or [])),
              f"{name}: chord {i} proportion")
    return svg, root


def box_centres(root):
    out = {}
    for t in by_class(root, "tone"):
        r = t.find(SVG + "rect")
        out[int(t.get("data-tone"))] = (float(r.get("x")) + float(r.get("width")) / 2,
                                        float(r.get("y")) + float(r.get("height")) / 2)
    return out


def check_hexagon(root):
    pts = list(box_centres(root).values())
    cx = sum(p[0] for p in pts) / 6
    cy = sum(p[1] for p in pts) / 6
    radii = [math.hypot(x - cx, y - cy) for x, y in pts]
    check(max(radii) - min(radii) < 0.5, f"hexany: radii {radii}")
    angles = sorted(math.degrees(math.atan2(y - cy, x - cx)) % 360 for x, y in pts)
    gaps = [(b - a) for a, b in zip(angles, angles[1:] + [angles[0] + 360])]
    check(all(abs(g - 60) < 0.5 for g in gaps), f"hexany: angles {angles}")


def boxes_overlap(root, name):
    boxes = []
    for t in by_class(root, "tone"):
        r = t.find(SVG + "rect")
        boxes.append(tuple(float(r.get(a)) for a in ("x", "y", "width", "height")))
    for (x1, y1, w1, h1), (x2, y2, w2, h2) in itertools.combinations(boxes, 2):
        if x1 < x2 + w2 and x2 < x1 + w1 and y1 < y2 + h2 and y2 < y1 + h1:
            check(False, f"{name}: tone boxes overlap at {x1},{y1} and {x2},{y2}")
            return


def check_kinds_differ(root):
    """Harmonic and subharmonic faces differ in outline and fill, not only colour."""
    style = root.find(SVG + "style").text
    rules = dict(re.findall(r"\.chord\.(harmonic|subharmonic) \{([^}]*)\}", style))
    check("stroke-dasharray" in rules.get("subharmonic", "") and
          "stroke-dasharray" not in rules.get("harmonic", ""), "dashed subharmonic outline")
    fills = [re.search(r"fill: url\(#([\w-]+)\)", rules.get(k, "")) for k in ("harmonic", "subharmonic")]
    check(all(fills) and fills[0].group(1) != fills[1].group(1), "two fill patterns")


NOTE = ["C", "C#", "D", "D#", "E", "F", "F#", "G", "G#", "A", "A#", "B"]


def note_name(key):
    return f"{NOTE[key % 12]}{key // 12 - 1}"


def check_keys(conf, name, want_first, want_count):
    svg = run("draw", "--config", conf, "--what", "keys").stdout
    root = parse(svg, name)
    check(root.get("width") == "297.0mm" and float(root.get("height")[:-2]) >= 210,
          f"{name}: page {root.get('width')} x {root.get('height')}")
    doc = json.loads(run("table", "--config", conf, "--json").stdout)
    table_keys = {k["key"]: k for k in doc["keys"]}
    keys = {int(k.get("data-key")): k for k in by_class(root, "key")}
    check(sorted(keys) == list(range(want_first, want_first + want_count)),
          f"{name}: keys {min(keys)}..{max(keys)}, wanted {want_first} + {want_count}")
    for key, el in keys.items():
        check(el.get("data-name") == note_name(key), f"{name}: key {key} named {el.get('data-name')}")
        check(f"{note_name(key)} {key}" in texts(el), f"{name}: key {key} text {texts(el)}")
        ref = table_keys.get(key)
        classes = el.get("class").split()
        if ref is None:
            check("silent" in classes and "silent" in texts(el), f"{name}: key {key} not grey")
            continue
        check("sounding" in classes and int(el.get("data-tone")) == ref["tone"],
              f"{name}: key {key} tone")
        check(el.get("data-seeds") == ref["label"], f"{name}: key {key} label")
        check(el.get("data-nearest") == note_name(ref["out_key"]), f"{name}: key {key} nearest")
        cents = el.get("data-cents")
        check(re.fullmatch(r"[+-]\d+\.\d{3}", cents) and abs(float(cents) - ref["cents_off"]) < 0.0005,
              f"{name}: key {key} cents {cents} vs {ref['cents_off']}")
        shown = f"{note_name(ref['out_key'])} {round(ref['cents_off']):+d}\u00a2".replace("+0\u00a2", "0\u00a2")
        check(shown in texts(el), f"{name}: key {key} shows {texts(el)}, wanted {shown}")
    for el in by_class(root, "chord-keys"):
        ch = doc["chords"][int(el.get("data-chord"))]
        pressed = [int(k) for k in el.get("data-keys").split()]
        check(len(pressed) == len(ch["tones"]), f"{name}: chord {el.get('data-chord')} keys {pressed}")
        check(sorted(table_keys[k]["tone"] for k in pressed) == sorted(ch["tones"]),
              f"{name}: chord keys {pressed} play other tones")
        hz = [table_keys[k]["hz"] for k in pressed]
        check(hz == sorted(hz), f"{name}: chord keys {pressed} not low to high")
        # in closest position the keys sound the proportion itself
        if "inverted" not in " ".join(texts(el)):
            p = ch["proportion"]
            check(all(abs(h / hz[0] - q / p[0]) < 1e-6 for h, q in zip(hz, p)),
                  f"{name}: keys {pressed} do not sound {p}")
    return svg


def check_rendering(svg, name):
    """librsvg, a general-purpose SVG renderer, draws it without complaint."""
    if not shutil.which("rsvg-convert"):
        print(f"note: rsvg-convert not installed, {name} not rendered (apt-get install librsvg2-bin)")
        return
    png = os.path.join(WORK, name + ".png")
    p = subprocess.run(["rsvg-convert", "-o", png], input=svg, capture_output=True)
    # complaints about the SVG fail; a machine's font set-up is not ours
    complaints = [ln for ln in p.stderr.decode(errors="replace").splitlines()
                  if ln.strip() and "fontconfig" not in ln.lower()]
    check(p.returncode == 0 and not complaints, f"{name}: rsvg-convert: {p.stderr!r}")
    with open(png, "rb") as f:
        check(f.read(8) == b"\x89PNG\r\n\x1a\n", f"{name}: no PNG")


def check_command_line(hexany):
    p = run("draw", "--help")
    check(b"--what" in p.stdout, "draw --help")
    for args, word in ((["--what", "tree"], "expected lattice or keys"),
                       (["--what", "keys", "--periods", "3"], "expected 1 or 2"),
                       (["--periods", "1"], "--periods is for --what keys"),
                       (["extra"], "unexpected argument 'extra'")):
        p = run("draw", "--config", hexany, *args, want=2)
        check(word.encode() in p.stderr, f"draw {args}: {p.stderr!r}")
    p = run("draw", "--config", hexany, "--preset", "nope", want=1)
    check(p.stderr.count(b"\n") == 1 and b"no preset 'nope'" in p.stderr, f"bad preset: {p.stderr!r}")
    p = run("draw", "--config", os.path.join(WORK, "missing.conf"), want=1)
    check(b"missing.conf: cannot open" in p.stderr, f"missing config: {p.stderr!r}")
    p = run("draw", "--config", hexany, "-o", os.path.join(WORK, "no-dir", "x.svg"), want=1)
    check(p.stderr.count(b"\n") == 1 and b"no-dir" in p.stderr, f"bad -o: {p.stderr!r}")


def check_output_file(hexany):
    """Same bytes every time, to stdout or a file; a FIFO stays a FIFO."""
    first = run("draw", "--config", hexany).stdout
    check(run("draw", "--config", hexany).stdout == first, "two runs differ")
    out = os.path.join(WORK, "hexany.svg")
    with open(out, "w") as f:
        f.write("old")
    os.chmod(out, 0o640)
    run("draw", "--config", hexany, "-o", out)
    with open(out, "rb") as f:
        check(f.read() == first, "-o FILE differs from stdout")
    check(stat.S_IMODE(os.stat(out).st_mode) == 0o640, "-o FILE lost its mode")
    check(not [n for n in os.listdir(WORK) if n.startswith(".hexany.svg.")], "temporary file left")
    fifo = os.path.join(WORK, "pipe.svg")
    os.mkfifo(fifo)
    got = []
    reader = threading.Thread(target=lambda: got.append(open(fifo, "rb").read()))
    reader.start()
    run("draw", "--config", hexany, "-o", fifo)
    reader.join(10)
    check(got == [first], "-o FIFO did not get the drawing")
    check(stat.S_ISFIFO(os.stat(fifo).st_mode), "-o FIFO was replaced by a file")


def main():
    global BIN, SRC, WORK
    BIN, SRC, WORK = sys.argv[1], sys.argv[2], sys.argv[3]
    shutil.rmtree(WORK, ignore_errors=True)
    os.makedirs(WORK)
    hexany = os.path.join(SRC, "config", "latticed.conf")
    dekany = write_conf("dekany.conf", "[lattice]\nseeds = 1 3 5 7 9\nchoose = 2\n")
    eikosany = os.path.join(SRC, "config", "examples", "eikosany.conf")
    primes = "1 3 5 7 11 13 17 19 23 29 31 37"
    big = write_conf("twelve.conf", f"[lattice]\nseeds = {primes}\nchoose = 6\n")

    svg, root = check_lattice(hexany, "hexany", (6, 12, [("harmonic", 4, 3), ("subharmonic", 4, 3)]))
    check_hexagon(root)
    check_kinds_differ(root)
    boxes_overlap(root, "hexany")
    check_rendering(svg, "hexany")
    svg, root = check_lattice(dekany, "dekany", (10, 30, [("harmonic", 5, 4), ("subharmonic", 10, 3)]))
    boxes_overlap(root, "dekany")
    svg, root = check_lattice(eikosany, "eikosany", (20, 90, [("harmonic", 15, 4), ("subharmonic", 15, 4)]))
    boxes_overlap(root, "eikosany")
    check_rendering(svg, "eikosany")
    check_lattice(big, "12 seeds", (924, 924 * 36 // 2, [("harmonic", 792, 7), ("subharmonic", 792, 7)]))

    # sequential from key 57, two periods of 6; the table layout's 12 slots from 60;
    # the eikosany's 20 tones from 36
    svg = check_keys(hexany, "hexany keys", 57, 12)
    check_rendering(svg, "hexany-keys")
    check_keys(os.path.join(SRC, "config", "examples", "white-keys.conf"), "white keys", 60, 24)
    check_keys(eikosany, "eikosany keys", 36, 40)
    one = run("draw", "--config", hexany, "--what", "keys", "--periods", "1").stdout
    check(len(parse(one, "one period").findall(".//*[@data-key]")) == 6, "--periods 1: 6 keys")

    presets = write_conf("presets.conf", "[lattice]\nseeds = 1 3 5 7\n[preset low]\nchoose = 1\n")
    by_name = run("draw", "--config", presets, "--preset", "low").stdout
    check(by_name == run("draw", "--config", presets, "--preset", "1").stdout, "--preset 1 != low")
    check(len(by_class(parse(by_name, "preset"), "tone")) == 4, "preset low: 4 tones")
    check_command_line(hexany)
    check_output_file(hexany)
    if FAILS:
        print(f"draw_check: {len(FAILS)} failures", file=sys.stderr)
        sys.exit(1)
    print("draw_check: all checks passed")


if __name__ == "__main__":
    main()
