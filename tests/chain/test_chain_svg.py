"""The chain drawing, read back as SVG (xml.etree from Python's standard
library): no two boxes or labels overlap, each text line fits its box, every
port of the circuit appears once (one label, one arrow), every arrow runs from
its driver's box to its load's box, a 40-stage chain wraps into rows on a page
without overlap, and verdicts differ in line style as well as colour (so a
grey print keeps them apart; the colours are the Okabe-Ito palette, from
memory: bluish green #009E73, orange #E69F00, vermillion #D55E00).  PNG and
PDF come out with their signatures (PNG: ISO/IEC 15948; PDF: ISO 32000)."""
import os
import sys

sys.path.insert(0, os.path.dirname(__file__))
from chainlib import (TMP, check, check_geometry, circuit, example_circuits, finish, on_border, png_read,  # noqa: E402
                      run, run_json)
import circuits  # noqa: E402

PAGE_W = 1080  # px: docs/chain.md promises a drawing no wider than this (A4 landscape at 0.75 pt/px)


def draw(path, ext="svg"):
    out = os.path.join(TMP, os.path.basename(path) + "." + ext)
    run(["chain", path, "--plot", out])
    return out


def geometry(path):
    j = run_json(["chain", path])
    ports = [c["port"] for c in j.get("connections", [])]
    svg = draw(path)
    boxes, labels, arrows, (w, h) = check_geometry(svg, path, ports)
    check(w <= PAGE_W, f"{path}: {w} px wide, more than a page")
    stage_names = [s["name"] for s in j.get("stages", [])]
    for s in stage_names:
        check(sum(b["name"] == s for b in boxes) == 1, f"{path}: stage {s} drawn {sum(b['name'] == s for b in boxes)} times")
    by_name = {b["name"]: b for b in boxes}
    for c, a in ((c, next((a for a in arrows if a["port"] == c["port"]), None)) for c in j.get("connections", [])):
        if a is None or c["from_stage"] is None or c["to_stage"] is None:
            continue
        f, t = by_name[stage_names[c["from_stage"]]], by_name[stage_names[c["to_stage"]]]
        check(on_border(a["points"][0], f), f"{path}: arrow {c['port']} does not start on {f['name']}")
        check(on_border(a["points"][-1], t), f"{path}: arrow {c['port']} does not end on {t['name']}")
        check(a["verdict"] == c["verdict"], f"{path}: arrow {c['port']} verdict {a['verdict']} != {c['verdict']}")
        lab = next(l for l in labels if l["name"] == c["port"])
        words = " ".join(t[4] for t in lab["texts"])
        check(c["verdict"] in words.lower(), f"{path}: label of {c['port']} lacks the word {c['verdict']}")
        if c["verdict"] != "ok":
            check("fix:" in words, f"{path}: failing {c['port']} carries no fix")
    return boxes, labels, arrows, (w, h)


for p in example_circuits() + [circuit("branches.stack", circuits.BRANCHES), circuit("loop.stack", circuits.LOOP)]:
    geometry(p)

# the failing connection: loud in every channel at once
fp = circuit("failing.stack", circuits.FAILING)
_, labels, arrows, _ = geometry(fp)
bad = next(a for a in arrows if a["port"] == "p_tip")
good = next(a for a in arrows if a["port"] == "p_log")
check(bad["stroke"].upper() == "#D55E00" and good["stroke"].upper() == "#009E73", "verdict colours are not Okabe-Ito")
check(bad["dash"] and not good["dash"] and bad["width"] > good["width"],
      "loading and ok arrows must differ in dash and width, not colour alone")
check(any("LOADING" in t[4] for l in labels if l["name"] == "p_tip" for t in l["texts"]), "no LOADING word on p_tip")

# forty stages: rows on a page, no overlap
lp = circuit("forty.stack", circuits.long_chain(40))
boxes, labels, arrows, (w, h) = geometry(lp)
check(len(boxes) == 40 and len(labels) == 39, f"forty: {len(boxes)} boxes, {len(labels)} labels")
rows = sorted({round(b["y"]) for b in boxes})
check(len(rows) >= 4, f"forty: {len(rows)} rows; a long chain should wrap")
order = sorted(boxes, key=lambda b: (round(b["y"]), b["x"]))
check([b["name"] for b in order] == [s["name"] for s in run_json(["chain", lp])["stages"]],
      "forty: boxes are not left to right, row after row, in signal order")

# PNG and PDF
png = draw(fp, "png")
pw, ph, _ = png_read(png)
_, _, _, (sw, sh), _ = __import__("chainlib").svg_items(draw(fp))
check((pw, ph) == (int(2 * sw), int(2 * sh)), f"PNG {pw}x{ph}, expected twice the SVG's {sw}x{sh}")
pdf = draw(fp, "pdf")
check(open(pdf, "rb").read(5) == b"%PDF-", "the PDF lacks its %PDF- header")
finish("chain-svg")
