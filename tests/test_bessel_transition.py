"""J_nu(x) near the turning point from the transition expansion
(probe/engines/bessel_transition.py), against independent routes:
mpmath.besselj (hypergeometric series, 40 digits) for orders up to ~1300;
for larger orders the Schlaefli-Sommerfeld integral (DLMF 10.9.17) by
mpmath.quad (itself checked against besselj here); the ODE of the
substitution against mpmath's besselj; the series of J_nu(nu) against
mpmath and Abramowitz and Stegun 9.3.31; the first polynomials against
Abramowitz and Stegun 9.3.23 / DLMF 10.19.8 (values quoted from memory)."""
from fractions import Fraction

import mpmath as mp
import numpy as np

from probe.engines import bessel_transition as bt
from probe.engines.bessel import _debye, jv_error

CBRT2 = 2.0 ** (1.0 / 3.0)


def _x(nu, a):
    return nu + a * np.cbrt(nu)


def j_contour(nu, x, dps=20):
    """J_nu(x) = (1 / 2 pi i) int_{inf - pi i}^{inf + pi i} exp(x sinh w - nu w) dw
    (DLMF 10.9.17): the path through w = 0 along the rays arg w = +-pi/3 (the
    directions of steepest descent of w^3 at the turning point) is the upper
    ray and its mirror image, so J = Im(I) / pi with I the integral along
    w = rho e^(i pi/3); beyond rho = 12 nu^(-1/3) the integrand is below
    exp(-230) of its peak (x <= nu + 9 nu^(1/3)) and the rest of the path is
    dropped."""
    with mp.workdps(dps + 15):
        nu, x = mp.mpf(nu), mp.mpf(x)
        e = mp.expjpi(mp.mpf(1) / 3)
        h = nu ** (-mp.mpf(1) / 3)
        integral = mp.quad(lambda r: mp.exp(x * mp.sinh(r * e) - nu * r * e),
                           [k * h for k in (0, 1, 2, 3, 4, 6, 9, 12)])
        return float((integral * e).imag / mp.pi)


def _besselj(nu, x):
    with mp.workdps(40):
        return float(mp.besselj(mp.mpf(float(nu)), mp.mpf(float(x)), maxprec=100000))


def _check(nu, x, refs):
    """Every good value within jv_error of its reference; the worst ratio."""
    nu, x, refs = (np.asarray(v, dtype=float) for v in (nu, x, refs))
    values, good = bt.transition_jv(nu, x)
    with np.errstate(divide="ignore", invalid="ignore"):     # values not good may be 0
        ratio = np.abs(values - refs) / jv_error(nu, x, values)
    assert np.all(ratio[good] <= 1.0), list(zip(nu[good][ratio[good] > 1], x[good][ratio[good] > 1]))
    return good, float(ratio[good].max())


def test_first_polynomials_against_the_literature():
    """A&S 9.3.23 (from memory): J_nu(nu + a nu^(1/3)) ~ 2^(1/3) nu^(-1/3) Ai(-2^(1/3) a)
    sum P_k(a) nu^(-2k/3) + 2^(2/3) nu^(-1) Ai'(-2^(1/3) a) sum Q_k(a) nu^(-2k/3) with
    P_0 = 1, P_1 = -a/5, P_2 = -9 a^5/100 + 3 a^2/35, Q_0 = 3 a^2/10, Q_1 = -17 a^3/70 + 1/70.
    Ours are in s = -2^(1/3) a and delta = -2^(-1/3) nu^(-2/3) (powers of 2^(1/3)
    cancel in each monomial)."""
    P, Q = bt.transition_polynomials(bt.ORDERS)

    def in_a(poly, k, extra):
        out = {}
        for n, c in poly.items():
            e = n - k - extra
            assert e % 3 == 0
            out[n] = c * (-1) ** (n + k) * Fraction(2) ** (e // 3)
        return out
    F = Fraction
    assert in_a(P[0], 0, 0) == {0: 1}
    assert in_a(P[1], 1, 0) == {1: F(-1, 5)}
    assert in_a(P[2], 2, 0) == {5: F(-9, 100), 2: F(3, 35)}
    assert Q[0] == {}
    assert in_a(Q[1], 1, 1) == {2: F(3, 10)}
    assert in_a(Q[2], 2, 1) == {3: F(-17, 70), 0: F(1, 70)}


def test_the_two_routes_to_the_constants_agree():
    """The J_nu(nu) series gives the constants of P_k (multiples of Ai(0)) and,
    independently, Q_k(0) (multiples of Ai'(0)), which the ODE fixes by itself."""
    P, Q = bt.transition_polynomials(bt.ORDERS)
    A, B = bt.jnn_series(bt.ORDERS)
    assert all(Q[k].get(0, 0) == B[k] for k in range(bt.ORDERS + 1))
    assert all(P[k].get(0, 0) == A[k] for k in range(bt.ORDERS + 1))
    assert sum(1 for b in B if b) >= 7


def test_jnn_series_against_mpmath_and_the_literature():
    """A&S 9.3.31 (from memory): J_nu(nu) ~ 2^(1/3) / (3^(2/3) Gamma(2/3) nu^(1/3))
    (1 - nu^(-2)/225 + ...) - 2^(2/3) / (3^(1/3) Gamma(1/3) nu^(5/3)) (1/70
    - 1213 nu^(-2) / 1023750 + ...); the whole series against mpmath.besselj."""
    A, B = bt.jnn_series(bt.ORDERS)
    # delta^3 = -nu^(-2)/2; delta^2 = 2^(-2/3) nu^(-4/3); delta^5 = -2^(-5/3) nu^(-10/3)
    assert A[:4] == [1, 0, 0, Fraction(2, 225)]
    assert B[2] * Fraction(1, 2) == Fraction(1, 70)
    assert B[5] * Fraction(1, 4) == Fraction(1213, 1023750)
    with mp.workdps(40):
        for nu in (mp.mpf(150), mp.mpf(1000.5), mp.mpf(1300)):
            d = -mp.cbrt(2) ** -1 * nu ** (-mp.mpf(2) / 3)
            ser = mp.cbrt(2) * nu ** (-mp.mpf(1) / 3) * (
                mp.fsum(mp.mpf(A[k].numerator) / A[k].denominator * d ** k for k in range(len(A)))
                * mp.airyai(0)
                + mp.fsum(mp.mpf(B[k].numerator) / B[k].denominator * d ** k for k in range(len(B)))
                * mp.airyai(0, derivative=1))
            ref = mp.besselj(nu, nu, maxprec=100000)
            assert abs(ser / ref - 1) < mp.mpf(10) ** -33, (nu, ser, ref)


def test_the_substituted_ode_against_mpmath():
    """y(s) = J_nu(nu (1 + s delta)) satisfies (1 + s delta)^2 y'' + delta (1 + s delta) y'
    - (s + s^2 delta / 2) y = 0 (Bessel's equation rewritten; derivatives by mpmath)."""
    with mp.workdps(30):
        nu = mp.mpf(60.5)
        d = -mp.cbrt(2) ** -1 * nu ** (-mp.mpf(2) / 3)
        for s in (mp.mpf(-3.1), mp.mpf(0.4), mp.mpf(2.2)):
            def y(t):
                return mp.besselj(nu, nu * (1 + t * d))
            y0, y1, y2 = mp.diffs(y, s, 2)
            res = (1 + s * d) ** 2 * y2 + d * (1 + s * d) * y1 - (s + s * s * d / 2) * y0
            assert abs(res) < mp.mpf(10) ** -20 * abs(y2), (s, res)


def test_grid_and_zeros_against_besselj():
    """Integer and non-integer orders 100 ... 1300 on a grid of a in [-A_MAX, A_MAX]
    and at the first zeros of J (found by mpmath): every good value within
    jv_error of mpmath.besselj at 40 digits."""
    nus, xs = [], []
    for nu in (100.0, 137.25, 400.0, 1000.5):
        for a in np.r_[np.linspace(-bt.A_MAX, bt.A_MAX, 13), -1e-9, 1e-9, -1e-4, 1e-4, 0.31]:
            nus.append(nu)
            xs.append(_x(nu, a))
    with mp.workdps(30):
        for nu, k in ((300.0, 1), (300.0, 3), (1000.0, 2), (1000.5, 5)):
            z = float(mp.findroot(lambda t: mp.besselj(nu, t), _x(nu, -float(mp.airyaizero(k)) / CBRT2)))
            for dx in (0.0, 1e-9 * z, -3e-7 * z):
                nus.append(nu)
                xs.append(z + dx)
    refs = [_besselj(n, x) for n, x in zip(nus, xs)]
    good, worst = _check(nus, xs, refs)
    nus, xs = np.array(nus), np.array(xs)
    a = (xs - nus) / np.cbrt(nus)
    # the orders kept reach 1e-16 up to |a| ~ 3.4 at nu = 100, 5.5 at 300, 8.8 at 1e3
    covered = (np.abs(a) <= 3.3) | ((nus >= 300) & (np.abs(a) <= 5.5)) | \
        ((nus >= 1000) & (np.abs(a) <= 8.5))
    assert good[covered].all()
    assert worst < 0.5


def test_random_samples_against_besselj():
    rng = np.random.default_rng(11)
    nu = np.exp(rng.uniform(np.log(bt.NU_MIN), np.log(1300), 40))
    nu[::2] = np.round(nu[::2])
    x = _x(nu, rng.uniform(-bt.A_MAX, bt.A_MAX, nu.size))
    good, _ = _check(nu, x, [_besselj(n, v) for n, v in zip(nu, x)])
    assert good.mean() > 0.6


def test_large_orders_against_the_contour_integral():
    """Orders 3e3 ... 1e9 against the Schlaefli-Sommerfeld integral, whose
    evaluation is first checked against mpmath.besselj at orders 300 and 1000."""
    for nu, a in ((300.0, 8.5), (1000.5, -6.0), (1000.0, 1.3)):
        x = _x(nu, a)
        ref = _besselj(nu, x)
        assert abs(j_contour(nu, x) - ref) <= 1e-18 * abs(ref)
    nu = np.array([3000.0, 8123.5, 2e4, 4e4 + 0.25, 1e5, 99999.5, 1e6 + 0.5, 1e9])
    a = np.array([8.9, -8.9, -2.3381 / CBRT2, 5.0, 0.0, -4.4, 3.3, -8.5])
    x = _x(nu, a)
    good, _ = _check(nu, x, [j_contour(n, v) for n, v in zip(nu, x)])
    assert good.all()


def test_covers_the_zone_where_debye_fails():
    """For orders 1e3 ... 1e5 (integer and not) and |x - nu| <= 9 nu^(1/3):
    wherever bessel.py's Debye expansions decline, the transition expansion is
    good (measured 100%); at orders >= NU_MIN it is good wherever
    15 nu^2 >= r^3 (the zone where Debye's corrections cannot reach 1e-16)."""
    rng = np.random.default_rng(5)
    nu = np.exp(rng.uniform(np.log(1e3), np.log(1e5), 4000))
    nu[::2] = np.round(nu[::2])
    x = _x(nu, rng.uniform(-bt.A_MAX, bt.A_MAX, nu.size))
    r = np.sqrt(np.abs((x - nu) * (x + nu)))
    out, use = np.empty(nu.size), np.zeros(nu.size, dtype=bool)
    _debye(nu, x, r, out, use)
    good = bt.transition_jv(nu, x)[1]
    assert (~use).sum() > 3000
    assert good[~use].mean() >= 0.999
    nu = np.exp(rng.uniform(np.log(bt.NU_MIN), np.log(1e5), 4000))
    x = _x(nu, rng.uniform(-3.4, 3.4, nu.size))
    r = np.sqrt(np.abs((x - nu) * (x + nu)))
    zone = 15 * nu * nu >= r ** 3
    assert zone.sum() > 3000 and bt.transition_jv(nu, x)[1][zone].all()


def test_each_value_depends_on_its_own_arguments():
    rng = np.random.default_rng(3)
    nu = np.exp(rng.uniform(np.log(50), np.log(1e5), 300))
    x = _x(nu, rng.uniform(-10, 10, nu.size))
    v, g = bt.transition_jv(nu, x)
    order = rng.permutation(nu.size)
    v2, g2 = bt.transition_jv(nu[order], x[order])
    assert np.array_equal(v2, v[order]) and np.array_equal(g2, g[order])
    for i in range(0, nu.size, 37):
        vi, gi = bt.transition_jv(nu[i:i + 1], x[i:i + 1])
        assert gi[0] == g[i] and (not g[i] or vi[0] == v[i])


def test_outside_the_checked_range_is_not_good():
    nu = np.array([99.0, 1000.0, 1000.0, 0.0, np.nan, 500.0, np.inf, 2e9])
    x = np.array([99.0, _x(1000.0, 9.01), _x(1000.0, -9.01), 0.0, 10.0, np.nan, 1.0, 2e9])
    assert not bt.transition_jv(nu, x)[1].any()
    v, g = bt.transition_jv(np.array([]), np.array([]))
    assert v.size == 0 and g.size == 0


def test_table_is_kept_in_the_cache_folder(tmp_path):
    """A first process generates the polynomials and keeps their float table
    in the cache folder; a second reads it back without generating them, and
    both give the same table (and the table of a process without a cache)."""
    import os
    import subprocess
    import sys
    script = ("import sys, pickle; import probe.engines.bessel_transition as bt\n"
              "if sys.argv[1] == 'read':\n"
              "    bt.transition_polynomials = None  # generating would fail\n"
              "sys.stdout.buffer.write(pickle.dumps(bt._table()))\n")
    env = {**os.environ, "PROBE_CACHE_DIR": str(tmp_path)}
    made = subprocess.run([sys.executable, "-c", script, "make"], env=env,
                          capture_output=True, check=True).stdout
    read = subprocess.run([sys.executable, "-c", script, "read"], env=env,
                          capture_output=True, check=True).stdout
    bare = subprocess.run([sys.executable, "-c", script, "make"],
                          env={**os.environ, "PROBE_CACHE_DIR": ""},
                          capture_output=True, check=True).stdout
    assert made == read == bare
    assert any(p.name.startswith("bessel-transition-") for p in tmp_path.iterdir())
