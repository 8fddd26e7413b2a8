"""Shared helpers of the chain tests: run the program, write circuits, read
SVG rectangles and PNG pixels (zlib and struct from Python's standard library;
the PNG layout is the one of the PNG specification, ISO/IEC 15948)."""
import json
import os
import struct
import subprocess
import sys
import tempfile
import xml.etree.ElementTree as ET
import zlib

LOADSTACK = os.environ.get("LOADSTACK") or (sys.argv[1] if len(sys.argv) > 1 else None)
SOURCE_ROOT = os.environ.get("SOURCE_ROOT") or os.path.join(os.path.dirname(__file__), "..", "..")
if not LOADSTACK:
    sys.exit("LOADSTACK is not set (run under meson test, or pass the binary)")
CIRCUITS = os.path.join(SOURCE_ROOT, "circuits")
TMP = tempfile.mkdtemp(prefix="ls_chain_test_")
SVG = "{http://www.w3.org/2000/svg}"
failures = []


def fail(msg):
    failures.append(msg)
    print("FAIL:", msg)


def check(cond, msg):
    if not cond:
        fail(msg)
    return cond


def finish(name):
    if failures:
        print(f"{name}: {len(failures)} failure(s)")
        sys.exit(1)
    print(f"{name}: ok")


def circuit(name, text):
    path = os.path.join(TMP, name)
    with open(path, "w", encoding="utf-8") as f:
        f.write(text)
    return path


def example_circuits():
    return sorted(os.path.join(CIRCUITS, f) for f in os.listdir(CIRCUITS) if f.endswith(".stack"))


def run(args, rc=0):
    p = subprocess.run([LOADSTACK] + args, capture_output=True, text=True, timeout=120)
    if rc is not None and p.returncode != rc:
        fail(f"loadstack {' '.join(args)}: exit {p.returncode}, expected {rc}\n{p.stderr}")
    return p


def run_json(args):
    p = run(args + ["--format", "json"])
    try:
        return json.loads(p.stdout)
    except ValueError as e:
        fail(f"loadstack {' '.join(args)}: not JSON ({e})")
        return {}


# ---- SVG ----------------------------------------------------------------------------------

def svg_items(path):
    """(boxes, labels, arrows, (w, h)) of a chain drawing: boxes and labels as
    dicts with the rectangle, name, verdict and text lines; arrows with points."""
    root = ET.parse(path).getroot()
    vb = [float(v) for v in root.get("viewBox").split()]
    boxes, labels, arrows = [], [], []
    for g in root.iter(SVG + "g"):
        cls = (g.get("class") or "").split()
        if "stage" in cls or "conn" in cls:
            r = g.find(SVG + "rect")
            item = {
                "name": g.get("data-name"), "verdict": g.get("data-verdict"),
                "x": float(r.get("x")), "y": float(r.get("y")),
                "w": float(r.get("width")), "h": float(r.get("height")),
                "title": g.find(SVG + "title").text,
                "texts": [(float(t.get("x")), float(t.get("y")), float(t.get("textLength")),
                           t.get("text-anchor"), t.text or "") for t in g.findall(SVG + "text")],
            }
            (boxes if "stage" in cls else labels).append(item)
        elif "arrow" in cls:
            pl = g.find(SVG + "polyline")
            pts = [tuple(float(v) for v in p.split(",")) for p in pl.get("points").split()]
            arrows.append({"port": g.get("data-port"), "verdict": g.get("data-verdict"), "points": pts,
                           "stroke": pl.get("stroke"), "width": float(pl.get("stroke-width")),
                           "dash": pl.get("stroke-dasharray")})
    return boxes, labels, arrows, (vb[2], vb[3]), root


def overlap(a, b):
    """Do two rectangles share any area?"""
    return a["x"] < b["x"] + b["w"] and b["x"] < a["x"] + a["w"] and a["y"] < b["y"] + b["h"] and b["y"] < a["y"] + a["h"]


def check_geometry(path, what, ports):
    """The SVG checks: no two boxes or labels overlap, everything inside the
    picture, every text line inside its rectangle, every port once (one label,
    one arrow), each arrow from its driver's box to its load's box."""
    boxes, labels, arrows, (w, h), _ = svg_items(path)
    rects = boxes + labels
    for i in range(len(rects)):
        a = rects[i]
        check(a["x"] >= 0 and a["y"] >= 0 and a["x"] + a["w"] <= w and a["y"] + a["h"] <= h,
              f"{what}: {a['name']} lies outside the picture")
        for t in a["texts"]:
            left = t[0] - t[2] / 2 if t[3] == "middle" else t[0]
            check(left >= a["x"] and left + t[2] <= a["x"] + a["w"] + 1e-6 and a["y"] < t[1] <= a["y"] + a["h"],
                  f"{what}: text {t[4]!r} spills out of {a['name']}")
        for b in rects[i + 1:]:
            check(not overlap(a, b), f"{what}: {a['name']} and {b['name']} overlap")
    names = sorted(l["name"] for l in labels)
    check(names == sorted(ports), f"{what}: labels {names} != ports {sorted(ports)}")
    check(sorted(a["port"] for a in arrows) == sorted(ports), f"{what}: arrows do not match the ports")
    return boxes, labels, arrows, (w, h)


def on_border(pt, r, tol=0.6):
    x, y = pt
    inside_x = r["x"] - tol <= x <= r["x"] + r["w"] + tol
    inside_y = r["y"] - tol <= y <= r["y"] + r["h"] + tol
    on_x = abs(x - r["x"]) <= tol or abs(x - r["x"] - r["w"]) <= tol
    on_y = abs(y - r["y"]) <= tol or abs(y - r["y"] - r["h"]) <= tol
    return inside_x and inside_y and (on_x or on_y)


# ---- PNG ----------------------------------------------------------------------------------

def png_read(path):
    """(width, height, rows of (r, g, b) tuples) of an 8-bit RGB/RGBA PNG."""
    data = open(path, "rb").read()
    if data[:8] != b"\x89PNG\r\n\x1a\n":
        raise ValueError("not a PNG")
    pos, idat, w = 8, b"", None
    while pos < len(data):
        n, typ = struct.unpack(">I4s", data[pos:pos + 8])
        body = data[pos + 8:pos + 8 + n]
        if typ == b"IHDR":
            w, h, depth, ctype, _, _, interlace = struct.unpack(">IIBBBBB", body)
            if depth != 8 or ctype not in (2, 6) or interlace:
                raise ValueError(f"PNG kind not handled: depth {depth}, colour type {ctype}")
            bpp = 3 if ctype == 2 else 4
        elif typ == b"IDAT":
            idat += body
        pos += 12 + n
    raw = zlib.decompress(idat)
    stride = w * bpp
    rows, prev, i = [], bytearray(stride), 0
    for _ in range(h):
        f = raw[i]
        line = bytearray(raw[i + 1:i + 1 + stride])
        i += 1 + stride
        for x in range(stride):
            a = line[x - bpp] if x >= bpp else 0
            b = prev[x]
            c = prev[x - bpp] if x >= bpp else 0
            if f == 1:
                line[x] = (line[x] + a) & 255
            elif f == 2:
                line[x] = (line[x] + b) & 255
            elif f == 3:
                line[x] = (line[x] + (a + b) // 2) & 255
            elif f == 4:
                p = a + b - c
                pa, pb, pc = abs(p - a), abs(p - b), abs(p - c)
                line[x] = (line[x] + (a if pa <= pb and pa <= pc else b if pb <= pc else c)) & 255
        rows.append([tuple(line[k:k + 3]) for k in range(0, stride, bpp)])
        prev = line
    return w, h, rows
