#!/usr/bin/python3
"""The house's dependency rule: every #include points down the pipeline.

usage: deps.py SOURCE_ROOT

The folders of src/ are stages of one pipeline, each allowed to include only
itself and the stages before it:

    base <- lang <- netlist <- parts <- elab <- mna <- solve <- analysis <- report <- api <- cli

(`api` is src/api.c with the public header include/loadstack/loadstack.h, and
src/circuit.[ch], the one loader both the library and the program use; the
program's commands in cli/ sit on top.)  The script reads every `#include "..."`
line of src/ and fails on
  - an include of a header that is not in the tree (a stale path after a move),
  - an arrow against the pipeline (a stage including a later stage's header),
  - an include cycle between modules (a module is a .c file with its .h), also
    inside one folder,
  - an entry of KNOWN below that no longer happens (the list only shrinks),
  - the program's exit codes (`LS_EXIT_`) named anywhere but in src/cli/ and
    src/api.c: the analyses answer an ls_outcome (analysis/outcome.h), and
    only the program (cli/) and the public API (api.c) map it.
KNOWN holds the arrows and cycles that are still to be mended, each with why it
is there; DEVELOPERS.md "The house" describes the layout.
"""
import os
import re
import sys

LAYERS = ["base", "lang", "netlist", "parts", "elab", "mna", "solve", "analysis", "report", "api", "cli"]

# Arrows against the pipeline still in the tree: (including file, included header).
KNOWN = {
}
# Include cycles still in the tree, as sorted tuples of modules (folder/basename).
KNOWN_CYCLES = {
}

INCLUDE = re.compile(r'^\s*#\s*include\s*"([^"]+)"', re.M)
EXIT_CODE = re.compile(r'\bLS_EXIT_\w*')


def exit_code_allowed(rel):
    """May src/REL name the program's exit codes?"""
    return rel.startswith("cli/") or rel == "api.c"


def layer_of(rel):
    """The stage of a path relative to src/ (or of the public header)."""
    if rel.startswith("loadstack/") or "/" not in rel:
        return "api"
    return rel.split("/", 1)[0]


def scan(root, exit_uses=None):
    """{file relative to src/: [included paths relative to src/ or include/]};
    exit_uses, when given, gets (file, line number, line) for every use of an
    exit code where exit_code_allowed says no."""
    src = os.path.join(root, "src")
    out = {}
    for base, _, names in os.walk(src):
        for n in names:
            if n.endswith((".c", ".h", ".cc")):
                path = os.path.join(base, n)
                rel = os.path.relpath(path, src)
                with open(path, encoding="utf-8", errors="replace") as f:
                    text = f.read()
                out[rel] = INCLUDE.findall(text)
                if exit_uses is not None and not exit_code_allowed(rel):
                    for n, line in enumerate(text.split("\n"), 1):
                        if EXIT_CODE.search(line):
                            exit_uses.append((rel, n, line.strip()))
    return out


def module(rel):
    return os.path.splitext(rel)[0]


def cycles(edges):
    """The strongly connected components of more than one module (Tarjan)."""
    index, low, stack, on, comps = {}, {}, [], set(), []
    counter = [0]

    def visit(v):
        index[v] = low[v] = counter[0]
        counter[0] += 1
        stack.append(v)
        on.add(v)
        for w in sorted(edges.get(v, ())):
            if w not in index:
                visit(w)
                low[v] = min(low[v], low[w])
            elif w in on:
                low[v] = min(low[v], index[w])
        if low[v] == index[v]:
            comp = []
            while True:
                w = stack.pop()
                on.discard(w)
                comp.append(w)
                if w == v:
                    break
            if len(comp) > 1:
                comps.append(tuple(sorted(comp)))

    sys.setrecursionlimit(10000)
    for v in sorted(edges):
        if v not in index:
            visit(v)
    return comps


def main():
    root = sys.argv[1] if len(sys.argv) > 1 else os.path.join(os.path.dirname(__file__), "..", "..")
    exit_uses = []
    files = scan(root, exit_uses)
    failed = 0
    for rel, n, line in exit_uses:
        print("FAIL src/%s:%d names an exit code outside src/cli/ and src/api.c (return an ls_outcome, "
              "analysis/outcome.h): %s" % (rel, n, line))
        failed += 1
    seen_known = set()
    edges = {}
    for rel, incs in sorted(files.items()):
        here = layer_of(rel)
        if here not in LAYERS:
            print("FAIL src/%s: folder '%s' is not a stage of the pipeline (%s)" % (rel, here, ", ".join(LAYERS)))
            failed += 1
            continue
        for inc in incs:
            if inc.startswith("loadstack/"):
                target = inc
                if not os.path.exists(os.path.join(root, "include", inc)):
                    print("FAIL src/%s: includes \"%s\", which is not in include/" % (rel, inc))
                    failed += 1
            elif inc.startswith("../") or inc.endswith(".c"):
                continue        # generated or local text, not a module's header
            else:
                target = inc
                if not os.path.exists(os.path.join(root, "src", inc)):
                    print("FAIL src/%s: includes \"%s\", which is not in src/ (include paths start at src/)"
                          % (rel, inc))
                    failed += 1
                    continue
                if module(inc) != module(rel):
                    edges.setdefault(module(rel), set()).add(module(inc))
            there = layer_of(target)
            if LAYERS.index(there) > LAYERS.index(here):
                if (rel, inc) in KNOWN:
                    seen_known.add((rel, inc))
                    continue
                print("FAIL src/%s (%s) includes %s (%s): an arrow against the pipeline %s"
                      % (rel, here, inc, there, " <- ".join(LAYERS)))
                failed += 1
    for rel, inc in sorted(set(KNOWN) - seen_known):
        print("FAIL KNOWN lists src/%s -> %s, which no longer happens: take it off the list" % (rel, inc))
        failed += 1
    found = set(cycles(edges))
    for c in sorted(found - set(KNOWN_CYCLES)):
        print("FAIL an include cycle: %s" % " -> ".join(c + (c[0],)))
        failed += 1
    for c in sorted(set(KNOWN_CYCLES) - found):
        print("FAIL KNOWN_CYCLES lists %s, which is no longer a cycle: take it off the list" % (c,))
        failed += 1
    print("%d files, %d includes between modules, %d known arrows against the pipeline, %d known cycles, "
          "%d exit codes outside cli/ and api.c, %d failed"
          % (len(files), sum(len(v) for v in edges.values()), len(seen_known), len(found & set(KNOWN_CYCLES)),
             len(exit_uses), failed))
    return 1 if failed else 0


if __name__ == "__main__":
    sys.exit(main())
