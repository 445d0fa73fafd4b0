"""The passage of a probe through a trapped cloud, in the local-density
picture.

Along a path ``x(t)`` through a Thomas-Fermi cloud (``probe.gas.trap``) the
rates at time ``t`` are those of the uniform gas at the local density
``n(x(t))`` (local mu, c, xi, coupling reductions and, for a detector built
from atoms, its local gap and couplings) at the probe's instantaneous speed
(A. Zambelli, L. Pitaevskii, D. M. Stamper-Kurn, S. Stringari, PRA 61,
063608 (2000) for the local-density picture of a trapped gas's response).
The populations then follow the rate (Pauli master) equation

    dp_e/dt = Gamma_up (1 - p_e) - Gamma_down p_e,      p_e(t_0) = 0,

integrated exactly for rates that are constant over each time step (their
average over the step: second order in the step).  Its first-order limit is
``P_up = int Gamma_up dt``; with constant rates it has the closed form
``p_ss (1 - exp(-(Gamma_up + Gamma_down) t))``.  A pure-dephasing detector
accumulates ``Lambda = int gamma_phi dt`` and the contrast ``exp(-Lambda)``.

Which of these a passage reports follows from the outputs the probe model
declares (``up_rate``/``down_rate``, ``dephasing_rate``).
"""
from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np
from probe import constants as sc

from probe.engines.stationary import MAX_SPEED_OVER_C, inertial_rates
from probe.engines.stationary.local import local_inertial_rates
from probe.errors import InputError
from probe.quantities import QUANTITIES

HBAR = sc.hbar
KB = sc.k

#: first order is trusted while int Gamma dt stays below this (common practice)
FIRST_ORDER_LIMIT = 0.1
#: the local-density picture needs the density to change little over a
#: healing length and over the resonant wavelength: |grad n|/n times the
#: length below this (common practice: a tenth)
GRADIENT_LIMIT = 0.1
#: ... and the rates to change little over the bath's correlation time
#: (~1/Omega and xi/c): |d ln Gamma/dt| times it below this
RATE_CHANGE_LIMIT = 0.1
#: the 3D gas is a condensate well below T_c (as for the uniform gas)
TEMPERATURE_OVER_TC_LIMIT = 0.5
#: kinds of local output that are 0 where there is no gas (nothing happens)
_ZERO_WITHOUT_GAS = frozenset(("rate", "force", "power"))


@dataclass
class PassageResult:
    """A passage, SI units.  Arrays over the time samples: ``time``,
    ``position`` (M, d), ``density``, ``sound_speed``, ``mach``, ``gap``,
    ``up_rate``, ``down_rate``, ``excited_population``, ``dephasing_rate``
    (those the detector has).  Totals: ``excited_probability`` (rate
    equation at the end), ``first_order_up_probability`` (int Gamma_up dt),
    ``decoherence_exponent`` and ``contrast`` (dephasing detectors),
    ``passage_duration``, ``max_mach`` and the ``warnings``."""

    model: str
    time: np.ndarray
    position: np.ndarray
    density: np.ndarray
    sound_speed: np.ndarray
    mach: np.ndarray
    speed: np.ndarray
    samples: dict = field(default_factory=dict)
    totals: dict = field(default_factory=dict)
    warnings: list = field(default_factory=list)

    @property
    def passage_duration(self):
        return float(self.time[-1] - self.time[0])

    @property
    def max_mach(self):
        return float(np.max(self.mach))

    def __getattr__(self, name):
        for store in ("totals", "samples"):
            values = self.__dict__.get(store, {})
            if name in values:
                return values[name]
        raise AttributeError(name)

    def to_dict(self):
        out = {"model": self.model, "passage_duration": self.passage_duration,
               "max_mach": self.max_mach}
        out.update({k: _plain(v) for k, v in self.totals.items()})
        out["warnings"] = list(self.warnings)
        return out

    def _repr_html_(self):
        """A table in a notebook (``probe.notebook``)."""
        from probe.notebook import result_html
        return result_html(self, "Passage")


def _plain(x):
    x = float(x)
    return x if math.isfinite(x) else None


# --- the time window of a path ----------------------------------------------
def straight_crossing(trap, start, direction, speed):
    """Times (s) at which the straight path ``start + v direction t`` enters
    and leaves the Thomas-Fermi ellipsoid; InputError naming
    ``trajectory.start`` (with the closest approach in Thomas-Fermi radii)
    when it never enters."""
    d = trap.dimension
    x0 = np.asarray(start, float)[:d] / trap.radii
    u = np.asarray(direction, float)[:d]
    norm = float(np.linalg.norm(np.asarray(direction, float)))
    if norm == 0 or speed <= 0:
        raise InputError("trajectory.speed", "a passage needs a moving probe (speed > 0)")
    v = u / norm * speed / trap.radii
    a, b, c = float(v @ v), 2.0 * float(x0 @ v), float(x0 @ x0) - 1.0
    disc = b * b - 4 * a * c
    if disc <= 0:
        closest = math.sqrt(max(c + 1.0 - b * b / (4 * a), 0.0))
        raise InputError("trajectory.start",
                         f"the straight path never enters the cloud: it passes the "
                         f"centre at {closest:.3g} Thomas-Fermi radii (the cloud's edge "
                         "is at 1); move the start point closer to the centre")
    root = math.sqrt(disc)
    return (-b - root) / (2 * a), (-b + root) / (2 * a)


# --- the local rates ----------------------------------------------------------
def local_rates(trap, probe_at, positions, speeds, rate_function=None, rtol=1e-8):
    """Local-density rates at each sample: ``probe_at(gas)`` gives the probe
    model in the local uniform gas ``gas``.  By default the straight-motion
    rates at the instantaneous speed, all samples at once
    (``local_inertial_rates``); ``rate_function(gas, probe, speed)``, a
    :class:`RateResult` per sample, replaces them (circular motion).
    Outside the cloud (density 0), and in the sliver of the edge where the
    probe outruns the local sound speed by more than the engine's range,
    every rate (force, power) is 0 and the other outputs are NaN.  Returns (density, sound speed, {output: array},
    warnings of the uniform-gas engine at the densest sample)."""
    n = trap.density(positions)
    c = np.zeros(len(n))
    inside = np.flatnonzero(n > 0)
    gases = [trap.local_gas(float(n[i])) for i in inside]
    for i, g in zip(inside, gases):
        c[i] = g.sound_speed
    keep = [(i, g) for i, g in zip(inside, gases)
            if speeds[i] <= MAX_SPEED_OVER_C * g.sound_speed]
    if not keep:
        return n, c, {}, []
    idx, gases = [k[0] for k in keep], [k[1] for k in keep]
    probes = [probe_at(g) for g in gases]
    if rate_function is None:
        rows = local_inertial_rates(gases, probes, [float(speeds[i]) for i in idx], rtol)
    else:
        rows = [_row(rate_function(g, p, float(speeds[i])), p) for i, g, p in
                zip(idx, gases, probes)]
    # where no rate was computed (no gas, or the probe past the engine's
    # range) the rates, forces and powers are 0; what only a gas defines
    # (a gap in the gas, a threshold speed, a temperature) is not a number
    values = {name: np.zeros(len(n)) if QUANTITIES[name].kind in _ZERO_WITHOUT_GAS
              else np.full(len(n), np.nan) for name in rows[0]}
    for i, row in zip(idx, rows):
        for name, value in row.items():
            values[name][i] = value
    densest = idx[int(np.argmax(n[idx]))]
    k = idx.index(densest)
    uniform = inertial_rates(gases[k], probes[k], float(speeds[densest]), rtol=rtol) \
        if rate_function is None else rate_function(gases[k], probes[k], float(speeds[densest]))
    return n, c, values, [f"at the densest point of the path: {w}" for w in uniform.warnings]


def _row(result, probe):
    row = {}
    for name in probe.rate_outputs + ("gap",):
        value = getattr(result, name, None)
        if value is not None:
            row[name] = float(np.asarray(value))
    return row


# --- the rate equation --------------------------------------------------------
def rate_equation(time, up, down):
    """Excited population p_e(t) of dp/dt = up (1 - p) - down p, p(t_0) = 0,
    exact for rates equal to their step average on each step."""
    dt = np.diff(time)
    gu = 0.5 * (up[1:] + up[:-1])
    gd = 0.5 * (down[1:] + down[:-1])
    total = gu + gd
    p = np.zeros(len(time))
    with np.errstate(divide="ignore", invalid="ignore"):
        p_ss = np.where(total > 0, gu / np.where(total > 0, total, 1.0), 0.0)
    decay = np.exp(-total * dt)
    for i in range(len(dt)):
        p[i + 1] = p_ss[i] + (p[i] - p_ss[i]) * decay[i]
    return p


def integral(time, rate):
    """int rate dt by the trapezoid rule on the samples."""
    return float(np.sum(0.5 * (rate[1:] + rate[:-1]) * np.diff(time)))


def passage(trap, probe_at, path, times, rate_function=None, rtol=1e-8):
    """The passage along ``path`` (a trajectory: ``position(t)``,
    ``velocity(t)``) sampled at ``times`` (s): local rates (see
    :func:`local_rates`), populations and totals (:class:`PassageResult`)."""
    times = np.asarray(times, float)
    if times.ndim != 1 or times.size < 3 or np.any(np.diff(times) <= 0):
        raise InputError("numerics.passage_samples", "a passage needs at least 3 "
                                                       "increasing time samples")
    pos = _pad(np.asarray(path.position(times), float), trap.dimension)
    speed = np.linalg.norm(np.asarray(path.velocity(times), float), axis=-1)
    n, c, values, warns = local_rates(trap, probe_at, pos, speed, rate_function, rtol)
    with np.errstate(divide="ignore", invalid="ignore"):
        mach = np.where(c > 0, speed / np.where(c > 0, c, 1.0), np.inf)
    model = probe_at(trap.centre).name
    res = PassageResult(model, times, pos, n, c, mach, speed, samples=values)
    if "up_rate" in values:
        p = rate_equation(times, values["up_rate"], values["down_rate"])
        values["excited_population"] = p
        res.totals["excited_probability"] = float(p[-1])
        res.totals["first_order_up_probability"] = integral(times, values["up_rate"])
    if "dephasing_rate" in values:
        lam = integral(times, values["dephasing_rate"])
        res.totals["decoherence_exponent"] = lam
        res.totals["contrast"] = math.exp(-lam)
    res.warnings = warns + passage_warnings(trap, res)
    return res


def _pad(x, d):
    x = np.atleast_2d(x)
    if x.shape[-1] < d:
        x = np.concatenate([x, np.zeros(x.shape[:-1] + (d - x.shape[-1],))], axis=-1)
    return x[..., :d]


# --- validity of the local-density picture ------------------------------------
def _fraction_text(mask, res, most=3):
    """'over 12 % of the passage (t = 1.2 .. 3.4 ms)', each stretch of the
    passage where ``mask`` holds named ('t = -4.5 .. -3.1 ms and 3.1 .. 4.5
    ms'; beyond ``most`` stretches, their number and where they lie)."""
    t = res.time
    weights = np.gradient(t)
    frac = float(np.sum(weights[mask]) / np.sum(weights))
    flags = np.concatenate([[False], np.asarray(mask, bool), [False]])
    starts = np.flatnonzero(~flags[:-1] & flags[1:])
    ends = np.flatnonzero(flags[:-1] & ~flags[1:]) - 1
    if len(starts) > most:
        return (f"over {100 * frac:.3g} % of the passage ({len(starts)} stretches "
                f"between t = {t[starts[0]] * 1e3:.4g} and {t[ends[-1]] * 1e3:.4g} ms)")
    spans = [f"{t[a] * 1e3:.4g} .. {t[b] * 1e3:.4g}" for a, b in zip(starts, ends)]
    return f"over {100 * frac:.3g} % of the passage (t = {' and '.join(spans)} ms)"


def _gradient_warnings(trap, res):
    out = []
    inside = res.density > 0
    grad = np.linalg.norm(trap.density_gradient(res.position), axis=-1)
    with np.errstate(divide="ignore", invalid="ignore"):
        scale = np.where(inside, grad / np.where(inside, res.density, 1.0), 0.0)
        xi = np.where(inside, HBAR / (trap.gas.mass * np.where(res.sound_speed > 0,
                                                                res.sound_speed, 1.0)), 0.0)
    edge = inside & (xi * scale > 1.0)
    bad = inside & (xi * scale > GRADIENT_LIMIT) & ~edge
    if np.any(bad):
        out.append(f"the density changes by more than {GRADIENT_LIMIT:g} of itself over "
                   f"a healing length {_fraction_text(bad, res)}: the local-density "
                   "picture is approximate there")
    if np.any(edge):
        out.append(f"the probe is within a healing length of the Thomas-Fermi edge "
                   f"{_fraction_text(edge, res)}: there the Thomas-Fermi profile and "
                   "the local-density picture fail; the rates shown are those of the "
                   "local density all the same")
    gap = res.samples.get("gap")
    if gap is not None:
        k_res = _resonant_wavenumber(trap, res, gap)
        wave = inside & (2 * math.pi * scale / np.where(k_res > 0, k_res, np.inf)
                         > GRADIENT_LIMIT)
        if np.any(wave & ~edge):
            out.append(f"the density changes by more than {GRADIENT_LIMIT:g} of itself "
                       f"over the resonant phonon wavelength {_fraction_text(wave, res)}")
    return out


def _resonant_wavenumber(trap, res, gap):
    """k with w_k = Omega in the local gas (Bogoliubov: hbar w = sqrt(e (e + 2 mu)))."""
    m = trap.gas.mass
    mu = m * res.sound_speed ** 2
    e = -mu + np.sqrt(mu * mu + (HBAR * gap) ** 2)
    return np.sqrt(2 * m * np.maximum(e, 0.0)) / HBAR


def _rate_change_warnings(trap, res):
    """Rates that change by more than RATE_CHANGE_LIMIT of themselves over the
    bath's correlation time max(1/Omega, xi/c) (xi/c = hbar/(m c^2))."""
    c = res.sound_speed
    gap = res.samples.get("gap")
    inside = c > 0
    with np.errstate(divide="ignore", invalid="ignore"):
        tau = np.where(inside, HBAR / (trap.gas.mass * np.where(inside, c, 1.0) ** 2), 0.0)
        if gap is not None:
            tau = np.maximum(tau, np.where(gap > 0, 1.0 / np.where(gap > 0, gap, 1.0), 0.0))
    out = []
    for name in ("up_rate", "down_rate", "dephasing_rate"):
        rate = res.samples.get(name)
        if rate is None or not np.any(rate > 0):
            continue
        slope = np.abs(np.gradient(rate, res.time))
        big = rate > 1e-6 * np.max(rate)
        with np.errstate(divide="ignore", invalid="ignore"):
            change = np.where(big, tau * slope / np.where(big, rate, 1.0), 0.0)
        bad = inside & big & (change > RATE_CHANGE_LIMIT)
        if np.any(bad):
            out.append(f"the {name.replace('_', ' ')} changes by more than "
                       f"{RATE_CHANGE_LIMIT:g} of itself over the bath's correlation time "
                       f"{_fraction_text(bad, res)}: a local rate is then only an estimate")
    return out


def _edge_sliver_warnings(res):
    """Samples so close to the edge that the local sound speed is below
    1/MAX_SPEED_OVER_C of the probe's speed: their rates are set to 0."""
    sliver = (res.density > 0) & (res.speed > MAX_SPEED_OVER_C * res.sound_speed)
    if not np.any(sliver):
        return []
    return [f"within a sliver of the cloud's edge the probe is faster than "
            f"{MAX_SPEED_OVER_C:g} local sound speeds {_fraction_text(sliver, res)}: "
            "the rates there are taken as 0 (the local density vanishes)"]


def _temperature_warnings(trap, res):
    gas = trap.gas
    if gas.temperature == 0:
        return []
    inside = res.density > 0
    n = np.where(inside, res.density, 1.0)
    if gas.dimension == 3:
        from scipy.special import zeta
        tc = 2 * math.pi * HBAR ** 2 / (gas.mass * KB) * (n / zeta(1.5)) ** (2 / 3)
        what = "the local ideal-gas condensation temperature"
    else:
        tc = HBAR ** 2 * n ** (2 / gas.dimension) / (gas.mass * KB)
        what = "the local degeneracy temperature hbar^2 n^(2/d)/(m k_B)"
    bad = inside & (gas.temperature > TEMPERATURE_OVER_TC_LIMIT * tc)
    if not np.any(bad):
        return []
    return [f"the temperature is above {TEMPERATURE_OVER_TC_LIMIT:g} of {what} "
            f"{_fraction_text(bad, res)} (the outer, dilute part of the cloud): the "
            "Bogoliubov bath there is no model of the thermal cloud"]


def _first_order_warnings(res):
    out = []
    p1 = res.totals.get("first_order_up_probability")
    if p1 is not None and p1 > FIRST_ORDER_LIMIT:
        out.append(f"first order fails for the passage: int Gamma_up dt = {p1:.3g} "
                   f"(> {FIRST_ORDER_LIMIT:g}); the excited probability of the rate "
                   f"equation ({res.totals['excited_probability']:.3g}) is the number to use")
    return out


def passage_warnings(trap, res):
    """Where the local-density picture or first order fails, each with the
    fraction of the passage."""
    return (_gradient_warnings(trap, res) + _rate_change_warnings(trap, res)
            + _edge_sliver_warnings(res) + _temperature_warnings(trap, res)
            + _first_order_warnings(res))
