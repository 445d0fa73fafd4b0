"""Checks of the stationary engine: inputs against the range it is checked
over, speeds at a singular threshold, error estimates, the work of a
circular sum, and the guard against NaN, infinite or negative outputs.
Each raises an InputError or ModelError naming the configuration key."""
from __future__ import annotations

import math

import numpy as np
from probe import constants as sc

from probe.engines.stationary.circular import TOO_MANY_HARMONICS, circular_works
from probe.engines.stationary.limits import (AT_THRESHOLD, CUT, EPS, GAP_RANGE,
                                             MAX_HARMONICS, MAX_RELATIVE_ERROR,
                                             MAX_SPEED_OVER_C, MIN_RADIUS_OVER_XI,
                                             RTOL_RANGE, SECONDS_PER_BESSEL)
from probe.errors import InputError, ModelError, shown
from probe.quantities import guarded_names


def at_points(mask):
    """'at N of M grid points, ' for an array mask, '' for a scalar."""
    mask = np.asarray(mask)
    if mask.size <= 1:
        return ""
    return f"at {int(np.count_nonzero(mask))} of {mask.size} grid points, "


def check_array(name, x, allow_zero=True):
    """``x`` as a float array; InputError unless a real number or a regular
    array of them (no strings, booleans, complex numbers or ragged lists),
    finite and >= 0 (> 0)."""
    what = "a real number or an array of real numbers"
    try:
        raw = np.asarray(x)
    except (TypeError, ValueError):
        raise InputError(name, f"must be {what}, got {shown(x)}") from None
    if raw.dtype.kind == "c":
        raise InputError(name, f"must be real (a complex value would lose its "
                               f"imaginary part), got {shown(x)}")
    if raw.dtype.kind not in "iuf":
        try:
            if raw.dtype.kind != "O":
                raise TypeError
            raw = raw.astype(float)
        except (TypeError, ValueError):
            raise InputError(name, f"must be {what}, got {shown(x)}") from None
    x = raw.astype(float)
    if not np.all(np.isfinite(x)):
        raise InputError(name, f"must be finite, got {shown(x)}")
    if np.any(x < 0) or (not allow_zero and np.any(x == 0)):
        raise InputError(name, f"must be {'>= 0' if allow_zero else '> 0'}, got {shown(x)}")
    return x


def check_rtol(rtol, low=RTOL_RANGE[0], why=""):
    """``rtol`` as a float; InputError ("numerics.rtol") unless a real number
    in [low, RTOL_RANGE[1]] (``why``: the reason for a raised lower end)."""
    lo, hi = low, RTOL_RANGE[1]
    if isinstance(rtol, (bool, np.bool_)) or not isinstance(rtol, (int, float, np.integer,
                                                                     np.floating)):
        raise InputError("numerics.rtol", f"must be a number between {lo:g} and {hi:g} "
                                          f"(e.g. 1e-8), got {shown(rtol)}")
    value = float(rtol)
    if not lo <= value <= hi:
        raise InputError("numerics.rtol", f"must be between {lo:g} and {hi:g} (e.g. 1e-8), "
                                          f"got {value!r}{why}")
    return value


def broadcast_shape(named):
    """The broadcast shape of ``(key, array)`` pairs; InputError naming the
    first key whose shape does not broadcast with those before it."""
    shape, seen = (), []
    for key, arr in named:
        try:
            shape = np.broadcast_shapes(shape, np.shape(arr))
        except ValueError:
            raise InputError(key, f"has shape {np.shape(arr)}, which does not broadcast "
                                  f"with {' and '.join(seen)} (shape {shape})") from None
        seen.append(key)
    return shape


def range_checks(condensate, speed, gaps=(), radius=None):
    """ModelError where an input leaves the range the engine is checked over
    (MAX_SPEED_OVER_C, GAP_RANGE, MIN_RADIUS_OVER_XI); ``gaps`` are
    ``(key, detuning)`` pairs of the gapped channels."""
    c, xi, w0 = condensate.sound_speed, condensate.healing_length, condensate.frequency_unit
    v = np.asarray(speed, float) / c
    # a speed given as exactly MAX_SPEED_OVER_C c_s comes back from SI with
    # the rounding of c: a few ulps over the limit are the limit
    bad = v > MAX_SPEED_OVER_C * (1 + 8 * EPS)
    if np.any(bad):
        raise ModelError(
            "trajectory.speed",
            f"{at_points(bad)}the speed {np.max(v):.4g} c_s ({np.max(v) * c:.4g} m/s) is "
            f"above the largest the engine handles, {MAX_SPEED_OVER_C:g} c_s "
            f"({MAX_SPEED_OVER_C * c:.4g} m/s)")
    for key, gap in gaps:
        _gap_range_check(key, np.asarray(gap, float) / w0, w0)
    if radius is not None:
        R = np.asarray(radius, float) / xi
        if np.any(R < MIN_RADIUS_OVER_XI):
            raise ModelError(
                "trajectory.radius",
                f"{at_points(R < MIN_RADIUS_OVER_XI)}the radius {np.min(R):.4g} xi is "
                f"below {MIN_RADIUS_OVER_XI:g} xi: such a circle is a point; the "
                "rates approach those of a probe at rest (kind = \"linear\", "
                "speed 0)")


def check_gaps(condensate, key, gap):
    """ModelError naming ``key`` where a gap (rad/s) leaves GAP_RANGE, the
    range of gaps the rates are computed for (as ``range_checks``)."""
    w0 = condensate.frequency_unit
    _gap_range_check(key, np.asarray(gap, float) / w0, w0)


def _gap_range_check(key, W, w0):
    lo, hi = GAP_RANGE
    if np.any(W < lo):
        raise ModelError(
            key,
            f"{at_points(W < lo)}the gap Omega = {np.min(W):.4g} c/xi "
            f"({np.min(W) * w0:.4g} rad/s) is below {lo:g} c/xi: there the "
            "two-level probe is the structureless one (up and down rates "
            "agree); use probe.model = \"density\"")
    if np.any(W > hi):
        raise ModelError(
            key,
            f"{at_points(W > hi)}the gap Omega = {np.max(W):.4g} c/xi "
            f"({np.max(W) * w0:.4g} rad/s) is above {hi:g} c/xi, where the "
            "resonant k xi exceeds 1e6 and the contact-coupled Bogoliubov "
            "gas is no model")


def threshold_checks(condensate, gapped, vv, WW, width=0.0):
    """ModelError at a speed where a rate is singular: exactly (within
    rounding, AT_THRESHOLD) at the up threshold in 1D (the rate diverges as
    1/sqrt(v - v_th): the two up-window edges merge, a caustic) and 2D (the up
    rate jumps from 0 to a finite value), at the sound speed for a 1D channel
    without detuning (1/sqrt(v - c)) and for the 1D phonon dispersion with a
    point probe (``width`` 0, in healing lengths): there the resonant
    wavenumber Omega/|v - c| runs off to infinity, where a probe's form
    factor exp(-k^2 s^2) removes it, so that with a width the rate is finite
    and continuous through v = c."""
    d = condensate.dimension
    if d == 3:
        return
    v = np.asarray(vv, float).ravel()
    W = np.asarray(WW, float).ravel()
    if gapped:
        _gapped_threshold_check(condensate.dispersion, d, v, W, float(np.max(width)))
    elif d == 1:
        near = np.abs(v - 1.0) <= AT_THRESHOLD
        if np.any(near):
            why = ("the 1D emission rate is zero below the sound speed and "
                   "diverges as 1/sqrt(v - c) above it"
                   if condensate.dispersion.bounded_windows
                   else "with the 'phonon' dispersion every wavenumber is "
                   "resonant at the sound speed")
            raise ModelError(
                "trajectory.speed",
                f"{at_points(near)}the speed is the sound speed (to within rounding): "
                f"{why}, so at v = c it is undefined; give another speed")


def _gapped_threshold_check(disp, d, v, W, width):
    if disp.bounded_windows:
        vt, _ = disp.threshold(W)
        near = np.abs(v - vt) <= AT_THRESHOLD * vt
        how = {1: "the 1D up rate diverges as 1/sqrt(v - v_th) there (the "
                  "two edges of the resonant window merge)",
               2: "the 2D up rate jumps there from 0 to a finite value"}[d]
        if np.any(near):
            i = int(np.argmax(near))
            raise ModelError(
                "trajectory.speed",
                f"{at_points(near)}the speed {v[i]:.15g} c_s is the up-transition "
                f"threshold speed v_th = {vt[i]:.15g} c_s (to within "
                f"{AT_THRESHOLD:g} relative, the rounding of both): {how}, so "
                "the rate is undefined; give a speed further from v_th")
    elif d == 1 and width == 0:
        near = np.abs(v - 1.0) <= AT_THRESHOLD
        if np.any(near):
            raise ModelError(
                "trajectory.speed",
                f"{at_points(near)}with the 'phonon' dispersion in 1D a point probe's "
                "rates diverge as (v - c)^-2 at the sound speed, and the speed "
                "is the sound speed (to within rounding); give another "
                "speed, the probe a width or use 'bogoliubov'")


def error_check(name, value, error, key="trajectory.speed"):
    """ModelError where a rate's error estimate exceeds MAX_RELATIVE_ERROR
    of the rate (near a caustic rounding leaves no reliable digits)."""
    val = np.asarray(value, float)
    err = np.asarray(error, float)
    with np.errstate(divide="ignore", invalid="ignore"):
        rel = np.where(val > 0, err / val, 0.0)
    bad = rel > MAX_RELATIVE_ERROR
    if np.any(bad):
        raise ModelError(
            key,
            f"{at_points(bad)}the {name} cannot be computed reliably here: rounding "
            f"leaves it with a relative error of {np.max(rel):.2g} (more than "
            f"{MAX_RELATIVE_ERROR:g}); this happens within about "
            f"{EPS / MAX_RELATIVE_ERROR:.0e} (relative) of a speed where the "
            "rate diverges; give a speed further from it")


def guard(condensate, probe, res):
    """Never hand back a silent NaN, inf or negative rate: a ModelError
    under the motion's key ``trajectory.speed``, naming the quantity and the
    inputs (in the gas's units), instead.  Which quantities are guarded is
    declared in the quantity registry."""
    for name in guarded_names():
        value = getattr(res, name, None)
        if value is None:
            continue
        a = np.asarray(value, float)
        bad = ~np.isfinite(a) | (a < 0)
        if np.any(bad):
            what = "not finite" if not np.all(np.isfinite(a)) else "negative"
            w0 = condensate.frequency_unit
            inputs = (f"speed {_max_of(res.speed) / condensate.sound_speed:.4g} c_s, "
                      f"temperature {sc.k * condensate.temperature / condensate.energy_unit:.4g} "
                      f"mu/k_B, width {probe.width / condensate.healing_length:.4g} xi")
            if res.gap is not None:
                inputs += f", gap {_max_of(res.gap) / w0:.4g} c/xi"
            raise ModelError(
                "trajectory.speed",
                f"{at_points(bad)}the {name.replace('_', ' ')} is {what} "
                f"({float(a[bad].flat[0])!r}) "
                f"for {inputs}: the inputs are outside the range the engine can "
                "represent; no number is returned")


def _max_of(x):
    if x is None:
        return float("nan")
    return float(np.max(np.asarray(x, float)))


def _clearly_cheap(gas, R, v, W, s, limit):
    """A few-flop upper estimate of the circular sum's work, per point
    (arrays): True when it is far below the limits, so that
    ``circular_works`` is not needed.  Harmonics reach about
    omega(q_hi) R/v with q_hi beyond the window edge (q^2/2 > v q + W for
    Bogoliubov), plus the negative ones (W R/v) and Kapteyn's tail, which is
    short (a few hundred terms) unless v is near c; each 3D harmonic costs
    about 2 q R + 48 Bessel terms."""
    qcut = math.sqrt(CUT) / s if s > 0 else math.inf
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        if gas.disp.bounded_windows:
            q_hi = v + np.sqrt(v * v + 2 * W) + 2
        else:
            q_hi = np.where(v < 1, W / np.where(v < 1, 1 - v, 1.0) + 2, math.inf)
        q_hi = np.minimum(q_hi, qcut)
        fin = np.isfinite(q_hi)
        w_hi = gas.disp.omega(np.where(fin, q_hi, 0.0))
        harmonics = R * (w_hi + 2 * W) / v + 2 * R * q_hi + 2000
        cheap = fin & ~((0.9 < v) & (v < 1.1)) & (harmonics <= 2e5)
        if gas.d == 3:
            cheap &= harmonics * (2 * q_hi * R + 48) < 0.01 * limit
    return cheap


def work_check(gas, R, v, W, s, rtol, limit, npoints):
    """ModelError before a circular sum predicted to need more than ``limit``
    Bessel-function evaluations or more harmonics than the kernel sums
    (arrays R, v > 0, W over points: the first such point is named)."""
    R, v, W = (np.asarray(a, float).ravel() for a in np.broadcast_arrays(R, v, W))
    # a supersonic point probe in the phonon spectrum: the kernel itself
    # reports the divergence
    diverges = (v >= 1) & (gas.disp.bounded_windows is False) & (s == 0)
    # the kernel's running counts still stop runaways of the cheap ones
    todo = np.nonzero(~diverges & ~_clearly_cheap(gas, R, v, W, s, limit))[0]
    if todo.size == 0:
        return
    counts, work = circular_works(gas, R[todo], v[todo], W[todo], s, rtol)
    bad = ~np.isfinite(counts) | (counts > MAX_HARMONICS) | (work > limit)
    if not bad.any():
        return
    j = int(np.nonzero(bad)[0][0])
    R, v, harmonics, evals = R[todo[j]], v[todo[j]], counts[j], work[j]
    where = f"at radius {R:.4g} xi and speed {v:.4g} c_s" + (
        " (one of the grid points)" if npoints > 1 else "")
    if not math.isfinite(harmonics) or harmonics > MAX_HARMONICS:
        raise ModelError(
            "trajectory.radius",
            f"{where} the circular sum needs about {harmonics:.3g} harmonics "
            f"(angular frequency v/R = {v / R:.4g} c/xi), more than the 2e6 "
            "the engine sums; " + TOO_MANY_HARMONICS)
    if evals > limit:
        raise ModelError(
            "trajectory.radius",
            f"{where} the circular sum needs about {evals:.3g} Bessel-function "
            f"evaluations over {harmonics:.3g} harmonics (about "
            f"{evals * SECONDS_PER_BESSEL:.0f} s), more than the limit of "
            f"{limit:.3g}; "
            + TOO_MANY_HARMONICS + "; from Python, "
            "circular_rates(..., max_bessel_evaluations=...) raises the limit")
