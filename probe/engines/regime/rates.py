"""The regime checks of a stationary rate result: one small function per
check, run in the order of ``RATE_CHECKS``.

The probe model contributes its own checks through two methods: first
``probe.regime_warnings(condensate, result)`` (its validity, e.g.
Gamma << Omega for a detector with a gap), then, after the checks of the
gas, ``probe.rate_output_warnings(condensate, result)`` (its outputs, e.g.
an undetermined effective temperature).
"""
from __future__ import annotations

import math

import numpy as np
from probe import constants as sc

from probe.engines.regime.limits import (GAS_PARAMETER_1D_LIMIT, GAS_PARAMETER_2D_LIMIT,
                                         GAS_PARAMETER_3D_LIMIT, PHONON_KXI_LIMIT,
                                         SPEED_OVER_C_LIMIT, TEMPERATURE_OVER_TC_LIMIT,
                                         WIDTH_OVER_XI_LIMIT)
from probe.engines.regime.wording import fmt, grid_prefix, largest, lead, temperature_text

HBAR = sc.hbar
KB = sc.k


def model_validity(condensate, probe, result):
    """The probe model's checks of its own validity."""
    return probe.regime_warnings(condensate, result)


def gas_parameter(condensate, probe, result):
    """Diluteness (3D) or weak coupling (2D, 1D) of the gas."""
    d = condensate.dimension
    gp = condensate.gas_parameter
    limit = {3: GAS_PARAMETER_3D_LIMIT, 2: GAS_PARAMETER_2D_LIMIT,
             1: GAS_PARAMETER_1D_LIMIT}[d]
    if not gp > limit:
        return []
    what = {3: "the gas is not dilute",
            2: "the 2D gas is not weakly coupled",
            1: "the 1D gas is not weakly coupled (towards the Tonks regime)"}[d]
    return [f"{what}: {condensate.gas_parameter_name} = {fmt(gp)} exceeds "
            f"{limit:g}; Bogoliubov theory is unreliable"]


def reduced_dimension(condensate, probe, result):
    """A quasi-1D or quasi-2D gas needs mu < hbar w_perp."""
    d, mu = condensate.dimension, condensate.chemical_potential
    if d == 3 or condensate.transverse_frequency is None:
        return []
    e_perp = HBAR * condensate.transverse_frequency
    if not mu >= e_perp:
        return []
    return [f"the quasi-{d}D reduction fails: the chemical potential "
            f"mu/h = {fmt(mu / (2 * math.pi * HBAR))} Hz is not below the "
            f"transverse trap frequency w_perp/(2 pi) = "
            f"{fmt(condensate.transverse_frequency / (2 * math.pi))} Hz "
            f"(mu/(hbar w_perp) = {fmt(mu / e_perp)}, must be < 1); "
            "transverse modes are excited"]


def temperature(condensate, probe, result):
    """Thermal depletion (3D: T against T_c) or thermal fluctuations (2D,
    1D: k_B T against mu)."""
    T, mu = condensate.temperature, condensate.chemical_potential
    if not T > 0:
        return []
    if condensate.dimension == 3:
        tc = condensate.critical_temperature
        if not T > TEMPERATURE_OVER_TC_LIMIT * tc:
            return []
        return [f"the gas is too hot for a condensate near T = 0: T = "
                f"{temperature_text(T)} is {fmt(T / tc)} of the ideal-gas "
                f"T_c = {temperature_text(tc)} (limit {TEMPERATURE_OVER_TC_LIMIT} "
                f"T_c); thermal depletion is large"]
    if not KB * T > mu:
        return []
    # Common-practice criterion in low dimensions: phase and density
    # fluctuations grow once k_B T exceeds mu.
    return [f"thermal fluctuations dominate the {condensate.dimension}D gas: k_B T = "
            f"{fmt(KB * T / mu)} mu (T = {temperature_text(T)}, mu/k_B = "
            f"{temperature_text(mu / KB)}; should be k_B T < mu)"]


def _probe_gap(probe):
    """The largest detuning of the probe model's gapped channel (None
    without one)."""
    gapped = [ch.detuning for ch in probe.channels() if ch.gapped]
    return largest(gapped[0]) if gapped else None


def _phonon_reasons(condensate, probe, result):
    """Where the linear spectrum is used at k xi above PHONON_KXI_LIMIT:
    supersonic emission up to the form-factor cutoff (or of every k), the
    resonant wavenumber of a gap, thermal phonons."""
    c, xi, mu = condensate.sound_speed, condensate.healing_length, condensate.chemical_potential
    reasons = []
    speeds = (np.zeros(1) if result.speed is None
              else np.asarray(result.speed, float).ravel())
    sup = speeds >= c
    if np.any(sup):
        vmax = float(np.max(speeds[sup]))
        if probe.width > 0:
            kxi_cut = xi / probe.width
            if kxi_cut > PHONON_KXI_LIMIT:
                reasons.append(
                    f"{lead(sup)}supersonic motion (v = {fmt(vmax / c)} c) emits up to the "
                    f"form-factor cutoff k xi ~ xi/width = {fmt(kxi_cut)}")
        else:
            reasons.append(
                f"{lead(sup)}supersonic motion (v = {fmt(vmax / c)} c) of a point probe "
                "emits phonons of every wavenumber")
    gap = _probe_gap(probe)
    if gap is not None and not np.all(sup):
        # largest resonant k: Omega = (c - v) k
        kxi = np.where(sup, 0.0, gap * xi / (c - np.where(sup, 0.0, speeds)))
        hot = kxi > PHONON_KXI_LIMIT
        if np.any(hot):
            reasons.append(
                f"{lead(hot)}the resonant wavenumber Omega/(c - v) reaches k xi = "
                f"{fmt(float(np.max(kxi)))} (Omega = "
                f"{fmt(gap / condensate.frequency_unit)} c/xi)")
    if condensate.temperature > 0:
        kxi_th = KB * condensate.temperature / mu   # thermal phonons: hbar c k ~ k_B T
        if kxi_th > PHONON_KXI_LIMIT:
            reasons.append(f"thermal phonons reach k xi ~ k_B T/mu = {fmt(kxi_th)}")
    return reasons


def phonon_dispersion(condensate, probe, result):
    """The phonon dispersion where the spectrum's curvature matters."""
    if condensate.dispersion.name != "phonon":
        return []
    reasons = _phonon_reasons(condensate, probe, result)
    if not reasons:
        return []
    return ["the phonon dispersion w = c k is used where the Bogoliubov "
            f"curvature matters (relevant k xi above {PHONON_KXI_LIMIT}): "
            + "; ".join(reasons) + "; use dispersion = \"bogoliubov\""]


def probe_width(condensate, probe, result):
    """A probe much wider than the healing length (informational)."""
    xi = condensate.healing_length
    if not probe.width > WIDTH_OVER_XI_LIMIT * xi:
        return []
    return [f"the probe is far from point-like: width {fmt(probe.width * 1e6)} um "
            f"is {fmt(probe.width / xi)} healing lengths (more than "
            f"{WIDTH_OVER_XI_LIMIT:g}); its form factor cuts off the response "
            "(informational)"]


def fast_motion(condensate, probe, result):
    """Speeds far above sound."""
    c = condensate.sound_speed
    speed = largest(result.speed)
    if speed is None or not speed > SPEED_OVER_C_LIMIT * c:
        return []
    where = grid_prefix(np.asarray(result.speed, float) > SPEED_OVER_C_LIMIT * c)
    start = f"{where} the speed exceeds {SPEED_OVER_C_LIMIT:g} c; largest: " if where else ""
    return [f"{start}the speed {fmt(speed)} m/s is {fmt(speed / c)} times the sound speed "
            f"(more than {SPEED_OVER_C_LIMIT:g}); the weak-perturbation, "
            "uniform-gas picture of the probe is doubtful"]


def model_outputs(condensate, probe, result):
    """The probe model's notes on its outputs."""
    return probe.rate_output_warnings(condensate, result)


#: the checks of a stationary result, in the order their sentences appear;
#: each takes (condensate, probe, result) and returns a list of sentences
RATE_CHECKS = (model_validity, gas_parameter, reduced_dimension, temperature,
               phonon_dispersion, probe_width, fast_motion, model_outputs)


def accuracy_warnings(result, rtol):
    """Name the rates whose error estimate is above the requested rtol."""
    out = []
    for name, field in (("up rate", "up_rate"), ("down rate", "down_rate"),
                        ("emission rate", "emission_rate")):
        rate = getattr(result, field, None)
        err = getattr(result, field + "_error", None)
        if rate is None or err is None:
            continue
        r = np.asarray(rate, float)
        e = np.broadcast_to(np.asarray(err, float), r.shape)
        with np.errstate(divide="ignore", invalid="ignore"):
            rel = np.where(r > 0, e / r, 0.0)
        mask = rel > rtol
        if not np.any(mask):
            continue
        out.append(
            f"{lead(mask)}the {name} is known only to a relative accuracy of "
            f"{fmt(float(np.max(rel)))} (its error estimate), worse than the "
            f"requested rtol = {rtol:g}: rounding costs digits within about "
            "1e-8 (relative) of a threshold speed, and circular sums stop at "
            "about 1e-10 (the accuracy of their Bessel functions)")
    return out


def regime_warnings(condensate, probe, result, rtol=None):
    """Sentences saying where the calculation leaves its regime of validity.

    Parameters
    ----------
    condensate : :class:`probe.gas.Condensate`
    probe : a probe model (:mod:`probe.detectors`)
    result : :class:`probe.engines.results.RateResult` of a rate calculation
        for them (or an object with its ``speed``, ``gap``, ``up_rate`` and
        ``down_rate``)
    rtol : the requested relative accuracy; where given, rates whose error
        estimate is larger are named

    Returns
    -------
    list of str (empty when nothing is violated)
    """
    out = [s for check in RATE_CHECKS for s in check(condensate, probe, result)]
    if rtol is not None:
        out += accuracy_warnings(result, rtol)
    return out
