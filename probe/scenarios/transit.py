"""Finite transits of a scenario: running them and describing them.

A scenario is a *transit* when its coupling is switched on and off in time:
a ``kind = "spline"`` path (timed waypoints, ``probe.scenarios.spline``), or
a linear or circular path with a ``switching`` function
(``probe.scenarios.switching``).  ``probe transit`` computes its
first-order probabilities
(:func:`probe.engines.transit.transit_probabilities`) with the accuracy
``numerics.transit_rtol`` and the amplitude route
``numerics.transit_method`` (``probe.scenarios.numerics``); ``probe rates``
gives the stationary rates of the unending linear or circular path and
refuses a spline.
"""
from __future__ import annotations

import math
import types
from functools import lru_cache

import numpy as np

from probe.errors import InputError
from probe.scenarios.limits import fmt_time

#: chi above this counts as "coupling on" for the reported transit duration
ON_LEVEL = 1e-3


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
    from probe.engines.transit import transit_probabilities

    check_transit(scenario)
    cond = scenario.condensate
    res = transit_probabilities(cond, scenario.probe, engine_path(scenario),
                                scenario.switching,
                                rtol=scenario.transit_rtol, spectrum=spectrum,
                                workers=workers,
                                method=getattr(scenario, "transit_method", "auto"))
    add_scenario_warnings(scenario, res)
    return res


def engine_path(scenario):
    """The scenario's path as the transit engine takes it (components
    beyond the gas's dimension dropped)."""
    return _project(scenario.trajectory, scenario.condensate.dimension)


def add_scenario_warnings(scenario, res, probe=None):
    """Add to a transit result of the scenario (its probe, or ``probe`` in
    its place) the warnings of the switching's span and of the regime of
    validity of the gas and the path."""
    from probe.engines.regime import regime_warnings

    probe = scenario.probe if probe is None else probe
    stand_in = types.SimpleNamespace(speed=path_summary(scenario)["max_speed"],
                                     gap=None, up_rate=None, down_rate=None)
    for w in _span_warnings(scenario) + regime_warnings(scenario.condensate, probe, stand_in):
        if w not in res.warnings:
            res.warnings.append(w)


def _span_warnings(scenario):
    span = scenario.trajectory.time_span
    if span is None:
        return []
    t0, t1 = switching_interval(scenario.switching)
    out = []
    if t0 < span[0] - 1e-9 * (span[1] - span[0]):
        out.append(f"switching: the coupling is on from t = {fmt_time(t0)}, before the "
                   f"path starts at {fmt_time(span[0])}; the probe is held at rest at "
                   "the first waypoint until then")
    if t1 > span[1] + 1e-9 * (span[1] - span[0]):
        out.append(f"switching: the coupling stays on until t = {fmt_time(t1)}, after "
                   f"the path ends at {fmt_time(span[1])}; the probe is held at rest at "
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
