"""Faults found by a fault campaign, each checked against a reference named
beside it (a closed form, mpmath at high precision, an independent
quadrature or a limit) or against a clear refusal.

References:
  [PS]  L. Pitaevskii and S. Stringari, Bose-Einstein Condensation and
        Superfluidity (Oxford, 2016): the Bogoliubov spectrum and S(k).
  [CODATA] scipy.constants (CODATA recommended values).
"""
import json
import math
from pathlib import Path

import mpmath as mp
import numpy as np
import pytest
from click.testing import CliRunner
from scipy import constants as sc
from scipy.integrate import quad

from probe.cli import cli
from probe.design.sweep import parse_vary, plan_sweep

from probe.detectors import TwoLevelProbe
from probe.detectors.switching import Gaussian
from probe.engines.stationary import circular_rates, inertial_rates
from probe.engines.stationary.checks import guard
from probe.engines.transit import transit_probabilities
from probe.errors import InputError, ModelError
from probe.scenarios.config import load_config, override, scenario_from_dict
from probe.scenarios.units import parse_quantity, ureg

from trajectories import Linear

from conftest import rb_gas

HBAR = sc.hbar
EXAMPLES = Path(__file__).resolve().parents[1] / "examples"


# --- the golden-rule windows of straight motion, in SI and mpmath ----------------------------
def _bogoliubov_mp(cond):
    """omega(k), S(k) of the Bogoliubov gas from the SI formulas [PS]:
    hbar w = sqrt(eps (eps + 2 mu)), S = eps/(hbar w), eps = hbar^2 k^2/2m."""
    m, mu, hb = mp.mpf(cond.mass), mp.mpf(cond.chemical_potential), mp.mpf(HBAR)

    def omega(k):
        eps = hb * hb * k * k / (2 * m)
        return mp.sqrt(eps * (eps + 2 * mu)) / hb

    def S(k):
        eps = hb * hb * k * k / (2 * m)
        return eps / mp.sqrt(eps * (eps + 2 * mu))
    return omega, S


def _window_roots(omega, v, gap, c, m):
    """The edges of the down window (w + v k = gap, w - v k = gap) and of the
    up window (w - v k = -gap, two roots), found by mpmath from guesses of
    the phonon and free-particle limits (k ~ gap/(v +- c), k ~ 2 m v/hbar)."""
    hb = mp.mpf(HBAR)
    free = 2 * m * v / hb
    a = mp.findroot(lambda k: omega(k) + v * k - gap, gap / (v + c))
    b = mp.findroot(lambda k: omega(k) - v * k - gap, free)
    cc = mp.findroot(lambda k: omega(k) - v * k + gap, gap / (v - c))
    d = mp.findroot(lambda k: omega(k) - v * k + gap, free)
    return (a, b), (cc, d)


def _straight_reference(cond, kappa, gap, width, v, dim, weight=None, kmax=None):
    """Down and up rates of uniform straight motion at T = 0 (or with a
    ``weight`` n_k added to both, the thermal part) by 30-digit mpmath:
    3D Gamma = A/(2 pi v) int k S |F|^2 dk, 2D Gamma = A/(2 pi)
    int k S |F|^2 2/sqrt(k^2 v^2 - X^2) dk over each window, A =
    (kappa/hbar)^2 n, |F|^2 = exp(-k^2 s^2), X = w -+ gap."""
    mp.mp.dps = 30
    omega, S = _bogoliubov_mp(cond)
    v, gap, s = mp.mpf(v), mp.mpf(gap), mp.mpf(width)
    c, m = mp.mpf(cond.sound_speed), mp.mpf(cond.mass)
    A = (mp.mpf(kappa) / mp.mpf(HBAR)) ** 2 * mp.mpf(cond.density)
    top = mp.mpf(kmax) if kmax else (mp.mpf(14) / s if s > 0 else mp.inf)
    wt = weight or (lambda k: 1)

    def integral(lo, hi, sign):
        hi = min(hi, top)
        pts = [lo] + [lo + (hi - lo) * mp.mpf(10) ** -j for j in range(12, 0, -1)] + [hi]
        if dim == 3:
            return mp.quad(lambda k: k * S(k) * mp.exp(-(k * s) ** 2) * wt(k), pts) / (2 * mp.pi * v)

        def f(k):
            X = omega(k) + sign * gap
            arg = (k * v - X) * (k * v + X)
            return k * S(k) * mp.exp(-(k * s) ** 2) * wt(k) * 2 / mp.sqrt(arg) if arg > 0 else 0
        return mp.quad(f, pts) / (2 * mp.pi)
    (a, b), (cc, d) = _window_roots(omega, v, gap, c, m)
    return float(A * integral(a, b, -1)), float(A * integral(cc, d, +1))


def _assert_honest(value, error, ref, rtol):
    """The value meets the reference within its own error estimate, and that
    estimate within the requested rtol."""
    assert abs(value - ref) <= error, (value, ref, error)
    assert error <= rtol * abs(value), (error, value)


# --- 1. 3D straight motion with a width at high speed --------------------------------------
@pytest.mark.parametrize("speed", [2e4, 1e5, 1e6])
@pytest.mark.parametrize("width", [0.2e-6, 1e-6])
def test_fast_3d_probe_with_width_against_mpmath(speed, width):
    """A fast probe's window [k_a, ~2 m v/hbar] is far wider than the part
    where |F|^2 lives (k < ~10/s): the rates are the mpmath integral of
    the 3D formula, not 0 with an error of 0 (they were from 2e4 c_s with
    s = 0.2 um, from ~1e4 c_s with s = 1 um)."""
    cond = rb_gas(3)
    kappa, gap = 1e-50, 2 * math.pi * 150.0
    v = speed * cond.sound_speed
    r = inertial_rates(cond, TwoLevelProbe(gap, kappa, width=width), v, rtol=1e-8)
    down, up = _straight_reference(cond, kappa, gap, width, v, 3)
    _assert_honest(r.down_rate, r.down_rate_error, down, 1e-8)
    _assert_honest(r.up_rate, r.up_rate_error, up, 1e-8)


def test_fast_3d_warm_point_probe_against_mpmath():
    """The Bose occupation n_k = 1/(exp(hbar w/k_B T) - 1) confines the
    thermal part of a point probe's integrand to hbar w < ~ 100 k_B T, a
    tiny part of a fast probe's window: its share is the mpmath integral of
    A/(2 pi v) int k S n_k dk (it was 0 from ~1e5 c_s), added to both
    rates."""
    T = 50e-9
    cond = rb_gas(3, T=T)
    cold = rb_gas(3)
    kappa, gap = 1e-50, 2 * math.pi * 150.0
    v = 3e5 * cond.sound_speed
    r = inertial_rates(cond, TwoLevelProbe(gap, kappa), v, rtol=1e-8)
    r0 = inertial_rates(cold, TwoLevelProbe(gap, kappa), v, rtol=1e-8)
    omega, _ = _bogoliubov_mp(cond)
    kT = mp.mpf(sc.k * T)
    n_k = lambda k: 1 / mp.expm1(mp.mpf(HBAR) * omega(k) / kT)
    # n_k < 1e-80 beyond hbar w = 185 k_B T: the thermal integrand's support
    kmax = float(mp.findroot(lambda k: mp.mpf(HBAR) * omega(k) - 185 * kT, 1e7))
    th_down, th_up = _straight_reference(cond, kappa, gap, 0.0, v, 3, weight=n_k, kmax=kmax)
    thermal = th_down + th_up          # absorption from both windows
    assert thermal > 0
    _assert_honest(r.down_rate, r.down_rate_error + r0.down_rate_error,
                   r0.down_rate + thermal, 1e-8)
    _assert_honest(r.up_rate, r.up_rate_error + r0.up_rate_error, r0.up_rate + thermal, 1e-8)


# --- 2. 2D straight motion up to 1e6 c_s; exactly 1e6 c_s accepted -----------------------------
@pytest.mark.parametrize("speed", [1e4, 1e5, 3e5, 1e6])
def test_fast_2d_probe_against_mpmath(speed):
    """2D: the up window [k_c, k_d] of a fast probe spans k_d/k_c ~ 1e13; its
    factor kv - X = (k - k_c)(k_d - k) w[k, k_c, k_d] was formed through
    w^2, whose terms grow as k_d^4 and cancel (an infinite rate from
    3e5 c_s, errors above the estimate from 1e4 c_s).  Against 30-digit
    mpmath of 2/sqrt(k^2 v^2 - X^2)."""
    cond = rb_gas(2)
    kappa, gap = 1e-40, 2 * math.pi * 80.0
    width = 0.3e-6
    v = speed * cond.sound_speed
    r = inertial_rates(cond, TwoLevelProbe(gap, kappa, width=width), v, rtol=1e-8)
    down, up = _straight_reference(cond, kappa, gap, width, v, 2)
    _assert_honest(r.down_rate, r.down_rate_error, down, 1e-8)
    _assert_honest(r.up_rate, r.up_rate_error, up, 1e-8)


def test_exactly_the_largest_speed_is_accepted():
    """1e6 c_s is inside the stated range: the speed computed back from SI
    ('1e6 c_s' parsed to metres per second, divided by c) exceeds 1e6 by an
    ulp and must not be refused; the rates there scale as 1/v against those
    at 1e6/1.0001 c_s (the window integral has reached its v -> infinity
    value, int_0^inf k S |F|^2 dk).  Beyond the range: a refusal."""
    def run(speed):
        return CliRunner().invoke(cli, ["rates", str(EXAMPLES / "box3d_supersonic.toml"),
                                        "--json", "--set", f"trajectory.speed={speed} c_s"])
    top, near = run("1e6"), run(repr(1e6 / 1.0001))
    assert top.exit_code == 0, top.stderr
    assert json.loads(top.stdout)["down_rate"] == pytest.approx(
        json.loads(near.stdout)["down_rate"] / 1.0001, rel=1e-9)
    beyond = run("1.000001e6")
    assert beyond.exit_code == 2 and beyond.stderr.startswith("error: trajectory.speed: ")


# --- 3. physical constants from scipy.constants (CODATA) -----------------------------------------
def test_bohr_radius_and_atomic_mass_unit_are_codata():
    """'1 a0' is the CODATA Bohr radius and '1 u' the CODATA atomic mass
    constant exactly [CODATA]; pint's own Bohr radius, hbar/(alpha m_e c),
    was 5.291772105438828e-11 m."""
    assert parse_quantity("1 a0", "probe.coupling_length", "length") == \
        sc.physical_constants["Bohr radius"][0]
    assert parse_quantity("1 bohr", "probe.coupling_length", "length") == \
        sc.physical_constants["Bohr radius"][0]
    assert parse_quantity("1 u", "probe.mass", "mass") == sc.atomic_mass
    assert parse_quantity("1 Da", "probe.mass", "mass") == sc.atomic_mass


@pytest.mark.parametrize("name, value", [
    ("hbar", sc.hbar), ("planck_constant", sc.h), ("k_B", sc.k), ("c", sc.c),
    ("e", sc.e), ("m_e", sc.m_e), ("m_p", sc.m_p), ("m_n", sc.m_n), ("N_A", sc.N_A),
    ("alpha", sc.alpha), ("mu_0", sc.mu_0), ("epsilon_0", sc.epsilon_0),
    ("E_h", sc.physical_constants["Hartree energy"][0]),
    ("Ry", sc.physical_constants["Rydberg constant times hc in J"][0]),
    ("mu_B", sc.physical_constants["Bohr magneton"][0]),
    ("gravitational_constant", sc.G), ("eV", sc.eV),
])
def test_registry_constants_are_codata(name, value):
    """Every constant of the unit registry a scenario may use has the value
    of scipy.constants [CODATA] (SI base units), not pint's recomputed one."""
    assert ureg.Quantity(1.0, name).to_base_units().magnitude == value


def test_a_non_finite_rate_is_refused_under_a_real_key():
    """The guard against a NaN, infinite or negative output names the
    motion's key trajectory.speed (it named 'inputs', which is no key)."""
    cond = rb_gas(3)
    r = inertial_rates(cond, TwoLevelProbe(2 * math.pi * 150.0, 1e-50), 2 * cond.sound_speed)
    r.up_rate = math.inf
    with pytest.raises(ModelError) as err:
        guard(cond, TwoLevelProbe(2 * math.pi * 150.0, 1e-50), r)
    assert err.value.key == "trajectory.speed"


# --- 4. rtol = 1e-12 near the 3D threshold; a subsonic 3D circle -------------------------------
def _omega_q(q):
    """Bogoliubov w(q) = q sqrt(1 + q^2/4) in the gas's units (q = k xi) [PS]."""
    return q * mp.sqrt(1 + q * q / 4)


def _threshold_3d(W):
    """(v_th, q*) of the gap W (units c/xi) by 40-digit mpmath:
    q w'(q) - w(q) = W at q*, v_th = (w(q*) + W)/q*."""
    W = mp.mpf(W)
    guess = mp.cbrt(4 * W) if W < 1 else mp.sqrt(2 * W)
    qs = mp.findroot(lambda q: q * mp.diff(_omega_q, q) - _omega_q(q) - W, guess)
    return (_omega_q(qs) + W) / qs, qs


@pytest.mark.parametrize("W", [1e-8, 0.32, 30.0])
@pytest.mark.parametrize("excess", [1e-11, 1e-6])
@pytest.mark.parametrize("width", [0.0, 0.4])
def test_3d_up_rate_just_above_threshold_meets_rtol_1e12(W, excess, width):
    """At v = v_th (1 + 1e-11) the up window is 4e-6 q* wide; its edges
    found in double precision left the rate a relative error ~eps/1e-11
    (2e-7 to 3e-6, reported as 1e-10).  Against 40-digit mpmath: the edges
    by findroot bracketed at q*, the 3D integral (1/(2 pi v)) int_c^d
    q S |F|^2 dq by tanh-sinh (units A xi^-3 xi/c)."""
    mp.mp.dps = 40
    cond = rb_gas(3)
    c, xi, w0 = cond.sound_speed, cond.healing_length, cond.frequency_unit
    kappa = 1e-50
    vt, qs = _threshold_3d(W)
    speed = float(vt * (1 + mp.mpf(excess))) * c
    v = mp.mpf(float(np.float64(speed) / c))            # the speed the engine sees
    probe = TwoLevelProbe(W * w0, kappa, width=width * xi)
    r = inertial_rates(cond, probe, speed, rtol=1e-12)
    Wm, s = mp.mpf(W), mp.mpf(width)
    g = lambda q: _omega_q(q) - v * q + Wm
    reach = 4 * mp.sqrt((v - vt) * qs / mp.diff(_omega_q, qs, 2)) + qs / 100
    lo = mp.findroot(g, (max(qs - reach, Wm / (2 * v)), qs), solver="anderson")
    hi = mp.findroot(g, (qs, qs + reach), solver="anderson")
    S = lambda q: q / mp.sqrt(4 + q * q)
    ref = mp.quad(lambda q: q * S(q) * mp.exp(-(q * s) ** 2), [lo, hi]) / (2 * mp.pi * v)
    pref = (kappa / HBAR) ** 2 * cond.density / xi ** 3 / w0
    _assert_honest(r.up_rate, r.up_rate_error, float(ref) * pref, 1e-12)


def _w3_mp(m, x):
    """W_m(x) = (1/2) int_{-1}^{1} J_m(x sqrt(1 - u^2))^2 du, the spherical
    average of J_m^2, in its closed form (1/x) sum_j J_{2m+2j+1}(2x)
    (Watson, Theory of Bessel Functions, sec. 5.21 and 2.22), mpmath."""
    m, total, j = abs(m), mp.mpf(0), 0
    while True:
        term = mp.besselj(2 * m + 2 * j + 1, 2 * x)
        total += term
        if j > 2 * x + 5 and abs(term) < mp.mpf(10) ** -45 * abs(total):
            return total / x
        j += 1


def _circle_reference(R, v, W, s):
    """(down, up) of a subsonic 3D circle at T = 0 by a 40-digit harmonic
    sum: harmonic m absorbs the shell w_q = +-W + m v/R with weight
    q^2 S |F|^2 W_m(q R)/(pi v_g) (units A xi^-3 xi/c, gas units)."""
    mp.mp.dps = 40
    R, v, W, s = (mp.mpf(z) for z in (R, v, W, s))
    inverse = lambda w: mp.sqrt(2 * w * w / (mp.sqrt(1 + w * w) + 1))
    out = []
    for sign in (+1, -1):
        m, total = int(mp.floor(-sign * W * R / v)) + 1, mp.mpf(0)
        while True:
            q = inverse(sign * W + m * v / R)
            vg = (1 + q * q / 2) / mp.sqrt(1 + q * q / 4)
            term = q * q * q / mp.sqrt(4 + q * q) / (mp.pi * vg) * mp.exp(-(q * s) ** 2) \
                * _w3_mp(m, q * R)
            total += term
            if m > 5 and term < mp.mpf(10) ** -30 * total:
                break
            m += 1
        out.append(float(total))
    return out


@pytest.mark.parametrize("R, v, W, s", [(2.0, 0.5, 0.32, 0.0), (3.0, 0.8, 0.32, 0.4)])
def test_subsonic_3d_circle_against_mpmath_and_rtol_below_the_floor(R, v, W, s):
    """A subsonic 3D circle: the rates within their reported error of the
    40-digit harmonic sum, at rtol 1e-8 and at the sums' floor 1e-12; an
    rtol below that floor is refused."""
    cond = rb_gas(3)
    c, xi, w0 = cond.sound_speed, cond.healing_length, cond.frequency_unit
    kappa = 1e-50
    probe = TwoLevelProbe(W * w0, kappa, width=s * xi)
    r = circular_rates(cond, probe, R * xi, v * c, rtol=1e-8)
    down, up = _circle_reference(R, v, W, s)
    pref = (kappa / HBAR) ** 2 * cond.density / xi ** 3 / w0
    _assert_honest(r.down_rate, r.down_rate_error, down * pref, 1e-8)
    _assert_honest(r.up_rate, r.up_rate_error, up * pref, 1e-8)
    r = circular_rates(cond, probe, R * xi, v * c, rtol=1e-12)
    _assert_honest(r.down_rate, r.down_rate_error, down * pref, 1e-12)
    _assert_honest(r.up_rate, r.up_rate_error, up * pref, 1e-12)
    with pytest.raises(InputError) as err:
        circular_rates(cond, probe, R * xi, v * c, rtol=5e-13)
    assert err.value.key == "numerics.rtol" and "1e-12" in err.value.message


# --- 5. the 1D phonon dispersion at v = c with a width -------------------------------------------
def test_1d_phonon_probe_with_width_at_the_sound_speed():
    """1D, w = c|k|, T = 0: the roots of k v = c|k| -+ Omega are
    k = -+Omega/(c -+ v) and -+Omega/(v +- c); at v = c the one of
    k(v - c) = Omega runs off to infinity, where exp(-k^2 s^2) removes it.
    The down rate is then A S(k1) |F(k1)|^2/(2c) at k1 = Omega/(2c),
    S = hbar k/(2 m c) (closed form), the up rate 0, and both continuous
    through v = c; a point probe (s = 0) diverges there and stays refused."""
    cond = rb_gas(1, dispersion="phonon")
    c, m = cond.sound_speed, cond.mass
    gap, kappa, s = 2 * math.pi * 100.0, 1e-38, 0.3e-6
    probe = TwoLevelProbe(gap, kappa, width=s)
    A = (kappa / HBAR) ** 2 * cond.density
    k1 = gap / (2 * c)
    down = A * HBAR * k1 / (2 * m * c) * math.exp(-(k1 * s) ** 2) / (2 * c)
    r = inertial_rates(cond, probe, c)
    assert r.down_rate == pytest.approx(down, rel=1e-12)
    assert r.up_rate == 0.0
    near = inertial_rates(cond, probe, np.array([1 - 1e-9, 1 + 1e-9]) * c)
    assert np.allclose(near.down_rate, down, rtol=1e-8)
    assert np.all(near.up_rate < 1e-300 + 1e-8 * down)
    with pytest.raises(ModelError) as err:
        inertial_rates(cond, TwoLevelProbe(gap, kappa), c)
    assert err.value.key == "trajectory.speed"


# --- 6. arguments of the Python API -----------------------------------------------------------
@pytest.mark.parametrize("rtol", [float("nan"), 0.0, -1.0, 10.0, "1e-8", True])
def test_engines_refuse_a_bad_rtol(rtol):
    cond = rb_gas(3)
    c, w0 = cond.sound_speed, cond.frequency_unit
    probe = TwoLevelProbe(0.5 * w0, 1e-50, width=0.3 * cond.healing_length)
    for call in (lambda: inertial_rates(cond, probe, 1.5 * c, rtol=rtol),
                 lambda: circular_rates(cond, probe, 3e-6, 0.5 * c, rtol=rtol)):
        with pytest.raises(InputError) as err:
            call()
        assert err.value.key == "numerics.rtol"
    with pytest.raises(InputError) as err:
        transit_probabilities(cond, probe, Linear(0.5 * c), Gaussian(20 / w0), rtol=rtol)
    assert err.value.key == "rtol"


def test_engines_refuse_complex_text_ragged_and_mismatched_arguments():
    """A complex speed lost its imaginary part; text, ragged lists and
    shapes that do not broadcast raised bare numpy errors."""
    cond = rb_gas(3)
    c, w0 = cond.sound_speed, cond.frequency_unit
    probe = TwoLevelProbe(0.5 * w0, 1e-50)
    cases = [
        (lambda: inertial_rates(cond, probe, np.array([1.5 + 1e-3j]) * c), "trajectory.speed"),
        (lambda: inertial_rates(cond, probe, (1.5 + 0j) * c), "trajectory.speed"),
        (lambda: inertial_rates(cond, probe, "fast"), "trajectory.speed"),
        (lambda: inertial_rates(cond, probe, [c, [c, 2 * c]]), "trajectory.speed"),
        (lambda: inertial_rates(cond, probe, np.ones((2, 3)) * c, gap=np.ones(2) * w0),
         "probe.gap"),
        (lambda: circular_rates(cond, probe, "3 um", c), "trajectory.radius"),
        (lambda: circular_rates(cond, probe, 3e-6 + 1e-7j, c), "trajectory.radius"),
        (lambda: circular_rates(cond, probe, [[3e-6], [3e-6, 4e-6]], c), "trajectory.radius"),
        (lambda: circular_rates(cond, probe, np.ones(3) * 3e-6, np.ones(2) * 0.5 * c),
         "trajectory.speed"),
    ]
    for call, key in cases:
        with pytest.raises(InputError) as err:
            call()
        assert err.value.key == key, (key, err.value)


# --- 7. a transit that meets its rtol is not reported as unconverged ---------------------------
def test_static_transit_meets_rtol_without_a_convergence_warning():
    """A probe at rest under a Gaussian switching chi = exp(-t^2/(2 tau^2)):
    P = A/(2 pi^2) int k^2 S |F|^2 |chi~(+-Omega + w_k)|^2 dk with
    |chi~(w)|^2 = 2 pi tau^2 exp(-w^2 tau^2) (closed-form transform),
    integrated here by scipy quad.  The refinement stopped with the radial
    part over its 24 % share while the total (4.4e-5) met rtol = 1e-4, and
    warned 'not converged'."""
    raw = override(load_config(EXAMPLES / "cross3d_gaussian.toml").raw,
                   "trajectory.speed=0 c_s")
    sc_ = scenario_from_dict(raw)
    cond, probe = sc_.condensate, sc_.probe
    r = transit_probabilities(cond, probe, sc_.trajectory, sc_.switching, rtol=1e-4)
    assert not any("not converged" in w for w in r.warnings), r.warnings
    assert r.achieved_rtol <= 1e-4
    m, mu, tau, s = cond.mass, cond.chemical_potential, 2e-3, probe.width
    A = (probe.coupling / HBAR) ** 2 * cond.density

    def w_S(k):
        eps = HBAR ** 2 * k * k / (2 * m)
        hw = math.sqrt(eps * (eps + 2 * mu))
        return hw / HBAR, eps / hw
    xi = cond.healing_length
    for sign, got, err in ((+1, r.up_probability, r.up_probability_error),
                           (-1, r.down_probability, r.down_probability_error)):
        f = lambda k: k * k * w_S(k)[1] * math.exp(-(k * s) ** 2) \
            * math.exp(-((sign * probe.gap + w_S(k)[0]) * tau) ** 2)
        integral, _ = quad(f, 0, 20 / xi, points=[1e-3 / xi, 0.1 / xi, 1 / xi], limit=500,
                           epsabs=0, epsrel=1e-12)
        _assert_honest(got, err, A * tau ** 2 / math.pi * integral, 1e-4)


# --- 8. command-line refusals -----------------------------------------------------------------
def _cli(*args):
    return CliRunner().invoke(cli, [str(a) for a in args])


def _refused(result, key):
    """Exit 2 with one line 'error: <key>: ...'."""
    lines = result.stderr.strip().splitlines()
    assert result.exit_code == 2 and len(lines) == 1, (result.exit_code, result.output)
    assert lines[0].startswith(f"error: {key}: "), lines[0]
    return lines[0]


def test_solve_refuses_an_empty_target_value():
    """'up_rate=' was read as 1 1/s (pint parses '' as 1)."""
    line = _refused(_cli("solve", EXAMPLES / "box3d_supersonic.toml", "--for",
                         "trajectory.speed", "--target", "up_rate="), "--target")
    assert "needs a value" in line


def test_threshold_refuses_gaps_outside_the_rates_range():
    """The gaps of 'probe rates' are 1e-12 .. 1e12 c/xi; 1e20 Hz was tabulated."""
    line = _refused(_cli("threshold", EXAMPLES / "box3d_supersonic.toml", "--vary",
                         "probe.gap=1Hz:1e20Hz:3"), "probe.gap")
    assert "above 1e+12 c/xi" in line
    _refused(_cli("rates", EXAMPLES / "box3d_supersonic.toml", "--set", "probe.gap=1e20 Hz"),
             "probe.gap")


def test_a_huge_value_makes_a_short_message(tmp_path):
    """A 10 MB species string was quoted whole in the message line."""
    text = (EXAMPLES / "box3d_supersonic.toml").read_text()
    path = tmp_path / "big.toml"
    path.write_text(text.replace('species = "41K"', 'species = "' + "X" * 10_000_000 + '"'))
    line = _refused(_cli("rates", path), "probe.species")
    assert len(line) < 300 and "XXX...'" in line


def test_leftover_window_keys_are_named_when_switching_changes(tmp_path):
    """A window scenario switched to 'gaussian' keeps its stop and ramp: the
    refusal names them (it named trajectory.start, which the linear path then
    read as its start point)."""
    r = _cli("transit", EXAMPLES / "transits" / "ramsey3d_rest.toml",
             "--set", "trajectory.switching=gaussian")
    assert "not used with switching = 'gaussian'" in _refused(r, "trajectory.ramp")


# --- 9. sizes predicted before allocation -----------------------------------------------------
@pytest.mark.parametrize("vary", [["trajectory.speed=1c_s:2c_s:" + "1" + "0" * 30],
                                  ["trajectory.speed=1c_s:2c_s:1000000",
                                   "probe.gap=100Hz:200Hz:1000000"]])
def test_grid_size_checked_before_any_axis_is_allocated(vary):
    """10^30 points raised numpy's 'Maximum allowed size exceeded'; 10^6 x
    10^6 allocated both axes first (and 10^12 on one axis, 7 TiB)."""
    with pytest.raises(InputError) as err:
        plan_sweep(str(EXAMPLES / "box3d_supersonic.toml"), [parse_vary(v) for v in vary])
    assert err.value.key == "--vary" and "more than the limit" in err.value.message


def test_transit_time_grid_too_large_for_the_machine_is_refused():
    """A gap of 2.89e15 rad/s (inside the gap range) needs 2.6e13 time nodes
    for a 2 ms Gaussian switching: refused before the 191 TiB grid is
    allocated, naming the gap and what the machine holds."""
    line = _refused(_cli("transit", EXAMPLES / "cross3d_gaussian.toml",
                         "--set", "probe.gap=2.89e15 rad/s"), "probe.gap")
    assert "time grid needs" in line and "this machine holds at most" in line
