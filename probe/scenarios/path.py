"""The ``[trajectory]`` table: the path chosen by ``kind``, one registered
kind per builder (``PATH_KINDS``), and its switching.

``linear`` (``speed``, ``direction``, ``start``) and ``circular``
(``radius``, ``speed`` or ``angular_frequency``, ``centre``, ``normal``)
are stationary: they have rates, and are finite transits only with a
``switching``.  ``spline`` (``probe.scenarios.spline``) is a finite
transit.  The keys live here and not on the trajectory classes, because
``trajectories`` is pure kinematics and does not import ``probe``.

A new kind is one builder ``(body, condensate, source) -> Trajectory``
with its keys, and one entry in ``PATH_KINDS``.
"""
from __future__ import annotations

import re
from dataclasses import dataclass
from typing import Callable

import numpy as np
from trajectories import Circular, Linear, TrajectoryError

from probe.errors import InputError
from probe.scenarios import spline, switching
from probe.scenarios.keys import Key, Part, unset_hint
from probe.scenarios.limits import MAX_DISTANCE_OVER_XI, MAX_SPEED_OVER_C
from probe.scenarios.values import choice, not_applicable, quantity, require

_S = "trajectory"

SPEED = Key(_S, "speed", '"1.5 c_s"', "speed along the path; c_s is this gas's sound "
            "speed (plain c is the speed of light)", kind="speed",
            required="linear; circular: this or angular_frequency", label="speed $v$",
            vary=12, array="speed")
DIRECTION = Key(_S, "direction", "[1, 0, 0]", "direction of motion (in a 2D or 1D gas "
                "within its plane or axis)", kind="dimensionless", vector=True,
                default=(1, 0, 0))
START = Key(_S, "start", '["0 um", "0 um", "0 um"]', "position at t = 0 (default: the "
            "origin)", kind="length", vector=True)
RADIUS = Key(_S, "radius", '"10 um"', "radius of the circle", kind="length", required=True,
             label="radius $R$", vary=13, array="radius")
ANGULAR_FREQUENCY = Key(_S, "angular_frequency", '"100 rad/s"', "angular frequency of the "
                        "motion on the circle, instead of speed", kind="angular_frequency",
                        required="this or speed", label=r"angular frequency $\omega_c$",
                        vary=14)
CENTRE = Key(_S, "centre", '["0 um", "0 um", "0 um"]', "centre of the circle (2 or 3 "
             "components; default: the origin)", kind="length", vector=True)
NORMAL = Key(_S, "normal", "[0, 0, 1]", "normal of the circle's plane (along z in a 2D "
             "gas)", kind="dimensionless", vector=True, default=(0, 0, 1))
TURNS = Key(_S, "turns", "1", "turns of the circle that 'probe passage' follows (a "
            "number > 0)", kind="dimensionless", default=1)


@dataclass(frozen=True)
class PathKind:
    """A kind of path a scenario can name.

    ``keys``: the keys its builder reads besides ``kind``; ``build(body,
    condensate, source)``: the trajectory; ``finite``: a finite transit
    only (no stationary rate), always switched, by default over its own
    time span; ``min_dimension``: the smallest gas dimension it fits in.
    """

    name: str
    keys: tuple
    build: Callable
    finite: bool = False
    min_dimension: int = 1


def _in_gas(vec, key, d, what):
    """Reject vector components along the frozen directions of a d < 3 gas."""
    if d < 3 and vec.size > d and np.any(vec[d:] != 0):
        axes = "x axis" if d == 1 else "x-y plane"
        raise InputError(key, f"the gas is {d}D (it extends along the {axes} "
                              f"only) but the {what} {vec.tolist()} leaves it")


def _components(body, key, d, what):
    """The component counts allowed for the vector ``key`` in a ``d``-D gas:
    three in 3D (a shorter list would leave the missing components to a
    guess), ``d`` to 3 in a 2D or 1D gas (those beyond ``d`` must be 0)."""
    value = body.get(key.name)
    if d == 3 and isinstance(value, (list, tuple)) and len(value) != 3:
        raise InputError(key.dotted, f"a {what} in a 3D gas has 3 components (x, y, z), "
                                     f"got {len(value)}: {value!r}; write e.g. "
                                     f"{key.name} = {key.example}")
    return tuple(range(d, 4))


def _speed(body, sound_speed):
    """The speed (m/s); a speed beyond the engine's range written with
    ``c`` (pint's speed of light) gets a hint that the sound speed is
    written ``c_s``."""
    value = body[SPEED.name]
    speed = quantity(body, SPEED, sound_speed=sound_speed)
    if speed > MAX_SPEED_OVER_C * sound_speed:
        hint = ""
        if isinstance(value, str) and re.search(r"(?<![\w.])c(?![\w.])", value):
            hint = ("; 'c' is the speed of light: write the gas's sound speed "
                    "as 'c_s'")
        raise InputError(SPEED.dotted, f"{value!r} is {speed / sound_speed:.4g} times the "
                                       f"sound speed c_s = {sound_speed:.4g} m/s, above "
                                       f"the largest speed handled, {MAX_SPEED_OVER_C:g} "
                                       f"c_s{hint}")
    return speed


def _position_limit(condensate):
    """(limit in xi, limit in m, xi in m): positions are handled within
    MAX_DISTANCE_OVER_XI healing lengths of the origin along each axis, as
    for spline waypoints."""
    xi = condensate.healing_length
    return MAX_DISTANCE_OVER_XI, MAX_DISTANCE_OVER_XI * xi, xi


def _check_position(vec, key, what, condensate):
    """InputError naming ``key[i]`` unless every component of ``vec`` (m)
    lies within the positions handled (``_position_limit``)."""
    lim_xi, lim, xi = _position_limit(condensate)
    out = np.flatnonzero(~(np.abs(vec) <= lim))
    if out.size:
        i = int(out[0])
        raise InputError(f"{key}[{i}]",
                         f"{vec[i]:.6g} m is outside the positions handled: the "
                         f"{what} must lie within {lim_xi:g} xi = {lim:.4g} m of the "
                         f"origin along each axis (healing length xi = {xi:.4g} m "
                         f"in this gas)")


def _check_radius(radius, condensate):
    """InputError for a radius above the positions handled
    (``_position_limit``); radii <= 0 are left to ``Circular``."""
    lim_xi, lim, xi = _position_limit(condensate)
    if radius > lim:
        raise InputError(RADIUS.dotted, f"{radius:.6g} m is above the largest radius "
                                        f"handled, {lim_xi:g} xi = {lim:.4g} m (healing "
                                        f"length xi = {xi:.4g} m in this gas); for R >> xi "
                                        f"the rate approaches that of straight motion at "
                                        f"the same speed (kind = \"linear\")")


def _kinematics_error(exc):
    """An InputError with a ``trajectory.`` key from a TrajectoryError."""
    key = exc.key if exc.key.startswith(f"{_S}.") else f"{_S}.{exc.key}"
    return InputError(key, exc.message)


def build_linear(body, condensate, source=None):
    """Straight motion at constant speed (:class:`trajectories.Linear`)."""
    d = condensate.dimension
    require(body, SPEED)
    speed = _speed(body, condensate.sound_speed)
    direction = quantity(body, DIRECTION, sizes=_components(body, DIRECTION, d, "direction"))
    _in_gas(direction, DIRECTION.dotted, d, "direction")
    start = quantity(body, START, sizes=_components(body, START, d, "start point"))
    if start is not None:
        _in_gas(start, START.dotted, d, "start point")
        _check_position(start, START.dotted, "start point", condensate)
    try:
        return Linear(speed, direction=direction, start=start)
    except TrajectoryError as exc:
        raise _kinematics_error(exc) from None


def build_circular(body, condensate, source=None):
    """Uniform circular motion (:class:`trajectories.Circular`)."""
    d = condensate.dimension
    radius = quantity(body, RADIUS)
    _check_radius(radius, condensate)
    if (SPEED.name in body) == (ANGULAR_FREQUENCY.name in body):
        raise InputError(SPEED.dotted,
                         "give exactly one of speed (e.g. \"0.5 c_s\") and "
                         "angular_frequency (e.g. \"100 rad/s\")"
                         + (unset_hint(SPEED, ANGULAR_FREQUENCY) if SPEED.name in body else ""))
    speed = omega = None
    if SPEED.name in body:
        speed = _speed(body, condensate.sound_speed)
    else:
        omega = quantity(body, ANGULAR_FREQUENCY)
    centre = quantity(body, CENTRE, sizes=(2, 3))
    if centre is not None:
        _in_gas(centre, CENTRE.dotted, d, "centre")
        _check_position(centre, CENTRE.dotted, "centre", condensate)
    normal = quantity(body, NORMAL, sizes=(3,))
    if d == 2 and np.any(normal[:2] != 0):
        raise InputError(NORMAL.dotted, f"the gas is 2D (x-y plane); the circle's "
                                        f"normal must be along z, got {normal.tolist()}")
    try:
        return Circular(radius, speed=speed, angular_frequency=omega,
                        centre=centre, normal=normal)
    except TrajectoryError as exc:
        raise _kinematics_error(exc) from None


#: ``trajectory.kind`` name -> the kind (the order of messages and of the schema)
PATH_KINDS = {kind.name: kind for kind in (
    PathKind("linear", (SPEED, DIRECTION, START), build_linear),
    PathKind("circular", (RADIUS, SPEED, ANGULAR_FREQUENCY, CENTRE, NORMAL, TURNS),
             build_circular, min_dimension=2),
    PathKind("spline", spline.KEYS, spline.build_spline, finite=True),
)}

KIND = Key(_S, "kind", '"linear"', "the path: straight motion, a circle, or a spline "
           "through timed waypoints (a finite transit)", choices=tuple(PATH_KINDS),
           required=True)

#: the keys of the path, in the order of the schema: the choice of kind,
#: each kind's keys, then the switching's
PARTS = (Part(_S, "", (KIND,)),
         *(Part(_S, f'kind = "{name}"', kind.keys) for name, kind in PATH_KINDS.items()),
         *switching.PARTS)

_STATIONARY_NAMES = frozenset(key.name for kind in PATH_KINDS.values() if not kind.finite
                              for key in kind.keys)
#: switching keys that a stationary path reads too (a linear path's start)
_SHARED = switching.NAMES & _STATIONARY_NAMES
#: keys that only finite kinds read
_FINITE_ONLY = frozenset(key.name for kind in PATH_KINDS.values() if kind.finite
                         for key in kind.keys) - _STATIONARY_NAMES - switching.NAMES


def build_path(body, condensate, source=None):
    """``(trajectory, switching)`` from the ``[trajectory]`` table.

    ``switching`` is ``None`` for a stationary scenario (linear or circular
    without ``switching``).  ``source`` (the scenario file) fixes the folder
    that a relative ``file`` is read from (default: the working directory).
    """
    kind = PATH_KINDS[choice(body, KIND, default=require(body, KIND))]
    d = condensate.dimension
    if not kind.finite:
        for k in sorted(set(body) & _FINITE_ONLY):
            users = " or ".join(f'"{n}"' for n, other in PATH_KINDS.items()
                                if k in {key.name for key in other.keys})
            raise InputError(f"{_S}.{k}", f"used only by kind = {users} "
                                          f"(this path is {kind.name!r})")
    if d < kind.min_dimension:
        dims = " or ".join(f"{n}D" for n in range(kind.min_dimension, 4))
        raise InputError(KIND.dotted, f"a {kind.name} path needs a {dims} gas; "
                                      f"this gas is {d}D")
    own = body if kind.finite else {
        k: v for k, v in body.items()
        if k not in switching.NAMES - _SHARED
        and not (k in _SHARED and k in switching.keys_read(body))}
    allowed = ({KIND.name} | {key.name for key in kind.keys}
               | (switching.NAMES if kind.finite else frozenset()))
    not_applicable(own, _S, set(own) - allowed, f"by a {kind.name} trajectory (keys: "
                                                f"{', '.join(sorted(allowed))})")
    switching.check_switching_keys(body, kind.finite, _SHARED)
    trajectory = kind.build(own, condensate, source)
    sw = switching.build_switching(body, trajectory, kind.name, condensate, kind.finite,
                                   _SHARED)
    return trajectory, sw
