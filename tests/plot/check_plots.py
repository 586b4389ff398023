"""What scripts/plot.py draws, read back from its figures (for tests/test_plot.sh).

    check_plots.py SCRATCH PLOT_SCRIPT

SCRATCH holds r.h5 and r2.h5 (two small runs of the heraldry binary, the second with an extra
protocol that sorts first) and separable.h5 (synthetic test data, tests/plot/synthetic_result.py).
The figures are captured before plot.save writes them, and their lines, markers, texts, colour
bars and mesh cells are checked. Prints one FAIL line per failed check; exit 1 if any.
"""
import importlib.util
import os
import sys

import numpy as np
from matplotlib import colors

scratch, script = sys.argv[1], sys.argv[2]
spec = importlib.util.spec_from_file_location("plot", script)
plot = importlib.util.module_from_spec(spec)
spec.loader.exec_module(plot)
failures = []


def check(ok, text):
    if not ok:
        failures.append(text)


drawn = {}
original_save = plot.save


def capture(fig, path, notes=()):
    drawn[os.path.basename(path)] = (fig, [n for n in notes if n])
    return original_save(fig, path, notes)


plot.save = capture
r, r2, sep = (os.path.join(scratch, n) for n in ("r.h5", "r2.h5", "separable.h5"))
out = os.path.join(scratch, "checks")

# ---- colours: the same protocol name has the same colour in both files although it sits at
# another place in the second (the extra protocol 'amplify b' sorts before it); bare is black.
a, b = plot.read_result(r), plot.read_result(r2)
ca = {p["name"]: colors.to_hex(p["colour"]) for p in a["protocols"]}
cb = {p["name"]: colors.to_hex(p["colour"]) for p in b["protocols"]}
names_a, names_b = [p["name"] for p in a["protocols"]], [p["name"] for p in b["protocols"]]
check(names_a.index("subtract a") != names_b.index("subtract a"),
      f"the second file should hold 'subtract a' at another place: {names_a} / {names_b}")
for name in ca:
    check(ca[name] == cb.get(name), f"'{name}' has colour {ca[name]} in r.h5 and {cb.get(name)} in r2.h5")
check(colors.to_hex(plot.protocol_colour("bare")) == "#000000", "a protocol named 'bare' is not black")
check(colors.to_hex(plot.protocol_colour("anything", link_only=True)) == "#000000",
      "a protocol that is only the link is not black")
check(plot.protocol_colour("subtract a") not in (plot.BARE_COLOUR, plot.RELAY_COLOUR),
      "a heralded protocol in the bare link's or the relay's colour")

# ---- the overlay: one set of axes, file stems in the legend, one colour per name.
plot.plot_all([r, r2], out)
fig, notes = drawn["r_vs_r2_entanglement.png"]
ax = fig.axes[0]
lines = {line.get_label(): line for line in ax.get_lines()}
for name in ("subtract a", "subtract b, swept tap"):
    la = [line for t, line in lines.items() if t.startswith(name) and "[r]" in t]
    lb = [line for t, line in lines.items() if t.startswith(name) and "[r2]" in t]
    check(len(la) == 1 and len(lb) == 1, f"overlay: not one line for '{name}' from each file: {sorted(lines)}")
    if la and lb:
        check(colors.to_hex(la[0].get_color()) == colors.to_hex(lb[0].get_color()),
              f"overlay: '{name}' drawn in two colours")
        check(la[0].get_linestyle() != lb[0].get_linestyle(), f"overlay: '{name}' in one line style for both files")
check(any(t.startswith("amplify b [r2]") for t in lines), "overlay: the second file's extra protocol is missing")
bare = [line for t, line in lines.items() if t.startswith("bare link (Gaussian layer)")]
check(len(bare) == 2 and all(colors.to_hex(line.get_color()) == "#000000" for line in bare),
      "overlay: the bare links are not both black")
relay = [line for t, line in lines.items() if t.startswith("midpoint relay")]
check(len(relay) == 2 and all(colors.to_hex(line.get_color()) == colors.to_hex(plot.RELAY_COLOUR) for line in relay),
      "overlay: the relays are not both in the relay colour")
check(any("no contradiction" in n and "PLOB" in n and "distil" in n for n in notes), "no note on E_N versus PLOB")
for name in ("r_vs_r2_fidelity.png", "r_vs_r2_rates.png"):
    check(name in drawn, f"overlay: {name} not drawn")

# ---- separable points are results; failures are markers, never values; the line and its words.
drawn.clear()
plot.plot_all([sep], out)
for figure in ("separable_entanglement.png", "separable_fidelity.png"):
    fig, notes = drawn[figure]
    ax = fig.axes[0]
    lines = {line.get_label(): line for line in ax.get_lines()}
    key = "log_negativity" if "entanglement" in figure else "fidelity"
    expected_beyond = 0.0 if key == "log_negativity" else 0.5     # synthetic: F = 0.5 + 0.2 E_N
    env = lines.get("subtract both: envelope over the swept axes")
    check(env is not None, f"{figure}: no envelope line for 'subtract both': {sorted(lines)}")
    if env is not None:
        x, y = np.asarray(env.get_xdata(), float), np.ma.asarray(env.get_ydata())
        beyond = x >= 6.0
        check(np.ma.count(y[beyond]) == beyond.sum() and np.allclose(y[beyond], expected_beyond),
              f"{figure}: separable points not drawn as results: {y[beyond]}")
        for d in (2.0, 4.5):   # every setting failed there
            check(bool(np.ma.getmaskarray(y)[x == d].all()), f"{figure}: the failed points at {d} m drawn as a value")
        check(not bool(np.ma.getmaskarray(y)[x == 3.0].any()), f"{figure}: 3 m (three settings fine) not drawn")
    marks = {}
    for line in ax.get_lines():
        if line.get_linestyle() == "None" and line.get_label().startswith("_"):
            marks.setdefault(line.get_marker(), set()).update(np.round(np.asarray(line.get_xdata(), float), 9).tolist())
    for marker, status, d in (("x", 1, 2.0), ("v", 2, 3.0), ("D", 4, 4.5)):
        check(d in marks.get(marker, set()), f"{figure}: no '{marker}' marker (status {status}) at {d} m: {marks}")
    check(not any(d >= 6.0 for m in marks.values() for d in m), f"{figure}: a separable point marked as a failure")
    vertical = [line for t, line in lines.items() if "separable beyond 6 m" in t]
    check(len(vertical) == 1 and np.allclose(np.asarray(vertical[0].get_xdata(), float), 6.0),
          f"{figure}: no separability line at 6 m")
    check(any("no local stage restores entanglement" in t.get_text() for t in ax.texts),
          f"{figure}: no words beside the separability line")
fig, notes = drawn["separable_entanglement.png"]
check(any("separable input" in n and "subtract both 16" in n for n in notes),
      f"no count of the separable points: {notes}")
check(any("photon-number distribution 32" in n for n in notes), f"no count of the points by method: {notes}")

# ---- colour bars: at least three ticks inside each bar; map cells centred on the grid values.
for name in ("separable_map_subtract-both.png", "separable_map_subtract-a.png"):
    fig, _ = drawn[name]
    bars = [x for x in fig.axes if hasattr(x, "_colorbar")]
    check(len(bars) == 1, f"{name}: {len(bars)} colour bars")
    for bar in bars:
        lo, hi = sorted(bar.get_ylim())
        ticks = [t for t in bar.get_yticks() if lo - 1e-12 <= t <= hi + 1e-12]
        check(len(ticks) >= 3, f"{name}: colour bar with {len(ticks)} ticks")
    failed = {line.get_marker() for line in fig.axes[0].get_lines() if line.get_linestyle() == "None"}
    check({"x", "v", "D"} <= failed, f"{name}: failed cells not marked by kind: {failed}")
ax = drawn["separable_map_subtract-both.png"][0].axes[0]
xy = ax.collections[0].get_coordinates()
xe, ye = xy[0, :, 0], xy[:, 0, 1]
check(np.allclose(xe[1:-1], [1.5, 2.5, 3.75, 5.25, 7.0, 9.5, 13.0]), f"distance cells: edges {xe}")
check(np.allclose([xe[0], xe[-1]], [0.5, 17.0]), f"distance cells: outer edges {xe[0]}, {xe[-1]}")
check(np.allclose(ye[1:-1], [0.85, 0.925, 0.97]), f"tap cells: edges {ye}")
ax = drawn["separable_map_subtract-a.png"][0].axes[0]
check(ax.get_yscale() == "log", "a dark-rate axis over three decades not drawn on a log scale")
ye = ax.collections[0].get_coordinates()[:, 0, 1]
check(np.allclose(ye[1:-1], np.sqrt([1e3, 1e5, 1e7])), f"log-axis cells: edges {ye}, expected geometric midpoints")

# Ticks of a bar spanning less than a decade (one tick on a log bar before), decades, a narrow
# linear range and a signed one; labels distinct and short.
for lo, hi, log in ((21.3, 38.7, True), (12.0, 3.4e4, True), (0.0132, 0.0171, False), (-0.31, 0.27, False),
                    (1.2e-7, 3.3e-7, False)):
    t = plot.nice_ticks(lo, hi, log)
    check(len(t) >= 3 and t.min() >= lo - 1e-9 * abs(lo) and t.max() <= hi + 1e-9 * abs(hi),
          f"ticks {t} for [{lo}, {hi}] (log {log})")
    labels = plot.tick_text(t, log)
    check(len(set(labels)) == len(labels) and all(len(s) <= 24 for s in labels), f"tick labels {labels}")

for text in failures:
    print("FAIL:", text)
sys.exit(1 if failures else 0)
