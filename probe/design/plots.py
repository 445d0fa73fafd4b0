"""Pictures of sweeps, model comparisons and thresholds (matplotlib).

Figures are drawn on matplotlib's Agg canvas (``matplotlib.figure.Figure``
with ``FigureCanvasAgg``), so nothing here touches the interactive backend
of a notebook or a desktop session; matplotlib is imported only inside the
drawing functions.  The format follows the file name: ``.png`` (at
``DPI`` dots per inch), ``.pdf`` or ``.svg``; files appear whole (written
beside the target and renamed).

Every figure says what it shows as computed: its title names the scenario
file, the gas, the probe and the motion (and a transit's switching) from the
validated scenario, with the ``--set``/``--unset`` edits of the file on a
caption line (:func:`scenario_caption`).  Points that carry validity
warnings are drawn with open markers over a hatched band (maps: dotted
cells), and the legend says at how many points and what the warnings are;
points a log axis cannot show (zeros, values below its floor) are counted in
the legend.

Every curve has its own line style and marker as well as its own colour;
2D maps use a colour map whose lightness rises monotonically (viridis),
with colour steps at values that split the grid's points into about equal
groups (so a map whose values bunch in one part of their range still shows
their structure there), and labelled black contour lines, so the pictures
stay readable when printed in black and white.  Axes carry the quantity and
its unit; a log scale is used where positive values span more than two
decades.

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
import re
import textwrap
from pathlib import Path

import numpy as np

from probe.errors import InputError
from probe.design.sweep import column_kind, display_unit, format_value
from probe.design.sweep.runners import WARNING_SEPARATOR
from probe.quantities import QUANTITIES, default_plotted, shared_noun
from probe.scenarios.schema import KEY_LABELS

SUFFIXES = (".png", ".pdf", ".svg")
#: resolution of PNG files (dots per inch)
DPI = 100

#: (line style, marker) pairs, in order of use
STYLES = [("-", "o"), ("--", "s"), (":", "^"), ("-.", "D"),
          ((0, (6, 2, 1, 2, 1, 2)), "v"), ((0, (1, 1)), "P"), ((0, (8, 3)), "X")]
#: Okabe-Ito colours (distinguishable with colour-vision deficiencies)
COLOURS = ["#000000", "#D55E00", "#0072B2", "#009E73", "#CC79A7", "#E69F00", "#56B4E9"]
HATCHES = ["///", "\\\\\\", "xxx", "...", "|||"]
#: the hatch of the band (maps: the cells) of points with validity warnings
WARNING_HATCH = "xx"
WARNING_CELL_HATCH = "..."
#: colours of that band (light: the curves stay in front)
BAND_FACE, BAND_EDGE = "#FFF8EA", "#E8CF9A"
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
    import matplotlib
    matplotlib.use("Agg", force=False)
    from matplotlib.backends.backend_agg import FigureCanvasAgg
    from matplotlib.figure import Figure

    fig = Figure(figsize=size, dpi=DPI, layout="constrained")
    FigureCanvasAgg(fig)
    return fig


def save(fig, path):
    """Write ``fig`` to ``path`` (format from the extension), atomically."""
    p = check_plot_path(path)
    tmp = p.with_name(f".{p.stem}.{os.getpid()}.tmp{p.suffix}")
    try:
        fig.savefig(tmp, format=p.suffix[1:].lower(), dpi=DPI)
        os.replace(tmp, p)
    except OSError as exc:
        tmp.unlink(missing_ok=True)
        raise InputError("--plot", f"cannot write {os.fspath(p)!r}: "
                                   f"{exc.strerror or exc}") from None
    return fig


def _style(k):
    ls, marker = STYLES[k % len(STYLES)]
    return dict(linestyle=ls, marker=marker, color=COLOURS[k % len(COLOURS)],
                markerfacecolor=COLOURS[k % len(COLOURS)], markersize=4.5, linewidth=1.5)


def _spans_decades(*arrays):
    vals = np.concatenate([np.asarray(a, float).ravel() for a in arrays])
    pos = vals[np.isfinite(vals) & (vals > 0)]
    if pos.size < 2:
        return False
    neg = vals[np.isfinite(vals) & (vals < 0)]
    return neg.size == 0 and pos.max() / pos.min() > 100


# ---------------------------------------------------------------------------
# what a figure shows: the scenario as computed
# ---------------------------------------------------------------------------
#: the switching's keys as a caption names them
_SWITCHING_WORDS = (("switching_width", "τ = {}"), ("switching_centre", "centred at {}"),
                    ("start", "from {}"), ("stop", "to {}"), ("ramp", "ramp {}"))
#: probe keys whose variation leaves the configured gap standing
_GAP_KEEPERS = ("probe.width", "probe.tweezer_frequency", "probe.coupling",
                "probe.coupling_length")
#: characters per caption line
CAPTION_WIDTH = 96


def _flat(table, prefix=""):
    """A TOML table as {dotted key: value} (waypoint tables kept whole)."""
    out = {}
    for key, value in table.items():
        if isinstance(value, dict) and key != "waypoints":
            out.update(_flat(value, f"{prefix}{key}."))
        else:
            out[f"{prefix}{key}"] = value
    return out


def _value_text(value):
    if isinstance(value, (list, tuple)):
        return "[" + ", ".join(_value_text(v) for v in value) + "]"
    return str(value)


def scenario_edits(source, raw):
    """What ``raw`` (a scenario's TOML tables as computed) changes in the
    file ``source``: ``key=value`` for every entry set or changed,
    ``unset key`` for every entry removed; empty when the file cannot be
    read (a scenario given as a dict)."""
    if not source or not raw:
        return []
    import tomllib
    try:
        with open(source, "rb") as fh:
            original = tomllib.load(fh)
    except (OSError, ValueError):
        return []
    before, after = _flat(original), _flat(raw)
    out = [f"{k}={_value_text(v)}" for k, v in after.items()
           if k not in before or before[k] != v]
    return out + [f"unset {k}" for k in before if k not in after]


def _micro(text):
    """A value as written, for a caption: a space between number and unit,
    um as µm."""
    text = re.sub(r"^\s*([-+]?[0-9.]+(?:[eE][-+]?[0-9]+)?)\s*(?=[^\s\d.%])", r"\1 ",
                  str(text))
    return re.sub(r"(?<![A-Za-z])um(?![A-Za-z])", "µm", text)


def _temperature_text(temperature):
    return "T = 0" if not temperature else \
        f"T = {format_value('temperature', 'K', temperature)}"


def _gas_words(gas, varied):
    words = [f"{gas['dimension']}D {gas.get('species') or ''}".strip() + " gas"]
    trap = gas.get("trap")
    if trap:
        words[0] += f" in a {trap['kind']} trap"
    if "condensate.dispersion" not in varied:
        words.append(f"{gas['dispersion']} dispersion")
    if "condensate.temperature" not in varied:
        words.append(_temperature_text(gas.get("temperature") or 0.0))
    return words


def _probe_words(probe, varied):
    inner = []
    gap = probe.get("gap")
    if gap is not None and not any(k.startswith("probe.") and k not in _GAP_KEEPERS
                                   for k in varied):
        inner.append(f"gap {format_value('frequency', 'rad/s', gap)}")
    if not {"probe.width", "probe.tweezer_frequency"} & set(varied):
        width = probe.get("width") or 0.0
        inner.append("point-like" if width == 0 else
                     f"width {_micro(format_value('length', 'm', width))}")
    return f"{probe['model']} probe" + (f" ({', '.join(inner)})" if inner else "")


def _motion_words(scenario, raw_path, varied):
    path = scenario.get("trajectory", {})
    c = scenario.get("derived", {}).get("sound_speed")
    text = f"{path.get('kind', '?')} path"
    radius = raw_path.get("radius", path.get("radius"))
    if radius is not None and "trajectory.radius" not in varied:
        text += f", R = {_micro(radius) if isinstance(radius, str) else format_value('length', 'm', radius)}"
    speed = raw_path.get("speed", path.get("speed"))
    if speed is not None and not {"trajectory.speed", "trajectory.angular_frequency"} \
            & set(varied):
        text += f" at {_micro(speed)}" if isinstance(speed, str) else \
            f" at {speed / c:.4g} c_s" if c else ""
    return text


def switching_words(raw_path, varied=()):
    """The switching of a transit from its TOML table (``gaussian
    switching, τ = 2 ms``), or None without one."""
    name = raw_path.get("switching")
    if name is None:
        return None
    words = [template.format(_micro(raw_path[key])) for key, template in _SWITCHING_WORDS
             if isinstance(raw_path.get(key), str) and f"trajectory.{key}" not in varied]
    return f"{name} switching" + (f", {', '.join(words)}" if words else "")


def scenario_caption(scenario, raw=None, varied=(), extra=None, switching=None):
    """The lines that say which scenario a figure shows, as computed: the
    file and the gas; the probe, the path and (a transit) the switching;
    the edits of the file (``--set``/``--unset``).  ``scenario``: the dict
    of ``Scenario.describe()`` (with ``source``); ``raw``: the TOML tables
    as computed; ``varied``: keys on the figure's axes (their configured
    values are not stated); ``extra``: what the figure is (first words);
    ``switching``: the switching in words (default: from ``raw``)."""
    raw = raw or {}
    source = scenario.get("source")
    gas = ", ".join(_gas_words(scenario["condensate"], varied))
    name = os.path.basename(source) if source else ""
    second = [_probe_words(scenario["probe"], varied),
              _motion_words(scenario, raw.get("trajectory", {}), varied)]
    sw = switching or switching_words(raw.get("trajectory", {}), varied)
    if sw:
        second.append(sw)
    if extra:
        lines = [" — ".join(t for t in (extra, name) if t), "; ".join([gas] + second)]
    else:
        lines = [f"{name}: {gas}" if name else gas, "; ".join(second)]
    edits = scenario_edits(source, raw)
    if edits:
        lines += textwrap.wrap("as computed with " + ", ".join(
            (f"--{e}" if e.startswith("unset ") else f"--set {e}").replace(" ", "\u00a0")
            for e in edits),
            CAPTION_WIDTH, break_on_hyphens=False)
    return lines


def _title(meta, extra=None, varied=(), more=()):
    """The title lines of a figure of a sweep's ``meta`` (sidecar record)."""
    meta = meta or {}
    scenario = dict(meta.get("scenario") or {})
    if not scenario:
        text = os.path.basename(meta.get("source") or "")
        return [t for t in (extra, text) if t] + list(more)
    scenario.setdefault("source", meta.get("source"))
    return scenario_caption(scenario, meta.get("config"), varied, extra) + list(more)


def _wrap_phrases(line, width):
    """``line`` in lines of at most ``width`` characters, broken after a
    comma, semicolon or dash (never inside "T = 0"), words only where a
    phrase alone is too long."""
    out, current = [], ""
    for phrase in re.split(r"(?<=[,;—:])\s+", line):
        joined = f"{current} {phrase}" if current else phrase
        if len(joined) <= width or not current:
            current = joined
        else:
            out.append(current)
            current = phrase
    out.append(current)
    return [part for ln in out for part in (
        textwrap.wrap(ln, width, break_on_hyphens=False) if len(ln) > width else [ln])]


def set_title(fig, lines, size=9):
    """The figure's title: the first line larger, the others (what it was
    computed with) smaller."""
    width = int(fig.get_figwidth() * 130 / size)
    lines = [part for ln in lines if ln for part in _wrap_phrases(ln, width)]
    if not lines:
        return
    fig.suptitle("\n".join(lines), fontsize=size, linespacing=1.35)


# ---------------------------------------------------------------------------
# validity warnings of the points
# ---------------------------------------------------------------------------
#: characters of a warning kept as its kind in a legend
KIND_CHARACTERS = 90


def warning_kind(sentence):
    """The kind of a warning: its words up to the first colon, semicolon or
    parenthesis (``first-order perturbation theory is breaking down``)."""
    kind = re.split(r"[:;(]", sentence, maxsplit=1)[0].strip()
    return kind if len(kind) <= KIND_CHARACTERS else \
        kind[:KIND_CHARACTERS].rsplit(" ", 1)[0] + " …"


def validity_flags(warnings):
    """``(flags, kinds)``: for every point, whether it carries a validity
    warning (a point without a result is not counted here: it has no value
    to mistrust), and {kind: number of points} in order of appearance."""
    flags = np.zeros(len(warnings), bool)
    kinds = {}
    for i, text in enumerate(warnings):
        seen = set()
        for part in str(text or "").split(WARNING_SEPARATOR.strip()):
            part = part.strip()
            if not part or part.startswith("no result"):
                continue
            flags[i] = True
            seen.add(warning_kind(part))
        for kind in sorted(seen):
            kinds[kind] = kinds.get(kind, 0) + 1
    return flags, kinds


def warning_label(flags, kinds, width=84):
    """The legend text of the marked points: how many, and why."""
    what = "; ".join(f"{k} ({n})" if len(kinds) > 1 else k for k, n in kinds.items())
    return textwrap.fill(f"validity warning at {int(flags.sum())} of {flags.size} points: "
                         f"{what}", width)


def _warning_band(ax, x, flags):
    """A hatched band behind the x ranges of the flagged points; returns
    its legend handle (None when no point is flagged)."""
    from matplotlib.patches import Patch

    if not flags.any():
        return None
    for lo, hi in _runs(x, flags):
        if hi == lo:
            span = 0.004 * (np.nanmax(x) - np.nanmin(x) or 1.0)
            lo, hi = lo - span, hi + span
        ax.axvspan(lo, hi, facecolor=BAND_FACE, edgecolor=BAND_EDGE, hatch=WARNING_HATCH,
                   linewidth=0, zorder=0)
    return Patch(facecolor=BAND_FACE, edgecolor=BAND_EDGE, hatch=WARNING_HATCH, linewidth=0)


def _open_markers(ax, x, y, flags, k):
    """The flagged points of curve ``k`` as open markers."""
    st = _style(k)
    keep = flags & np.isfinite(y)
    if keep.any():
        ax.plot(x[keep], y[keep], linestyle="none", marker=st["marker"],
                markersize=5.5, markerfacecolor="white", markeredgecolor=st["color"],
                markeredgewidth=1.2, zorder=4)


def _warning_handle(band):
    """The legend handle of the marked points: the band with an open
    marker on it."""
    from matplotlib.lines import Line2D

    marker = Line2D([], [], linestyle="none", marker="o", markersize=5.5,
                    markerfacecolor="white", markeredgecolor="black")
    return (band, marker) if band is not None else marker


#: characters per line of a legend entry
LEGEND_WIDTH = 84


def _legend(fig, handles, labels, ncols=2, title=None):
    """The legend below the axes (it never hides a curve)."""
    from matplotlib.legend_handler import HandlerTuple

    labels = [textwrap.fill(lb, LEGEND_WIDTH) if "\n" not in lb else lb for lb in labels]
    if ncols > 1 and any(len(line) > fig.get_figwidth() * 6 for lb in labels
                         for line in lb.splitlines()):
        ncols = 1
    fig.legend(handles, labels, loc="outside lower center", ncols=ncols, fontsize=8,
               frameon=False, title=title, title_fontsize=8,
               handler_map={tuple: HandlerTuple(ndivide=1)})


def hidden_text(y, log, bottom=None, points="points"):
    """What a curve cannot show: no result anywhere, zeros (or values
    below ``bottom``, the axis's floor) off a log axis; '' when every point
    is drawn.  ``points``: what the values are counted as."""
    y = np.asarray(y, float)
    finite = np.isfinite(y)
    if not finite.any():
        return "no result at any point"
    if not log:
        return ""
    zero = finite & (y <= 0)
    low = finite & (y > 0) & (y < (bottom if bottom is not None else 0))
    if not (zero | low).any():
        return ""
    if not (finite & ~zero & ~low).any():
        return f"not drawn: 0 at all {int(finite.sum())} {points} with a result"
    parts = []
    if zero.any():
        parts.append(f"0 at {int(zero.sum())} of {y.size} {points}")
    if low.any():
        parts.append(f"{int(low.sum())} {points} below {bottom:.2g}")
    return ", ".join(parts) + " (off the log axis)"


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
    """Log y limits over the positive values (at most LOG_FLOOR below the
    largest); returns the bottom of what is shown (None: nothing positive)."""
    vals = np.concatenate([np.asarray(a, float).ravel() for a in arrays])
    pos = vals[np.isfinite(vals) & (vals > 0)]
    if pos.size == 0:
        return None
    top = pos.max()
    bottom = max(pos.min(), top * LOG_FLOOR)
    ax.set_ylim(bottom / 2, top * 3)
    return bottom


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


def _mark_speed(ax, x_cs, factor, sound_speed, threshold, whose=""):
    """Sound speed and threshold as vertical lines on a speed axis, named
    in the legend (one line where they coincide, as for the phonon
    dispersion); ``whose``: whose threshold it is (a comparison's)."""
    c_pos = 1.0 if x_cs else sound_speed * factor
    marks = []
    if threshold is not None and math.isfinite(threshold):
        t_pos = threshold / sound_speed if x_cs else threshold * factor
        mach = threshold / sound_speed
        if math.isclose(t_pos, c_pos, rel_tol=1e-9):
            marks.append((c_pos, r"sound speed $c_s$ = threshold $v_\mathrm{th}$" + whose,
                          (0, (4, 2)), "0.25"))
        else:
            marks.append((c_pos, "sound speed $c_s$", (0, (4, 2)), "0.25"))
            marks.append((t_pos, r"threshold $v_\mathrm{th}$" + f" = {mach:.4g} $c_s$"
                          + whose, (0, (1, 1.5)), "0.1"))
    else:
        marks.append((c_pos, "sound speed $c_s$", (0, (4, 2)), "0.25"))
    for pos, lab, ls, col in marks:
        ax.axvline(pos, linestyle=ls, color=col, linewidth=1.2, zorder=1, label=lab)
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
    marked on a speed axis, hatched ranges where there is no result, and
    the points with validity warnings marked (open markers on a hatched
    band)."""
    if len(result.axes) != 1:
        raise InputError("--plot", "curves need a 1D grid")
    quantities = quantities or default_plotted(result.columns)
    for q in quantities:
        check_quantity(result.columns, q)
    ax_ = result.axes[0]
    x, xlabel, factor, x_cs = _coords(result, ax_)
    fig = _figure((6.4, 5.4))
    ax = fig.add_subplot()
    ys, yfac, ylabel = _shared_y(result, quantities)
    flags, kinds = validity_flags(result.warnings)
    order = np.argsort(x)
    every = max(1, x.size // 14)
    lines, shaded = [], []
    for k, (q, y) in enumerate(zip(quantities, ys)):
        lines.append(_curve(ax, x, y * yfac, order, flags, k, every,
                            QUANTITY_LABELS.get(q, q)))
        shaded += _bands(ax, result, q, x[order], order, yfac, _style(k)["color"], k == 0)
    bottom = None
    if _spans_decades(*ys, *shaded):
        ax.set_yscale("log")
        bottom = _log_limits(ax, [y * yfac for y in ys + shaded])
    for line, y in zip(lines, ys):
        note = hidden_text(y * yfac, ax.get_yscale() == "log", bottom)
        if note:
            line.set_label(f"{line.get_label()}: {note}")
    if ax_.log:
        ax.set_xscale("log")
    ax.set_xlabel(xlabel)
    ax.set_ylabel(ylabel)
    band = _warning_band(ax, x, flags)
    bad = np.array([w.startswith("no result") for w in result.warnings])
    _no_result_strip(ax, x, bad, "no result", HATCHES[0], 0)
    _speed_lines(ax, result, ax_, x_cs, factor)
    ax.grid(True, which="major", color="0.85", linewidth=0.6)
    _nice_log_ticks(ax)
    handles, labels = ax.get_legend_handles_labels()
    if flags.any():
        handles.append(_warning_handle(band))
        labels.append(warning_label(flags, kinds))
    _legend(fig, handles, labels)
    set_title(fig, _title(result.meta, varied=[a.key for a in result.axes],
                          more=_band_caption(result, shaded)))
    if path is not None:
        save(fig, path)
    return fig


def _shared_y(result, quantities):
    """(SI columns, display factor, y label) of the plotted quantities."""
    ys = [result.column(q) for q in quantities]
    units = {result.unit(q) for q in quantities}
    unit = units.pop() if len(units) == 1 else None
    shown_unit, yfac = unit, 1.0
    if unit is not None:
        yfac, shown_unit = display_unit(column_kind(quantities[0]), unit, np.concatenate(ys))
    if len(quantities) == 1:
        return ys, yfac, axis_label(quantities[0], shown_unit)
    noun = shared_noun(quantities) if unit is not None else None
    unit_text = f"[{pretty_unit(shown_unit)}]" if shown_unit else ""
    return ys, yfac, " ".join(t for t in (noun, unit_text) if t) or "value"


def _curve(ax, x, y, order, flags, k, every, label):
    """One curve: filled markers at (every ``every``-th of) the points
    without warnings, open markers at the points with one."""
    st = _style(k)
    clean = np.flatnonzero(~flags[order])
    line, = ax.plot(x[order], y[order], label=label,
                    markevery=list(clean[::every]) if clean.size else [], **st)
    _open_markers(ax, x, y, flags, k)
    return line


def _speed_lines(ax, owner, axis, x_cs, factor, whose=""):
    """Sound speed and threshold (of ``owner``, a sweep result) on a speed
    axis, and the second speed axis on top."""
    if axis.kind != "speed":
        return
    c = _constant(owner.column("sound_speed"))
    if c is None:
        return
    vt = _constant(owner.column("up_threshold_speed")) if \
        "up_threshold_speed" in owner.columns else None
    _mark_speed(ax, x_cs, factor, c, vt, whose)
    _second_speed_axis(ax, x_cs, factor, c)


def _band_caption(result, shaded):
    """The caption line of the uncertainty bands: the uncertain inputs."""
    if not shaded:
        return []
    table = dict((result.config or {}).get("uncertainty") or {})
    samples = table.pop("samples", None)
    table.pop("seed", None)
    inputs = ", ".join(f"{k} ± {_micro(v)}" for k, v in table.items())
    text = f"bands: {inputs}" + (f" ({samples} samples)" if samples else "")
    return textwrap.wrap(text, CAPTION_WIDTH)


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
    if abs(e) <= 2:
        return f"{v:.3g}"
    return f"1e{e}" if abs(m - 1) < 1e-9 else f"{m:.3g}e{e}"


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


def _hatch_cells(ax, xe, ye, bad, hatch, filled=True):
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
    ax.add_collection(PatchCollection(patches, facecolor="white" if filled else "none",
                                      edgecolor="0.2" if filled else "0.15",
                                      hatch=hatch, linewidth=0, zorder=2))


#: colour steps of a map whose values span decades
MAP_STEPS = 10
#: mantissas of the values at which the colour of a map steps
_NICE = (1.0, 1.5, 2.0, 3.0, 5.0, 7.0)


def _nice(value, how):
    """The 1-1.5-2-3-5-7 number at or below (``floor``), at or above
    (``ceil``) or nearest to (``round``, in ratio) ``value`` > 0."""
    e = math.floor(math.log10(value))
    cands = [m * 10.0 ** k for k in (e - 1, e, e + 1) for m in _NICE]
    if how == "floor":
        return max(c for c in cands if c <= value * (1 + 1e-12))
    if how == "ceil":
        return min(c for c in cands if c >= value * (1 - 1e-12))
    return min(cands, key=lambda c: abs(math.log(c / value)))


def quantile_levels(z, steps=MAP_STEPS):
    """Levels at rounded quantiles of the positive values of ``z`` (taken
    in log) down to LOG_FLOOR of the largest: each colour step of a map
    holds about as many points as the next, wherever in their range the
    values bunch; the first level is at or below the smallest value shown,
    the last at or above the largest."""
    pos = np.asarray(z, float)
    pos = pos[np.isfinite(pos) & (pos > 0)]
    pos = pos[pos >= pos.max() * LOG_FLOOR]
    inner = np.quantile(np.log10(pos), np.linspace(0, 1, steps + 1)[1:-1])
    levels = {_nice(float(pos.min()), "floor"), _nice(float(pos.max()), "ceil")}
    levels |= {_nice(10.0 ** q, "round") for q in inner}
    return sorted(v for v in levels if _nice(float(pos.min()), "floor") <= v
                  <= _nice(float(pos.max()), "ceil"))


def _map_norm(z, cmap):
    """(norm, masked z, levels): the colour scale of a map.  Where positive
    values span decades, colour steps at :func:`quantile_levels` (zeros
    and negative values left white); a value that is the same everywhere
    gets a scale about it; otherwise a linear scale."""
    import matplotlib.colors as mcolors

    norm, zm, levels = None, np.ma.masked_invalid(z), None
    if _spans_decades(z):
        levels = quantile_levels(z)
        norm = mcolors.BoundaryNorm(levels, cmap.N)
        zm = np.ma.masked_where(~np.isfinite(z) | (z <= 0), z)
    finite = z[np.isfinite(z)]
    if finite.size > 0 and finite.min() == finite.max():
        # one value everywhere: a colour scale would be meaningless
        v0 = float(finite[0])
        norm = mcolors.Normalize(vmin=v0 - 1 if v0 == 0 else 0.5 * v0,
                                 vmax=v0 + 1 if v0 == 0 else 1.5 * v0)
    return norm, zm, levels


def _colour_map(fig, ax, edges, z, quantity, zunit):
    """The colour mesh of a map and its colour bar; returns (the colour
    levels (None on a linear scale), [(legend handle, text)] of the white
    cells)."""
    import matplotlib as mpl
    from matplotlib.patches import Rectangle

    cmap = mpl.colormaps["viridis"].with_extremes(bad="white", under="white")
    norm, zm, levels = _map_norm(z, cmap)
    mesh = ax.pcolormesh(*edges, zm.T, cmap=cmap, norm=norm, rasterized=True)
    finite = np.isfinite(z)
    zero = int(np.sum(finite & (z <= 0))) if levels is not None else 0
    low = int(np.sum(finite & (z > 0) & (z < levels[0]))) if levels is not None else 0
    cbar = fig.colorbar(mesh, ax=ax, extend="min" if low else "neither")
    label = axis_label(quantity, zunit)
    if levels is not None:
        cbar.set_ticks(levels)
        cbar.set_ticklabels([_contour_fmt(v) for v in levels])
        cbar.ax.tick_params(labelsize=7)
        label += "\n(steps at quantiles of the values)"
    cbar.set_label(label, fontsize=8)
    notes = []
    if zero or low:
        words = [t for t in (f"0 at {zero}" if zero else "",
                             f"below {LOG_FLOOR:.0e} of the largest at {low}" if low else "")
                 if t]
        notes.append((Rectangle((0, 0), 1, 1, facecolor="white", edgecolor="0.5"),
                      f"white: {', '.join(words)} of {z.size} points"))
    values = z[finite]
    if values.size > 0 and values.min() == values.max():
        cbar.set_ticks([float(values[0])])
        ax.annotate(f"{QUANTITY_LABELS.get(quantity, quantity)} = {values[0]:.4g} "
                    f"{pretty_unit(zunit)} wherever it is finite", xy=(0.01, 0.97),
                    xycoords="axes fraction", va="top", fontsize=8,
                    bbox=dict(boxstyle="square,pad=0.2", facecolor="white",
                              edgecolor="none"))
    return levels, notes


def _map_contours(fig, ax, x, y, z, levels=None):
    """Labelled contour lines: at the colour steps of a log map, else at
    round values."""
    log = _spans_decades(z)
    levels = list(levels[1:-1]) if levels is not None else _levels(z, log)
    if len(levels) and min(x.size, y.size) > 2:
        zc = np.where(np.isfinite(z) & ((z > 0) | (not log)), z,
                      (min(levels) / 10) if log else np.nan)
        cs = ax.contour(x, y, zc.T, levels=levels, colors="black", linewidths=0.8)
        _declutter(fig, ax.clabel(cs, fmt=_contour_fmt, fontsize=7, inline=True))


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
        if axis.kind != "speed" or (c is None and not axis.relative):
            continue
        pos = 1.0 if axis.relative else c * fac
        line = ax.axvline if k == 0 else ax.axhline
        line(pos, color="white", linewidth=2.6, zorder=3)
        line(pos, color="black", linestyle=(0, (4, 2)), linewidth=1.3, zorder=4,
             label="sound speed $c_s$")
        if "up_threshold_speed" in result.columns and c is not None:
            _map_threshold(ax, result, k, axis, fac, c, x, y)


def plot_map(result, path=None, quantity=None):
    """A 2D grid as a colour map with labelled contours; the sound speed
    and (straight motion) the threshold are drawn on a speed axis; cells
    without a result are hatched, cells with validity warnings dotted."""
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
    fig = _figure((6.6, 5.6))
    ax = fig.add_subplot()
    xe, ye = _cell_edges(x, a0.log), _cell_edges(y, a1.log)
    levels, notes = _colour_map(fig, ax, (xe, ye), z, quantity, zunit)
    _map_contours(fig, ax, x, y, z, levels)
    if a0.log:
        ax.set_xscale("log")
    if a1.log:
        ax.set_yscale("log")
    _nice_log_ticks(ax)
    ax.set_xlabel(xlabel)
    ax.set_ylabel(ylabel)
    handles = notes + _map_cells(ax, result, xe, ye)
    _map_speed_marks(ax, result, ((a0, fx), (a1, fy)), x, y)
    h, labels = ax.get_legend_handles_labels()
    if h or handles:
        _legend(fig, h + [hd for hd, _ in handles], labels + [lb for _, lb in handles])
    set_title(fig, _title(result.meta, varied=[a.key for a in result.axes]))
    if path is not None:
        save(fig, path)
    return fig


def _map_cells(ax, result, xe, ye):
    """Hatch the cells without a result and dot those with validity
    warnings; returns [(legend handle, label)]."""
    from matplotlib.patches import Rectangle

    out = []
    bad = np.array([w.startswith("no result") for w in result.warnings]).reshape(result.shape)
    if bad.any():
        _hatch_cells(ax, xe, ye, bad, HATCHES[0])
        out.append((Rectangle((0, 0), 1, 1, facecolor="white", edgecolor="0.2",
                              hatch=HATCHES[0]),
                    f"no result at {int(bad.sum())} of {bad.size} points"))
    flags, kinds = validity_flags(result.warnings)
    if flags.any():
        _hatch_cells(ax, xe, ye, flags.reshape(result.shape), WARNING_CELL_HATCH,
                     filled=False)
        out.append((Rectangle((0, 0), 1, 1, facecolor="none", edgecolor="0.15",
                              hatch=WARNING_CELL_HATCH), warning_label(flags, kinds)))
    return out


# ---------------------------------------------------------------------------
# comparisons
# ---------------------------------------------------------------------------
def plot_comparison(cmp, path=None):
    """The models of a :class:`probe.compare.Comparison` overlaid: curves on
    a 1D grid, contour lines on a 2D grid.  Points where a model's result
    carries validity warnings get open markers; the threshold marked is
    the configured model's."""
    if len(cmp.axes) == 2:
        return _compare_map(cmp, path)
    base = cmp.base.result
    ax_ = cmp.axes[0]
    x, xlabel, factor, x_cs = _coords(base, ax_)
    fig = _figure((6.8, 5.8))
    ax = fig.add_subplot()
    ys = [v.result.column(v.main) for v in cmp.variants]
    unit = base.unit(cmp.base.main)
    every = max(1, x.size // 12)
    order = np.argsort(x)
    lines, flagged = [], []
    for k, (v, y) in enumerate(zip(cmp.variants, ys)):
        q = QUANTITY_LABELS.get(v.main, v.main).split(" $")[0]
        name = "configured" if k == 0 else v.label
        flags, _ = validity_flags(v.result.warnings)
        flagged.append((v.label if k else "configured", flags))
        lines.append(_curve(ax, x, y, order, flags, k, every, f"{name}: {q}"))
    bottom = None
    if _spans_decades(*ys):
        ax.set_yscale("log")
        bottom = _log_limits(ax, ys)
    for line, y in zip(lines, ys):
        note = hidden_text(y, ax.get_yscale() == "log", bottom)
        if note:
            line.set_label(f"{line.get_label()}: {note}")
    if ax_.log:
        ax.set_xscale("log")
    _compare_strips(ax, cmp, x)
    _speed_lines(ax, base, ax_, x_cs, factor, whose=" (configured model)")
    ax.set_xlabel(xlabel)
    ax.set_ylabel(f"rate [{pretty_unit(unit)}]" if unit == "1/s" else
                  "probability or phonon number" if unit == "1" else f"[{pretty_unit(unit)}]")
    ax.grid(True, which="major", color="0.85", linewidth=0.6)
    _nice_log_ticks(ax)
    handles, labels = ax.get_legend_handles_labels()
    keep = [(h_, l_) for h_, l_ in zip(handles, labels) if not l_.endswith(
        (": diverges", ": no result"))]
    marked = [(name, int(f.sum())) for name, f in flagged if f.any()]
    if marked:
        keep.append((_warning_handle(None), textwrap.fill(
            "open markers: validity warning (" + ", ".join(
                f"{name} at {n} of {x.size} points" for name, n in marked) + ")", 60)))
    _legend(fig, [h_ for h_, _ in keep], [l_ for _, l_ in keep],
            title=f"configured: {cmp.base.label}")
    set_title(fig, _title(base.meta, "model comparison", [a.key for a in cmp.axes]))
    if path is not None:
        save(fig, path)
    return fig


def _compare_strips(ax, cmp, x):
    """A hatched strip for each model over the points where it has no
    result (or diverges)."""
    h = 0
    for k, v in enumerate(cmp.variants):
        st = np.array(v.status())
        bad = st != "ok"
        word = "diverges" if (st == "diverges").any() else "no result"
        if _no_result_strip(ax, x, bad, f"{v.label}: {word}", HATCHES[h % len(HATCHES)],
                            h, colour=COLOURS[k % len(COLOURS)]):
            h += 1


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
        flags, _ = validity_flags(v.result.warnings)
        handles.append(Line2D([], [], color=st["color"], linestyle=st["linestyle"],
                              label=f"{'configured' if k == 0 else v.label}: "
                                    f"{QUANTITY_LABELS.get(v.main, v.main).split(' $')[0]}"
                                    + (f" (validity warning at {int(flags.sum())} of "
                                       f"{flags.size} points)" if flags.any() else "")))
    if a0.log:
        ax.set_xscale("log")
    if a1.log:
        ax.set_yscale("log")
    _nice_log_ticks(ax)
    ax.set_xlabel(xlabel)
    ax.set_ylabel(ylabel)
    _legend(fig, handles, [h.get_label() for h in handles],
            title=f"contours [{pretty_unit(base.unit(cmp.base.main))}]; "
                  f"configured: {cmp.base.label}")
    set_title(fig, _title(base.meta, "model comparison", [a.key for a in cmp.axes]))
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
    fig = _figure((6.4, 4.9))
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
    _nice_log_ticks(ax)
    ax.legend(loc="lower right", fontsize=8, framealpha=0.95)
    meta = getattr(table, "meta", None) or {}
    set_title(fig, _title(meta, "threshold of straight motion", ["probe.gap"]) if meta
              else [f"threshold of straight motion, {table.dispersion} dispersion"])
    if path is not None:
        save(fig, path)
    return fig


__all__ = ["plot_sweep", "plot_lines", "plot_map", "plot_comparison",
           "plot_threshold", "scenario_caption", "scenario_edits", "validity_flags",
           "save", "check_plot_path", "SUFFIXES"]
