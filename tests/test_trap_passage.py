"""Trapped clouds and passages: Thomas-Fermi profiles against the published
closed forms and direct integration, and the passage's rate equation and
local-density rates against their limits."""
from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import constants as sc
from scipy import integrate

from probe.detectors import TwoLevelProbe, coupling_from_scattering_length
from probe.detectors.dressed import DressedProbe
from probe.detectors.switching import Crossing
from probe.engines.passage import integral, passage, rate_equation
from probe.engines.stationary import inertial_rates
from probe.errors import InputError
from probe.gas.condensate import Condensate
from probe.gas.trap import HarmonicTrap
from trajectories import Linear

from conftest import RB87_MASS

HBAR = sc.hbar
M_RB = RB87_MASS
M_K = 40.96182526 * sc.atomic_mass
TWO_PI = 2 * math.pi


def rb3d(temperature=0.0):
    return Condensate(3, M_RB, 1e19, 5.3e-9, temperature=temperature)


# --- Thomas-Fermi clouds ---------------------------------------------------------
def test_3d_chemical_potential_and_radii_against_the_published_form():
    """Dalfovo, Giorgini, Pitaevskii, Stringari, RMP 71, 463 (1999), eq. 48:
    mu = (hbar w_ho/2)(15 N a/a_ho)^(2/5), R_i = sqrt(2 mu/(m w_i^2))."""
    w = TWO_PI * np.array([30.0, 50.0, 110.0])
    trap = HarmonicTrap(rb3d(), w, atom_number=2e5)
    w_ho = float(np.prod(w)) ** (1 / 3)
    a_ho = math.sqrt(HBAR / (M_RB * w_ho))
    mu = 0.5 * HBAR * w_ho * (15 * 2e5 * 5.3e-9 / a_ho) ** 0.4
    assert trap.chemical_potential == pytest.approx(mu, rel=1e-12)
    np.testing.assert_allclose(trap.radii, np.sqrt(2 * mu / (M_RB * w ** 2)), rtol=1e-12)
    assert trap.atom_number == pytest.approx(2e5, rel=1e-12)


@pytest.mark.parametrize("dimension", [1, 2, 3])
def test_profile_integrates_to_the_atom_number(dimension):
    """Independent route: integrate n(x) = max(0, (mu - V)/g_d) over space
    (scipy quadrature over the Thomas-Fermi ellipsoid, in scaled
    coordinates) and recover N."""
    gas = Condensate(dimension, M_RB, 1e19 if dimension == 3 else 1e13 if dimension == 2
                     else 1e7, 5.3e-9, transverse_frequency=None if dimension == 3
                     else TWO_PI * 3000)
    w = TWO_PI * np.array([40.0, 70.0, 90.0][:dimension])
    trap = HarmonicTrap(gas, w, atom_number=5e4)
    R = trap.radii
    if dimension == 1:
        total = integrate.quad(lambda x: trap.density(np.array([x])), -R[0], R[0])[0]
    elif dimension == 2:
        total = integrate.dblquad(
            lambda y, x: trap.density(np.array([x, y])), -R[0], R[0],
            lambda x: -R[1] * math.sqrt(max(0.0, 1 - (x / R[0]) ** 2)),
            lambda x: R[1] * math.sqrt(max(0.0, 1 - (x / R[0]) ** 2)))[0]
    else:
        # spherical shells in scaled coordinates: n = n0 (1 - r^2), volume R_x R_y R_z
        total = trap.peak_density * float(np.prod(R)) * 4 * math.pi * integrate.quad(
            lambda r: r * r * (1 - r * r), 0, 1)[0]
    assert total == pytest.approx(5e4, rel=1e-6)


def test_closed_forms_of_the_low_dimensional_chemical_potential():
    """mu = sqrt(N g_2 m w_x w_y / pi) (2D) and
    mu = (3 N g_1 w_x sqrt(m)/(4 sqrt 2))^(2/3) (1D): the integrated
    Thomas-Fermi profiles."""
    g2 = Condensate(2, M_RB, 1e13, 5.3e-9, transverse_frequency=TWO_PI * 3000)
    w2 = TWO_PI * np.array([40.0, 70.0])
    t2 = HarmonicTrap(g2, w2, atom_number=3e4)
    assert t2.chemical_potential == pytest.approx(
        math.sqrt(3e4 * g2.coupling * M_RB * w2[0] * w2[1] / math.pi), rel=1e-12)
    g1 = Condensate(1, M_RB, 1e7, 5.3e-9, transverse_frequency=TWO_PI * 3000)
    t1 = HarmonicTrap(g1, [TWO_PI * 20.0], atom_number=3e3)
    assert t1.chemical_potential == pytest.approx(
        (3 * 3e3 * g1.coupling * TWO_PI * 20.0 * math.sqrt(M_RB) / (4 * math.sqrt(2)))
        ** (2 / 3), rel=1e-12)


def test_peak_density_and_atom_number_are_two_ways_to_the_same_cloud():
    w = TWO_PI * np.array([50.0, 50.0, 50.0])
    a = HarmonicTrap(rb3d(), w, atom_number=2e5)
    b = HarmonicTrap(rb3d(), w, peak_density=a.peak_density)
    assert b.atom_number == pytest.approx(2e5, rel=1e-12)


@pytest.mark.parametrize("kwargs, key", [
    ({}, "condensate.atom_number"),
    ({"atom_number": 1e5, "peak_density": 1e19}, "condensate.atom_number"),
    ({"atom_number": -3}, "condensate.atom_number")])
def test_trap_bad_input(kwargs, key):
    with pytest.raises(InputError) as err:
        HarmonicTrap(rb3d(), TWO_PI * np.array([50.0, 50.0, 50.0]), **kwargs)
    assert err.value.key == key


@pytest.mark.parametrize("w", [[TWO_PI * 50] * 2, [TWO_PI * 50, 0.0, TWO_PI * 50]])
def test_trap_frequencies_of_the_wrong_count_or_zero(w):
    with pytest.raises(InputError) as err:
        HarmonicTrap(rb3d(), w, atom_number=1e5)
    assert err.value.key == "condensate.trap_frequencies"


# --- the rate equation ---------------------------------------------------------
def test_constant_rates_give_the_closed_form():
    """dp/dt = u (1 - p) - d p, p(0) = 0: p = u/(u + d) (1 - exp(-(u + d) t))."""
    t = np.linspace(0, 0.03, 301)
    up, down = np.full(t.size, 40.0), np.full(t.size, 95.0)
    p = rate_equation(t, up, down)
    np.testing.assert_allclose(p, 40 / 135 * (1 - np.exp(-135 * t)), rtol=1e-12, atol=1e-15)


def test_small_rates_give_the_first_order_limit():
    """For int Gamma dt << 1 the population is int Gamma_up dt (first order)."""
    t = np.linspace(0, 0.01, 2001)
    up = 1e-3 * (1 + np.sin(300 * t) ** 2)
    down = 2e-3 * np.ones_like(t)
    p = rate_equation(t, up, down)
    assert p[-1] == pytest.approx(integral(t, up), rel=1e-4)


# --- passages ----------------------------------------------------------------------
def _two_level(gap_hz=100.0, length=3e-9):
    def probe_at(gas):
        kappa = coupling_from_scattering_length(length, gas.mass, M_K, gas, 0.2e-6)
        return TwoLevelProbe(TWO_PI * gap_hz, kappa, 0.2e-6)
    return probe_at


def test_a_huge_trap_reproduces_the_uniform_engine_at_the_centre():
    """Local-density limit: a trap so weak that the density is flat over the
    samples gives the uniform gas's rates at the peak density."""
    trap = HarmonicTrap(rb3d(), TWO_PI * np.array([0.01, 0.01, 0.01]), peak_density=1e19)
    v = 1.7 * trap.centre.sound_speed
    path = Linear(v, (1, 0, 0), (-5e-6, 0, 0))
    res = passage(trap, _two_level(), path, np.linspace(0, 10e-6 / v, 11))
    want = inertial_rates(trap.centre, _two_level()(trap.centre), v)
    # the density varies by (5 um / R)^2 ~ 1.5e-7 over the path (R ~ 13 mm)
    assert np.max(np.abs(res.density / trap.peak_density - 1)) < 2e-7
    np.testing.assert_allclose(res.up_rate, want.up_rate, rtol=1e-6)
    np.testing.assert_allclose(res.down_rate, want.down_rate, rtol=1e-6)


def test_the_up_rate_switches_on_where_the_local_threshold_drops_below_the_speed():
    """A probe subsonic at the centre is supersonic in the outer shell
    (c ~ sqrt(n) -> 0 at the edge): Gamma_up > 0 exactly where
    v > v_th(n(x)) (the anomalous-Doppler threshold of the local gas)."""
    trap = HarmonicTrap(rb3d(), TWO_PI * np.array([50.0, 50.0, 50.0]), atom_number=2e5)
    v = 0.8 * trap.centre.sound_speed
    path = Linear(v, (1, 0, 0), (0, 0, 0))
    t_in, t_out = path.times_within(trap.radii)
    res = passage(trap, _two_level(), path, np.linspace(t_in, t_out, 301)[1:-1])
    gap = TWO_PI * 100.0
    vth = np.array([trap.local_gas(n).dispersion.threshold(
        np.array([gap / trap.local_gas(n).frequency_unit]))[0][0]
        * trap.local_gas(n).sound_speed for n in res.density])
    above = v > vth * (1 + 1e-6)
    below = v < vth * (1 - 1e-6)
    assert np.any(above) and np.any(below)
    assert np.all(res.up_rate[above] > 0)
    assert np.all(res.up_rate[below] == 0)
    assert res.excited_probability > 0
    assert res.max_mach > 1


def test_a_dressed_detector_follows_the_local_mean_field_shift():
    """The dressed gap is sqrt(Omega_R^2 + (delta - 2 lambda n(x)/hbar)^2) at
    the local density (section on the dressed detector)."""
    trap = HarmonicTrap(rb3d(), TWO_PI * np.array([50.0, 50.0, 50.0]), atom_number=2e5)

    def probe_at(gas):
        return DressedProbe.from_scattering_lengths(3e-9, 5e-9, gas.mass, M_K, gas,
                                                    TWO_PI * 150, TWO_PI * 200, 0.2e-6)
    v = 1.5 * trap.centre.sound_speed
    path = Linear(v, (1, 0, 0), (0, 0, 0))
    t_in, t_out = path.times_within(trap.radii)
    res = passage(trap, probe_at, path, np.linspace(t_in, t_out, 41)[1:-1])
    ka = coupling_from_scattering_length(3e-9, M_RB, M_K, trap.centre, 0.2e-6)
    kb = coupling_from_scattering_length(5e-9, M_RB, M_K, trap.centre, 0.2e-6)
    shift = (kb - ka) * res.density / HBAR
    np.testing.assert_allclose(res.gap, np.hypot(TWO_PI * 150, TWO_PI * 200 - shift),
                               rtol=1e-12)


def test_outside_the_cloud_rates_are_zero_and_gas_quantities_undefined():
    """Samples beyond the Thomas-Fermi radius have no gas: the rates are 0
    (nothing to scatter from), while the gap in the gas, the threshold speed
    and the effective temperature, which only a gas defines, are NaN (not 0:
    a zero gap or a zero threshold speed would be a wrong claim)."""
    trap = HarmonicTrap(rb3d(), TWO_PI * np.array([50.0, 50.0, 50.0]), atom_number=2e5)
    v = 1.5 * trap.centre.sound_speed
    path = Linear(v, (1, 0, 0), (0, 0, 0))
    t_in, t_out = path.times_within(trap.radii)
    times = np.linspace(1.2 * t_in, 1.2 * t_out, 61)
    res = passage(trap, _two_level(), path, times)
    outside = res.density == 0
    assert outside.any() and (~outside).any()
    for name in ("up_rate", "down_rate"):
        assert np.all(getattr(res, name)[outside] == 0)
    for name in ("gap", "up_threshold_speed", "effective_temperature"):
        values = getattr(res, name, None)
        if values is None:
            continue
        assert np.all(np.isnan(values[outside]))
        assert np.all(np.isfinite(values[~outside & (res.up_rate + res.down_rate > 0)]))


def test_a_path_that_misses_the_cloud_says_how_far_it_passes():
    trap = HarmonicTrap(rb3d(), TWO_PI * np.array([50.0, 50.0, 50.0]), atom_number=2e5)
    path = Linear(1e-3, (1, 0, 0), (0, 1.5 * trap.radii[1], 0))
    assert path.times_within(trap.radii) is None
    assert path.closest_approach(trap.radii) == pytest.approx(1.5, rel=1e-12)


def test_crossing_switching_integrates_to_the_crossing_time():
    """Ramps centred on the entry and exit: int chi dt = t_out - t_in."""
    c = Crossing(1e-3, 4e-3, 1e-3)
    t = np.linspace(0, 5e-3, 200001)
    assert np.trapezoid(c(t), t) == pytest.approx(3e-3, rel=1e-8)
    assert c.integral == pytest.approx(3e-3, rel=1e-12)
    with pytest.raises(InputError):
        Crossing(1e-3, 2e-3, 2e-3)


def test_warning_names_each_stretch_of_the_passage():
    """The share of the passage where a local-density check fails, and each
    stretch of it (two edges of a cloud are two stretches, not one range)."""
    from types import SimpleNamespace
    from probe.engines.passage import _fraction_text
    res = SimpleNamespace(time=np.linspace(-5e-3, 5e-3, 11))         # 1 ms apart
    edges = np.abs(res.time) > 3.5e-3                                   # t = +-4, +-5 ms
    assert _fraction_text(edges, res) == ("over 36.4 % of the passage "
                                          "(t = -5 .. -4 and 4 .. 5 ms)")
    one = res.time > -0.5e-3
    assert _fraction_text(one, res).endswith("(t = 0 .. 5 ms)")
    many = np.arange(11) % 2 == 0                                       # 6 stretches
    assert _fraction_text(many, res).endswith("(6 stretches between t = -5 and 5 ms)")
