"""Detectors built from atoms: the Rabi-dressed impurity and the Ramsey
interferometer, against the dressed-atom rotation, the two-level model on
resonance and the independent-boson closed forms of the Ramsey exponent."""
from __future__ import annotations

import math

import mpmath as mp
import numpy as np
import pytest
from scipy import constants as sc

from probe.detectors import DensityProbe, TwoLevelProbe
from probe.detectors.dressed import DressedProbe, dressed_parameters
from probe.detectors.ramsey import RamseyProbe
from probe.detectors.switching import Gaussian
from probe.engines.stationary import circular_rates, inertial_rates
from probe.engines.transit import transit_probabilities
from probe.errors import InputError
from probe.gas.condensate import Condensate
from trajectories import Linear

from conftest import RB87_MASS

HBAR = sc.hbar
# 87Rb gas; the couplings are of the size of a few-nm impurity scattering length
RB = dict(dimension=3, mass=RB87_MASS, density=6e19, scattering_length=5.3e-9)
KA, KB = 3.0e-51, 6.0e-51
WIDTH = 0.2e-6


def gas(temperature=0.0, dimension=3):
    if dimension == 3:
        return Condensate(**RB, temperature=temperature)
    return Condensate(dimension=dimension, mass=RB["mass"], density=3e13 if dimension == 2
                      else 5e7, scattering_length=5.3e-9,
                      transverse_frequency=2 * math.pi * 2000, temperature=temperature)


# --- the dressed-atom rotation ---------------------------------------------
@pytest.mark.parametrize("detuning_hz", [-300.0, 0.0, 40.0, 271.65, 1e3])
def test_dressed_parameters_diagonalise_the_drive(detuning_hz):
    """Independent route: numpy diagonalises H0 = (hbar/2)(-delta_gas tau_z +
    Omega_R tau_x); in its eigenbasis the coupling lambda tau_z has the
    off-diagonal element |lambda| sin(theta) (the transition coupling) and
    the diagonal difference 2 |lambda| cos(theta) (the dephasing coupling);
    the eigenvalue splitting is hbar Omega_eff (the dressed atom:
    Cohen-Tannoudji, Dupont-Roc, Grynberg, *Atom-Photon Interactions*)."""
    n, rabi = 6e19, 2 * math.pi * 150
    p = dressed_parameters(KA, KB, rabi, 2 * math.pi * detuning_hz, n)
    lam = 0.5 * (KB - KA)
    delta_gas = 2 * math.pi * detuning_hz - 2 * lam * n / HBAR
    h0 = 0.5 * HBAR * np.array([[-delta_gas, rabi], [rabi, delta_gas]])
    energies, u = np.linalg.eigh(h0)
    v = u.T @ (lam * np.diag([1.0, -1.0])) @ u
    assert p["detuning_in_gas"] == pytest.approx(delta_gas, rel=1e-12)
    assert HBAR * p["gap"] == pytest.approx(energies[1] - energies[0], rel=1e-12)
    assert p["transition_coupling"] == pytest.approx(abs(v[0, 1]), rel=1e-9, abs=1e-70)
    assert p["dephasing_coupling"] == pytest.approx(abs(v[0, 0] - v[1, 1]), rel=1e-9,
                                                    abs=1e-70)


@pytest.mark.parametrize("temperature", [0.0, 30e-9])
def test_on_the_in_gas_resonance_the_dressed_detector_is_the_two_level_model(temperature):
    """Marino, Recati, Carusotto, PRL 118, 045301 (2017): a drive on the
    in-gas resonance (delta = 2 lambda n / hbar) makes the sigma_x detector
    with coupling |kappa_b - kappa_a|/2 and gap Omega_R."""
    g = gas(temperature)
    lam = 0.5 * (KB - KA)
    rabi = 2 * math.pi * 150
    dressed = DressedProbe(KA, KB, rabi, detuning=2 * lam * g.density / HBAR,
                           density=g.density, width=WIDTH)
    plain = TwoLevelProbe(rabi, abs(lam), width=WIDTH)
    v = np.array([0.0, 0.7, 1.6, 2.5]) * g.sound_speed
    a, b = inertial_rates(g, dressed, v), inertial_rates(g, plain, v)
    np.testing.assert_allclose(a.up_rate, b.up_rate, rtol=1e-10)
    np.testing.assert_allclose(a.down_rate, b.down_rate, rtol=1e-10)
    np.testing.assert_allclose(a.gap, rabi, rtol=1e-12)
    # the dephasing coupling 2 |lambda| cos(theta) vanishes there (to rounding)
    assert np.all(np.asarray(a.dephasing_rate) < 1e-12 * np.max(a.down_rate))


def test_dressed_dephasing_is_half_the_emission_plus_absorption_of_its_coupling():
    """Section 9a/9b of the model: the dephasing rate between the dressed
    states is (1/2)(emission + absorption) of a structureless probe with
    coupling 2 |lambda| cos(theta) (weight 1 + 2 n_k of the resonant
    phonons)."""
    g = gas(25e-9)
    d = DressedProbe(KA, KB, 2 * math.pi * 150, detuning=2 * math.pi * 400,
                     density=g.density, width=WIDTH)
    v = np.array([1.3, 2.0]) * g.sound_speed
    r = inertial_rates(g, d, v)
    ref = inertial_rates(g, DensityProbe(d.parameters["dephasing_coupling"], WIDTH), v)
    np.testing.assert_allclose(r.dephasing_rate,
                               0.5 * (ref.emission_rate + ref.absorption_rate), rtol=1e-12)
    assert np.all(np.asarray(r.dephasing_rate) > 0)


@pytest.mark.parametrize("temperature", [0.0, 40e-9])
def test_subsonic_straight_motion_does_not_dephase_in_3d(temperature):
    """w_k = k.v has no solution for v < c in 3D (the Bogoliubov spectrum
    lies above c k; Landau criterion), at any temperature: the dephasing
    rate is zero."""
    g = gas(temperature)
    r = inertial_rates(g, RamseyProbe(KA, KB, g.density, WIDTH),
                       np.array([0.1, 0.5, 0.99]) * g.sound_speed)
    assert np.all(np.asarray(r.dephasing_rate) == 0)


def test_circular_motion_dephases_below_the_sound_speed():
    """Circular motion has harmonics m w_c that resonate with phonons at any
    speed: the dephasing rate is positive below c (section 5 of the model)."""
    g = gas(0.0)
    r = circular_rates(g, RamseyProbe(KA, KB, g.density, WIDTH), radius=2e-6,
                       speed=0.6 * g.sound_speed)
    assert r.dephasing_rate > 0


# --- the Ramsey exponent against closed forms ------------------------------
def _lambda_closed_form(g, tau, v, temperature):
    """Independent-boson exponent for a Gaussian switching exp(-t^2/2tau^2)
    on a straight path at speed v in 3D (Mahan, *Many-Particle Physics*,
    the linear-coupling problem):

    Lambda = (1/2)(dkappa/hbar)^2 n /(4 pi^2) int k^2 S |F|^2 coth(w/2T)
             2 pi tau^2 int_{-1}^{1} exp(-(w - k v u)^2 tau^2) du dk,

    the u integral being sqrt(pi)/(2 k v tau) [erf((w + k v) tau) - erf((w - k v) tau)]
    (2 sqrt(pi) ... -> 2 exp(-w^2 tau^2) at v = 0).  Evaluated with mpmath at
    30 digits."""
    mp.mp.dps = 30
    m, c, n = mp.mpf(g.mass), mp.mpf(g.sound_speed), mp.mpf(g.density)
    hb, kb = mp.mpf(HBAR), mp.mpf(sc.k)
    dk = mp.mpf(KB - KA)
    tau, v, s = mp.mpf(tau), mp.mpf(v), mp.mpf(WIDTH)

    def integrand(k):
        eps = (hb * k) ** 2 / (2 * m)
        w = mp.sqrt(eps * (eps + 2 * m * c * c)) / hb
        S = eps / (hb * w)
        weight = 1 / mp.tanh(hb * w / (2 * kb * temperature)) if temperature > 0 else 1
        if v == 0:
            ang = 2 * mp.exp(-(w * tau) ** 2)
        else:
            ang = mp.sqrt(mp.pi) / (2 * k * v * tau) * (mp.erf((w + k * v) * tau)
                                                        - mp.erf((w - k * v) * tau))
        return k * k * S * mp.exp(-(k * s) ** 2) * weight * 2 * mp.pi * tau ** 2 * ang

    # the integrand lives below k ~ 1/(c tau) at rest and near the resonant
    # k of the Doppler-shifted window when moving: geometric break points
    kmax = 12 / s
    points = [mp.mpf(0)] + [kmax * mp.mpf(2) ** -j for j in range(40, -1, -1)]
    total = mp.quad(integrand, points)
    return float(mp.mpf(0.5) * (dk / hb) ** 2 * n / (4 * mp.pi ** 2) * total)


@pytest.mark.parametrize("speed, temperature", [(0.0, 0.0), (0.0, 30e-9),
                                                (1.6, 0.0), (1.6, 30e-9), (0.6, 20e-9)])
def test_ramsey_exponent_against_the_independent_boson_closed_form(speed, temperature):
    g = gas(temperature)
    tau = 40 / g.frequency_unit
    probe = RamseyProbe(KA, KB, g.density, WIDTH)
    res = transit_probabilities(g, probe, Linear(speed * g.sound_speed), Gaussian(tau),
                                rtol=1e-6)
    want = _lambda_closed_form(g, tau, speed * g.sound_speed, temperature)
    assert res.decoherence_exponent == pytest.approx(want, rel=1e-5)
    assert abs(res.decoherence_exponent - want) <= max(res.decoherence_exponent_error,
                                                       1e-6 * want) * 3
    assert res.contrast == pytest.approx(math.exp(-want), rel=1e-5)


def test_long_switching_slope_is_the_dephasing_rate():
    """For slow switching of a stationary path, Lambda -> gamma_phi int chi^2 dt
    (= sqrt(pi) tau gamma_phi for the Gaussian), with corrections of order
    1/tau (the same limit as the two-level probabilities: Gamma int chi^2)."""
    g = gas(20e-9)
    probe = RamseyProbe(KA, KB, g.density, WIDTH)
    v = 1.8 * g.sound_speed
    rate = inertial_rates(g, probe, v).dephasing_rate
    ratios = []
    for tau_units in (40, 160):
        tau = tau_units / g.frequency_unit
        res = transit_probabilities(g, probe, Linear(v), Gaussian(tau), rtol=1e-5)
        ratios.append(res.decoherence_exponent / (math.sqrt(math.pi) * tau * rate))
    assert abs(ratios[1] - 1) < abs(ratios[0] - 1) or abs(ratios[1] - 1) < 1e-3
    assert ratios[1] == pytest.approx(1.0, rel=0.02)


# --- bad input ----------------------------------------------------------------
def test_equal_couplings_are_refused():
    with pytest.raises(InputError, match="coupling_length_b"):
        DressedProbe(KA, KA, 100.0, density=1e19)
    with pytest.raises(InputError, match="coupling_length_b"):
        RamseyProbe(KA, KA, density=1e19)


@pytest.mark.parametrize("rabi", [0.0, -5.0, float("nan")])
def test_rabi_frequency_must_be_positive(rabi):
    with pytest.raises(InputError, match="rabi_frequency"):
        DressedProbe(KA, KB, rabi, density=1e19)


# --- the command line ------------------------------------------------------------
def _cli(*args):
    from click.testing import CliRunner
    from probe.cli import cli
    return CliRunner().invoke(cli, list(args))


EXAMPLES = __import__("pathlib").Path(__file__).resolve().parents[1] / "examples"
DRESSED = str(EXAMPLES / "dressed3d_drive.toml")
RAMSEY = str(EXAMPLES / "transits" / "ramsey3d_moving.toml")


def test_dressed_example_json_has_the_documented_keys():
    import json
    r = _cli("rates", DRESSED, "--json")
    assert r.exit_code == 0, r.output
    data = json.loads(r.output)
    for key in ("gap", "transition_coupling", "detuning_in_gas", "up_rate", "down_rate",
                "dephasing_rate", "effective_temperature", "excited_population"):
        assert data[key] is not None, key
    # the tweezer of 30 kHz sets the width sqrt(hbar/(2 m_p w)) (harmonic
    # oscillator ground state of the 41K probe)
    m_k = data["inputs"]["probe"]["mass"]
    assert data["inputs"]["probe"]["width"] == pytest.approx(
        math.sqrt(HBAR / (2 * m_k * 2 * math.pi * 30e3)), rel=1e-12)


def test_ramsey_transit_json_has_the_documented_keys():
    import json
    r = _cli("transit", RAMSEY, "--json")
    assert r.exit_code == 0, r.output
    data = json.loads(r.output)
    assert 0 < data["contrast"] < 1
    assert data["contrast"] == pytest.approx(math.exp(-data["decoherence_exponent"]))
    assert data["mean_field_phase"] > 0
    rates = json.loads(_cli("rates", RAMSEY, "--json").output)
    assert rates["dephasing_rate"] > 0


@pytest.mark.parametrize("args, key", [
    (("rates", DRESSED, "--set", "probe.coupling_length_b=3 nm"), "probe.coupling_length_b"),
    (("rates", DRESSED, "--set", "probe.rabi_frequency=0 Hz"), "probe.rabi_frequency"),
    (("rates", DRESSED, "--set", "probe.rabi_frequency=-5 Hz"), "probe.rabi_frequency"),
    (("rates", DRESSED, "--set", "probe.width=1 um"), "probe.tweezer_frequency"),
    (("rates", DRESSED, "--set", "probe.gap=100 Hz"), "probe.gap"),
    (("rates", DRESSED, "--unset", "probe.coupling_length_b"), "probe.coupling_length_b"),
    (("solve", RAMSEY, "--for", "trajectory.speed", "--target", "up_rate=1 1/s"), "--target"),
])
def test_bad_detector_input_is_one_line_naming_the_key(args, key):
    r = _cli(*args)
    assert r.exit_code == 2
    lines = r.output.strip().splitlines()
    assert len(lines) == 1 and lines[0].startswith(f"error: {key}:"), r.output
    assert "Traceback" not in r.output


def test_ramsey_solve_names_the_quantities_it_has():
    r = _cli("solve", RAMSEY, "--for", "trajectory.speed", "--target", "up_rate=1 1/s")
    assert "contrast" in r.output and "decoherence_exponent" in r.output


def test_solve_for_a_contrast():
    r = _cli("solve", RAMSEY, "--for", "trajectory.speed", "--target", "contrast=0.5")
    assert r.exit_code == 0, r.output
    assert "gives contrast = 0.5" in r.output
