#!/usr/bin/python3
"""Checks that the folders of src/ form layers: no file of src/ includes a header of a folder
that (directly or through other folders) includes it back.

Each folder src/X is a node. An edge X -> Y exists when a file of src/X includes a private header
"Y/..." or a public header "heraldry/h.hpp" that belongs to folder Y, or when a public header of
X includes one of Y. Public headers belong to the folder that implements them (table below; a
header missing from it is an error, so a new header must be placed). Prints the cycles and exits
1 if there is one, else prints the layers (each folder after everything it depends on) and exits 0.

Usage: check_layers.py SOURCE_DIR
"""
import os
import re
import sys

OWNER = {
    "common.hpp": None,  # vocabulary of every layer
    "link.hpp": "link",
    "gaussian.hpp": "gaussian",
    "crossing.hpp": "gaussian",
    "fock.hpp": "fock",
    "swap.hpp": "fock",
    "measures.hpp": "measures",
    "steps.hpp": "steps",
    "exact.hpp": "exact",
    "point.hpp": "point",
    "relay.hpp": "point",
    "scenario.hpp": "scenario",
    "sweep.hpp": "sweep",
    "tune.hpp": "sweep",
    "verdict.hpp": "verdict",
    "output.hpp": "io",
    "ranks.hpp": "ranks",
    "run.hpp": "run",
    "python.hpp": "python",
}
INCLUDE = re.compile(r'^\s*#\s*include\s+"([^"]+)"', re.M)


def targets(text, folders):
    out = set()
    for inc in INCLUDE.findall(text):
        head, _, name = inc.partition("/")
        if head == "heraldry":
            if name not in OWNER:
                raise SystemExit(f"check_layers: public header heraldry/{name} has no folder in OWNER")
            if OWNER[name]:
                out.add(OWNER[name])
        elif head in folders:
            out.add(head)
    return out


def main():
    root = sys.argv[1]
    src = os.path.join(root, "src")
    folders = sorted(d for d in os.listdir(src) if os.path.isdir(os.path.join(src, d)))
    edges = {f: set() for f in folders}
    for f in folders:
        for dirpath, _, files in os.walk(os.path.join(src, f)):
            for name in files:
                if name.endswith((".cpp", ".hpp")):
                    edges[f] |= targets(open(os.path.join(dirpath, name), encoding="utf-8").read(), folders)
    inc = os.path.join(root, "include", "heraldry")
    for name in sorted(os.listdir(inc)):
        if name not in OWNER:
            raise SystemExit(f"check_layers: public header heraldry/{name} has no folder in OWNER")
        owner = OWNER[name]
        deps = targets(open(os.path.join(inc, name), encoding="utf-8").read(), folders)
        if owner:
            edges.setdefault(owner, set()).update(deps)
        elif deps:
            raise SystemExit(f"check_layers: heraldry/{name} belongs to every layer and must include no other header")
    for f in edges:
        edges[f].discard(f)

    # Cycles: depth-first search with colours.
    colour, stack, cycles = {}, [], []

    def visit(n):
        colour[n] = 1
        stack.append(n)
        for m in sorted(edges.get(n, ())):
            if colour.get(m) == 1:
                cycles.append(stack[stack.index(m):] + [m])
            elif m not in colour:
                visit(m)
        stack.pop()
        colour[n] = 2

    for n in sorted(edges):
        if n not in colour:
            visit(n)
    if cycles:
        for c in cycles:
            print("cycle: " + " -> ".join(c))
        return 1
    order, done = [], set()
    while len(done) < len(edges):
        ready = sorted(n for n in edges if n not in done and edges[n] <= done)
        order.append(ready)
        done |= set(ready)
    for i, layer in enumerate(order):
        print(f"layer {i}: " + ", ".join(layer))
    return 0


if __name__ == "__main__":
    sys.exit(main())
