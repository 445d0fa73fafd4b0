"""The SI layer of the stationary engine: SI inputs checked and made
dimensionless, the kernels run per channel of the probe model, their output
turned back into SI rates, combined by the model into its outputs, guarded
and given the regime-of-validity warnings.

With ``A = (kappa/hbar)^2 n`` a dimensionless kernel value ``I`` is the rate
``A xi^-d / (c/xi) * I`` (1/s); an energy moment times ``hbar c/xi`` is a
power (W).
"""
from __future__ import annotations

import math

import numpy as np
from probe import constants as sc

from probe.detectors.base import RateContext
from probe.engines.regime import regime_warnings
from probe.engines.results import RateResult
from probe.engines.stationary.checks import (broadcast_shape, check_array, check_rtol,
                                             error_check, guard, range_checks,
                                             threshold_checks, work_check)
from probe.engines.stationary.circular import circular_kernels
from probe.engines.stationary.gas import kernel_gas
from probe.engines.stationary.inertial import inertial_kernel
from probe.engines.stationary.limits import (BESSEL_ACCURACY, MAX_BESSEL_EVALUATIONS,
                                             ROUNDING, TINY)
from probe.errors import InputError, ModelError

HBAR = sc.hbar

#: smallest rtol straight-motion rates can meet: twice the rounding floor
#: ROUNDING that every estimate carries
RTOL_FLOOR = 2 * ROUNDING

#: processes of a channel with a detuning (up, down) and without (emission,
#: absorption, and the energy moment that gives the power)
_GAPPED = ("up", "down")
_GAPLESS = ("emission", "absorption", "energy")


def _prefactor(cond, coupling):
    """A xi^-d / (c/xi): converts dimensionless integrals to 1/s."""
    try:
        A = (coupling / HBAR) ** 2 * cond.density
        pref = A * cond.healing_length ** (-cond.dimension) / cond.frequency_unit
    except OverflowError:
        pref = math.inf
    if not math.isfinite(pref) or pref <= 0:
        raise ModelError(
            "probe.coupling",
            f"the rate scale (kappa/hbar)^2 n xi^-d / (c/xi) = {pref:.4g} s^-1 "
            f"for kappa = {coupling:.4g} J m^{cond.dimension} and density "
            f"n = {cond.density:.4g} m^-{cond.dimension} is not a finite positive "
            "number; coupling or density is far outside the range of first-order "
            "perturbation theory in a dilute gas")
    return pref


def _channels(probe, gap):
    """The probe model's channels with their detunings checked as arrays."""
    out = []
    for ch in probe.channels(gap):
        det = np.asarray(ch.detuning, float)
        if ch.gapped:
            det = check_array(ch.key, det, allow_zero=False)
        out.append((ch, det))
    return out


def _tiny_floor(value_error):
    """The error estimate of a dimensionless (value, error) pair with the
    absolute floor TINY wherever the value is not zero."""
    val, err = (np.asarray(x, float) for x in value_error)
    return np.where(val != 0, np.maximum(err, TINY), err)


def _shape(x, shape):
    x = np.asarray(x, float).reshape(shape)
    return float(x) if x.ndim == 0 else x


def _si_channel(cond, ch, out, keys=None):
    """Dimensionless kernel output of one channel -> SI (value, error) per
    process: rates in 1/s, the energy moment as a power in W."""
    pref = _prefactor(cond, ch.coupling)
    raw = {}
    for k in keys or (_GAPPED if ch.gapped else _GAPLESS):
        val, err = (np.asarray(x, float) for x in out[k])
        if k == "energy":
            raw["power"] = (val * pref * HBAR * cond.frequency_unit, err * pref)
        else:
            raw[k] = (val * pref, _tiny_floor((val, err)) * pref)
    return raw


def _build_result(condensate, probe, kind, raw, speed, detunings, shape, up_cannot_vanish):
    """RateResult from the SI channel results: the probe model names and
    combines them into its outputs."""
    res = RateResult(kind=kind, model=probe.name, sound_speed=condensate.sound_speed,
                     healing_length=condensate.healing_length,
                     chemical_potential=condensate.chemical_potential)
    ctx = RateContext(kind, condensate, speed, detunings, up_cannot_vanish)
    for name, value in probe.rate_results(raw, ctx).items():
        setattr(res, name, _shape(value, shape))
    res.speed = _shape(speed, shape)
    gapped = [d for d in detunings.values() if np.all(d > 0)]
    if gapped:
        res.gap = _shape(gapped[0], shape)
    return res


def with_regime(condensate, probe, res, rtol=None):
    """Check the result (``guard``) and attach the regime-of-validity
    warnings (no duplicates)."""
    guard(condensate, probe, res)
    for w in regime_warnings(condensate, probe, res, rtol=rtol):
        if w not in res.warnings:
            res.warnings.append(w)
    return res


def inertial_rates(condensate, probe, speed, gap=None, rtol=1e-8):
    """Golden-rule rates for uniform straight motion at ``speed`` (m/s).

    ``speed`` and ``gap`` (rad/s; default the probe's) broadcast together;
    ``rtol`` (the requested relative accuracy) lies in RTOL_RANGE and is at
    least RTOL_FLOOR (below it the rounding floor of the estimates,
    ROUNDING, leaves it unmet at every point: refused).  Bad
    arguments raise InputError under their scenario keys
    (``trajectory.speed``, ``probe.gap``, ``numerics.rtol``).
    Returns a :class:`RateResult` with arrays of the broadcast shape.
    """
    rtol = check_rtol(rtol)
    if rtol < RTOL_FLOOR:
        raise InputError("numerics.rtol",
                         f"= {rtol:g} cannot be met by straight-motion rates: every error "
                         f"estimate carries the rounding of the window edges and sums, "
                         f"{ROUNDING:g} of the rate; give rtol >= {RTOL_FLOOR:g}")
    speed = check_array("trajectory.speed", speed)
    c, w0 = condensate.sound_speed, condensate.frequency_unit
    gas = kernel_gas(condensate, probe)
    channels = _channels(probe, gap)
    range_checks(condensate, speed, [(ch.key, det) for ch, det in channels if ch.gapped])
    shape = broadcast_shape([("trajectory.speed", speed)]
                            + [(ch.key, det) for ch, det in channels])
    vv = np.broadcast_to(speed / c, shape)
    raw, detunings = {}, {}
    for ch, det in channels:
        WW = np.broadcast_to(det / w0, shape)
        threshold_checks(condensate, ch.gapped, vv, WW, gas.s)
        out = inertial_kernel(gas, vv, WW, gas.s, rtol=rtol, energy=not ch.gapped)
        for k in (_GAPPED if ch.gapped else _GAPLESS[:1]):
            error_check(f"{'emission' if k == 'emission' else k} rate", out[k][0], out[k][1])
        raw[ch.label] = _si_channel(condensate, ch, out)
        detunings[ch.label] = WW.ravel() * w0
    return with_regime(condensate, probe, _build_result(
        condensate, probe, "inertial", raw, vv.ravel() * c, detunings, shape,
        up_cannot_vanish=condensate.temperature > 0), rtol=rtol)


def circular_rates(condensate, probe, radius, speed, gap=None, rtol=1e-8,
                   max_bessel_evaluations=MAX_BESSEL_EVALUATIONS):
    """Golden-rule rates on a circle of ``radius`` (m) at ``speed`` (m/s),
    in the plane of a 2D gas or inside a 3D gas.  Arrays broadcast.

    A point whose harmonic sum is predicted (``circular_work``) to need more
    than ``max_bessel_evaluations`` Bessel functions (about 0.4 us each) is
    refused with a ModelError before any work; raise the limit to wait.
    ``rtol`` is at least BESSEL_ACCURACY (1e-12), the accuracy of the sums'
    Bessel functions (a smaller one is refused: it cannot be met)."""
    if condensate.dimension == 1:
        raise InputError("trajectory.kind",
                         "a circular path needs a 2D or 3D gas; this gas is 1D")
    rtol = check_rtol(rtol, low=BESSEL_ACCURACY,
                      why=f"; the circular sums are accurate to about {BESSEL_ACCURACY:g} "
                          "(their Bessel functions), so a smaller rtol cannot be met")
    radius = check_array("trajectory.radius", radius, allow_zero=False)
    speed = check_array("trajectory.speed", speed)
    c, xi, w0 = condensate.sound_speed, condensate.healing_length, condensate.frequency_unit
    gas = kernel_gas(condensate, probe)
    channels = _channels(probe, gap)
    range_checks(condensate, speed, [(ch.key, det) for ch, det in channels if ch.gapped],
                 radius)
    shape = broadcast_shape([("trajectory.radius", radius), ("trajectory.speed", speed)]
                            + [(ch.key, det) for ch, det in channels])
    Rf = np.broadcast_to(radius / xi, shape).ravel()
    vf = np.broadcast_to(speed / c, shape).ravel()
    raw, detunings = {}, {}
    harmonics = np.zeros(Rf.size, dtype=int)
    for ch, det in channels:
        Wf = np.broadcast_to(det / w0, shape).ravel()
        vals, errs, count = _circular_points(gas, Rf, vf, Wf, ch.gapped, rtol,
                                             max_bessel_evaluations)
        harmonics += count
        keys = _GAPPED if ch.gapped else _GAPLESS
        raw[ch.label] = _si_channel(condensate, ch, {k: (vals[k], errs[k]) for k in keys})
        detunings[ch.label] = Wf * w0
    res = _build_result(condensate, probe, "circular", raw, vf * c, detunings, shape,
                        up_cannot_vanish=vf > 0)
    res.radius = _shape(Rf * xi, shape)
    res.harmonics = harmonics.reshape(shape) if shape else int(harmonics[0])
    return with_regime(condensate, probe, res, rtol=rtol)


def _circular_points(gas, Rf, vf, Wf, gapped, rtol, max_bessel_evaluations):
    """The circular kernel on all moving points at once (a probe at rest by
    the inertial kernel): dimensionless values and errors per process,
    harmonics used."""
    n = Rf.size
    keys = _GAPPED if gapped else _GAPLESS
    vals = {k: np.zeros(n) for k in keys}
    errs = {k: np.zeros(n) for k in keys}
    harmonics = np.zeros(n, dtype=int)
    for i in np.nonzero(vf == 0)[0]:
        o = inertial_kernel(gas, np.array([0.0]), np.array([Wf[i]]), gas.s,
                            rtol=rtol, energy=not gapped)
        for k in keys:
            vals[k][i] = o[k][0][0]
            errs[k][i] = o[k][1][0]
    moving = np.nonzero(vf != 0)[0]
    if moving.size:
        work_check(gas, Rf[moving], vf[moving], Wf[moving], float(gas.s), rtol,
                   max_bessel_evaluations, n)
        o = circular_kernels(gas, Rf[moving], vf[moving], Wf[moving], float(gas.s), rtol=rtol,
                             energy=not gapped, max_evaluations=2 * max_bessel_evaluations)
        for k in keys:
            vals[k][moving], errs[k][moving] = o[k]
        harmonics[moving] = o["harmonics"]
    return vals, errs, harmonics
