#!/usr/bin/python3
"""Draw the figures of heraldry result files (HDF5, layout in docs/design.md §9).

    scripts/plot.py RESULT.h5 [MORE.h5 ...] [--out FOLDER]

One file: writes, next to the file unless --out names a folder,
  <stem>_entanglement.png       log-negativity versus distance, bare link, midpoint relay, PLOB
                                bound, target, where the bare link becomes separable
  <stem>_fidelity.png           teleportation fidelity versus distance, classical limit 1/2
  <stem>_rates.png              success probability and heralding rate versus distance
  <stem>_map_<protocol>.png     E_N gain over the bare link, distance x first swept axis
  <stem>_trade_<protocol>.png   at the target distance, for two swept axes (e.g. a counter's
                                efficiency and dark rate): E_N gain and heralding rate maps
Several files: the three line figures overlay the files on one set of axes,
  <stem1>_vs_<stem2>_entanglement.png (and _fidelity, _rates), legend names carrying the file
  stem in brackets, one line style per file (solid, dashed, dash-dot, dotted); the maps cannot
  share axes and are drawn for each file under its own stem.
Prints the path of each PNG. Exit code 2 for a missing file or a file without the layout.

Conventions:
- A protocol keeps its colour in every file and figure: the colour (and the marker) comes from
  a stable hash of its name (CRC-32), not from its place in the file. The bare link and any
  protocol that is only the link are black; the midpoint relay is brown.
- Status 0 (ok) and 5 (separable input: an exact result, N = E_N = 0) are results and drawn as
  values. Status 1 (truncation budget missed), 2 (herald probability below round-off) and 4
  (invalid result) are failures: never drawn as values, but marked along the bottom of the line
  figures (x, v and diamond) and crossed out on the maps. Status 3 (not computed) is left out.
- Where the bare link becomes separable (/verdict bare_survival_distance_m, refined by the
  Gaussian layer) a vertical line says that beyond it no local stage restores entanglement.
- A protocol with swept parameters is drawn as its envelope (best value over the swept axes at
  each distance); in a single-file figure the verdict's best setting, when the file names one,
  is drawn dotted. "Bare link" means the Gaussian layer (/gaussian), which needs no Fock cutoff.
- Map cells are centred on the grid values, with edges half-way between neighbours
  (geometrically half-way, on a log axis, for an axis spanning two decades or more).
Needs h5py, numpy and matplotlib; run with /usr/bin/python3 on Debian.
"""
import argparse
import math
import os
import re
import sys
import textwrap
import zlib

import numpy as np
import matplotlib
matplotlib.use("Agg")
import matplotlib.pyplot as plt  # noqa: E402  (backend chosen first)
from matplotlib import colors  # noqa: E402
from matplotlib import patheffects  # noqa: E402
from matplotlib.lines import Line2D  # noqa: E402
from matplotlib.patches import Patch  # noqa: E402
from matplotlib.ticker import MaxNLocator  # noqa: E402
import h5py  # noqa: E402

DPI = 120
FIGSIZE = (8.0, 5.0)
HALO = [patheffects.withStroke(linewidth=3.0, foreground="white")]   # lines over the map stay visible
OFF_CHART = 1e300          # plob/rci store the largest double where the path is lossless
FIGURES = ("success_probability", "log_negativity", "fidelity", "heralding_rate_hz")

# Status codes (the file's `status_codes` attribute spells them out).
OK, BUDGET_MISSED, BELOW_ROUNDOFF, NOT_COMPUTED, INVALID, SEPARABLE = 0, 1, 2, 3, 4, 5
RESULT_CODES = (OK, SEPARABLE)                       # figures one may quote
FAILURE_CODES = (BUDGET_MISSED, BELOW_ROUNDOFF, INVALID)
FAILURE_STYLE = {BUDGET_MISSED: ("x", "truncation budget missed"),
                 BELOW_ROUNDOFF: ("v", "herald probability below round-off"),
                 INVALID: ("D", "invalid result")}
METHOD_NAMES = {1: "covariance matrix", 2: "photon-number distribution", 3: "Gaussian sum", 4: "Fock space"}

# Fixed colours. The palette leaves out black (the bare link), brown (the relay) and greys (bounds).
BARE_COLOUR = "#000000"
RELAY_COLOUR = "#8c564b"
PALETTE = ("#1f77b4", "#ff7f0e", "#2ca02c", "#d62728", "#9467bd", "#e377c2", "#bcbd22", "#17becf",
           "#000075", "#469990")
MARKERS = ("o", "s", "^", "P", "*", "h", "<", ">")
FILE_STYLES = ("-", "--", "-.", ":")
BARE_NAMES = ("bare", "bare link", "bare-link", "bare_link", "link")


class LayoutError(Exception):
    """The file is not a heraldry result file (or lacks a part the figures need)."""


class MissingInput(Exception):
    """The result file named on the command line does not exist (or is not a file)."""


# ---------------------------------------------------------------- colours

def name_hash(name):
    """A hash of a protocol name that is the same in every run and on every machine (CRC-32 of
    the UTF-8 bytes; Python's hash() is salted per process)."""
    return zlib.crc32(name.strip().encode("utf-8"))


def is_bare(name, link_only=False):
    """The bare link: a protocol named so, or one whose only step is the link."""
    return link_only or name.strip().lower() in BARE_NAMES


def protocol_colour(name, link_only=False):
    """The colour of a protocol, the same in every file: black for the bare link, otherwise a
    palette entry chosen by the hash of the name."""
    return BARE_COLOUR if is_bare(name, link_only) else PALETTE[name_hash(name) % len(PALETTE)]


def protocol_marker(name, link_only=False):
    """The marker of a protocol (from the same hash), so that two names sharing a colour by
    chance still differ on the figure."""
    return "o" if is_bare(name, link_only) else MARKERS[(name_hash(name) // len(PALETTE)) % len(MARKERS)]


# ---------------------------------------------------------------- reading

def attr_text(obj, key, default=""):
    value = obj.attrs.get(key, default)
    return value.decode() if isinstance(value, bytes) else value


def need(group, path):
    if path not in group:
        raise LayoutError(f"missing '{group.name.rstrip('/')}/{path}'")
    return group[path]


def read_protocol(group, key, verdict, n_dist):
    """One protocol: its swept axes, its figures as masked arrays [distance, axis1, ...] (masked
    where the status is not a result) and its status codes."""
    dims = [d for d in attr_text(group, "dims", "distance_m").split(",") if d]
    axes = []
    for name in dims[1:]:
        ds = need(group, f"axes/{name}")
        axes.append(dict(name=name, values=ds[...].astype(float), units=attr_text(ds, "units", "1"),
                         description=attr_text(ds, "description", name)))
    status = need(group, "status")[...].astype(int)
    if status.shape[0] != n_dist or status.ndim != len(dims):
        raise LayoutError(f"'{group.name}/status' has shape {status.shape}, dims {dims}")
    if "done" in group:
        status = np.where(group["done"][...] == 0, NOT_COMPUTED, status)
    bad = ~np.isin(status, RESULT_CODES)
    method = group["method"][...].astype(int) if "method" in group else np.zeros_like(status)
    data = {}
    for figure in FIGURES:
        values = need(group, figure)[...].astype(float)
        data[figure] = np.ma.masked_array(values, mask=bad | ~np.isfinite(values))
    steps = sorted(group["steps"].keys()) if "steps" in group else []
    link_only = len(steps) > 0 and all(s.split("_", 1)[-1] == "link" for s in steps)
    name = attr_text(group, "name", key)
    # The verdict's best setting: the grid index nearest to best_<axis>, index 0 without one.
    attrs = verdict[key].attrs if verdict is not None and key in verdict else {}
    best, named = [], False
    for ax in axes:
        if f"best_{ax['name']}" in attrs:
            best.append(int(np.argmin(np.abs(ax["values"] - float(attrs[f"best_{ax['name']}"])))))
            named = True
        else:
            best.append(0)
    return dict(name=name, key=key, axes=axes, data=data, status=status, method=method, best=tuple(best),
                best_named=named, link_only=link_only,
                colour=protocol_colour(name, link_only), marker=protocol_marker(name, link_only),
                failed=int(np.isin(status, FAILURE_CODES).sum()),
                separable=int((status == SEPARABLE).sum()),
                not_computed=int((status == NOT_COMPUTED).sum()), points=status.size)


def bare_crossing(f, distance):
    """Where the bare link becomes separable: (distance or None, kind). From the verdict's
    bare_survival_distance_m / _kind ('crossed', 'beyond grid', 'never': separable from the first
    grid point on, 'never breaks': pure loss); without a verdict, from the Gaussian layer."""
    verdict = f["verdict"] if "verdict" in f else None
    if verdict is not None and "bare_survival_distance_kind" in verdict.attrs:
        kind = attr_text(verdict, "bare_survival_distance_kind")
        d = float(verdict.attrs.get("bare_survival_distance_m", np.nan))
        return (d if kind in ("crossed", "never") and np.isfinite(d) else None), kind
    en = f["gaussian/log_negativity"][...].astype(float)
    order = np.argsort(distance, kind="stable")
    d, en = distance[order], en[order]
    zero = np.flatnonzero(~(en > 0.0))
    if zero.size == 0:
        return None, "beyond grid"
    i = zero[0]
    return (float(d[i]), "crossed" if i > 0 else "never")


def read_result(path):
    """Everything the figures need, as plain numpy values; raises LayoutError."""
    if not os.path.isfile(path):
        raise MissingInput(f"{'not a file' if os.path.exists(path) else 'no such file'}: {path}")
    try:
        f = h5py.File(path, "r")
    except OSError as err:
        raise LayoutError(f"not an HDF5 file ({err})") from None
    with f:
        dist_ds = need(f, "axes/distance_m")
        dist = dist_ds[...].astype(float)
        if dist.ndim != 1 or dist.size == 0:
            raise LayoutError("'/axes/distance_m' is not a non-empty 1-D dataset")
        gauss = {}
        for key in ("log_negativity", "fidelity", "plob_ebits", "relay_log_negativity", "relay_fidelity"):
            if key.startswith("relay") and f"gaussian/{key}" not in f:
                continue
            ds = need(f, f"gaussian/{key}")
            values = ds[...].astype(float)
            gauss[key] = np.ma.masked_array(values, mask=~np.isfinite(values) | (values > OFF_CHART))
            gauss[key + "_units"] = attr_text(ds, "units", "1")
        if len(need(f, "protocols")) == 0:
            raise LayoutError("'/protocols' holds no protocol")
        verdict = f["verdict"] if "verdict" in f else None
        protocols = [read_protocol(f["protocols"][key], key, verdict, dist.size) for key in f["protocols"]]
        crossing, crossing_kind = bare_crossing(f, dist)
        # Lines and maps need increasing distances; a scenario's list may come in any order.
        order = np.argsort(dist, kind="stable")
        dist = dist[order]
        for key in list(gauss):
            if not key.endswith("_units"):
                gauss[key] = gauss[key][order]
        for proto in protocols:
            proto["data"] = {key: values[order] for key, values in proto["data"].items()}
            proto["status"] = proto["status"][order]
            proto["method"] = proto["method"][order]
        first = f["protocols"][protocols[0]["key"]]
        units = {key: attr_text(first[key], "units", "1") for key in FIGURES}
        descriptions = {key: attr_text(first[key], "description", key) for key in FIGURES}
        target = float(verdict.attrs["target_m"]) if verdict is not None and "target_m" in verdict.attrs else None
        # Swept hardware (link or source keys): the Gaussian layer uses each key's first value.
        hardware = sorted({ax["description"] for p in protocols for ax in p["axes"]
                           if ax["name"].startswith(("link.", "source."))})
        return dict(path=path, stem=os.path.splitext(os.path.basename(path))[0], suffix="",
                    title=attr_text(f, "title", os.path.basename(path)), distance=dist,
                    distance_units=attr_text(dist_ds, "units", "m"),
                    distance_description=attr_text(dist_ds, "description", "distance"),
                    gaussian=gauss, protocols=protocols, units=units, descriptions=descriptions,
                    target=target, crossing=crossing, crossing_kind=crossing_kind, hardware=hardware)


# ---------------------------------------------------------------- drawing helpers

def label(text, units, width=60):
    """Axis label: the text, wrapped, then the units in parentheses (none for '1')."""
    suffix = "" if units in ("", "1") else f" ({units})"
    return "\n".join(textwrap.wrap(text + suffix, width))


def wrap(text, width=30):
    return "\n".join(textwrap.wrap(text, width))


def slug(name):
    return re.sub(r"[^a-z0-9]+", "-", name.lower()).strip("-") or "protocol"


def largest(values, default=0.0):
    """Largest unmasked value, `default` when every point is masked."""
    return float(np.ma.max(values)) if np.ma.count(values) else default


def smallest(values, default=0.0):
    return float(np.ma.min(values)) if np.ma.count(values) else default


def edges(values):
    """Cell edges around increasing centres for pcolormesh: half-way between neighbours inside,
    the end cells as wide on the outside as on the inside (each cell centred on its value)."""
    if values.size == 1:
        half = 0.05 * abs(values[0]) or 0.5
        return np.array([values[0] - half, values[0] + half])
    mid = 0.5 * (values[1:] + values[:-1])
    return np.concatenate([[2 * values[0] - mid[0]], mid, [2 * values[-1] - mid[-1]]])


def spans_decades(values, decades=2.0):
    values = np.asarray(values, dtype=float)
    return values.size > 1 and bool(np.all(values > 0)) and values.max() / values.min() >= 10.0 ** decades


def cell_edges(values):
    """Edges for pcolormesh: geometric on an axis spanning two decades or more (drawn on a log
    scale), else arithmetic. Returns (edges, log)."""
    if spans_decades(values):
        return np.exp(edges(np.log(values))), True
    return edges(values), False


def envelope(values):
    """Best (largest) value over the swept axes at each distance; masked where all failed."""
    return values.reshape(values.shape[0], -1).max(axis=1)


def failure_codes(status):
    """Per distance: the failure code to mark (the most frequent of 1, 2, 4 among the settings
    at that distance), 0 where no setting failed."""
    flat = status.reshape(status.shape[0], -1)
    out = np.zeros(flat.shape[0], dtype=int)
    for i, row in enumerate(flat):
        counts = [(int(np.sum(row == c)), c) for c in FAILURE_CODES]
        n, code = max(counts)
        out[i] = code if n else 0
    return out


def setting_text(proto, axes=None, index=None):
    axes = proto["axes"] if axes is None else axes
    index = proto["best"] if index is None else index
    return ", ".join(f"{ax['description']} = {ax['values'][i]:g}" for ax, i in zip(axes, index))


def status_note(results, where="marked along the bottom"):
    """Counts of failed, separable and not computed points, per protocol (and file)."""
    parts, separable = [], []
    for r in results:
        for p in r["protocols"]:
            codes = [f"{FAILURE_STYLE[c][1]} {int(np.sum(p['status'] == c))}" for c in FAILURE_CODES
                     if np.any(p["status"] == c)]
            if p["not_computed"]:
                codes.append(f"not computed {p['not_computed']}")
            if codes:
                parts.append(f"{p['name']}{r['suffix']}: " + ", ".join(codes) + f" of {p['points']}")
            if p["separable"]:
                separable.append(f"{p['name']}{r['suffix']} {p['separable']}")
    notes = []
    if parts:
        notes.append(f"failed points ({where}, not drawn as values): " + "; ".join(parts))
    if separable:
        notes.append("separable input (exact result, E_N = 0, drawn as values): " + "; ".join(separable))
    return notes


def separable_note(results):
    """Where the bare link stays entangled over the whole grid, say so (and how far)."""
    parts = []
    for r in results:
        if r["hardware"] or separable_line(r) is not None:
            continue
        kind, d = r["crossing_kind"], r["crossing"]
        if kind == "never breaks":
            parts.append("the bare link never becomes separable (no thermal noise on the path)" + r["suffix"])
        elif d is not None and d > r["distance"][-1]:
            parts.append(f"the bare link becomes separable at {d:.4g} {r['distance_units']}, past the grid" + r["suffix"])
        elif kind == "beyond grid":
            parts.append("the bare link stays entangled over the whole grid" + r["suffix"])
    return "; ".join(parts) if parts else None


def method_note(results):
    counts = {}
    for r in results:
        for p in r["protocols"]:
            for code, name in METHOD_NAMES.items():
                counts[name] = counts.get(name, 0) + int(np.sum(p["method"] == code))
    used = [f"{name} {n}" for name, n in counts.items() if n]
    return "points by method: " + ", ".join(used) if used else None


def hardware_note(results):
    swept = sorted({h for r in results for h in r["hardware"]})
    if not swept:
        return None
    return ("swept hardware (" + "; ".join(swept) + "): the bare link, the relay and PLOB are those of each key's "
            "first value, not of every setting; no separability line is drawn (it differs between settings)")


def suptitle(results):
    if len(results) == 1:
        return wrap(results[0]["title"], 80)
    return "\n".join(wrap(f"[{r['stem']}] {r['title']}", 95) for r in results)


def new_figure(results, subtitle):
    fig, ax = plt.subplots(figsize=FIGSIZE, dpi=DPI)
    fig.suptitle(suptitle(results), fontsize=11 if len(results) == 1 else 9)
    ax.set_title(subtitle, fontsize=10)
    ax.grid(True, alpha=0.3)
    ax.set_xlabel(distance_label(results[0], 80), fontsize=9)
    return fig, ax


def distance_label(result, width):
    return label(result["distance_description"], result["distance_units"], width)


def mark_target(ax, results):
    seen = set()
    for r in results:
        if r["target"] is not None and r["target"] not in seen:
            seen.add(r["target"])
            ax.axvline(r["target"], color="0.3", ls=":", lw=1.2,
                       label=f"target {r['target']:g} {r['distance_units']}" + (r["suffix"] if len(results) > 1 else ""))


SEPARABLE_WORDS = "separable beyond:\nno local stage restores entanglement"
SEPARABLE_COLOUR = "#6a3d9a"


def separable_line(result):
    """The distance to draw the separability line at, or None: not when the crossing lies beyond
    the grid, and not with swept hardware (the crossing is that of the first hardware value
    only, and would contradict the settings that stay entangled)."""
    d = result["crossing"]
    if d is None or result["hardware"]:
        return None
    lo, hi = result["distance"][0], result["distance"][-1]
    return d if lo <= d <= hi or result["distance"].size == 1 else None


def mark_separable(ax, results, words=True):
    """A vertical line where the bare link becomes separable, with the words beside it."""
    for i, r in enumerate(results):
        d = separable_line(r)
        if d is None:
            continue
        text = f"bare link separable beyond {d:.3g} {r['distance_units']}" if r["crossing_kind"] == "crossed" \
            else "bare link separable on the whole grid"
        ax.axvline(d, color=SEPARABLE_COLOUR, ls=FILE_STYLES[i % len(FILE_STYLES)], lw=1.6, zorder=4,
                   label=text + r["suffix"])
        if words:
            separable_words(ax, d, 0.97 - 0.13 * i, r["distance"], r["suffix"])


def separable_words(ax, d, y, distance, suffix=""):
    """The words beside the separability line, on the side with more room (the separable side
    unless the line is near the right edge)."""
    lo, hi = float(np.min(distance)), float(np.max(distance))
    right = hi <= lo or (d - lo) / (hi - lo) < 0.6
    pad = 0.01 * (hi - lo if hi > lo else 1.0)
    ax.text(d + pad if right else d - pad, y, SEPARABLE_WORDS + suffix, transform=ax.get_xaxis_transform(),
            va="top", ha="left" if right else "right", fontsize=7.5, color=SEPARABLE_COLOUR, path_effects=HALO,
            zorder=5, linespacing=1.1)


def reserve_strip(ax, rows, log=False):
    """Room below the data for `rows` rows of failure markers; returns their heights (axes
    fraction). Call after the limits are final."""
    if rows == 0:
        return []
    frac = min(0.06 * rows + 0.02, 0.35)
    lo, hi = ax.get_ylim()
    if log:
        lo, hi = math.log10(lo), math.log10(hi)
    lo_new = lo - frac / (1.0 - frac) * (hi - lo)
    ax.set_ylim(10.0 ** lo_new if log else lo_new, 10.0 ** hi if log else hi)
    return [0.015 + 0.06 * (k + 0.5) for k in range(rows)]


def draw_failures(ax, rows, log=False):
    """rows: [(distance, codes per distance, colour)]; markers along the bottom, one row each."""
    rows = [r for r in rows if np.any(r[1])]
    heights = reserve_strip(ax, len(rows), log)
    present = set()
    for (dist, codes, colour), y in zip(rows, heights):
        for code in FAILURE_CODES:
            at = codes == code
            if np.any(at):
                present.add(code)
                ax.plot(dist[at], np.full(int(at.sum()), y), ls="none", marker=FAILURE_STYLE[code][0], ms=6,
                        mfc="none", mec=colour, mew=1.4, transform=ax.get_xaxis_transform(), clip_on=False, zorder=6)
    return [Line2D([], [], ls="none", marker=FAILURE_STYLE[c][0], mfc="none", mec="0.2", mew=1.4,
                   label=f"failed: {FAILURE_STYLE[c][1]}") for c in FAILURE_CODES if c in present]


def save(fig, path, notes=()):
    """Notes in small grey type along the bottom edge, space kept for them, then the PNG."""
    text = "\n".join(wrap(n, 150) for n in notes if n)
    bottom = 0.0
    if text:
        fig.text(0.01, 0.005, text, fontsize=7, color="0.35", va="bottom")
        bottom = 0.01 + 0.026 * (text.count("\n") + 1)
    fig.tight_layout(rect=(0.0, bottom, 1.0, 1.0))
    fig.savefig(path, dpi=DPI)
    plt.close(fig)
    return path


def legend_right(ax, extra=()):
    """Legend outside the data, on the right (wrapped labels)."""
    handles, labels = ax.get_legend_handles_labels()
    handles, labels = handles + list(extra), labels + [h.get_label() for h in extra]
    size = 8 if len(labels) <= 10 else 6.5
    ax.legend(handles, [wrap(t, 34) for t in labels], loc="upper left", bbox_to_anchor=(1.02, 1.0),
              fontsize=size, frameon=False, borderaxespad=0.0)


def markers_on(result):
    return result["distance"].size <= 30


def draw_protocols(ax, results, key):
    """Each protocol of each file: its curve (envelope if swept) in its own colour, one line
    style per file; in a single file, dotted, the verdict's best setting. Returns the failure
    rows for draw_failures."""
    fails = []
    for i, r in enumerate(results):
        ls = FILE_STYLES[i % len(FILE_STYLES)]
        for proto in r["protocols"]:
            values = proto["data"][key]
            style = dict(color=proto["colour"], ls=ls, marker=proto["marker"] if markers_on(r) else None, ms=3.5,
                         zorder=3)
            if not proto["axes"]:
                ax.plot(r["distance"], values, label=proto["name"] + r["suffix"], **style)
            else:
                ax.plot(r["distance"], envelope(values),
                        label=f"{proto['name']}{r['suffix']}: envelope over the swept axes", **style)
                if proto["best_named"] and len(results) == 1:
                    ax.plot(r["distance"], values[(slice(None),) + proto["best"]], color=proto["colour"], ls=":",
                            lw=1.4, zorder=3, label=f"{proto['name']} at the verdict's best ({setting_text(proto)})")
            fails.append((r["distance"], failure_codes(proto["status"]), proto["colour"]))
    return fails


def bare_label(r, what="bare link (Gaussian layer)"):
    return what + r["suffix"]


# ---------------------------------------------------------------- colour bars

def nice_ticks(lo, hi, log=False):
    """At least three readable ticks inside [lo, hi]: 1-2-5 steps on a linear bar, decades (with
    2 and 5, or 3, between them when the bar spans few decades) on a log bar."""
    if not (np.isfinite(lo) and np.isfinite(hi)) or hi <= lo:
        return np.array([lo])
    tol = 1e-9 * (hi - lo)
    if log:
        k0, k1 = math.floor(math.log10(lo)) - 1, math.ceil(math.log10(hi)) + 1
        ticks = []
        for subs in ((1,), (1, 3), (1, 2, 5), (1, 1.5, 2, 3, 5, 7)):
            ticks = [m * 10.0 ** k for k in range(k0, k1 + 1) for m in subs if lo * (1 - 1e-9) <= m * 10.0 ** k <= hi * (1 + 1e-9)]
            if len(ticks) >= 3:
                break
        if len(ticks) > 8:
            ticks = ticks[::math.ceil(len(ticks) / 6)]
        if len(ticks) < 3:   # less than a decade: plain 1-2-5 steps read best on a log bar too
            return nice_ticks(lo, hi, False)
        return np.array(sorted(set(ticks)))
    for nbins in (5, 8):
        ticks = MaxNLocator(nbins=nbins, steps=[1, 2, 2.5, 5, 10]).tick_values(lo, hi)
        ticks = ticks[(ticks >= lo - tol) & (ticks <= hi + tol)]
        if ticks.size >= 3:
            return ticks
    return np.array([float(f"{v:.3g}") for v in np.linspace(lo, hi, 3)]).clip(lo, hi)


def tick_text(ticks, log=False):
    """Labels with as many decimals as the spacing needs (no '0.30000000000000004'), powers of
    ten in mathtext outside 1e-3 .. 1e4."""
    ticks = np.asarray(ticks, dtype=float)
    big = np.max(np.abs(ticks)) if ticks.size else 0.0
    nonzero = np.abs(ticks[ticks != 0])
    tiny = nonzero.size and np.max(nonzero) < 1e-3

    def sci(v):
        if v == 0:
            return "0"
        e = math.floor(math.log10(abs(v)))
        m = v / 10.0 ** e
        m_text = f"{m:.2g}"
        sign = "-" if v < 0 else ""
        if m_text in ("1", "-1"):
            return f"${sign}10^{{{e}}}$"
        if m_text in ("10", "-10"):
            return f"${sign}10^{{{e + 1}}}$"
        return f"${m_text}\\times10^{{{e}}}$"

    if log and ticks.size and np.all(ticks > 0) and ticks.max() / ticks.min() >= 1e3:
        return [sci(v) for v in ticks]   # three decades or more: powers of ten throughout
    if log:
        return [f"{v:g}" if 1e-3 <= abs(v) < 1e4 else sci(v) for v in ticks]
    if big >= 1e4 or tiny:
        return [sci(v) for v in ticks]
    step = np.min(np.diff(ticks)) if ticks.size > 1 else (abs(ticks[0]) or 1.0)
    decimals = 0
    while decimals < 6 and any(abs(round(v, decimals) - v) > 1e-6 * step for v in ticks):
        decimals += 1
    out = []
    for v in ticks:
        text = f"{v:.{decimals}f}"
        if text.startswith("-"):   # no "-0.0"; a true minus sign otherwise
            text = text[1:] if float(text) == 0.0 else "\u2212" + text[1:]
        out.append(text)
    return out


def value_norm(values, cmap_kind="sequential"):
    """Norm for a map of positive or signed figures: log when the positive range spans two
    decades or more, linear otherwise; a constant field gets a small range around its value."""
    lo, hi = smallest(values, np.nan), largest(values, np.nan)
    if not np.isfinite(lo):
        return colors.Normalize(0.0, 1.0), False
    if lo > 0 and hi / lo >= 100.0:
        return colors.LogNorm(lo, hi), True
    if hi <= lo:
        half = 0.05 * abs(lo) or 0.5
        lo, hi = lo - half, hi + half
    return colors.Normalize(lo, hi), False


def gain_norm(gain):
    """Diverging norm with 0 at the centre (white): two slopes when the gain has both signs."""
    lo, hi = smallest(gain, -1.0), largest(gain, 1.0)
    if lo < 0.0 < hi:
        return colors.TwoSlopeNorm(0.0, lo, hi), lo, hi
    reach = max(abs(lo), abs(hi)) or 1.0
    return colors.Normalize(-reach, reach), lo, hi


def colour_bar(fig, mesh, ax, text, norm, log=False):
    """A colour bar with at least three ticks, labelled by tick_text. A two-slope bar is ticked
    on each side on its own (else the short side gets none)."""
    bar = fig.colorbar(mesh, ax=ax, label=text, pad=0.02)
    lo, hi = norm.vmin, norm.vmax
    if isinstance(norm, colors.TwoSlopeNorm):
        low = MaxNLocator(3).tick_values(lo, 0.0)
        high = MaxNLocator(5).tick_values(0.0, hi)
        ticks = np.unique(np.concatenate([low, high]))
        ticks = ticks[(ticks >= lo - 1e-12) & (ticks <= hi + 1e-12)]
        if ticks.size < 3:
            ticks = np.unique(np.concatenate([[float(f"{lo:.2g}"), 0.0, float(f"{hi:.2g}")]])).clip(lo, hi)
    else:
        ticks = nice_ticks(lo, hi, log)
    bar.set_ticks(ticks, labels=tick_text(ticks, log))
    bar.ax.minorticks_off()
    return bar


def mark_failed_cells(ax, xs, ys, status):
    """Failed cells (grey background): a marker per failure kind at the cell centre. status is
    indexed [x, y]. Returns legend handles."""
    handles = []
    for code in FAILURE_CODES:
        ix, iy = np.nonzero(status == code)
        if ix.size:
            ax.plot(xs[ix], ys[iy], ls="none", marker=FAILURE_STYLE[code][0], ms=4, mfc="none", mec="0.15",
                    mew=1.0, zorder=4)
            handles.append(Line2D([], [], ls="none", marker=FAILURE_STYLE[code][0], mfc="none", mec="0.15",
                                  label=f"failed: {FAILURE_STYLE[code][1]}"))
    return handles


# ---------------------------------------------------------------- the figures

PLOB_NOTE = ("E_N above the PLOB line is no contradiction: the log-negativity bounds the entanglement that can be "
             "distilled from the state from above (Vidal & Werner, PRA 65, 032314 (2002)), while PLOB bounds what any "
             "protocol can distil over the channel (Pirandola et al., Nat. Commun. 8, 15043 (2017)).")


def plot_entanglement(results, path):
    fig, ax = new_figure(results, "Entanglement versus distance")
    for i, r in enumerate(results):
        g, ls = r["gaussian"], FILE_STYLES[i % len(FILE_STYLES)]
        ax.plot(r["distance"], g["log_negativity"], label=bare_label(r), color=BARE_COLOUR, ls=ls, lw=2.6, alpha=0.45,
                zorder=1)
        if "relay_log_negativity" in g:
            ax.plot(r["distance"], g["relay_log_negativity"], color=RELAY_COLOUR, ls=ls, lw=1.6, alpha=0.8, zorder=2,
                    label=bare_label(r, "midpoint relay (Gaussian swapping)"))
    fails = draw_protocols(ax, results, "log_negativity")
    # Keep the protocols legible: the PLOB bound may leave the frame at short range. It is
    # brought into view where it comes within 1.6 times the highest E_N, else named in the legend.
    everything = [r["gaussian"]["log_negativity"] for r in results] + \
        [p["data"]["log_negativity"] for r in results for p in r["protocols"]]
    top = max(largest(v) for v in everything)
    top = 1.25 * top if top > 0 else 1.0
    lowest = min(smallest(r["gaussian"]["plob_ebits"], np.inf) for r in results)
    if top < lowest <= 1.6 * top:
        top = 1.08 * lowest
    for i, r in enumerate(results):
        plob = r["gaussian"]["plob_ebits"]
        low = smallest(plob, np.inf)
        where = "" if largest(plob) <= top else \
            (f", above the frame (lowest {low:.3g})" if low > top else ", above the frame at short range")
        text = f"PLOB bound ({r['gaussian']['plob_ebits_units']}){where}" \
            + (", infinite where lossless" if np.ma.count_masked(plob) else "") + r["suffix"]
        ax.plot(r["distance"], plob, color="0.35", ls="--" if len(results) == 1 else FILE_STYLES[i % len(FILE_STYLES)],
                lw=1.1, label=text, zorder=2)
    mark_target(ax, results)
    mark_separable(ax, results)
    bottom = min(0.0, min(smallest(v) for v in everything))
    ax.set_ylim(bottom=bottom - 0.03 * (top - bottom), top=top)
    ax.set_ylabel(label("log-negativity $E_N$", results[0]["gaussian"]["log_negativity_units"]))
    extra = draw_failures(ax, fails)
    legend_right(ax, extra)
    return save(fig, path, [PLOB_NOTE] + status_note(results) + [separable_note(results), method_note(results),
                                                                 hardware_note(results)])


def plot_fidelity(results, path):
    fig, ax = new_figure(results, "Coherent-state teleportation fidelity versus distance")
    for i, r in enumerate(results):
        g, ls = r["gaussian"], FILE_STYLES[i % len(FILE_STYLES)]
        ax.plot(r["distance"], g["fidelity"], label=bare_label(r), color=BARE_COLOUR, ls=ls, lw=2.6, alpha=0.45,
                zorder=1)
        if "relay_fidelity" in g:
            ax.plot(r["distance"], g["relay_fidelity"], color=RELAY_COLOUR, ls=ls, lw=1.6, alpha=0.8, zorder=2,
                    label=bare_label(r, "midpoint relay (Gaussian swapping)"))
    fails = draw_protocols(ax, results, "fidelity")
    ax.axhline(0.5, color="firebrick", ls="--", lw=1.0, label="classical limit 1/2")
    mark_target(ax, results)
    mark_separable(ax, results)
    ax.set_ylabel(label(results[0]["descriptions"]["fidelity"], results[0]["units"]["fidelity"], 45))
    extra = draw_failures(ax, fails)
    legend_right(ax, extra)
    notes = ["beyond the separability line no protocol of local stages exceeds 1/2: a separable resource teleports "
             "no better than measure-and-prepare (Braunstein, Fuchs & Kimble, J. Mod. Opt. 47, 267 (2000))"]
    return save(fig, path, notes + status_note(results) + [hardware_note(results)])


def plot_rates(results, path):
    """Two panels, log scale, legend below them; swept protocols at the verdict's best setting
    (index 0 without one). The bare link (Gaussian layer) is left out: P = 1, rate = trial rate."""
    entries = []   # (result index, protocol, label)
    for i, r in enumerate(results):
        for p in r["protocols"]:
            entries.append((i, p, wrap(p["name"] + r["suffix"] + (f" ({setting_text(p)})" if p["axes"] else ""), 48)))
    labels = [e[2] for e in entries]
    targets = sorted({r["target"] for r in results if r["target"] is not None})
    fig = plt.figure(figsize=FIGSIZE, dpi=DPI)
    rows = [max(t.count("\n") + 1 for t in labels[k:k + 2]) for k in range(0, len(labels) + 2, 2) if labels[k:k + 2]]
    grid = fig.add_gridspec(2, 2, height_ratios=[1.0, 0.12 + 0.055 * (sum(rows) + 1)])
    fig.suptitle(suptitle(results), fontsize=11 if len(results) == 1 else 9)
    axes = [fig.add_subplot(grid[0, 0]), fig.add_subplot(grid[0, 1])]
    titles = {"success_probability": "Success probability", "heralding_rate_hz": "Heralding rate"}
    extra = []
    for ax, key in zip(axes, titles):
        fails = []
        for i, p, text in entries:
            r = results[i]
            values = p["data"][key][(slice(None),) + p["best"]]
            values = np.ma.masked_where(~(values > 0), values)   # log scale: zero is off the chart
            ax.plot(r["distance"], values, color=p["colour"], ls=FILE_STYLES[i % len(FILE_STYLES)],
                    marker=p["marker"] if markers_on(r) else None, ms=3.5, label=text)
            fails.append((r["distance"], failure_codes(p["status"][(slice(None),) + p["best"]]), p["colour"]))
        for t in targets:
            ax.axvline(t, color="0.3", ls=":", lw=1.2)
        for i, r in enumerate(results):
            if separable_line(r) is not None:
                ax.axvline(separable_line(r), color=SEPARABLE_COLOUR, ls=FILE_STYLES[i % len(FILE_STYLES)], lw=1.4)
        log = any(largest(p["data"][key]) > 0 for r in results for p in r["protocols"])
        if log:
            ax.set_yscale("log")
        ax.grid(True, alpha=0.3)
        ax.set_title(titles[key], fontsize=10)
        ax.set_ylabel(label(results[0]["descriptions"][key], results[0]["units"][key], 45), fontsize=9)
        ax.set_xlabel(distance_label(results[0], 45), fontsize=9)
        extra = draw_failures(ax, fails, log) or extra
    legend_ax = fig.add_subplot(grid[1, :])
    legend_ax.axis("off")
    handles, _ = axes[0].get_legend_handles_labels()
    handles = list(handles)
    shown = list(labels)
    if targets:
        handles.append(Line2D([], [], color="0.3", ls=":", lw=1.2))
        shown.append("target " + ", ".join(f"{t:g}" for t in targets) + f" {results[0]['distance_units']}")
    if any(separable_line(r) is not None for r in results):
        handles.append(Line2D([], [], color=SEPARABLE_COLOUR, lw=1.4))
        shown.append("bare link separable beyond (P and rate still exact there)")
    handles += extra
    shown += [h.get_label() for h in extra]
    legend_ax.legend(handles, shown, loc="center", ncol=2, fontsize=8 if len(shown) <= 8 else 6.5, frameon=False)
    return save(fig, path, ["bare link (Gaussian layer) not drawn: P = 1, rate = trial rate; swept protocols at the "
                            "verdict's best setting (first grid value where it names none)"] + status_note(results))


def plot_map(result, proto, path):
    """E_N gain over the bare link on (distance, first swept axis); other axes at the best setting."""
    first = proto["axes"][0]
    order = np.argsort(first["values"], kind="stable")
    ys = first["values"][order]
    index = (slice(None), slice(None)) + proto["best"][1:]
    gain = proto["data"]["log_negativity"][index][:, order] - result["gaussian"]["log_negativity"][:, None]
    status = proto["status"][index][:, order]
    xe, xlog = cell_edges(result["distance"])
    ye, ylog = cell_edges(ys)
    fig, ax = plt.subplots(figsize=FIGSIZE, dpi=DPI)
    fig.suptitle(wrap(result["title"], 80) + "\n" + wrap(f"{proto['name']}: $E_N$ gain over the bare link", 80),
                 fontsize=10)
    norm, lo, hi = gain_norm(gain)
    ax.set_facecolor("0.8")   # failed points show the background
    mesh = ax.pcolormesh(xe, ye, gain.T, cmap="RdBu", norm=norm)
    colour_bar(fig, mesh, ax, label("gain $E_N - E_{N,\\mathrm{bare}}$", result["gaussian"]["log_negativity_units"]),
               norm)
    ax.set_xscale("log" if xlog else "linear")
    ax.set_yscale("log" if ylog else "linear")
    ax.set_xlim(xe[0], xe[-1])
    ax.set_ylim(ye[0], ye[-1])
    handles = []
    if not np.ma.count(gain):
        handles.append(Patch(facecolor="none", edgecolor="none", label="no point succeeded"))
    elif lo < 0.0 < hi:
        if min(gain.shape) > 1:
            zero = ax.contour(result["distance"], ys, gain.T, levels=[0.0], colors="black", linewidths=1.8)
            for line in zero.collections:
                line.set_path_effects(HALO)
            handles.append(Line2D([], [], color="black", lw=1.8, label="break-even (gain 0)"))
    else:
        handles.append(Patch(facecolor="none", edgecolor="none",
                             label="no break-even on this grid (gain " + (">=" if lo >= 0.0 else "<") + " 0)"))
    if result["target"] is not None:
        ax.axvline(result["target"], color="black", ls=":", lw=1.4, path_effects=HALO)
        handles.append(Line2D([], [], color="black", ls=":", lw=1.4,
                              label=f"target {result['target']:g} {result['distance_units']}"))
    if separable_line(result) is not None:
        ax.axvline(separable_line(result), color=SEPARABLE_COLOUR, lw=1.8, path_effects=HALO)
        separable_words(ax, separable_line(result), 0.97, result["distance"])
        handles.append(Line2D([], [], color=SEPARABLE_COLOUR, lw=1.8, label="bare link separable beyond"))
    if proto["best_named"]:
        ax.axhline(first["values"][proto["best"][0]], color="black", ls="--", lw=1.2, path_effects=HALO)
        handles.append(Line2D([], [], color="black", ls="--", lw=1.2, label="verdict's best setting"))
    handles += mark_failed_cells(ax, result["distance"], ys, status)
    ax.legend(handles=handles, loc="lower center", bbox_to_anchor=(0.5, 1.01), ncol=min(len(handles), 3) or 1,
              fontsize=7.5, frameon=False)
    ax.set_xlabel(distance_label(result, 80), fontsize=9)
    ax.set_ylabel(label(first["description"], first["units"], 45))
    others = setting_text(proto, proto["axes"][1:], proto["best"][1:])
    return save(fig, path, ["other swept axes at " + others if others else None, hardware_note([result])] + status_note([dict(result, protocols=[proto], suffix="")], "grey cells, marked by kind"))


def read_trade(path, key):
    """The verdict's target slice of a protocol with exactly two swept axes, or None."""
    with h5py.File(path, "r") as f:
        group = f.get(f"verdict/{key}/target")
        if group is None:
            return None
        dims = [d for d in attr_text(group, "dims").split(",") if d]
        if len(dims) != 2:
            return None
        axes = []
        for d in dims:
            ds = need(f, f"protocols/{key}/axes/{d}")
            axes.append(dict(name=d, values=ds[...].astype(float), units=attr_text(ds, "units", "1"),
                             description=attr_text(ds, "description", d)))
        status = need(group, "status")[...].astype(int)
        bad = ~np.isin(status, RESULT_CODES)
        # Each setting's own bare link where the file keeps it (hardware swept), else the verdict's.
        bare = group["bare_log_negativity"][...].astype(float) if "bare_log_negativity" in group \
            else float(f["verdict"].attrs["bare_log_negativity"])
        gain = np.ma.masked_array(need(group, "log_negativity")[...] - bare, mask=bad)
        rate = need(group, "heralding_rate_hz")[...].astype(float)
        rate = np.ma.masked_array(rate, mask=bad | ~(rate > 0.0))
        return dict(axes=axes, gain=gain, rate=rate, status=status, distance=float(group.attrs["distance_m"]))


def plot_trade(result, proto, trade, path):
    """Detector trade map at the target: E_N gain and heralding rate over two swept axes."""
    (ya, xa), gain, rate = trade["axes"], trade["gain"], trade["rate"]
    xo, yo = np.argsort(xa["values"], kind="stable"), np.argsort(ya["values"], kind="stable")
    xs, ys = xa["values"][xo], ya["values"][yo]
    gain, rate, status = gain[yo][:, xo], rate[yo][:, xo], trade["status"][yo][:, xo]
    xe, xlog = cell_edges(xs)
    ye, ylog = cell_edges(ys)
    fig, axes = plt.subplots(1, 2, figsize=FIGSIZE, dpi=DPI, sharey=True)
    fig.suptitle(wrap(result["title"], 80) + "\n" +
                 wrap(f"{proto['name']} at {trade['distance']:g} m: where the stage pays off", 80), fontsize=10)
    gnorm, lo, hi = gain_norm(gain)
    rnorm, rlog = value_norm(rate)
    panels = [(axes[0], gain, "RdBu", gnorm, False, label("gain $E_N - E_{N,\\mathrm{bare}}$", "ebit")),
              (axes[1], rate, "viridis", rnorm, rlog, label("heralding rate", "Hz"))]
    for ax, values, cmap, nrm, log, text in panels:
        ax.set_facecolor("0.8")
        mesh = ax.pcolormesh(xe, ye, values, cmap=cmap, norm=nrm)
        colour_bar(fig, mesh, ax, text, nrm, log)
        if lo < 0.0 < hi and min(gain.shape) > 1:
            ax.contour(xs, ys, gain, levels=[0.0], colors="black", linewidths=1.8)
        mark_failed_cells(ax, xs, ys, status.T)
        ax.set_xscale("log" if xlog else "linear")
        ax.set_yscale("log" if ylog else "linear")
        ax.set_xlim(xe[0], xe[-1])
        ax.set_ylim(ye[0], ye[-1])
        ax.set_xlabel(label(xa["description"], xa["units"], 30), fontsize=9)
    axes[0].set_ylabel(label(ya["description"], ya["units"], 40), fontsize=9)
    axes[0].set_title("$E_N$ gain over the bare link", fontsize=9)
    axes[1].set_title("heralded pairs per second", fontsize=9)
    note = "black line: break-even (gain 0); the stage pays off on the blue side" if lo < 0.0 < hi else \
        "no break-even on this grid (gain " + (">=" if lo >= 0.0 else "<") + " 0 everywhere)"
    failed = np.isin(status, FAILURE_CODES)
    return save(fig, path, [note, "grey cells: failed points (x budget missed, v below round-off, diamond invalid)"
                            if np.any(failed) else None])


# ---------------------------------------------------------------- driver

def label_files(results):
    """Legend suffixes for an overlay: ' [stem]', with the folder when two stems are equal."""
    if len(results) == 1:
        return
    stems = [r["stem"] for r in results]
    for r in results:
        name = r["stem"]
        if stems.count(name) > 1:
            name = os.path.join(os.path.basename(os.path.dirname(os.path.abspath(r["path"]))), name)
        r["suffix"] = f" [{name}]"


def plot_maps(path, result, stem):
    written, slugs = [], set()
    for proto in result["protocols"]:
        if proto["axes"]:
            name = slug(proto["name"])
            while name in slugs:
                name += "-x"
            slugs.add(name)
            written.append(plot_map(result, proto, f"{stem}_map_{name}.png"))
            trade = read_trade(path, proto["key"])
            if trade is not None:
                written.append(plot_trade(result, proto, trade, f"{stem}_trade_{name}.png"))
    return written


def plot_all(paths, out):
    """Every figure of one file, or the overlaid line figures and each file's maps for several."""
    paths = [paths] if isinstance(paths, str) else list(paths)
    results = [read_result(p) for p in paths]
    label_files(results)
    os.makedirs(out, exist_ok=True)
    stem = os.path.join(out, "_vs_".join(r["stem"] for r in results))
    written = [plot_entanglement(results, f"{stem}_entanglement.png"),
               plot_fidelity(results, f"{stem}_fidelity.png"),
               plot_rates(results, f"{stem}_rates.png")]
    for path, r in zip(paths, results):
        written += plot_maps(path, r, os.path.join(out, r["stem"]))
    return written


def main(argv=None):
    parser = argparse.ArgumentParser(description="Draw the figures of heraldry result files (HDF5); several files "
                                                 "are overlaid on one set of axes.")
    parser.add_argument("results", nargs="+", metavar="result", help="result file(s) written by 'heraldry run'")
    parser.add_argument("--out", help="folder for the PNGs (default: next to the first result file)")
    args = parser.parse_args(argv)
    out = args.out or os.path.dirname(os.path.abspath(args.results[0]))
    current = args.results[0]
    try:
        for p in args.results:   # check every file before drawing any
            current = p
            read_result(p)
        current = args.results[0] if len(args.results) == 1 else ", ".join(args.results)
        for png in plot_all(args.results, out):
            print(png)
    except MissingInput as err:
        print(f"plot.py: {err}", file=sys.stderr)
        return 2
    except (LayoutError, KeyError, ValueError) as err:
        print(f"plot.py: {current} is not a heraldry result file: {err}", file=sys.stderr)
        return 2
    except OSError as err:
        print(f"plot.py: cannot write the figures to {out}: {err}", file=sys.stderr)
        return 2
    return 0


if __name__ == "__main__":
    sys.exit(main())
