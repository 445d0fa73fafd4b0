"""The grid of a sweep: its axes (one per varied key) and the checked plan
(configuration, axes, columns and the keys passed to the engine as
arrays)."""
from __future__ import annotations

import hashlib
import json
import math
import re
from dataclasses import dataclass, field

import numpy as np

from probe.design.sweep.evaluators import evaluator_for
from probe.design.sweep.keys import (NUMERIC_KEYS, assign, check_numeric_key,
                                     is_relative_speed, raw_config)
from probe.errors import InputError
from probe.quantities import si_unit

#: at most this many points in one grid
MAX_POINTS = 10_000_000


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

    @classmethod
    def from_dict(cls, d):
        """The axis recorded by :meth:`to_dict` (in a sweep's sidecar)."""
        return cls(d["key"], np.array(d["values"], float), d["unit"], d["log"],
                   NUMERIC_KEYS[d["key"]], d["start"], d["stop"])


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
    """NUM of a --vary entry: a whole number from 1 to MAX_POINTS."""
    if isinstance(num, (int, np.integer)) and not isinstance(num, bool):
        n = int(num)
    elif isinstance(num, str) and re.fullmatch(r"\s*\+?\d+\s*", num):
        n = int(num)
    else:
        raise InputError("--vary", f"{key}: NUM must be a whole number of "
                                   f"points, got {num!r}")
    if n < 1:
        raise InputError("--vary", f"{key}: NUM must be at least 1, got {n}")
    if n > MAX_POINTS:
        raise InputError("--vary", f"{key}: NUM = {n} points, more than the limit "
                                   f"{MAX_POINTS} of a grid")
    return n


def _ends(key, kind, start, stop, scenario):
    """(lo, hi, relative): the ends of an axis in SI, or in multiples of the
    sound speed for a speed written in c_s."""
    from probe.scenarios.units import parse_quantity

    cond = scenario.condensate
    d, c = cond.dimension, cond.sound_speed
    rel = [kind == "speed" and is_relative_speed(t) for t in (start, stop)]
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
    return ends[0], ends[1], relative


def make_axis(key, start, stop, num, log, scenario):
    """An :class:`Axis` for ``key`` from START/STOP strings, checked against
    the base scenario (for the gas dimension and sound speed)."""
    kind = NUMERIC_KEYS[key]
    n = _num(key, num)
    lo, hi, relative = _ends(key, kind, start, stop, scenario)
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
    unit = "c_s" if relative else si_unit(kind, scenario.condensate.dimension)
    return Axis(key, values, unit, bool(log), kind, str(start), str(stop))


def vary_entries(vary):
    """The ``vary`` entries as ``(key, start, stop, num)`` tuples."""
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
    #: the files the scenario reads ((source, name) -> text, read once when
    #: planning): the tasks carry them, the fingerprint covers their content
    files: dict = field(default_factory=dict)

    @property
    def shape(self):
        return tuple(a.size for a in self.axes)

    @property
    def size(self):
        return int(np.prod(self.shape)) if self.axes else 1

    def file_digests(self):
        """``{name: SHA-256}`` of the files the scenario reads."""
        from probe.scenarios.files import digests
        return digests(self.files)

    def fingerprint(self):
        """What identifies the sweep: configuration, axes, columns, version
        and the content of every file the scenario reads."""
        from probe import __version__
        blob = json.dumps({"config": self.raw, "axes": [a.to_dict() for a in self.axes],
                           "columns": self.columns, "units": self.units,
                           "files": self.file_digests(),
                           "version": __version__}, sort_keys=True, default=str)
        return hashlib.sha256(blob.encode()).hexdigest()

    def header(self):
        return [f"{c} [{u}]" for c, u in zip(self.columns, self.units)]


def _checked_keys(entries, log):
    """The varied keys, checked (one or two, numeric, distinct; ``log``
    among them)."""
    if not entries:
        raise InputError("--vary", "give at least one KEY=START:STOP:NUM")
    if len(entries) > 2:
        raise InputError("--vary", f"a grid has one or two keys, got {len(entries)}")
    keys = [check_numeric_key(k) for k, *_ in entries]
    if len(set(keys)) != len(keys):
        raise InputError("--vary", f"{keys[0]} is given twice")
    for k in log:
        if k not in keys:
            raise InputError("--log", f"{k!r} is not a varied key; varied: "
                                      f"{', '.join(keys)}")
    return keys


def _check_corners(raw, source, axes):
    """Every end of every axis (and the far corner of a 2D grid) must give a
    scenario that a sweep can evaluate."""
    from probe.scenarios.config import scenario_from_dict

    for ax in axes:
        for i in {0, ax.size - 1}:
            trial = {a.key: a.text(0) for a in axes}
            trial[ax.key] = ax.text(i)
            evaluator_for(scenario_from_dict(assign(raw, trial), source=source))
    if len(axes) == 2:
        corner = {a.key: a.text(a.size - 1) for a in axes}
        evaluator_for(scenario_from_dict(assign(raw, corner), source=source))


def plan_sweep(config, vary, log=(), overrides=(), source=None, removals=()):
    """Check a sweep request and return its :class:`Plan` (nothing is
    computed).  Raises InputError for any bad key, value or combination.
    ``source`` names the file a dict ``config`` came from; ``removals`` and
    ``overrides`` edit it first (as ``--unset`` and ``--set``)."""
    from probe.scenarios.config import scenario_from_dict
    from probe.scenarios.files import pinned, recording

    raw, source = raw_config(config, overrides, source, removals)
    with recording() as files:
        base = scenario_from_dict(raw, source=source)
    entries = vary_entries(vary)
    log = tuple(log)
    keys = _checked_keys(entries, log)
    # the size first, from the NUMs alone: an axis is allocated in full
    total = math.prod(_num(k, n) for k, _, _, n in entries)
    if total > MAX_POINTS:
        raise InputError("--vary", f"the grid has {total} points, more than "
                                   f"the limit {MAX_POINTS}")
    axes = [make_axis(k, a, b, n, k in log, base) for k, a, b, n in entries]
    with pinned(files):
        _check_corners(raw, source, axes)
    ev = evaluator_for(base)
    cols = [("point", "1")] + [(a.key, si_unit(a.kind, base.condensate.dimension))
                               for a in axes]
    cols += ev.columns(base)
    cols.append(("warnings", "text"))
    vec = {k: v for k, v in ev.vector_keys(raw, base).items() if k in keys}
    return Plan(raw=raw, source=source, scenario=base, axes=axes,
                columns=[c for c, _ in cols], units=[u for _, u in cols], vector=vec,
                files=dict(files))
