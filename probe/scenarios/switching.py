"""Switching in scenario files: how the coupling of a finite transit is
turned on and off (``[trajectory] switching = ...``), one registered kind
per switching function of :mod:`probe.detectors.switching`.

- ``"gaussian"``: ``switching_width`` tau of exp(-t^2/(2 tau^2)) and
  ``switching_centre`` (default: the middle of a spline's span, else t = 0);
- ``"window"``: on from ``start`` to ``stop`` with smooth ramps of ``ramp``
  at both ends (default 5 % of the window);
- ``"path"`` (a spline's default): on over the path's own time span, with
  ``ramp`` (default 5 % of the span);
- ``"crossing"``: on while the probe is inside the uniform region of radius
  ``condensate.size`` (a box), from its entry to its exit (the roots of
  ``|x(t)| = size``), with ramps of ``ramp`` (default 5 % of the crossing)
  centred on both.

Times are on the path's clock (waypoint times; ``t`` in x = start + v t for
a linear path).  With ``switching = "window"`` on a linear path, ``start``
is the window's start time and the path starts at the origin.  The
switching lies within +-1e6 xi/c_s of t = 0 (``probe.scenarios.limits``).
A new switching is one builder ``(body, trajectory, kind, condensate) ->
Switching``, its keys, and one entry in ``SWITCHINGS``.
"""
from __future__ import annotations

from dataclasses import dataclass
from typing import Callable

import math

from probe.detectors.switching import Crossing, Gaussian, PathSpan, Window
from probe.errors import InputError
from probe.scenarios.keys import Key, Part
from probe.scenarios.limits import MAX_TIME_OVER_TU, fmt_time, scales
from probe.scenarios.values import choice, quantity, require

_S = "trajectory"

SWITCHING_WIDTH = Key(_S, "switching_width", '"2 ms"', "tau of the Gaussian switching "
                      "exp(-(t - centre)^2/(2 tau^2))", kind="time", required=True, vary=16)
SWITCHING_CENTRE = Key(_S, "switching_centre", '"0 ms"', "centre of the Gaussian switching "
                       "(default: the middle of a spline's span, else t = 0)", kind="time",
                       vary=17)
START = Key(_S, "start", '"0 ms"', "the window's start time", kind="time", required=True)
STOP = Key(_S, "stop", '"10 ms"', "the window's stop time", kind="time", required=True,
           vary=19)
RAMP = Key(_S, "ramp", '"1 ms"', "duration of the smooth ramp at both ends (default 5 % "
           "of the window, the path's span or the crossing; 0 is a hard cut)", kind="time",
           vary=18)


@dataclass(frozen=True)
class SwitchingKind:
    """A switching function a scenario can name: its keys and its builder."""

    name: str
    keys: tuple
    build: Callable


def _gaussian(body, trajectory, kind, condensate):
    width = quantity(body, SWITCHING_WIDTH)
    if not width > 0:
        raise InputError(SWITCHING_WIDTH.dotted,
                         f"must be > 0, got {body['switching_width']!r}")
    if SWITCHING_CENTRE.name in body:
        centre = quantity(body, SWITCHING_CENTRE)
    elif trajectory.time_span is not None:
        centre = 0.5 * sum(trajectory.time_span)
    else:
        centre = 0.0
    gauss = Gaussian(width, centre)
    lim = MAX_TIME_OVER_TU * scales(condensate)[2]
    key = SWITCHING_CENTRE if abs(centre) > lim else SWITCHING_WIDTH
    _check_switching_range(key.dotted, body.get(key.name, centre), gauss.support,
                           condensate, trajectory.stationary)
    return gauss


def _path_span(body, trajectory, kind, condensate):
    if trajectory.time_span is None:
        raise InputError(f"{_S}.switching",
                         f"'path' switches on over the path's own time span, but a "
                         f"{kind} path has none; use \"gaussian\" (with "
                         f"switching_width) or \"window\" (with start, stop, ramp)")
    ramp = quantity(body, RAMP)
    if ramp is not None:
        t0, t1 = trajectory.time_span
        _check_ramp(ramp, t1 - t0, body["ramp"], "the path's span")
    return PathSpan(trajectory, ramp)


def _window(body, trajectory, kind, condensate):
    start = require(body, START)
    if isinstance(start, (list, tuple)):
        raise InputError(START.dotted, "with switching = \"window\", start is the window's "
                                       "start time (e.g. \"0 ms\"), not a point; a linear "
                                       "path then starts at the origin (in a uniform gas "
                                       "its start point changes nothing)")
    a = quantity(body, START)
    b = quantity(body, STOP)
    for key, v in ((START, a), (STOP, b)):
        _check_switching_range(key.dotted, body[key.name], (v, v), condensate,
                               trajectory.stationary)
    if not b > a:
        raise InputError(STOP.dotted, f"must be after start = {start!r}, got "
                                      f"{body['stop']!r}")
    ramp = quantity(body, RAMP)
    if ramp is not None:
        _check_ramp(ramp, b - a, body["ramp"], "the window")
    else:
        ramp = 0.05 * (b - a)
    return Window(a, b, ramp)


def crossing_times(trajectory, condensate, kind):
    """``(t_in, t_out)``: when a path enters and leaves the uniform region
    (the ball of radius ``condensate.size``); InputError when there is no
    such region, the path never enters it or never leaves it."""
    size = condensate.size
    if size is None:
        raise InputError(f"{_S}.switching",
                         "'crossing' switches the coupling on while the probe is inside "
                         "the box; give its radius as condensate.size (with trap = "
                         "\"box\" or alone); a harmonic trap's cloud is followed by "
                         "'probe passage'")
    if kind == "circular":
        raise InputError(f"{_S}.switching", "'crossing' needs a path that enters and "
                                             "leaves the box once (linear or spline); a "
                                             "circle does not")
    radii = [size] * condensate.dimension
    times = trajectory.times_within(radii)
    if times is None:
        b = trajectory.closest_approach(radii) * size
        key = f"{_S}.start" if kind == "linear" else f"{_S}.switching"
        raise InputError(key, f"the path never enters the box: it passes the "
                                         f"centre at {b * 1e6:.4g} um, outside "
                                         f"condensate.size = {size * 1e6:.4g} um")
    if not all(math.isfinite(t) for t in times):
        raise InputError(f"{_S}.speed", "a probe at rest inside the box never crosses it; "
                                         "give it a speed")
    return times


def _crossing(body, trajectory, kind, condensate):
    t_in, t_out = crossing_times(trajectory, condensate, kind)
    ramp = quantity(body, RAMP)
    if ramp is None:
        ramp = 0.05 * (t_out - t_in)
    elif not 0 <= ramp <= t_out - t_in:
        raise InputError(RAMP.dotted, f"must be between 0 and the crossing time "
                                      f"{fmt_time(t_out - t_in)}, got {body['ramp']!r}")
    for t in (t_in, t_out):
        _check_switching_range(f"{_S}.switching", "crossing", (t, t), condensate,
                               trajectory.stationary)
    return Crossing(t_in, t_out, ramp)


#: switching name -> its keys and builder (the order of messages)
SWITCHINGS = {kind.name: kind for kind in (
    SwitchingKind("gaussian", (SWITCHING_WIDTH, SWITCHING_CENTRE), _gaussian),
    SwitchingKind("window", (START, STOP, RAMP), _window),
    SwitchingKind("path", (RAMP,), _path_span),
    SwitchingKind("crossing", (RAMP,), _crossing),
)}

SWITCHING = Key(_S, "switching", '"gaussian"', "how the coupling is switched on and off: "
                "makes a linear or circular path a finite transit (a spline's default is "
                "\"path\")", choices=tuple(SWITCHINGS))

#: the keys of the switching, in the order of the schema: the choice, then
#: each switching's keys
PARTS = (Part(_S, "", (SWITCHING,)),
         *(Part(_S, f'switching = "{name}"', kind.keys) for name, kind in SWITCHINGS.items()))
#: the names of every switching key
NAMES = frozenset(key.name for part in PARTS for key in part.keys)


def build_switching(body, trajectory, kind, condensate, finite, shared=frozenset()):
    """The switching function of the ``[trajectory]`` table, or None for a
    stationary path without ``switching``.

    ``finite``: the path kind is a transit only (a spline), switched over
    its span ("path") unless told otherwise.  ``shared``: names of switching
    keys that a stationary path reads as well (a linear path's ``start``):
    on a stationary path they belong to the path unless the switching reads
    them, and the path's builder has judged them.
    """
    name = check_switching_keys(body, finite, shared)
    if name is None:
        return None
    return SWITCHINGS[name].build(body, trajectory, kind, condensate)


def check_switching_keys(body, finite, shared=frozenset()):
    """The switching named in ``body`` (None for a stationary path without
    one); InputError for a switching key that it does not read (a window's
    ``stop`` left behind by switching = "gaussian", say).  Called before the
    path is built, so that such a key is named rather than a shared key
    (``start``) that the path then reads in another sense."""
    given = set(body) & (NAMES - (frozenset() if finite else shared))
    if SWITCHING.name not in body and not finite:
        if given:
            k = sorted(given)[0]
            users = [n for n, sw in SWITCHINGS.items() if k in {key.name for key in sw.keys}]
            raise InputError(f"{_S}.{k}", f"used only with switching = "
                                          f"{' or '.join(repr(u) for u in users)}; add "
                                          f"e.g. switching = \"{users[0]}\"")
        return None
    name = choice(body, SWITCHING, default="path" if finite else None)
    reads = {key.name for key in SWITCHINGS[name].keys}
    for k in sorted(given - reads - {SWITCHING.name}):
        raise InputError(f"{_S}.{k}", f"not used with switching = {name!r} (it reads "
                                      f"{', '.join(sorted(reads))})")
    return name


def keys_read(body):
    """Names of the keys that the switching named in ``body`` reads (none
    if it names no known switching)."""
    name = body.get(SWITCHING.name)
    for known, sw in SWITCHINGS.items():
        if name == known:
            return {key.name for key in sw.keys}
    return set()


def _check_ramp(ramp, span, text, what):
    if ramp < 0:
        raise InputError(RAMP.dotted, f"must be >= 0, got {text!r}")
    if 2 * ramp > span * (1 + 1e-12):
        raise InputError(RAMP.dotted,
                         f"two ramps of {text!r} do not fit in {what} of "
                         f"{fmt_time(span)} (need 2 ramp <= duration)")


def _check_switching_range(key, value, support, condensate, stationary):
    """InputError unless ``support`` (s; the times where chi > 1e-16, or a
    window's start or stop time) lies within +-MAX_TIME_OVER_TU xi/c_s of
    t = 0."""
    _, _, tu = scales(condensate)
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
                          f"of t = 0 (xi/c_s = {fmt_time(tu)} in this gas){hint}")
