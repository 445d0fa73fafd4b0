"""Accuracy of the circular sums against mpmath at 30-40 digits.

References (independent routes, all in mpmath):
- W_m(x) = (1/(2x)) int_0^{2x} J_{2m}(t) dt = (1/x) sum_{j>=0} J_{2m+2j+1}(2x)
  (Watson, *Theory of Bessel Functions*, secs. 2.22 and 5.21; DLMF 10.22.6):
  * by mpmath.quad of the J_{2m} integral (small x);
  * by the odd-order sum, its terms from Miller's backward recurrence in
    40-digit arithmetic normalised by mpmath.besselj (m near or above x);
  * by int_0^z J_0 = z J_0 + (pi z/2) (J_1 H_0 - J_0 H_1) (Struve functions,
    DLMF 10.22.2 with 11.1.7 of Abramowitz and Stegun) and
    int_0^z J_{n+2} = int_0^z J_n - 2 J_{n+1}(z) (DLMF 10.6.1) for m << x up
    to x = 1e4;
- the rates: the golden-rule harmonic sums of PHYSICS.md sec. 5 summed in
  mpmath at 40 digits (q from the Bogoliubov dispersion in closed form).
Every value must lie within its reported error bound of the reference, and
the bounds within the accuracies claimed (1e-11 relative for x <= 1e3).
"""
from functools import lru_cache

import mpmath as mp
import numpy as np
import pytest
from scipy import constants as sc

from conftest import rb_gas
from probe.detectors import TwoLevelProbe
from probe.engines.bessel import jv_error, jv_int
from probe.engines.stationary import circular_rates
from probe.engines.stationary.harmonics import w3

HBAR = sc.hbar
DPS = 40


def _odd_sum(n, z):
    """2 sum_{j>=0} J_{n+2j+1}(z) at 40 digits: backward recurrence from far
    above max(n, z), normalised by mpmath.besselj(n, z)."""
    with mp.workdps(DPS + 20):
        z = mp.mpf(z)
        top = int(max(n, z) + 60 + 20 * mp.cbrt(z)) + (int(max(n, z)) % 2)
        fp, fc = mp.mpf(0), mp.mpf(10) ** -300
        total = mp.mpf(0)
        for k in range(top, n, -1):            # fc holds order k
            fm = 2 * k / z * fc - fp           # order k - 1
            fp, fc = fc, fm
            if (k - 1 - n) % 2 == 1:
                total += fm
        return 2 * total * mp.besselj(n, z) / fc


def _struve_integral(n, z):
    """int_0^z J_n(t) dt for even n from int_0^z J_0 (Struve form) and the
    recurrence int J_{n+2} = int J_n - 2 J_{n+1}(z), at 40 digits."""
    with mp.workdps(DPS):
        z = mp.mpf(z)
        j0, j1 = mp.besselj(0, z), mp.besselj(1, z)
        total = z * j0 + mp.pi * z / 2 * (j1 * mp.struveh(0, z) - j0 * mp.struveh(1, z))
        for k in range(0, n, 2):
            total -= 2 * mp.besselj(k + 1, z)
        return total


@lru_cache(maxsize=None)
def w3_reference(m, x, route):
    z = 2 * mp.mpf(x)
    if route == "quad":
        with mp.workdps(DPS):
            integral = mp.quad(lambda t: mp.besselj(2 * m, t),
                               mp.linspace(0, z, int(z) + 2))
    elif route == "struve":
        integral = _struve_integral(2 * m, float(z))
    else:
        integral = _odd_sum(2 * m, float(z))
    return float(integral / z)


# (m, x, route): the Bessel tail m > x (where 8 terms were kept before), the
# turning point m ~ x, and m << x up to x = 1e4
CASES = [
    (0, 0.7, "quad"), (3, 1.0, "quad"), (2, 6.5, "quad"), (10, 12.0, "quad"),
    (5, 2.2, "sum"), (10, 4.0, "sum"), (30, 29.5, "sum"), (50, 40.0, "sum"),
    (50, 49.5, "sum"), (50, 52.0, "sum"), (200, 150.0, "sum"), (200, 199.0, "sum"),
    (200, 203.0, "sum"), (500, 480.0, "sum"), (500, 507.5, "sum"), (100, 260.0, "sum"),
    (900, 930.0, "sum"), (1000, 700.0, "sum"),
    (0, 1e4, "struve"), (3, 1e4, "struve"), (8, 9876.5, "struve"), (20, 3000.25, "struve"),
    (40, 321.0, "struve"), (1, 1e3, "struve"),
]


@pytest.mark.parametrize("m, x, route", CASES)
def test_spherical_average_against_mpmath(m, x, route):
    ref = w3_reference(m, x, route)
    val, err = w3(np.array([float(m)]), np.array([x]), with_error=True)
    val, err = float(val[0]), float(err[0])
    assert abs(val - ref) <= err, (m, x, val, ref, err)
    # the bound: 1e-11 relative up to x = 1e3, 1e-10 up to 1e4 (the rounding of
    # phases and exponents, and its bound, grow with the argument and the order;
    # the bound is worst-case: the errors found are 1e-16 to 2e-13 relative)
    assert err <= (1e-11 if x <= 1e3 else 1e-10) * abs(ref), (m, x, err)
    assert abs(val - ref) <= 1e-12 * abs(ref), (m, x, val, ref)


def test_spherical_average_routes_agree():
    """The series, the recurrence and the small-x forms meet across their
    borders: W_m for all m at fixed x is continuous to 1e-13 relative (a
    jump at a route switch would show as an outlier of the second difference
    in m of log W, which is smooth) and sums to 1: sum_m W_m(x) over all
    integers m = 1 (spherical average of sum_m J_m^2 = 1, Neumann's
    identity, DLMF 10.23.3)."""
    for x in (0.3, 7.0, 80.0, 950.0):
        m = np.arange(0, int(3 * x + 200), dtype=float)
        W, E = w3(m, np.full_like(m, x), with_error=True)
        total = W[0] + 2 * W[1:].sum()
        assert abs(total - 1) <= E[0] + 2 * E[1:].sum() + 1e-15, (x, total)


def test_bessel_bound_against_mpmath():
    """jv_int within jv_error of mpmath.besselj (30 digits) across the
    regions: evanescent, turning point, oscillatory, Hankel (m << x)."""
    rng = np.random.default_rng(11)
    n = np.floor(10 ** rng.uniform(0, 3.3, 60))
    x = np.abs(n * rng.choice([0.3, 0.8, 0.97, 1.0, 1.03, 1.5, 4.0], 60)
               + rng.uniform(-3, 3, 60)) + 0.05
    # one large call (the expansions) and one small call per value (scipy)
    big_n, big_x = np.r_[n, np.arange(600.0)], np.r_[x, np.arange(600.0) * 1.7 + 30]
    for got, err in ((jv_int(big_n, big_x)[:60], jv_error(n, x, jv_int(big_n, big_x)[:60])),
                     (np.array([jv_int(a, b) for a, b in zip(n, x)]), None)):
        err = jv_error(n, x, got) if err is None else err
        with mp.workdps(30):
            for ni, xi, gi, ei in zip(n, x, got, err):
                ref = float(mp.besselj(int(ni), mp.mpf(float(xi)), maxprec=20000))
                assert abs(gi - ref) <= ei, (ni, xi, gi, ref, ei)


# --- the rates -----------------------------------------------------------------------------
def _inverse(w):
    """q of the Bogoliubov spectrum w = q sqrt(1 + q^2/4) (gas units)."""
    return mp.sqrt(2 * w * w / (mp.sqrt(1 + w * w) + 1))


def _weight(q):
    """k S / v_g of PHYSICS.md sec. 5 (S = q/sqrt(4 + q^2) for Bogoliubov)."""
    vg = (1 + q * q / 2) / mp.sqrt(1 + q * q / 4)
    return q * q / mp.sqrt(4 + q * q) / vg


def _jm2(m, x):
    return mp.besselj(m, x) ** 2


def _w3_mp(m, x):
    return _odd_sum(2 * abs(m), 2 * x) / (2 * x)


@lru_cache(maxsize=None)
def rate_reference(d, R, v, W):
    """(down, up) of a circle at T = 0, point probe, by the 40-digit harmonic
    sums of PHYSICS.md sec. 5: harmonic m at w_q = +-W + m v/R, weight
    k S J_m^2/v_g (2D) or k^2 S W_m/(pi v_g) (3D), units A xi^-d xi/c."""
    with mp.workdps(DPS):
        R, v, W = mp.mpf(R), mp.mpf(v), mp.mpf(W)
        out = []
        for sign in (+1, -1):
            m, total = int(mp.floor(-sign * W * R / v)) + 1, mp.mpf(0)
            while True:
                q = _inverse(sign * W + m * v / R)
                if d == 2:
                    term = _weight(q) * _jm2(m, q * R)
                else:
                    term = q * _weight(q) * _w3_mp(m, q * R) / mp.pi
                total += term
                if m > 5 and term < mp.mpf(10) ** -32 * total:
                    break
                m += 1
            out.append(float(total))
        return out


@pytest.mark.parametrize("d, R, v, W", [
    (3, 2.0, 0.5, 0.32), (3, 6.0, 0.7, 0.5), (3, 1.0, 0.3, 0.05), (3, 30.0, 0.6, 0.3),
    (2, 3.0, 0.5, 0.32), (2, 12.0, 0.8, 0.2),
])
def test_subsonic_rates_at_rtol_1e12(d, R, v, W):
    """Subsonic circles (the up rate exponentially small): rtol 1e-12 is met
    and each reported error bounds the distance to the 40-digit sum."""
    cond = rb_gas(d)
    c, xi, w0 = cond.sound_speed, cond.healing_length, cond.frequency_unit
    kappa = 1e-50
    probe = TwoLevelProbe(W * w0, kappa)
    r = circular_rates(cond, probe, R * xi, v * c, rtol=1e-12)
    down, up = rate_reference(d, R, v, W)
    pref = (kappa / HBAR) ** 2 * cond.density / xi ** d / w0
    for value, error, ref in ((r.down_rate, r.down_rate_error, down * pref),
                              (r.up_rate, r.up_rate_error, up * pref)):
        assert abs(value - ref) <= error, (value, ref, error)
        assert error <= 1e-12 * value, (error, value)


@pytest.mark.parametrize("R, v, rtol", [
    (1.0, 0.4, 1e-8), (1.0, 2.0, 1e-6), (10.0, 0.6, 1e-8), (10.0, 1.7, 1e-8),
    (10.0, 0.95, 1e-6), (30.0, 1.3, 1e-8),
])
def test_2d_truncation_against_mpmath(R, v, rtol):
    """2D circles summed at the default and a loose rtol, many points in one
    call: each sum stops at the first harmonic where Kapteyn's bound on the
    remainder (Watson, *Theory of Bessel Functions*, sec. 8.7) is below
    0.1 rtol, so the remainder is a large part of the error.  Each reported
    error must bound the distance to the 40-digit harmonic sums of
    PHYSICS.md sec. 5 (``rate_reference``, summed until the terms fall
    below 1e-32 of the sum), and stay within rtol."""
    cond = rb_gas(2)
    c, xi, w0 = cond.sound_speed, cond.healing_length, cond.frequency_unit
    kappa, W = 1e-50, 0.3
    probe = TwoLevelProbe(W * w0, kappa)
    speeds = np.array([v, 0.5 * v, 1.1 * v])
    r = circular_rates(cond, probe, R * xi, speeds * c, rtol=rtol)
    pref = (kappa / HBAR) ** 2 * cond.density / xi ** 2 / w0
    for i, vi in enumerate(speeds):
        down, up = rate_reference(2, R, float(vi), W)
        for value, error, ref in ((r.down_rate[i], r.down_rate_error[i], down * pref),
                                  (r.up_rate[i], r.up_rate_error[i], up * pref)):
            assert abs(value - ref) <= error, (vi, value, ref, error)
            assert error <= rtol * value, (vi, error, value)


@pytest.mark.parametrize("d, R", [(2, 1.0), (2, 30.0), (2, 300.0), (3, 5.0)])
def test_a_point_gives_the_same_digits_in_any_company(d, R):
    """One call over many points gives each point the digits (values, error
    bounds, harmonics) of a call with that point alone: a sweep resumed
    after an interruption must reproduce the uninterrupted file byte for
    byte (its points are grouped differently)."""
    cond = rb_gas(d)
    probe = TwoLevelProbe(0.3 * cond.frequency_unit, 1e-50)
    speeds = np.linspace(0.3, 2.5, 5 if d == 2 else 3) * cond.sound_speed
    radius = R * cond.healing_length
    together = circular_rates(cond, probe, radius, speeds)
    for i, v in enumerate(speeds):
        alone = circular_rates(cond, probe, radius, v)
        for name in ("down_rate", "down_rate_error", "up_rate", "up_rate_error", "harmonics"):
            assert getattr(together, name)[i] == getattr(alone, name), (i, name)
