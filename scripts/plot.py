#!/usr/bin/python3
"""Draw the figures of a heraldry result file (HDF5, layout in DESIGN.md "HDF5 output").

    scripts/plot.py RESULT.h5 [--out FOLDER]

Writes, next to the file unless --out names a folder:
  <stem>_entanglement.png       log-negativity versus distance, bare link, PLOB bound, target
  <stem>_fidelity.png           teleportation fidelity versus distance, classical limit 1/2
  <stem>_rates.png              success probability and heralding rate versus distance
  <stem>_map_<protocol>.png     E_N gain over the bare link, distance x first swept axis
  <stem>_trade_<protocol>.png   at the target distance, for two swept axes (e.g. a counter's
                                efficiency and dark rate): E_N gain and heralding rate maps
and prints the path of each PNG. Exit code 2 for a missing file or a file without the layout.

Conventions: a point whose status is not 0 (or that is not done) failed and is masked, never
drawn as a value. A protocol with swept parameters is drawn as its envelope (best value over
the swept axes at each distance); the verdict's best setting, when the file names one, is
drawn dotted. "Bare link" means the Gaussian layer (/gaussian), which needs no Fock cutoff.
Needs h5py, numpy and matplotlib; run with /usr/bin/python3 on Debian.
"""
import argparse
import os
import re
import sys
import textwrap

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
BARE_STYLE = dict(color="black", lw=2.6, alpha=0.45, zorder=1)
RELAY_STYLE = dict(color="black", lw=1.6, ls="-.", alpha=0.6, zorder=1)
RELAY_LABEL = "Gaussian midpoint relay (conditional, ideal Bell)"
FIGURES = ("success_probability", "log_negativity", "fidelity", "heralding_rate_hz")


class LayoutError(Exception):
    """The file is not a heraldry result file (or lacks a part the figures need)."""


class MissingInput(Exception):
    """The result file named on the command line does not exist (or is not a file)."""


# ---------------------------------------------------------------- reading

def attr_text(obj, key, default=""):
    value = obj.attrs.get(key, default)
    return value.decode() if isinstance(value, bytes) else value


def need(group, path):
    if path not in group:
        raise LayoutError(f"missing '{group.name.rstrip('/')}/{path}'")
    return group[path]


def read_protocol(group, verdict, n_dist):
    """One protocol: its swept axes and its figures as masked arrays [distance, axis1, ...]."""
    dims = [d for d in attr_text(group, "dims", "distance_m").split(",") if d]
    axes = []
    for name in dims[1:]:
        ds = need(group, f"axes/{name}")
        axes.append(dict(name=name, values=ds[...], units=attr_text(ds, "units", "1"),
                         description=attr_text(ds, "description", name)))
    status = need(group, "status")[...]
    if status.shape[0] != n_dist or status.ndim != len(dims):
        raise LayoutError(f"'{group.name}/status' has shape {status.shape}, dims {dims}")
    bad = status != 0
    if "done" in group:
        bad |= group["done"][...] == 0
    data = {}
    for key in FIGURES:
        values = need(group, key)[...].astype(float)
        data[key] = np.ma.masked_array(values, mask=bad | ~np.isfinite(values))
    # The verdict's best setting: the grid index nearest to best_<axis>, index 0 without one.
    name = group.name.split("/")[-1]
    attrs = verdict[name].attrs if verdict is not None and name in verdict else {}
    best, named = [], False
    for ax in axes:
        if f"best_{ax['name']}" in attrs:
            best.append(int(np.argmin(np.abs(ax["values"] - float(attrs[f"best_{ax['name']}"])))))
            named = True
        else:
            best.append(0)
    return dict(name=name, axes=axes, data=data, best=tuple(best),
                best_named=named, failed=int(bad.sum()), points=bad.size)


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
        for key in ("log_negativity", "fidelity", "plob_ebits"):
            ds = need(f, f"gaussian/{key}")
            values = ds[...].astype(float)
            gauss[key] = np.ma.masked_array(values, mask=~np.isfinite(values) | (values > OFF_CHART))
            gauss[key + "_units"] = attr_text(ds, "units", "1")
        # The Gaussian midpoint relay (absent for measured channels).
        for key in ("relay_log_negativity", "relay_fidelity"):
            if f"gaussian/{key}" in f and f[f"gaussian/{key}"].shape == dist.shape:
                gauss[key] = f[f"gaussian/{key}"][...].astype(float)
        if len(need(f, "protocols")) == 0:
            raise LayoutError("'/protocols' holds no protocol")
        verdict = f["verdict"] if "verdict" in f else None
        protocols = [read_protocol(f["protocols"][name], verdict, dist.size) for name in f["protocols"]]
        # Lines and maps need increasing distances; a scenario's list may come in any order.
        order = np.argsort(dist, kind="stable")
        dist = dist[order]
        for key in ("log_negativity", "fidelity", "plob_ebits", "relay_log_negativity", "relay_fidelity"):
            if key in gauss:
                gauss[key] = gauss[key][order]
        for proto in protocols:
            proto["data"] = {key: values[order] for key, values in proto["data"].items()}
        units = {key: attr_text(f["protocols"][protocols[0]["name"]][key], "units", "1") for key in FIGURES}
        descriptions = {key: attr_text(f["protocols"][protocols[0]["name"]][key], "description", key)
                        for key in FIGURES}
        target = float(verdict.attrs["target_m"]) if verdict is not None and "target_m" in verdict.attrs else None
        return dict(title=attr_text(f, "title", os.path.basename(path)), distance=dist,
                    distance_units=attr_text(dist_ds, "units", "m"),
                    distance_description=attr_text(dist_ds, "description", "distance"),
                    gaussian=gauss, protocols=protocols, units=units, descriptions=descriptions,
                    target=target)


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


def edges(values):
    """Cell edges around increasing centres (half-way between neighbours) for pcolormesh."""
    if values.size == 1:
        half = 0.05 * abs(values[0]) or 0.5
        return np.array([values[0] - half, values[0] + half])
    mid = 0.5 * (values[1:] + values[:-1])
    return np.concatenate([[2 * values[0] - mid[0]], mid, [2 * values[-1] - mid[-1]]])


def envelope(values):
    """Best (largest) value over the swept axes at each distance; masked where all failed."""
    return values.reshape(values.shape[0], -1).max(axis=1)


def setting_text(proto, axes=None, index=None):
    axes = proto["axes"] if axes is None else axes
    index = proto["best"] if index is None else index
    return ", ".join(f"{ax['description']} = {ax['values'][i]:g}" for ax, i in zip(axes, index))


def failed_text(result):
    failed = [f"{p['name']} {p['failed']} of {p['points']}" for p in result["protocols"] if p["failed"]]
    return "failed points (masked): " + "; ".join(failed) if failed else None


def new_figure(result, subtitle):
    fig, ax = plt.subplots(figsize=FIGSIZE, dpi=DPI)
    fig.suptitle(wrap(result["title"], 80), fontsize=11)
    ax.set_title(subtitle, fontsize=10)
    ax.grid(True, alpha=0.3)
    ax.set_xlabel(distance_label(result, 80), fontsize=9)
    return fig, ax


def distance_label(result, width):
    return label(result["distance_description"], result["distance_units"], width)


def mark_target(ax, result):
    if result["target"] is not None:
        ax.axvline(result["target"], color="0.3", ls=":", lw=1.2,
                   label=f"target {result['target']:g} {result['distance_units']}")


def save(fig, path, notes=()):
    """Notes in small grey type along the bottom edge, space kept for them, then the PNG."""
    text = "\n".join(wrap(n, 150) for n in notes if n)
    bottom = 0.0
    if text:
        fig.text(0.01, 0.005, text, fontsize=7, color="0.35", va="bottom")
        bottom = 0.01 + 0.028 * (text.count("\n") + 1)
    fig.tight_layout(rect=(0.0, bottom, 1.0, 1.0))
    fig.savefig(path, dpi=DPI)
    plt.close(fig)
    return path


def legend_right(ax):
    """Legend outside the data, on the right (wrapped labels)."""
    handles, labels = ax.get_legend_handles_labels()
    ax.legend(handles, [wrap(t) for t in labels], loc="upper left", bbox_to_anchor=(1.02, 1.0),
              fontsize=8, frameon=False, borderaxespad=0.0)


def marker_for(result):
    return "o" if result["distance"].size <= 30 else None


def draw_protocols(ax, result, key, colours):
    """Each protocol: its curve (envelope if swept) and, dotted, the verdict's best setting."""
    for proto, colour in zip(result["protocols"], colours):
        values = proto["data"][key]
        style = dict(color=colour, marker=marker_for(result), ms=3)
        if not proto["axes"]:
            ax.plot(result["distance"], values, label=proto["name"], **style)
            continue
        ax.plot(result["distance"], envelope(values), label=f"{proto['name']}: envelope over the swept axes", **style)
        if proto["best_named"]:
            ax.plot(result["distance"], values[(slice(None),) + proto["best"]], color=colour, ls=":", lw=1.4,
                    label=f"{proto['name']} at the verdict's best ({setting_text(proto)})")


# ---------------------------------------------------------------- the figures

def plot_entanglement(result, colours, path):
    fig, ax = new_figure(result, "Entanglement versus distance")
    g = result["gaussian"]
    ax.plot(result["distance"], g["log_negativity"], label="bare link (Gaussian layer)", **BARE_STYLE)
    if "relay_log_negativity" in g:
        ax.plot(result["distance"], g["relay_log_negativity"], label=RELAY_LABEL, **RELAY_STYLE)
    draw_protocols(ax, result, "log_negativity", colours)
    # Keep the protocols legible: the PLOB bound may leave the frame at short range. It is
    # brought into view where it comes within twice the highest E_N, else named in the legend.
    top = max([largest(g["log_negativity"])] + [largest(p["data"]["log_negativity"]) for p in result["protocols"]])
    top = 1.25 * top if top > 0 else 1.0
    plob = g["plob_ebits"]
    lowest = -largest(-plob, np.inf)
    if top < lowest <= 1.6 * top:
        top = 1.08 * lowest
    where = "" if largest(plob) <= top else \
        (f", above the frame (lowest {lowest:.3g})" if lowest > top else ", above the frame at short range")
    text = f"PLOB bound ({g['plob_ebits_units']}){where}" \
        + (", infinite where lossless" if np.ma.count_masked(plob) else "")
    ax.plot(result["distance"], plob, color="0.2", ls="--", lw=1.2, label=text)
    mark_target(ax, result)
    bottom = min([0.0] + [-largest(-p["data"]["log_negativity"]) for p in result["protocols"]])
    ax.set_ylim(bottom=bottom - 0.03 * (top - bottom), top=top)
    ax.set_ylabel(label("log-negativity $E_N$", g["log_negativity_units"]))
    legend_right(ax)
    return save(fig, path, [failed_text(result)])


def plot_fidelity(result, colours, path):
    fig, ax = new_figure(result, "Coherent-state teleportation fidelity versus distance")
    ax.plot(result["distance"], result["gaussian"]["fidelity"], label="bare link (Gaussian layer)", **BARE_STYLE)
    if "relay_fidelity" in result["gaussian"]:
        ax.plot(result["distance"], result["gaussian"]["relay_fidelity"], label=RELAY_LABEL, **RELAY_STYLE)
    draw_protocols(ax, result, "fidelity", colours)
    ax.axhline(0.5, color="firebrick", ls="--", lw=1.0, label="classical limit 1/2")
    mark_target(ax, result)
    ax.set_ylabel(label(result["descriptions"]["fidelity"], result["units"]["fidelity"], 45))
    legend_right(ax)
    return save(fig, path, [failed_text(result)])


def plot_rates(result, colours, path):
    """Two panels, log scale, legend below them; swept protocols at the verdict's best setting
    (index 0 without one). The bare link (Gaussian layer) is left out: P = 1, rate = trial rate."""
    labels = [wrap(p["name"] + (f" ({setting_text(p)})" if p["axes"] else ""), 48) for p in result["protocols"]]
    labels.append(f"target {result['target']:g} {result['distance_units']}" if result["target"] is not None else "")
    rows = [max(t.count("\n") + 1 for t in labels[i:i + 2]) for i in range(0, len(labels), 2)]
    fig = plt.figure(figsize=FIGSIZE, dpi=DPI)
    grid = fig.add_gridspec(2, 2, height_ratios=[1.0, 0.05 + 0.055 * sum(rows)])
    fig.suptitle(wrap(result["title"], 80), fontsize=11)
    axes = [fig.add_subplot(grid[0, 0]), fig.add_subplot(grid[0, 1])]
    titles = {"success_probability": "Success probability", "heralding_rate_hz": "Heralding rate"}
    for ax, key in zip(axes, titles):
        for proto, colour, text in zip(result["protocols"], colours, labels):
            values = proto["data"][key][(slice(None),) + proto["best"]]
            values = np.ma.masked_where(~(values > 0), values)   # log scale: zero is off the chart
            ax.plot(result["distance"], values, color=colour, marker=marker_for(result), ms=3, label=text)
        mark_target(ax, result)
        if any(largest(p["data"][key]) > 0 for p in result["protocols"]):
            ax.set_yscale("log")
        ax.grid(True, alpha=0.3)
        ax.set_title(titles[key], fontsize=10)
        ax.set_ylabel(label(result["descriptions"][key], result["units"][key], 45), fontsize=9)
        ax.set_xlabel(distance_label(result, 45), fontsize=9)
    legend_ax = fig.add_subplot(grid[1, :])
    legend_ax.axis("off")
    handles, _ = axes[0].get_legend_handles_labels()
    legend_ax.legend(handles, [t for t in labels if t], loc="center", ncol=2, fontsize=8, frameon=False)
    return save(fig, path, ["bare link (Gaussian layer) not drawn: P = 1, rate = trial rate; swept protocols at the "
                            "verdict's best setting (first grid value where it names none)", failed_text(result)])


def plot_map(result, proto, path):
    """E_N gain over the bare link on (distance, first swept axis); other axes at the best setting."""
    first = proto["axes"][0]
    order = np.argsort(first["values"], kind="stable")
    ys = first["values"][order]
    gain = proto["data"]["log_negativity"][(slice(None), slice(None)) + proto["best"][1:]][:, order] \
        - result["gaussian"]["log_negativity"][:, None]
    fig, ax = plt.subplots(figsize=FIGSIZE, dpi=DPI)
    fig.suptitle(wrap(result["title"], 80) + "\n" + wrap(f"{proto['name']}: $E_N$ gain over the bare link", 80),
                 fontsize=10)
    lo, hi = -largest(-gain, 1.0), largest(gain, 1.0)
    norm = colors.TwoSlopeNorm(0.0, lo, hi) if lo < 0.0 < hi else colors.CenteredNorm(0.0)
    ax.set_facecolor("0.8")   # failed points show the background
    mesh = ax.pcolormesh(edges(result["distance"]), edges(ys), gain.T, cmap="RdBu", norm=norm)
    bar = fig.colorbar(mesh, ax=ax, label=label("gain $E_N - E_{N,\\mathrm{bare}}$",
                                                result["gaussian"]["log_negativity_units"]), pad=0.02)
    handles = []
    if not np.ma.count(gain):
        handles.append(Patch(facecolor="none", edgecolor="none", label="no point succeeded"))
    elif lo < 0.0 < hi:   # two slopes: tick each side on its own, else the short side gets none
        ticks = np.concatenate([MaxNLocator(3).tick_values(lo, 0.0), MaxNLocator(5).tick_values(0.0, hi)])
        bar.set_ticks(np.unique(ticks[(ticks >= lo) & (ticks <= hi)]))
        if min(gain.shape) > 1:
            zero = ax.contour(result["distance"], ys, gain.T, levels=[0.0], colors="black", linewidths=1.8)
            for line in zero.collections:
                line.set_path_effects(HALO)
            handles.append(Line2D([], [], color="black", lw=1.8, label="break-even (gain 0)"))
    else:
        handles.append(Patch(facecolor="none", edgecolor="none",
                             label="no break-even on this grid (gain " + (">" if lo >= 0.0 else "<") + " 0)"))
    if result["target"] is not None:
        ax.axvline(result["target"], color="black", ls=":", lw=1.4, path_effects=HALO)
        handles.append(Line2D([], [], color="black", ls=":", lw=1.4,
                              label=f"target {result['target']:g} {result['distance_units']}"))
    if proto["best_named"]:
        ax.axhline(first["values"][proto["best"][0]], color="black", ls="--", lw=1.2, path_effects=HALO)
        handles.append(Line2D([], [], color="black", ls="--", lw=1.2, label="verdict's best setting"))
    if np.ma.count_masked(gain):
        handles.append(Patch(facecolor="0.8", label="failed point"))
    ax.legend(handles=handles, loc="lower center", bbox_to_anchor=(0.5, 1.01), ncol=len(handles), fontsize=8,
              frameon=False)
    ax.set_xlabel(distance_label(result, 80), fontsize=9)
    ax.set_ylabel(label(first["description"], first["units"], 45))
    others = setting_text(proto, proto["axes"][1:], proto["best"][1:])
    failed = f"failed points of this protocol (masked): {proto['failed']} of {proto['points']}"
    return save(fig, path, ["other swept axes at " + others if others else None, failed if proto["failed"] else None])


def read_trade(path, name):
    """The verdict's target slice of a protocol with exactly two swept axes, or None."""
    with h5py.File(path, "r") as f:
        group = f.get(f"verdict/{name}/target")
        if group is None:
            return None
        dims = [d for d in attr_text(group, "dims").split(",") if d]
        if len(dims) != 2:
            return None
        axes = []
        for d in dims:
            ds = need(f, f"protocols/{name}/axes/{d}")
            axes.append(dict(name=d, values=ds[...].astype(float), units=attr_text(ds, "units", "1"),
                             description=attr_text(ds, "description", d)))
        bad = need(group, "status")[...] != 0
        bare = float(f["verdict"].attrs["bare_log_negativity"])
        gain = np.ma.masked_array(need(group, "log_negativity")[...] - bare, mask=bad)
        rate = need(group, "heralding_rate_hz")[...].astype(float)
        rate = np.ma.masked_array(rate, mask=bad | ~(rate > 0.0))
        return dict(axes=axes, gain=gain, rate=rate, distance=float(group.attrs["distance_m"]))


def cell_edges(values):
    """Edges for pcolormesh: geometric on an axis spanning two decades or more, else linear."""
    if values.size > 1 and np.all(values > 0) and values.max() / values.min() >= 100.0:
        return np.exp(edges(np.log(values))), True
    return edges(values), False


def plot_trade(result, proto, trade, path):
    """Detector trade map at the target: E_N gain and heralding rate over two swept axes."""
    (ya, xa), gain, rate = trade["axes"], trade["gain"], trade["rate"]
    xe, xlog = cell_edges(xa["values"])
    ye, ylog = cell_edges(ya["values"])
    fig, axes = plt.subplots(1, 2, figsize=FIGSIZE, dpi=DPI, sharey=True)
    fig.suptitle(wrap(result["title"], 80) + "\n" +
                 wrap(f"{proto['name']} at {trade['distance']:g} m: where the stage pays off", 80), fontsize=10)
    lo, hi = -largest(-gain, 1.0), largest(gain, 1.0)
    norm = colors.TwoSlopeNorm(0.0, lo, hi) if lo < 0.0 < hi else colors.CenteredNorm(0.0)
    panels = [(axes[0], gain, "RdBu", norm, label("gain $E_N - E_{N,\\mathrm{bare}}$", "ebit")),
              (axes[1], rate, "viridis", colors.LogNorm() if np.ma.count(rate) else None,
               label("heralding rate", "Hz"))]
    for ax, values, cmap, nrm, text in panels:
        ax.set_facecolor("0.8")
        mesh = ax.pcolormesh(xe, ye, values, cmap=cmap, norm=nrm)
        fig.colorbar(mesh, ax=ax, label=text, pad=0.02)
        if lo < 0.0 < hi and min(gain.shape) > 1:
            ax.contour(xa["values"], ya["values"], gain, levels=[0.0], colors="black", linewidths=1.8)
        ax.set_xscale("log" if xlog else "linear")
        ax.set_yscale("log" if ylog else "linear")
        ax.set_xlabel(label(xa["description"], xa["units"], 30), fontsize=9)
    axes[0].set_ylabel(label(ya["description"], ya["units"], 40), fontsize=9)
    axes[0].set_title("$E_N$ gain over the bare link", fontsize=9)
    axes[1].set_title("heralded pairs per second", fontsize=9)
    note = "black line: break-even (gain 0); the stage pays off on the blue side" if lo < 0.0 < hi else \
        "no break-even on this grid (gain " + (">" if lo >= 0.0 else "<") + " 0 everywhere)"
    return save(fig, path, [note, "grey cells: failed points" if np.ma.count_masked(gain) else None])


def plot_all(path, out):
    result = read_result(path)
    os.makedirs(out, exist_ok=True)
    stem = os.path.join(out, os.path.splitext(os.path.basename(path))[0])
    colours = [plt.get_cmap("tab10")(i % 10) for i in range(len(result["protocols"]))]
    written = [plot_entanglement(result, colours, f"{stem}_entanglement.png"),
               plot_fidelity(result, colours, f"{stem}_fidelity.png"),
               plot_rates(result, colours, f"{stem}_rates.png")]
    slugs = set()
    for proto in result["protocols"]:
        if proto["axes"]:
            name = slug(proto["name"])
            while name in slugs:
                name += "-x"
            slugs.add(name)
            written.append(plot_map(result, proto, f"{stem}_map_{name}.png"))
            trade = read_trade(path, proto["name"])
            if trade is not None:
                written.append(plot_trade(result, proto, trade, f"{stem}_trade_{name}.png"))
    return written


def main(argv=None):
    parser = argparse.ArgumentParser(description="Draw the figures of a heraldry result file (HDF5).")
    parser.add_argument("result", help="result file written by 'heraldry run'")
    parser.add_argument("--out", help="folder for the PNGs (default: next to the result file)")
    args = parser.parse_args(argv)
    out = args.out or os.path.dirname(os.path.abspath(args.result))
    try:
        for png in plot_all(args.result, out):
            print(png)
    except MissingInput as err:
        print(f"plot.py: {err}", file=sys.stderr)
        return 2
    except (LayoutError, KeyError, ValueError) as err:
        print(f"plot.py: {args.result} is not a heraldry result file: {err}", file=sys.stderr)
        return 2
    except OSError as err:
        print(f"plot.py: cannot write the figures to {out}: {err}", file=sys.stderr)
        return 2
    return 0


if __name__ == "__main__":
    sys.exit(main())
