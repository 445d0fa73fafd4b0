"""Reading timed waypoints from a CSV file into a ``Spline`` (``load_waypoints_csv``)
or into a table of SI arrays (``read_waypoints_csv``).

File format::

    # comment lines start with '#'; blank lines are skipped
    t [ms], x [um], y [um]
    0,      0,      0
    1.5,    2.0,    0.5
    ...

The first line that is not a comment is the header.  Each header cell is
``name [unit]``; ``t`` is required, and the position columns are ``x``,
``x, y`` or ``x, y, z`` (in that order; ``t`` may stand anywhere).  Values
are converted to SI units with the tables below.
"""

from __future__ import annotations

import math
import os
import re
from typing import NamedTuple

import numpy as np

from ._errors import TrajectoryError
from .spline import AXES, Spline

#: Time units and their value in seconds.
TIME_UNITS = {"s": 1.0, "ms": 1e-3, "us": 1e-6, "\u00b5s": 1e-6, "\u03bcs": 1e-6,
              "ns": 1e-9, "min": 60.0}
#: Length units and their value in metres.
LENGTH_UNITS = {"m": 1.0, "mm": 1e-3, "um": 1e-6, "\u00b5m": 1e-6, "\u03bcm": 1e-6,
                "nm": 1e-9}

_HEADER_CELL = re.compile(r"^\s*([A-Za-z_]\w*)\s*(?:\[\s*([^\[\]]*?)\s*\])?\s*$")


def load_waypoints_csv(path, order=3, max_speed=None) -> Spline:
    """Read waypoints from the CSV file at ``path`` and return their ``Spline``.

    ``order`` and ``max_speed`` (m/s) are passed on to ``Spline``.  Problems
    with the file raise ``TrajectoryError`` with key ``"waypoints.file"``
    (missing file, no header, wrong cell count, no data), ``"waypoints.columns"``
    (unknown, repeated or missing columns) or ``"waypoints.<column>"`` (unit,
    non-numeric or non-finite value, times not increasing); messages give
    the line number.
    """
    table = read_waypoints_csv(path)
    return Spline(table.times, table.positions, order=order, max_speed=max_speed)


class WaypointTable(NamedTuple):
    """The waypoints of a CSV file in SI units."""

    #: times (s), shape (N,), finite and strictly increasing
    times: np.ndarray
    #: positions (m), shape (N, ndim), columns x, y, z in that order
    positions: np.ndarray
    #: the line of the file each waypoint was read from (1-based)
    lines: tuple


def read_waypoints_csv(path, text=None) -> WaypointTable:
    """Read the waypoints of the CSV file at ``path`` without building a
    spline: the checks and errors of :func:`load_waypoints_csv` on the file,
    with the line numbers kept for messages about single waypoints.  With
    ``text`` (the file's content, read before) the file is not opened."""
    try:
        if text is None:
            with open(os.fspath(path), encoding="utf-8-sig") as handle:
                text = handle.read()
    except FileNotFoundError:
        raise TrajectoryError("waypoints.file", f"no such file: {os.fspath(path)}") from None
    except IsADirectoryError:
        raise TrajectoryError("waypoints.file", f"is a directory: {os.fspath(path)}") from None
    except (OSError, UnicodeDecodeError) as exc:
        raise TrajectoryError("waypoints.file", f"cannot read {os.fspath(path)}: {exc}") from None

    lines = [(number, line.strip()) for number, line in enumerate(text.splitlines(), start=1)]
    lines = [(number, line) for number, line in lines if line and not line.startswith("#")]
    if not lines:
        raise TrajectoryError("waypoints.file", f"{os.fspath(path)} has no header row")

    header_line, header = lines[0]
    names, scales, units = _parse_header(header, header_line)
    rows, row_lines = _parse_rows(lines[1:], names)
    if not rows:
        raise TrajectoryError("waypoints.file", f"{os.fspath(path)} has a header but no data rows")

    # a value finite in the file's unit can overflow in SI (1e308 min)
    with np.errstate(over="ignore"):
        data = np.array(rows) * np.array(scales)
    bad = np.argwhere(~np.isfinite(data))
    if bad.size:
        i, j = (int(k) for k in bad[0])
        si = "s" if names[j] == "t" else "m"
        raise TrajectoryError(
            f"waypoints.{names[j]}", f"line {row_lines[i]}: {rows[i][j]:g} {units[j]} is "
            f"beyond double precision in {si} (at most about 1.8e308 {si})")
    t_col = names.index("t")
    times = data[:, t_col]
    for i in range(1, times.size):
        if not times[i] > times[i - 1]:
            raise TrajectoryError(
                "waypoints.t", f"line {row_lines[i]}: times must be strictly increasing; "
                f"t = {rows[i][t_col]:g} is not after t = {rows[i - 1][t_col]:g} on line "
                f"{row_lines[i - 1]}")
    axes = [names.index(a) for a in AXES if a in names]
    return WaypointTable(times, data[:, axes], tuple(row_lines))


def _parse_header(header: str, line: int) -> tuple[list[str], list[float], list[str]]:
    names, scales, units = [], [], []
    for cell in header.split(","):
        match = _HEADER_CELL.match(cell)
        if match is None:
            if _is_number(cell):
                raise TrajectoryError(
                    "waypoints.file", f"line {line}: no header row; the first line must name "
                    "the columns with units, e.g. 't [s], x [um], y [um]'")
            raise TrajectoryError(
                "waypoints.columns", f"line {line}: cannot read header cell {cell.strip()!r}; "
                "expected 'name [unit]'")
        name, unit = match.group(1), match.group(2)
        if name not in ("t",) + AXES:
            raise TrajectoryError(
                "waypoints.columns", f"line {line}: unknown column {name!r}; allowed columns "
                "are t, x, y, z")
        if name in names:
            raise TrajectoryError("waypoints.columns", f"line {line}: column {name!r} repeated")
        table = TIME_UNITS if name == "t" else LENGTH_UNITS
        allowed = ", ".join(table)
        if unit is None:
            raise TrajectoryError(
                f"waypoints.{name}", f"line {line}: column {name!r} needs a unit in square "
                f"brackets, e.g. '{name} [{next(iter(table))}]'; allowed units: {allowed}")
        if unit not in table:
            raise TrajectoryError(
                f"waypoints.{name}", f"line {line}: unknown unit {unit!r}; allowed units: "
                f"{allowed}")
        names.append(name)
        scales.append(table[unit])
        units.append(unit)
    if "t" not in names:
        raise TrajectoryError("waypoints.columns", f"line {line}: a time column 't [unit]' "
                              "is required")
    spatial = [n for n in names if n != "t"]
    if not spatial or spatial != list(AXES[: len(spatial)]):
        raise TrajectoryError(
            "waypoints.columns", f"line {line}: position columns must be x, 'x, y' or "
            f"'x, y, z' in that order, got {', '.join(spatial) or 'none'}")
    return names, scales, units


def _parse_rows(lines, names) -> tuple[list[list[float]], list[int]]:
    rows, row_lines = [], []
    for number, line in lines:
        cells = line.split(",")
        if len(cells) != len(names):
            raise TrajectoryError(
                "waypoints.file", f"line {number}: {len(cells)} cells, expected "
                f"{len(names)} ({', '.join(names)})")
        row = []
        for name, cell in zip(names, cells):
            try:
                value = float(cell)
            except ValueError:
                raise TrajectoryError(
                    f"waypoints.{name}", f"line {number}: cannot read {cell.strip()!r} as "
                    "a number") from None
            if not math.isfinite(value):
                raise TrajectoryError(
                    f"waypoints.{name}", f"line {number}: value {cell.strip()!r} is not finite")
            row.append(value)
        rows.append(row)
        row_lines.append(number)
    return rows, row_lines


def _is_number(cell: str) -> bool:
    try:
        float(cell)
    except ValueError:
        return False
    return True
