"""Contracts that every registered probe model, dispersion and stationary
trajectory kind keeps: a new one is tested here by registering it
(``probe.detectors.PROBE_MODELS``, ``probe.gas.dispersion.DISPERSIONS``,
the stationary kinds of ``tests/conftest.py``), in 1, 2 and 3 dimensions
where the kind applies.

Sources named beside each check:
  [GR]   Fermi's golden rule for a detector coupled to a field: every rate
         and probability is |kappa|^2 times a non-negative integral (N. D.
         Birrell and P. C. W. Davies, Quantum Fields in Curved Space, 1982,
         ch. 3).
  [PS]   L. Pitaevskii and S. Stringari, Bose-Einstein Condensation and
         Superfluidity (Oxford, 2016): Bogoliubov spectrum
         hbar w = sqrt(eps (eps + 2 mu)), S(k) = eps/(hbar w), and the Landau
         criterion (no excitation by a body slower than min w_k/k = c).
  [KMS]  detailed balance of a detector at rest in a thermal bath,
         Gamma_down/Gamma_up = exp(hbar Omega/k_B T): W. G. Unruh, PRD 14,
         870 (1976); Birrell and Davies (1982).
  [GF]   V. L. Ginzburg and V. P. Frolov, Sov. Phys. Usp. 30, 1073 (1987):
         a moving detector is excited by emitting a quantum (anomalous
         Doppler effect) only above a threshold speed, which exceeds c.
  [NT]   N. F. Ramsey, Phys. Rev. 103, 20 (1956): the effective temperature
         of an inverted two-level population is negative.
  [ISO]  the uniform gas is isotropic: its spectrum depends on |k| only.
"""
from __future__ import annotations

import copy
import json
import math

import numpy as np
import pytest
from scipy import constants as sc

from conftest import (STATIONARY_CASES, WARM, contract_gas, make_probe,
                      stationary_path)
from probe.detectors import PROBE_MODELS
from probe.detectors.switching import Gaussian
from probe.engines.stationary import stationary_rates
from probe.engines.transit import transit_probabilities
from probe.errors import ModelError
from probe.quantities import QUANTITIES
from probe.scenarios.config import scenario_from_dict

HBAR, KB = sc.hbar, sc.k

#: kinds of quantity that carry a sign by definition (a phase, a detuning, a
#: coupling) or may be negative physically (an effective temperature of an
#: inverted population [NT]); every other output is >= 0 [GR]
SIGNED_KINDS = {"phase", "frequency", "angular_frequency", "coupling", "temperature"}

#: speeds (in c) of each stationary kind: at rest, subsonic and supersonic
#: straight motion; subsonic circular motion
SPEEDS = {"inertial": (0.0, 0.5, 1.5), "circular": (0.5,)}


def _rate_cases():
    return [(kind, d, mach) for kind, d in STATIONARY_CASES
            for mach in SPEEDS.get(kind, (0.5,))]


def _gapped(model):
    """True when the model has a channel with up and down transitions."""
    return any(ch.gapped for ch in make_probe(model, contract_gas(3)).channels())


GAPPED_MODELS = [m for m in sorted(PROBE_MODELS) if _gapped(m)]


def rates_and_outputs(cond, probe, path):
    """``stationary_rates`` and what the model made of its channel results:
    ``(result, raw, outputs)`` with ``raw`` the engine's SI channel results
    and ``outputs`` the dict the model's ``rate_results`` returned."""
    calls = []
    combine = probe.rate_results

    def recording(raw, context):
        out = combine(raw, context)
        calls.append((raw, out))
        return out

    probe.rate_results = recording
    try:
        result = stationary_rates(cond, probe, path)
    finally:
        del probe.rate_results
    assert len(calls) == 1
    return (result, *calls[0])


def finite_outputs(result, names):
    """Check that every named output is present and finite and that the JSON
    of the result holds it (not null); return ``{name: value}`` of those that
    are negative though their kind carries no sign (each a violation of [GR])."""
    data = json.loads(json.dumps(result.to_dict()))
    negative = {}
    for name in names:
        value = getattr(result, name, None)
        assert value is not None, name
        value = np.asarray(value, float)
        assert np.all(np.isfinite(value)), (name, value)
        assert name in data and data[name] is not None, name
        if QUANTITIES[name].kind not in SIGNED_KINDS and np.any(value < 0):
            negative[name] = value.tolist()
    return negative


def _is_error(name):
    """True for the name of an error estimate in the quantity registry."""
    return any(q.error == name for q in QUANTITIES.values())


def _close(a, b, rel):
    """Nested JSON values equal to ``rel`` (numbers), exactly otherwise."""
    if isinstance(a, dict):
        assert a.keys() == b.keys()
        for k in a:
            _close(a[k], b[k], rel)
    elif isinstance(a, list):
        assert len(a) == len(b)
        for x, y in zip(a, b):
            _close(x, y, rel)
    elif isinstance(a, float) and not isinstance(b, str):
        assert b == pytest.approx(a, rel=rel, abs=0.0)
    else:
        assert a == b


# ---------------------------------------------------------------------------
# declarations
# ---------------------------------------------------------------------------
def test_declared_outputs_are_registered_quantities(probe_model):
    # the quantity registry (probe/quantities.py) is the one home of every
    # output name; a model's registry key is the name its results carry
    cls = PROBE_MODELS[probe_model]
    assert cls.name == probe_model
    for outputs in (cls.rate_outputs, cls.transit_outputs):
        assert outputs and len(set(outputs)) == len(outputs)
        assert set(outputs) <= set(QUANTITIES), set(outputs) - set(QUANTITIES)


# ---------------------------------------------------------------------------
# stationary rates
# ---------------------------------------------------------------------------
@pytest.mark.parametrize("T_nat", [0.0, WARM], ids=["cold", "warm"])
@pytest.mark.parametrize("kind, d, mach", _rate_cases())
def test_stationary_outputs_are_finite_and_non_negative(probe_model, dispersion, probe_width,
                                                        kind, d, mach, T_nat):
    # [GR]: rates are |kappa|^2 times non-negative integrals; the model
    # returns only declared, registered outputs, all of them for straight
    # motion (the up threshold speed is a property of straight motion)
    cond = contract_gas(d, T_nat, dispersion)
    probe = make_probe(probe_model, cond, 0.5, probe_width)
    path = stationary_path(kind, cond, mach)
    unbounded = probe_width == 0 and not cond.dispersion.bounded_windows
    if unbounded and kind == "inertial" and mach > 1 and d > 1:
        # [GR]: where omega/q stays bounded the supersonic window of emitted
        # wavenumbers is unbounded (in 1D the rate is a sum over finitely
        # many resonant roots) and a point probe's rate diverges: a clean
        # error naming the cause, never a number
        with pytest.raises(ModelError) as err:
            stationary_rates(cond, probe, path)
        assert err.value.key == "condensate.dispersion"
        return
    # (a gapped point probe on such a spectrum below the sound speed: the up
    # family's shells keep q R/m below v/v_th, so Kapteyn's bound ends its
    # sum; it was once refused after 2e6 harmonics)
    result, _, outputs = rates_and_outputs(cond, probe, path)
    declared = PROBE_MODELS[probe_model].rate_outputs
    assert set(outputs) <= set(declared) and set(outputs) <= set(QUANTITIES)
    if kind == "inertial":
        assert set(outputs) == set(declared)
    assert finite_outputs(result, outputs) == {}     # [GR]: no rate is < 0
    assert set(declared) <= set(json.loads(json.dumps(result.to_dict())))


@pytest.mark.parametrize("model", GAPPED_MODELS)
def test_detailed_balance_at_rest_in_a_warm_gas(model, warm_gas, probe_width):
    # [KMS]: a static detector in a bath at temperature T has
    # Gamma_down/Gamma_up = exp(hbar Omega/k_B T) whatever the spectrum, and
    # its effective temperature is the bath's
    cond = warm_gas
    probe = make_probe(model, cond, 0.5, probe_width)
    (gap,) = [float(ch.detuning) for ch in probe.channels() if ch.gapped]
    result = stationary_rates(cond, probe, stationary_path("inertial", cond, 0.0))
    assert result.up_rate > 0
    ratio = result.down_rate / result.up_rate
    assert ratio == pytest.approx(math.exp(HBAR * gap / (KB * cond.temperature)), rel=1e-9)
    if "effective_temperature" in PROBE_MODELS[model].rate_outputs:
        assert result.effective_temperature == pytest.approx(cond.temperature, rel=1e-9)


@pytest.mark.parametrize("mach", [0.0, 0.3, 0.9])
def test_no_up_process_below_the_sound_speed_at_zero_temperature(probe_model, cold_gas,
                                                                  probe_width, mach):
    # [PS] Landau criterion: at T = 0 a body slower than c = min w_k/k cannot
    # create an excitation (w_k = k.v has no root), so neither a gapless
    # channel nor the up process of a gapped one (w_k + Omega = k.v) has a
    # rate; [GF]: the up threshold speed lies above c
    cond = cold_gas
    probe = make_probe(probe_model, cond, 0.5, probe_width)
    result, raw, _ = rates_and_outputs(cond, probe, stationary_path("inertial", cond, mach))
    for ch in probe.channels():
        processes = ("up",) if ch.gapped else ("emission", "absorption", "power")
        for process in processes:
            assert np.all(raw[ch.label][process][0] == 0), (ch.label, process)
    declared = PROBE_MODELS[probe_model].rate_outputs
    if "up_rate" in declared:
        assert result.up_rate == 0
    if "up_threshold_speed" in declared:
        # min_k (w_k + Omega)/k >= c, reached only as k -> oo for w = c k
        assert result.up_threshold_speed >= cond.sound_speed


@pytest.mark.parametrize("mach", [0.5, 1.5])
def test_straight_motion_rates_do_not_depend_on_the_direction(probe_model, gas, mach):
    # [ISO]: the rates of uniform straight motion depend on the speed only
    d = gas.dimension
    probe = make_probe(probe_model, gas, 0.5, 0.3)
    others = {1: [(-1.0,)], 2: [(0.0, 1.0), (-0.6, 0.8)],
              3: [(0.0, 0.0, -1.0), (1.0, 1.0, 1.0)]}[d]
    along_x = stationary_rates(gas, probe, stationary_path("inertial", gas, mach)).to_dict()
    for direction in others:
        turned = stationary_rates(gas, probe, stationary_path("inertial", gas, mach,
                                                              direction=direction))
        for name in PROBE_MODELS[probe_model].rate_outputs:
            assert turned.to_dict()[name] == pytest.approx(along_x[name], rel=1e-12, abs=0.0)


# ---------------------------------------------------------------------------
# the static limit, against the spectrum written in SI [PS]
# ---------------------------------------------------------------------------
def _bogoliubov_si(cond, omega):
    """k with w_k = omega, and S(k), v_g(k) there: hbar w = sqrt(eps (eps +
    2 mu)), eps = hbar^2 k^2/2m, S = eps/(hbar w), v_g = (eps + mu) hbar k/(m
    hbar w) [PS]."""
    m, mu, hw = cond.mass, cond.chemical_potential, HBAR * omega
    eps = hw * hw / (math.sqrt(mu * mu + hw * hw) + mu)
    k = math.sqrt(2 * m * eps) / HBAR
    return k, eps / hw, (eps + mu) * HBAR * k / (m * hw)


def _phonon_si(cond, omega):
    """The acoustic spectrum w = c k with S(k) = hbar k/(2 m c), v_g = c [PS]."""
    c = cond.sound_speed
    k = omega / c
    return k, HBAR * k / (2 * cond.mass * c), c


def _registered_si(cond, omega):
    """A dispersion without a closed form here: its own methods, in SI."""
    disp, xi, c = cond.dispersion, cond.healing_length, cond.sound_speed
    q = np.atleast_1d(disp.inverse(np.array([omega / cond.frequency_unit])))
    return (float(q[0]) / xi, float(disp.structure_factor(q)[0]),
            float(disp.group_velocity(q)[0]) * c)


SPECTRA_SI = {"bogoliubov": _bogoliubov_si, "phonon": _phonon_si}


@pytest.mark.parametrize("model", GAPPED_MODELS)
def test_static_limit_is_the_golden_rule_at_the_resonant_shell(model, gas, probe_width):
    # [GR] for a detector at rest: Gamma_down = A S |F|^2 (1 + n) g_d(k)/v_g,
    # Gamma_up = A S |F|^2 n g_d(k)/v_g at w_k = Omega, with A = (kappa/hbar)^2 n,
    # |F|^2 = exp(-k^2 s^2) and the resonant shell's measure g_3 = k^2/pi,
    # g_2 = k, g_1 = 2 (the two roots +-k); n the Bose occupation at Omega
    cond, d = gas, gas.dimension
    probe = make_probe(model, cond, 0.5, probe_width)
    (ch,) = [ch for ch in probe.channels() if ch.gapped]
    omega = float(ch.detuning)
    k, S, vg = SPECTRA_SI.get(cond.dispersion.name, _registered_si)(cond, omega)
    shell = {3: k * k / math.pi, 2: k, 1: 2.0}[d]
    base = ((ch.coupling / HBAR) ** 2 * cond.density * S * math.exp(-(k * probe.width) ** 2)
            * shell / vg)
    n = 0.0 if cond.temperature == 0 else 1.0 / math.expm1(HBAR * omega / (KB * cond.temperature))
    result = stationary_rates(cond, probe, stationary_path("inertial", cond, 0.0))
    assert result.down_rate == pytest.approx(base * (1 + n), rel=1e-9)
    assert result.up_rate == pytest.approx(base * n, rel=1e-9, abs=0.0)


# ---------------------------------------------------------------------------
# the same physics in other units (the configuration reader)
# ---------------------------------------------------------------------------
#: section.key -> {unit: (factor, other unit)}: the same quantity written in
#: other units (factor: number in the other unit per number in the first)
OTHER_UNITS = {
    ("condensate", "density"): {"m^-3": (1e-6, "cm^-3"), "m^-2": (1e-4, "cm^-2"),
                                "m^-1": (1e-2, "cm^-1")},
    ("condensate", "scattering_length"): {"nm": (1e-3, "um")},
    ("condensate", "transverse_frequency"): {"kHz": (2e3 * math.pi, "rad/s")},
    ("condensate", "temperature"): {"nK": (1e-9, "K")},
    ("probe", "gap"): {"kHz": (2e3 * math.pi, "rad/s")},
    ("probe", "coupling_length"): {"nm": (1e3, "pm")},
    ("probe", "width"): {"um": (1e3, "nm")},
    ("trajectory", "radius"): {"um": (1e-3, "mm")},
}


def _in_other_units(raw, sound_speed):
    """``raw`` with every quantity of OTHER_UNITS, waypoint times and
    positions, and speeds in c_s rewritten in other units."""
    out = copy.deepcopy(raw)
    table = dict(OTHER_UNITS)
    table[("trajectory", "speed")] = {"c_s": (sound_speed * 1e3, "mm/s")}
    for (section, key), units in table.items():
        if key in out[section]:
            number, unit = out[section][key].split(maxsplit=1)
            factor, other = units[unit]
            out[section][key] = f"{float(number) * factor!r} {other}"
    waypoints = out["trajectory"].get("waypoints", {})
    for axis, values in waypoints.items():
        factor, other = {"ms": (1e-3, "s"), "um": (1e-3, "mm")}[values[0].split()[1]]
        waypoints[axis] = [f"{float(v.split()[0]) * factor!r} {other}" for v in values]
    return out


@pytest.mark.parametrize("temperature", [None, "20 nK"], ids=["cold", "warm"])
def test_rates_are_the_same_in_other_units(stationary_scenario, probe_model, temperature):
    # units are bookkeeping: the same scenario written in other units gives
    # the same SI results (to rounding in the unit conversions)
    if temperature is not None:
        stationary_scenario["condensate"]["temperature"] = temperature
    first = scenario_from_dict(stationary_scenario)
    assert isinstance(first.probe, PROBE_MODELS[probe_model])
    other = scenario_from_dict(_in_other_units(stationary_scenario,
                                               first.condensate.sound_speed))
    a, b = first.rates().to_dict(), other.rates().to_dict()
    # error estimates are of the order of the rounding here: not compared
    for name in [k for k in a if _is_error(k)] + ["warnings"]:
        a.pop(name), b.pop(name)
    _close(a, b, 1e-12)


def test_transit_is_the_same_in_other_units(spline_scenario, probe_model):
    # as above, for a finite transit through timed waypoints
    first = scenario_from_dict(spline_scenario)
    other = scenario_from_dict(_in_other_units(spline_scenario, first.condensate.sound_speed))
    a, b = first.transit().to_dict(), other.transit().to_dict()
    for name in PROBE_MODELS[probe_model].transit_outputs:
        if not _is_error(name):
            assert b[name] == pytest.approx(a[name], rel=1e-12, abs=0.0)


# ---------------------------------------------------------------------------
# finite transits
# ---------------------------------------------------------------------------
@pytest.mark.parametrize("mach", [0.5, 1.5])
def test_gaussian_transit_outputs_are_finite_and_non_negative(probe_model, cold_gas, mach):
    # [GR]: first-order probabilities and phonon numbers are |kappa|^2 times
    # non-negative integrals; the model's declared transit outputs are all
    # on the result and in its JSON
    cond = cold_gas
    probe = make_probe(probe_model, cond, 0.5, 0.5)
    path = stationary_path("inertial", cond, mach)
    result = transit_probabilities(cond, probe, path, Gaussian(10.0 / cond.frequency_unit),
                                   rtol=1e-3)
    negative = finite_outputs(result, PROBE_MODELS[probe_model].transit_outputs)
    # where a channel is far below its own error estimate rounding could
    # make it slightly negative: the engine returns 0 there, never below
    assert not negative, negative


@pytest.mark.parametrize("kind, d", STATIONARY_CASES)
def test_every_stationary_kind_has_a_path_of_its_kind(kind, d):
    # the engine that serves a kind is chosen by the path's declared kind
    path = stationary_path(kind, contract_gas(d), 0.5)
    assert path.stationary and path.stationary_kind == kind
