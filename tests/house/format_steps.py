#!/usr/bin/python3
"""Keep DEVELOPERS.md "Adding an output format" honest.

usage: format_steps.py SOURCE_ROOT

The steps say: a format is one ls_format value (src/report/report.h), one word
of --format (src/cli/main.c), and one backend in src/report/writer.c (a case
in the table calls); the reports described through the writer then need no
branch of their own.  This checks, from the source:
  1. every ls_format but the HTML page has a case in each of the writer's
     table calls (ls_wr_table, ls_wr_row, ls_wr_table_end), and the HTML page
     none (it is its own document, cli/html.c);
  2. --format's word list (format_words and format_values in the option
     table) is exactly the formats, and its error message lists them all;
  3. the reports on the writer (WRITER_REPORTS) compare the format with
     nothing but FMT_HTML (the page), so a new format needs no edit in them;
  4. every file the section names exists.
It fails with a line per broken step.
"""
import os
import re
import sys

WRITER_REPORTS = ["src/report/op_report.c", "src/report/report.c", "src/cli/chain_cmd.c", "src/cli/fit_cmd.c",
                  "src/cli/pick_cmd.c", "src/cli/formula_cmd.c", "src/cli/loading_cmds.c", "src/cli/tol_cmd.c",
                  "src/cli/sweep_cmd.c"]
TABLE_CALLS = ["ls_wr_table", "ls_wr_row", "ls_wr_table_end"]
DISPATCH = re.compile(r"fmt\s*[!=]=\s*(FMT_\w+)|switch\s*\([^)]*fmt\)")


def read(root, rel):
    with open(os.path.join(root, rel), encoding="utf-8") as f:
        return f.read()


def body(src, name):
    """The text of function `name` (from its definition to the closing brace at column 0)."""
    m = re.search(r"^\w[^\n]*\b%s\([^)]*\)\n\{\n" % re.escape(name), src, re.M)
    if not m:
        return None
    end = src.index("\n}\n", m.end())
    return src[m.start():end]


def missing_named_files(root, title):
    """A failure for each src/, tests/, docs/ or man/ file that DEVELOPERS.md's
    section `title` names and that does not exist (kind_steps.py uses it too)."""
    sec = read(root, "DEVELOPERS.md")
    sec = sec[sec.index(title):]
    sec = sec[:sec.index("\n## ", 5)] if "\n## " in sec[5:] else sec
    return ["DEVELOPERS.md names %s, which does not exist" % rel
            for rel in sorted(set(re.findall(r"`((?:src|tests|docs|man)/[\w./-]+)`", sec)))
            if not os.path.exists(os.path.join(root, rel))]


def finish(fails, summary):
    """Prints a line per failure and the summary; the exit status."""
    for f in fails:
        print("FAIL", f)
    print("%s, %d failed" % (summary, len(fails)))
    return 1 if fails else 0


def main():
    root = sys.argv[1]
    fails = []
    enum = re.search(r"typedef enum ls_format \{([^}]*)\}", read(root, "src/report/report.h"))
    formats = [f.strip() for f in enum.group(1).split(",") if f.strip()]
    words = {f: f[len("FMT_"):].lower() for f in formats}
    writer = read(root, "src/report/writer.c")
    for call in TABLE_CALLS:
        b = body(writer, call)
        if b is None:
            fails.append("writer.c has no %s" % call)
            continue
        for f in formats:
            has = ("case %s:" % f) in b
            if f == "FMT_HTML" and has:
                fails.append("%s has a case for the HTML page, which has its own layout" % call)
            elif f != "FMT_HTML" and not has:
                fails.append("%s has no backend case for %s" % (call, f))
    main_c = read(root, "src/cli/main.c")
    w = re.search(r"format_words\[\] = \{([^}]*)\}", main_c)
    v = re.search(r"format_values\[\] = \{([^}]*)\}", main_c)
    taken = [x.strip().strip('"') for x in w.group(1).split(",") if x.strip() != "NULL"] if w else []
    values = [x.strip() for x in v.group(1).split(",") if x.strip()] if v else []
    if dict(zip(values, taken)) != words:
        fails.append("--format's words %s for %s are not the formats' %s" % (taken, values, sorted(words.values())))
    msg = re.search(r'"--format takes ([^"]*), not', main_c)
    if not msg or any(w not in msg.group(1) for w in words.values()):
        fails.append("--format's error message does not list every format")
    for rel in WRITER_REPORTS:
        for m in DISPATCH.finditer(read(root, rel)):
            if m.group(1) != "FMT_HTML":
                line = read(root, rel)[:m.start()].count("\n") + 1
                fails.append("%s:%d: a report on the writer branches on the format" % (rel, line))
    fails += missing_named_files(root, "## Adding an output format")
    return finish(fails, "%d formats, %d reports on the writer" % (len(formats), len(WRITER_REPORTS)))


if __name__ == "__main__":
    sys.exit(main())
