"""Finite transits in scenario files: spline paths, switching, accuracy.

A scenario is a *transit* when its coupling is switched on and off in time:
a ``kind = "spline"`` path (timed waypoints), or a linear or circular path
with a ``switching`` function.  ``probe transit`` computes its first-order
probabilities (:func:`probe.transit.transit_probabilities`).  Keys, all in
``[trajectory]`` except the last::

    kind = "spline"
    # waypoints inline, each column a list of strings with units ...
    waypoints = { t = ["0 ms", "1 ms", "2 ms", "3 ms"],
                  x = ["0 um", "2 um", "6 um", "8 um"],
                  y = ["0 um", "1 um", "1 um", "0 um"] }
    # ... or plain numbers with one unit per column
    # waypoints = { units = { t = "ms", x = "um", y = "um" },
    #               t = [0, 1, 2, 3], x = [0, 2, 6, 8], y = [0, 1, 1, 0] }
    # ... or a CSV file (header 't [ms], x [um], y [um]'), relative to the
    # folder of the scenario file
    # file = "path.csv"
    order = 3                    # spline order 1..5 (default 3, cubic)
    max_speed = "2 c_s"          # optional: warn where the spline is faster

    switching = "path"           # "path" (default for a spline), "gaussian", "window"
    ramp = "0.5 ms"              # path/window: smooth ramp at both ends (default 5 %)
    # gaussian: switching_width = "2 ms" (tau), switching_centre = "0 ms"
    #           (default: middle of a spline's span, t = 0 for linear/circular)
    # window:   start = "0 ms", stop = "10 ms", ramp = "1 ms"

    [numerics]
    transit_rtol = 1e-4          # transit accuracy (rates keep rtol = 1e-8)
    transit_method = "auto"      # amplitudes: "auto", "phasor" (direct sums), "fft",
                                 # "lag" (linear and circular paths, no direction spectrum)

Times are on the path's own clock: the waypoint times, or ``t`` in
``x(t) = start + v t`` for a linear path.  Columns are ``t`` and ``x``,
``x, y`` or ``x, y, z``; in a 2D gas a ``z`` column (in 1D ``y`` and ``z``)
must be zero.  For a linear path with ``switching = "window"``, ``start`` is
the window's start time; the linear path then starts at the origin (in a
uniform gas its start point changes nothing).

Waypoint times and the switching lie within +-1e6 xi/c_s of t = 0,
waypoints within 1e12 xi of the origin, and the speed and acceleration along
a spline are at most 1e6 c_s and 1e12 c_s^2/xi (``MAX_*`` below).

Everything here is reached from :func:`probe.config.scenario_from_dict`;
every bad value raises :class:`probe.errors.InputError` naming its key.
"""
from __future__ import annotations

import math
import os
import types
from functools import lru_cache

import numpy as np

from probe.engines.stationary import MAX_SPEED_OVER_C
from probe.errors import InputError

#: Keys added to ``probe.config.SCHEMA`` (example values for messages).
SCHEMA_KEYS = {
    "trajectory": {
        "waypoints": '{ t = ["0 ms", "1 ms", "2 ms", "3 ms"], x = ["0 um", "2 um", '
                     '"6 um", "8 um"] }',
        "file": '"path.csv"',
        "order": "3",
        "max_speed": '"2 c_s"',
        "switching": '"gaussian"',
        "switching_width": '"2 ms"',
        "switching_centre": '"0 ms"',
        "stop": '"10 ms"',
        "ramp": '"1 ms"',
    },
    "numerics": {
        "transit_rtol": "1e-4",
        "transit_method": '"auto"',
    },
}

SPLINE_KINDS = ("spline",)
SWITCHING_NAMES = ("gaussian", "window", "path")
DEFAULT_TRANSIT_RTOL = 1e-4
#: chi above this counts as "coupling on" for the reported transit duration
ON_LEVEL = 1e-3

# The range of a transit handled, in the units of the gas (healing length
# xi, sound speed c_s, time xi/c_s).  Waypoint times and the switching lie
# within +-MAX_TIME_OVER_TU xi/c_s of t = 0: the engine's time grid has at
# least a few nodes per xi/c_s, so a transit of 1e6 xi/c_s already needs
# millions of them.  Waypoints lie within MAX_DISTANCE_OVER_XI xi of the
# origin along each axis (the distance covered at the largest speed in the
# longest time).  Along a spline the speed is at most the engine's
# MAX_SPEED_OVER_C c_s (as for a linear path) and the acceleration at most
# MAX_ACCELERATION c_s^2/xi: at both bounds the Doppler shift k v and the
# chirp sqrt(k a) of a phonon with k ~ 1/xi are ~1e6 c_s/xi.  These checks
# also keep every number of the transit far inside double precision.
MAX_TIME_OVER_TU = 1e6
MAX_DISTANCE_OVER_XI = MAX_SPEED_OVER_C * MAX_TIME_OVER_TU
MAX_ACCELERATION = MAX_SPEED_OVER_C ** 2

_COLUMNS = ("t", "x", "y", "z")
_SPLINE_KEYS = {"kind", "waypoints", "file", "order", "max_speed"}
_SPLINE_ONLY = {"waypoints", "file", "order", "max_speed"}
_SWITCH_KEYS = {"switching", "switching_width", "switching_centre", "stop", "ramp"}
_USES = {  # switching -> keys it reads
    "gaussian": {"switching_width", "switching_centre"},
    "window": {"start", "stop", "ramp"},
    "path": {"ramp"},
}


def _cfg():
    from probe.scenarios import config as config
    return config


# ---------------------------------------------------------------------------
# small readers
# ---------------------------------------------------------------------------
def _time(value, key):
    from probe.scenarios.units import parse_quantity
    return parse_quantity(value, key, "time")


def _fmt_time(t, like=None):
    """A time in s as a short string in s, ms, us or ns, the unit chosen by
    the size of ``like`` (default ``t``; 0 s is written in ms)."""
    a = abs(t if like is None else like) or 1e-3
    for unit, scale in (("s", 1.0), ("ms", 1e-3), ("us", 1e-6), ("ns", 1e-9)):
        if a >= scale or unit == "ns":
            return f"{t / scale:.6g} {unit}"
    return f"{t:g} s"  # pragma: no cover


def _kind(body):
    cfg = _cfg()
    kinds = cfg.TRAJECTORY_KINDS + tuple(k for k in SPLINE_KINDS
                                         if k not in cfg.TRAJECTORY_KINDS)
    kind = cfg._require(body, "trajectory", "kind")
    return cfg._choice(body, "trajectory", "kind", kinds, kind)


def _scenario_dir(source):
    if source:
        return os.path.dirname(os.path.abspath(os.fspath(source)))
    return os.getcwd()


def _trajectory_error(exc, file=None):
    """An InputError with a ``trajectory.`` key from a TrajectoryError."""
    key = exc.key
    if file is not None and (key.startswith("waypoints") or key == "t"):
        col = key.split(".", 1)[1] if "." in key else ""
        where = f", column {col}" if col in _COLUMNS else ""
        return InputError("trajectory.file", f"{file}{where}: {exc.message}")
    if not key.startswith("trajectory."):
        key = f"trajectory.{key}"
    return InputError(key, exc.message)


# ---------------------------------------------------------------------------
# waypoints
# ---------------------------------------------------------------------------
def _column_values(values, key, kind, unit, unit_key):
    """SI floats of one waypoint column."""
    from probe.scenarios.units import parse_quantity

    example = '["0 ms", "1 ms"]' if kind == "time" else '["0 um", "5 um"]'
    if not isinstance(values, list) or not values:
        raise InputError(key, f"must be a non-empty list such as {example}, "
                              f"got {values!r}")
    if unit is None:
        return np.array([parse_quantity(v, f"{key}[{i}]", kind)
                         for i, v in enumerate(values)], float)
    if not isinstance(unit, str) or not unit.strip():
        raise InputError(unit_key, f"must be a unit such as "
                                   f"{'ms' if kind == 'time' else 'um'!r}, got {unit!r}")
    scale = parse_quantity(f"1 {unit}", unit_key, kind)
    out = np.empty(len(values))
    for i, v in enumerate(values):
        if isinstance(v, bool) or not isinstance(v, (int, float)):
            raise InputError(f"{key}[{i}]", f"with {unit_key} = {unit!r} every entry "
                                            f"must be a plain number, got {v!r}")
        if not math.isfinite(v):
            raise InputError(f"{key}[{i}]", f"{v!r} is not finite")
        si = v * scale
        if not math.isfinite(si):
            raise InputError(f"{key}[{i}]", f"{v!r} {unit} is beyond double precision in "
                                            f"SI units ({'s' if kind == 'time' else 'm'})")
        out[i] = si
    return out


def _inline_waypoints(wp, d):
    """(times, positions (N, ncol)) from the ``waypoints`` inline table."""
    cfg = _cfg()
    key = "trajectory.waypoints"
    if not isinstance(wp, dict):
        raise InputError(key, "must be an inline table of columns, e.g. waypoints = "
                              + SCHEMA_KEYS["trajectory"]["waypoints"])
    allowed = _COLUMNS + ("units",)
    for name in wp:
        if name not in allowed:
            raise InputError(f"{key}.{name}", f"unknown column; {cfg._suggest(name, allowed)}"
                                              f"allowed: {', '.join(allowed)}")
    units = wp.get("units", {})
    if not isinstance(units, dict):
        raise InputError(f"{key}.units", f"must be a table of units per column, e.g. "
                                         f"units = {{ t = \"ms\", x = \"um\" }}, got {units!r}")
    for name in units:
        if name not in _COLUMNS or name not in wp:
            raise InputError(f"{key}.units.{name}",
                             f"no column {name!r} to apply it to; columns given: "
                             f"{', '.join(c for c in _COLUMNS if c in wp) or 'none'}")
    if "t" not in wp:
        raise InputError(f"{key}.t", "missing: the waypoint times, e.g. "
                                     "t = [\"0 ms\", \"1 ms\", \"2 ms\", \"3 ms\"]")
    axes = [a for a in _COLUMNS[1:] if a in wp]
    if axes != list(_COLUMNS[1:1 + len(axes)]) or not axes:
        raise InputError(f"{key}.{'x' if 'x' not in wp else axes[-1]}",
                         "position columns must be x, 'x, y' or 'x, y, z', got "
                         f"{', '.join(axes) or 'none'}")
    t = _column_values(wp["t"], f"{key}.t", "time", units.get("t"), f"{key}.units.t")
    cols = []
    for a in axes:
        x = _column_values(wp[a], f"{key}.{a}", "length", units.get(a), f"{key}.units.{a}")
        if x.size != t.size:
            raise InputError(f"{key}.{a}", f"has {x.size} entries but t has {t.size}; "
                                           "every column needs one entry per waypoint")
        cols.append(x)
    # compared, not subtracted: a difference of two finite times can overflow
    bad = np.flatnonzero(t[1:] <= t[:-1])
    if bad.size:
        i = int(bad[0]) + 1
        raise InputError(f"{key}.t", f"times must be strictly increasing; t[{i}] = "
                                     f"{wp['t'][i]!r} is not after t[{i - 1}] = "
                                     f"{wp['t'][i - 1]!r}")
    return t, np.stack(cols, axis=1)


def _fit_to_gas(pos, d, key, what):
    """Drop columns beyond the gas dimension after checking they are zero."""
    if pos.shape[1] <= d:
        return pos
    extra = pos[:, d:]
    if np.any(extra != 0):
        i, j = (int(k) for k in np.argwhere(extra != 0)[0])
        axis = _COLUMNS[1 + d + j]
        plane = "x axis" if d == 1 else "x-y plane"
        raise InputError(key if what else f"{key}.{axis}",
                         f"the gas is {d}D (it extends along the {plane} only) but "
                         f"{what or ''}{axis}[{i}] = {pos[i, d + j]:.6g} m leaves it; "
                         f"the {axis} column must be zero or absent")
    return pos[:, :d]


def _scales(condensate):
    """(xi, c_s, xi/c_s) of the gas, SI."""
    xi, c = condensate.healing_length, condensate.sound_speed
    return xi, c, xi / c


def _check_waypoint_range(times, pos, condensate, where):
    """InputError unless the waypoints lie within the range handled (module
    constants).  ``where(column, i)`` gives ``(key, prefix)`` naming waypoint
    ``i`` (``column`` None: the step from waypoint i - 1 to i)."""
    xi, c, tu = _scales(condensate)
    t_lim = MAX_TIME_OVER_TU * tu
    out = np.flatnonzero(~(np.abs(times) <= t_lim))
    if out.size:
        i = int(out[0])
        key, pre = where("t", i)
        raise InputError(key, f"{pre}t = {times[i]:.6g} s is outside the times handled: "
                              f"waypoint times must lie within +-{MAX_TIME_OVER_TU:g} "
                              f"xi/c_s = +-{t_lim:.4g} s of t = 0 (xi/c_s = "
                              f"{_fmt_time(tu)} in this gas)")
    x_lim = MAX_DISTANCE_OVER_XI * xi
    out = np.argwhere(~(np.abs(pos) <= x_lim))
    if out.size:
        i, j = (int(k) for k in out[0])
        axis = _COLUMNS[1 + j]
        key, pre = where(axis, i)
        raise InputError(key, f"{pre}{axis} = {pos[i, j]:.6g} m is outside the positions "
                              f"handled: waypoints must lie within {MAX_DISTANCE_OVER_XI:g} "
                              f"xi = {x_lim:.4g} m of the origin along each axis (healing "
                              f"length xi = {xi:.4g} m in this gas)")
    # mean speed between neighbouring waypoints, in gas units (the ranges
    # above keep every difference and square finite)
    T, X = times / tu, pos / xi
    dT = T[1:] - T[:-1]
    dX = np.sqrt(((X[1:] - X[:-1]) ** 2).sum(axis=1))
    fast = np.flatnonzero(dX > MAX_SPEED_OVER_C * dT)
    if fast.size:
        i = int(fast[0]) + 1
        v = float(dX[i - 1]) / float(dT[i - 1]) if dT[i - 1] > 0 else math.inf
        key, pre = where(None, i)
        raise InputError(key, f"{pre}from t = {_fmt_time(times[i - 1])} to "
                              f"{_fmt_time(times[i])} the probe moves {dX[i - 1] * xi:.4g} m, "
                              f"a mean speed of {v:.4g} c_s, above the largest speed handled, "
                              f"{MAX_SPEED_OVER_C:g} c_s (c_s = {c:.4g} m/s in this gas)")


def _check_spline_motion(spline, condensate, key, pre):
    """InputError unless the speed and acceleration along the spline (which
    can overshoot between waypoints) stay within the range handled."""
    xi, c, _ = _scales(condensate)
    t0, t1 = spline.time_span
    t = np.union1d(np.linspace(t0, t1, 8193), spline.times)
    speeds = spline.speed(t)
    i = int(np.argmax(speeds))
    vmax = max(float(speeds[i]), float(spline.max_speed()))
    what = (f"{pre}the order-{spline.order} spline through the waypoints (it can "
            f"overshoot between them)")
    if vmax > MAX_SPEED_OVER_C * c:
        raise InputError(key, f"{what} reaches {vmax / c:.4g} c_s near t = "
                              f"{_fmt_time(t[i])}, above the largest speed handled, "
                              f"{MAX_SPEED_OVER_C:g} c_s (c_s = {c:.4g} m/s in this gas)")
    acc = np.linalg.norm(spline.acceleration(t), axis=-1)
    i = int(np.argmax(acc))
    a_unit = c * c / xi
    if acc[i] > MAX_ACCELERATION * a_unit:
        raise InputError(key, f"{what} accelerates at {acc[i] / a_unit:.4g} c_s^2/xi "
                              f"({acc[i]:.4g} m/s^2) near t = {_fmt_time(t[i])}, above the "
                              f"largest acceleration handled, {MAX_ACCELERATION:g} "
                              f"c_s^2/xi ({MAX_ACCELERATION * a_unit:.4g} m/s^2 in this "
                              f"gas); space the waypoint times further apart")


def _check_switching_range(key, value, support, condensate, stationary):
    """InputError unless ``support`` (s; the times where chi > 1e-16, or a
    window's start or stop time) lies within +-MAX_TIME_OVER_TU xi/c_s of
    t = 0."""
    _, _, tu = _scales(condensate)
    lim = MAX_TIME_OVER_TU * tu
    a, b = support
    if -lim <= a and b <= lim:
        return
    where = (f"is at t = {a:.4g} s" if a == b else
             f"switches the coupling on from t = {a:.4g} s to {b:.4g} s")
    hint = ("; for a switching much slower than xi/c_s the probability approaches the "
            "stationary rate times int chi^2 dt ('probe rates')" if stationary else "")
    raise InputError(key, f"{value!r} {where}, outside the times handled: the switching "
                          f"must lie within +-{MAX_TIME_OVER_TU:g} xi/c_s = +-{lim:.4g} s "
                          f"of t = 0 (xi/c_s = {_fmt_time(tu)} in this gas){hint}")


def _build_spline(body, condensate, source):
    from trajectories import Spline, TrajectoryError, read_waypoints_csv

    from probe.scenarios.units import parse_quantity

    s = "trajectory"
    d = condensate.dimension
    cfg = _cfg()
    cfg._not_applicable(body, s, set(body) - _SPLINE_KEYS - _SWITCH_KEYS - {"start"},
                        "by a spline trajectory (keys: "
                        + ", ".join(sorted(_SPLINE_KEYS | _SWITCH_KEYS | {"start"})) + ")")
    if ("waypoints" in body) == ("file" in body):
        raise InputError(f"{s}.waypoints",
                         "give exactly one of waypoints (an inline table of columns, "
                         "e.g. waypoints = " + SCHEMA_KEYS[s]["waypoints"] + ") and "
                         "file (a CSV file such as \"path.csv\" with header "
                         "'t [ms], x [um], y [um]')")
    order = body.get("order", 3)
    max_speed = None
    if "max_speed" in body:
        max_speed = parse_quantity(body["max_speed"], f"{s}.max_speed", "speed",
                                   sound_speed=condensate.sound_speed)
        if not max_speed > 0:
            raise InputError(f"{s}.max_speed", f"must be > 0, got {body['max_speed']!r}")
    info = {"order": order}
    if "file" in body:
        name = body["file"]
        if not isinstance(name, str) or not name.strip():
            raise InputError(f"{s}.file", f"must be a file name such as \"path.csv\", "
                                          f"got {name!r}")
        path = name if os.path.isabs(name) else os.path.join(_scenario_dir(source), name)
        try:
            table = read_waypoints_csv(path)
        except TrajectoryError as exc:
            raise _trajectory_error(exc, file=name) from None
        times = table.times
        pos = _fit_to_gas(table.positions, d, f"{s}.file", f"{name}: ")
        info.update(file=name, resolved_file=os.path.abspath(path))

        def where(col, i):
            if col is None:
                return f"{s}.file", f"{name}: lines {table.lines[i - 1]} to {table.lines[i]}: "
            return f"{s}.file", f"{name}, column {col}: line {table.lines[i]}: "
        motion_key, motion_pre = f"{s}.file", f"{name}: "
    else:
        times, pos = _inline_waypoints(body["waypoints"], d)
        pos = _fit_to_gas(pos, d, f"{s}.waypoints", None)

        def where(col, i):
            if col is None:
                return f"{s}.waypoints", f"waypoints {i - 1} to {i}: "
            return f"{s}.waypoints.{col}[{i}]", ""
        motion_key, motion_pre = f"{s}.waypoints", ""
    _check_waypoint_range(times, pos, condensate, where)
    try:
        spline = Spline(times, pos, order=order, max_speed=max_speed)
    except TrajectoryError as exc:
        raise _trajectory_error(exc, file=info.get("file")) from None
    _check_spline_motion(spline, condensate, motion_key, motion_pre)
    info["waypoints"] = int(times.size)
    spline.config_info = info
    return spline


# ---------------------------------------------------------------------------
# switching
# ---------------------------------------------------------------------------
def _project(trajectory, d):
    """The first ``d`` components of a trajectory whose other components are
    zero (a linear or circular path of a 2D or 1D gas is written in 3D)."""
    from trajectories.base import Trajectory

    if trajectory.ndim <= d:
        return trajectory

    class Projected(Trajectory):
        stationary = trajectory.stationary
        stationary_kind = trajectory.stationary_kind
        ndim = d

        def _position(self, t):
            return trajectory._position(t)[:, :d]

        def _velocity(self, t):
            return trajectory._velocity(t)[:, :d]

        def _acceleration(self, t):
            return trajectory._acceleration(t)[:, :d]

        @property
        def time_span(self):
            return trajectory.time_span

        def stationary_parameters(self):
            return trajectory.stationary_parameters()

        def separation(self, lag):
            return trajectory.separation(lag)

        def __repr__(self):
            return f"{trajectory!r}[first {d} components]"

    p = Projected()
    p.warnings = list(getattr(trajectory, "warnings", []) or [])
    return p


def _build_switching(body, trajectory, kind, condensate):
    from probe.detectors.switching import Gaussian, PathSpan, Window

    cfg = _cfg()
    s = "trajectory"
    spline = kind in SPLINE_KINDS
    given = set(body) & (_SWITCH_KEYS | ({"start"} if spline else set()))
    if "switching" not in body and not spline:
        if given:
            k = sorted(given)[0]
            users = [n for n, keys in _USES.items() if k in keys]
            raise InputError(f"{s}.{k}", f"used only with switching = "
                                         f"{' or '.join(repr(u) for u in users)}; add "
                                         f"e.g. switching = \"{users[0]}\"")
        return None
    name = cfg._choice(body, s, "switching", SWITCHING_NAMES,
                       "path" if spline else body.get("switching"))
    unused = given - _USES[name] - {"switching"}
    if kind == "linear" and name != "window":
        unused.discard("start")    # the linear path's start point
    for k in sorted(unused):
        raise InputError(f"{s}.{k}", f"not used with switching = {name!r} (it reads "
                                     f"{', '.join(sorted(_USES[name]))})")
    if name == "gaussian":
        width = _time(cfg._require(body, s, "switching_width"), f"{s}.switching_width")
        if not width > 0:
            raise InputError(f"{s}.switching_width",
                             f"must be > 0, got {body['switching_width']!r}")
        if "switching_centre" in body:
            centre = _time(body["switching_centre"], f"{s}.switching_centre")
        elif trajectory.time_span is not None:
            centre = 0.5 * sum(trajectory.time_span)
        else:
            centre = 0.0
        gauss = Gaussian(width, centre)
        lim = MAX_TIME_OVER_TU * _scales(condensate)[2]
        k = "switching_centre" if abs(centre) > lim else "switching_width"
        _check_switching_range(f"{s}.{k}", body.get(k, centre), gauss.support, condensate,
                               trajectory.stationary)
        return gauss
    if name == "path":
        if trajectory.time_span is None:
            raise InputError(f"{s}.switching",
                             f"'path' switches on over the path's own time span, but a "
                             f"{kind} path has none; use \"gaussian\" (with "
                             f"switching_width) or \"window\" (with start, stop, ramp)")
        ramp = None
        if "ramp" in body:
            ramp = _time(body["ramp"], f"{s}.ramp")
            t0, t1 = trajectory.time_span
            _check_ramp(ramp, t1 - t0, body["ramp"], "the path's span")
        return PathSpan(trajectory, ramp)
    start = cfg._require(body, s, "start")
    if isinstance(start, (list, tuple)):
        raise InputError(f"{s}.start", "with switching = \"window\", start is the window's "
                                       "start time (e.g. \"0 ms\"), not a point; a linear "
                                       "path then starts at the origin (in a uniform gas "
                                       "its start point changes nothing)")
    a = _time(start, f"{s}.start")
    b = _time(cfg._require(body, s, "stop"), f"{s}.stop")
    for k, v in (("start", a), ("stop", b)):
        _check_switching_range(f"{s}.{k}", body[k], (v, v), condensate,
                               trajectory.stationary)
    if not b > a:
        raise InputError(f"{s}.stop", f"must be after start = {start!r}, got "
                                      f"{body['stop']!r}")
    if "ramp" in body:
        ramp = _time(body["ramp"], f"{s}.ramp")
        _check_ramp(ramp, b - a, body["ramp"], "the window")
    else:
        ramp = 0.05 * (b - a)
    return Window(a, b, ramp)


def _check_ramp(ramp, span, text, what):
    if ramp < 0:
        raise InputError("trajectory.ramp", f"must be >= 0, got {text!r}")
    if 2 * ramp > span * (1 + 1e-12):
        raise InputError("trajectory.ramp",
                         f"two ramps of {text!r} do not fit in {what} of "
                         f"{_fmt_time(span)} (need 2 ramp <= duration)")


# ---------------------------------------------------------------------------
# entry points used by probe.config
# ---------------------------------------------------------------------------
def build_path(body, condensate, source=None):
    """``(trajectory, switching)`` from the ``[trajectory]`` table.

    ``switching`` is ``None`` for a stationary scenario (linear or circular
    without ``switching``).  ``source`` (the scenario file) fixes the folder
    that a relative ``file`` is read from (default: the working directory).
    """
    cfg = _cfg()
    kind = _kind(body)
    if kind in SPLINE_KINDS:
        trajectory = _build_spline(body, condensate, source)
    else:
        for k in sorted(set(body) & _SPLINE_ONLY):
            raise InputError(f"trajectory.{k}", f"used only by kind = \"spline\" "
                                                f"(this path is {kind!r})")
        if kind == "circular" and condensate.dimension == 1:
            raise InputError("trajectory.kind", "a circular path needs a 2D or 3D gas; "
                                                "this gas is 1D")
        plain = {k: v for k, v in body.items() if k not in _SWITCH_KEYS}
        if body.get("switching") == "window":
            plain.pop("start", None)         # the window's start time
        trajectory = cfg.build_trajectory(plain, condensate)
    switching = _build_switching(body, trajectory, kind, condensate)
    return trajectory, switching


def transit_rtol(raw, trajectory=None):
    """``numerics.transit_rtol`` (default 1e-4), in [1e-10, 0.1]."""
    body = raw.get("numerics", {})
    key = "numerics.transit_rtol"
    if trajectory is not None and not getattr(trajectory, "stationary", False) \
            and "rtol" in body:
        raise InputError("numerics.rtol", "not used by a spline path (it has no "
                                          "stationary rate); the accuracy of a transit "
                                          "is numerics.transit_rtol (default 1e-4)")
    value = body.get("transit_rtol", DEFAULT_TRANSIT_RTOL)
    if isinstance(value, bool) or not isinstance(value, (int, float, str)):
        raise InputError(key, f"must be a number such as 1e-4, got {value!r}")
    from probe.scenarios.units import parse_quantity
    rtol = parse_quantity(value, key, "dimensionless")
    if not 1e-10 <= rtol <= 0.1:
        raise InputError(key, f"must be between 1e-10 and 0.1 (e.g. 1e-4), got {rtol!r}")
    return rtol


TRANSIT_METHODS = ("auto", "phasor", "fft", "lag")


def transit_method(raw):
    """``numerics.transit_method`` (default "auto"): the amplitude route of
    the transit engine (:func:`probe.transit.transit_probabilities`)."""
    key = "numerics.transit_method"
    value = raw.get("numerics", {}).get("transit_method", "auto")
    if not isinstance(value, str) or value.strip().lower() not in TRANSIT_METHODS:
        raise InputError(key, f"must be one of {', '.join(repr(m) for m in TRANSIT_METHODS)} "
                              f"(\"auto\" picks the cheaper), got {value!r}")
    return value.strip().lower()


def rates_notes(scenario):
    """Notes for ``probe rates`` on a transit scenario; raises for a path
    that has no stationary rate."""
    kind = scenario.raw["trajectory"].get("kind")
    if not getattr(scenario.trajectory, "stationary", False):
        raise InputError("trajectory.kind",
                         f"a {kind!r} path is a finite transit: it has transition "
                         f"probabilities, not stationary rates; run "
                         f"'probe transit {scenario.source or 'CONFIG'}'")
    if scenario.switching is None:
        return []
    return [f"switching = {scenario.raw['trajectory']['switching']!r} is ignored here: "
            f"these are the stationary rates of the unending {kind} path; "
            f"'probe transit' gives the probabilities of the switched transit"]


# ---------------------------------------------------------------------------
# running and describing a transit
# ---------------------------------------------------------------------------
def check_transit(scenario):
    """Raise InputError unless the scenario is a finite transit."""
    if scenario.switching is None:
        kind = scenario.raw["trajectory"].get("kind")
        raise InputError("trajectory.switching",
                         f"missing: a {kind} path without switching is stationary; add "
                         f"e.g. switching = \"gaussian\" and switching_width = \"2 ms\" "
                         f"for a finite transit, or run 'probe rates' for its rates")


def run_transit(scenario, spectrum=False, workers=None):
    """The :class:`probe.transit.TransitResult` of a transit scenario, with
    the regime-of-validity warnings of the gas and the path."""
    from probe.engines.regime import regime_warnings
    from probe.engines.transit import transit_probabilities

    check_transit(scenario)
    cond = scenario.condensate
    path = _project(scenario.trajectory, cond.dimension)
    res = transit_probabilities(cond, scenario.probe, path, scenario.switching,
                                rtol=scenario.transit_rtol, spectrum=spectrum,
                                workers=workers,
                                method=getattr(scenario, "transit_method", "auto"))
    stand_in = types.SimpleNamespace(speed=path_summary(scenario)["max_speed"],
                                     gap=None, up_rate=None, down_rate=None)
    for w in _span_warnings(scenario) + regime_warnings(cond, scenario.probe, stand_in):
        if w not in res.warnings:
            res.warnings.append(w)
    return res


def _span_warnings(scenario):
    span = scenario.trajectory.time_span
    if span is None:
        return []
    t0, t1 = switching_interval(scenario.switching)
    out = []
    if t0 < span[0] - 1e-9 * (span[1] - span[0]):
        out.append(f"switching: the coupling is on from t = {_fmt_time(t0)}, before the "
                   f"path starts at {_fmt_time(span[0])}; the probe is held at rest at "
                   "the first waypoint until then")
    if t1 > span[1] + 1e-9 * (span[1] - span[0]):
        out.append(f"switching: the coupling stays on until t = {_fmt_time(t1)}, after "
                   f"the path ends at {_fmt_time(span[1])}; the probe is held at rest at "
                   "the last waypoint from then")
    return out


def switching_interval(switching):
    """``(t0, t1)``: where chi exceeds ON_LEVEL."""
    a, b = switching.extent(ON_LEVEL)
    return float(a), float(b)


def chi2_integral(switching):
    """``int chi(t)^2 dt`` (s): the effective duration, P ~ Gamma times it
    for slow switching of a stationary path."""
    from scipy.integrate import trapezoid

    from probe.detectors.switching import Gaussian, Window

    if isinstance(switching, Gaussian):
        return math.sqrt(math.pi) * switching.width
    if isinstance(switching, Window):
        r = switching.ramp
        full = switching.stop - switching.start
        if r == 0:
            return full
        return full - 2 * r * (1 - _psi2())
    # any other smooth switching function: a fine trapezoid sum
    t0, t1 = switching.support
    t = np.linspace(t0, t1, 200001)
    return float(trapezoid(np.asarray(switching(t)) ** 2, t))


@lru_cache(maxsize=1)
def _psi2():
    """int_0^1 psi(x)^2 dx for the smooth step psi of the window ramps."""
    from scipy.integrate import quad

    from probe.detectors.switching import smooth_step
    return quad(lambda x: float(smooth_step(x)) ** 2, 0, 1, epsabs=1e-14, epsrel=1e-13)[0]


def path_summary(scenario):
    """Kinematics of the path over the switching interval (SI)."""
    from scipy.integrate import trapezoid

    traj = scenario.trajectory
    out = {"kind": scenario.raw["trajectory"]["kind"]}
    if traj.stationary:
        p = {k: float(v) for k, v in traj.stationary_parameters().items()}
        out.update(p)
        out["max_speed"] = p["speed"]
        return out
    info = dict(getattr(traj, "config_info", {}))
    t0, t1 = traj.time_span
    t = np.linspace(t0, t1, 8193)
    v = traj.speed(t)
    acc = np.linalg.norm(traj.acceleration(t), axis=-1)
    pos = traj.position(t)
    out.update(info)
    out.update({
        "time_span": [t0, t1],
        "duration": t1 - t0,
        "path_length": float(trapezoid(v, t)),
        "max_speed": float(traj.max_speed()),
        "max_acceleration": float(acc.max()),
        "start_point": pos[0].tolist(),
        "end_point": pos[-1].tolist(),
    })
    return out


def switching_summary(switching, raw_trajectory):
    """The switching function's parameters and durations (SI)."""
    from probe.detectors.switching import Gaussian, PathSpan

    name = raw_trajectory.get("switching", "path")
    out = {"kind": name}
    if isinstance(switching, Gaussian):
        out.update(width=switching.width, centre=switching.centre)
    else:
        out.update(start=switching.start, stop=switching.stop, ramp=switching.ramp)
        if isinstance(switching, PathSpan):
            out["kind"] = "path"
    t0, t1 = switching_interval(switching)
    out.update(on_interval=[t0, t1], transit_duration=t1 - t0,
               effective_duration=chi2_integral(switching),
               on_level=ON_LEVEL)
    return out


def describe(scenario):
    """Inputs and derived quantities of a transit scenario (JSON safe)."""
    info = scenario.describe()
    info["trajectory"] = path_summary(scenario)
    info["switching"] = switching_summary(scenario.switching, scenario.raw["trajectory"])
    info["numerics"] = {"transit_rtol": scenario.transit_rtol,
                        "transit_method": getattr(scenario, "transit_method", "auto")}
    return info
