#!/usr/bin/python3
"""Pictures from `tol --plot` and `sweep --plot`.

Outside checks: the SVG must parse as XML with Python's xml.etree (Debian's
python3) and have an <svg> root in the SVG namespace (W3C SVG 1.1); a PNG
starts with the 8-byte signature and its IHDR chunk holds the width and height
as big-endian 32-bit numbers at bytes 16..23 (PNG specification, ISO/IEC
15948).  The size asked for is the documented default, 800 x 500 pixels.
"""
import os
import struct
import sys
import xml.etree.ElementTree as ET

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
from lsrun import TMP, circuit, run, check, finish  # noqa: E402

PATH = circuit("plot_div.stack", """\
title "Bench supply monitor"
let r_low = 4.7k
ground gnd
voltage  psu   gnd -> vin 5 V tol=5%
resistor r_top vin -> mon 10k tol=1%
resistor r_bot mon -> gnd r_low tol=1%
expect mon between 1.4 V and 1.8 V
""")


def svg_ok(path, what):
    try:
        root = ET.parse(path).getroot()
    except (ET.ParseError, OSError) as ex:
        check(False, f"{what}: the SVG does not parse as XML ({ex})")
        return
    check(root.tag == "{http://www.w3.org/2000/svg}svg", f"{what}: the root element is svg, got {root.tag}")
    n = sum(1 for _ in root.iter())
    check(n > 50, f"{what}: the picture has content ({n} elements)")


def png_size(path):
    with open(path, "rb") as f:
        head = f.read(24)
    if head[:8] != b"\x89PNG\r\n\x1a\n" or head[12:16] != b"IHDR":
        return None
    return struct.unpack(">II", head[16:24])


def main():
    svg = os.path.join(TMP, "hist.svg")
    rc, out, err = run(["tol", PATH, "mon", "--trials", "3000", "--plot", svg], check_rc=0)
    svg_ok(svg, "tol histogram")
    png = os.path.join(TMP, "hist.png")
    run(["tol", PATH, "mon", "--trials", "3000", "--plot", png], check_rc=0)
    check(png_size(png) == (800, 500), f"tol histogram PNG is 800 x 500, got {png_size(png)}")
    svg2 = os.path.join(TMP, "sweep.svg")
    run(["sweep", PATH, "r_low", "1k", "10k", "mon", "r_top.power", "--plot", svg2], check_rc=0)
    svg_ok(svg2, "sweep curves, two quantities of different units")
    png2 = os.path.join(TMP, "sweep.PNG")
    run(["sweep", PATH, "r_low", "1k", "100k", "mon", "--log", "--plot", png2], check_rc=0)
    check(png_size(png2) == (800, 500), f"sweep PNG (upper-case extension) is 800 x 500, got {png_size(png2)}")
    bad = os.path.join(TMP, "curve.gif")
    rc, out, err = run(["sweep", PATH, "r_low", "1k", "10k", "mon", "--plot", bad], check_rc=2)
    check(not os.path.exists(bad) and "curve.gif" in err, "an unknown picture format is refused, no file left")
    rc, out, err = run(["tol", PATH, "mon", "--trials", "100", "--plot", os.path.join(TMP, "no", "dir", "h.svg")],
                       check_rc=2)
    check(out == "", "no report when the picture cannot be written")
    finish()


if __name__ == "__main__":
    main()
