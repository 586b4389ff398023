#!/usr/bin/python3
"""Compares two heraldry result files value by value (exact equality, no tolerance).

Usage: compare_h5.py A.h5 B.h5

Every dataset and every attribute must be present in both files with identical values, except
the provenance attributes that legitimately differ between runs (created_utc, ranks, threads).
Each grid point is independent and deterministic, so a run split over MPI ranks, or stopped and
resumed, must reproduce a single-process run bit for bit. Exit code 0 when equal, 1 otherwise
(the differences are printed).
"""
import sys

import h5py
import numpy as np

IGNORED_ATTRIBUTES = {"created_utc", "ranks", "threads"}
# Dimension-scale bookkeeping holds HDF5 object references, which compare by address in the file,
# not by meaning; they are compared by the names they resolve to instead.
REFERENCE_ATTRIBUTES = {"DIMENSION_LIST", "REFERENCE_LIST"}


def resolved(f, value):
    """Names the object references in a dimension-scale attribute point to."""
    names = []
    for item in np.asarray(value, dtype=object).ravel():
        if isinstance(item, np.void) or isinstance(item, tuple):
            names.append((f[item[0]].name, int(item[1])))
        elif isinstance(item, np.ndarray):
            names.append(tuple(f[r].name for r in item.ravel()))
        else:
            names.append(f[item].name)
    return sorted(names, key=repr)


def attributes(obj):
    return {k: v for k, v in obj.attrs.items() if k not in IGNORED_ATTRIBUTES}


def same(x, y):
    if isinstance(x, (bytes, str)) or isinstance(y, (bytes, str)):
        return x == y
    x, y = np.asarray(x), np.asarray(y)
    return x.shape == y.shape and x.dtype == y.dtype and np.array_equal(x, y)


def compare(a, b):
    problems = []
    # visititems stops at the first callback that returns something: collect, return None.
    items, names_b = {}, set()
    a.visititems(lambda name, obj: items.update({name: obj}))
    b.visititems(lambda name, obj: names_b.add(name))
    for name in sorted(set(items) ^ names_b):
        problems.append(f"{name}: only in {'first' if name in items else 'second'} file")
    for name, obj in [("/", a)] + sorted(items.items()):
        if name != "/" and name not in names_b:
            continue
        other = b if name == "/" else b[name]
        if isinstance(obj, h5py.Dataset):
            if not same(obj[()], other[()]):
                diff = np.max(np.abs(np.asarray(obj[()], float) - np.asarray(other[()], float))) \
                    if np.issubdtype(obj.dtype, np.number) and obj.shape == other.shape else "n/a"
                problems.append(f"{name}: values differ (max |difference| {diff})")
        aa, ab = attributes(obj), attributes(other)
        for key in sorted(set(aa) | set(ab)):
            if key not in aa or key not in ab:
                problems.append(f"{name}@{key}: attribute in one file only")
            elif key in REFERENCE_ATTRIBUTES:
                if resolved(a, aa[key]) != resolved(b, ab[key]):
                    problems.append(f"{name}@{key}: dimension scales differ")
            elif not same(aa[key], ab[key]):
                problems.append(f"{name}@{key}: {aa[key]!r} != {ab[key]!r}")
    return problems, len(items)


def main():
    if len(sys.argv) != 3:
        print(__doc__.strip().splitlines()[2], file=sys.stderr)
        return 2
    with h5py.File(sys.argv[1], "r") as a, h5py.File(sys.argv[2], "r") as b:
        problems, n = compare(a, b)
    for p in problems:
        print("differs:", p)
    if problems:
        return 1
    print(f"identical: {n} groups and datasets and their attributes ({sys.argv[1]} vs {sys.argv[2]})")
    return 0


if __name__ == "__main__":
    sys.exit(main())
