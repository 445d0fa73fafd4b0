"""The range of paths and switchings handled, in the units of the gas
(healing length xi, sound speed c_s, time xi/c_s), and the way times are
written in messages.

Waypoint times and the switching lie within +-MAX_TIME_OVER_TU xi/c_s of
t = 0: the transit engine's time grid has at least a few nodes per xi/c_s,
so a transit of 1e6 xi/c_s already needs millions of them.  Positions
(waypoints, the start of a linear path, the centre and radius of a circle)
lie within MAX_DISTANCE_OVER_XI xi of the origin along each axis (the
distance covered at the largest speed in the longest time).  Speeds are at
most the engine's MAX_SPEED_OVER_C c_s and the acceleration along a spline
at most MAX_ACCELERATION c_s^2/xi: at both bounds the Doppler shift k v and
the chirp sqrt(k a) of a phonon with k ~ 1/xi are ~1e6 c_s/xi.  These checks
also keep every number of a transit far inside double precision.
"""
from __future__ import annotations

from probe.engines.stationary import MAX_SPEED_OVER_C

MAX_TIME_OVER_TU = 1e6
MAX_DISTANCE_OVER_XI = MAX_SPEED_OVER_C * MAX_TIME_OVER_TU
MAX_ACCELERATION = MAX_SPEED_OVER_C ** 2

__all__ = ["MAX_ACCELERATION", "MAX_DISTANCE_OVER_XI", "MAX_SPEED_OVER_C",
           "MAX_TIME_OVER_TU", "fmt_time", "scales"]


def scales(condensate):
    """(xi, c_s, xi/c_s) of the gas, SI."""
    xi, c = condensate.healing_length, condensate.sound_speed
    return xi, c, xi / c


def fmt_time(t, like=None):
    """A time in s as a short string in s, ms, us or ns, the unit chosen by
    the size of ``like`` (default ``t``; 0 s is written in ms)."""
    a = abs(t if like is None else like) or 1e-3
    for unit, scale in (("s", 1.0), ("ms", 1e-3), ("us", 1e-6), ("ns", 1e-9)):
        if a >= scale or unit == "ns":
            return f"{t / scale:.6g} {unit}"
    return f"{t:g} s"  # pragma: no cover
