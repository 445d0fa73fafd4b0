"""Tests of the finite-transit engine against independent routes.

Units: the gas's natural units (lengths xi, times xi/c, frequencies c/xi)
are converted to SI through a sodium-like condensate; every check below is
dimensionless (ratios or relative differences).
"""
from __future__ import annotations

import json
import math

import numpy as np
import pytest
from scipy import constants as sc
from scipy import integrate, special

from probe.engines.stationary import circular_rates, inertial_rates
from probe.errors import InputError, ModelError
from probe.detectors import DensityProbe, TwoLevelProbe
from probe.detectors.switching import Gaussian, PathSpan, Window
from probe.engines.transit import transit_probabilities
from trajectories import Circular, Linear, Spline

from conftest import condensate

HBAR, KB = sc.hbar, sc.k
MASS = 23 * sc.atomic_mass
DENS = {3: 1e20, 2: 1e14, 1: 1e8}
WPERP = 2 * math.pi * 2e3
COUPLING = 1e-50           # J m^d (tiny: probabilities stay first order)


def gas(d, T=0.0, dispersion="bogoliubov"):
    """Condensate at dimensionless temperature T = k_B T / (m c^2)."""
    return condensate(d, MASS, DENS[d], 2.75e-9, WPERP, T_nat=T, dispersion=dispersion)


def two_level(cond, gap, width):
    """Gap in c/xi, width in xi."""
    return TwoLevelProbe(gap * cond.frequency_unit, COUPLING, width * cond.healing_length)


def prefactor(cond, probe):
    """A xi^-d (xi/c)^2: the dimensionless integral -> probability."""
    A = (probe.coupling / HBAR) ** 2 * cond.density
    return A * cond.healing_length ** (-cond.dimension) / cond.frequency_unit ** 2


# ---------------------------------------------------------------------------
# independent closed form for Gaussian switching on x = v t
# ---------------------------------------------------------------------------
def erf_difference(b, a):
    """erf(b) - erf(a) for b >= a without cancellation."""
    if a > 0:
        return special.erfc(a) - special.erfc(b)
    if b < 0:
        return special.erfc(-b) - special.erfc(-a)
    return special.erf(b) - special.erf(a)


def gaussian_inertial_probability(cond, gap, width, v, tau, D_sign):
    """P(D) for chi = exp(-t^2/(2 tau^2)), x = v t (dimensionless v, tau).

    |a|^2 = 2 pi tau^2 exp(-(D + w - k v cos th)^2 tau^2) (the Gaussian's
    transform).  Angles: 3D int_{-1}^{1} du exp(-(X - kvu)^2 tau^2)
    = sqrt(pi)/(2 k v tau) [erf((X + kv)tau) - erf((X - kv)tau)]
    (substitute y = (X - kvu) tau); 2D the angle integral by quad; 1D the
    two directions.  The radial integral by scipy quad, split at the
    resonance wavenumbers."""
    d = cond.dimension
    disp = cond.dispersion
    T = KB * cond.temperature / cond.energy_unit
    D = D_sign * gap

    def occ(q):
        return 0.0 if T == 0 else 1.0 / math.expm1(float(disp.omega(q)) / T)

    def angular(q, DD):
        X = DD + float(disp.omega(q))
        kv = q * v
        if d == 3:
            return (2 * math.pi) * 2 * math.pi * tau ** 2 * math.sqrt(math.pi) / (
                2 * kv * tau) * erf_difference((X + kv) * tau, (X - kv) * tau)
        if d == 2:
            f = lambda p: 2 * math.pi * tau ** 2 * math.exp(-((X - kv * math.cos(p)) * tau) ** 2)
            return 2 * integrate.quad(f, 0, math.pi, epsabs=0, epsrel=1e-12, limit=200)[0]
        return sum(2 * math.pi * tau ** 2 * math.exp(-((X - kv * u) * tau) ** 2) for u in (1, -1))

    def f(q):
        n = occ(q)
        return (q ** (d - 1) * float(disp.structure_factor(q)) * math.exp(-(q * width) ** 2)
                * ((1 + n) * angular(q, D) + n * angular(q, -D)) / (2 * math.pi) ** d)

    qmax = math.sqrt(40.0) / width
    # resonance shells: |D + w| = k v (either sign of D)
    pts = []
    for DD in (D, -D):
        for sgn in (1, -1):
            g = lambda q: float(disp.omega(q)) + DD - sgn * v * q
            grid = np.linspace(1e-9, qmax, 400)
            vals = [g(x) for x in grid]
            for i in range(len(grid) - 1):
                if vals[i] * vals[i + 1] < 0:
                    pts.append(float(__import__("scipy.optimize").optimize.brentq(
                        g, grid[i], grid[i + 1])))
    pts = sorted(p for p in pts if 0 < p < qmax)
    val = integrate.quad(f, 1e-12, qmax, points=pts or None, epsabs=0, epsrel=1e-11,
                         limit=500)[0]
    return val


@pytest.mark.parametrize("d", [3, 2, 1])
@pytest.mark.parametrize("T", [0.0, 0.5])
@pytest.mark.parametrize("method", ["phasor", "fft", "lag"])
def test_gaussian_inertial_closed_form(d, T, method):
    """Engine (both amplitude routes) vs the closed-form angular integral
    (radial by quad) for a sub- and a supersonic speed and several
    switching times."""
    cond = gas(d, T)
    w0 = cond.frequency_unit
    gap, width = 0.5, 0.5
    probe = two_level(cond, gap, width)
    pref = prefactor(cond, probe)
    cases = [(0.6, 1.0), (1.3, 3.0)] if d == 2 else [(0.6, 1.0), (0.6, 4.0), (1.5, 3.0)]
    for v, tau in cases:
        path = Linear(v * cond.sound_speed, (1.0, 0.0, 0.0)[:d])
        res = transit_probabilities(cond, probe, path, Gaussian(tau / w0), rtol=1e-5,
                                    method=method)
        assert res.grid["method"] == method
        for name, sign in (("up_probability", +1), ("down_probability", -1)):
            ref = gaussian_inertial_probability(cond, gap, width, v, tau, sign) * pref
            got = getattr(res, name)
            # agreement to the requested 1e-5 (closed form + quad at 1e-11)
            assert got == pytest.approx(ref, rel=1e-5, abs=1e-9 * res.down_probability), \
                (d, T, v, tau, name, got / ref - 1)
        assert res.achieved_rtol < 1e-5


@pytest.mark.parametrize("method", ["phasor", "fft"])
def test_emitted_phonon_spectrum_matches_closed_form(method):
    """dN/dk at the radial nodes vs the closed-form integrand of the up
    emission term (3D, T = 0, so emitted_phonons = up_probability); on the
    FFT route the nodes are uniform in frequency, not in k."""
    cond = gas(3)
    gap, width, v, tau = 0.4, 0.6, 1.6, 3.0
    probe = two_level(cond, gap, width)
    res = transit_probabilities(cond, probe, Linear(v * cond.sound_speed),
                                Gaussian(tau / cond.frequency_unit),
                                rtol=1e-5, spectrum=True, method=method)
    sp = res.spectrum
    xi = cond.healing_length
    q = sp["k"] * xi
    disp = cond.dispersion
    X = gap + disp.omega(q)
    kv = q * v
    ang = np.array([2 * math.pi * 2 * math.pi * tau ** 2 * math.sqrt(math.pi) / (2 * b * tau)
                    * erf_difference((x + b) * tau, (x - b) * tau) if b > 0 else 0.0
                    for x, b in zip(X, kv)])
    dn_dq = q ** 2 * disp.structure_factor(q) * np.exp(-(q * width) ** 2) * ang / (2 * math.pi) ** 3
    ref = dn_dq * prefactor(cond, probe) * xi
    peak = ref.max()
    np.testing.assert_allclose(sp["dN_dk"], ref, rtol=1e-8, atol=1e-10 * peak)
    # T = 0: every up transition emits, so the two numbers coincide (definition)
    assert res.emitted_phonons == pytest.approx(res.up_probability, rel=1e-14)
    # the spectra integrate to the totals (trapezoid over the nodes, smooth;
    # exactly with the engine's own quadrature weights)
    assert np.trapezoid(sp["dN_dk"], sp["k"]) == pytest.approx(res.emitted_phonons, rel=1e-4)
    assert np.sum(sp["dN_dk"] * sp["dk"]) == pytest.approx(res.emitted_phonons, rel=1e-12)
    assert np.sum(sp["dN_dcos_theta"] * np.diff(sp["cos_theta_edges"])) == pytest.approx(
        res.emitted_phonons, rel=1e-10)
    # energy spectrum: dN/dE = dN/dk / (hbar v_g c)
    np.testing.assert_allclose(sp["dN_dE"] * HBAR * cond.sound_speed * disp.group_velocity(q),
                               sp["dN_dk"], rtol=1e-12)


# ---------------------------------------------------------------------------
# long switching -> sqrt(pi) tau Gamma
# ---------------------------------------------------------------------------
def _smoothed_rate(rate_of_gap, gap, tau, h=0.02):
    """Gamma(Omega) + Gamma''(Omega)/(4 tau^2): the Gaussian |chi(f)|^2 =
    2 pi tau^2 e^{-f^2 tau^2} integrates to 2 pi sqrt(pi) tau, so
    P/(sqrt(pi) tau) is Gamma averaged over frequency with a normalised
    Gaussian of variance 1/(2 tau^2) -- the second-order term of that average
    (exact for inertial and, after the azimuthal average, circular motion)."""
    g = rate_of_gap(np.array([gap - h, gap, gap + h]))
    second = (g[0] - 2 * g[1] + g[2]) / h ** 2
    return g[1], g[1] + second / (4 * tau ** 2)


@pytest.mark.parametrize("kind,v,method", [("inertial", 0.5, "auto"), ("inertial", 2.0, "auto"),
                                           ("circular", 0.8, "phasor"),
                                           ("circular", 0.8, "fft"),
                                           ("circular", 0.8, "lag")])
def test_long_switching_tends_to_stationary_rate(kind, v, method):
    cond = gas(3)
    w0 = cond.frequency_unit
    gap, width, R = 0.5, 0.5, 3.0
    probe = two_level(cond, gap, width)
    if kind == "inertial":
        path = Linear(v * cond.sound_speed)
        rates = lambda g: inertial_rates(cond, probe, v * cond.sound_speed, gap=g * w0, rtol=1e-10)
    else:
        path = Circular(R * cond.healing_length, speed=v * cond.sound_speed)
        rates = lambda g: circular_rates(cond, probe, R * cond.healing_length,
                                         v * cond.sound_speed, gap=g * w0, rtol=1e-10)
    channels = ["down_probability"] + (["up_probability"] if (kind == "inertial" and v > 1) else [])
    devs = {ch: [] for ch in channels}
    taus = (5.0, 10.0, 20.0)
    for tau in taus:
        res = transit_probabilities(cond, probe, path, Gaussian(tau / w0), rtol=1e-4,
                                    method=method)
        for ch in channels:
            attr = "down_rate" if ch.startswith("down") else "up_rate"
            # down: Gamma(D = -Omega) -> smoothing over the gap with D = -gap
            fun = lambda g, attr=attr: np.asarray(getattr(rates(g), attr))
            plain, corrected = _smoothed_rate(fun, gap, tau)
            P_rate = getattr(res, ch) * w0 / (math.sqrt(math.pi) * tau)
            devs[ch].append((P_rate / plain - 1, P_rate / corrected - 1))
    for ch, dv in devs.items():
        plain = [abs(a) for a, _ in dv]
        corr = [abs(b) for _, b in dv]
        # the plain deviation shrinks with tau (like 1/tau^2 asymptotically)
        assert plain[1] < 0.6 * plain[0] and plain[2] < 0.6 * plain[1], (ch, dv)
        # at tau = 20 xi/c the transit rate is within 0.3 % of Gamma ...
        assert plain[2] < 3e-3, (ch, dv)
        # ... the second-order smoothing term removes most of the deviation,
        # and what is left falls faster (like 1/tau^4)
        assert corr[2] < 0.2 * plain[2], (ch, dv)
        assert corr[2] < 0.2 * corr[1], (ch, dv)


def test_circular_up_channel_tends_to_stationary_rate():
    """Up-transitions of a probe circling below the sound speed (the
    circular-motion excitation): with Gaussian switching P_up/(sqrt(pi) tau)
    -> Gamma_up of the stationary circular engine (an independent route:
    harmonic sums of the mode functions).  Gamma_up is steep in the gap, so
    the plain deviation is large at short tau and falls like 1/tau^2; with
    the second-order smoothing term what is left falls like 1/tau^4."""
    cond = gas(3)
    w0, xi, c = cond.frequency_unit, cond.healing_length, cond.sound_speed
    gap, width, R, v = 0.5, 0.5, 3.0, 0.8
    probe = two_level(cond, gap, width)
    path = Circular(R * xi, speed=v * c)
    fun = lambda g: np.asarray(circular_rates(cond, probe, R * xi, v * c, gap=g * w0,
                                              rtol=1e-10).up_rate)
    plain, corr = [], []
    for tau in (20.0, 40.0, 80.0):
        res = transit_probabilities(cond, probe, path, Gaussian(tau / w0), rtol=1e-5)
        g0, g2 = _smoothed_rate(fun, gap, tau)
        P_rate = res.up_probability * w0 / (math.sqrt(math.pi) * tau)
        plain.append(abs(P_rate / g0 - 1))
        corr.append(abs(P_rate / g2 - 1))
    assert plain[1] < 0.35 * plain[0] and plain[2] < 0.35 * plain[1], plain
    assert plain[2] < 6e-3, plain
    assert corr[1] < 0.05 * plain[1] and corr[2] < 0.05 * plain[2], (plain, corr)
    assert corr[2] < 0.2 * corr[1], corr


def test_window_switching_tends_to_rate_times_integral_of_chi_squared():
    """A long smooth window: |chi(f)|^2 -> 2 pi (int chi^2 dt) delta(f), so
    P -> Gamma int chi^2 dt (down channel, supersonic inertial, 3D)."""
    cond = gas(3)
    w0 = cond.frequency_unit
    gap, width, v = 0.5, 0.5, 1.6
    probe = two_level(cond, gap, width)
    gam = inertial_rates(cond, probe, v * cond.sound_speed, rtol=1e-10)
    devs = []
    for T in (20.0, 40.0):
        sw = Window(0.0, T / w0, 0.25 * T / w0)
        chi2 = integrate.quad(lambda x: float(sw(x / w0)) ** 2, 0, T, limit=200,
                              points=[0.25 * T, 0.75 * T])[0] / w0
        res = transit_probabilities(cond, probe, Linear(v * cond.sound_speed), sw, rtol=1e-4)
        devs.append(res.down_probability / (gam.down_rate * chi2) - 1)
    assert abs(devs[1]) < abs(devs[0])
    assert abs(devs[1]) < 0.03, devs


# ---------------------------------------------------------------------------
# trajectories
# ---------------------------------------------------------------------------
@pytest.mark.parametrize("method", ["phasor", "fft"])
def test_spline_through_a_straight_line_reproduces_linear(method):
    """An interpolating cubic spline through points of x = v t is that line
    (exact for linear data), so the probabilities must agree."""
    cond = gas(3)
    w0, c = cond.frequency_unit, cond.sound_speed
    probe = two_level(cond, 0.5, 0.5)
    v, tau = 1.4, 2.0
    t = np.linspace(-40.0, 40.0, 321) / w0        # covers the support +-8.6 tau
    direction = np.array([0.6, 0.0, 0.8])
    pos = (v * c * t)[:, None] * direction
    sp = Spline(t, pos)
    sw = Gaussian(tau / w0)
    a = transit_probabilities(cond, probe, sp, sw, rtol=1e-5, method=method)
    b = transit_probabilities(cond, probe, Linear(v * c, direction), sw, rtol=1e-5,
                              method=method)
    assert a.up_probability == pytest.approx(b.up_probability, rel=1e-9)
    assert a.down_probability == pytest.approx(b.down_probability, rel=1e-9)
    # and both agree with the closed form (rotation invariance of the gas)
    ref = gaussian_inertial_probability(cond, 0.5, 0.5, v, tau, +1) * prefactor(cond, probe)
    assert a.up_probability == pytest.approx(ref, rel=1e-5)


def test_planar_path_in_3d_gas_padded_and_too_many_components_rejected():
    cond2 = gas(2)
    probe2 = two_level(cond2, 0.5, 0.5)
    with pytest.raises(InputError) as e:
        transit_probabilities(cond2, probe2, Linear(1.0, (1.0, 0.0, 0.0)), Gaussian(1e-3))
    assert e.value.key == "trajectory"
    # a 2-component path in a 3D gas is padded: same as its 3-component twin
    cond = gas(3)
    probe = two_level(cond, 0.5, 0.5)
    sw = Gaussian(2.0 / cond.frequency_unit)
    a = transit_probabilities(cond, probe, Linear(1.2 * cond.sound_speed, (1.0, 1.0)), sw)
    b = transit_probabilities(cond, probe, Linear(1.2 * cond.sound_speed, (1.0, 1.0, 0.0)), sw)
    assert a.down_probability == pytest.approx(b.down_probability, rel=1e-12)


# ---------------------------------------------------------------------------
# detailed balance (KMS)
# ---------------------------------------------------------------------------
@pytest.mark.parametrize("d", [3, 1])
@pytest.mark.parametrize("method", ["phasor", "fft", "lag"])
def test_static_probe_detailed_balance(d, method):
    """A probe at rest in a thermal gas: with long switching
    P_up/P_down -> exp(-hbar Omega/k_B T) (KMS condition of the thermal
    Wightman function; Birrell and Davies 1982, Unruh PRD 14, 870 (1976))."""
    T, gap = 0.4, 0.5
    cond = gas(d, T)
    probe = two_level(cond, gap, 0.5)
    target = math.exp(-gap / T)
    devs = []
    for tau in (10.0, 20.0, 40.0):
        res = transit_probabilities(cond, probe, Linear(0.0, (1.0, 0.0, 0.0)[:d]),
                                    Gaussian(tau / cond.frequency_unit), rtol=1e-6,
                                    method=method)
        devs.append(abs(res.up_probability / res.down_probability / target - 1))
    assert devs[1] < 0.4 * devs[0] and devs[2] < 0.4 * devs[1], devs
    assert devs[2] < 3e-3, devs


# ---------------------------------------------------------------------------
# Mach (Cherenkov) cone of the density probe
# ---------------------------------------------------------------------------
@pytest.mark.parametrize("method", ["phasor", "fft"])
def test_density_probe_emits_on_the_mach_cone_3d(method):
    """Supersonic density probe, wide (k xi << 1 emission): phonons leave on
    the Mach cone cos(theta) = c/v about the velocity (Landau and Lifshitz,
    Fluid Mechanics, the Mach cone).  Bogoliubov corrections shift the cone
    to cos(theta) = sqrt(1 + (k xi)^2/4) c/v, < 1 % for k xi < 0.3."""
    cond = gas(3)
    w0, c, xi = cond.frequency_unit, cond.sound_speed, cond.healing_length
    v, width, tau = 2.0, 4.0, 12.0
    probe = DensityProbe(COUPLING, width * xi)
    res = transit_probabilities(cond, probe, Linear(v * c, (0.0, 0.0, 1.0)), Gaussian(tau / w0),
                                rtol=1e-4, spectrum=True, spectrum_bins=80, method=method)
    sp = res.spectrum
    np.testing.assert_allclose(sp["axis"], [0, 0, 1], atol=1e-12)
    u, dens = sp["cos_theta"], sp["dN_dcos_theta"]
    peak = u[int(np.argmax(dens))]
    binw = np.diff(sp["cos_theta_edges"])[0]
    assert abs(peak - 1 / v * 1.005) <= binw, peak
    # a single peak; away from the cone only the switching blur
    # (|w - k.v| < ~1/tau) emits: sideways (u < 0) below 2 % of the peak,
    # backwards (u < -0.5) below 0.2 %, deep inside the cone below 5 %
    ipk = int(np.argmax(dens))
    assert np.all(np.diff(dens[:ipk + 1]) > 0) and np.all(np.diff(dens[ipk:]) < 0)
    assert dens[u < 0].max() < 2e-2 * dens.max()
    assert dens[u < -0.5].max() < 2e-3 * dens.max()
    assert dens[u > 0.85].max() < 5e-2 * dens.max()
    # long switching: total emission ~ sqrt(pi) tau x stationary emission rate
    rate = inertial_rates(cond, probe, v * c).emission_rate
    assert res.emitted_phonons == pytest.approx(math.sqrt(math.pi) * tau / w0 * rate, rel=0.02)


def test_density_probe_emits_on_the_mach_cone_2d():
    cond = gas(2)
    w0, c, xi = cond.frequency_unit, cond.sound_speed, cond.healing_length
    v, width, tau = 2.0, 4.0, 12.0
    probe = DensityProbe(COUPLING * xi ** -1, width * xi)
    res = transit_probabilities(cond, probe, Linear(v * c, (1.0, 0.0)), Gaussian(tau / w0),
                                rtol=1e-4, spectrum=True, spectrum_bins=90)
    sp = res.spectrum
    phi, dens = sp["phi"], sp["dN_dphi"]
    binw = np.diff(sp["phi_edges"])[0]
    cone = math.acos(1 / v * 1.005)
    pos = phi > 0
    assert abs(phi[pos][int(np.argmax(dens[pos]))] - cone) <= binw
    neg = phi < 0
    assert abs(phi[neg][int(np.argmax(dens[neg]))] + cone) <= binw
    # mirror symmetry about the velocity axis (the path is symmetric)
    np.testing.assert_allclose(dens, dens[::-1], rtol=1e-6, atol=1e-9 * dens.max())


# ---------------------------------------------------------------------------
# numerics: chunking, threads, warnings, errors, JSON
# ---------------------------------------------------------------------------
def test_memory_chunks_and_threads_do_not_change_the_result():
    cond = gas(3, 0.3)
    probe = two_level(cond, 0.5, 0.5)
    path = Circular(2.0 * cond.healing_length, speed=0.9 * cond.sound_speed)
    sw = Gaussian(4.0 / cond.frequency_unit)
    a = transit_probabilities(cond, probe, path, sw, workers=1)
    b = transit_probabilities(cond, probe, path, sw, workers=2, max_memory=2e5)
    assert b.up_probability == pytest.approx(a.up_probability, rel=1e-12)
    assert b.down_probability == pytest.approx(a.down_probability, rel=1e-12)


def test_warnings_first_order_and_hard_cut():
    cond = gas(3)
    w0 = cond.frequency_unit
    strong = TwoLevelProbe(0.5 * w0, 1e-44, 0.5 * cond.healing_length)
    res = transit_probabilities(cond, strong, Linear(1.5 * cond.sound_speed), Gaussian(3 / w0))
    assert res.down_probability > 0.1
    assert any("first order breaking down" in w for w in res.warnings)
    weak = two_level(cond, 0.5, 0.5)
    res = transit_probabilities(cond, weak, Linear(1.5 * cond.sound_speed), Gaussian(3 / w0))
    assert not any("first order" in w for w in res.warnings)
    hard = Window(0.0, 5.0 / w0, 0.0)
    res = transit_probabilities(cond, weak, Linear(0.5 * cond.sound_speed), hard, rtol=1e-3)
    assert any("spurious broadband excitation" in w for w in res.warnings)
    json.dumps(res.to_dict())
    point = two_level(cond, 0.5, 0.0)
    with pytest.raises(ModelError):
        transit_probabilities(cond, point, Linear(0.5 * cond.sound_speed), hard)


def test_hard_cut_excites_more_than_a_smooth_ramp():
    """The sudden switch adds broadband excitation: for a probe at rest at
    T = 0 every up transition is switching-induced, and with a hard cut
    (|chi(f)|^2 ~ 1/f^2) it exceeds that with smooth ramps (spectrum falling
    faster than any power) by orders of magnitude."""
    cond = gas(3)
    w0 = cond.frequency_unit
    probe = two_level(cond, 1.0, 0.5)
    path = Linear(0.0)
    hard = transit_probabilities(cond, probe, path, Window(0.0, 60 / w0, 0.0), rtol=1e-3)
    smooth = transit_probabilities(cond, probe, path, Window(0.0, 60 / w0, 15 / w0), rtol=1e-3)
    assert hard.up_probability > 1e3 * smooth.up_probability
    assert hard.achieved_rtol < 1e-3 and smooth.achieved_rtol < 1e-3


def test_input_checks_and_json():
    cond = gas(3)
    probe = two_level(cond, 0.5, 0.5)
    with pytest.raises(InputError):
        transit_probabilities(cond, probe, Linear(1.0), "not a switching")
    with pytest.raises(InputError):
        transit_probabilities(cond, probe, Linear(1.0), Gaussian(1e-3), rtol=2.0)
    with pytest.raises(InputError):
        transit_probabilities(cond, TwoLevelProbe([1e3, 2e3], COUPLING, 1e-6), Linear(1.0),
                              Gaussian(1e-3))
    t = np.linspace(0.0, 30.0, 61) / cond.frequency_unit
    path = Spline(t, np.stack([np.sin(t * cond.frequency_unit / 5), t * cond.sound_speed * 0.5,
                               0 * t], 1) * np.array([cond.healing_length, 1, 1]))
    res = transit_probabilities(cond, probe, path, PathSpan(path), rtol=1e-3, spectrum=True)
    d = res.to_dict()
    text = json.dumps(d)
    assert "up_probability" in text and d["spectrum"]["dN_dk"]
    assert d["achieved_rtol"] < 1e-3


@pytest.mark.parametrize("kind", ["spline", "circular"])
@pytest.mark.parametrize("method", ["phasor", "fft"])
def test_loose_tolerance_is_met_and_its_error_estimate_bounds_the_error(kind, method):
    """Curved paths at rtol = 1e-3 against the same transit at rtol = 1e-6:
    the coarse grids must still land within 1e-3, and the reported error
    must cover the actual deviation (the reference's own error aside)."""
    cond = gas(3, 0.2 if kind == "circular" else 0.0)
    w0, c, xi = cond.frequency_unit, cond.sound_speed, cond.healing_length
    probe = two_level(cond, 0.5, 0.7)
    if kind == "spline":
        # a wobbling loop given as waypoints, switched over its span
        s = np.linspace(0.0, 40.0, 400)
        pos = np.stack([2 * np.cos(0.4 * s), 2 * np.sin(0.4 * s),
                        0.3 * np.sin(1.2 * s)], axis=1) * xi
        path = Spline(s / w0, pos)
        sw = PathSpan(path)
    else:
        path = Circular(1.5 * xi, speed=0.9 * c)
        sw = Gaussian(6.0 / w0)
    loose = transit_probabilities(cond, probe, path, sw, rtol=1e-3, method=method)
    # the reference from the other route: an independent evaluation
    other = "fft" if method == "phasor" else "phasor"
    tight = transit_probabilities(cond, probe, path, sw, rtol=1e-6, method=other)
    assert tight.achieved_rtol < 1e-6
    assert loose.achieved_rtol < 1e-3
    for name in ("up_probability", "down_probability"):
        ref, got = getattr(tight, name), getattr(loose, name)
        dev = abs(got - ref)
        assert dev <= 1e-3 * ref, (name, dev / ref)
        assert getattr(loose, name + "_error") >= dev - getattr(tight, name + "_error"), name
    # the loose run really is coarser (the grids follow the tolerance)
    g, G = loose.grid, tight.grid
    assert g["n_wavenumbers"] * g["n_times"] * g["max_directions"] < \
        0.5 * G["n_wavenumbers"] * G["n_times"] * G["max_directions"]


# ---------------------------------------------------------------------------
# the two amplitude routes
# ---------------------------------------------------------------------------
def _wobble(cond, duration, n=600):
    xi, w0 = cond.healing_length, cond.frequency_unit
    s = np.linspace(0.0, duration, n)
    pos = np.stack([2 * np.cos(0.4 * s), 2 * np.sin(0.4 * s), 0.3 * np.sin(1.2 * s)],
                   axis=1) * xi
    return Spline(s / w0, pos[:, :cond.dimension])


@pytest.mark.parametrize("d,T,model", [(3, 0.0, "two_level"), (3, 0.3, "two_level"),
                                       (3, 0.3, "density"), (2, 0.0, "two_level"),
                                       (2, 0.3, "density"), (1, 0.2, "two_level")])
def test_phasor_and_fft_routes_agree_on_curved_paths(d, T, model):
    """The direct phasor sums on q-uniform nodes and the FFT route on
    frequency-uniform nodes are independent evaluations of the same
    integrals: probabilities, emitted phonons and the spectra over
    directions must agree to the requested accuracy."""
    cond = gas(d, T)
    xi = cond.healing_length
    probe = two_level(cond, 0.5, 0.7) if model == "two_level" else \
        DensityProbe(COUPLING, 0.7 * xi)
    path = _wobble(cond, 40.0, 400)
    sw = PathSpan(path)
    rtol = 1e-4
    a = transit_probabilities(cond, probe, path, sw, rtol=rtol, method="phasor", spectrum=True,
                              spectrum_bins=24)
    b = transit_probabilities(cond, probe, path, sw, rtol=rtol, method="fft", spectrum=True,
                              spectrum_bins=24)
    assert (a.grid["method"], b.grid["method"]) == ("phasor", "fft")
    names = (["up_probability", "down_probability", "emitted_phonons_excited"]
             if model == "two_level" else ["absorbed_phonons"]) + ["emitted_phonons",
                                                                  "emitted_energy"]
    for name in names:
        x, y = getattr(a, name), getattr(b, name)
        if model == "density" and name == "absorbed_phonons" and T == 0:
            continue
        assert y == pytest.approx(x, rel=3 * rtol), (name, y / x - 1)
    key = {3: "dN_dcos_theta", 2: "dN_dphi", 1: "dN_forward"}[d]
    np.testing.assert_allclose(b.spectrum[key], a.spectrum[key], rtol=1e-3,
                               atol=1e-4 * np.max(np.abs(a.spectrum[key])))
    for r in (a, b):
        assert np.sum(r.spectrum["dN_dk"] * r.spectrum["dk"]) == pytest.approx(
            r.emitted_phonons, rel=1e-12)


def test_auto_route_follows_the_cost():
    """A long transit of a small loop goes the FFT way (its cost grows as
    the duration, the direct sums' as its square); a short straight crossing
    stays on the direct sums (the Jacobi-Anger series grows with the
    path's length)."""
    cond = gas(3)
    w0, c = cond.frequency_unit, cond.sound_speed
    probe = two_level(cond, 0.5, 0.7)
    loop = _wobble(cond, 400.0, 2000)
    assert transit_probabilities(cond, probe, loop, PathSpan(loop),
                                 rtol=1e-3).grid["method"] == "fft"
    # a straight crossing: the lag route (exact angular average); with a
    # direction spectrum (which needs directions) the direct sums
    line = transit_probabilities(cond, probe, Linear(1.5 * c), Gaussian(10 / w0), rtol=1e-3)
    assert line.grid["method"] == "lag"
    line = transit_probabilities(cond, probe, Linear(1.5 * c), Gaussian(10 / w0), rtol=1e-3,
                                 spectrum=True)
    assert line.grid["method"] == "phasor"
    with pytest.raises(InputError) as e:
        transit_probabilities(cond, probe, Linear(1.5 * c), Gaussian(10 / w0), method="fast")
    assert e.value.key == "method"
    for kwargs in ({"trajectory": loop, "switching": PathSpan(loop)},
                   {"trajectory": Linear(1.5 * c), "switching": Gaussian(10 / w0),
                    "spectrum": True}):
        with pytest.raises(InputError) as e:
            transit_probabilities(cond, probe, method="lag", **kwargs)
        assert e.value.key == "method" and "lag" in e.value.message


@pytest.mark.parametrize("kind,d,T,model", [
    (kind, d, T, model) for kind in ("linear", "circular")
    for d, T, model in [(3, 0.0, "two_level"), (3, 0.3, "density"), (2, 0.3, "two_level"),
                        (1, 0.3, "two_level")]
    if not (kind == "circular" and d == 1)])
def test_lag_route_agrees_with_both_direction_routes(kind, d, T, model):
    """For linear and circular paths |x(t + s) - x(t)| depends on s alone, so
    the angular integral is the isotropic average j_d(q r(s)) of a lag sum
    over the switching's autocorrelation: the same integral as the direction
    sums of the phasor and FFT routes (independent evaluations)."""
    cond = gas(d, T)
    xi, c, w0 = cond.healing_length, cond.sound_speed, cond.frequency_unit
    probe = two_level(cond, 0.5, 0.7) if model == "two_level" else \
        DensityProbe(COUPLING, 0.7 * xi)
    if kind == "linear":
        path = Linear(1.4 * c, (0.6, 0.8, 0.0)[:d] if d > 1 else (1.0,))
    else:
        path = Circular(2.0 * xi, speed=0.8 * c)
        if d == 2:
            from probe.scenarios.transit import _project
            path = _project(path, 2)
    sw = Gaussian(8.0 / w0)
    rtol = 1e-5
    runs = {m: transit_probabilities(cond, probe, path, sw, rtol=rtol, method=m)
            for m in ("lag", "phasor", "fft")}
    assert runs["lag"].grid["method"] == "lag"
    names = ["up_probability", "down_probability"] if model == "two_level" else \
        ["emitted_phonons", "absorbed_phonons"]
    for name in names:
        ref = getattr(runs["lag"], name)
        for m in ("phasor", "fft"):
            assert getattr(runs[m], name) == pytest.approx(ref, rel=3 * rtol), (name, m)
    assert runs["lag"].achieved_rtol < rtol
