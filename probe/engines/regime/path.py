"""The path against the extent of the uniform gas (``Condensate.size``, the
radius R_u of the uniform region around the origin): one small function per
check, chosen by the trajectory's ``stationary_kind`` (``PATH_CHECKS``)."""
from __future__ import annotations

import math

import numpy as np

from probe.engines.regime.limits import (MIN_CROSSING_OVER_LEAVE, MIN_CROSSING_PHASE,
                                         PROBABILITY_LIMIT)
from probe.engines.regime.wording import fmt, lead, micrometres, range_text


def _straight_line(trajectory):
    """Start s, unit direction n and impact parameter b = |s - (s.n) n| of a
    straight path."""
    start = np.asarray(getattr(trajectory, "start", np.zeros(1)), float)
    n = np.asarray(trajectory.direction, float)
    along = float(np.dot(start, n))
    return start, n, float(np.linalg.norm(start - along * n))


def transit_summary(condensate, trajectory, result):
    """A straight path through the uniform region of a finite cloud.

    With ``condensate.size`` (radius R_u of the uniform region around the
    origin) and a linear ``trajectory`` (start s, unit direction n, speed v):
    impact parameter ``b = |s - (s.n) n|``, chord ``L = 2 sqrt(R_u^2 - b^2)``
    and transit time ``t = L / v``; at the stationary rates the expected
    numbers of transitions during the transit are ``Gamma t`` (meaningful
    while they are << 1 and t spans many gap periods).  Returns a dict of SI
    values (arrays on a grid of speeds), or None where it does not apply
    (no size, not a straight path, the line misses the region, v = 0).
    """
    size = getattr(condensate, "size", None)
    if size is None or trajectory is None or \
            getattr(trajectory, "stationary_kind", None) != "inertial":
        return None
    _, _, b = _straight_line(trajectory)
    if b >= size:
        return None
    v = np.asarray(result.speed, float)
    if not np.any(v > 0):
        return None
    chord = 2.0 * math.sqrt(size * size - b * b)
    with np.errstate(divide="ignore"):
        t = np.where(v > 0, chord / np.where(v > 0, v, 1.0), np.inf)
    out = {"size": size, "impact_parameter": b, "chord": chord,
           "time": t if t.ndim else float(t),
           "expected_up": None, "expected_down": None, "expected_emitted": None,
           "gap_periods": None}

    def times(rate):
        if rate is None:
            return None
        x = np.asarray(rate, float) * t
        return x if x.ndim else float(x)
    if result.up_rate is not None:
        out["expected_up"] = times(result.up_rate)
        out["expected_down"] = times(result.down_rate)
        gap = np.asarray(result.gap, float)
        periods = gap * t / (2 * math.pi)
        out["gap_periods"] = periods if periods.ndim else float(periods)
    else:
        out["expected_emitted"] = times(result.emission_rate)
    return out


def circle_leaves_region(condensate, trajectory, info):
    """A circle reaching beyond the uniform region."""
    size = condensate.size
    R = np.asarray(trajectory.radius, float)
    reach = R + float(np.linalg.norm(trajectory.centre))
    bad = reach > size
    if not np.any(bad):
        return []
    return [f"{lead(bad)}the circular path leaves the uniform region: it reaches "
            f"radius + |centre| = {micrometres(float(np.max(reach)))} um from the cloud "
            f"centre, beyond condensate.size = {micrometres(size)} um; the uniform-gas "
            "rates do not describe the probe near or outside the edge"]


def starts_outside(condensate, trajectory, info):
    """A straight path that starts outside the uniform region."""
    start, _, _ = _straight_line(trajectory)
    r0 = float(np.linalg.norm(start))
    if not r0 > condensate.size:
        return []
    return [f"the straight path starts outside the uniform region: |start| = "
            f"{micrometres(r0)} um from the cloud centre, beyond condensate.size = "
            f"{micrometres(condensate.size)} um"]


def never_crosses(condensate, trajectory, info):
    """A straight line that misses the uniform region."""
    _, _, b = _straight_line(trajectory)
    if not b >= condensate.size:
        return []
    return [f"the straight path never crosses the uniform region: the line passes "
            f"the cloud centre at {micrometres(b)} um, outside condensate.size = "
            f"{micrometres(condensate.size)} um; the rates describe an infinite uniform "
            "gas only"]


def transit_duration(condensate, trajectory, info):
    """The duration of the straight transit and the expected numbers of
    transitions (or emitted phonons) in it (informational)."""
    if info is None:
        return []
    text = (f"a straight transit through the uniform region (radius "
            f"condensate.size = {micrometres(info['size'])} um) lasts "
            f"t = {range_text(info['time'], 1e3, 'ms')} (chord {micrometres(info['chord'])} "
            f"um at impact parameter {micrometres(info['impact_parameter'])} um, divided "
            "by the speed)")
    if info["expected_up"] is not None:
        text += (f"; at the stationary rates the expected numbers of transitions "
                 f"in it are Gamma_up t = {range_text(info['expected_up'], 1, '')} "
                 f"(from the ground state) and Gamma_down t = "
                 f"{range_text(info['expected_down'], 1, '')} (from the excited state)")
    else:
        text += (f"; at the stationary rate the expected number of emitted phonons "
                 f"is Gamma t = {range_text(info['expected_emitted'], 1, '')}")
    return [text.replace(" ,", ",").replace("  ", " ") + " (informational)"]


def transit_first_order(condensate, trajectory, info):
    """First order for the transit: the expected numbers of up and down
    transitions in it (where the result has them) << 1."""
    if info is None or info["expected_up"] is None:
        return []
    big = np.maximum(np.asarray(info["expected_up"]), np.asarray(info["expected_down"]))
    if not np.any(big > PROBABILITY_LIMIT):
        return []
    return [f"{lead(big > PROBABILITY_LIMIT)}first order fails for the transit: the "
            f"expected number of transitions during it reaches {fmt(float(np.max(big)))} "
            f"(should be << 1; limit {PROBABILITY_LIMIT}); a transition probability is "
            "then not rate x time"]


def short_transit(condensate, trajectory, info):
    """Rate x time is a fair estimate of the crossing's probabilities only
    where the crossing time t is long against the inverse gap (Omega t >=
    MIN_CROSSING_PHASE) and against the time a phonon takes to leave the
    probe, max(width, xi)/c_s (MIN_CROSSING_OVER_LEAVE); elsewhere the
    switching on and off matters and the finite transit is the estimate."""
    if info is None or info.get("leave_time") is None:
        return []
    t = np.asarray(info["time"], float)
    over_leave = t / info["leave_time"]
    short = over_leave < MIN_CROSSING_OVER_LEAVE
    parts = []
    if info["gap_periods"] is not None:
        phase = 2 * math.pi * np.asarray(info["gap_periods"], float)
        short = short | (phase < MIN_CROSSING_PHASE)
        parts.append(f"Omega t = {fmt(float(np.min(phase)))}")
    if not np.any(short):
        return []
    parts.append(f"t c_s/max(width, xi) = {fmt(float(np.min(over_leave)))}")
    return [f"{lead(short)}rate x time is no fair estimate of this crossing's "
            f"probabilities: it needs the crossing time t long against the inverse "
            f"gap and the time a phonon takes to leave the probe, max(width, xi)/c_s = "
            f"{fmt(info['leave_time'] * 1e3)} ms ({', '.join(parts)}; both should be "
            f">= {MIN_CROSSING_PHASE:g}); for the estimate, add switching = \"crossing\" "
            "(the coupling on while the probe is inside condensate.size) and run "
            "'probe transit', or give a window or Gaussian switching (switching = "
            "\"window\" or \"gaussian\") to 'probe transit'"]


#: ``trajectory.stationary_kind`` -> the checks of the path, in the order
#: their sentences appear; each takes (condensate, trajectory, info) with
#: ``info`` the ``transit_summary`` (None where it does not apply)
PATH_CHECKS = {
    "circular": (circle_leaves_region,),
    "inertial": (starts_outside, never_crosses, transit_duration, transit_first_order,
                 short_transit),
}


def path_warnings(condensate, probe, trajectory, result):
    """Sentences on the path against the uniform region (``condensate.size``):
    a circle reaching beyond it, a straight path starting outside it or
    missing it, and the duration of a straight transit through it with the
    expected numbers of transitions."""
    if getattr(condensate, "size", None) is None or trajectory is None:
        return []
    checks = PATH_CHECKS.get(getattr(trajectory, "stationary_kind", None), ())
    info = transit_summary(condensate, trajectory, result) if checks else None
    if info is not None:
        # the time a phonon takes to leave the probe (its size or the
        # healing length, crossed at the sound speed)
        size = max(float(getattr(probe, "width", 0.0) or 0.0), condensate.healing_length)
        info = {**info, "leave_time": size / condensate.sound_speed}
    return [s for check in checks for s in check(condensate, trajectory, info)]
