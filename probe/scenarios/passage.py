"""Passages of a scenario: the probe's path through the cloud, sampled in
time, with the local-density rates and the rate equation of
:func:`probe.engines.passage.passage`.

The cloud is the scenario's harmonic trap (a Thomas-Fermi cloud,
``condensate.trap = "harmonic"``) or, for a uniform gas with ``size``, the
box: the gas at its one density within the ball (disk, segment) of radius
``size`` about the origin and no gas outside (:class:`probe.gas.trap.UniformBox`).  The time
window of a passage follows from the path:

- a straight path (``kind = "linear"``) is the line ``x = start + v t``
  along ``direction``; the passage runs from where it enters the cloud to
  where it leaves it (``t`` on the path's clock: negative before ``start``
  when ``start`` lies inside the cloud);
- a circle runs from t = 0 for ``turns`` turns, with the rates of circular
  motion in the local gas;
- a spline runs over its waypoints' time span.

``numerics.passage_samples`` times are spread evenly over the window.
"""
from __future__ import annotations

import math

import numpy as np

from probe.errors import InputError
from probe.gas.trap import EDGE_TOLERANCE, UniformBox
from probe.scenarios.limits import fmt_time
from probe.scenarios.path import TURNS
from probe.scenarios.values import quantity

#: a sample counts as outside the cloud beyond this multiple of its edge
#: (rounding of the entry and exit times of a straight crossing)
#: the local density counts as constant along a circle within this fraction
CONSTANT_DENSITY = 1e-9
#: a straight crossing's window is widened by this fraction of itself
WINDOW_MARGIN = 1e-12


#: the totals of a passage for a model that declares each rate: the rate
#: equation's excited probability and its first order (up and down rates),
#: the decoherence exponent and contrast (a dephasing rate), the expected
#: number of emitted phonons (an emission rate, first order)
TOTALS = (("up_rate", ("excited_probability", "first_order_up_probability")),
          ("dephasing_rate", ("decoherence_exponent", "contrast")),
          ("emission_rate", ("emitted_phonons",)))


def passage_outputs(probe):
    """The results of a passage with the probe model ``probe``: its
    duration, the largest Mach number and the totals of :data:`TOTALS` for
    the rates the model declares (``rate_outputs``)."""
    out = ["passage_duration", "max_mach"]
    for rate, names in TOTALS:
        if rate in probe.rate_outputs:
            out += names
    return out


def cloud_of(scenario):
    """The cloud a passage goes through: the harmonic trap, or the box of a
    uniform gas with ``size``; InputError for a uniform gas without it."""
    if scenario.trap is not None:
        return scenario.trap
    if scenario.condensate.size is None:
        raise InputError("condensate.trap", "a passage goes through a cloud: give "
                                            "trap = \"harmonic\" with trap_frequencies "
                                            "and atom_number (or the peak density), or "
                                            "the radius of a box as size = \"50 um\"")
    return UniformBox(scenario.condensate)


def straight_window(path, cloud):
    """``(t_in, t_out)`` of a straight path through the cloud, widened by
    ``WINDOW_MARGIN`` of itself so that the end samples lie on or just
    outside the edge (a density of exactly 0 at a Thomas-Fermi edge, not a
    rounding remainder)."""
    if not path.speed_value > 0:
        raise InputError("trajectory.speed", "a passage needs a moving probe (speed > 0); "
                                             "a probe at rest has the rates of 'probe "
                                             "rates'")
    times = path.times_within(cloud.radii)
    if times is None:
        raise InputError("trajectory.start", "the straight path never enters the cloud: "
                         + cloud.passing_text(path.closest_approach(cloud.radii))
                         + "; move start (or turn direction) towards the centre")
    t_in, t_out = times
    margin = WINDOW_MARGIN * (t_out - t_in)
    return t_in - margin, t_out + margin


def turns(body):
    """``trajectory.turns`` of the ``[trajectory]`` table (default 1), > 0."""
    value = quantity(body, TURNS)
    if not (math.isfinite(value) and value > 0):
        raise InputError(TURNS.dotted, f"must be a number > 0, got {body.get('turns')!r}")
    return value


def passage_window(scenario, cloud):
    """``(t0, t1, rate_function, notes)``: the time window of the passage,
    the local rates (None: straight motion at the instantaneous speed) and
    notes on the choice."""
    path = scenario.trajectory
    kind = scenario.raw["trajectory"]["kind"]
    if kind == "linear":
        return (*straight_window(path, cloud), None, [])
    if kind == "circular":
        t1 = turns(scenario.raw["trajectory"]) * float(path.period)
        return 0.0, t1, _circular_rates(path.radius, scenario.rtol), []
    t0, t1 = path.time_span
    return t0, t1, None, []


def _circular_rates(radius, rtol):
    """The rates of circular motion of ``radius`` in each local gas, one
    engine call per distinct (density, speed)."""
    from probe.engines.stationary import circular_rates

    done = {}

    def rates(gas, probe, speed):
        key = (gas.density, speed)
        if key not in done:
            done[key] = circular_rates(gas, probe, float(radius), speed, rtol=rtol)
        return done[key]
    return rates


def run_passage(scenario):
    """The :class:`probe.engines.passage.PassageResult` of the scenario, with
    the notes on its path and on what the passage leaves aside."""
    from probe.engines.passage import integral, passage

    cloud = cloud_of(scenario)
    t0, t1, rate_function, notes = passage_window(scenario, cloud)
    times = np.linspace(t0, t1, scenario.passage_samples)
    res = passage(cloud, scenario.probe.in_gas, scenario.trajectory, times,
                  rate_function=rate_function, rtol=scenario.rtol)
    if "emission_rate" in res.samples:
        res.totals["emitted_phonons"] = integral(res.time, res.samples["emission_rate"])
    res.totals["max_mach"] = inside_max_mach(res)
    res.window = (float(t0), float(t1))
    res.warnings = (notes + _circle_notes(scenario, res) + outside_warnings(cloud, res)
                    + res.warnings + _ignored_switching(scenario))
    return res


def inside_max_mach(res):
    """The largest Mach number v/c at the samples inside the cloud (density
    > 0; at a Thomas-Fermi edge c -> 0, so it grows with the samples there);
    NaN when no sample is inside."""
    inside = (res.density > 0) & np.isfinite(res.mach)
    return float(np.max(res.mach[inside])) if np.any(inside) else math.nan


def _circle_notes(scenario, res):
    """A circle along which the local density varies."""
    if scenario.raw["trajectory"]["kind"] != "circular":
        return []
    inside = res.density[res.density > 0]
    if inside.size == 0 or np.ptp(inside) <= CONSTANT_DENSITY * inside.max():
        return []
    return [f"the local density varies along the circle (from {inside.min():.4g} to "
            f"{inside.max():.4g} m^-{scenario.condensate.dimension}): each sample has the "
            "rates of unending circular motion in a uniform gas at its local density, an "
            "estimate where the density changes over a turn; a circle centred in an "
            "isotropic trap sees one density"]


def outside_warnings(cloud, res):
    """Samples of the path outside the cloud (where the rates are 0)."""
    x = np.asarray(res.position, float)[..., :cloud.dimension]
    out = np.sum((x / cloud.radii) ** 2, axis=-1) > 1.0 + EDGE_TOLERANCE
    if not np.any(out):
        return []
    frac = np.count_nonzero(out) / out.size
    t = res.time[out]
    return [f"the path leaves the cloud over {100 * frac:.3g} % of the passage "
            f"(t = {fmt_time(t.min())} .. {fmt_time(t.max())}): there is no gas there "
            "and the rates are 0"]


def _ignored_switching(scenario):
    name = scenario.raw["trajectory"].get("switching")
    if name is None:
        return []
    return [f"switching = {name!r} is ignored here: the coupling is on over the whole "
            "passage; 'probe transit' gives the switched transit (in the uniform gas "
            "at the centre)"]


def harmonic_notes(scenario, command):
    """The note of ``probe rates`` and ``probe transit`` (``command``) on a
    harmonic trap: they compute in the uniform gas at the cloud's centre."""
    if scenario.trap is None:
        return []
    d = scenario.condensate.dimension
    return [f"the gas is a harmonic trap: '{command}' computes in the uniform gas at the "
            f"cloud's centre (peak density {scenario.trap.peak_density:.4g} m^-{d}); "
            f"'probe passage {scenario.source or 'CONFIG'}' follows the local density "
            "along the path through the cloud"]


def transit_region_warnings(scenario):
    """A transit of a box (``condensate.size``) whose path is outside it while
    the coupling is on (chi >= 1/2, sampled over the switching's extent; a
    crossing's ramps are centred on the edges, where chi = 1/2)."""
    from probe.scenarios.transit import switching_interval

    size = scenario.condensate.size
    if size is None or scenario.switching is None or scenario.trap is not None:
        return []
    t0, t1 = switching_interval(scenario.switching)
    t = np.linspace(t0, t1, 2001)
    d = scenario.condensate.dimension
    r = np.linalg.norm(np.asarray(scenario.trajectory.position(t), float)[..., :d], axis=-1)
    out = (r > size * (1 + EDGE_TOLERANCE)) & (np.asarray(scenario.switching(t)) > 0.5)
    if not np.any(out):
        return []
    return [f"the path leaves the box (condensate.size = {size * 1e6:.4g} um) while the "
            f"coupling is on (t = {fmt_time(t[out].min())} .. {fmt_time(t[out].max())}, "
            f"up to {r.max() * 1e6:.4g} um from the centre), where the transit still "
            "assumes the uniform gas; switching = \"crossing\" switches the coupling on "
            "only inside"]
