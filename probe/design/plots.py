"""Pictures of sweeps, model comparisons and thresholds (matplotlib).

Figures are drawn on matplotlib's Agg canvas (``matplotlib.figure.Figure``
with ``FigureCanvasAgg``), so nothing here touches the interactive backend
of a notebook or a desktop session.  The format follows the file name:
``.png``, ``.pdf`` or ``.svg``; files appear whole (written beside the
target and renamed).

Every curve has its own line style and marker as well as its own colour, 2D
maps use a colour map whose lightness rises monotonically (viridis) with
labelled black contour lines, so the pictures stay readable when printed in
black and white.  Axes carry the quantity and its unit; a log scale is used
where positive values span more than two decades.

Python use::

    from probe.design.sweep import sweep
    from probe.design.plots import plot_sweep
    res = sweep("examples/box3d_supersonic.toml",
                vary=[("trajectory.speed", "0.5 c_s", "3 c_s", 101)])
    fig = plot_sweep(res, "rates.png")      # returns the Figure
"""
from __future__ import annotations

import math
import os
from pathlib import Path

import numpy as np

from probe.errors import InputError
from probe.design.sweep import column_kind, display_unit
from probe.quantities import QUANTITIES, default_plotted, shared_noun
from probe.scenarios.schema import KEY_LABELS

SUFFIXES = (".png", ".pdf", ".svg")

#: (line style, marker) pairs, in order of use
STYLES = [("-", "o"), ("--", "s"), (":", "^"), ("-.", "D"),
          ((0, (6, 2, 1, 2, 1, 2)), "v"), ((0, (1, 1)), "P"), ((0, (8, 3)), "X")]
#: Okabe-Ito colours (distinguishable with colour-vision deficiencies)
COLOURS = ["#000000", "#D55E00", "#0072B2", "#009E73", "#CC79A7", "#E69F00", "#56B4E9"]
HATCHES = ["///", "\\\\\\", "xxx", "...", "|||"]
#: values below this fraction of the largest are not shown on log scales
LOG_FLOOR = 1e-12

#: plot labels of the result quantities (``probe.quantities``)
QUANTITY_LABELS = {name: q.tex for name, q in QUANTITIES.items() if q.tex}
_PRETTY = {"um": "µm", "um/s": "µm/s", "uK": "µK", "us": "µs", "1/s": "s$^{-1}$",
           "1/m": "m$^{-1}$", "1/um": "µm$^{-1}$"}


def pretty_unit(unit):
    """A unit string for an axis label (``m^-3`` -> ``m$^{-3}$``)."""
    if unit in _PRETTY:
        return _PRETTY[unit]
    import re
    return re.sub(r"\^(-?\d+)", r"$^{\1}$", unit)


def axis_label(name, unit):
    label = KEY_LABELS.get(name) or QUANTITY_LABELS.get(name) or name.replace("_", " ")
    return f"{label} [{pretty_unit(unit)}]" if unit else label


# ---------------------------------------------------------------------------
# checks and saving
# ---------------------------------------------------------------------------
def check_plot_path(path):
    """InputError unless ``path`` ends in .png, .pdf or .svg in an existing
    directory."""
    p = Path(path)
    if p.suffix.lower() not in SUFFIXES:
        raise InputError("--plot", f"{os.fspath(path)!r}: the file name must end in "
                                   f"{', '.join(SUFFIXES)} (the format follows it)")
    parent = p.parent
    if not parent.is_dir():
        raise InputError("--plot", f"directory {os.fspath(parent)!r} does not exist")
    return p


def check_quantity(columns, quantity):
    plottable = [c for c in columns if c not in ("point", "warnings")]
    if quantity not in plottable:
        raise InputError("--quantity", f"{quantity!r} is not a column; columns: "
                                       f"{', '.join(plottable)}")
    return quantity


def _figure(size=(6.4, 4.6)):
    from matplotlib.backends.backend_agg import FigureCanvasAgg
    from matplotlib.figure import Figure

    fig = Figure(figsize=size, dpi=150, layout="constrained")
    FigureCanvasAgg(fig)
    return fig


def save(fig, path):
    """Write ``fig`` to ``path`` (format from the extension), atomically."""
    p = check_plot_path(path)
    tmp = p.with_name(f".{p.stem}.{os.getpid()}.tmp{p.suffix}")
    try:
        fig.savefig(tmp, format=p.suffix[1:].lower())
        os.replace(tmp, p)
    except OSError as exc:
        tmp.unlink(missing_ok=True)
        raise InputError("--plot", f"cannot write {os.fspath(p)!r}: "
                                   f"{exc.strerror or exc}") from None
    return fig


def _style(k):
    ls, marker = STYLES[k % len(STYLES)]
    return dict(linestyle=ls, marker=marker, color=COLOURS[k % len(COLOURS)],
                markerfacecolor="white" if k % 2 else COLOURS[k % len(COLOURS)],
                markersize=4.5, linewidth=1.5)


def _spans_decades(*arrays):
    vals = np.concatenate([np.asarray(a, float).ravel() for a in arrays])
    pos = vals[np.isfinite(vals) & (vals > 0)]
    if pos.size < 2:
        return False
    neg = vals[np.isfinite(vals) & (vals < 0)]
    return neg.size == 0 and pos.max() / pos.min() > 100


def _title(result_meta, extra=""):
    src = result_meta.get("source") if result_meta else None
    sc_ = (result_meta or {}).get("scenario", {})
    parts = []
    if sc_:
        gas = sc_.get("condensate", {})
        prb = sc_.get("probe", {})
        traj = sc_.get("trajectory", {})
        parts.append(f"{gas.get('dimension')}D {gas.get('species') or ''} gas".replace("  ", " "))
        parts.append(f"{prb.get('model')} probe")
        parts.append(f"{traj.get('kind')} motion")
    head = os.path.basename(src) if src else ""
    text = ", ".join(parts)
    if head:
        text = f"{head}: {text}" if text else head
    return (text + (f" — {extra}" if extra else "")).strip()


# ---------------------------------------------------------------------------
# coordinates of an axis
# ---------------------------------------------------------------------------
def _coords(result, axis):
    """(values to plot for every point, label, factor, is_speed_in_cs) of a
    grid axis."""
    if axis.relative:
        return (result.column(axis.key) / result.column("sound_speed"),
                "speed $v/c_s$", 1.0, True)
    si = result.column(axis.key)
    unit = result.unit(axis.key)
    f, shown = display_unit(axis.kind, unit, si)
    return si * f, axis_label(axis.key, shown), f, False


def _grid_coords(result, axis):
    """Coordinates of the grid lines of an axis (constant along the grid)."""
    if axis.relative:
        return np.asarray(axis.values, float), "speed $v/c_s$", 1.0
    f, shown = display_unit(axis.kind, axis.unit, axis.values)
    return np.asarray(axis.values, float) * f, axis_label(axis.key, shown), f


def _constant(values):
    v = np.asarray(values, float)
    v = v[np.isfinite(v)]
    if v.size == 0:
        return None
    return float(v[0]) if np.allclose(v, v[0], rtol=1e-12, atol=0) else None


def _runs(x, bad):
    """(lo, hi) x ranges of consecutive points flagged in ``bad``, each
    extended half-way to the neighbouring points."""
    order = np.argsort(x)
    xs, bs = x[order], bad[order]
    out = []
    i = 0
    while i < xs.size:
        if not bs[i]:
            i += 1
            continue
        j = i
        while j + 1 < xs.size and bs[j + 1]:
            j += 1
        lo = 0.5 * (xs[i] + xs[i - 1]) if i > 0 else xs[i]
        hi = 0.5 * (xs[j] + xs[j + 1]) if j + 1 < xs.size else xs[j]
        out.append((lo, hi))
        i = j + 1
    return out


def _no_result_strip(ax, x, bad, label, hatch, level, colour="0.3"):
    """A hatched strip along the top of the axes (strip ``level`` from the
    top) over the x ranges without a result, with a text label."""
    if not np.any(bad):
        return False
    top = 1.0 - 0.07 * level
    first = True
    for lo, hi in _runs(x, bad):
        ax.fill_between([lo, hi], top - 0.06, top, transform=ax.get_xaxis_transform(),
                        facecolor="white", edgecolor=colour, hatch=hatch, linewidth=0.8,
                        zorder=5, label=label if first else None)
        first = False
    runs = _runs(x, bad)
    lo, hi = max(runs, key=lambda r: r[1] - r[0])
    xmid = math.sqrt(lo * hi) if ax.get_xscale() == "log" and lo > 0 else 0.5 * (lo + hi)
    ax.annotate(label, xy=(xmid, top - 0.03), xycoords=ax.get_xaxis_transform(),
                ha="center", va="center", fontsize=7, zorder=6,
                bbox=dict(boxstyle="square,pad=0.15", facecolor="white", edgecolor="none"))
    return True


def _log_limits(ax, arrays):
    vals = np.concatenate([np.asarray(a, float).ravel() for a in arrays])
    pos = vals[np.isfinite(vals) & (vals > 0)]
    if pos.size == 0:
        return None
    top = pos.max()
    bottom = max(pos.min(), top * LOG_FLOOR)
    ax.set_ylim(bottom / 2, top * 3)
    return bottom > pos.min()


def _nice_log_ticks(ax):
    """Plain numbers (1, 2, 5, 10, 20 ...) on log axes spanning < 3 decades."""
    import matplotlib.ticker as mticker

    for axis, scale, lim in ((ax.xaxis, ax.get_xscale(), ax.get_xlim()),
                             (ax.yaxis, ax.get_yscale(), ax.get_ylim())):
        if scale != "log" or not (lim[0] > 0 and lim[1] / lim[0] < 1000):
            continue
        axis.set_major_locator(mticker.LogLocator(subs=(1.0, 2.0, 5.0)))
        axis.set_major_formatter(mticker.FuncFormatter(lambda v, _: f"{v:g}"))
        axis.set_minor_formatter(mticker.NullFormatter())


def _mark_speed(ax, x_is_cs, factor, sound_speed, threshold, vertical=True, text=True):
    """Sound speed (and threshold) as labelled lines on a speed axis."""
    marks = []
    if sound_speed is not None:
        pos = 1.0 if x_is_cs else sound_speed * factor
        marks.append((pos, "$c_s$", (0, (4, 2)), "0.25"))
    if threshold is not None:
        pos = threshold / sound_speed if x_is_cs else threshold * factor
        marks.append((pos, r"$v_\mathrm{th}$", (0, (1, 1.5)), "0.1"))
    for pos, lab, ls, col in marks:
        if vertical:
            ax.axvline(pos, linestyle=ls, color=col, linewidth=1.2, zorder=1)
            if text:
                ax.annotate(lab, xy=(pos, 0.0), xycoords=("data", "axes fraction"),
                            xytext=(3, 4), textcoords="offset points", fontsize=10,
                            zorder=6, bbox=dict(boxstyle="square,pad=0.1",
                                                facecolor="white", edgecolor="none",
                                                alpha=0.8))
        else:
            ax.axhline(pos, linestyle=ls, color=col, linewidth=1.2, zorder=1)
    return marks


def _second_speed_axis(ax, x_cs, factor, sound_speed):
    """A top x axis: v/c_s under a speed in m/s, or the speed under v/c_s."""
    if x_cs:
        f, unit = display_unit("speed", "m/s", [3 * sound_speed])
        scale = 1.0 / (f * sound_speed)
        label = f"speed $v$ [{pretty_unit(unit)}]"
    else:
        scale = factor * sound_speed
        label = "$v/c_s$"
    sec = ax.secondary_xaxis("top", functions=(lambda x: x / scale, lambda m: m * scale))
    sec.set_xlabel(label)
    return sec


# ---------------------------------------------------------------------------
# sweeps
# ---------------------------------------------------------------------------
def plot_sweep(result, path=None, quantity=None):
    """Draw a sweep: curves for a 1D grid, a map for a 2D grid.  Writes
    ``path`` when given; returns the Figure."""
    if len(result.axes) == 2:
        return plot_map(result, path, quantity)
    quantities = [quantity] if quantity else default_plotted(result.columns)
    return plot_lines(result, path, quantities)


def plot_lines(result, path=None, quantities=None):
    """Quantities versus the swept key, with the sound speed and threshold
    marked on a speed axis and hatched ranges where there is no result."""
    if len(result.axes) != 1:
        raise InputError("--plot", "curves need a 1D grid")
    quantities = quantities or default_plotted(result.columns)
    for q in quantities:
        check_quantity(result.columns, q)
    ax_ = result.axes[0]
    x, xlabel, factor, x_cs = _coords(result, ax_)
    fig = _figure()
    ax = fig.add_subplot()
    ys = [result.column(q) for q in quantities]
    units = {result.unit(q) for q in quantities}
    unit = units.pop() if len(units) == 1 else None
    shown_unit = unit
    yfac = 1.0
    if unit is not None:
        yfac, shown_unit = display_unit(column_kind(quantities[0]), unit,
                                        np.concatenate(ys))
    every = max(1, x.size // 14)
    order = np.argsort(x)
    shaded = []
    for k, (q, y) in enumerate(zip(quantities, ys)):
        ax.plot(x[order], (y * yfac)[order], label=QUANTITY_LABELS.get(q, q),
                markevery=every, **_style(k))
        shaded += _bands(ax, result, q, x[order], order, yfac, _style(k)["color"], k == 0)
    ys += shaded
    log_y = _spans_decades(*ys)
    clipped = False
    if log_y:
        ax.set_yscale("log")
        clipped = _log_limits(ax, [y * yfac for y in ys])
    if ax_.log:
        ax.set_xscale("log")
    ax.set_xlabel(xlabel)
    if len(quantities) == 1:
        ax.set_ylabel(axis_label(quantities[0], shown_unit))
    else:
        noun = shared_noun(quantities) if unit is not None else None
        unit_text = f"[{pretty_unit(shown_unit)}]" if shown_unit else ""
        ax.set_ylabel(" ".join(t for t in (noun, unit_text) if t) or "value")
    bad = np.array([w.startswith("no result") for w in result.warnings])
    _no_result_strip(ax, x, bad, "no result", HATCHES[0], 0)
    if ax_.kind == "speed":
        c = _constant(result.column("sound_speed"))
        vt = _constant(result.column("up_threshold_speed")) if \
            "up_threshold_speed" in result.columns else None
        if c is not None:
            _mark_speed(ax, x_cs, factor, c, vt)
            _second_speed_axis(ax, x_cs, factor, c)
    ax.grid(True, which="major", color="0.85", linewidth=0.6)
    _nice_log_ticks(ax)
    ax.legend(loc="best", fontsize=9, framealpha=0.9)
    note = f"values below {LOG_FLOOR:.0e} of the largest not shown" if clipped else ""
    if note:
        ax.annotate(note, xy=(0.01, 0.01), xycoords="axes fraction", fontsize=7,
                    color="0.3")
    fig.suptitle(_title(result.meta), fontsize=10)
    if path is not None:
        save(fig, path)
    return fig


#: the band columns of a sweep of uncertain inputs (``probe.design.sweep.planning``)
#: shaded about a curve: (low, high, opacity), the 95 % band lighter
BANDS = (("_p2_5", "_p97_5", 0.12), ("_p16", "_p84", 0.28))


def _bands(ax, result, q, x, order, yfac, colour, legend):
    """Shade the 68 % and 95 % bands of ``q`` where the sweep has them (named
    in the legend when ``legend``); returns their columns (for the axis
    limits)."""
    shown = []
    for (low, high, alpha), words in zip(BANDS, ("95 %", "68 % and 95 % intervals")):
        if q + low not in result.columns or q + high not in result.columns:
            continue
        lo, hi = result.column(q + low), result.column(q + high)
        ax.fill_between(x, (lo * yfac)[order], (hi * yfac)[order], color=colour,
                        alpha=alpha, linewidth=0,
                        label=words if legend and alpha == BANDS[-1][2] else None)
        shown += [lo, hi]
    return shown


def _levels(z, log):
    import matplotlib.ticker as mticker

    pos = z[np.isfinite(z)]
    if log:
        pos = pos[pos > 0]
        if pos.size == 0:
            return []
        top = pos.max()
        lo = max(pos.min(), top * LOG_FLOOR)
        e0, e1 = math.ceil(math.log10(lo)), math.floor(math.log10(top))
        step = max(1, math.ceil((e1 - e0 + 1) / 8))
        return [10.0 ** e for e in range(e0, e1 + 1, step)]
    if pos.size == 0 or pos.min() == pos.max():
        return []
    return list(mticker.MaxNLocator(7).tick_values(pos.min(), pos.max())[1:-1])


def _declutter(fig, texts):
    """Remove contour labels that overlap an earlier one."""
    renderer = fig.canvas.get_renderer()
    kept = []
    for t in texts:
        box = t.get_window_extent(renderer).expanded(1.1, 1.2)
        if any(box.overlaps(k) for k in kept):
            t.remove()
        else:
            kept.append(box)


def _contour_fmt(v):
    if v == 0:
        return "0"
    e = math.floor(math.log10(abs(v)))
    m = v / 10 ** e
    if abs(m - 1) < 1e-9:
        return f"1e{e}" if abs(e) > 2 else f"{v:g}"
    return f"{v:.3g}"


def _cell_edges(values, log):
    """Edges of the cells around grid values (geometric midpoints on log
    axes), for maps drawn cell by cell."""
    v = np.asarray(values, float)
    if v.size == 1:
        return np.array([v[0] * 0.9, v[0] * 1.1]) if v[0] else np.array([-0.5, 0.5])
    t = np.log(v) if log else v
    mid = 0.5 * (t[1:] + t[:-1])
    e = np.concatenate([[t[0] - (mid[0] - t[0])], mid, [t[-1] + (t[-1] - mid[-1])]])
    return np.exp(e) if log else e


def _hatch_cells(ax, xe, ye, bad, hatch):
    """Hatch the cells flagged in ``bad`` (shape (len(xe)-1, len(ye)-1)),
    merged into runs along x for each row of y."""
    from matplotlib.collections import PatchCollection
    from matplotlib.patches import Rectangle

    patches = []
    for j in range(bad.shape[1]):
        i = 0
        while i < bad.shape[0]:
            if not bad[i, j]:
                i += 1
                continue
            k = i
            while k + 1 < bad.shape[0] and bad[k + 1, j]:
                k += 1
            patches.append(Rectangle((xe[i], ye[j]), xe[k + 1] - xe[i], ye[j + 1] - ye[j]))
            i = k + 1
    ax.add_collection(PatchCollection(patches, facecolor="white", edgecolor="0.2",
                                      hatch=hatch, linewidth=0, zorder=2))


def _map_norm(z):
    """(norm, masked z, clipped): the colour scale of a map (logarithmic
    where positive values span decades; fixed around a value that is the
    same everywhere), and whether small values fall below it."""
    import matplotlib.colors as mcolors

    norm, zm, clipped = None, np.ma.masked_invalid(z), False
    if _spans_decades(z):
        pos = z[np.isfinite(z) & (z > 0)]
        top = pos.max()
        bottom = max(pos.min(), top * LOG_FLOOR)
        clipped = bottom > pos.min() or np.any(np.isfinite(z) & (z <= 0))
        norm = mcolors.LogNorm(vmin=bottom, vmax=top)
        zm = np.ma.masked_where(~np.isfinite(z) | (z <= 0), z)
    finite = z[np.isfinite(z)]
    if finite.size > 0 and finite.min() == finite.max():
        # one value everywhere: a colour scale would be meaningless
        v0 = float(finite[0])
        norm = mcolors.Normalize(vmin=v0 - 1 if v0 == 0 else 0.5 * v0,
                                 vmax=v0 + 1 if v0 == 0 else 1.5 * v0)
    return norm, zm, clipped


def _colour_map(fig, ax, edges, z, quantity, zunit):
    """The colour mesh of a map and its colour bar."""
    import matplotlib as mpl

    cmap = mpl.colormaps["viridis"].with_extremes(bad="white", under="white")
    norm, zm, clipped = _map_norm(z)
    mesh = ax.pcolormesh(*edges, zm.T, cmap=cmap, norm=norm, rasterized=True)
    cbar = fig.colorbar(mesh, ax=ax, extend="min" if clipped else "neither")
    cbar.set_label(axis_label(quantity, zunit) + (
        f"   (white: 0 or below {LOG_FLOOR:.0e} of the largest)" if clipped else ""))
    finite = z[np.isfinite(z)]
    if finite.size > 0 and finite.min() == finite.max():
        cbar.set_ticks([float(finite[0])])
        ax.annotate(f"{QUANTITY_LABELS.get(quantity, quantity)} = {finite[0]:.4g} "
                    f"{pretty_unit(zunit)} wherever it is finite", xy=(0.01, 0.97),
                    xycoords="axes fraction", va="top", fontsize=8,
                    bbox=dict(boxstyle="square,pad=0.2", facecolor="white",
                              edgecolor="none"))


def _map_contours(fig, ax, x, y, z):
    log = _spans_decades(z)
    levels = _levels(z, log)
    if len(levels) and min(x.size, y.size) > 2:
        zc = np.where(np.isfinite(z) & ((z > 0) | (not log)), z,
                      (min(levels) / 10) if log else np.nan)
        cs = ax.contour(x, y, zc.T, levels=levels, colors="black", linewidths=0.9)
        _declutter(fig, ax.clabel(cs, fmt=_contour_fmt, fontsize=8, inline=True))


def _map_threshold(ax, result, k, axis, fac, c, x, y):
    """The threshold speed as a curve across a map whose axis ``k`` is a
    speed."""
    vt = result.grid("up_threshold_speed")
    other = y if k == 0 else x
    curve = (vt[:, 0] if k == 1 else vt[0, :]) if _constant(vt) is None else \
        np.full(other.size, _constant(vt))
    curve = curve / c if axis.relative else curve * fac
    if not np.all(np.isfinite(curve)):
        return
    xy = (curve, other) if k == 0 else (other, curve)
    ax.plot(*xy, color="white", linewidth=2.6, zorder=3)
    ax.plot(*xy, color="black", linestyle=(0, (1, 1.2)), linewidth=1.6, zorder=4,
            label=r"threshold $v_\mathrm{th}$")


def _map_speed_marks(ax, result, scaled_axes, x, y):
    """Sound speed and (where the result has one) the threshold on the
    speed axes of a map; ``scaled_axes``: (axis, factor) of x and y."""
    c = _constant(result.column("sound_speed"))
    for k, (axis, fac) in enumerate(scaled_axes):
        if axis.kind != "speed" or c is None:
            continue
        pos = 1.0 if axis.relative else c * fac
        line = ax.axvline if k == 0 else ax.axhline
        line(pos, color="white", linewidth=2.6, zorder=3)
        line(pos, color="black", linestyle=(0, (4, 2)), linewidth=1.3, zorder=4,
             label="sound speed $c_s$")
        if "up_threshold_speed" in result.columns:
            _map_threshold(ax, result, k, axis, fac, c, x, y)


def plot_map(result, path=None, quantity=None):
    """A 2D grid as a colour map with labelled contours; the sound speed
    and (straight motion) the threshold are drawn on a speed axis."""
    if len(result.axes) != 2:
        raise InputError("--plot", "a map needs a 2D grid")
    quantity = quantity or default_plotted(result.columns)[0]
    check_quantity(result.columns, quantity)
    a0, a1 = result.axes
    x, xlabel, fx = _grid_coords(result, a0)
    y, ylabel, fy = _grid_coords(result, a1)
    z_si = result.grid(quantity)
    zfac, zunit = display_unit(column_kind(quantity), result.unit(quantity), z_si)
    z = z_si * zfac
    fig = _figure((6.4, 5.0))
    ax = fig.add_subplot()
    xe, ye = _cell_edges(x, a0.log), _cell_edges(y, a1.log)
    _colour_map(fig, ax, (xe, ye), z, quantity, zunit)
    _map_contours(fig, ax, x, y, z)
    if a0.log:
        ax.set_xscale("log")
    if a1.log:
        ax.set_yscale("log")
    _nice_log_ticks(ax)
    ax.set_xlabel(xlabel)
    ax.set_ylabel(ylabel)
    # no-result points: hatched
    bad = np.array([w.startswith("no result") for w in result.warnings]).reshape(result.shape)
    if bad.any():
        _hatch_cells(ax, xe, ye, bad, HATCHES[0])
        ax.annotate("hatched: no result (model diverges)", xy=(0.01, 0.01),
                    xycoords="axes fraction", fontsize=7, zorder=6,
                    bbox=dict(boxstyle="square,pad=0.2", facecolor="white",
                              edgecolor="none"))
    _map_speed_marks(ax, result, ((a0, fx), (a1, fy)), x, y)
    if ax.get_legend_handles_labels()[0]:
        ax.legend(loc="upper left", fontsize=8, framealpha=0.9)
    fig.suptitle(_title(result.meta), fontsize=10)
    if path is not None:
        save(fig, path)
    return fig


# ---------------------------------------------------------------------------
# comparisons
# ---------------------------------------------------------------------------
def plot_comparison(cmp, path=None):
    """The models of a :class:`probe.compare.Comparison` overlaid: curves on
    a 1D grid, contour lines on a 2D grid."""
    if len(cmp.axes) == 2:
        return _compare_map(cmp, path)
    base = cmp.base.result
    ax_ = cmp.axes[0]
    x, xlabel, factor, x_cs = _coords(base, ax_)
    fig = _figure((6.8, 5.4))
    ax = fig.add_subplot()
    ys = [v.result.column(v.main) for v in cmp.variants]
    unit = base.unit(cmp.base.main)
    every = max(1, x.size // 12)
    order = np.argsort(x)
    for k, (v, y) in enumerate(zip(cmp.variants, ys)):
        q = QUANTITY_LABELS.get(v.main, v.main).split(" $")[0]
        name = "configured" if k == 0 else v.label
        ax.plot(x[order], y[order], label=f"{name}: {q}", markevery=every,
                **_style(k))
    if _spans_decades(*ys):
        ax.set_yscale("log")
        _log_limits(ax, ys)
    if ax_.log:
        ax.set_xscale("log")
    h = 0
    for k, v in enumerate(cmp.variants):
        st = np.array(v.status())
        bad = st != "ok"
        word = "diverges" if (st == "diverges").any() else "no result"
        if _no_result_strip(ax, x, bad, f"{v.label}: {word}", HATCHES[h % len(HATCHES)],
                            h, colour=COLOURS[k % len(COLOURS)]):
            h += 1
    if ax_.kind == "speed":
        c = _constant(base.column("sound_speed"))
        if c is not None:
            vt = _constant(base.column("up_threshold_speed")) if \
                "up_threshold_speed" in base.columns else None
            _mark_speed(ax, x_cs, factor, c, vt)
            _second_speed_axis(ax, x_cs, factor, c)
    ax.set_xlabel(xlabel)
    ax.set_ylabel(f"rate [{pretty_unit(unit)}]" if unit == "1/s" else
                  "probability or phonon number" if unit == "1" else f"[{pretty_unit(unit)}]")
    ax.grid(True, which="major", color="0.85", linewidth=0.6)
    _nice_log_ticks(ax)
    handles, labels = ax.get_legend_handles_labels()
    keep = [(h_, l_) for h_, l_ in zip(handles, labels) if not l_.endswith(
        (": diverges", ": no result"))]
    fig.legend([h_ for h_, _ in keep], [l_ for _, l_ in keep], loc="outside lower center",
               ncols=2, fontsize=8, frameon=False, title=f"configured: {cmp.base.label}",
               title_fontsize=8)
    fig.suptitle(_title(base.meta, "model comparison"), fontsize=10)
    if path is not None:
        save(fig, path)
    return fig


def _compare_map(cmp, path):
    from matplotlib.lines import Line2D
    from matplotlib.patches import Rectangle

    base = cmp.base.result
    a0, a1 = cmp.axes
    x, xlabel, _ = _grid_coords(base, a0)
    y, ylabel, _ = _grid_coords(base, a1)
    fig = _figure((6.4, 5.0))
    ax = fig.add_subplot()
    zs = [v.result.grid(v.main) for v in cmp.variants]
    log = _spans_decades(*zs)
    levels = _levels(np.concatenate([z.ravel() for z in zs]), log)
    handles = []
    for k, (v, z) in enumerate(zip(cmp.variants, zs)):
        st = _style(k)
        zc = np.where(np.isfinite(z) & ((z > 0) | (not log)), z,
                      (min(levels) / 10) if (log and levels) else np.nan)
        if levels:
            cs = ax.contour(x, y, zc.T, levels=levels, colors=[st["color"]],
                            linestyles=[st["linestyle"]], linewidths=1.3)
            if k == 0:
                _declutter(fig, ax.clabel(cs, fmt=_contour_fmt, fontsize=7, inline=True))
        bad = np.array(v.status()).reshape(cmp.shape) != "ok"
        if bad.any():
            _hatch_cells(ax, _cell_edges(x, a0.log), _cell_edges(y, a1.log), bad,
                         HATCHES[k % len(HATCHES)])
            handles.append(Rectangle((0, 0), 1, 1, facecolor="white", edgecolor="0.2",
                                     hatch=HATCHES[k % len(HATCHES)],
                                     label=f"{v.label}: no result"))
        handles.append(Line2D([], [], color=st["color"], linestyle=st["linestyle"],
                              label=f"{v.label}: {v.main}"))
    if a0.log:
        ax.set_xscale("log")
    if a1.log:
        ax.set_yscale("log")
    _nice_log_ticks(ax)
    ax.set_xlabel(xlabel)
    ax.set_ylabel(ylabel)
    ax.legend(handles=handles, loc="upper left", fontsize=7, framealpha=0.9,
              title=f"contours [{pretty_unit(base.unit(cmp.base.main))}]",
              title_fontsize=7)
    fig.suptitle(_title(base.meta, "model comparison"), fontsize=10)
    if path is not None:
        save(fig, path)
    return fig


# ---------------------------------------------------------------------------
# threshold
# ---------------------------------------------------------------------------
def plot_threshold(table, path=None):
    """Threshold speed versus gap with the sound speed, the configured gap
    and (straight motion) the configured speed."""
    f = table.column("gap_frequency")
    vt = table.column("up_threshold_speed")
    c = table.sound_speed
    conf = table.configured
    fac, unit = display_unit("speed", "m/s", np.concatenate([vt, [c]]))
    fig = _figure()
    ax = fig.add_subplot()
    ax.plot(f, vt * fac, label=r"up threshold $v_\mathrm{th}$", markevery=max(1, f.size // 12),
            **_style(0))
    ax.axhline(c * fac, linestyle=(0, (4, 2)), color="0.25", linewidth=1.3,
               label="sound speed $c_s$")
    top = max(np.nanmax(vt), c) * fac
    ax.fill_between(f, vt * fac, top * 1.15, facecolor="none", edgecolor="0.6",
                    hatch="//", linewidth=0, label="up transitions at $T = 0$")
    g0 = conf["gap"] / (2 * math.pi)
    ax.plot([g0], [conf["threshold_speed"] * fac], linestyle="none", marker="*",
            markersize=12, color=COLOURS[1], markeredgecolor="black",
            label=f"configured gap {g0:.4g} Hz")
    if conf.get("speed") is not None:
        ax.axhline(conf["speed"] * fac, linestyle=(0, (1, 1.5)), color=COLOURS[2],
                   linewidth=1.5, label=f"configured speed {conf['speed'] / c:.3g} $c_s$")
    if table.axis.log:
        ax.set_xscale("log")
    ax.set_xlim(f.min(), f.max())
    ax.set_ylim(0, top * 1.15)
    ax.set_xlabel(r"gap $\Omega/2\pi$ [Hz]")
    ax.set_ylabel(f"speed [{pretty_unit(unit)}]")
    scale = fac * c
    sec = ax.secondary_yaxis("right", functions=(lambda v: v / scale, lambda m: m * scale))
    sec.set_ylabel("$v/c_s$")
    ax.grid(True, which="major", color="0.85", linewidth=0.6)
    ax.legend(loc="lower right", fontsize=8, framealpha=0.95)
    fig.suptitle(f"Threshold of straight motion, {table.dispersion} dispersion", fontsize=10)
    if path is not None:
        save(fig, path)
    return fig


# ---------------------------------------------------------------------------
# emitted phonons of a finite transit (probe.transit spectrum output)
# ---------------------------------------------------------------------------
def _spectrum_of(result):
    sp = getattr(result, "spectrum", None)
    if not sp:
        raise InputError("spectrum", "the transit result has no spectrum; call "
                                     "transit_probabilities(..., spectrum=True)")
    return sp


def _two_starts(sp):
    """True when the spectrum has a second series: the probe starting excited
    (a probe with internal states)."""
    return "dN_dk_excited" in sp


def _start_labels(sp):
    if _two_starts(sp):
        return ("probe starts in the ground state", "probe starts excited")
    return ("emitted phonons", None)


def _pattern_1d(sp, main, second):
    """Forward and backward counts of a 1D transit as bars."""
    fig = _figure((5.2, 4.2))
    ax = fig.add_subplot()
    keys = [("dN_backward", "dN_forward", main)]
    if second and "dN_forward_excited" in sp:
        keys.append(("dN_backward_excited", "dN_forward_excited", second))
    width = 0.8 / len(keys)
    for k, (b, f, lab) in enumerate(keys):
        xs = np.array([0, 1]) + (k - (len(keys) - 1) / 2) * width
        ax.bar(xs, [sp[b], sp[f]], width=width, facecolor="white" if k else "0.35",
               edgecolor="black", hatch=HATCHES[k] if k else None, label=lab)
    ax.set_xticks([0, 1], ["backward (-x)", "forward (+x)"])
    ax.set_ylabel("emitted phonons")
    ax.legend(fontsize=8)
    fig.suptitle("Emitted phonons of the transit, 1D", fontsize=10)
    return fig


def _polar_series(sp, d, main, second):
    """(series, scale, unit, angles, values, axis text) of a 2D or 3D
    direction spectrum: 3D dN/dcos(theta) -> dN/dOmega mirrored about the
    axis, 2D dN/dphi closed around the circle."""
    if d == 3:
        theta = np.arccos(np.clip(np.asarray(sp["cos_theta"], float), -1, 1))
        return ([("dN_dcos_theta", main), ("dN_dcos_theta_excited", second)],
                1 / (2 * math.pi), "1/sr", np.concatenate([theta[::-1], -theta]),
                lambda v: np.concatenate([v[::-1], v]), r"$\theta$ from the mean velocity")
    phi = np.asarray(sp["phi"], float)
    return ([("dN_dphi", main), ("dN_dphi_excited", second)], 1.0, "1/rad",
            np.concatenate([phi, phi[:1]]), lambda v: np.concatenate([v, v[:1]]),
            r"$\phi$ from the mean velocity")


def _mach_cone(ax, c, speed):
    """The Mach cone cos(theta) = c/v of a supersonic transit."""
    cone = math.acos(c / speed)
    for a in (cone, -cone):
        ax.plot([a, a], [0, ax.get_rmax()], color="0.3", linestyle=(0, (4, 2)),
                linewidth=1.1)
    ax.plot([], [], color="0.3", linestyle=(0, (4, 2)),
            label=f"Mach cone, cos = $c_s/v$ = {c / speed:.3g}")


def plot_emission_pattern(result, path=None, speed=None):
    """Directions of the emitted phonons of a transit
    (:class:`probe.transit.TransitResult` with a spectrum).

    3D: polar plot of dN/dOmega (per steradian, azimuth-averaged) against the
    angle theta from the spectrum axis (the mean velocity), mirrored about
    the axis; 2D: dN/dphi (per radian) against phi; 1D: forward and
    backward counts.  ``speed`` (m/s) marks the Mach cone cos(theta) = c/v
    when supersonic."""
    import matplotlib.ticker as mticker

    sp = _spectrum_of(result)
    d = result.dimension
    main, second = _start_labels(sp)
    if d == 1:
        fig = _pattern_1d(sp, main, second)
        if path is not None:
            save(fig, path)
        return fig
    fig = _figure((5.6, 5.6))
    ax = fig.add_subplot(projection="polar")
    ax.set_theta_zero_location("E")
    series, scale, unit, angles, values, axis_text = _polar_series(sp, d, main, second)
    k = 0
    for key, lab in series:
        if lab is None or key not in sp:
            continue
        r = np.asarray(sp[key], float) * scale
        ax.plot(angles, values(r), label=lab, markevery=max(1, angles.size // 24),
                **_style(k))
        k += 1
    if speed is not None and speed > result.sound_speed:
        _mach_cone(ax, result.sound_speed, speed)
    ax.set_rlabel_position(157.5)
    ax.yaxis.set_major_locator(mticker.MaxNLocator(4))
    ax.tick_params(labelsize=8)
    ax.set_title(f"dN/d{'Ω' if d == 3 else 'φ'} [{unit}], {axis_text}; motion to the right",
                 fontsize=9, pad=14)
    fig.legend(loc="outside lower center", fontsize=8, frameon=False)
    fig.suptitle(f"Emitted phonons of the transit, {d}D", fontsize=10)
    if path is not None:
        save(fig, path)
    return fig


def plot_emission_spectrum(result, path=None):
    """Wavenumber spectrum of the emitted phonons of a transit: dN/d(k xi)
    against k xi (top axis: k in 1/um), with k xi = 1 marked (phonons below,
    particle-like excitations above)."""
    sp = _spectrum_of(result)
    xi = result.healing_length
    q = np.asarray(sp["k"], float) * xi
    main, second = _start_labels(sp)
    fig = _figure()
    ax = fig.add_subplot()
    curves = [(np.asarray(sp["dN_dk"], float) / xi, main)]
    if second and "dN_dk_excited" in sp:
        curves.append((np.asarray(sp["dN_dk_excited"], float) / xi, second))
    for k, (y, lab) in enumerate(curves):
        ax.plot(q, y, label=lab, markevery=max(1, q.size // 14), **_style(k))
    ys = [y for y, _ in curves]
    if _spans_decades(*ys):
        ax.set_yscale("log")
        pos = np.concatenate([y[y > 0] for y in ys])
        top = pos.max()
        ax.set_ylim(max(pos.min(), top * 1e-8) / 2, top * 3)
    else:
        ax.set_ylim(bottom=0)
    ax.set_xlim(0, q.max())
    ax.axvline(1.0, color="0.3", linestyle=(0, (1, 1.5)), linewidth=1.2)
    ax.annotate(r"$k\xi = 1$", xy=(1.0, 1.0), xycoords=("data", "axes fraction"),
                xytext=(3, -12), textcoords="offset points", fontsize=9)
    ax.set_xlabel(r"wavenumber $k\xi$")
    ax.set_ylabel(r"$dN/d(k\xi)$ [phonons per unit $k\xi$]")
    f = 1e-6 / xi
    sec = ax.secondary_xaxis("top", functions=(lambda x: x * f, lambda k_: k_ / f))
    sec.set_xlabel(f"k [{pretty_unit('1/um')}]")
    ax.grid(True, which="major", color="0.85", linewidth=0.6)
    ax.legend(fontsize=8)
    total = getattr(result, "emitted_phonons", None)
    start = " from the ground state" if _two_starts(sp) else ""
    fig.suptitle("Spectrum of the emitted phonons" +
                 (f" (N = {total:.3g}{start})" if total is not None else ""), fontsize=10)
    if path is not None:
        save(fig, path)
    return fig


__all__ = ["plot_sweep", "plot_lines", "plot_map", "plot_comparison",
           "plot_threshold", "plot_emission_pattern", "plot_emission_spectrum",
           "save", "check_plot_path", "SUFFIXES"]
