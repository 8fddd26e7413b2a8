#!/usr/bin/python3
"""The pictures of `sweep --plot` and `tol --plot`, read back from the files.

Outside references: the SVG is parsed with Python's xml.etree (W3C SVG 1.1:
<symbol> glyph outlines placed by <use x= y=>, <path d=> with absolute M/L/C/Z
commands); the PDF must start with the "%PDF-" header (ISO 32000-1, 7.5.2) and
be rendered by poppler's pdftoppm (Debian's poppler-utils) to a PNG of the
page size, whose IHDR chunk holds width and height (ISO/IEC 15948).

Checked: one panel (a black frame) per unit among the quantities; in every
panel the curves begin at the left edge (x starts at FROM) and end at the
right edge (TO); a limit that depends on the swept let is drawn as a sloping
dashed curve, not as its first point's value; no two texts (runs of glyphs)
overlap; the histogram's bars fill the plot's width even when a limit lies
far outside the data (the range follows the data, the limit is marked at the
edge).
"""
import os
import re
import shutil
import struct
import subprocess
import sys
import tempfile
import xml.etree.ElementTree as ET

LOADSTACK = os.path.abspath(os.environ.get("LOADSTACK") or sys.argv[1])
TMP = tempfile.mkdtemp(prefix="ls_plot_layout_")
SVG = "{http://www.w3.org/2000/svg}"
XLINK = "{http://www.w3.org/1999/xlink}"
failures = []
passes = [0]


def check(cond, msg):
    if cond:
        passes[0] += 1
    else:
        failures.append(msg)
        print("FAIL:", msg)
    return cond


def circuit(name, text):
    path = os.path.join(TMP, name)
    with open(path, "w", encoding="utf-8") as f:
        f.write(text)
    return path


def run(args):
    p = subprocess.run([LOADSTACK] + args, capture_output=True, text=True, timeout=120)
    check(p.returncode == 0, f"{' '.join(args)}: exit {p.returncode}\n{p.stderr}")
    return p


NUM = re.compile(r"-?\d+(?:\.\d+)?(?:e[-+]?\d+)?")


def points(d):
    """(x, y) pairs of an absolute path, in order (C's control points included)."""
    v = [float(t) for t in NUM.findall(d)]
    return list(zip(v[0::2], v[1::2]))


def parse(path):
    root = ET.parse(path).getroot()
    glyph_box = {}
    for sym in root.iter(SVG + "symbol"):
        pts = [p for path_el in sym.iter(SVG + "path") for p in points(path_el.get("d", ""))]
        if pts:
            xs, ys = [p[0] for p in pts], [p[1] for p in pts]
            glyph_box[sym.get("id")] = (min(xs), min(ys), max(xs), max(ys))
    runs = []   # one box per text run (a <g> of <use> glyphs)
    for g in root.iter(SVG + "g"):
        boxes = []
        for u in g.findall(SVG + "use"):
            b = glyph_box.get(u.get(XLINK + "href", "").lstrip("#"))
            if b:
                x, y = float(u.get("x", 0)), float(u.get("y", 0))
                boxes.append((x + b[0], y + b[1], x + b[2], y + b[3]))
        if boxes:
            runs.append((min(b[0] for b in boxes), min(b[1] for b in boxes),
                         max(b[2] for b in boxes), max(b[3] for b in boxes)))
    frames, curves = [], []
    for p in root.iter(SVG + "path"):
        style, d = p.get("style", ""), p.get("d", "")
        if "stroke:rgb(0%,0%,0%)" in style and d.count("L") == 3 and "Z" in d:
            pts = points(d)
            xs, ys = [q[0] for q in pts], [q[1] for q in pts]
            if max(xs) - min(xs) > 100 and max(ys) - min(ys) > 20:
                frames.append((min(xs), min(ys), max(xs), max(ys)))
        elif "stroke-width:1.8" in style or "stroke-dasharray" in style:
            curves.append((style, points(d)))
    return runs, frames, curves


def no_overlap(runs, what):
    bad = []
    for i in range(len(runs)):
        for j in range(i + 1, len(runs)):
            a, b = runs[i], runs[j]
            if a[0] < b[2] - 0.5 and b[0] < a[2] - 0.5 and a[1] < b[3] - 0.5 and b[1] < a[3] - 0.5:
                bad.append((a, b))
    check(len(runs) >= 8 and not bad, f"{what}: {len(runs)} texts, overlapping pairs: {bad[:3]}")


def panel_of(frames, pts):
    for k, f in enumerate(frames):
        if all(f[1] - 1 <= y <= f[3] + 1 for _, y in pts[:1]):
            return k
    return -1


DIVIDER = circuit("sender.stack", """\
title "Tank sender feed"
ground gnd
let vs = 5 V
voltage  vsup gnd -> top vs
resistor r1   top -> mid 10k
resistor r2   mid -> gnd 4.7k
expect mid < vs * 0.4
expect mid > 1 V
expect r1.current < 400 uA
""")


def test_sweep_panels():
    svg = os.path.join(TMP, "sweep.svg")
    run(["sweep", DIVIDER, "vs", "3.3", "12", "mid", "r1.current", "r1.power", "top", "--plot", svg])
    runs, frames, curves = parse(svg)
    check(len(frames) == 3, f"sweep of V, A and W quantities: 3 panels, got {len(frames)}")
    no_overlap(runs, "sweep with three units")
    check(all(abs(f[0] - frames[0][0]) < 0.01 and abs(f[2] - frames[0][2]) < 0.01 for f in frames),
          "the panels share one x axis")
    data = [c for c in curves if "stroke-width:1.8" in c[0]]
    check(len(data) == 4, f"4 quantity curves, got {len(data)}")
    for style, pts in data:
        check(abs(pts[0][0] - frames[0][0]) < 0.01, f"a curve starts at FROM (the left edge): {pts[0][0]} vs {frames[0][0]}")
        check(abs(pts[-1][0] - frames[0][2]) < 0.01, f"a curve ends at TO (the right edge): {pts[-1][0]} vs {frames[0][2]}")
    dashed = [pts for style, pts in curves if "stroke-dasharray" in style]
    check(len(dashed) == 3, f"three limits drawn, got {len(dashed)}")
    # 'mid < vs * 0.4' grows with vs: from 1.32 V to 4.8 V, so its right end is higher (smaller y)
    sloped = [p for p in dashed if p[0][1] - p[-1][1] > 20]
    flat = [p for p in dashed if abs(p[0][1] - p[-1][1]) < 0.01]
    check(len(sloped) == 1 and len(flat) == 2, f"one limit follows the let, two are constant: {[(p[0], p[-1]) for p in dashed]}")
    if sloped:
        # collinear: 0.4 * vs is a straight line in vs
        (x0, y0), (x1, y1) = sloped[0][0], sloped[0][-1]
        mid = sloped[0][len(sloped[0]) // 2]
        check(abs(y0 + (y1 - y0) * (mid[0] - x0) / (x1 - x0) - mid[1]) < 0.05, "the varying limit is the line 0.4 * vs")
    one = os.path.join(TMP, "one.svg")
    run(["sweep", DIVIDER, "vs", "4.3", "6", "mid", "top", "--plot", one])
    runs, frames, curves = parse(one)
    check(len(frames) == 1, f"two quantities in volts: one panel, got {len(frames)}")
    no_overlap(runs, "sweep with one unit")
    check(all(abs(pts[0][0] - frames[0][0]) < 0.01 for s, pts in curves if "1.8" in s),
          "x starts at FROM = 4.3 V, not at a rounder tick")


CROWDED = circuit("crowded.stack", """\
title "Pump controller sense divider with many limits"
ground gnd
let vs = 12 V
voltage  vsup gnd -> top vs
resistor r1   top -> mid 22k tol=1%
resistor r2   mid -> gnd 10k tol=1%
expect mid > 3.70 V
expect mid > 3.71 V
expect mid < 3.80 V
expect mid < 3.81 V
expect mid < vs * 0.317
expect mid between 0 V and 100 V
""")


def test_crowded_labels():
    svg = os.path.join(TMP, "crowded.svg")
    run(["sweep", CROWDED, "vs", "11.9", "12.1", "mid", "--plot", svg])
    runs, frames, curves = parse(svg)
    no_overlap(runs, "sweep with limit labels close together")
    svg = os.path.join(TMP, "crowded_hist.svg")
    run(["tol", CROWDED, "mid", "--trials", "2000", "--plot", svg])
    runs, frames, curves = parse(svg)
    no_overlap(runs, "histogram with marks close together and far away")
    root = ET.parse(svg).getroot()
    bars = [points(p.get("d")) for p in root.iter(SVG + "path") if "fill:rgb(55%,70%,85%)" in p.get("style", "")]
    xs = [x for b in bars for x, _ in b]
    f = frames[0]
    check(xs and max(xs) - min(xs) > 0.75 * (f[2] - f[0]),
          f"the bars span the plot (the range follows the data, not the 0..100 V limit): "
          f"{min(xs) if xs else None}..{max(xs) if xs else None} in {f[0]}..{f[2]}")


def png_size(path):
    with open(path, "rb") as f:
        head = f.read(24)
    return struct.unpack(">II", head[16:24]) if head[12:16] == b"IHDR" else None


def test_pdf():
    for args in (["sweep", DIVIDER, "vs", "3.3", "12", "mid", "r1.current"], ["tol", DIVIDER, "mid", "--trials", "500"]):
        pdf = os.path.join(TMP, args[0] + ".pdf")
        run(args + ["--plot", pdf])
        with open(pdf, "rb") as f:
            check(f.read(5) == b"%PDF-", f"{args[0]}: the PDF starts with %PDF-")
        pdftoppm = shutil.which("pdftoppm")
        if not check(pdftoppm is not None, "pdftoppm (poppler-utils) is installed"):
            continue
        out = os.path.join(TMP, args[0] + "_page")
        p = subprocess.run([pdftoppm, "-png", "-r", "72", "-singlefile", pdf, out], capture_output=True, text=True)
        check(p.returncode == 0 and png_size(out + ".png") == (800, 500),
              f"{args[0]}: pdftoppm renders the page at 72 dpi as 800 x 500 ({p.stderr.strip()}, {png_size(out + '.png') if p.returncode == 0 else None})")


def main():
    test_sweep_panels()
    test_crowded_labels()
    test_pdf()
    shutil.rmtree(TMP, ignore_errors=True)
    print(f"{passes[0]} checks passed, {len(failures)} failed")
    sys.exit(1 if failures else 0)


main()
