import copy
import math

import numpy as np
import pytest
from scipy import constants as sc

from probe.gas.condensate import Condensate
from probe.scenarios.config import (load_config, override, rates_from_config, read_toml,
                          scenario_from_dict, species_mass)
from probe.errors import InputError
from probe.detectors import DensityProbe, TwoLevelProbe

U = sc.atomic_mass
HBAR = sc.hbar

BASE = {
    "condensate": {"dimension": 3, "species": "87Rb", "density": "1.2e20 m^-3",
                   "scattering_length": "5.3 nm"},
    "probe": {"model": "two-level", "gap": "200 Hz", "coupling_length": "1 nm"},
    "trajectory": {"kind": "linear", "speed": "1.5 c_s"},
}

BASE_TOML = """
[condensate]
dimension = 3
species = "87Rb"
density = "1.2e20 m^-3"
scattering_length = "5.3 nm"

[probe]
model = "two-level"
gap = "200 Hz"
coupling_length = "1 nm"

[trajectory]
kind = "linear"
speed = "1.5 c_s"
"""


def cfg(**changes):
    """BASE with 'section.key' entries replaced (value None deletes)."""
    out = copy.deepcopy(BASE)
    for dotted, value in changes.items():
        section, key = dotted.split("__")
        body = out.setdefault(section, {})
        if value is None:
            body.pop(key, None)
        else:
            body[key] = value
    return out


def error_of(raw, overrides=()):
    with pytest.raises(InputError) as err:
        scenario_from_dict(raw, overrides)
    return err.value


# --- species masses ------------------------------------------------------------
def test_rb87_mass():
    # 87Rb: 86.909180531 u (atomic mass evaluation AME2016; value quoted from
    # memory); periodictable's table must agree to 1e-6 relative.
    assert species_mass("87Rb") == pytest.approx(86.909180531 * U, rel=1e-6)


@pytest.mark.parametrize("species, mass_u", [
    # isotope masses from the atomic mass evaluation (AME2016), from memory;
    # agreement to 1e-6 relative is ample for the rates
    ("23Na", 22.9897692820), ("39K", 38.9637064864), ("7Li", 7.0160034366),
    ("133Cs", 132.905451961), ("4He", 4.00260325413),
    ("Rb87", 86.909180531), ("Rb-87", 86.909180531)])
def test_species_masses(species, mass_u):
    assert species_mass(species) == pytest.approx(mass_u * U, rel=1e-6)


@pytest.mark.parametrize("species, text", [("87Xx", "unknown element"),
                                           ("300Rb", "no isotope"),
                                           ("rubidium", "not an isotope")])
def test_unknown_species(species, text):
    with pytest.raises(InputError, match=text) as err:
        species_mass(species)
    assert err.value.key == "condensate.species"


# --- building a scenario ---------------------------------------------------------
def test_base_scenario_objects():
    s = scenario_from_dict(BASE)
    cond = s.condensate
    assert isinstance(cond, Condensate) and cond.dimension == 3
    assert cond.mass == pytest.approx(86.909180531 * U, rel=1e-6)
    # Bogoliubov sound speed c = sqrt(g n / m), g = 4 pi hbar^2 a / m
    # (Pitaevskii and Stringari, Bose-Einstein Condensation, ch. 4)
    m = 86.909180531 * U
    c = math.sqrt(4 * math.pi * HBAR**2 * 5.3e-9 * 1.2e20 / m**2)
    assert cond.sound_speed == pytest.approx(c, rel=1e-6)
    assert isinstance(s.probe, TwoLevelProbe)
    # Omega = 2 pi x 200 Hz (SI brochure: Hz is an ordinary frequency)
    assert s.probe.gap == pytest.approx(2 * math.pi * 200)
    # impurity coupling 2 pi hbar^2 a / m_r with m_r = m/2 for equal masses
    # (Pitaevskii and Stringari, impurity in a condensate)
    assert s.probe.coupling == pytest.approx(4 * math.pi * HBAR**2 * 1e-9 / m, rel=1e-6)
    assert s.trajectory.stationary_parameters()["speed"] == pytest.approx(1.5 * c, rel=1e-6)
    assert s.rtol == 1e-8
    assert s.condensate.temperature == 0.0
    assert s.condensate.dispersion.name == "bogoliubov"


def test_describe_reports_inputs_and_convention():
    info = scenario_from_dict(BASE).describe()
    assert info["condensate"]["species"] == "87Rb"
    assert info["condensate"]["density"] == 1.2e20
    assert info["derived"]["healing_length_convention"] == "xi = hbar/(m c)"
    d = info["derived"]
    m = info["condensate"]["mass"]
    assert d["healing_length"] == pytest.approx(HBAR / (m * d["sound_speed"]))
    assert info["trajectory"]["kind"] == "linear"


def test_probe_with_other_species_uses_reduced_mass():
    s = scenario_from_dict(cfg(probe__species="133Cs"))
    m, mp = species_mass("87Rb"), species_mass("133Cs")
    mr = m * mp / (m + mp)
    # kappa_3 = 2 pi hbar^2 a_pb / m_r (Pitaevskii and Stringari)
    assert s.probe.coupling == pytest.approx(2 * math.pi * HBAR**2 * 1e-9 / mr, rel=1e-12)
    assert s.probe_mass == mp


def test_explicit_coupling_and_density_model():
    s = scenario_from_dict(cfg(probe__model="density", probe__gap=None,
                               probe__coupling_length=None,
                               probe__coupling="1e-50 J m^3"))
    assert isinstance(s.probe, DensityProbe)
    assert s.probe.coupling == 1e-50


def test_reduced_dimension_gas():
    s = scenario_from_dict(cfg(condensate__dimension=1,
                               condensate__density="5e7 m^-1",
                               condensate__transverse_frequency="2 kHz",
                               condensate__temperature="20 nK"))
    assert s.condensate.dimension == 1
    # trap frequencies in Hz are ordinary: w_perp = 2 pi x 2 kHz
    assert s.condensate.transverse_frequency == pytest.approx(2 * math.pi * 2e3)
    assert s.condensate.temperature == pytest.approx(20e-9)


def test_circular_trajectory():
    s = scenario_from_dict(cfg(trajectory__kind="circular", trajectory__speed=None,
                               trajectory__radius="10 um",
                               trajectory__angular_frequency="100 rad/s"))
    p = s.trajectory.stationary_parameters()
    assert p["radius"] == pytest.approx(1e-5)
    assert p["speed"] == pytest.approx(1e-3)


def test_linear_direction_and_start():
    s = scenario_from_dict(cfg(trajectory__direction=[0, 2, 0],
                               trajectory__start="(1, 2, 3) um"))
    np.testing.assert_allclose(s.trajectory.direction, [0, 1, 0])
    np.testing.assert_allclose(s.trajectory.start, [1e-6, 2e-6, 3e-6])


# --- errors ----------------------------------------------------------------------
def test_unknown_key_suggests_closest():
    err = error_of(cfg(trajectory__sped="2 c_s"))
    assert err.key == "trajectory.sped"
    assert "did you mean 'speed'?" in err.message and "allowed:" in err.message


def test_unknown_section_suggests_closest():
    err = error_of({**BASE, "numeric": {"rtol": 1e-6}})
    assert err.key == "numeric" and "did you mean 'numerics'?" in err.message


def test_missing_key_gives_example():
    err = error_of(cfg(condensate__density=None))
    assert err.key == "condensate.density"
    assert "missing" in err.message and "m^-3" in err.message


def test_missing_section():
    raw = copy.deepcopy(BASE)
    del raw["trajectory"]
    assert error_of(raw).key == "trajectory"


def test_missing_mass_and_species():
    err = error_of(cfg(condensate__species=None))
    assert err.key == "condensate.species" and "mass" in err.message


def test_transverse_frequency_required_below_3d():
    err = error_of(cfg(condensate__dimension=2, condensate__density="1e14 m^-2"))
    assert err.key == "condensate.transverse_frequency"


def test_density_of_wrong_dimension_in_config():
    err = error_of(cfg(condensate__density="1e14 m^-2"))
    assert str(err).startswith("condensate.density: '1e14 m^-2' is a 2D density")


def test_bad_dimension():
    assert error_of(cfg(condensate__dimension=4)).key == "condensate.dimension"
    assert error_of(cfg(condensate__dimension="3")).key == "condensate.dimension"


def test_gap_not_applicable_to_density_model():
    err = error_of(cfg(probe__model="density"))
    assert err.key == "probe.gap" and "density model" in err.message


def test_gap_required_for_two_level():
    assert error_of(cfg(probe__gap=None)).key == "probe.gap"


def test_radius_not_applicable_to_linear():
    err = error_of(cfg(trajectory__radius="5 um"))
    assert err.key == "trajectory.radius" and "linear" in err.message


def test_circular_needs_exactly_one_of_speed_and_angular_frequency():
    raw = cfg(trajectory__kind="circular", trajectory__radius="10 um",
              trajectory__angular_frequency="100 rad/s")
    assert "exactly one" in error_of(raw).message


def test_bad_choice_suggests():
    err = error_of(cfg(probe__model="two_level"))
    assert err.key == "probe.model" and "did you mean 'two-level'?" in err.message
    err = error_of(cfg(trajectory__kind="circle"))
    assert err.key == "trajectory.kind" and "circular" in err.message


def test_both_coupling_forms_rejected():
    err = error_of(cfg(probe__coupling="1e-50 J m^3"))
    assert "not both" in err.message


def test_mass_not_applicable_with_explicit_coupling():
    err = error_of(cfg(probe__coupling_length=None, probe__coupling="1e-50 J m^3",
                       probe__species="133Cs"))
    assert err.key == "probe.species"


def test_trajectory_errors_become_input_errors_with_section():
    err = error_of(cfg(trajectory__speed="-1 mm/s"))
    assert err.key == "trajectory.speed"
    err = error_of(cfg(trajectory__direction=[0, 0, 0]))
    assert err.key == "trajectory.direction"


def test_direction_must_stay_in_low_dimensional_gas():
    err = error_of(cfg(condensate__dimension=1, condensate__density="5e7 m^-1",
                       condensate__transverse_frequency="2 kHz",
                       trajectory__direction=[0, 1, 0]))
    assert err.key == "trajectory.direction" and "1D" in err.message


def test_rtol_checked():
    assert error_of({**BASE, "numerics": {"rtol": 2}}).key == "numerics.rtol"
    assert scenario_from_dict({**BASE, "numerics": {"rtol": 1e-6}}).rtol == 1e-6


def test_zero_gap_rejected_by_probe():
    assert error_of(cfg(probe__gap="0 Hz")).key == "probe.gap"


# --- overrides ---------------------------------------------------------------------
def test_override_values_and_copy():
    raw = copy.deepcopy(BASE)
    new = override(raw, "trajectory.speed=2 c_s")
    assert new["trajectory"]["speed"] == "2 c_s"
    assert raw["trajectory"]["speed"] == "1.5 c_s"          # not mutated
    assert override(raw, "condensate.dimension=2")["condensate"]["dimension"] == 2
    assert override(raw, "trajectory.direction=[0, 1, 0]")["trajectory"]["direction"] == [0, 1, 0]
    assert override(raw, 'probe.species="23Na"')["probe"]["species"] == "23Na"
    assert override(raw, "probe.species=23Na")["probe"]["species"] == "23Na"
    assert override(raw, "numerics.rtol=1e-6")["numerics"]["rtol"] == 1e-6


def test_override_applied_when_loading():
    s = scenario_from_dict(BASE, ["trajectory.speed=2 c_s"])
    c = s.condensate.sound_speed
    assert s.trajectory.stationary_parameters()["speed"] == pytest.approx(2 * c)


def test_override_sets_one_component_as_vary_does():
    # --set takes the component keys that --vary takes (trajectory.start[1])
    raw = cfg(trajectory__start=["0 um", "2 um", "0 um"])
    assert override(raw, "trajectory.start[1]=10 um")["trajectory"]["start"] == [
        "0 um", "10 um", "0 um"]
    # absent: the origin, one component per dimension of the gas
    assert override(BASE, "trajectory.start[1]=10 um")["trajectory"]["start"] == [
        "0 m", "10 um", "0 m"]
    # written as one string with a unit
    out = override(cfg(trajectory__start="(1, 2, 3) um"), "trajectory.start[2]=5 um")
    assert out["trajectory"]["start"] == ["(1) um", "(2) um", "5 um"]
    # the path built from it: y = 10 um (impact parameter of a path along x)
    s = scenario_from_dict(BASE, ["trajectory.start[1]=10 um", "trajectory.start[0]=-3 um"])
    np.testing.assert_allclose(s.trajectory.position(0.0), [-3e-6, 10e-6, 0.0])
    for bad, key, text in (("trajectory.start[5]=1 um", "trajectory.start[5]", "[2]"),
                           ("trajectory.direction[1]=1", "trajectory.direction[1]",
                            "whole value"),
                           ("trajectory.strat[1]=1 um", "trajectory.strat", "start")):
        with pytest.raises(InputError) as err:
            override(BASE, bad)
        assert err.value.key == key and text in err.value.message


def test_unset_of_one_component_says_what_to_do():
    from probe.scenarios.config import unset
    with pytest.raises(InputError) as err:
        unset(cfg(trajectory__start=["0 um", "2 um", "0 um"]), "trajectory.start[1]")
    assert err.value.key == "trajectory.start[1]"
    assert "--unset trajectory.start" in err.value.message and "--set" in err.value.message


@pytest.mark.parametrize("assignment, key", [
    ("trajectory.sped=2 c_s", "trajectory.sped"),
    ("trajectori.speed=2 c_s", "trajectori"),
    ("speed=2 c_s", "--set"),
    ("trajectory.speed", "--set"),
])
def test_override_rejects_bad_keys(assignment, key):
    with pytest.raises(InputError) as err:
        override(BASE, assignment)
    assert err.value.key == key


def test_override_suggestion():
    with pytest.raises(InputError, match="did you mean 'speed'"):
        override(BASE, "trajectory.sped=2 c_s")


def test_unset_removes_a_copy_of_the_key():
    from probe.scenarios.config import unset
    raw = copy.deepcopy(BASE)
    new = unset(raw, "probe.gap")
    assert "gap" not in new["probe"] and raw["probe"]["gap"] == BASE["probe"]["gap"]
    assert unset(raw, " probe.gap ")["probe"] == new["probe"]


@pytest.mark.parametrize("dotted, key, words", [
    ("condensate.temperature", "condensate.temperature", "not in the scenario"),
    ("numerics.rtol", "numerics.rtol", "not in the scenario"),
    ("probe.gpa", "probe.gpa", "did you mean 'gap'"),
    ("numeric.rtol", "numeric", "unknown section"),
    ("gap", "--unset", "SECTION.KEY"),
    ("a.b.c", "--unset", "SECTION.KEY"),
    ("probe.gap=1 Hz", "--unset", "use --set"),
    (3, "--unset", "expected KEY"),
])
def test_unset_rejects_missing_and_bad_keys(dotted, key, words):
    from probe.scenarios.config import unset
    with pytest.raises(InputError) as err:
        unset(BASE, dotted)
    assert err.value.key == key and words in err.value.message


def test_removals_come_before_overrides():
    from probe.scenarios.config import apply_edits
    out = apply_edits(BASE, ["probe.gap=300 Hz"], ["probe.gap"])
    assert out["probe"]["gap"] == "300 Hz"
    s = scenario_from_dict(BASE, ["probe.model=density"], removals=["probe.gap"])
    assert isinstance(s.probe, DensityProbe)
    with pytest.raises(InputError) as err:
        scenario_from_dict(BASE, removals=["probe.gap"])
    assert err.value.key == "probe.gap" and "missing" in err.value.message
    with pytest.raises(InputError) as err:
        apply_edits(BASE, (), ["probe.gap", "probe.gap"])
    assert err.value.key == "probe.gap" and "twice" in err.value.message


# --- files --------------------------------------------------------------------------
def test_load_config_file(tmp_path):
    path = tmp_path / "s.toml"
    path.write_text(BASE_TOML)
    s = load_config(path, ["probe.gap=300 Hz"])
    assert s.source == str(path)
    assert s.probe.gap == pytest.approx(2 * math.pi * 300)
    assert s.raw["probe"]["gap"] == "300 Hz"


def test_bad_toml_reports_file_and_line(tmp_path):
    path = tmp_path / "bad.toml"
    path.write_text(BASE_TOML.replace('speed = "1.5 c_s"', "speed = 1.5 c_s"))
    with pytest.raises(InputError) as err:
        read_toml(path)
    assert err.value.key == str(path)
    assert "TOML syntax error" in err.value.message and "line" in err.value.message


def test_missing_file(tmp_path):
    with pytest.raises(InputError) as err:
        load_config(tmp_path / "nope.toml")
    assert err.value.key.endswith("nope.toml") and "cannot read" in err.value.message


def test_number_without_units_in_file(tmp_path):
    path = tmp_path / "s.toml"
    path.write_text(BASE_TOML.replace('scattering_length = "5.3 nm"',
                                      "scattering_length = 5.3e-9"))
    with pytest.raises(InputError, match="must carry units") as err:
        load_config(path)
    assert err.value.key == "condensate.scattering_length"


# --- rates through the engine ----------------------------------------------------------
def test_rates_from_config_adds_regime_warnings_once(tmp_path):
    # a strong coupling makes the down rate exceed 0.1 Omega
    raw = cfg(probe__coupling_length="5 nm")
    res = rates_from_config(raw)
    assert res.down_rate > 0.1 * 2 * math.pi * 200
    hits = [w for w in res.warnings if "first-order" in w]
    assert len(hits) == 1
    assert len(res.warnings) == len(set(res.warnings))
    path = tmp_path / "s.toml"
    path.write_text(BASE_TOML)
    res2 = rates_from_config(path, ["probe.coupling_length=5 nm"])
    assert res2.down_rate == pytest.approx(res.down_rate, rel=1e-12)


def test_rates_scale_with_coupling_squared():
    # golden rule: Gamma is proportional to kappa^2 (Fermi's golden rule)
    r1 = rates_from_config(cfg(probe__coupling_length="1 nm"))
    r2 = rates_from_config(cfg(probe__coupling_length="2 nm"))
    assert r2.down_rate == pytest.approx(4 * r1.down_rate, rel=1e-6)
    assert r2.up_rate == pytest.approx(4 * r1.up_rate, rel=1e-6)


EXAMPLE_FILES = __import__("pathlib").Path(__file__).resolve().parent.parent / "examples"


@pytest.mark.parametrize("name, extra, key, unset_key", [
    # (file, --set of the alternative to a key the file holds, key blamed, the
    # --unset that keeps the value just set)
    ("box3d_supersonic.toml", "probe.tweezer_frequency=30 kHz", "probe.tweezer_frequency",
     "probe.width"),
    ("dressed3d_drive.toml", "probe.width=0.2 um", "probe.tweezer_frequency",
     "probe.tweezer_frequency"),
    ("box3d_supersonic.toml", "probe.mass=40.96 u", "probe.mass", "probe.species"),
    ("box3d_supersonic.toml", "condensate.mass=86.909 u", "condensate.mass",
     "condensate.species"),
    ("box3d_supersonic.toml", "probe.coupling=1e-50 J m^3", "probe.coupling",
     "probe.coupling_length"),
    ("passages/push3d_trap.toml", "condensate.density=1e20 m^-3", "condensate.atom_number",
     "condensate.atom_number"),
    ("ring2d_circular.toml", "trajectory.angular_frequency=1000 rad/s", "trajectory.speed",
     "trajectory.speed"),
    ("dressed3d_drive.toml", "probe.coupling_a=4.5e-51 J m^3", "probe.coupling_a",
     "probe.coupling_length_a"),
])
def test_either_or_pair_says_which_unset_fixes_it(name, extra, key, unset_key):
    # both of two alternatives given: the message names the --unset that keeps
    # the value just set, and following it gives a valid scenario (not checked
    # for the couplings: an explicit coupling then refuses the probe's species,
    # and a pair of pairs needs both keys of the pair unset)
    path = EXAMPLE_FILES / name
    with pytest.raises(InputError) as err:
        load_config(path, overrides=[extra])
    assert err.value.key == key
    assert "not both" in err.value.message or "exactly one" in err.value.message
    assert f"--unset {unset_key}" in err.value.message
    if "coupling" not in unset_key:
        load_config(path, overrides=[extra], removals=[unset_key])
