"""Property-based checks of the stationary rates (hypothesis).

Sources of the properties:
  [GR]  Fermi's golden rule: first order in the coupling, so every rate is
        |kappa|^2 times a non-negative integral, and energy-momentum
        conservation: up emission needs k v >= omega_k + Omega > c k, i.e.
        supersonic motion (no up transition below c at T = 0).
  [KMS] detailed balance of a static two-level detector in a thermal bath:
        Gamma_up / Gamma_down = exp(-hbar Omega / k_B T) (Birrell and Davies,
        Quantum Fields in Curved Space, 1982; Unruh, PRD 14, 870 (1976)).
  [DA]  dimensional analysis of the Bogoliubov gas (Pitaevskii and Stringari,
        ch. 6): in units xi, c/xi the rates depend only on v/c, Omega xi/c,
        s/xi and k_B T/(m c^2), times (kappa/hbar)^2 n xi^-d (xi/c).
  [ISO] the uniform gas is isotropic: rotating the path changes nothing.
Examples are few and derandomized on CI (environment variable CI) so that
the suite stays bounded in time and repeatable.
"""
import copy
import json
import math
import os

import numpy as np
import pytest
from click.testing import CliRunner
from hypothesis import HealthCheck, assume, given, reject, settings
from hypothesis import strategies as st
from scipy import constants as sc

from probe.cli import cli
from probe.scenarios.config import scenario_from_dict
from probe.engines.stationary import circular_rates, inertial_rates
from probe.errors import ModelError
from probe.detectors import DensityProbe, TwoLevelProbe

from conftest import DENSITY, KAPPA, RB87_MASS, RB87_SCATTERING_LENGTH, rb_gas

HBAR = sc.hbar

CI = bool(os.environ.get("CI"))
#: PROBE_HYPOTHESIS_SCALE=20 runs twenty times the examples (a local campaign)
SCALE = max(1, int(os.environ.get("PROBE_HYPOTHESIS_SCALE", "1")))


def props(n):
    return settings(max_examples=n * SCALE, deadline=None, derandomize=CI,
                    database=None, suppress_health_check=[HealthCheck.too_slow])


def kappa(d):
    return KAPPA[d]


def unit(cond, kap):
    return ((kap / HBAR) ** 2 * cond.density * cond.healing_length ** (-cond.dimension)
            / cond.frequency_unit)


def rates(cond, probe, v_nat):
    """Inertial rates, rejecting the example where the model has no rate
    (a threshold speed to within rounding: ModelError naming the speed)."""
    try:
        return inertial_rates(cond, probe, v_nat * cond.sound_speed)
    except ModelError as exc:
        assert exc.key == "trajectory.speed", exc
        reject()


dims = st.sampled_from([1, 2, 3])
gaps = st.floats(-6, 3).map(lambda x: 10.0 ** x)
speeds = st.floats(0, 20, allow_nan=False)
temps = st.one_of(st.just(0.0), st.floats(-3, 1).map(lambda x: 10.0 ** x))
widths = st.one_of(st.just(0.0), st.floats(-3, 0.5).map(lambda x: 10.0 ** x))


# --- non-negative, finite ------------------------------------------------------------------
@props(60)
@given(d=dims, W=gaps, v=speeds, T=temps, s=widths, density_probe=st.booleans())
def test_rates_are_finite_and_non_negative(d, W, v, T, s, density_probe):
    cond = rb_gas(d, T_nat=T)
    xi = cond.healing_length
    probe = (DensityProbe(kappa(d), s * xi) if density_probe else
             TwoLevelProbe(W * cond.frequency_unit, kappa(d), s * xi))
    r = rates(cond, probe, v)
    for name in ("up_rate", "down_rate", "up_rate_error", "down_rate_error",
                 "emission_rate", "absorption_rate", "drag_force", "power"):
        x = getattr(r, name)
        if x is not None:
            assert math.isfinite(x) and x >= 0, (name, x)
    if not density_probe:
        # a population, a probability: in [0, 1]
        assert 0 <= r.excited_population <= 1
        te = r.effective_temperature
        assert math.isfinite(te) or (math.isnan(te) and any(
            "undetermined" in w for w in r.warnings))


# --- Gamma proportional to kappa^2 [GR] ----------------------------------------------------------
@props(40)
@given(d=dims, W=gaps, v=speeds, T=temps, factor=st.floats(-3, 3).map(lambda x: 10.0 ** x),
       sign=st.sampled_from([1.0, -1.0]))
def test_rates_scale_with_coupling_squared(d, W, v, T, factor, sign):
    cond = rb_gas(d, T_nat=T)
    w0 = cond.frequency_unit
    a = rates(cond, TwoLevelProbe(W * w0, kappa(d)), v)
    b = rates(cond, TwoLevelProbe(W * w0, sign * factor * kappa(d)), v)
    assert b.down_rate == pytest.approx(factor ** 2 * a.down_rate, rel=1e-12)
    assert b.up_rate == pytest.approx(factor ** 2 * a.up_rate, rel=1e-12)


# --- change of units ------------------------------------------------------------------------------
def _num(x):
    return repr(float(x))


@props(30)
@given(speed_mm_s=st.floats(0, 10), gap_hz=st.floats(1, 3).map(lambda x: 10.0 ** x),
       temp_nk=st.floats(0, 100), density=st.floats(19, 21).map(lambda x: 10.0 ** x))
def test_same_physics_in_si_and_in_micrometres_and_milliseconds(speed_mm_s, gap_hz,
                                                              temp_nk, density):
    # the same quantities written in two unit systems give the same numbers
    si = {"condensate": {"dimension": 3, "species": "87Rb",
                         "density": f"{_num(density)} m^-3",
                         "scattering_length": "5.3e-9 m",
                         "temperature": f"{_num(temp_nk * 1e-9)} K"},
          "probe": {"gap": f"{_num(gap_hz)} Hz", "coupling_length": "1e-9 m"},
          "trajectory": {"kind": "linear", "speed": f"{_num(speed_mm_s * 1e-3)} m/s"}}
    small = {"condensate": {"dimension": 3, "species": "87Rb",
                            "density": f"{_num(density * 1e-18)} um^-3",
                            "scattering_length": "0.0053 um",
                            "temperature": f"{_num(temp_nk * 1e-3)} uK"},
             "probe": {"gap": f"{_num(2 * math.pi * gap_hz * 1e-3)} rad/ms",
                       "coupling_length": "0.001 um"},
             "trajectory": {"kind": "linear", "speed": f"{_num(speed_mm_s)} um/ms"}}
    try:
        r1 = scenario_from_dict(si).rates()
    except ModelError:
        reject()
    r2 = scenario_from_dict(small).rates()
    for name in ("up_threshold_speed", "sound_speed"):
        assert getattr(r2, name) == pytest.approx(getattr(r1, name), rel=1e-12, abs=0)
    # the rates agree within their own error estimates (the inputs differ in
    # the last digits: the same speed is not bit for bit the same double)
    for name in ("up_rate", "down_rate"):
        a, b = getattr(r1, name), getattr(r2, name)
        ea, eb = getattr(r1, name + "_error"), getattr(r2, name + "_error")
        assert abs(a - b) <= ea + eb + 1e-12 * abs(a), name


@props(40)
@given(d=dims, W=gaps, v=speeds, T=temps, s=widths,
       mass_factor=st.floats(-1, 1).map(lambda x: 10.0 ** x),
       density_factor=st.floats(-1, 1).map(lambda x: 10.0 ** x),
       a_factor=st.floats(-0.5, 0.5).map(lambda x: 10.0 ** x))
def test_rates_in_healing_length_units_are_universal(d, W, v, T, s, mass_factor,
                                                     density_factor, a_factor):
    # [DA]: two different gases at the same v/c, Omega xi/c, s/xi and
    # k_B T/(m c^2) have the same rate in units of (kappa/hbar)^2 n xi^-d xi/c
    results = []
    for cond in (rb_gas(d, T_nat=T),
                 rb_gas(d, T_nat=T, mass=mass_factor * RB87_MASS,
                        density=DENSITY[d] * density_factor,
                        scattering_length=RB87_SCATTERING_LENGTH * a_factor,
                        transverse_frequency=2 * math.pi * 3e3)):
        p = TwoLevelProbe(W * cond.frequency_unit, kappa(d), s * cond.healing_length)
        r = rates(cond, p, v)
        results.append((r.down_rate / unit(cond, kappa(d)), r.up_rate / unit(cond, kappa(d))))
    (d1, u1), (d2, u2) = results
    assert d2 == pytest.approx(d1, rel=1e-8, abs=1e-300)
    assert u2 == pytest.approx(u1, rel=1e-8, abs=1e-300)


# --- detailed balance [KMS] ----------------------------------------------------------------------
@props(60)
@given(d=dims, W=gaps, T=st.floats(-3, 2).map(lambda x: 10.0 ** x), s=widths)
def test_static_probe_obeys_detailed_balance_at_any_temperature(d, W, T, s):
    assume(W / T < 600)           # exp(-700) is the edge of double precision
    cond = rb_gas(d, T_nat=T)
    r = inertial_rates(cond, TwoLevelProbe(W * cond.frequency_unit, kappa(d),
                                           s * cond.healing_length), 0.0)
    assume(r.down_rate > 0)
    if r.up_rate > 0 and r.up_rate_error < 1e-8 * r.up_rate:
        assert r.up_rate / r.down_rate == pytest.approx(math.exp(-W / T), rel=1e-10, abs=0)
        # and the effective temperature is the bath temperature
        assert r.effective_temperature == pytest.approx(cond.temperature, rel=1e-8)
    elif r.up_rate > 0:
        # so small that rounding leaves no digits: the error says so
        assert r.up_rate_error >= 1e-8 * r.up_rate
        assert any("known only to a relative accuracy" in w for w in r.warnings)
    else:
        # the up rate underflowed (below the smallest double): no false 0 K
        assert math.isnan(r.effective_temperature)
        assert any("below the smallest number a double holds" in w for w in r.warnings)


# --- no up transitions below sound at T = 0 [GR] ------------------------------------------------
@props(60)
@given(d=dims, W=gaps, v=st.floats(0, 0.999999), s=widths,
       dispersion=st.sampled_from(["bogoliubov", "phonon"]))
def test_subsonic_inertial_up_rate_is_exactly_zero_at_zero_temperature(d, W, v, s, dispersion):
    cond = rb_gas(d, dispersion=dispersion)
    r = rates(cond, TwoLevelProbe(W * cond.frequency_unit, kappa(d),
                                  s * cond.healing_length), v)
    assert r.up_rate == 0.0
    assert r.up_rate_error == 0.0


# --- rotations [ISO] -----------------------------------------------------------------------------------
unit_vectors = st.tuples(*[st.floats(-1, 1)] * 3).filter(
    lambda x: 0.1 < math.sqrt(sum(c * c for c in x)))

BASE = {"condensate": {"dimension": 3, "species": "87Rb", "density": "1.2e20 m^-3",
                       "scattering_length": "5.3 nm", "temperature": "40 nK"},
        "probe": {"gap": "200 Hz", "coupling_length": "1 nm", "width": "0.2 um"},
        "trajectory": {"kind": "linear", "speed": "1.7 c_s"}}


def _rotation(axis, angle):
    """Rodrigues' rotation matrix about ``axis`` by ``angle``."""
    k = np.asarray(axis, float) / np.linalg.norm(axis)
    K = np.array([[0, -k[2], k[1]], [k[2], 0, -k[0]], [-k[1], k[0], 0]])
    return np.eye(3) + math.sin(angle) * K + (1 - math.cos(angle)) * K @ K


@props(25)
@given(direction=unit_vectors)
def test_linear_rates_do_not_depend_on_the_direction(direction):
    ref = scenario_from_dict(BASE).rates()
    raw = copy.deepcopy(BASE)
    raw["trajectory"]["direction"] = list(direction)
    r = scenario_from_dict(raw).rates()
    assert (r.up_rate, r.down_rate) == (ref.up_rate, ref.down_rate)


@props(15)
@given(normal=unit_vectors)
def test_circle_rates_do_not_depend_on_the_normal(normal):
    raw = copy.deepcopy(BASE)
    raw["trajectory"] = {"kind": "circular", "radius": "2 um", "speed": "0.6 c_s"}
    ref = scenario_from_dict(raw).rates()
    raw["trajectory"]["normal"] = list(normal)
    r = scenario_from_dict(raw).rates()
    assert (r.up_rate, r.down_rate) == (ref.up_rate, ref.down_rate)


@props(25)
@given(axis=unit_vectors, angle=st.floats(0, 2 * math.pi),
       start=st.tuples(*[st.floats(-20, 20)] * 3))
def test_transit_through_the_cloud_is_rotation_invariant(axis, angle, start):
    # rotating start point and direction together (about the cloud centre)
    # leaves the chord through the uniform region, so the transit time, alone
    raw = copy.deepcopy(BASE)
    raw["condensate"]["size"] = "30 um"
    base_dir = np.array([1.0, 0.3, -0.2])
    raw["trajectory"]["start"] = [f"{x!r} um" for x in start]
    raw["trajectory"]["direction"] = base_dir.tolist()
    s1 = scenario_from_dict(raw)
    rot = _rotation(axis, angle)
    raw["trajectory"]["start"] = [f"{float(x)!r} um" for x in rot @ np.array(start)]
    raw["trajectory"]["direction"] = (rot @ base_dir).tolist()
    s2 = scenario_from_dict(raw)
    from probe.engines.regime import transit_summary
    r1, r2 = s1.rates(), s2.rates()
    t1 = transit_summary(s1.condensate, s1.trajectory, r1)
    t2 = transit_summary(s2.condensate, s2.trajectory, r2)
    assert (t1 is None) == (t2 is None)
    if t1 is not None:
        assert t2["time"] == pytest.approx(t1["time"], rel=1e-9)
        assert t2["expected_up"] == pytest.approx(t1["expected_up"], rel=1e-9)
    assert len(r1.warnings) == len(r2.warnings)


# --- the same config always gives the same numbers -----------------------------------------------
@props(10)
@given(speed=st.floats(0, 5), gap=st.floats(10, 1000))
def test_same_config_same_numbers(tmp_path_factory, speed, gap):
    raw = copy.deepcopy(BASE)
    raw["trajectory"]["speed"] = f"{speed!r} c_s"
    raw["probe"]["gap"] = f"{gap!r} Hz"
    try:
        a = scenario_from_dict(raw).rates()
    except ModelError:
        reject()
    b = scenario_from_dict(copy.deepcopy(raw)).rates()
    assert a.to_dict() == b.to_dict()
    # and through the CLI, twice: identical JSON
    path = tmp_path_factory.mktemp("same") / "s.toml"
    path.write_text(BASE_TOML.replace('"1.7 c_s"', f'"{speed!r} c_s"')
                    .replace('"200 Hz"', f'"{gap!r} Hz"'))
    outs = [CliRunner().invoke(cli, ["rates", "--json", str(path)]) for _ in range(2)]
    assert outs[0].exit_code == outs[1].exit_code == 0
    assert json.loads(outs[0].stdout) == json.loads(outs[1].stdout)


BASE_TOML = """
[condensate]
dimension = 3
species = "87Rb"
density = "1.2e20 m^-3"
scattering_length = "5.3 nm"
temperature = "40 nK"

[probe]
gap = "200 Hz"
coupling_length = "1 nm"
width = "0.2 um"

[trajectory]
kind = "linear"
speed = "1.7 c_s"
"""


@props(15)
@given(d=st.sampled_from([2, 3]), R=st.floats(-1, 2).map(lambda x: 10.0 ** x),
       v=st.floats(0.05, 3), W=st.floats(-2, 0.5).map(lambda x: 10.0 ** x))
def test_circular_rates_are_finite_non_negative_and_repeatable(d, R, v, W):
    cond = rb_gas(d)
    p = TwoLevelProbe(W * cond.frequency_unit, kappa(d))
    args = (cond, p, R * cond.healing_length, v * cond.sound_speed)
    a, b = circular_rates(*args), circular_rates(*args)
    for x in (a.up_rate, a.down_rate, a.up_rate_error, a.down_rate_error):
        assert math.isfinite(x) and x >= 0
    assert (a.up_rate, a.down_rate, a.harmonics) == (b.up_rate, b.down_rate, b.harmonics)
