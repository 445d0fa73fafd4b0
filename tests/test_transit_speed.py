"""The pair route of the transit engine (the double time sum over pairs of
times, directions averaged exactly) and many gaps of one transit from
shared lag sums (solve and compare over the probe's gap).

Checked against: the direction routes (phasor, FFT; independent sums over
directions), a closed form of the golden-rule probability for a Gaussian
switching on a straight line (PHYSICS.md section 4 with the Gaussian's time
integral done analytically, the rest by scipy quad), and the transits
computed one gap at a time.  Nothing here is timed (tests/bench_transit.py
measures the speed).  Units: lengths in xi, times in xi/c, frequencies in
c/xi unless said otherwise.
"""
from __future__ import annotations

import math
import warnings

import numpy as np
import pytest
from scipy import constants as sc
from scipy import integrate, special

from probe.detectors import DensityProbe, TwoLevelProbe
from probe.detectors.switching import Gaussian, PathSpan
from probe.engines.transit import transit_probabilities
from probe.engines.transit.gaps import GapScan
from probe.engines.transit.pairs import chebyshev_coefficients, chebyshev_terms, lag_moments
from probe.errors import InputError
from trajectories import Linear, Spline

from conftest import condensate

HBAR = sc.hbar
MASS = 23 * sc.atomic_mass
DENS = {3: 1e20, 2: 1e14, 1: 1e8}
WPERP = 2 * math.pi * 2e3
COUPLING = 1e-50           # J m^d: probabilities stay first order


def gas(d, T=0.0):
    return condensate(d, MASS, DENS[d], 2.75e-9, WPERP, T_nat=T)


def two_level(cond, gap, width):
    return TwoLevelProbe(gap * cond.frequency_unit, COUPLING, width * cond.healing_length)


def wobble(cond, duration, n=400):
    """A probe stirred on a loop of radius 2 with a vertical wobble."""
    xi, w0 = cond.healing_length, cond.frequency_unit
    s = np.linspace(0.0, duration, n)
    pos = np.stack([2 * np.cos(0.4 * s), 2 * np.sin(0.4 * s), 0.3 * np.sin(1.2 * s)],
                   axis=1) * xi
    return Spline(s / w0, pos[:, :cond.dimension])


def names(probe):
    return (["up_probability", "down_probability"] if isinstance(probe, TwoLevelProbe)
            else ["emitted_phonons", "absorbed_phonons"])


def error_of(res, name):
    """The reported error of an output (its *_error field, or the achieved
    relative accuracy times the value)."""
    err = getattr(res, name.replace("probability", "error"), None) \
        if name.endswith("probability") else None
    return err if err is not None else res.achieved_rtol * abs(getattr(res, name))


# ---------------------------------------------------------------------------
# the pieces of the pair route
# ---------------------------------------------------------------------------
@pytest.mark.parametrize("d", [1, 2, 3])
def test_chebyshev_series_of_the_isotropic_average(d):
    """j_d(q r) = sum_k a_k T_k(2 (r/r_max)^2 - 1) to rounding, for the
    averages of exp(-i k.dx) over directions: cos (1D), J_0 (2D) and
    sin x/x (3D) from scipy; the reported tail bounds the dropped terms."""
    from numpy.polynomial import chebyshev as C

    r_max = 12.0
    q = np.linspace(0.0, 6.0, 13)
    K = chebyshev_terms(q[-1] * r_max)
    a, tail = chebyshev_coefficients(q, r_max, d, K)
    r = np.linspace(0.0, r_max, 41)
    y = 2 * (r / r_max) ** 2 - 1
    series = np.array([C.chebval(y, a[:, i]) for i in range(q.size)])
    exact = {1: np.cos, 2: special.j0, 3: lambda x: np.sinc(x / np.pi)}[d](np.outer(q, r))
    np.testing.assert_allclose(series, exact, atol=4 * K * 2.0 ** -53)
    assert np.all(tail < 1e-14)
    # fewer terms (a tail of 1e-6 by the Jacobi-Anger bound, where the terms
    # already fall fast): the reported tail bounds the truncation error
    from probe.engines.fft_kernel import chebyshev_degree
    a5, tail5 = chebyshev_coefficients(q, r_max, d, chebyshev_degree(q[-1] * r_max, 1e-6) // 2)
    short = np.array([C.chebval(y, a5[:, i]) for i in range(q.size)])
    assert np.all(np.abs(short - exact).max(axis=1) <= tail5 + 1e-13)


def test_lag_moments_against_the_plain_double_loop():
    """H[l, k] = sum_i b_i b_{i+l} T_k(2 r^2/r_max^2 - 1), checked against a
    plain loop over pairs with numpy's Chebyshev polynomials."""
    from numpy.polynomial import chebyshev as C

    rng = np.random.default_rng(3)
    N, K = 37, 9
    X = rng.normal(size=(N, 3))
    b = rng.random(N)
    r_max = 2 * np.sqrt(((X.max(0) - X.min(0)) ** 2).sum())
    H = lag_moments(X, b, r_max, K)
    ref = np.zeros((N, K))
    for lag in range(N):
        for i in range(N - lag):
            y = 2 * ((X[i + lag] - X[i]) ** 2).sum() / r_max ** 2 - 1
            ref[lag] += b[i] * b[i + lag] * C.chebvander(np.array([y]), K - 1)[0]
    np.testing.assert_allclose(H, ref, rtol=1e-12, atol=1e-13)


# ---------------------------------------------------------------------------
# the route against the others and against a closed form
# ---------------------------------------------------------------------------
@pytest.mark.parametrize("d,T,model", [(3, 0.0, "two_level"), (3, 0.3, "density"),
                                       (2, 0.0, "two_level"), (1, 0.2, "two_level")])
def test_pair_route_agrees_with_the_direction_routes(d, T, model):
    """On a curved path (no lag structure) the pair sums and the direct sums
    over directions are independent evaluations of the same integrals; they
    agree within the sum of their reported errors."""
    cond = gas(d, T)
    probe = two_level(cond, 0.5, 0.7) if model == "two_level" else \
        DensityProbe(COUPLING, 0.7 * cond.healing_length)
    path = wobble(cond, 40.0)
    sw = PathSpan(path)
    rtol = 1e-4
    a = transit_probabilities(cond, probe, path, sw, rtol=rtol, method="pairs")
    b = transit_probabilities(cond, probe, path, sw, rtol=rtol, method="phasor")
    assert a.grid["method"] == "pairs" and a.achieved_rtol < rtol
    for name in names(probe):
        x, y = getattr(a, name), getattr(b, name)
        if y == 0:
            continue
        assert abs(x - y) <= error_of(a, name) + error_of(b, name) + 1e-14 * abs(y), name
        assert x == pytest.approx(y, rel=3 * rtol), name


def test_pair_route_error_bounds_the_true_error():
    """At rtol 1e-3 the pair route's reported errors bound its deviation
    from a reference of the FFT route at rtol 1e-5 (whose own error is
    added); the loose run takes the coarse first rung of its time ladder."""
    cond = gas(3)
    probe = two_level(cond, 0.5, 0.7)
    path = wobble(cond, 40.0, 400)
    sw = PathSpan(path)
    loose = transit_probabilities(cond, probe, path, sw, rtol=1e-3, method="pairs")
    ref = transit_probabilities(cond, probe, path, sw, rtol=1e-5, method="fft")
    for name in names(probe):
        dev = abs(getattr(loose, name) - getattr(ref, name))
        assert dev <= error_of(loose, name) + error_of(ref, name), (name, dev)
        assert dev <= 1e-3 * getattr(ref, name)


def erf_difference(a, b):
    """erf(b) - erf(a) for a <= b without cancellation: as erfc(a) - erfc(b)
    when both are positive (erfc(-b) - erfc(-a) when both are negative), so
    a difference far below 1 keeps its relative accuracy.  (erf(b) - erf(a)
    of two numbers near 1 keeps only an absolute 1e-16: the up probability
    of a subsonic crossing, exp(-(D + w - q v)^2 tau^2) at most, lies below
    it over most of its q range, and quad then stops at rounding noise.)"""
    if a >= 0:
        return special.erfc(a) - special.erfc(b)
    if b <= 0:
        return special.erfc(-b) - special.erfc(-a)
    return special.erf(b) - special.erf(a)


def gaussian_crossing(d, gap, speed, tau, width):
    """Closed form (PHYSICS.md section 4, T = 0, Bogoliubov, q = k xi): on
    x = v t with chi = exp(-t^2/(2 tau^2)) the time integral is
    |a|^2 = 2 pi tau^2 exp(-(D + w - q v u)^2 tau^2), u the cosine to the
    path; the angular integral is done in closed form (3D: erf; 1D: u = +-1)
    and the q integral by scipy quad.  Returns P / (A xi^-d (xi/c)^2)."""
    def omega(q):
        return q * math.sqrt(1 + 0.25 * q * q)

    def weight(q):
        S = q * q / 2 / omega(q) if q > 0 else 0.0
        return S * math.exp(-(q * width) ** 2)

    def integrand(q):
        X = gap + omega(q)
        g = 2 * math.pi * tau ** 2
        if d == 1:
            ang = sum(math.exp(-((X - s * q * speed) * tau) ** 2) for s in (1, -1))
            return weight(q) * g * ang / (2 * math.pi)
        kv = q * speed
        if kv == 0:     # at rest: the limit of the erf difference, 2 exp(-X^2 tau^2)
            return q * q * weight(q) * g * 2 * math.exp(-(X * tau) ** 2) / (2 * math.pi) ** 2
        ang = math.sqrt(math.pi) / (2 * kv * tau) * erf_difference((X - kv) * tau,
                                                                   (X + kv) * tau)
        return q * q * weight(q) * g * 2 * math.pi * ang / (2 * math.pi) ** 3

    q_hi = 12.0 / max(width, 0.1)
    with warnings.catch_warnings():
        # a reference that quad cannot resolve to 1e-12 fails the test
        warnings.simplefilter("error", integrate.IntegrationWarning)
        val, err = integrate.quad(integrand, 0.0, q_hi, limit=400, epsabs=0, epsrel=1e-12,
                                  points=[0.5, 1, 2, 4])
    return val


def test_gaussian_crossing_reference_against_mpmath():
    """The closed-form reference itself, for the subsonic 3D crossing whose up
    probability (off resonance, ~1e-8 of the down one) is a difference of two
    error functions near 1: scipy quad on the cancellation-free form against
    the same integral at 30 digits by mpmath (erf in multiple precision,
    quad split at the same points)."""
    import mpmath

    gap, speed, tau, width = 0.5, 0.6, 6.0, 0.7
    with mpmath.workdps(30):
        def integrand(q):
            w = q * mpmath.sqrt(1 + q * q / 4)
            X, kv = gap + w, q * speed
            weight = q * q / 2 / w * mpmath.exp(-(q * width) ** 2)
            ang = mpmath.sqrt(mpmath.pi) / (2 * kv * tau) * (mpmath.erf((X + kv) * tau)
                                                              - mpmath.erf((X - kv) * tau))
            return q * q * weight * 2 * mpmath.pi * tau ** 2 * 2 * mpmath.pi * ang \
                / (2 * mpmath.pi) ** 3
        ref = mpmath.quad(integrand, [mpmath.mpf("1e-30"), 0.5, 1, 2, 4, 12.0 / width])
    assert gaussian_crossing(3, gap, speed, tau, width) == pytest.approx(float(ref), rel=1e-12)


@pytest.mark.parametrize("d,speed", [(3, 1.4), (3, 0.6), (1, 1.4), (3, 0.0), (1, 0.0)])
def test_pair_route_against_the_gaussian_crossing_closed_form(d, speed):
    """The up and down probabilities of a straight crossing with Gaussian
    switching against the closed form of the time integral (scipy quad over
    q, 1e-12): within the pair route's reported error.  At speed 0 the path
    has no extent (every separation 0: the series' range must stay positive)."""
    cond = gas(d)
    w0, c = cond.frequency_unit, cond.sound_speed
    gap, tau, width = 0.5, 6.0, 0.7
    probe = two_level(cond, gap, width)
    res = transit_probabilities(cond, probe, Linear(speed * c, (1.0,) + (0.0,) * (d - 1)),
                                Gaussian(tau / w0), rtol=1e-5, method="pairs")
    assert res.grid["method"] == "pairs"
    A = (probe.coupling / HBAR) ** 2 * cond.density
    pref = A * cond.healing_length ** (-d) / w0 ** 2
    for name, D in (("up_probability", gap), ("down_probability", -gap)):
        ref = pref * gaussian_crossing(d, D, speed, tau, width)
        got = getattr(res, name)
        assert abs(got - ref) <= error_of(res, name) + 1e-10 * ref, (name, got / ref - 1)
        assert got == pytest.approx(ref, rel=1e-5)


def test_pairs_method_and_its_refusal():
    """``method="pairs"`` names the route; a direction spectrum needs the
    directions (InputError on ``method``)."""
    cond = gas(3)
    probe = two_level(cond, 0.5, 0.7)
    path = wobble(cond, 20.0, 200)
    with pytest.raises(InputError) as e:
        transit_probabilities(cond, probe, path, PathSpan(path), method="pairs", spectrum=True)
    assert e.value.key == "method" and "pair" in e.value.message
    res = transit_probabilities(cond, probe, path, PathSpan(path), rtol=1e-3)
    assert res.grid["method"] == "pairs"           # short transit: the cheapest


# ---------------------------------------------------------------------------
# many gaps from shared lag sums
# ---------------------------------------------------------------------------
@pytest.mark.parametrize("d,T", [(3, 0.0), (2, 0.3)])
def test_gap_scan_equals_transits_one_gap_at_a_time(d, T):
    """Every gap of a scan agrees with its transit computed on its own
    within the sum of the two reported errors (each within rtol); the
    progress callback counts every probe once."""
    cond = gas(d, T)
    path = wobble(cond, 50.0, 500)
    sw = PathSpan(path)
    rtol = 1e-4
    gaps = [0.05, 0.1, 0.2, 0.3, 0.5, 0.8, 1.2, 1.5, 2.0, 3.0]
    probes = [two_level(cond, g, 0.7) for g in gaps]
    counted = []
    scan = GapScan(cond, path, sw, rtol=rtol)
    results = scan.results(probes, progress=counted.append)
    assert sum(counted) == len(probes)
    assert scan.shared is not None                       # the lag sums were shared
    for probe, res in zip(probes, results):
        one = transit_probabilities(cond, probe, path, sw, rtol=rtol)
        assert res.gap == pytest.approx(probe.gap, rel=1e-12)
        for name in names(probe):
            x, y = getattr(res, name), getattr(one, name)
            assert abs(x - y) <= error_of(res, name) + error_of(one, name), (name, x / y - 1)
            assert x == pytest.approx(y, rel=2 * rtol)
        assert res.achieved_rtol <= rtol or res.warnings
    # a later gap inside the grid reuses the sums
    shared = scan.shared
    again = scan.results([two_level(cond, 1.0, 0.7)])[0]
    assert scan.shared is shared
    one = transit_probabilities(cond, two_level(cond, 1.0, 0.7), path, sw, rtol=rtol)
    assert again.up_probability == pytest.approx(one.up_probability, rel=2 * rtol)


def test_gap_scan_of_a_long_crossing_goes_one_gap_at_a_time():
    """Where shared lag sums cost more than the transits (a long straight
    crossing: many Chebyshev terms) the scan computes each transit on its
    own: the very same numbers."""
    cond = gas(3)
    w0, c = cond.frequency_unit, cond.sound_speed
    path, sw = Linear(1.5 * c), Gaussian(40.0 / w0)
    probes = [two_level(cond, g, 0.7) for g in (0.3, 0.6)]
    scan = GapScan(cond, path, sw, rtol=1e-4)
    results = scan.results(probes)
    assert scan.shared is None
    for probe, res in zip(probes, results):
        one = transit_probabilities(cond, probe, path, sw, rtol=1e-4)
        assert res.up_probability == one.up_probability
        assert res.down_probability == one.down_probability


# ---------------------------------------------------------------------------
# solve and compare over the gap of a transit
# ---------------------------------------------------------------------------
def small_transit():
    """A 3D probe stirred on a 1 um loop with a wobble for 4 ms (about 40
    xi/c), switched on over the path with 0.5 ms ramps."""
    t = np.linspace(0.0, 4.0, 17)
    ph = 2 * np.pi * t / 4.0
    return {
        "condensate": {"dimension": 3, "species": "23Na", "density": "1e20 m^-3",
                       "scattering_length": "2.75 nm", "temperature": "0 nK"},
        "probe": {"model": "two-level", "gap": "300 Hz", "coupling_length": "0.5 nm",
                  "width": "0.4 um"},
        "trajectory": {"kind": "spline", "order": 3, "switching": "path", "ramp": "0.5 ms",
                       "waypoints": {"units": {"t": "ms", "x": "um", "y": "um", "z": "um"},
                                     "t": t.tolist(), "x": np.cos(ph).tolist(),
                                     "y": np.sin(ph).tolist(),
                                     "z": (0.2 * np.sin(3 * ph)).tolist()}},
        "numerics": {"transit_rtol": 1e-4},
    }


def test_scan_over_the_gap_equals_the_sweep_point_by_point():
    """The scan of ``solve`` and ``compare`` (shared lag sums) gives every
    column of the sweep that computes one transit per point, to the
    transit's accuracy; warnings alike."""
    from probe.design.gapscan import sweep_over_gaps
    from probe.design.sweep import plan_sweep, sweep

    plan = plan_sweep(small_transit(), [("probe.gap", "100 Hz", "2 kHz", 5)], log=("probe.gap",))
    new = sweep_over_gaps(plan)
    old = sweep(plan, ())
    assert new.columns == old.columns and new.units == old.units
    for name in ("up_probability", "down_probability", "emitted_phonons"):
        np.testing.assert_allclose(new.column(name), old.column(name), rtol=2e-4)
    for name in ("point", "probe.gap", "gap", "sound_speed"):
        np.testing.assert_array_equal(new.column(name), old.column(name))
    assert new.warnings == old.warnings


def test_solve_over_the_gap_of_a_transit_as_before():
    """``solve`` on a transit over its gap (scan and Brent's method on shared
    lag sums) finds the gap at which the transit computed on its own -- what
    solve evaluated before -- gives the target, to the transit's accuracy;
    the progress callback sees the scan's points and the refinement."""
    from probe.design.solver import solve
    from probe.design.sweep import evaluate_point

    raw = small_transit()
    steps = []
    sol = solve(raw, "probe.gap", "up_probability=5e-6", bounds="100 Hz:3 kHz",
                scan_points=15, progress=steps.append)
    assert sum(steps) > 15
    cols, _, row, _ = evaluate_point(raw, {"probe.gap": f"{sol.value!r} rad/s"})
    p = row[cols.index("up_probability")]
    assert p == pytest.approx(5e-6, rel=3e-4)
    assert sol.achieved == pytest.approx(5e-6, rel=1e-6)
