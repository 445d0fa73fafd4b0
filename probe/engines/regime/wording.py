"""Shared wording of the regime sentences: numbers, lengths, ranges and the
"at N of M grid points" of results on a parameter grid."""
from __future__ import annotations

import numpy as np

from probe.quantities import display_text


def grid_prefix(mask):
    """'at N of M grid points' for an array mask with M > 1, else ''."""
    mask = np.asarray(mask)
    if mask.size <= 1:
        return ""
    return f"at {int(np.count_nonzero(mask))} of {mask.size} grid points"


def lead(mask):
    """``grid_prefix(mask)`` followed by a space, or '' for a scalar: the
    start of a sentence about the points in ``mask``."""
    where = grid_prefix(mask)
    return f"{where} " if where else ""


def largest(x):
    """Largest finite entry of a scalar or array (None if there is none)."""
    if x is None:
        return None
    a = np.asarray(x, dtype=float)
    a = a[np.isfinite(a)]
    if a.size == 0:
        return None
    return float(np.max(a))


def fmt(x):
    """A number to 4 significant digits."""
    return f"{x:.4g}"


def micrometres(x):
    """A length (m) in um, to 4 significant digits."""
    return fmt(x * 1e6)


def temperature_text(x):
    """A temperature (K) to 4 significant digits, in the unit that fits it
    (300 K as K, 20 nK as nK: ``probe.quantities.display_text``)."""
    return display_text("temperature", x, 4)


def range_text(x, unit_scale, unit):
    """'v unit' for a scalar, 'between lo and hi unit over the grid' for an
    array (values times ``unit_scale``)."""
    a = np.asarray(x, float)
    if a.size <= 1:
        return f"{fmt(float(a) * unit_scale)} {unit}"
    return (f"between {fmt(float(np.min(a)) * unit_scale)} and "
            f"{fmt(float(np.max(a)) * unit_scale)} {unit} over the grid")
