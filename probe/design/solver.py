"""Design targets: the up-transition threshold versus gap, and solving for
the value of a key at which a result reaches a target.

Python use::

    from probe.design.solver import threshold_table, solve
    tab = threshold_table("examples/box3d_supersonic.toml")
    tab.column("up_threshold_speed")      # m/s, one per gap in tab.column("probe.gap")
    sol = solve("examples/box3d_supersonic.toml", "trajectory.speed", "up_rate=50")
    sol.value, sol.unit                   # SI value of trajectory.speed, "m/s"
"""
from __future__ import annotations

import copy
import math
from dataclasses import dataclass, field

import numpy as np

from probe.detectors import PROBE_MODELS
from probe.engines.stationary import engine_for
from probe.engines.stationary.checks import check_gaps
from probe.errors import InputError
from probe.quantities import quantity, target_names
from probe.scenarios.planning import without_planning
from probe.design.gapscan import gap_grid, sweep_over_gaps
from probe.design.sweep import (NUMERIC_KEYS, cell_text, check_numeric_key, column_kind,
                                display_unit, evaluate_point, format_value, plan_sweep,
                                raw_config, si_unit, write_csv)

# ---------------------------------------------------------------------------
# threshold versus gap
# ---------------------------------------------------------------------------
#: default gap grid: this factor either side of the configured gap
GAP_SPAN = 10.0
GAP_POINTS = 41


@dataclass
class ThresholdTable:
    """Up-transition threshold of straight motion versus the gap.

    ``columns``/``units``/``data`` (SI): ``probe.gap`` (rad/s), the ordinary
    frequency ``gap_frequency`` = Omega/(2 pi) (Hz), ``up_threshold_speed``
    (m/s), ``threshold_mach`` (v_th/c_s), ``threshold_wavenumber`` (1/m, the
    wavenumber emitted at threshold; inf for the phonon dispersion),
    ``sound_speed`` (m/s) and ``healing_length`` (m).  ``configured`` holds
    the configured gap (rad/s), its threshold (m/s) and the configured speed
    (m/s) of straight motion (None on a circle).
    """

    columns: list
    units: list
    data: np.ndarray
    configured: dict
    axis: object
    dispersion: str
    temperature: float
    notes: list = field(default_factory=list)
    #: the scenario as computed (``source``, ``scenario``: its description,
    #: ``config``: its TOML tables), for the figure's title
    meta: dict = field(default_factory=dict)

    def column(self, name):
        try:
            return self.data[:, self.columns.index(name)]
        except ValueError:
            raise KeyError(f"no column {name!r}; columns: {', '.join(self.columns)}") from None

    def unit(self, name):
        return self.units[self.columns.index(name)]

    @property
    def sound_speed(self):
        return float(self.column("sound_speed")[0])

    @property
    def healing_length(self):
        return float(self.column("healing_length")[0])

    def to_csv(self, path):
        header = [f"{c} [{u}]" for c, u in zip(self.columns, self.units)]
        rows = [[cell_text(x, integer=(self.columns[j] == "point")) for j, x in enumerate(r)]
                for r in self.data]
        write_csv(path, header, rows)

    def summary(self, rows=True):
        c, xi = self.sound_speed, self.healing_length
        conf = self.configured
        mach = self.column("threshold_mach")
        f = self.column("gap_frequency")
        lines = ["Up-transition threshold of straight motion (spontaneous excitation "
                 "with phonon emission, T = 0)",
                 f"  sound speed c_s = {format_value('speed', 'm/s', c)}, healing length "
                 f"xi = {format_value('length', 'm', xi)}, {self.dispersion} dispersion"]
        vt = conf["threshold_speed"]
        lines.append(f"  configured gap {format_value('frequency', 'rad/s', conf['gap'])}: "
                     f"threshold {format_value('speed', 'm/s', vt)} = {vt / c:.4g} c_s")
        if conf.get("speed") is not None:
            v = conf["speed"]
            side = "above" if v > vt else "below"
            lines.append(f"  configured speed {format_value('speed', 'm/s', v)} = "
                         f"{v / c:.4g} c_s is {side} it"
                         + (" (up transitions at T = 0)" if v > vt else
                            " (no up transitions at T = 0)"))
        lines.append(f"  over gaps {f.min():.4g} .. {f.max():.4g} Hz the threshold runs "
                     f"from {np.nanmin(mach):.4g} to {np.nanmax(mach):.4g} c_s")
        lines += [f"  note: {n}" for n in self.notes]
        if rows:
            k = self.column("threshold_wavenumber") * xi
            speed = self.column("up_threshold_speed")
            fs, us = _speed_display(speed)
            heads = ["gap/2pi [Hz]", f"v_th [{us}]", "v_th/c_s", "k_th xi"]
            body = [[f"{a:.5g}", f"{b * fs:.5g}", f"{m:.5g}", f"{q:.4g}"]
                    for a, b, m, q in zip(f, speed, mach, k)]
            widths = [max(len(h), *(len(r[j]) for r in body)) for j, h in enumerate(heads)]
            lines.append("  " + "  ".join(h.rjust(w) for h, w in zip(heads, widths)))
            lines += ["  " + "  ".join(x.rjust(w) for x, w in zip(r, widths)) for r in body]
        return "\n".join(lines)


def _speed_display(values):
    return display_unit("speed", "m/s", values)


def _threshold_notes(cond, engine):
    """What the threshold table does not say: the phonon dispersion's
    threshold, thermal excitation, and a configured motion without a
    threshold."""
    notes = []
    if cond.dispersion.name == "phonon":
        notes.append("with the phonon dispersion w = c k the threshold is the sound "
                     "speed at every gap")
    if cond.temperature > 0:
        notes.append("at T > 0 thermal phonons also excite the probe below the "
                     "threshold; the threshold is that of spontaneous excitation")
    if engine is not None and not engine.has_threshold:
        notes.append("the configured path is a circle, on which up transitions occur "
                     "at any speed; the table is for straight motion through the same gas")
    return notes


def _gapped_stand_in(raw, base, source):
    """``(raw, scenario, notes)`` of a model whose gap the table can vary: the
    configured one, or the simpler detector it declares with the same gap
    (a dressed detector's two-level equivalent); InputError for a model with
    no gap."""
    from probe.scenarios.config import scenario_from_dict

    if "probe.gap" in base.probe.array_keys:
        return raw, base, []
    for name, label, table in base.probe.reference_detectors(base.condensate.dimension):
        if "probe.gap" in PROBE_MODELS[table["model"]].array_keys:
            r = copy.deepcopy(raw)
            r["probe"] = table
            note = (f"the {base.probe.name} probe's threshold is that of its {label} "
                    "(the threshold depends on the gap alone)")
            return r, scenario_from_dict(r, source=source), [note]
    gapped = [n for n, m in PROBE_MODELS.items() if "probe.gap" in m.array_keys]
    raise InputError("probe.model", f"the {base.probe.name} probe has no gap and no "
                                    f"threshold; use model = \"{gapped[0]}\"")


def threshold_table(config, vary=(), log=(), overrides=(), removals=()):
    """The threshold table for the gaps of ``vary`` (a ``probe.gap`` entry
    as for :func:`probe.sweep.sweep`), by default a decade either side of
    the configured gap (41 points, logarithmic).  ``removals`` and
    ``overrides`` edit the configuration first (as ``--unset``, ``--set``)."""
    from probe.scenarios.config import scenario_from_dict

    raw, source = raw_config(config, overrides, removals=removals)
    base = scenario_from_dict(raw, source=source)
    raw, base, stand_in = _gapped_stand_in(raw, base, source)
    gap = float(base.probe.gap)
    vary = list(vary)
    if not vary:
        vary = [("probe.gap", f"{gap / GAP_SPAN!r} rad/s", f"{gap * GAP_SPAN!r} rad/s",
                 GAP_POINTS)]
        log = ("probe.gap",)
    plan = plan_sweep(raw, vary, log, source=source)
    keys = [a.key for a in plan.axes]
    if keys != ["probe.gap"]:
        raise InputError("--vary", f"threshold tabulates versus probe.gap only, got "
                                   f"{', '.join(keys)}")
    axis = plan.axes[0]
    cond = base.condensate
    c, xi, w0 = cond.sound_speed, cond.healing_length, cond.frequency_unit
    gaps = axis.values
    # the gaps the rates are computed for (a threshold beyond them has no rate)
    check_gaps(cond, "probe.gap", gaps)
    vt, q = cond.dispersion.threshold(gaps / w0)
    vt0, _ = cond.dispersion.threshold(np.array([gap / w0]))
    n = gaps.size
    cols = [("point", "1"), ("probe.gap", "rad/s"), ("gap_frequency", "Hz"),
            ("up_threshold_speed", "m/s"), ("threshold_mach", "1"),
            ("threshold_wavenumber", "1/m"), ("sound_speed", "m/s"),
            ("healing_length", "m")]
    data = np.column_stack([np.arange(n, dtype=float), gaps, gaps / (2 * math.pi),
                            vt * c, vt, q / xi, np.full(n, c), np.full(n, xi)])
    engine = engine_for(base.trajectory) if base.trajectory.stationary else None
    speed = None
    if engine is not None and engine.has_threshold:
        speed = float(base.trajectory.stationary_parameters()["speed"])
    notes = _threshold_notes(cond, engine) + stand_in
    return ThresholdTable(columns=[c_ for c_, _ in cols], units=[u for _, u in cols],
                          data=data,
                          configured={"gap": gap, "threshold_speed": float(vt0[0] * c),
                                      "speed": speed},
                          axis=axis, dispersion=cond.dispersion.name,
                          temperature=cond.temperature, notes=notes,
                          meta={"source": source, "scenario": base.describe(),
                                "config": raw})


# ---------------------------------------------------------------------------
# solve
# ---------------------------------------------------------------------------
#: results that may be targeted (columns of a sweep; ``target`` in the
#: quantity registry)
TARGETS = target_names()
#: the probabilities of finite transits (targets that only transits give)
TRANSIT_TARGETS = tuple(
    n for n in TARGETS if quantity(n).word == "probability"
    and any(n in m.transit_outputs for m in PROBE_MODELS.values())
    and not any(n in m.rate_outputs for m in PROBE_MODELS.values()))

SCAN_POINTS = 101
SPEED_RANGE = ("0 c_s", "5 c_s")
#: default range of other keys: this factor either side of the configured value
VALUE_SPAN = 10.0


@dataclass
class Solution:
    """``key`` = ``value`` (SI, ``unit``) gives ``quantity`` = ``achieved``
    (target ``target``, SI unit ``quantity_unit``).  ``others`` lists the
    other values in the range that reach the target; ``bracket`` the scan
    interval; ``sound_speed`` (m/s) at the solution."""

    key: str
    value: float
    unit: str
    quantity: str
    quantity_unit: str
    target: float
    achieved: float
    others: list
    bracket: tuple
    scan: tuple
    sound_speed: float
    warnings: str = ""

    def _text(self, value):
        kind = column_kind(self.key)
        if kind == "frequency":
            # an ordinary frequency first, the angular one (SI) beside
            return (f"{format_value(kind, self.unit, value, digits=7)}  "
                    f"({value:.10g} {self.unit})")
        extra = format_value(kind, self.unit, value)
        if self.key == "trajectory.speed":
            extra = f"{value / self.sound_speed:.6g} c_s"
        return f"{value:.10g} {self.unit}".rstrip() + f"  ({extra})"

    def summary(self):
        qu = "" if self.quantity_unit == "1" else f" {self.quantity_unit}"
        lines = [f"{self.key} = {self._text(self.value)}",
                 f"  gives {self.quantity} = {self.achieved:.8g}{qu} "
                 f"(target {self.target:.8g}{qu})",
                 f"  searched {self.scan[0]} .. {self.scan[1]} ({self.scan[2]} scan "
                 f"points, then Brent's method)"]
        for v in self.others:
            lines.append(f"  the target is also reached at {self.key} = {self._text(v)}")
        if self.warnings:
            for w in self.warnings.split(" | "):
                lines.append(f"  warning: {w}")
        return "\n".join(lines)


def parse_target(text, columns, units):
    """``"NAME=VALUE [unit]"`` -> (name, SI value) for a result column."""
    from probe.scenarios.units import ureg

    if not isinstance(text, str) or "=" not in text:
        raise InputError("--target", f"expected QUANTITY=VALUE such as 'up_rate=50' "
                                     f"or 'up_rate=50 1/s', got {text!r}")
    name, value = (t.strip() for t in text.split("=", 1))
    if not value:
        raise InputError("--target", f"{name or 'QUANTITY'}= needs a value after '=', such "
                                     f"as '{name or 'up_rate'}=50 1/s'")
    if name in TRANSIT_TARGETS and name not in columns:
        raise InputError("--target", f"{name} is a probability of a finite transit; "
                                     "this scenario is stationary motion, whose "
                                     "result is a rate (e.g. up_rate)")
    allowed = [t for t in TARGETS if t in columns]
    if name not in allowed:
        raise InputError("--target", f"{name!r} is not a result of this scenario; "
                                     f"allowed: {', '.join(allowed)}")
    unit = units[columns.index(name)]
    try:
        q = ureg.parse_expression(value)
    except Exception as exc:
        raise InputError("--target", f"cannot read {value!r} as a value ({exc})") from None
    si_name = unit if unit != "1" else "dimensionless"
    if not hasattr(q, "to"):                       # a bare number: the SI unit
        q = ureg.Quantity(float(q), si_name)
    elif q.unitless:
        q = ureg.Quantity(float(q.magnitude), si_name)
    try:
        si = float(q.to(si_name).magnitude)
    except Exception:
        raise InputError("--target", f"{value!r} has units of {q.units:~} but "
                                     f"{name} is in {unit}") from None
    if not math.isfinite(si):
        raise InputError("--target", f"{value!r} is not finite")
    return name, si


def _configured_value(raw, key, scenario):
    from probe.scenarios.units import parse_quantity

    section, name = key.split(".")
    body = raw.get(section, {})
    if name not in body:
        return None
    cond = scenario.condensate
    try:
        return parse_quantity(body[name], key, NUMERIC_KEYS[key],
                              dimension=cond.dimension, sound_speed=cond.sound_speed)
    except InputError:
        return None


def _search_range(raw, key, bounds, base):
    """(lo, hi): the ends of the search for ``key``, strings with units:
    ``bounds`` "LO:HI", 0 .. 5 c_s for the speed, or a decade either side
    of the configured value."""
    if bounds is not None:
        parts = bounds.split(":") if isinstance(bounds, str) else list(bounds)
        if len(parts) != 2 or not all(str(p).strip() for p in parts):
            raise InputError("--range", f"expected LO:HI with units, e.g. "
                                        f"'0.5c_s:3c_s', got {bounds!r}")
        lo, hi = (str(p).strip() for p in parts)
        return lo, hi
    if key == "trajectory.speed":
        return SPEED_RANGE
    v0 = _configured_value(raw, key, base)
    if v0 is None or not v0 > 0:
        raise InputError("--range", f"give --range LO:HI for {key} (the "
                                    "configuration has no positive value of it "
                                    "to search around)")
    unit = si_unit(NUMERIC_KEYS[key], base.condensate.dimension)
    return f"{v0 / VALUE_SPAN!r} {unit}", f"{v0 * VALUE_SPAN!r} {unit}"


def _brackets(f):
    """[(kind, i)]: grid points where ``f`` vanishes ("exact") and intervals
    [i, i + 1] across which it changes sign ("bracket")."""
    finite = np.isfinite(f)
    roots = []
    for i in range(len(f)):
        if finite[i] and f[i] == 0:
            roots.append(("exact", i))
        elif i + 1 < len(f) and finite[i] and finite[i + 1] and f[i] * f[i + 1] < 0:
            roots.append(("bracket", i))
    return roots


class _Search:
    """The scan of ``key`` over [lo, hi] (``span``: the same in SI or c_s,
    a < b) and the refinement of the sign changes of ``quantity - goal``."""

    def __init__(self, raw, source, key, ends, span, target, scan_points, axis,
                 progress=None):
        self.raw, self.source, self.key = raw, source, key
        self.progress = progress
        self.lo, self.hi = ends
        self.axis = axis
        a, b = span
        use_log = a > 0 and b / a >= 100
        plan = plan_sweep(raw, [(key, self.lo, self.hi, int(scan_points))],
                          log=(key,) if use_log else (), source=source)
        # a transit over its probe's gap: every point from shared lag sums
        self.gaps = gap_grid(plan)
        self.scan = sweep_over_gaps(plan, progress=progress, grid=self.gaps)
        self.qname, self.goal = parse_target(target, self.scan.columns, self.scan.units)
        self.qunit = self.scan.unit(self.qname)
        self.x = self.scan.axes[0].values
        self.f = self.scan.column(self.qname) - self.goal

    def text(self, v):
        """The configuration entry of the grid value ``v``."""
        ax = self.axis
        return float(v) if ax.kind == "dimensionless" else f"{float(v)!r} {ax.unit}"

    def point(self, v):
        """(columns, row, warnings) at the value ``v`` of the key: one step
        of the progress (from the scan's lag sums for a transit over its
        probe's gap)."""
        if self.gaps is not None:
            rows, warns = self.gaps.rows([v])
            cols, row, warns = self.gaps.columns, rows[0], warns[0]
        else:
            cols, _, row, warns = evaluate_point(self.raw, {self.key: self.text(v)},
                                                 source=self.source)
        if self.progress is not None:
            self.progress(1)
        return cols, row, warns

    def miss(self, v):
        """``quantity - goal`` at the value ``v`` of the key."""
        cols, row, _ = self.point(v)
        val = row[cols.index(self.qname)]
        if not math.isfinite(val):
            raise InputError(self.key, f"{self.qname} has no finite value at {self.text(v)}")
        return val - self.goal

    def not_reached(self, a, b):
        """The InputError when no value in [a, b] reaches the goal."""
        qname, goal, qunit, key = self.qname, self.goal, self.qunit, self.key
        vals = self.scan.column(qname)[np.isfinite(self.f)]
        if vals.size == 0:
            return InputError("--target", f"{qname} has no finite value for {key} in "
                                          f"[{self.lo}, {self.hi}]")
        return InputError("--target", f"no {key} in [{_shown(self.axis, a)}, "
                                      f"{_shown(self.axis, b)}] gives {qname} = "
                                      f"{goal:.6g} {qunit}: there {qname} runs from "
                                      f"{vals.min():.6g} to {vals.max():.6g} {qunit}"
                                      + _missed_hint(key))

    def refine(self, roots):
        """The values of the key that reach the goal: exact grid points and
        Brent's method on the brackets (brackets across a jump are dropped;
        a single one is an error)."""
        from scipy.optimize import brentq

        x, f, goal, qunit = self.x, self.f, self.goal, self.qunit
        values = []
        for kind, i in roots:
            if kind == "exact":
                values.append(float(x[i]))
                continue
            x0, x1 = float(x[i]), float(x[i + 1])
            r = brentq(self.miss, x0, x1, xtol=1e-13 * max(abs(x0), abs(x1)), rtol=1e-12,
                       maxiter=200)
            if abs(self.miss(r)) <= 1e-6 * max(abs(goal), 1e-300):
                values.append(float(r))
            elif len(roots) == 1:
                raise InputError("--target", f"{self.qname} jumps across {goal:.6g} "
                                             f"{qunit} near {self.key} = {self.text(r)} "
                                             f"(from {f[i] + goal:.6g} to "
                                             f"{f[i + 1] + goal:.6g} {qunit}); no value "
                                             f"in [{self.lo}, {self.hi}] gives the target "
                                             "exactly")
        if not values:
            raise InputError("--target", f"{self.qname} only jumps across {goal:.6g} "
                                         f"{qunit} in [{self.lo}, {self.hi}]; no value "
                                         "gives it exactly")
        return values


def solve(config, key, target, bounds=None, overrides=(), scan_points=SCAN_POINTS,
          removals=(), progress=None):
    """The value of ``key`` (within ``bounds`` ``"LO:HI"`` with units) at
    which ``target`` (``"up_rate=50"``, ``"up_rate=50 1/s"``) is reached.

    The range is scanned on a grid (vectorised where the engine allows; a
    transit over its probe's gap from one set of lag sums,
    :mod:`probe.design.gapscan`, which also serve the refinement); the
    first sign change of ``result - target`` is refined with
    :func:`scipy.optimize.brentq`.  Raises InputError when no value in the
    range reaches the target.  ``removals`` and ``overrides`` edit the
    configuration first (as ``--unset`` and ``--set``).  ``progress`` is
    called with the number of evaluations just finished (scan points, then
    each step of the refinement); its ``grow(n)``, when it has one, is told
    of the expected number of evaluations."""
    from probe.scenarios.config import scenario_from_dict

    raw, source = raw_config(config, overrides, removals=removals)
    raw = without_planning(raw)          # the nominal scenario: no bands to search
    base = scenario_from_dict(raw, source=source)
    key = check_numeric_key(key, "--for")
    lo, hi = _search_range(raw, key, bounds, base)
    ax = plan_sweep(raw, [(key, lo, hi, 2)], (), source=source).axes[0]
    a, b = float(ax.values[0]), float(ax.values[-1])
    if a == b:
        raise InputError("--range", f"LO and HI must differ, got {bounds!r}")
    if a > b:
        lo, hi, a, b = hi, lo, b, a
    grow = getattr(progress, "grow", None)
    if grow is not None:                  # the scan, Brent on one bracket (about 12
        grow(int(scan_points) + 13)       # steps) and the final evaluation
    search = _Search(raw, source, key, (lo, hi), (a, b), target, scan_points, ax,
                     progress)
    roots = _brackets(search.f)
    if not roots:
        raise search.not_reached(a, b)
    brackets = sum(kind == "bracket" for kind, _ in roots)
    if grow is not None and brackets > 1:
        grow(12 * (brackets - 1))
    values = search.refine(roots)
    cols, row, warns = search.point(values[0])
    c = float(row[cols.index("sound_speed")])
    scale = c if ax.relative else 1.0
    return Solution(key=key, value=values[0] * scale,
                    unit=si_unit(ax.kind, base.condensate.dimension),
                    quantity=search.qname, quantity_unit=search.qunit, target=search.goal,
                    achieved=float(row[cols.index(search.qname)]),
                    others=[v * scale for v in values[1:]], bracket=(a, b),
                    scan=(_shown(ax, a), _shown(ax, b), int(scan_points)),
                    sound_speed=c, warnings=" | ".join(warns))


def _shown(ax, v):
    return f"{v:.4g} c_s" if ax.relative else format_value(ax.kind, ax.unit, v)


def _missed_hint(key):
    if key == "trajectory.speed":
        return "; widen the search with --range LO:HI (e.g. 0c_s:8c_s)"
    return "; widen the search with --range LO:HI"


__all__ = ["threshold_table", "ThresholdTable", "solve", "Solution",
           "parse_target", "TARGETS"]
