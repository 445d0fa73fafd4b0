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

from probe.cli import cli

from probe.detectors import TwoLevelProbe
from probe.engines.stationary import inertial_rates
from probe.errors import ModelError
from probe.scenarios.units import parse_quantity, ureg

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
