#!/usr/bin/python3
"""Keep DEVELOPERS.md "Adding a part kind" and its src/parts/ paragraph honest.

usage: kind_steps.py SOURCE_ROOT

The steps say: a kind is its functions in the file of its family (declared in
src/parts/family.h under that file's name) plus one entry of the table in
src/parts/kinds.c.  This checks, from the source:
  1. the family files are the same four ways: the .c files of src/parts/ but
     parts.c and kinds.c, the `/* FILE.c: kinds */` groups of family.h, the
     parts/*.c files of src/meson.build, and the files DEVELOPERS.md's
     src/parts/ paragraph names;
  2. every kind of the table is named in exactly one group of family.h, and
     every kind a group names is in the table;
  3. every function the table names (.stamp = ..., .current = ..., ...) is
     static in kinds.c (an answer several kinds share) or declared in
     family.h and defined in exactly one family file (the tests' kind:
     tests/house/testsink_kind.c);
  4. every file the section names exists.
It fails with a line per broken step.
"""
import os
import re
import sys

from format_steps import finish, missing_named_files, read

HOOKS = r"branches|stamp|current|edges|is_nonlinear|init|update|results|monotone|other_pins|pin_power"


def main():
    root = sys.argv[1]
    fails = []
    parts_dir = os.path.join(root, "src", "parts")
    on_disk = {f for f in os.listdir(parts_dir) if f.endswith(".c")} - {"parts.c", "kinds.c"}
    family_h = read(root, "src/parts/family.h")
    groups = dict(re.findall(r"^/\* (\w+\.c): ([^*]*?) \*/$", family_h, re.M))
    build = set(re.findall(r"'parts/(\w+\.c)'", read(root, "src/meson.build"))) - {"parts.c", "kinds.c"}
    dev = read(root, "DEVELOPERS.md")
    para = dev[dev.index("- **`src/parts/`**"):]
    para = para[:para.index("\n- **", 5)]
    named = set(re.findall(r"`(\w+\.c)`", para)) - {"parts.c", "kinds.c"}
    for what, files in (("family.h's groups", set(groups)), ("src/meson.build", build),
                        ("DEVELOPERS.md's src/parts/ paragraph", named)):
        if files != on_disk:
            fails.append("%s names the family files %s; src/parts/ has %s" % (what, sorted(files), sorted(on_disk)))

    kinds_c = read(root, "src/parts/kinds.c")
    table = kinds_c[kinds_c.index("kinds[] = {"):]
    test_part = table[table.index("#ifdef LS_TEST_KINDS"):] if "#ifdef LS_TEST_KINDS" in table else ""
    kinds = re.findall(r'\{\.name = "(\w+)"', table.replace(test_part, ""))
    grouped = [k.strip() for g in groups.values() for k in g.split(",")]
    for k in kinds:
        if grouped.count(k) != 1:
            fails.append("kind %s is in %d groups of family.h, not one" % (k, grouped.count(k)))
    for k in set(grouped) - set(kinds):
        fails.append("family.h names a kind %s that the table does not have" % k)

    sources = {f: read(root, "src/parts/" + f) for f in on_disk}
    sources["testsink_kind.c (tests)"] = read(root, "tests/house/testsink_kind.c")
    for fn in sorted(set(re.findall(r"\.(?:%s) = (\w+)" % HOOKS, table))):
        if re.search(r"^static \w[^\n(]*\b%s\(" % fn, kinds_c, re.M):
            continue
        if not re.search(r"\b%s\([^;]*\);" % fn, family_h):
            fails.append("%s, named by the table, is neither static in kinds.c nor declared in family.h" % fn)
        homes = [f for f, s in sources.items() if re.search(r"^\w[^\n(]*\b%s\(" % fn, s, re.M)]
        if len(homes) != 1:
            fails.append("%s is defined in %s, not in one family file" % (fn, homes or "no family file"))

    fails += missing_named_files(root, "## Adding a part kind")
    return finish(fails, "%d family files, %d kinds" % (len(on_disk), len(kinds)))


if __name__ == "__main__":
    sys.exit(main())
