"""Numerical robustness of the stationary engine at hard parameters.

Every case ends in a finite, non-negative and accurate number, or in a
ModelError that says why there is none: never a silent NaN, inf or negative
rate, and no floating-point warning on the way (RuntimeWarnings are errors
in this module).

Sources named beside the checks:
  [PS]  L. Pitaevskii and S. Stringari, Bose-Einstein Condensation and
        Superfluidity (Oxford, 2016): omega^2 = c^2 k^2 (1 + (k xi)^2/4),
        S(k) = eps_k / (hbar omega_k).
  [KMS] detailed balance of a static detector in a thermal bath (Birrell and
        Davies, Quantum Fields in Curved Space, 1982).
  [GR]  Fermi's golden rule: the rate is a sum over resonant modes; in 1D
        over the roots of k v = D + omega(|k|), each weighted by
        1/|v - v_g|, so where two roots merge (a caustic) it diverges as
        1/sqrt(v - v_th).
Timing is never asserted; the 3D circular cost guard is checked by what it
returns (a ModelError before any sum), not by a clock.
"""
import math
import warnings

import mpmath as mp
import numpy as np
import pytest
from scipy import constants as sc

from probe.engines.stationary import (GAP_RANGE, MAX_SPEED_OVER_C, STATIC_SPEED, circular_rates,
                          inertial_rates)
from probe.errors import ModelError
from probe.detectors import DensityProbe, TwoLevelProbe

from conftest import KAPPA, rb_gas as gas, two_level

pytestmark = pytest.mark.filterwarnings("error::RuntimeWarning")

HBAR, KB = sc.hbar, sc.k


def unit(cond):
    """A xi^-d / (c/xi): the engine's rates divided by this are the
    dimensionless integrals of [GR]."""
    return ((KAPPA[cond.dimension] / HBAR) ** 2 * cond.density
            * cond.healing_length ** (-cond.dimension) / cond.frequency_unit)


def assert_clean(res):
    """Finite, non-negative rates and errors; effective temperature finite
    or NaN only together with its explaining warning."""
    for name in ("up_rate", "down_rate", "up_rate_error", "down_rate_error",
                 "emission_rate", "emission_rate_error", "absorption_rate",
                 "drag_force", "power"):
        v = getattr(res, name)
        if v is None:
            continue
        a = np.asarray(v, float)
        assert np.all(np.isfinite(a)), name
        assert np.all(a >= 0), name
    if res.effective_temperature is not None:
        te = np.asarray(res.effective_temperature, float)
        if np.any(np.isnan(te)):
            assert any("effective temperature is undetermined" in w for w in res.warnings)


# --- 40-digit references ---------------------------------------------------------
mp.mp.dps = 40


def _w(q):
    return q * mp.sqrt(1 + q * q / 4)


def _S(q):
    return q / mp.sqrt(4 + q * q)


def _vg(q):
    return (1 + q * q / 2) / mp.sqrt(1 + q * q / 4)


def _bisect(f, lo, hi):
    lo, hi = mp.mpf(lo), mp.mpf(hi)
    for _ in range(300):
        mid = (lo + hi) / 2
        if f(mid) < 0:
            lo = mid
        else:
            hi = mid
    return (lo + hi) / 2


def ref_up_1d(v, W):
    """1D up rate at T = 0 [GR]: S/|v_g - v| summed over the two roots of
    omega(q) - v q + W = 0 (bisection at 40 digits on [PS] formulas)."""
    v, W = mp.mpf(v), mp.mpf(W)
    g = lambda q: _w(q) - v * q + W
    qs = _bisect(lambda q: _vg(q) - v, 0, 4 * v + 10)     # minimum of g
    qc = _bisect(lambda q: -g(q), 0, qs)
    qd = _bisect(g, qs, 4 * v + 10)
    return sum(_S(q) / abs(_vg(q) - v) for q in (qc, qd))


def ref_3d(v, W):
    """3D point probe at T = 0 [GR]: (1/(2 pi v)) int q S dq over each window,
    with int q^2/sqrt(q^2 + 4) dq = q sqrt(q^2 + 4)/2 - 2 asinh(q/2)."""
    v, W = mp.mpf(v), mp.mpf(W)
    F = lambda q: q * mp.sqrt(q * q + 4) / 2 - 2 * mp.asinh(q / 2)
    qa = _bisect(lambda q: _w(q) + v * q - W, 0, W + 1)
    qb = _bisect(lambda q: _w(q) - v * q - W, 0, 2 * v + 2 * mp.sqrt(W) + 10)
    down = (F(qb) - F(qa)) / (2 * mp.pi * v)
    g = lambda q: _w(q) - v * q + W
    qs = _bisect(lambda q: _vg(q) - v, 0, 2 * v + 10)
    up = mp.mpf(0)
    if g(qs) < 0:
        qc = _bisect(lambda q: -g(q), 0, qs)
        qd = _bisect(g, qs, 2 * v + 10)
        up = (F(qd) - F(qc)) / (2 * mp.pi * v)
    return float(down), float(up)


# --- threshold speeds -----------------------------------------------------------------
@pytest.mark.parametrize("d", [1, 2, 3])
def test_just_below_and_above_the_up_threshold(d):
    cond = gas(d)
    c = cond.sound_speed
    p = two_level(cond, 0.5)
    vt = inertial_rates(cond, p, c).up_threshold_speed
    below = inertial_rates(cond, p, vt * (1 - 1e-9))
    above = inertial_rates(cond, p, vt * (1 + 1e-9))
    assert_clean(below)
    assert_clean(above)
    # energy-momentum conservation: no up emission below threshold at T = 0 [GR]
    assert below.up_rate == 0
    assert above.up_rate > 0


def test_3d_up_rate_vanishes_continuously_at_threshold():
    # the 3D up window [q_c, q_d] closes as sqrt(v - v_th): its rate is
    # proportional to its width there [GR]; against the 40-digit route
    cond = gas(3)
    c, u = cond.sound_speed, unit(gas(3))
    p = two_level(cond, 0.5)
    vt = inertial_rates(cond, p, c).up_threshold_speed / c
    for delta in (1e-3, 1e-6):
        v = vt * (1 + delta)
        r = inertial_rates(cond, p, v * c)
        _, up = ref_3d(v, 0.5)
        assert r.up_rate / u == pytest.approx(up, rel=max(1e-9, 2 * r.up_rate_error / r.up_rate))
    r3, r6 = (inertial_rates(cond, p, vt * (1 + x) * c).up_rate for x in (1e-3, 1e-6))
    assert r6 / r3 == pytest.approx(math.sqrt(1e-3), rel=0.02)


@pytest.mark.parametrize("d", [1, 2])
def test_exactly_at_threshold_is_a_model_error(d):
    cond = gas(d)
    p = two_level(cond, 0.5)
    vt = inertial_rates(cond, p, cond.sound_speed).up_threshold_speed
    with pytest.raises(ModelError) as err:
        inertial_rates(cond, p, vt)
    assert err.value.key == "trajectory.speed"
    assert "threshold speed" in err.value.message
    assert ("diverges as 1/sqrt(v - v_th)" if d == 1 else "jumps") in err.value.message


def test_1d_caustic_near_threshold_is_finite_accurate_and_square_root():
    cond = gas(1)
    c, u = cond.sound_speed, unit(cond)
    W = 0.5
    p = two_level(cond, W)
    vt = inertial_rates(cond, p, c).up_threshold_speed / c
    got = {}
    for delta in (1e-6, 1e-9):
        v = vt * (1 + delta)
        r = inertial_rates(cond, p, v * c)
        assert_clean(r)
        ref = float(ref_up_1d(v, W))
        # the reported error covers the actual one; it grows as eps/delta
        assert abs(r.up_rate / u - ref) <= r.up_rate_error / u + 1e-12 * ref
        got[delta] = r.up_rate
    # merging roots: Gamma ~ (v - v_th)^(-1/2) [GR]
    assert got[1e-9] / got[1e-6] == pytest.approx(math.sqrt(1e3), rel=1e-3)
    # closer than the rounding allows: refused, not a number with no digits
    with pytest.raises(ModelError, match="trajectory.speed"):
        inertial_rates(cond, p, vt * (1 + 2e-13) * c)
    # where the error exceeds rtol the result says so
    r = inertial_rates(cond, p, vt * (1 + 1e-9) * c)
    assert any("known only to a relative accuracy" in w for w in r.warnings)


def test_1d_density_probe_at_and_near_the_sound_speed():
    # 1D gapless probe: the single root q = 2 sqrt(v^2 - 1) of omega(q) = v q
    # gives S/(v_g - v) = 1/sqrt(v^2 - 1) exactly ([PS] spectrum, [GR])
    cond = gas(1)
    c, u = cond.sound_speed, unit(cond)
    p = DensityProbe(KAPPA[1])
    for delta in (1e-2, 1e-6):
        v = 1 + delta
        r = inertial_rates(cond, p, v * c)
        vv = float(np.float64(v * c) / c)
        ref = 1 / math.sqrt((vv - 1) * (vv + 1))
        assert r.emission_rate / u == pytest.approx(ref, rel=max(1e-12, r.emission_rate_error / r.emission_rate))
    assert inertial_rates(cond, p, 0.999 * c).emission_rate == 0
    with pytest.raises(ModelError, match="sound speed"):
        inertial_rates(cond, p, c)


def test_2d_density_probe_just_above_the_sound_speed():
    # with omega^2 = q^2 (1 + q^2/4) [PS] the 2D point-probe integral is
    # elementary: Gamma/(A xi^-2 xi/c) = (2/pi) arctan(sqrt(v^2 - 1))
    cond = gas(2)
    c, u = cond.sound_speed, unit(cond)
    p = DensityProbe(KAPPA[2])
    for delta in (0.5, 1e-3, 1e-9, 1e-14):
        r = inertial_rates(cond, p, (1 + delta) * c)
        assert_clean(r)
        v = float(np.float64((1 + delta) * c) / c)
        ref = 2 / math.pi * math.atan(math.sqrt((v - 1) * (v + 1)))
        assert r.emission_rate / u == pytest.approx(ref, rel=1e-12)


# --- far above the sound speed ------------------------------------------------------
@pytest.mark.parametrize("v", [1e3, 1e6])
def test_very_fast_3d_against_40_digits(v):
    cond = gas(3)
    c, u = cond.sound_speed, unit(cond)
    r = inertial_rates(cond, two_level(cond, 0.5), v * c)
    assert_clean(r)
    down, up = ref_3d(v, 0.5)
    assert r.down_rate / u == pytest.approx(down, rel=1e-12)
    assert r.up_rate / u == pytest.approx(up, rel=1e-12)
    assert any("times the sound speed" in w for w in r.warnings)


@pytest.mark.parametrize("d", [1, 2, 3])
def test_speed_1e3_c_finite_in_every_dimension(d):
    cond = gas(d)
    for probe in (two_level(cond, 0.5), DensityProbe(KAPPA[d])):
        assert_clean(inertial_rates(cond, probe, 1e3 * cond.sound_speed))


def test_2d_effective_temperature_is_undetermined_when_rates_agree():
    # in 2D at T = 0 above threshold the up and down rates agree to rounding
    # (checked against 40-digit quadrature while writing this test): the
    # effective temperature is then undetermined, not a noisy number
    cond = gas(2)
    r = inertial_rates(cond, two_level(cond, 0.5), 10 * cond.sound_speed)
    assert r.up_rate == pytest.approx(r.down_rate, rel=1e-10)
    assert math.isnan(r.effective_temperature)
    hit = [w for w in r.warnings if "undetermined" in w]
    assert len(hit) == 1 and "|T_eff| >" in hit[0]
    # where they differ (3D) it is a number: hbar Omega / (k_B ln(down/up))
    c3 = gas(3)
    r3 = inertial_rates(c3, two_level(c3, 0.5), 10 * c3.sound_speed)
    expected = HBAR * 0.5 * c3.frequency_unit / (KB * math.log(r3.down_rate / r3.up_rate))
    assert r3.effective_temperature == pytest.approx(expected, rel=1e-12)


def test_speed_beyond_the_engine_range_is_refused():
    cond = gas(2)
    with pytest.raises(ModelError, match="largest the engine handles"):
        inertial_rates(cond, two_level(cond, 0.5), 10 * MAX_SPEED_OVER_C * cond.sound_speed)


# --- Omega -> 0, T -> 0+, widths --------------------------------------------------------
@pytest.mark.parametrize("d", [1, 2, 3])
def test_small_gap_is_the_structureless_probe(d):
    # Omega -> 0: sigma_x coupling with no gap is the density probe; both
    # rates tend to its emission rate (limit)
    cond = gas(d)
    c = cond.sound_speed
    dens = inertial_rates(cond, DensityProbe(KAPPA[d]), 1.5 * c).emission_rate
    r = inertial_rates(cond, two_level(cond, 1e-9), 1.5 * c)
    assert_clean(r)
    assert r.up_rate == pytest.approx(dens, rel=1e-6)
    assert r.down_rate == pytest.approx(dens, rel=1e-6)
    with pytest.raises(ModelError, match="probe.model"):
        inertial_rates(cond, two_level(cond, GAP_RANGE[0] / 10), 1.5 * c)


@pytest.mark.parametrize("d", [1, 2, 3])
@pytest.mark.parametrize("v", [0.0, 0.5, 1.5])
def test_temperature_1e_minus_12_kelvin_is_zero_temperature(d, v):
    # n_k = 1/(exp(hbar w/k_B T) - 1) underflows to 0 at T = 1 pK for the
    # gapped probe's hbar w ~ mu (limit T -> 0+); the gapless probe's window
    # reaches k = 0, where n_k ~ k_B T/(hbar w) is large, so its rate moves by
    # a relative amount of order k_B T/mu = 1e-4 at most (here ~1e-8)
    cold, zero = gas(d, T=1e-12), gas(d)
    for probe, rel in ((two_level(zero, 0.5), 1e-12), (DensityProbe(KAPPA[d]), 1e-6)):
        a = inertial_rates(cold, probe, v * zero.sound_speed)
        b = inertial_rates(zero, probe, v * zero.sound_speed)
        assert_clean(a)
        for name in ("up_rate", "down_rate", "emission_rate"):
            x, y = getattr(a, name), getattr(b, name)
            if y is not None:
                assert x == pytest.approx(y, rel=rel, abs=0)


@pytest.mark.parametrize("d", [1, 2, 3])
def test_tiny_and_huge_widths(d):
    cond = gas(d)
    c = cond.sound_speed
    point = inertial_rates(cond, two_level(cond, 0.5), 1.5 * c)
    tiny = inertial_rates(cond, two_level(cond, 0.5, s=1e-6), 1.5 * c)
    # |F|^2 = exp(-k^2 s^2) = 1 - O(1e-12) on the resonant k xi ~ 1 (limit)
    assert tiny.down_rate == pytest.approx(point.down_rate, rel=1e-10)
    huge = inertial_rates(cond, two_level(cond, 0.5, s=1e3), 1.5 * c)
    assert_clean(huge)
    # exp(-(k s)^2) with k xi ~ 0.5 and s = 1e3 xi is exp(-2.5e5): zero in
    # double precision, which is the correct value to print
    assert huge.down_rate == 0 and huge.up_rate == 0
    assert any("far from point-like" in w for w in huge.warnings)
    wide = inertial_rates(cond, DensityProbe(KAPPA[d], 1e3 * cond.healing_length), 1.5 * c)
    assert_clean(wide)
    assert wide.emission_rate < inertial_rates(cond, DensityProbe(KAPPA[d]), 1.5 * c).emission_rate


@pytest.mark.parametrize("d", [1, 2, 3])
def test_very_slow_motion_is_static(d):
    # v -> 0 limit: the rates tend to the static ones with O(v^2) corrections;
    # below STATIC_SPEED the static value is used (the window edges, found
    # one by one, would keep only eps/v relative accuracy)
    cond = gas(d, T=30e-9)
    p = two_level(cond, 0.7, s=0.3)
    static = inertial_rates(cond, p, 0.0)
    for v in (1e-300, 1e-10, 0.5 * STATIC_SPEED, 2 * STATIC_SPEED, 1e-6):
        r = inertial_rates(cond, p, v * cond.sound_speed)
        assert_clean(r)
        assert r.down_rate == pytest.approx(static.down_rate, rel=1e-7)
        assert r.up_rate == pytest.approx(static.up_rate, rel=1e-7)
        assert abs(r.down_rate - static.down_rate) <= r.down_rate_error + 1e-11 * static.down_rate


# --- circles: radii 0.1 to 1e4 healing lengths ----------------------------------------------
@pytest.mark.parametrize("R", [0.1, 1.0, 10.0, 100.0, 1e3, 1e4])
def test_2d_circles_over_five_decades(R):
    cond = gas(2)
    c, xi = cond.sound_speed, cond.healing_length
    r = circular_rates(cond, two_level(cond, 0.5), R * xi, 0.5 * c)
    assert_clean(r)
    assert r.down_rate > 0


def test_2d_large_circle_tends_to_straight_motion():
    # limit R -> infinity at fixed speed: straight motion (the centripetal
    # acceleration v^2/R vanishes)
    cond = gas(2)
    c, xi = cond.sound_speed, cond.healing_length
    p = two_level(cond, 0.5)
    lin = inertial_rates(cond, p, 0.5 * c).down_rate
    far = circular_rates(cond, p, 1e4 * xi, 0.5 * c).down_rate
    near = circular_rates(cond, p, 1e2 * xi, 0.5 * c).down_rate
    assert abs(far / lin - 1) < abs(near / lin - 1)
    assert far == pytest.approx(lin, rel=1e-3)


@pytest.mark.parametrize("R", [0.1, 1.0, 10.0, 100.0, 1e3])
def test_3d_circles_up_to_1e3(R):
    cond = gas(3)
    c, xi = cond.sound_speed, cond.healing_length
    r = circular_rates(cond, two_level(cond, 0.5), R * xi, 0.5 * c)
    assert_clean(r)
    assert r.down_rate > 0


def test_3d_circle_too_costly_is_refused_before_any_sum():
    # R = 1e4 xi at 1.5 c needs ~5e5 Bessel-function units of work (about
    # 0.3 s); under a limit of 1e5 it is refused before any sum
    cond = gas(3)
    c, xi = cond.sound_speed, cond.healing_length
    with pytest.raises(ModelError) as err:
        circular_rates(cond, two_level(cond, 0.5), 1e4 * xi, 1.5 * c,
                       max_bessel_evaluations=1e5)
    msg = err.value.message
    assert err.value.key == "trajectory.radius"
    assert "Bessel-function evaluations" in msg and "kind = \"linear\"" in msg
    assert "max_bessel_evaluations" in msg


@pytest.mark.parametrize("d", [2, 3])
def test_slow_rotation_needs_too_many_harmonics(d):
    cond = gas(d)
    c, xi = cond.sound_speed, cond.healing_length
    with pytest.raises(ModelError) as err:
        circular_rates(cond, two_level(cond, 0.5), 1e4 * xi, 1e-3 * c)
    assert "harmonics" in err.value.message and "angular frequency" in err.value.message


def test_radius_below_range_is_refused():
    cond = gas(2)
    with pytest.raises(ModelError, match="such a circle is a point"):
        circular_rates(cond, two_level(cond, 0.5), 1e-12 * cond.healing_length,
                       0.5 * cond.sound_speed)


def test_small_circle_tends_to_the_static_probe():
    # limit R -> 0 at fixed angular frequency... here at fixed small speed:
    # v -> 0 on a circle of one healing length is a probe at rest
    cond = gas(3)
    p = two_level(cond, 0.5)
    static = inertial_rates(cond, p, 0.0).down_rate
    r = circular_rates(cond, p, cond.healing_length, 1e-5 * cond.sound_speed)
    assert r.down_rate == pytest.approx(static, rel=1e-8)


# --- overflow ---------------------------------------------------------------------------------
def test_enormous_coupling_is_refused_not_inf():
    cond = gas(3)
    p = TwoLevelProbe(0.5 * cond.frequency_unit, 1e300)
    with pytest.raises(ModelError) as err:
        inertial_rates(cond, p, 1.5 * cond.sound_speed)
    assert err.value.key == "probe.coupling"


@pytest.mark.parametrize("d", [1, 2])
def test_absurd_temperature_is_refused_not_inf(d):
    cond = gas(d, T=1e300)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", RuntimeWarning)   # overflow on the way
        with pytest.raises(ModelError, match="no number is returned"):
            inertial_rates(cond, two_level(cond, 0.5), 1.5 * cond.sound_speed)


def test_grid_results_stay_clean_and_phrase_warnings_per_point():
    cond = gas(3)
    c = cond.sound_speed
    r = inertial_rates(cond, two_level(cond, 0.5), np.linspace(0, 20, 41) * c)
    assert_clean(r)
    fast = [w for w in r.warnings if "sound speed (more than" in w]
    assert len(fast) == 1 and fast[0].startswith("at 20 of 41 grid points")
