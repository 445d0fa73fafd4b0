"""Spline paths: ``kind = "spline"``, a path through timed waypoints given
inline (``waypoints``) or in a CSV file (``file``), with the spline ``order``
and an optional ``max_speed`` to warn about.

Columns are ``t`` and ``x``, ``x, y`` or ``x, y, z``; in a 2D gas a ``z``
column (in 1D ``y`` and ``z``) must be zero.  Waypoint times lie within
+-1e6 xi/c_s of t = 0 and waypoints within 1e12 xi of the origin; the speed
and acceleration along the spline are at most 1e6 c_s and 1e12 c_s^2/xi
(``probe.scenarios.limits``).  A spline path is a finite transit: it always
has a switching (``probe.scenarios.switching``, "path" by default).
"""
from __future__ import annotations

import math
import os

import numpy as np
from trajectories import TrajectoryError

from probe.errors import InputError
from probe.scenarios.keys import Key, suggest, unset_hint
from probe.scenarios.limits import (MAX_ACCELERATION, MAX_DISTANCE_OVER_XI, MAX_SPEED_OVER_C,
                                    MAX_TIME_OVER_TU, fmt_time, scales)
from probe.scenarios.units import parse_quantity
from probe.scenarios.values import quantity

_S = "trajectory"

WAYPOINTS = Key(_S, "waypoints", '{ t = ["0 ms", "1 ms", "2 ms", "3 ms"], x = ["0 um", "2 um", '
                '"6 um", "8 um"] }', "the waypoints inline: columns t and x (y, z), each a "
                "list of strings with units, or plain numbers with units = { t = \"ms\", "
                "x = \"um\" }", required="this or file")
FILE = Key(_S, "file", '"path.csv"', "the waypoints in a CSV file with header "
           "'t [ms], x [um], y [um]' (relative to the scenario file's folder)",
           required="this or waypoints")
ORDER = Key(_S, "order", "3", "spline order 1..5", default=3)
MAX_SPEED = Key(_S, "max_speed", '"2 c_s"', "a warning where the spline is faster",
                kind="speed", vary=20)

#: the keys of a spline path
KEYS = (WAYPOINTS, FILE, ORDER, MAX_SPEED)

_COLUMNS = ("t", "x", "y", "z")


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


def _column_values(values, key, kind, unit, unit_key):
    """SI floats of one waypoint column."""
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
    key = WAYPOINTS.dotted
    if not isinstance(wp, dict):
        raise InputError(key, "must be an inline table of columns, e.g. waypoints = "
                              + WAYPOINTS.example)
    allowed = _COLUMNS + ("units",)
    for name in wp:
        if name not in allowed:
            raise InputError(f"{key}.{name}", f"unknown column; {suggest(name, allowed)}"
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

def _check_waypoint_range(times, pos, condensate, where):
    """InputError unless the waypoints lie within the range handled (module
    constants).  ``where(column, i)`` gives ``(key, prefix)`` naming waypoint
    ``i`` (``column`` None: the step from waypoint i - 1 to i)."""
    xi, c, tu = scales(condensate)
    t_lim = MAX_TIME_OVER_TU * tu
    out = np.flatnonzero(~(np.abs(times) <= t_lim))
    if out.size:
        i = int(out[0])
        key, pre = where("t", i)
        raise InputError(key, f"{pre}t = {times[i]:.6g} s is outside the times handled: "
                              f"waypoint times must lie within +-{MAX_TIME_OVER_TU:g} "
                              f"xi/c_s = +-{t_lim:.4g} s of t = 0 (xi/c_s = "
                              f"{fmt_time(tu)} in this gas)")
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
        raise InputError(key, f"{pre}from t = {fmt_time(times[i - 1])} to "
                              f"{fmt_time(times[i])} the probe moves {dX[i - 1] * xi:.4g} m, "
                              f"a mean speed of {v:.4g} c_s, above the largest speed handled, "
                              f"{MAX_SPEED_OVER_C:g} c_s (c_s = {c:.4g} m/s in this gas)")


def speed_notes(spline, max_speed, condensate):
    """The warning, naming ``trajectory.max_speed``, where the spline (which
    can overshoot between waypoints) is faster than ``max_speed`` (m/s;
    None: no limit): its largest speed and when, the times in the unit of
    the path's span."""
    if max_speed is None:
        return []
    c = condensate.sound_speed
    t0, t1 = spline.time_span
    t = np.union1d(np.linspace(t0, t1, 8193), spline.times)
    speeds = spline.speed(t)
    i = int(np.argmax(speeds))
    if not speeds[i] > max_speed:
        return []
    over = np.flatnonzero(speeds > max_speed)
    like = max(abs(t0), abs(t1))
    return [f"{MAX_SPEED.dotted}: the spline's speed reaches {speeds[i]:.4g} m/s "
            f"({speeds[i] / c:.4g} c_s) at t = {fmt_time(t[i], like)}, above "
            f"{MAX_SPEED.dotted} = {max_speed:.4g} m/s ({max_speed / c:.4g} c_s), from "
            f"t = {fmt_time(t[over[0]], like)} to {fmt_time(t[over[-1]], like)}"]


def _check_spline_motion(spline, condensate, key, pre):
    """InputError unless the speed and acceleration along the spline (which
    can overshoot between waypoints) stay within the range handled."""
    xi, c, _ = scales(condensate)
    t0, t1 = spline.time_span
    t = np.union1d(np.linspace(t0, t1, 8193), spline.times)
    speeds = spline.speed(t)
    i = int(np.argmax(speeds))
    vmax = max(float(speeds[i]), float(spline.max_speed()))
    what = (f"{pre}the order-{spline.order} spline through the waypoints (it can "
            f"overshoot between them)")
    if vmax > MAX_SPEED_OVER_C * c:
        raise InputError(key, f"{what} reaches {vmax / c:.4g} c_s near t = "
                              f"{fmt_time(t[i])}, above the largest speed handled, "
                              f"{MAX_SPEED_OVER_C:g} c_s (c_s = {c:.4g} m/s in this gas)")
    acc = np.linalg.norm(spline.acceleration(t), axis=-1)
    i = int(np.argmax(acc))
    a_unit = c * c / xi
    if acc[i] > MAX_ACCELERATION * a_unit:
        raise InputError(key, f"{what} accelerates at {acc[i] / a_unit:.4g} c_s^2/xi "
                              f"({acc[i]:.4g} m/s^2) near t = {fmt_time(t[i])}, above the "
                              f"largest acceleration handled, {MAX_ACCELERATION:g} "
                              f"c_s^2/xi ({MAX_ACCELERATION * a_unit:.4g} m/s^2 in this "
                              f"gas); space the waypoint times further apart")

def build_spline(body, condensate, source=None):
    """The :class:`trajectories.Spline` of a ``kind = "spline"`` table;
    ``source`` (the scenario file) fixes the folder that a relative ``file``
    is read from (default: the working directory)."""
    if (WAYPOINTS.name in body) == (FILE.name in body):
        raise InputError(WAYPOINTS.dotted,
                         "give exactly one of waypoints (an inline table of columns, "
                         "e.g. waypoints = " + WAYPOINTS.example + ") and "
                         "file (a CSV file such as \"path.csv\" with header "
                         "'t [ms], x [um], y [um]')"
                         + (unset_hint(WAYPOINTS, FILE) if FILE.name in body else ""))
    order = body.get(ORDER.name, ORDER.default)
    max_speed = quantity(body, MAX_SPEED, sound_speed=condensate.sound_speed)
    if max_speed is not None and not max_speed > 0:
        raise InputError(MAX_SPEED.dotted, f"must be > 0, got {body['max_speed']!r}")
    info = {"order": order}
    if FILE.name in body:
        times, pos, where, (motion_key, motion_pre) = _file_waypoints(
            body[FILE.name], condensate.dimension, source, info)
    else:
        times, pos = _inline_waypoints(body[WAYPOINTS.name], condensate.dimension)
        pos = _fit_to_gas(pos, condensate.dimension, WAYPOINTS.dotted, None)

        def where(col, i):
            if col is None:
                return WAYPOINTS.dotted, f"waypoints {i - 1} to {i}: "
            return f"{WAYPOINTS.dotted}.{col}[{i}]", ""
        motion_key, motion_pre = WAYPOINTS.dotted, ""
    _check_waypoint_range(times, pos, condensate, where)
    from trajectories import Spline   # here: splines need scipy.interpolate
    try:
        spline = Spline(times, pos, order=order)
    except TrajectoryError as exc:
        raise _trajectory_error(exc, file=info.get("file")) from None
    _check_spline_motion(spline, condensate, motion_key, motion_pre)
    spline.warnings = speed_notes(spline, max_speed, condensate)
    info["waypoints"] = int(times.size)
    spline.config_info = info
    return spline


def _file_waypoints(name, d, source, info):
    """``(times, positions, where, (key, prefix))`` of the waypoints in the
    CSV file ``name`` (relative to the folder of ``source``); the file's
    name and full path go to ``info``.  ``where(column, i)`` names waypoint
    ``i`` (by its line) for the range checks, ``(key, prefix)`` the file for
    the checks along the spline."""
    key = FILE.dotted
    if not isinstance(name, str) or not name.strip():
        raise InputError(key, f"must be a file name such as \"path.csv\", got {name!r}")
    path = name if os.path.isabs(name) else os.path.join(_scenario_dir(source), name)
    from trajectories import read_waypoints_csv

    from probe.scenarios.files import read_text
    try:
        table = read_waypoints_csv(path, text=read_text(path, source, name, key))
    except TrajectoryError as exc:
        raise _trajectory_error(exc, file=name) from None
    pos = _fit_to_gas(table.positions, d, key, f"{name}: ")
    info.update(file=name, resolved_file=os.path.abspath(path))

    def where(col, i):
        if col is None:
            return key, f"{name}: lines {table.lines[i - 1]} to {table.lines[i]}: "
        return key, f"{name}, column {col}: line {table.lines[i]}: "
    return table.times, pos, where, (key, f"{name}: ")
