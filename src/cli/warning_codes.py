#!/usr/bin/env python3
"""The warning codes of docs/warnings.md (its "### `code`" headings) as a C
array, so `check --fail-on` knows every code the program can give:
warning_codes.py WARNINGS.md OUTPUT.c.  The docs-warning-codes test keeps that
page and the ls_warning calls of src/ in agreement."""
import re
import sys

src, dst = sys.argv[1:3]
codes = re.findall(r"^### `([a-z0-9-]+)`", open(src, encoding="utf-8").read(), re.M)
with open(dst, "w") as f:
    f.write("/* generated from warnings.md; do not edit */\n#include <stddef.h>\n")
    f.write("const char *const ls_warning_codes[] = {\n")
    for c in codes:
        f.write('    "%s",\n' % c)
    f.write("    NULL\n};\n")
