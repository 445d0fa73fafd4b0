import math

import numpy as np
import pytest
from scipy import constants as sc

from probe.errors import InputError
from probe.scenarios.units import parse_quantity, parse_vector

TWO_PI = 2 * math.pi


# --- frequencies -------------------------------------------------------------
# Hz is an ordinary frequency: Omega = 2 pi nu (SI brochure, 9th ed., 2.3.4:
# the hertz is for periodic phenomena, rad/s for angular velocity; they are
# not interchangeable).
@pytest.mark.parametrize("text, nu", [("200 Hz", 200.0), ("2 kHz", 2e3),
                                      ("1.5 MHz", 1.5e6), ("250 mHz", 0.25)])
def test_ordinary_frequency_gets_two_pi(text, nu):
    assert parse_quantity(text, "probe.gap", "frequency") == pytest.approx(
        TWO_PI * nu, rel=1e-12)


@pytest.mark.parametrize("text, omega", [("200 rad/s", 200.0),
                                         ("200 rad s^-1", 200.0),
                                         ("2 krad/s", 2e3),
                                         # one turn is 2 pi rad (SI brochure)
                                         ("3 turn/s", 3 * TWO_PI)])
def test_angular_frequency_is_kept(text, omega):
    assert parse_quantity(text, "probe.gap", "frequency") == pytest.approx(
        omega, rel=1e-12)


@pytest.mark.parametrize("text", ["100 1/s", "100 s^-1", "100 / s"])
def test_bare_inverse_seconds_is_ambiguous_for_frequency(text):
    with pytest.raises(InputError) as err:
        parse_quantity(text, "probe.gap", "frequency")
    assert err.value.key == "probe.gap"
    assert "Hz" in err.value.message and "rad/s" in err.value.message


@pytest.mark.parametrize("text", ["40 1/s", "40 s^-1", "0.04 1/ms"])
def test_bare_inverse_seconds_is_ambiguous_for_angular_frequency(text):
    # a circle's angular frequency in 1/s could be rad/s or turns per second
    # (a factor 2 pi apart): refused as for a gap, whose README rule it follows
    with pytest.raises(InputError) as err:
        parse_quantity(text, "trajectory.angular_frequency", "angular_frequency")
    assert err.value.key == "trajectory.angular_frequency"
    assert "ambiguous" in err.value.message and "rad/s" in err.value.message
    assert parse_quantity("100 rad/s", "k", "angular_frequency") == 100.0
    assert parse_quantity("10 Hz", "k", "angular_frequency") == pytest.approx(
        TWO_PI * 10)


def test_hz_with_explicit_two_pi_is_rejected():
    # '2*pi*200 Hz' would otherwise be multiplied by 2 pi a second time
    with pytest.raises(InputError, match="2 pi"):
        parse_quantity("2*pi*200 Hz", "probe.gap", "frequency")


def test_gap_given_as_energy():
    # E = hbar Omega (definition of the gap energy)
    E = sc.hbar * 1234.5
    assert parse_quantity(f"{E!r} J", "probe.gap", "frequency") == pytest.approx(
        1234.5, rel=1e-12)


# --- speeds --------------------------------------------------------------------
@pytest.mark.parametrize("text", ["1.5 c_s", "1.5c_s"])
def test_speed_in_sound_speeds(text):
    assert parse_quantity(text, "trajectory.speed", "speed",
                          sound_speed=2e-3) == pytest.approx(3e-3, rel=1e-14)


def test_speed_in_sound_speeds_needs_the_sound_speed():
    with pytest.raises(InputError, match="c_s"):
        parse_quantity("1.5 c_s", "trajectory.speed", "speed")


def test_plain_c_is_the_speed_of_light():
    # c = 299 792 458 m/s exactly (SI definition of the metre)
    assert parse_quantity("1e-9 c", "k", "speed") == pytest.approx(0.299792458)


def test_speed_units():
    assert parse_quantity("2 mm/s", "k", "speed") == pytest.approx(2e-3)
    assert parse_quantity("3 um/ms", "k", "speed") == pytest.approx(3e-3)


# --- densities and couplings -------------------------------------------------------
def test_density_of_each_dimension():
    assert parse_quantity("1.2e20 m^-3", "k", "density", dimension=3) == 1.2e20
    assert parse_quantity("1e14 m^-2", "k", "density", dimension=2) == 1e14
    assert parse_quantity("50 um^-1", "k", "density", dimension=1) == pytest.approx(5e7)
    assert parse_quantity("1e14 cm^-3", "k", "density", dimension=3) == pytest.approx(1e20)


def test_density_of_wrong_dimension_is_rejected():
    with pytest.raises(InputError) as err:
        parse_quantity("1e14 m^-2", "condensate.density", "density", dimension=3)
    msg = str(err.value)
    assert msg.startswith("condensate.density: '1e14 m^-2' is a 2D density")
    assert "gas is 3D" in msg and "1/length^3" in msg


def test_density_that_is_not_a_density():
    with pytest.raises(InputError, match="1/length"):
        parse_quantity("5 kg", "condensate.density", "density", dimension=3)


def test_coupling_forms():
    # hbar^2/kg*m has units J m^3: (J s)^2 / kg * m = kg m^5 s^-2
    g = parse_quantity("hbar^2/kg*m", "probe.coupling", "coupling", dimension=3)
    assert g == pytest.approx(sc.hbar**2, rel=1e-12)
    assert parse_quantity("1e-50 J m^3", "k", "coupling", dimension=3) == 1e-50
    assert parse_quantity("1e-43 J m^2", "k", "coupling", dimension=2) == 1e-43
    with pytest.raises(InputError, match="2D coupling"):
        parse_quantity("1e-43 J m^2", "probe.coupling", "coupling", dimension=3)


# --- other kinds -----------------------------------------------------------------
def test_lengths_masses_times_temperatures():
    assert parse_quantity("5 um", "k", "length") == pytest.approx(5e-6)
    # Bohr radius a0 = 5.29177210903e-11 m (CODATA 2018)
    assert parse_quantity("100 a0", "k", "length") == pytest.approx(5.29177210903e-9,
                                                                    rel=1e-9)
    # unified atomic mass unit, CODATA: 1.66053906660e-27 kg
    assert parse_quantity("1 u", "k", "mass") == pytest.approx(1.66053906660e-27,
                                                               rel=1e-9)
    assert parse_quantity("2 ms", "k", "time") == pytest.approx(2e-3)
    assert parse_quantity("50 nK", "k", "temperature") == pytest.approx(5e-8)
    assert parse_quantity("3 uK", "k", "temperature") == pytest.approx(3e-6)
    assert parse_quantity("2 mK", "k", "temperature") == pytest.approx(2e-3)
    assert parse_quantity("0 K", "k", "temperature") == 0.0


def test_offset_temperature_rejected():
    with pytest.raises(InputError, match="absolute temperature"):
        parse_quantity("20 degC", "condensate.temperature", "temperature")


# --- malformed input -------------------------------------------------------------
@pytest.mark.parametrize("value", ["5", 5, 5.0, "1e-3"])
def test_bare_number_needs_units(value):
    with pytest.raises(InputError, match="must carry units"):
        parse_quantity(value, "condensate.scattering_length", "length")


def test_bare_number_is_fine_when_dimensionless():
    assert parse_quantity("1e-8", "numerics.rtol", "dimensionless") == 1e-8
    assert parse_quantity(1e-6, "numerics.rtol", "dimensionless") == 1e-6


@pytest.mark.parametrize("text", ["nan m", "inf m", "-inf nm", "1e400 m"])
def test_non_finite_rejected(text):
    with pytest.raises(InputError, match="not finite"):
        parse_quantity(text, "trajectory.radius", "length")


@pytest.mark.parametrize("text", ["five um", "1e3e3 m", "5 um +", ""])
def test_unparsable_rejected(text):
    with pytest.raises(InputError) as err:
        parse_quantity(text, "trajectory.radius", "length")
    assert err.value.key == "trajectory.radius"


def test_wrong_dimension_names_key_value_and_allowed():
    with pytest.raises(InputError) as err:
        parse_quantity("5 m", "trajectory.speed", "speed")
    assert err.value.key == "trajectory.speed"
    assert "'5 m'" in err.value.message and "m/s" in err.value.message


def test_comma_list_is_not_silently_multiplied():
    # pint alone would read '(1, 0, 0) um' as 100 um
    with pytest.raises(InputError, match="list"):
        parse_quantity("(1, 0, 0) um", "trajectory.start", "length")


def test_boolean_is_not_a_quantity():
    with pytest.raises(InputError):
        parse_quantity(True, "k", "length")


# --- vectors --------------------------------------------------------------------
def test_vectors():
    np.testing.assert_allclose(parse_vector(["1 um", "0 um", "2 nm"], "k", "length"),
                               [1e-6, 0.0, 2e-9])
    np.testing.assert_allclose(parse_vector("(1, 0, -2) um", "k", "length"),
                               [1e-6, 0.0, -2e-6])
    np.testing.assert_allclose(parse_vector([1, 0, 0], "k", "dimensionless"),
                               [1.0, 0.0, 0.0])
    np.testing.assert_allclose(parse_vector("(0, 1)", "k", "dimensionless"), [0.0, 1.0])


def test_vector_errors_name_the_component():
    with pytest.raises(InputError) as err:
        parse_vector(["1 um", "0", "0 um"], "trajectory.start", "length")
    assert err.value.key == "trajectory.start[1]"
    with pytest.raises(InputError, match="components"):
        parse_vector([1, 0, 0, 0], "trajectory.direction", "dimensionless")
    with pytest.raises(InputError):
        parse_vector("1 um", "trajectory.start", "length")


# --- examples in messages fit the key ----------------------------------------
def _refusal(dotted, value, **kw):
    from probe.scenarios.schema import KEYS
    from probe.scenarios.values import quantity
    key = KEYS[dotted]
    with pytest.raises(InputError) as err:
        quantity({key.name: value}, key, **kw)
    assert err.value.key == dotted
    return err.value.message


def test_message_examples_fit_the_key():
    # a direction takes plain numbers: its example is its declared one, no unit
    for bad in ("1,0,0", "1 um", 3):
        msg = _refusal("trajectory.direction", bad)
        assert "[1, 0, 0]" in msg and "um" not in msg.replace(repr(bad), "")
    # a start point's example carries lengths
    assert "um" in _refusal("trajectory.start", "1,2,3").split("write")[-1]
    # an atom number is a plain number of atoms: its declared 2e5, not '1e-8'
    for bad in ("1e6 atoms", "1e6 m"):
        msg = _refusal("condensate.atom_number", bad)
        assert "2e5" in msg and "1e-8" not in msg and "dimensionless must" not in msg
    assert "a pure number, e.g. 2e5" in _refusal("condensate.atom_number", "1e6 m")
    # a scattering length's example is its declared typical value
    assert "e.g. '5.3 nm'" in _refusal("condensate.scattering_length", "5.3e-9")
    # a density's example follows the gas's dimension, not the declared 3D one
    assert "e.g. '1e14 m^-2'" in _refusal("condensate.density", "1 K", dimension=2)
