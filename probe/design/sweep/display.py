"""Readable units for plots and printed summaries: values of a kind of
quantity shown with a prefix that keeps them below 1000 (the units of each
kind are ``probe.quantities.DISPLAY_UNITS``)."""
from __future__ import annotations

import math

import numpy as np

from probe.design.sweep.keys import NUMERIC_KEYS
from probe.quantities import DISPLAY_UNITS, QUANTITIES, si_unit

#: quantity kind of the result columns (from ``probe.quantities``)
COLUMN_KINDS = {name: q.kind for name, q in QUANTITIES.items()}


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
    if kind in DISPLAY_UNITS:
        units = DISPLAY_UNITS[kind]
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
