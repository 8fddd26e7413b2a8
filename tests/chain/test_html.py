"""The one-page HTML report, rendered by a real browser: Debian's chromium in
headless mode.  For each example circuit and the chain tests' own circuits:
the page is self-contained (no script, nothing fetched: every src is a data:
URL); --dump-dom shows every port row with the verdict word the solve JSON
gives; strings from the circuit are escaped (the DOM shows the title as
written, the file never holds it raw).  Screenshots (parsed with zlib, see
chainlib.png_read) have the window's size and non-blank content, and the
failing connection's vermillion alert is on the first screen.  Tables have
header cells with scope (WCAG 2.1 technique H63), the drawing an SVG <title>,
images alt text (H37).  --print-to-pdf gives a PDF (the print stylesheet)."""
import os
import shutil
import subprocess
import sys
from concurrent.futures import ThreadPoolExecutor
from html.parser import HTMLParser

sys.path.insert(0, os.path.dirname(__file__))
from chainlib import TMP, check, circuit, example_circuits, finish, png_read, run, run_json  # noqa: E402
import circuits  # noqa: E402

CHROMIUM = shutil.which("chromium") or shutil.which("chromium-browser")
if not CHROMIUM:
    print("chromium is not installed: skipped")
    sys.exit(77)
FLAGS = ["--headless", "--no-sandbox", "--disable-gpu", "--hide-scrollbars", "--no-first-run",
         "--disable-dev-shm-usage"]
WIN = (1280, 900)      # CSS pixels: a laptop screen at 100 %
SCALE = 0.5            # device pixels per CSS pixel in the screenshots (keeps the PNG small to read)
_runs = [0]


def chromium(args):
    """Run headless chromium with its own profile folder (runs may overlap)."""
    _runs[0] += 1
    prof = os.path.join(TMP, f"profile{_runs[0]}")
    p = subprocess.run([CHROMIUM] + FLAGS + [f"--user-data-dir={prof}"] + args, capture_output=True, text=True,
                       timeout=120)
    check(p.returncode == 0, f"chromium {' '.join(args)}: exit {p.returncode}\n{p.stderr[-800:]}")
    return p.stdout


def parallel(fn, items):
    """fn over items, a few browsers at a time (they mostly wait on their own start-up)."""
    with ThreadPoolExecutor(max_workers=4) as ex:
        return list(ex.map(fn, items))


class Page(HTMLParser):
    """Port rows (data-port -> verdict cell text), h1 text, tags seen."""

    def __init__(self):
        super().__init__()
        self.rows, self.tags, self.h1 = {}, [], ""
        self.port, self.cells, self.in_td, self.in_h1, self.depth = None, [], False, False, 0
        self.th_no_scope = 0
        self.img_no_alt = 0

    def handle_starttag(self, tag, attrs):
        a = dict(attrs)
        self.tags.append((tag, a))
        if tag == "tr" and "data-port" in a:
            self.port, self.cells = a["data-port"], []
        elif tag in ("td", "th") and self.port:
            self.cells.append("")
            self.in_td = True
        if tag == "th" and "scope" not in a:
            self.th_no_scope += 1
        if tag == "img" and not a.get("alt"):
            self.img_no_alt += 1
        if tag == "h1":
            self.in_h1 = True

    def handle_endtag(self, tag):
        if tag == "tr" and self.port:
            self.rows[self.port] = self.cells
            self.port = None
        if tag in ("td", "th"):
            self.in_td = False
        if tag == "h1":
            self.in_h1 = False

    def handle_data(self, data):
        if self.in_td and self.port:
            self.cells[-1] += data
        if self.in_h1:
            self.h1 += data


def static_checks(path, html):
    check("<script" not in html.lower(), f"{path}: the page has a script")
    page = Page()
    page.feed(html)
    for tag, a in page.tags:
        for attr in ("src", "href"):
            v = a.get(attr)
            check(v is None or v.startswith("data:") or v.startswith("#"), f"{path}: {tag} {attr}={(v or '')[:60]!r} fetches")
    check(page.th_no_scope == 0, f"{path}: {page.th_no_scope} header cells without scope")
    check(page.img_no_alt == 0, f"{path}: {page.img_no_alt} images without alt text")
    check('<title id="ls-chain-title">' in html, f"{path}: the drawing has no <title>")
    check("@media print" in html, f"{path}: no print stylesheet")


def dom_checks(path, page_path, dom):
    solve = run_json(["solve", path])
    page = Page()
    page.feed(dom)
    for port, p in solve.get("ports", {}).items():
        cells = page.rows.get(port)
        if not check(cells is not None, f"{path}: the browser shows no row for port {port}"):
            continue
        check(p["verdict"] in (c.strip().split()[-1] for c in cells if c.strip()),
              f"{path}: row {port} lacks its verdict word '{p['verdict']}': {cells}")
    check(len(page.rows) == len(solve.get("ports", {})), f"{path}: {len(page.rows)} port rows in the DOM")
    return page


def screenshot(page_path, name):
    png = os.path.join(TMP, name + ".png")
    chromium([f"--screenshot={png}", f"--window-size={WIN[0]},{WIN[1]}", f"--force-device-scale-factor={SCALE}",
              "file://" + page_path])
    w, h, rows = png_read(png)
    want = (int(WIN[0] * SCALE), int(WIN[1] * SCALE))
    check((w, h) == want, f"{name}: screenshot {w}x{h}, expected {want}")
    pixels = [p for r in rows[::2] for p in r[::2]]
    dark = sum(1 for p in pixels if sum(p) < 600) / len(pixels)
    check(dark > 0.02 and len(set(pixels)) > 20, f"{name}: the screenshot looks blank ({dark:.3%} ink)")
    return pixels


def page_of(path, cmd="solve", extra=()):
    out = os.path.join(TMP, os.path.basename(path) + f".{cmd}.html")
    run([cmd, path, "--format", "html", "--output", out] + list(extra))
    return out, open(out, encoding="utf-8").read()


own = [circuit("branches.stack", circuits.BRANCHES), circuit("failing.stack", circuits.FAILING)]
pages = []
for p in example_circuits() + own:
    out, html = page_of(p)
    static_checks(p, html)
    pages.append((p, out))
doms = parallel(lambda po: chromium(["--dump-dom", "file://" + po[1]]), pages)
for (p, out), dom in zip(pages, doms):
    dom_checks(p, out, dom)

# escaping: the title has < > & ' in it
fp = own[1]
out, html = page_of(fp)
title = "Rain gauge <sense> & 'count' front end"
check("<sense>" not in html and "&lt;sense&gt; &amp; &#39;count&#39;" in html, "the title is not escaped")
page = Page()
page.feed(doms[-1])
check(page.h1.strip() == title, f"the browser shows the title as {page.h1!r}")

# the failing connection is impossible to miss: vermillion on the first screen
px, _ = parallel(lambda a: screenshot(*a), [(out, "failing"), (page_of(example_circuits()[0])[0], "example")])
verm = sum(1 for r, g, b in px if abs(r - 0xD5) < 40 and abs(g - 0x5E) < 40 and b < 60)
check(verm > 20, f"no vermillion alert on the first screen ({verm} pixels)")

# chain --format html is the same page; --plot-all draws histograms
out, html = page_of(own[0], "chain", ["--plot-all"])
check("Stages, in signal order" in html and "nothing varies" in html, "chain --format html / --plot-all without tol=")
tolc = circuit("tol.stack", circuits.FAILING.replace("100k\n", "100k tol=1%\n"))
out, html = page_of(tolc)
check(html.count('<img alt="Histogram of') == 1 and "data:image/svg+xml;base64," in html,
      "a circuit with tol= should get one histogram per checked quantity")

# printable: the print stylesheet renders to PDF
pdf = os.path.join(TMP, "page.pdf")
chromium([f"--print-to-pdf={pdf}", "--no-pdf-header-footer", "file://" + out])
check(os.path.exists(pdf) and open(pdf, "rb").read(5) == b"%PDF-", "chromium could not print the page")
finish("chain-html")
