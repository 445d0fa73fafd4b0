"""Parameter sweeps: rates on 1D and 2D grids over numeric configuration keys.

Python use::

    from probe.design.sweep import sweep
    res = sweep("examples/ring2d_circular.toml",
                vary=[("trajectory.speed", "0.2 c_s", "2 c_s", 40),
                      ("trajectory.radius", "2 um", "50 um", 30)],
                log=("trajectory.radius",))
    res.columns            # ['point', 'trajectory.speed', 'trajectory.radius', ...]
    res.units              # ['1', 'm/s', 'm', ...]   (SI, pint-readable)
    res.data               # float array (points, columns), SI units
    res.grid("up_rate")    # the up rate (1/s) reshaped to (40, 30)

Grid.  Each ``vary`` entry is ``(KEY, START, STOP, NUM)`` (or the string
``"KEY=START:STOP:NUM"``); START and STOP are strings with units as in a
scenario file, and speeds may be written in units of the gas's sound speed
(``"0.5 c_s"``, resolved at every point with that point's sound speed).  A
key in ``log`` is spaced geometrically.  Points are numbered in C order: the
first key varies slowest.

Evaluation.  Points that share the values of every key other than
``trajectory.speed``, ``trajectory.radius`` and ``probe.gap`` share one
scenario; the engine is called once per chunk of such points with arrays of
speeds, radii and gaps.  A point at which the model has no answer (the engine
raises ``ModelError``, e.g. the divergent supersonic rate of a point probe
with the phonon dispersion) gets NaN values and the reason in its
``warnings`` entry; the other points are unaffected.  Chunks run in this
process, in ``workers`` local processes, or on a Dask cluster
(``scheduler``); the numbers are the same in all three cases.

Files.  With ``out`` the rows go to ``OUT.partial`` as chunks finish
(flushed), next to a plan file ``OUT.partial.json`` that identifies the
sweep; ``resume=True`` keeps the rows already there and computes only the
missing points.  On completion the rows are put in point order, the CSV
appears at ``OUT`` in one rename, and a JSON sidecar (``OUT`` with suffix
``.json``) records the configuration, the grid, the columns with units and
the versions of the tool and its libraries.

Finite transits.  When the scenario is a switched transit
(``Scenario.is_transit``) every point is one transit and the columns are
probabilities (``up_probability``, ``down_probability`` or
``emitted_phonons``) instead of rates; evaluators are chosen by
:func:`evaluator_for`.
"""
from __future__ import annotations

import copy
import csv
import difflib
import functools
import hashlib
import io
import json
import math
import os
import platform
import re
import threading
import time
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from probe.errors import InputError, ModelError

# ---------------------------------------------------------------------------
# Keys and units
# ---------------------------------------------------------------------------
#: numeric configuration keys that a grid may vary, and the kind of quantity
#: (as understood by :func:`probe.units.parse_quantity`)
NUMERIC_KEYS = {
    "condensate.density": "density",
    "condensate.scattering_length": "length",
    "condensate.transverse_frequency": "frequency",
    "condensate.temperature": "temperature",
    "condensate.mass": "mass",
    "condensate.size": "length",
    "probe.gap": "frequency",
    "probe.coupling_length": "length",
    "probe.coupling": "coupling",
    "probe.mass": "mass",
    "probe.width": "length",
    "trajectory.speed": "speed",
    "trajectory.radius": "length",
    "trajectory.angular_frequency": "angular_frequency",
    "numerics.rtol": "dimensionless",
    # finite transits (keys known once scenario files describe switching)
    "trajectory.switching_width": "time",
    "trajectory.switching_centre": "time",
    "trajectory.ramp": "time",
    "trajectory.stop": "time",
    "trajectory.max_speed": "speed",
    "numerics.transit_rtol": "dimensionless",
}

#: keys whose values the engine takes as arrays (name of the engine argument)
VECTOR_KEYS = {"trajectory.speed": "speed", "trajectory.radius": "radius",
               "probe.gap": "gap"}

_SI = {"length": "m", "speed": "m/s", "mass": "kg", "temperature": "K",
       "time": "s", "frequency": "rad/s", "angular_frequency": "rad/s",
       "dimensionless": "1"}

#: at most this many points in one grid
MAX_POINTS = 10_000_000
#: default points per task: the circular engine costs ~1 ms a point, the
#: inertial one ~5 us (vectorised)
CHUNK_CIRCULAR = 32
CHUNK_INERTIAL = 512

#: columns written as integers
_INT_COLUMNS = {"point", "harmonics"}
_WARN_SEP = " | "


def si_unit(kind, dimension=3):
    """The SI unit (a pint-readable string) in which values of ``kind`` are
    stored in sweep results."""
    if kind == "density":
        return f"m^-{dimension}"
    if kind == "coupling":
        return "J m" if dimension == 1 else f"J m^{dimension}"
    return _SI[kind]


def _suggest(word, choices):
    close = difflib.get_close_matches(word, list(choices), n=1, cutoff=0.5)
    return f"did you mean '{close[0]}'? " if close else ""


def check_numeric_key(key, option="--vary"):
    """``key`` if it is a numeric configuration key, else InputError."""
    from probe.scenarios.config import SCHEMA

    if not isinstance(key, str) or key.count(".") != 1 or not all(key.split(".")):
        raise InputError(option, f"key {key!r} must be SECTION.KEY, e.g. "
                                 "'trajectory.speed'")
    section, name = key.split(".")
    if section not in SCHEMA:
        raise InputError(key, f"unknown section; {_suggest(section, SCHEMA)}"
                              f"allowed: {', '.join(SCHEMA)}")
    if name not in SCHEMA[section]:
        raise InputError(key, f"unknown key; {_suggest(name, SCHEMA[section])}"
                              f"allowed: {', '.join(SCHEMA[section])}")
    if key not in NUMERIC_KEYS:
        raise InputError(key, "is not a numeric key and cannot be varied; "
                              f"numeric keys: {', '.join(NUMERIC_KEYS)}")
    return key


def _is_relative_speed(text):
    """True if a speed string is written in units of the sound speed."""
    from probe.scenarios.units import ureg

    if not isinstance(text, str):
        return False
    try:
        q = ureg.parse_expression(text)
    except Exception:  # parse errors are reported by parse_quantity
        return False
    return hasattr(q, "dimensionality") and q.dimensionality == ureg.c_s.dimensionality


def value_text(key, value, relative=False, dimension=3):
    """The configuration entry (a string with units, or a number for
    dimensionless keys) for the SI ``value`` of ``key`` (or a multiple of the
    sound speed when ``relative``).  Written with ``repr`` so that reading it
    back gives the same float."""
    kind = NUMERIC_KEYS[key]
    value = float(value)
    if relative:
        return f"{value!r} c_s"
    if kind == "dimensionless":
        return value
    return f"{value!r} {si_unit(kind, dimension)}"


def assign(raw, values, dimension=None):
    """A copy of the configuration dict ``raw`` with numeric entries set.

    ``values`` maps keys to configuration values: strings with units
    (``"2 um"``) or SI floats (written with the key's SI unit).  This is the
    sweep's own numeric override; :func:`probe.config.override` handles text.
    """
    out = copy.deepcopy(raw)
    d = dimension or (raw.get("condensate", {}).get("dimension", 3))
    for key, value in values.items():
        section, name = key.split(".")
        body = out.setdefault(section, {})
        if not isinstance(body, dict):
            raise InputError(section, f"must be a table [{section}], got {body!r}")
        if isinstance(value, (float, int, np.floating, np.integer)) and not isinstance(value, bool):
            value = value_text(key, value, dimension=d)
        body[name] = value
    return out


# ---------------------------------------------------------------------------
# Grid axes
# ---------------------------------------------------------------------------
@dataclass
class Axis:
    """One varied key.

    ``values`` are in ``unit``: the key's SI unit, or ``"c_s"`` (multiples of
    each point's sound speed) for a speed given in c_s.  ``start``/``stop``
    keep the text given by the user.
    """

    key: str
    values: np.ndarray
    unit: str
    log: bool
    kind: str
    start: str
    stop: str

    @property
    def relative(self):
        return self.unit == "c_s"

    @property
    def size(self):
        return int(self.values.size)

    def text(self, i):
        """The configuration entry for grid value ``i`` (exact: ``repr``)."""
        v = float(self.values[i])
        if self.kind == "dimensionless":
            return v
        return f"{v!r} {self.unit}"

    def to_dict(self):
        return {"key": self.key, "start": self.start, "stop": self.stop,
                "num": self.size, "log": self.log, "unit": self.unit,
                "values": [float(v) for v in self.values]}


def parse_vary(text):
    """``"KEY=START:STOP:NUM"`` -> ``(key, start, stop, num)``."""
    example = "e.g. 'trajectory.speed=0.5c_s:3c_s:101'"
    if not isinstance(text, str) or "=" not in text:
        raise InputError("--vary", f"expected KEY=START:STOP:NUM, {example}; "
                                   f"got {text!r}")
    key, spec = text.split("=", 1)
    parts = spec.split(":")
    if len(parts) != 3:
        raise InputError("--vary", f"{text!r}: expected KEY=START:STOP:NUM "
                                   f"(three fields after '='), {example}")
    start, stop, num = (p.strip() for p in parts)
    return key.strip(), start, stop, num


def _num(key, num):
    """NUM of a --vary entry: a whole number >= 1."""
    if isinstance(num, (int, np.integer)) and not isinstance(num, bool):
        n = int(num)
    elif isinstance(num, str) and re.fullmatch(r"\s*\+?\d+\s*", num):
        n = int(num)
    else:
        raise InputError("--vary", f"{key}: NUM must be a whole number of "
                                   f"points, got {num!r}")
    if n < 1:
        raise InputError("--vary", f"{key}: NUM must be at least 1, got {n}")
    return n


def make_axis(key, start, stop, num, log, scenario):
    """An :class:`Axis` for ``key`` from START/STOP strings, checked against
    the base scenario (for the gas dimension and sound speed)."""
    from probe.scenarios.units import parse_quantity

    kind = NUMERIC_KEYS[key]
    n = _num(key, num)
    cond = scenario.condensate
    d, c = cond.dimension, cond.sound_speed
    rel = [kind == "speed" and _is_relative_speed(t) for t in (start, stop)]
    ends = [parse_quantity(t, key, kind, dimension=d, sound_speed=c)
            for t in (start, stop)]
    if rel[0] != rel[1]:
        zero = [e == 0 for e in ends]
        if not (zero[0] or zero[1]):
            raise InputError(key, f"give START and STOP both in c_s or both in "
                                  f"speed units, got {start!r} and {stop!r}")
    relative = rel[0] or rel[1]
    if relative:
        # multiples of c_s, read exactly as written
        ends = [parse_quantity(t, key, kind, sound_speed=1.0) if r else e / c
                for t, r, e in zip((start, stop), rel, ends)]
    lo, hi = ends
    if n == 1 and lo != hi:
        raise InputError("--vary", f"{key}: one point needs START = STOP, got "
                                   f"{start!r} and {stop!r}")
    if log:
        if not (lo > 0 and hi > 0):
            raise InputError(key, f"--log needs START and STOP > 0, got {start!r} "
                                  f"and {stop!r}")
        values = np.geomspace(lo, hi, n)
    else:
        values = np.linspace(lo, hi, n)
    values[0], values[-1] = lo, hi        # exact end points
    unit = "c_s" if relative else si_unit(kind, d)
    return Axis(key, values, unit, bool(log), kind, str(start), str(stop))


def _vary_entries(vary):
    out = []
    for item in vary:
        if isinstance(item, str):
            out.append(parse_vary(item))
        else:
            try:
                key, start, stop, num = item
            except (TypeError, ValueError):
                raise InputError("--vary", f"expected (KEY, START, STOP, NUM), "
                                           f"got {item!r}") from None
            out.append((key, start, stop, num))
    return out


# ---------------------------------------------------------------------------
# Planning
# ---------------------------------------------------------------------------
def _raw_config(config, overrides=(), source=None, removals=()):
    """(raw dict after removals and overrides, source) for a path or a dict
    (whose ``source``, the file it came from, locates relative paths in
    it).  ``removals`` ("section.key", as ``--unset``) are taken out before
    the ``overrides`` ("section.key=value", as ``--set``) are applied."""
    from probe.scenarios.config import apply_edits, read_toml

    if isinstance(config, dict):
        raw = copy.deepcopy(config)
    else:
        raw, source = read_toml(config), os.fspath(config)
    return apply_edits(raw, overrides, removals), source


@dataclass
class Plan:
    """A validated sweep: base configuration, axes, columns, grouping."""

    raw: dict
    source: str | None
    scenario: object
    axes: list
    columns: list
    units: list
    vector: dict           # key -> engine argument, for the axes passed as arrays

    @property
    def shape(self):
        return tuple(a.size for a in self.axes)

    @property
    def size(self):
        return int(np.prod(self.shape)) if self.axes else 1

    def fingerprint(self):
        from probe import __version__
        blob = json.dumps({"config": self.raw, "axes": [a.to_dict() for a in self.axes],
                           "columns": self.columns, "units": self.units,
                           "version": __version__}, sort_keys=True, default=str)
        return hashlib.sha256(blob.encode()).hexdigest()

    def header(self):
        return [f"{c} [{u}]" for c, u in zip(self.columns, self.units)]


def _vector_keys(raw, scenario):
    """Varied keys that may be passed to the engine as arrays here."""
    if not evaluator_for(scenario).vectorised:
        return {}
    keys = ["trajectory.speed"]
    traj = raw.get("trajectory", {})
    if scenario.trajectory.stationary_kind == "circular" and "speed" in traj:
        # with angular_frequency given, the radius also sets the speed
        keys.append("trajectory.radius")
    if scenario.probe.has_gap:
        keys.append("probe.gap")
    return {k: VECTOR_KEYS[k] for k in keys}


def plan_sweep(config, vary, log=(), overrides=(), source=None, removals=()):
    """Check a sweep request and return its :class:`Plan` (nothing is
    computed).  Raises InputError for any bad key, value or combination.
    ``source`` names the file a dict ``config`` came from; ``removals`` and
    ``overrides`` edit it first (as ``--unset`` and ``--set``)."""
    from probe.scenarios.config import scenario_from_dict

    raw, source = _raw_config(config, overrides, source, removals)
    base = scenario_from_dict(raw, source=source)
    entries = _vary_entries(vary)
    if not entries:
        raise InputError("--vary", "give at least one KEY=START:STOP:NUM")
    if len(entries) > 2:
        raise InputError("--vary", f"a grid has one or two keys, got {len(entries)}")
    keys = [check_numeric_key(k) for k, *_ in entries]
    if len(set(keys)) != len(keys):
        raise InputError("--vary", f"{keys[0]} is given twice")
    log = tuple(log)
    for k in log:
        if k not in keys:
            raise InputError("--log", f"{k!r} is not a varied key; varied: "
                                      f"{', '.join(keys)}")
    axes = [make_axis(k, a, b, n, k in log, base) for k, a, b, n in entries]
    total = int(np.prod([a.size for a in axes]))
    if total > MAX_POINTS:
        raise InputError("--vary", f"the grid has {total} points, more than "
                                   f"the limit {MAX_POINTS}")
    # every end of every axis must give a valid scenario
    for ax in axes:
        for i in {0, ax.size - 1}:
            trial = {a.key: a.text(0) for a in axes}
            trial[ax.key] = ax.text(i)
            sc_ = scenario_from_dict(assign(raw, trial), source=source)
            evaluator_for(sc_)
    if len(axes) == 2:
        corner = {a.key: a.text(a.size - 1) for a in axes}
        evaluator_for(scenario_from_dict(assign(raw, corner), source=source))
    cols = [("point", "1")] + [(a.key, si_unit(a.kind, base.condensate.dimension))
                               for a in axes]
    cols += evaluator_for(base).columns(base)
    cols.append(("warnings", "text"))
    vec = {k: v for k, v in _vector_keys(raw, base).items() if k in keys}
    return Plan(raw=raw, source=source, scenario=base, axes=axes,
                columns=[c for c, _ in cols], units=[u for _, u in cols], vector=vec)


# ---------------------------------------------------------------------------
# Evaluators
# ---------------------------------------------------------------------------
class RatesEvaluator:
    """Stationary golden-rule rates (``probe.engine``) for uniform straight
    or circular motion; the engine takes speeds, radii and gaps as arrays."""

    name = "rates"
    vectorised = True

    @staticmethod
    def applies(scenario):
        return (bool(getattr(scenario.trajectory, "stationary", False))
                and not getattr(scenario, "is_transit", False))

    @staticmethod
    def columns(scenario):
        d = scenario.condensate.dimension
        circular = scenario.trajectory.stationary_kind == "circular"
        cols = [("speed", "m/s")]
        if circular:
            cols.append(("radius", "m"))
        if scenario.probe.has_gap:
            cols.append(("gap", "rad/s"))
        cols += [("mach", "1"), ("sound_speed", "m/s"), ("healing_length", "m"),
                 ("density", si_unit("density", d)), ("temperature", "K")]
        if scenario.probe.has_gap:
            cols += [("up_rate", "1/s"), ("up_rate_error", "1/s"),
                     ("down_rate", "1/s"), ("down_rate_error", "1/s"),
                     ("effective_temperature", "K"), ("excited_population", "1")]
            if not circular:
                cols.append(("up_threshold_speed", "m/s"))
        else:
            cols += [("emission_rate", "1/s"), ("emission_rate_error", "1/s"),
                     ("absorption_rate", "1/s"), ("drag_force", "N"), ("power", "W")]
        if circular:
            cols.append(("harmonics", "1"))
        return cols

    @staticmethod
    def _call(scenario, probe, speed, radius, gap):
        from probe.engines.stationary import circular_rates, inertial_rates

        cond = scenario.condensate
        g = gap if probe.has_gap else None
        if scenario.trajectory.stationary_kind == "circular":
            return circular_rates(cond, probe, radius, speed, gap=g, rtol=scenario.rtol)
        return inertial_rates(cond, probe, speed, gap=g, rtol=scenario.rtol)

    def evaluate(self, scenario, arrays, n):
        """Rows (n, columns) and per-point warning lists for ``n`` points;
        ``arrays`` maps engine arguments (speed, radius, gap) to SI arrays."""
        from probe.detectors import TwoLevelProbe
        from probe.engines.regime import regime_warnings

        cond, probe = scenario.condensate, scenario.probe
        params = dict(scenario.trajectory.stationary_parameters())
        full = {}
        for name in ("speed", "radius", "gap"):
            if name in arrays:
                full[name] = np.asarray(arrays[name], float)
            elif name == "gap":
                full[name] = np.full(n, float(probe.gap) if probe.has_gap else np.nan)
            else:
                full[name] = np.full(n, float(params.get(name, np.nan)))
        cols = [c for c, _ in self.columns(scenario)]
        at = {c: j for j, c in enumerate(cols)}
        out = np.full((n, len(cols)), np.nan)
        for name in ("speed", "radius", "gap"):
            if name in at:
                out[:, at[name]] = full[name]
        out[:, at["mach"]] = full["speed"] / cond.sound_speed
        out[:, at["sound_speed"]] = cond.sound_speed
        out[:, at["healing_length"]] = cond.healing_length
        out[:, at["density"]] = cond.density
        out[:, at["temperature"]] = cond.temperature
        warns = [[] for _ in range(n)]
        done = []  # (first point, result)
        try:
            done.append((0, self._call(scenario, probe, full["speed"],
                                       full["radius"], full["gap"])))
        except ModelError:
            # find the points without an answer; the others keep theirs
            for i in range(n):
                sl = slice(i, i + 1)
                try:
                    done.append((i, self._call(scenario, probe, full["speed"][sl],
                                               full["radius"][sl], full["gap"][sl])))
                except ModelError as exc:
                    warns[i].append(f"no result: {exc.key}: {exc.message}")
        results = [c for c in cols if c not in
                   ("speed", "radius", "gap", "mach", "sound_speed",
                    "healing_length", "density", "temperature")]
        gap_varies = "gap" in arrays
        for first, res in done:
            count = np.size(res.speed)
            for j in range(count):
                i = first + j
                point = _point_result(res, j)
                for c in results:
                    v = getattr(point, c)
                    out[i, at[c]] = np.nan if v is None else float(v)
                p = probe
                if gap_varies:
                    p = TwoLevelProbe(full["gap"][i], probe.coupling, probe.width)
                for w in regime_warnings(cond, p, point):
                    if w not in warns[i]:
                        warns[i].append(w)
        return out, warns


def _point_result(res, i):
    """The RateResult of point ``i`` of an array result (scalars as in a
    one-point ``probe rates`` call), without warnings."""
    point = copy.copy(res)
    for name, value in vars(res).items():
        if isinstance(value, np.ndarray) and value.ndim == 1:
            v = value[i]
            setattr(point, name, int(v) if np.issubdtype(value.dtype, np.integer)
                    else float(v))
    point.warnings = []
    return point


class TransitEvaluator:
    """First-order probabilities of a finite transit (a scenario whose
    coupling is switched: ``Scenario.is_transit``), one transit per point
    through ``Scenario.transit()`` (:mod:`probe.transit`)."""

    name = "transit"
    vectorised = False

    @staticmethod
    def applies(scenario):
        return bool(getattr(scenario, "is_transit", False)) and hasattr(scenario, "transit")

    @staticmethod
    def columns(scenario):
        d = scenario.condensate.dimension
        cols = [("sound_speed", "m/s"), ("healing_length", "m"),
                ("density", si_unit("density", d)), ("temperature", "K")]
        if scenario.probe.has_gap:
            cols += [("gap", "rad/s"), ("up_probability", "1"),
                     ("up_probability_error", "1"), ("down_probability", "1"),
                     ("down_probability_error", "1"), ("emitted_phonons", "1"),
                     ("emitted_phonons_excited", "1")]
        else:
            cols += [("emitted_phonons", "1"), ("emitted_phonons_error", "1"),
                     ("absorbed_phonons", "1")]
        cols += [("emitted_energy", "J"), ("achieved_rtol", "1")]
        return cols

    def evaluate(self, scenario, arrays, n):
        cond = scenario.condensate
        cols = [c for c, _ in self.columns(scenario)]
        out = np.full((n, len(cols)), np.nan)
        warns = [[] for _ in range(n)]
        for i in range(n):
            row = out[i]
            row[0:4] = (cond.sound_speed, cond.healing_length, cond.density,
                        cond.temperature)
            if "gap" in cols:
                row[cols.index("gap")] = float(scenario.probe.gap)
            try:
                res = scenario.transit()
            except ModelError as exc:
                warns[i].append(f"no result: {exc.key}: {exc.message}")
                continue
            for j, c in enumerate(cols[4:], start=4):
                if c == "gap":
                    continue
                v = getattr(res, c, None)
                row[j] = np.nan if v is None else float(v)
            warns[i] = list(res.warnings or [])
        return out, warns


#: evaluators tried in order: the first whose ``applies(scenario)`` holds
EVALUATORS = [TransitEvaluator(), RatesEvaluator()]


def evaluator_for(scenario):
    """The evaluator that handles ``scenario``, or InputError."""
    for ev in EVALUATORS:
        if ev.applies(scenario):
            return ev
    raise InputError("trajectory.kind",
                     "sweeps compute stationary rates of uniform straight or "
                     "circular motion, or probabilities of a switched transit; "
                     "this trajectory is neither")


# ---------------------------------------------------------------------------
# Tasks (run here, in worker processes or on a Dask cluster)
# ---------------------------------------------------------------------------
_SCENARIO_LOCK = threading.Lock()


@functools.lru_cache(maxsize=64)
def _scenario(raw_json, source, group):
    from probe.scenarios.config import scenario_from_dict

    raw = json.loads(raw_json)
    return scenario_from_dict(assign(raw, dict(group)), source=source)


def _group_scenario(raw_json, source, group):
    # pint's registry is not meant for concurrent use: one build at a time
    with _SCENARIO_LOCK:
        return _scenario(raw_json, source, group)


def run_task(task):
    """Evaluate one task: ``(raw_json, source, pieces)`` with pieces
    ``(group, axes, index)``; ``group`` is a tuple of (key, config value) for
    the axes set through the configuration, ``axes`` a tuple of
    (key, engine argument or None, relative, values) for every axis.
    Returns a list of (index, rows, warnings)."""
    raw_json, source, pieces = task
    out = []
    for group, axes, index in pieces:
        scenario = _group_scenario(raw_json, source, group)
        n = len(index)
        c = scenario.condensate.sound_speed
        arrays, axis_cols = {}, []
        for key, arg, relative, values in axes:
            v = np.asarray(values, float) * (c if relative else 1.0)
            axis_cols.append(v)
            if arg is not None:
                arrays[arg] = v
        rows, warns = evaluator_for(scenario).evaluate(scenario, arrays, n)
        full = np.column_stack([np.asarray(index, float)] + axis_cols + [rows]) \
            if axis_cols else np.column_stack([np.asarray(index, float), rows])
        out.append((np.asarray(index), full, [_WARN_SEP.join(w) for w in warns]))
    return out


def _tasks(plan, indices, chunk):
    """Split the points ``indices`` (sorted flat indices) into tasks."""
    raw_json = json.dumps(plan.raw, sort_keys=True)
    axes = plan.axes
    shape = plan.shape
    sub = np.unravel_index(indices, shape) if axes else ()
    group_axes = [k for k, a in enumerate(axes) if a.key not in plan.vector]
    # group key per point: the indices along the group axes
    if group_axes:
        gkey = np.stack([sub[k] for k in group_axes], axis=1)
        order = np.lexsort(gkey.T[::-1])
    else:
        gkey = np.zeros((len(indices), 0), int)
        order = np.arange(len(indices))
    tasks, current, filled = [], [], 0

    def flush():
        nonlocal current, filled
        if current:
            tasks.append((raw_json, plan.source, tuple(current)))
        current, filled = [], 0

    start = 0
    while start < len(order):
        g = tuple(gkey[order[start]])
        stop = start
        while stop < len(order) and tuple(gkey[order[stop]]) == g:
            stop += 1
        sel = order[start:stop]
        group = tuple((axes[k].key, axes[k].text(i)) for k, i in zip(group_axes, g))
        for s in range(0, sel.size, chunk):
            part = sel[s:s + chunk]
            if filled and filled + part.size > chunk:
                flush()
            ax = tuple((a.key, plan.vector.get(a.key), a.relative,
                        a.values[sub[k][part]]) for k, a in enumerate(axes))
            current.append((group, ax, indices[part]))
            filled += part.size
            if filled >= chunk:
                flush()
        start = stop
    flush()
    return tasks


def _worker_init():
    import signal
    signal.signal(signal.SIGINT, signal.SIG_IGN)


def _pool(workers):
    """Worker processes started from a fork server that has imported the
    engine (cheap to start; forking this process directly would share its
    memory copy-on-write, which measurably slows the workers, and is unsafe
    when it runs other threads); spawned where there is no fork server."""
    import multiprocessing as mp
    from concurrent.futures import ProcessPoolExecutor

    if "forkserver" in mp.get_all_start_methods():
        ctx = mp.get_context("forkserver")
        ctx.set_forkserver_preload(["probe.sweep", "probe.engine", "probe.config"])
    else:
        ctx = mp.get_context("spawn")
    return ProcessPoolExecutor(max_workers=workers, mp_context=ctx,
                               initializer=_worker_init)


def _run_local(tasks, workers, handle):
    if workers <= 1 or len(tasks) < 2:
        for t in tasks:
            handle(run_task(t))
        return
    from concurrent.futures import as_completed

    ex = _pool(workers)
    try:
        futures = [ex.submit(run_task, t) for t in tasks]
        for fut in as_completed(futures):
            handle(fut.result())
    except BaseException:
        ex.shutdown(wait=True, cancel_futures=True)
        raise
    ex.shutdown(wait=True)


def _run_dask(tasks, scheduler, handle):
    try:
        from distributed import Client, as_completed
    except ImportError:
        raise InputError("--scheduler", "needs the optional Dask packages: "
                                        "pip install 'condensate-probe[cluster]'") from None
    own = not isinstance(scheduler, Client)
    if own:
        try:
            client = Client(scheduler, timeout="20s")
        except (OSError, TimeoutError, ValueError) as exc:
            raise InputError("--scheduler", f"cannot connect to {scheduler!r}: "
                                            f"{exc}") from None
    else:
        client = scheduler
    try:
        futures = client.map(run_task, tasks, pure=False)
        try:
            for fut in as_completed(futures):
                handle(fut.result())
        except BaseException:
            client.cancel(futures)
            raise
    finally:
        if own:
            client.close()


# ---------------------------------------------------------------------------
# Results
# ---------------------------------------------------------------------------
@dataclass
class SweepResult:
    """A computed grid.

    ``columns`` and ``units`` name the columns of ``data`` (float array of
    shape (points, columns), SI units as in ``units``; the first column is
    the flat point index, then one column per varied key, then the engine's
    outputs: for a two-level probe ``up_rate``, ``down_rate`` (1/s) with
    errors, ``effective_temperature`` (K), ``excited_population`` (1) and,
    for straight motion, ``up_threshold_speed`` (m/s); for the density
    probe ``emission_rate``, ``absorption_rate`` (1/s), ``drag_force`` (N),
    ``power`` (W); for circular motion ``harmonics``).  ``warnings`` holds
    one string per point (the regime-of-validity sentences joined by
    ``' | '``, or the reason a point has no result).  ``shape`` is the grid
    shape (first key slowest).
    """

    columns: list
    units: list
    data: np.ndarray
    warnings: list
    shape: tuple
    axes: list
    config: dict
    meta: dict = field(default_factory=dict)

    def index(self, name):
        try:
            return self.columns.index(name)
        except ValueError:
            raise KeyError(f"no column {name!r}; columns: {', '.join(self.columns)}") from None

    def column(self, name):
        """One column as a flat array (SI, unit ``self.unit(name)``); the
        ``warnings`` column as an object array of strings."""
        j = self.index(name)
        if name == "warnings":
            return np.array(self.warnings, dtype=object)
        return self.data[:, j]

    def grid(self, name):
        """One column reshaped to the grid ``shape``."""
        return self.column(name).reshape(self.shape)

    def unit(self, name):
        return self.units[self.index(name)]

    @property
    def header(self):
        return [f"{c} [{u}]" for c, u in zip(self.columns, self.units)]

    def to_csv(self, path):
        """Write the table (atomically) to ``path``."""
        write_csv(path, self.header, _rows_text(self.columns, self.data, self.warnings))


def _fmt(x, integer=False):
    x = float(x)
    if math.isnan(x):
        return "nan"
    if math.isinf(x):
        return "inf" if x > 0 else "-inf"
    if integer:
        return str(int(x))
    return repr(x)


def _row_text(columns, row, warning):
    cells = []
    for name, x in zip(columns, row):
        if name == "warnings":
            continue
        cells.append(_fmt(x, integer=name in _INT_COLUMNS and math.isfinite(x)))
    cells.append(warning.replace("\n", " "))
    return cells


def _rows_text(columns, data, warnings):
    return [_row_text(columns, data[i], warnings[i]) for i in range(data.shape[0])]


def _csv_line(cells):
    buf = io.StringIO()
    csv.writer(buf, lineterminator="\n").writerow(cells)
    return buf.getvalue()


def write_csv(path, header, rows):
    """Write a CSV atomically: to a temporary file beside ``path``, then one
    rename."""
    path = Path(path)
    tmp = path.with_name(f".{path.name}.{os.getpid()}.tmp")
    try:
        with open(tmp, "w", newline="") as fh:
            fh.write(_csv_line(header))
            for cells in rows:
                fh.write(_csv_line(cells))
            fh.flush()
            os.fsync(fh.fileno())
        os.replace(tmp, path)
    except OSError as exc:
        tmp.unlink(missing_ok=True)
        raise InputError("--out", f"cannot write {os.fspath(path)!r}: "
                                  f"{exc.strerror or exc}") from None


def write_json(path, obj):
    """Write JSON atomically."""
    path = Path(path)
    tmp = path.with_name(f".{path.name}.{os.getpid()}.tmp")
    try:
        with open(tmp, "w") as fh:
            json.dump(obj, fh, indent=2, sort_keys=False, default=_json_default)
            fh.write("\n")
        os.replace(tmp, path)
    except OSError as exc:
        tmp.unlink(missing_ok=True)
        raise InputError("--out", f"cannot write {os.fspath(path)!r}: "
                                  f"{exc.strerror or exc}") from None


def _json_default(x):
    if isinstance(x, np.ndarray):
        return x.tolist()
    if isinstance(x, (np.floating, np.integer)):
        return x.item()
    return str(x)


def sidecar_path(out):
    """The JSON sidecar of a CSV: same name with suffix ``.json``."""
    out = Path(out)
    return out.with_suffix(".json") if out.suffix.lower() != ".json" else \
        out.with_name(out.name + ".meta.json")


def library_versions(extra=()):
    """Versions of Python and of the libraries that produce the numbers."""
    from importlib.metadata import PackageNotFoundError, version

    out = {"python": platform.python_version()}
    for name in ("condensate-probe", "numpy", "scipy", "pint", "periodictable",
                 "click", "matplotlib", *extra):
        try:
            out[name] = version(name)
        except PackageNotFoundError:
            out[name] = None
    return out


def _jsonable_scenario(scenario):
    from probe.engines.results import _jsonable

    desc = scenario.describe()
    return json.loads(json.dumps(desc, default=lambda x: _jsonable(x)))


# ---------------------------------------------------------------------------
# The partial file
# ---------------------------------------------------------------------------
class _Partial:
    """Rows of an unfinished sweep in ``OUT.partial`` (+ ``.partial.json``)."""

    def __init__(self, out, plan, resume):
        self.out = Path(out)
        self.path = Path(os.fspath(out) + ".partial")
        self.plan_path = Path(os.fspath(out) + ".partial.json")
        self.plan = plan
        self.header_line = _csv_line(plan.header())
        self.fh = None
        self.done = {}
        self.ordered = True
        self.last = -1
        self.count = 0
        parent = self.out.parent
        if not parent.is_dir():
            raise InputError("--out", f"directory {os.fspath(parent) or '.'!r} "
                                      "does not exist")
        if self.out.is_dir():
            raise InputError("--out", f"{os.fspath(self.out)!r} is a directory")
        exists = self.path.exists()
        if exists and not resume:
            raise InputError("--out", f"{os.fspath(self.path)!r} holds an "
                                      "interrupted sweep; continue it with "
                                      "--resume, or delete it to start afresh")
        self.resumed = bool(exists and resume)

    def open(self):
        """Create the partial file, or reopen it to resume."""
        try:
            if self.resumed:
                self._load()
                self.fh = open(self.path, "a", newline="")
            else:
                self.fh = open(self.path, "w", newline="")
                self.fh.write(self.header_line)
                self.fh.flush()
                write_json(self.plan_path, {"fingerprint": self.plan.fingerprint(),
                                            "config": self.plan.raw,
                                            "axes": [a.to_dict() for a in self.plan.axes],
                                            "columns": self.plan.header()})
        except OSError as exc:
            raise InputError("--out", f"cannot write {os.fspath(self.path)!r}: "
                                      f"{exc.strerror or exc}") from None

    def _load(self):
        try:
            with open(self.plan_path) as fh:
                stored = json.load(fh)
        except (OSError, ValueError):
            stored = {}
        if stored.get("fingerprint") != self.plan.fingerprint():
            raise InputError("--resume", f"{os.fspath(self.path)!r} was started "
                                         "by a different sweep (configuration, "
                                         "grid or version differ); delete it to "
                                         "start afresh")
        blob = self.path.read_bytes()
        if not blob.startswith(self.header_line.encode()):
            raise InputError("--resume", f"{os.fspath(self.path)!r} does not start "
                                         "with this sweep's header; delete it")
        pos = len(self.header_line.encode())
        good = pos
        ncols = len(self.plan.columns)
        size = self.plan.size
        while pos < len(blob):
            end = blob.find(b"\n", pos)
            if end < 0:
                break                      # a row cut short by the interrupt
            line = blob[pos:end + 1].decode("utf-8", errors="replace")
            try:
                cells = next(csv.reader([line]))
                if len(cells) != ncols:
                    break
                idx = int(cells[0])
                vals = np.array([float(x) for x in cells[1:-1]])
            except (ValueError, StopIteration):
                break
            if not 0 <= idx < size or idx in self.done:
                break
            self.done[idx] = (np.concatenate([[float(idx)], vals]), cells[-1])
            self.count += 1
            self.ordered = self.ordered and idx > self.last
            self.last = max(self.last, idx)
            pos = good = end + 1
        if good < len(blob):
            with open(self.path, "r+b") as fh:
                fh.truncate(good)

    def write(self, index, rows, warnings):
        cols = self.plan.columns
        for i, row, w in zip(index, rows, warnings):
            i = int(i)
            self.fh.write(_csv_line(_row_text(cols, row, w)))
            self.count += 1
            self.ordered = self.ordered and i > self.last
            self.last = max(self.last, i)
        self.fh.flush()

    def close(self):
        if self.fh is not None and not self.fh.closed:
            self.fh.close()

    def finish(self, data, warnings, meta):
        """Put the complete table in place and remove the partial files."""
        self.close()
        n = data.shape[0]
        if self.ordered and self.count == n and not self.resumed:
            os.replace(self.path, self.out)
        else:
            write_csv(self.out, self.plan.header(),
                      _rows_text(self.plan.columns, data, warnings))
            self.path.unlink(missing_ok=True)
        write_json(sidecar_path(self.out), meta)
        self.plan_path.unlink(missing_ok=True)

    def discard(self):
        self.close()
        self.path.unlink(missing_ok=True)
        self.plan_path.unlink(missing_ok=True)


# ---------------------------------------------------------------------------
# The sweep
# ---------------------------------------------------------------------------
def sweep(config, vary, log=(), overrides=(), out=None, resume=False,
          workers=1, scheduler=None, progress=None, chunk_size=None,
          command=None, source=None, removals=()):
    """Evaluate the rates on a grid.

    Parameters
    ----------
    config : path of a scenario file, or its dict (or a :class:`Plan` from
        :func:`plan_sweep`, in which case ``vary``, ``log``, ``overrides``
        and ``removals`` are taken from it)
    vary : list of ``(KEY, START, STOP, NUM)`` or ``"KEY=START:STOP:NUM"``
        (one or two entries); START/STOP strings with units
    log : keys spaced geometrically
    overrides : ``"section.key=value"`` strings applied first (as ``--set``)
    removals : ``"section.key"`` strings removed before the overrides are
        applied (as ``--unset``)
    out : CSV path; rows are kept in ``out + ".partial"`` until the end
    resume : continue the partial file of an interrupted run of the same sweep
    workers : local processes (1: in this process); a script that uses
        several must start from an ``if __name__ == "__main__":`` block, as
        usual for :mod:`multiprocessing`
    scheduler : address of a Dask scheduler (or a ``distributed.Client``)
    progress : callable receiving the number of points finished by each chunk
    chunk_size : points per task (default by trajectory kind)
    command : the command line, recorded in the sidecar
    source : the file a dict ``config`` came from (locates relative paths)

    Returns a :class:`SweepResult` (SI units).
    """
    plan = config if isinstance(config, Plan) else plan_sweep(config, vary, log, overrides,
                                                              source=source,
                                                              removals=removals)
    workers = 1 if workers is None else int(workers)
    if workers < 1:
        raise InputError("--workers", f"must be at least 1, got {workers}")
    if scheduler is not None and workers > 1:
        raise InputError("--workers", "not used with --scheduler (the cluster "
                                      "brings its own workers)")
    n = plan.size
    ncols = len(plan.columns)
    data = np.full((n, ncols - 1), np.nan)      # without the warnings column
    warns = [""] * n
    done = np.zeros(n, bool)
    partial = _Partial(out, plan, resume) if out is not None else None
    if partial is not None:
        partial.open()
        for idx, (row, w) in partial.done.items():
            data[idx] = row
            warns[idx] = w
            done[idx] = True
    todo = np.nonzero(~done)[0]
    if chunk_size is None:
        if not evaluator_for(plan.scenario).vectorised:
            chunk_size = 1                 # a transit per point: seconds each
        elif plan.scenario.trajectory.stationary_kind == "circular":
            chunk_size = CHUNK_CIRCULAR
        else:
            chunk_size = CHUNK_INERTIAL
        if workers > 1 and todo.size:
            chunk_size = max(1, min(chunk_size, math.ceil(todo.size / (4 * workers))))
    chunk_size = max(1, int(chunk_size))
    tasks = _tasks(plan, todo, chunk_size)
    if progress is not None and done.any():
        progress(int(done.sum()))

    def handle(results):
        count = 0
        for index, rows, wlist in results:
            data[index] = rows
            for i, w in zip(index, wlist):
                warns[int(i)] = w
            done[index] = True
            if partial is not None:
                partial.write(index, rows, wlist)
            count += len(index)
        if progress is not None:
            progress(count)

    t0 = time.perf_counter()
    try:
        if scheduler is not None:
            _run_dask(tasks, scheduler, handle)
        else:
            _run_local(tasks, workers, handle)
    except (KeyboardInterrupt, SystemExit):
        if partial is not None:
            partial.close()
        raise
    except BaseException:
        if partial is not None:
            partial.discard()
        raise
    elapsed = time.perf_counter() - t0
    meta = sweep_meta(plan, workers=workers, scheduler=scheduler, elapsed=elapsed,
                      resumed=int(n - todo.size), command=command)
    if partial is not None:
        partial.finish(data, warns, meta)
    return SweepResult(columns=list(plan.columns), units=list(plan.units),
                       data=data, warnings=warns, shape=plan.shape,
                       axes=plan.axes, config=plan.raw, meta=meta)


def sweep_meta(plan, workers=1, scheduler=None, elapsed=None, resumed=0, command=None):
    """The sidecar record of a sweep."""
    from probe import __version__

    extra = ("dask", "distributed") if scheduler is not None else ()
    return {
        "tool": "condensate-probe",
        "version": __version__,
        "libraries": library_versions(extra),
        "platform": platform.platform(),
        "created": time.strftime("%Y-%m-%dT%H:%M:%S%z"),
        "command": command,
        "source": plan.source,
        "config": plan.raw,
        "scenario": _jsonable_scenario(plan.scenario),
        "grid": {"shape": list(plan.shape), "order": "C (first key slowest)",
                 "axes": [a.to_dict() for a in plan.axes]},
        "columns": [{"name": c, "unit": u} for c, u in zip(plan.columns, plan.units)],
        "evaluation": {"workers": workers,
                       "scheduler": None if scheduler is None else str(
                           getattr(scheduler, "scheduler", scheduler)),
                       "seconds": elapsed, "points_resumed": resumed},
        "fingerprint": plan.fingerprint(),
    }


_HEADER_CELL = re.compile(r"^(.*) \[(.*)\]$")


def read_sweep(path):
    """Load a sweep CSV (and its sidecar, when present) as a SweepResult."""
    path = Path(path)
    try:
        text = path.read_text()
    except OSError as exc:
        raise InputError(os.fspath(path), f"cannot read file: {exc.strerror or exc}") from None
    rows = list(csv.reader(io.StringIO(text)))
    if not rows:
        raise InputError(os.fspath(path), "empty file")
    columns, units = [], []
    for cell in rows[0]:
        m = _HEADER_CELL.match(cell)
        if not m:
            raise InputError(os.fspath(path), f"header cell {cell!r} is not 'name [unit]'")
        columns.append(m.group(1))
        units.append(m.group(2))
    body = rows[1:]
    data = np.array([[float(x) for x in r[:-1]] for r in body], float).reshape(
        len(body), len(columns) - 1)
    warnings = [r[-1] for r in body]
    meta, axes, shape, config = {}, [], (len(body),), {}
    side = sidecar_path(path)
    if side.exists():
        meta = json.loads(side.read_text())
        config = meta.get("config", {})
        shape = tuple(meta["grid"]["shape"])
        for a in meta["grid"]["axes"]:
            axes.append(Axis(a["key"], np.array(a["values"], float), a["unit"], a["log"],
                             NUMERIC_KEYS[a["key"]], a["start"], a["stop"]))
    return SweepResult(columns=columns, units=units, data=data, warnings=warnings,
                       shape=shape, axes=axes, config=config, meta=meta)


# ---------------------------------------------------------------------------
# Single evaluations (used by solve)
# ---------------------------------------------------------------------------
def evaluate_point(config, values, overrides=(), source=None, removals=()):
    """Rates for one point: ``values`` maps numeric keys to configuration
    values (strings with units or SI floats), after ``removals`` and
    ``overrides`` (as ``--unset`` and ``--set``).  Returns ``(columns,
    units, row, warnings)`` like one row of a sweep."""
    from probe.scenarios.config import scenario_from_dict

    raw, source = _raw_config(config, overrides, source, removals)
    for key in values:
        check_numeric_key(key)
    sc_ = scenario_from_dict(assign(raw, values), source=source)
    ev = evaluator_for(sc_)
    cols = ev.columns(sc_)
    rows, warns = ev.evaluate(sc_, {}, 1)
    return [c for c, _ in cols], [u for _, u in cols], rows[0], warns[0]


# ---------------------------------------------------------------------------
# Display units (plots and printed summaries)
# ---------------------------------------------------------------------------
_DISPLAY = {
    "length": ("nm", "um", "mm", "m"),
    "speed": ("um/s", "mm/s", "m/s"),
    "temperature": ("pK", "nK", "uK", "mK", "K"),
    "time": ("us", "ms", "s"),
}

#: quantity kind of the known columns (for display)
COLUMN_KINDS = {
    "speed": "speed", "radius": "length", "gap": "frequency", "mach": "dimensionless",
    "sound_speed": "speed", "healing_length": "length", "temperature": "temperature",
    "density": "density",
    "up_rate": "rate", "up_rate_error": "rate", "down_rate": "rate",
    "down_rate_error": "rate", "effective_temperature": "temperature",
    "excited_population": "dimensionless", "up_threshold_speed": "speed",
    "emission_rate": "rate", "emission_rate_error": "rate", "absorption_rate": "rate",
    "drag_force": "force", "power": "power", "harmonics": "dimensionless",
    "up_probability": "dimensionless", "down_probability": "dimensionless",
    "emitted_phonons": "dimensionless", "emitted_energy": "energy",
}


def column_kind(name):
    """Quantity kind of a column: a configuration key's kind or a known
    result column's."""
    return NUMERIC_KEYS.get(name) or COLUMN_KINDS.get(name, "dimensionless")


def display_unit(kind, si_unit_text, values):
    """``(factor, unit)``: show the SI ``values`` of ``kind`` as
    ``value * factor`` in ``unit`` (ASCII, pint-readable), with a prefix that
    keeps the largest magnitude below 1000.  Frequencies of kind
    ``"frequency"`` (gaps, trap frequencies, stored in rad/s) are shown as
    ordinary frequencies Omega/(2 pi) in Hz, kHz or MHz."""
    from probe.scenarios.units import ureg

    a = np.asarray(values, float)
    a = np.abs(a[np.isfinite(a) & (a != 0)])
    big = float(np.max(a)) if a.size else 1.0
    if kind == "frequency":
        hz = big / (2 * math.pi)
        unit = "MHz" if hz >= 1e6 else "kHz" if hz >= 1e4 else "Hz"
        return float(ureg.Quantity(1 / (2 * math.pi), "Hz").to(unit).magnitude), unit
    if kind in _DISPLAY:
        units = _DISPLAY[kind]
        choice = units[-1]
        for unit in units:
            if big * float(ureg.Quantity(1.0, si_unit_text).to(unit).magnitude) < 1000:
                choice = unit
                break
        return float(ureg.Quantity(1.0, si_unit_text).to(choice).magnitude), choice
    return 1.0, "" if si_unit_text == "1" else si_unit_text


def format_value(kind, si_unit_text, value, digits=4):
    """A value with a readable unit, e.g. ``'2.5 um'``."""
    f, unit = display_unit(kind, si_unit_text, [value])
    return f"{float(value) * f:.{digits}g} {unit}".rstrip()


def axis_value_text(axis, value_si, sound_speed=None):
    """A grid value for messages: in c_s for a relative speed axis."""
    if axis.relative and sound_speed:
        return f"{value_si / sound_speed:.4g} c_s"
    return format_value(axis.kind, si_unit(axis.kind), value_si)


__all__ = ["sweep", "plan_sweep", "SweepResult", "Axis", "read_sweep",
           "parse_vary", "make_axis", "evaluate_point", "NUMERIC_KEYS",
           "VECTOR_KEYS", "EVALUATORS", "evaluator_for", "RatesEvaluator",
           "TransitEvaluator",
           "library_versions", "sidecar_path", "write_csv", "si_unit",
           "display_unit", "format_value", "column_kind", "assign", "value_text"]
