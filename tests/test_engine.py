"""Stationary golden-rule rates checked against closed forms, limits and
independent numerical routes.

Sources named beside each check:
  [PS]   L. Pitaevskii and S. Stringari, Bose-Einstein Condensation and
         Superfluidity (Oxford, 2016): Bogoliubov spectrum and S(k).
  [AP]   G. E. Astrakharchik and L. P. Pitaevskii, PRA 70, 013608 (2004):
         drag force on an impurity.
  [KMS]  detailed balance of a detector in a thermal state: N. D. Birrell and
         P. C. W. Davies, Quantum Fields in Curved Space (1982); W. G. Unruh,
         PRD 14, 870 (1976).
  [GF]   V. L. Ginzburg and V. P. Frolov, Sov. Phys. Usp. 30, 1073 (1987):
         anomalous Doppler effect above a threshold speed.
  [PHS]  D. S. Petrov, M. Holzmann, G. V. Shlyapnikov, PRL 84, 2551 (2000).
  [Ol]   M. Olshanii, PRL 81, 938 (1998).
"""
import math

import mpmath as mp
import numpy as np
import pytest
from scipy import constants as sc
from scipy.integrate import quad
from scipy.optimize import brentq, minimize_scalar
from scipy.special import j0, spherical_jn

from probe.gas.condensate import Condensate
from probe.gas.dispersion import Bogoliubov
from probe.engines.stationary import circular_rates, inertial_rates, stationary_rates
from probe.errors import ModelError
from probe.detectors import DensityProbe, TwoLevelProbe, coupling_from_scattering_length
from trajectories import Circular, Linear

from conftest import RB87_MASS, RB87_SCATTERING_LENGTH, rb_gas

HBAR, KB = sc.hbar, sc.k
M_RB, A_RB = RB87_MASS, RB87_SCATTERING_LENGTH


def gas3(T=0.0, n=1e20, dispersion="bogoliubov"):
    return rb_gas(3, T, dispersion, density=n)


def gas2(T=0.0, n=1e14):
    return rb_gas(2, T, density=n)


def gas1(T=0.0, n=5e7):
    return rb_gas(1, T, density=n, transverse_frequency=2 * math.pi * 10e3)


def bogoliubov_si(cond, k):
    """Bogoliubov w_k, S(k), v_g(k) straight from the SI formulas [PS]."""
    m, mu = cond.mass, cond.chemical_potential
    eps = HBAR**2 * k**2 / (2 * m)
    hw = np.sqrt(eps * (eps + 2 * mu))
    with np.errstate(invalid="ignore", divide="ignore"):
        return hw / HBAR, eps / hw, (eps + mu) * HBAR * k / (m * hw)


def k_of_omega_si(cond, w):
    """Invert hbar w = sqrt(eps (eps + 2 mu)) numerically (brentq)."""
    return brentq(lambda k: bogoliubov_si(cond, k)[0] - w, 1e-3, 1e12, xtol=1e-30, rtol=1e-15)


# --- Bogoliubov spectrum [PS] ---------------------------------------------
def test_bogoliubov_limits():
    b = Bogoliubov()
    q = np.array([1e-4, 1e-3])
    # phonon regime: w -> c k, S -> hbar k / (2 m c)  (units c = xi = 1)
    assert np.allclose(b.omega(q), q, rtol=1e-6)
    assert np.allclose(b.structure_factor(q), q / 2, rtol=1e-6)
    assert np.allclose(b.group_velocity(q), 1, rtol=1e-6)
    # free-particle regime: hbar w -> eps_k + mu, S -> 1
    Q = np.array([1e3, 1e4])
    assert np.allclose(b.omega(Q), Q**2 / 2 + 1, rtol=1e-6)
    assert np.allclose(b.structure_factor(Q), 1 - 2 / Q**2, rtol=1e-6)
    # Feynman relation S = eps_k / (hbar w_k) and dw/dk by central differences
    q = np.linspace(0.05, 20, 50)
    assert np.allclose(b.structure_factor(q), 0.5 * q**2 / b.omega(q), rtol=1e-13)
    h = 1e-6
    assert np.allclose(b.group_velocity(q), (b.omega(q + h) - b.omega(q - h)) / (2 * h), rtol=1e-8)
    assert np.allclose(b.omega(b.inverse(b.omega(q))), b.omega(q), rtol=1e-14)


def test_dimensionless_units_match_si():
    cond = gas3()
    k = np.array([1e5, 1e6, 1e7])
    w, S, vg = bogoliubov_si(cond, k)
    q = k * cond.healing_length
    d = cond.dispersion
    assert np.allclose(d.omega(q) * cond.frequency_unit, w, rtol=1e-13)
    assert np.allclose(d.structure_factor(q), S, rtol=1e-13)
    assert np.allclose(d.group_velocity(q) * cond.sound_speed, vg, rtol=1e-13)


# --- static probe ------------------------------------------------------------
@pytest.mark.parametrize("dim", [1, 2, 3])
def test_static_emission_closed_form(dim):
    """Static probe: Gamma_down = A S |F|^2 {k^2/(pi v_g), k/v_g, 2/v_g}
    at w_k = Omega (golden rule with the density of states of a d-sphere)."""
    cond = {1: gas1, 2: gas2, 3: gas3}[dim]()
    kappa = 1e-50 * 1e10 ** (3 - dim)
    s = 0.3 * cond.healing_length
    gap = 0.7 * cond.frequency_unit
    probe = TwoLevelProbe(gap, kappa, width=s)
    k = k_of_omega_si(cond, gap)
    w, S, vg = bogoliubov_si(cond, k)
    A = (kappa / HBAR) ** 2 * cond.density
    geo = {3: k**2 / (math.pi * vg), 2: k / vg, 1: 2 / vg}[dim]
    expected = A * S * math.exp(-(k * s) ** 2) * geo
    r = inertial_rates(cond, probe, 0.0)
    assert r.down_rate == pytest.approx(expected, rel=1e-11)
    assert r.up_rate == 0.0
    # continuity as v -> 0 (the window shrinks onto the resonance shell)
    r2 = inertial_rates(cond, probe, 1e-7 * cond.sound_speed)
    assert r2.down_rate == pytest.approx(expected, rel=1e-6)


@pytest.mark.parametrize("dim", [1, 2, 3])
@pytest.mark.parametrize("T_nK", [5.0, 50.0, 500.0])
def test_detailed_balance_static(dim, T_nK):
    """[KMS] a static detector in a thermal gas: up/down = exp(-hbar Omega/k_B T),
    so the effective temperature equals the gas temperature."""
    T = T_nK * 1e-9
    cond = {1: gas1, 2: gas2, 3: gas3}[dim](T=T)
    gap = 2 * math.pi * 300.0
    r = inertial_rates(cond, TwoLevelProbe(gap, 1e-50 * 1e10 ** (3 - dim)), 0.0)
    assert r.up_rate / r.down_rate == pytest.approx(math.exp(-HBAR * gap / (KB * T)), rel=1e-12)
    assert r.effective_temperature == pytest.approx(T, rel=1e-10)


# --- drag on a structureless impurity [AP] ---------------------------------------
def test_drag_force_3d_closed_form():
    """[AP] F = kappa^2 n m^3 (v^2 - c^2)^2 / (pi hbar^4 v^2) above c, 0 below
    (Landau criterion)."""
    cond = gas3()
    kappa = 2e-50
    c = cond.sound_speed
    v = np.array([0.3, 0.99, 1.0, 1.001, 1.2, 2.0, 5.0]) * c
    r = inertial_rates(cond, DensityProbe(kappa), v)
    F = kappa**2 * cond.density * M_RB**3 * np.maximum(v**2 - c**2, 0) ** 2 / (math.pi * HBAR**4 * v**2)
    assert np.all(r.drag_force[v <= c] == 0)
    assert np.allclose(r.drag_force, F, rtol=1e-9, atol=0)
    # the power given to the gas is F v
    assert np.allclose(r.power, F * v, rtol=1e-9)


def test_drag_force_1d_closed_form():
    """[AP] in 1D the drag is velocity independent above c: F = 2 kappa^2 n m /
    hbar^2 (derived here from the single emission root k = 2 m sqrt(v^2-c^2)/hbar)."""
    cond = gas1()
    kappa = 1e-38
    c = cond.sound_speed
    v = np.array([0.5, 1.01, 1.5, 3.0]) * c
    r = inertial_rates(cond, DensityProbe(kappa), v)
    F = 2 * kappa**2 * cond.density * M_RB / HBAR**2
    assert r.drag_force[0] == 0
    assert np.allclose(r.drag_force[1:], F, rtol=1e-10)


def test_drag_force_temperature_independent():
    """In Bogoliubov theory the density response is T independent, so the net
    momentum transfer (emission (1+n) minus absorption n) equals the T = 0 drag."""
    v = 1.7 * gas3().sound_speed
    F0 = inertial_rates(gas3(), DensityProbe(1e-50), v).drag_force
    FT = inertial_rates(gas3(T=200e-9), DensityProbe(1e-50), v).drag_force
    assert FT == pytest.approx(F0, rel=1e-9)


# --- reduced dimensions [PHS], [Ol] ------------------------------------------------
def test_reduced_couplings_and_overlap_consistency():
    g3 = 4 * math.pi * HBAR**2 * A_RB / M_RB
    wz = 2 * math.pi * 5e3
    c2 = Condensate(2, M_RB, 1e14, A_RB, transverse_frequency=wz)
    lz = math.sqrt(HBAR / (M_RB * wz))
    assert c2.coupling == pytest.approx(g3 / (math.sqrt(2 * math.pi) * lz), rel=1e-14)  # [PHS]
    c1 = Condensate(1, M_RB, 5e7, A_RB, transverse_frequency=wz)
    assert c1.coupling == pytest.approx(2 * HBAR * wz * A_RB, rel=1e-14)  # [Ol]
    # a "probe" identical to a boson with s^2 = l^2/2 couples with the gas's own g_d
    for cond in (c2, c1):
        l = cond.transverse_length
        kap = coupling_from_scattering_length(A_RB, M_RB, M_RB, cond, width=l / math.sqrt(2))
        assert kap == pytest.approx(cond.coupling, rel=1e-13)


# --- anomalous Doppler threshold [GF] -------------------------------------------
def test_threshold_speed():
    cond = gas3()
    c, w0 = cond.sound_speed, cond.frequency_unit
    b = Bogoliubov()
    for W in [1e-6, 1e-3, 0.1, 1.0, 10.0]:
        vt = inertial_rates(cond, TwoLevelProbe(W * w0, 1e-50), c).up_threshold_speed / c
        # independent: minimise (w_k + Omega)/k with scipy
        ref = minimize_scalar(lambda q: (b.omega(q) + W) / q, bounds=(1e-9, 1e3),
                              method="bounded", options={"xatol": 1e-12}).fun
        assert vt == pytest.approx(ref, rel=1e-9)
        assert vt > 1
        if W <= 1e-3:  # small-gap asymptote 1 + (3/8)(4 Omega)^(2/3), derived from w ~ q + q^3/8
            assert vt - 1 == pytest.approx(0.375 * (4 * W) ** (2 / 3), rel=0.02)
    # up rate switches on exactly at the threshold (T = 0)
    W = 0.2
    probe = TwoLevelProbe(W * w0, 1e-50)
    vt = inertial_rates(cond, probe, c).up_threshold_speed
    r = inertial_rates(cond, probe, np.array([0.999999, 1.000001]) * vt)
    assert r.up_rate[0] == 0 and r.up_rate[1] > 0


def test_subsonic_up_rate_zero_at_zero_temperature():
    cond = gas3()
    r = inertial_rates(cond, TwoLevelProbe(0.1 * cond.frequency_unit, 1e-50),
                       np.linspace(0, 0.999, 20) * cond.sound_speed)
    assert np.all(r.up_rate == 0) and np.all(r.down_rate > 0)


# --- independent routes -------------------------------------------------------------
def test_3d_inertial_against_mpmath():
    """3D inertial, T > 0 and finite width, against a 30-digit mpmath route
    (edges by findroot, integral by tanh-sinh) of the same golden-rule formula."""
    mp.mp.dps = 30
    cond = gas3(T=80e-9)
    W, v, s = mp.mpf("0.35"), mp.mpf("1.8"), mp.mpf("0.4")
    T = mp.mpf(KB * 80e-9 / cond.energy_unit)
    w = lambda q: q * mp.sqrt(1 + q * q / 4)
    S = lambda q: q / mp.sqrt(4 + q * q)
    n = lambda q: 1 / mp.expm1(w(q) / T)
    g = lambda q, wt: q * S(q) * mp.exp(-(q * s) ** 2) * wt(q) / (2 * mp.pi * v)
    qa = mp.findroot(lambda q: w(q) + v * q - W, 0.1)
    qb = mp.findroot(lambda q: w(q) - v * q - W, 2.0)
    qc = mp.findroot(lambda q: w(q) - v * q + W, 0.3)
    qd = mp.findroot(lambda q: w(q) - v * q + W, 2.0)
    one = lambda q: 1
    I1p = mp.quad(lambda q: g(q, one), [qa, qb])
    I1t = mp.quad(lambda q: g(q, n), [qa, qb])
    I2p = mp.quad(lambda q: g(q, one), [qc, qd])
    I2t = mp.quad(lambda q: g(q, n), [qc, qd])
    down_ref = float(I1p + I1t + I2t)
    up_ref = float(I2p + I2t + I1t)
    c, xi = cond.sound_speed, cond.healing_length
    kappa = 1e-50
    probe = TwoLevelProbe(float(W) * cond.frequency_unit, kappa, width=float(s) * xi)
    r = inertial_rates(cond, probe, float(v) * c)
    pref = (kappa / HBAR) ** 2 * cond.density / xi**3 / cond.frequency_unit
    assert r.down_rate / pref == pytest.approx(down_ref, rel=1e-10)
    assert r.up_rate / pref == pytest.approx(up_ref, rel=1e-10)
    # the error estimate is an honest bound at the 1e-8 target
    assert abs(r.down_rate / pref - down_ref) <= max(r.down_rate_error / pref, 1e-12 * down_ref)
    assert r.down_rate_error / r.down_rate < 1e-8


def test_2d_inertial_against_mpmath():
    """2D windows have inverse-square-root edges; a 30-digit tanh-sinh
    quadrature (mpmath) of the raw integrand 2/sqrt(k^2 v^2 - X^2), with the
    edges found by findroot, is an independent route."""
    mp.mp.dps = 30
    cond = gas2(T=30e-9)
    T = mp.mpf(KB * 30e-9 / cond.energy_unit)
    w = lambda q: q * mp.sqrt(1 + q * q / 4)
    S = lambda q: q / mp.sqrt(4 + q * q)
    n = lambda q: 1 / mp.expm1(w(q) / T)
    one = lambda q: 1
    for v, W, guesses in [(0.6, 0.4, (0.2, 0.8, None, None)), (2.5, 0.3, (0.1, 4.7, 0.15, 4.5))]:
        r = inertial_rates(cond, TwoLevelProbe(W * cond.frequency_unit, 1e-40), v * cond.sound_speed)
        pref = (1e-40 / HBAR) ** 2 * cond.density / cond.healing_length**2 / cond.frequency_unit
        v_, W_ = mp.mpf(v), mp.mpf(W)

        def win(a, b, sgn, wt):
            X = lambda q: w(q) + sgn * W_
            return mp.quad(lambda q: q * S(q) * wt(q) * 2 / mp.sqrt((q * v_) ** 2 - X(q) ** 2)
                           / (2 * mp.pi), [a, b])
        qa = mp.findroot(lambda q: w(q) + v_ * q - W_, guesses[0])
        qb = mp.findroot(lambda q: w(q) - v_ * q - W_, guesses[1])
        down = win(qa, qb, -1, one) + win(qa, qb, -1, n)
        up = win(qa, qb, -1, n)
        if guesses[2] is not None:
            qc = mp.findroot(lambda q: w(q) - v_ * q + W_, guesses[2])
            qd = mp.findroot(lambda q: w(q) - v_ * q + W_, guesses[3])
            up += win(qc, qd, +1, one) + win(qc, qd, +1, n)
            down += win(qc, qd, +1, n)
        assert r.down_rate / pref == pytest.approx(float(down), rel=1e-9)
        assert r.up_rate / pref == pytest.approx(float(up), rel=1e-9)
        assert r.down_rate_error / r.down_rate < 1e-8


def test_1d_inertial_roots_by_brentq():
    """1D: Gamma = A sum_roots S/|v - sign(k) v_g| over k v = D + w(|k|),
    with the roots found here by brentq on the SI formulas."""
    cond = gas1()
    kappa = 1e-38
    A = (kappa / HBAR) ** 2 * cond.density
    c = cond.sound_speed
    gap = 0.5 * cond.frequency_unit
    v = 2.5 * c
    f = lambda k, D: D + bogoliubov_si(cond, abs(k))[0] - k * v
    down = up = 0.0
    ks = np.linspace(-4e8, 4e8, 400001)
    for D in (-gap, gap):
        vals = f(ks, D)
        for i in np.nonzero(np.sign(vals[:-1]) != np.sign(vals[1:]))[0]:
            kr = brentq(lambda k: f(k, D), ks[i], ks[i + 1], xtol=1e-20, rtol=1e-15)
            _, S, vg = bogoliubov_si(cond, abs(kr))
            term = A * S / abs(v - math.copysign(1, kr) * vg)
            if D < 0:
                down += term
            else:
                up += term
    r = inertial_rates(cond, TwoLevelProbe(gap, kappa), v)
    assert r.down_rate == pytest.approx(down, rel=1e-10)
    assert r.up_rate == pytest.approx(up, rel=1e-10)


def _time_domain_circular(cond, probe, R, v, mmax, nt):
    """Independent route for circular motion: the angle-averaged Wightman
    function on each k-shell along the orbit, G_k(s) = e^{i w s} f(k |x(s) - x(0)|)
    with f = J0 (2D) or sin(x)/x (3D), is periodic in s apart from e^{i w s};
    its Fourier coefficients c_m(k) over one period (trapezoid rule on the
    trajectory's own positions) weight the delta functions 2 pi delta(D + w - m w_c)."""
    d = cond.dimension
    traj = Circular(R, speed=v)
    wc = v / R
    t = np.arange(nt) * (2 * math.pi / wc) / nt
    x = traj.position(t)
    rho = np.linalg.norm(x - x[0], axis=1)
    c, xi, w0 = cond.sound_speed, cond.healing_length, cond.frequency_unit
    Wd = probe.gap / w0
    b = Bogoliubov()
    A = (probe.coupling / HBAR) ** 2 * cond.density
    total = {"down": 0.0, "up": 0.0}
    for key, sign in (("down", +1), ("up", -1)):
        for m in range(-mmax, mmax + 1):
            w = sign * Wd + m * wc / w0
            if w <= 0:
                continue
            q = b.inverse(w)
            k = q / xi
            f = j0(k * rho) if d == 2 else spherical_jn(0, k * rho)
            cm = np.real(np.mean(f * np.exp(-1j * m * wc * t)))
            vg = b.group_velocity(q) * c
            S = b.structure_factor(q)
            geo = k / vg if d == 2 else k**2 / (math.pi * vg)
            total[key] += A * S * geo * cm
    return total


@pytest.mark.parametrize("dim,R_xi,v_c", [(2, 3.0, 0.6), (2, 8.0, 1.6), (3, 2.0, 0.7), (3, 5.0, 1.4)])
def test_circular_against_time_domain(dim, R_xi, v_c):
    cond = gas2() if dim == 2 else gas3()
    probe = TwoLevelProbe(0.3 * cond.frequency_unit, 1e-50 * 1e10 ** (3 - dim))
    R, v = R_xi * cond.healing_length, v_c * cond.sound_speed
    r = circular_rates(cond, probe, R, v)
    ref = _time_domain_circular(cond, probe, R, v, mmax=120, nt=4096)
    assert r.down_rate == pytest.approx(ref["down"], rel=1e-9)
    assert r.up_rate == pytest.approx(ref["up"], rel=1e-9)
    # below sound speed the up rate is small but nonzero on a circle
    assert r.up_rate > 0


@pytest.mark.parametrize("dim", [2, 3])
def test_circular_small_radius_is_static(dim):
    """R -> 0 at fixed angular frequency: the probe sits still, every harmonic
    m != 0 carries J_m(kR)^2 ~ (kR)^(2|m|), so the rates approach the static
    ones as R^2."""
    cond = gas2() if dim == 2 else gas3()
    probe = TwoLevelProbe(0.5 * cond.frequency_unit, 1e-50 * 1e10 ** (3 - dim))
    static = inertial_rates(cond, probe, 0.0).down_rate
    wc = 0.2 * cond.frequency_unit
    errs = []
    for R_xi in (1e-1, 1e-2, 1e-3):
        R = R_xi * cond.healing_length
        errs.append(abs(circular_rates(cond, probe, R, wc * R).down_rate / static - 1))
    assert errs[1] < 0.02 * errs[0] and errs[2] < 0.02 * errs[1]
    assert errs[2] < 1e-5


@pytest.mark.parametrize("dim,order", [(2, 1.0), (3, 0.5)])
def test_circular_small_radius_fixed_speed(dim, order):
    """R -> 0 at fixed speed: w_c = v/R grows and the first harmonic's weight
    vanishes like (kR)^2 ~ v R, times the density of states at w ~ w_c
    (constant in 2D, ~ w_c^(1/2) in 3D): convergence ~ R (2D), ~ R^(1/2) (3D)."""
    cond = gas2() if dim == 2 else gas3()
    probe = TwoLevelProbe(0.5 * cond.frequency_unit, 1e-50 * 1e10 ** (3 - dim))
    static = inertial_rates(cond, probe, 0.0).down_rate
    v = 0.5 * cond.sound_speed
    e = [abs(circular_rates(cond, probe, R * cond.healing_length, v).down_rate / static - 1)
         for R in (1e-3, 1e-4)]
    assert e[1] / e[0] == pytest.approx(10 ** -order, rel=0.1)


@pytest.mark.parametrize("dim,v_c,R_xi,tol", [(2, 0.5, 200.0, 2e-3), (3, 0.5, 60.0, 2e-3),
                                              (3, 2.5, 100.0, 5e-3)])
def test_circular_large_radius_is_inertial(dim, v_c, R_xi, tol):
    """Large radius: the orbit is locally straight and the rates tend to the
    inertial ones.  (In 2D above the sound speed the wake of earlier laps
    crosses the orbit and the rate oscillates about the inertial value as R
    grows, so that case is not a clean limit and is left out.)"""
    cond = gas2() if dim == 2 else gas3()
    probe = TwoLevelProbe(0.3 * cond.frequency_unit, 1e-50 * 1e10 ** (3 - dim))
    v = v_c * cond.sound_speed
    lin = inertial_rates(cond, probe, v)
    circ = circular_rates(cond, probe, R_xi * cond.healing_length, v)
    assert circ.down_rate == pytest.approx(lin.down_rate, rel=tol)
    if v_c > 1:
        assert circ.up_rate == pytest.approx(lin.up_rate, rel=tol)


def test_trajectory_objects_route_to_engines():
    cond = gas3()
    probe = TwoLevelProbe(0.3 * cond.frequency_unit, 1e-50)
    v = 1.3 * cond.sound_speed
    a = stationary_rates(cond, probe, Linear(v, direction=(0, 1, 1)))
    assert a.down_rate == inertial_rates(cond, probe, v).down_rate
    R = 4 * cond.healing_length
    b = stationary_rates(cond, probe, Circular(R, speed=v, normal=(1, 0, 0)))
    assert b.down_rate == circular_rates(cond, probe, R, v).down_rate


def test_vectorised_grid_equals_pointwise():
    cond = gas3(T=20e-9)
    probe = TwoLevelProbe(0.3 * cond.frequency_unit, 1e-50, width=0.2 * cond.healing_length)
    v = np.linspace(0, 3, 7)[:, None] * cond.sound_speed
    gap = np.array([0.05, 0.3, 2.0])[None, :] * cond.frequency_unit
    grid = inertial_rates(cond, probe, v, gap=gap)
    assert grid.up_rate.shape == (7, 3)
    for i in range(7):
        for j in range(3):
            one = inertial_rates(cond, probe, float(v[i, 0]), gap=float(gap[0, j]))
            assert grid.down_rate[i, j] == pytest.approx(one.down_rate, rel=1e-12)
            assert grid.up_rate[i, j] == pytest.approx(one.up_rate, rel=1e-12, abs=0)


def test_phonon_dispersion_supersonic_point_probe_diverges():
    cond = gas3(dispersion="phonon")
    probe = TwoLevelProbe(0.3 * cond.frequency_unit, 1e-50)
    with pytest.raises(ModelError, match="diverges"):
        inertial_rates(cond, probe, 1.5 * cond.sound_speed)
    # subsonic is finite, and with a width the supersonic rate is finite
    assert inertial_rates(cond, probe, 0.5 * cond.sound_speed).down_rate > 0
    wide = TwoLevelProbe(0.3 * cond.frequency_unit, 1e-50, width=cond.healing_length)
    assert np.isfinite(inertial_rates(cond, wide, 1.5 * cond.sound_speed).up_rate)


def test_phonon_and_bogoliubov_agree_at_small_gap_and_speed():
    """For k xi << 1 the two spectra coincide [PS], so rates agree to O((k xi)^2)."""
    W = 1e-3
    lin = {}
    for disp in ("bogoliubov", "phonon"):
        cond = gas3(dispersion=disp)
        lin[disp] = inertial_rates(cond, TwoLevelProbe(W * cond.frequency_unit, 1e-50),
                                   0.5 * cond.sound_speed).down_rate
    assert lin["phonon"] == pytest.approx(lin["bogoliubov"], rel=1e-5)


def test_phonon_dispersion_with_width_against_quad():
    """Phonon spectrum, supersonic, Gaussian width: independent scipy quad."""
    cond = gas3(dispersion="phonon")
    s, W, v = 0.7, 0.2, 1.6
    probe = TwoLevelProbe(W * cond.frequency_unit, 1e-50, width=s * cond.healing_length)
    r = inertial_rates(cond, probe, v * cond.sound_speed)
    pref = (1e-50 / HBAR) ** 2 * cond.density / cond.healing_length**3 / cond.frequency_unit
    g = lambda q: q * (q / 2) * math.exp(-(q * s) ** 2) / (2 * math.pi * v)
    down = quad(g, W / (1 + v), np.inf, epsabs=0, epsrel=1e-12)[0]
    up = quad(g, W / (v - 1), np.inf, epsabs=0, epsrel=1e-12)[0]
    assert r.down_rate / pref == pytest.approx(down, rel=1e-9)
    assert r.up_rate / pref == pytest.approx(up, rel=1e-9)
