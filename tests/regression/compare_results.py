#!/usr/bin/python3
"""Regression check of heraldry result files: every dataset and attribute of the reference file
must be in the new file with the same value (numbers to 1e-12, relative to max(1, |value|)).
The new file may hold more (new figures); provenance attributes (time, version, threads, ranks)
and the words of `description` attributes are not compared.

Usage: compare_results.py REFERENCE.h5 NEW.h5 [--tolerance T]
Exit code 0 when the reference is contained, 1 otherwise (differences printed).
"""
import sys

import h5py
import numpy as np

IGNORED = {"created_utc", "ranks", "threads", "tool_version",
           # HDF5 dimension-scale bookkeeping (object references; the labels are tested elsewhere)
           "DIMENSION_LIST", "REFERENCE_LIST", "CLASS", "NAME", "DIMENSION_LABELS"}
# Words may improve between versions; what they describe (values, units) may not change.
WORDS = {"description"}


def as_text(v):
    return v.decode() if isinstance(v, bytes) else v


def same(x, y, tol):
    if isinstance(x, (bytes, str)) or isinstance(y, (bytes, str)):
        return as_text(x) == as_text(y)
    x, y = np.asarray(x), np.asarray(y)
    if x.shape != y.shape:
        return False
    if x.dtype.kind in "fiu" and y.dtype.kind in "fiu":
        x, y = x.astype(float), y.astype(float)
        return bool(np.all(np.abs(x - y) <= tol * np.maximum(1.0, np.abs(x))))
    return np.array_equal(x, y)


def group_map(ref, new):
    """Protocol groups matched by their `name` attribute (group names may change their form)."""
    mapping = {}
    for top in ("protocols", "verdict"):
        if top not in ref or top not in new:
            continue
        by_name = {as_text(g.attrs["name"]): key for key, g in new[top].items()
                   if isinstance(g, h5py.Group) and "name" in g.attrs}
        for key, g in ref[top].items():
            if isinstance(g, h5py.Group) and "name" in g.attrs and as_text(g.attrs["name"]) in by_name:
                mapping[f"{top}/{key}"] = f"{top}/{by_name[as_text(g.attrs['name'])]}"
    return mapping


def axis_map(ref, new, mapping):
    """Axis names matched by position in each protocol's `dims` attribute (the names of swept
    parameters may change their form; their order and values may not)."""
    names = {}
    for old_group, new_group in mapping.items():
        if not old_group.startswith("protocols/"):
            continue
        a, b = ref[old_group].attrs.get("dims"), new[new_group].attrs.get("dims")
        if a is None or b is None:
            continue
        a, b = as_text(a).split(","), as_text(b).split(",")
        if len(a) == len(b):
            names[old_group.split("/", 1)[1]] = dict(zip(a, b))
    return names


def translate(name, mapping, axes=None):
    for old, new in mapping.items():
        if name == old or name.startswith(old + "/"):
            rest = name[len(old):]
            group = old.split("/", 1)[1]
            if axes and group in axes and rest.startswith("/axes/"):
                rest = "/axes/" + axes[group].get(rest[len("/axes/"):], rest[len("/axes/"):])
            return new + rest
    return name


def translate_attr(key, group, axes):
    """best_<axis> attributes of the verdict follow the axis names."""
    if axes and group in axes and key.startswith("best_"):
        return "best_" + axes[group].get(key[len("best_"):], key[len("best_"):])
    return key


def compare(ref, new, tol):
    problems = []
    items = {}
    ref.visititems(lambda name, obj: items.update({name: obj}))
    mapping = group_map(ref, new)
    axes = axis_map(ref, new, mapping)
    for name, obj in [("/", ref)] + sorted(items.items()):
        target = translate(name, mapping, axes)
        if name != "/" and target not in new:
            problems.append(f"{name}: missing in the new file")
            continue
        other = new if name == "/" else new[target]
        if isinstance(obj, h5py.Dataset) and not same(obj[()], other[()], tol):
            problems.append(f"{name}: values differ")
        group = name.split("/")[1] if name.count("/") >= 1 and name.startswith("verdict/") else None
        for key, value in obj.attrs.items():
            if key in IGNORED or key in WORDS:
                continue
            new_key = translate_attr(key, group, axes)
            if key == "dims":
                continue  # compared through the axes themselves
            if new_key not in other.attrs:
                problems.append(f"{name}@{key}: missing in the new file")
            elif not same(value, other.attrs[new_key], tol):
                problems.append(f"{name}@{key}: {value!r} != {other.attrs[new_key]!r}")
    return problems, len(items)


def main():
    args = sys.argv[1:]
    tol = 1e-12
    if "--tolerance" in args:
        i = args.index("--tolerance")
        tol = float(args[i + 1])
        del args[i:i + 2]
    if len(args) != 2:
        print(__doc__.strip().splitlines()[-2], file=sys.stderr)
        return 2
    with h5py.File(args[0], "r") as a, h5py.File(args[1], "r") as b:
        problems, n = compare(a, b, tol)
    for p in problems:
        print("differs:", p)
    if problems:
        return 1
    print(f"contained: {n} groups and datasets of {args[0]} in {args[1]} (tolerance {tol:g})")
    return 0


if __name__ == "__main__":
    sys.exit(main())
