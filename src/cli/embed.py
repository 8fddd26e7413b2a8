#!/usr/bin/env python3
"""Embed a text file as a C string: embed.py INPUT OUTPUT SYMBOL."""
import sys

src, dst, sym = sys.argv[1:4]
data = open(src, "rb").read()
with open(dst, "w") as f:
    f.write("/* generated from %s; do not edit */\n" % src.split("/")[-1])
    f.write("const char %s[] = {\n" % sym)
    for i in range(0, len(data), 16):
        f.write("  " + ", ".join(str(b) for b in data[i:i + 16]) + ",\n")
    f.write("  0\n};\n")
