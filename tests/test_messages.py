"""What a new user reads: the statements of ``probe compare``, warnings about
keys that a scenario does not use, the units of printed numbers, the hints of
error messages for common slips, the warning on rate x time for a straight
crossing, and the labels and notes of the tables.

Each check compares a printed sentence with something computed apart from
it: the comparison's own table, the value given in the file, the closed
relation between the quantities (up probability = emitted + absorbed phonons
for a ground-state start, first order), or a finite transit computed by the
transit engine.
"""
import json
import os
import re
from pathlib import Path

import numpy as np
import pytest
from click.testing import CliRunner

from probe.cli import cli

ROOT = Path(__file__).resolve().parents[1]
EXAMPLES = ROOT / "examples"


def run(args, folder=None):
    old = os.getcwd()
    if folder is not None:
        os.chdir(folder)
    try:
        return CliRunner().invoke(cli, [str(a) for a in args])
    finally:
        os.chdir(old)


# ---------------------------------------------------------------------------
# 6. probe compare: the largest difference is the largest absolute difference
# ---------------------------------------------------------------------------
def test_compare_reports_the_largest_absolute_difference():
    """The statement's 'largest difference' is the largest |a - b| of the
    comparison's own table (not the first point where the ratio is
    infinite), and the points where one model vanishes are stated apart."""
    from probe.design.compare import compare

    cmp = compare(str(EXAMPLES / "box3d_supersonic.toml"),
                  vary=[("trajectory.speed", "0.5 c_s", "3 c_s", 41)], models=["dispersion"])
    a, b = cmp.column("up_rate:configured"), cmp.column("up_rate:phonon")
    speed = cmp.column("trajectory.speed") / cmp.column("sound_speed")
    i = int(np.argmax(np.abs(a - b)))
    text = next(s for s in cmp.statements if "up_rate differs" in s)
    m = re.search(r"largest difference ([0-9.e+-]+) 1/s at trajectory.speed = ([0-9.]+) c_s",
                  text)
    assert m, text
    assert float(m.group(1)) == pytest.approx(abs(a[i] - b[i]), rel=1e-3)
    assert float(m.group(2)) == pytest.approx(speed[i], abs=1e-3)
    # the first point where the configured rate is 0 and the phonon one is not
    # (1.0625 c_s) is not called the largest difference
    first_only = int(np.nonzero((a == 0) & (b > 0))[0][0])
    assert first_only != i
    assert any("nonzero at" in s and "where the configured model's vanishes" in s
               for s in cmp.statements)
    # the ratio is quoted only where both are nonzero
    both = (a > 0) & (b > 0)
    j = int(np.argmax(np.where(both, np.maximum(a / np.where(both, b, 1),
                                                b / np.where(both, a, 1)), -1)))
    m = re.search(r"largest ratio is phonon/configured = ([0-9.e+-]+)", text)
    assert m and float(m.group(1)) == pytest.approx(b[j] / a[j], rel=1e-2)


# ---------------------------------------------------------------------------
# 7. keys that a scenario does not use: warned about, or refused
# ---------------------------------------------------------------------------
def test_transverse_frequency_in_3d_is_warned_about_and_not_listed(tmp_path):
    r = run(["rates", EXAMPLES / "box3d_supersonic.toml", "--set",
             "condensate.transverse_frequency=2 kHz"])
    assert r.exit_code == 0, r.output
    inputs = r.output.split("Derived")[0]
    assert "transverse" not in inputs
    assert "transverse length" not in r.output.split("Results")[0]
    warnings = r.output.split("Warnings")[1]
    assert "condensate.transverse_frequency" in warnings and "3D" in warnings
    data = json.loads(run(["rates", EXAMPLES / "box3d_supersonic.toml", "--json", "--set",
                           "condensate.transverse_frequency=2 kHz"]).output)
    assert data["inputs"]["condensate"]["transverse_frequency"] is None
    assert any("condensate.transverse_frequency" in w for w in data["warnings"])


def test_rtol_on_a_linear_transit_is_warned_about():
    r = run(["transit", EXAMPLES / "transits" / "box3d_crossing.toml", "--set",
             "numerics.rtol=1e-6", "--set", "numerics.transit_rtol=1e-3"])
    assert r.exit_code == 0, r.output
    warnings = r.output.split("Warnings")[1]
    assert "numerics.rtol" in warnings and "numerics.transit_rtol" in warnings
    # the stationary rates of the same file do use it: no warning there
    r = run(["rates", EXAMPLES / "transits" / "box3d_crossing.toml", "--set",
             "numerics.rtol=1e-6"])
    assert "numerics.rtol" not in r.output


@pytest.mark.parametrize("key,value", [("direction", "[1, 0]"),
                                       ("start", '["1 um", "0 um"]')])
def test_two_components_in_3d_are_refused(key, value):
    r = run(["rates", EXAMPLES / "box3d_supersonic.toml", "--set",
             f"trajectory.{key}={value}"])
    assert r.exit_code == 2
    assert r.stderr.startswith(f"error: trajectory.{key}: ")
    assert "3 components" in r.stderr and "got 2" in r.stderr


# ---------------------------------------------------------------------------
# 9. hints for common slips
# ---------------------------------------------------------------------------
@pytest.mark.parametrize("assignment,hint", [
    ("condensate.density=1e14 cm-3", "did you mean '1e14 cm^-3'?"),
    ("condensate.temperature=20 nk", "did you mean '20 nK'?"),
    ("probe.gap=150 hz", "did you mean '150 Hz'?"),
    ("condensate.speed=1 c_s", "belongs in [trajectory] (trajectory.speed)"),
    ('trajectory.direction=["a", 0, 0]', "a direction is a list of numbers"),
])
def test_common_slips_get_a_hint(assignment, hint):
    r = run(["rates", EXAMPLES / "box3d_supersonic.toml", "--set", assignment])
    assert r.exit_code == 2
    assert hint in r.stderr, r.stderr
    assert r.stderr.count("\n") == 1
    assert "did you mean 'species'" not in r.stderr


def test_the_suggested_spelling_reads_as_intended():
    """The corrected text is read as the quantity meant: 1e14 cm^-3 is
    1e20 m^-3 (1 cm = 1e-2 m), 20 nK is 2e-8 K."""
    from probe.scenarios.spelling import corrections
    from probe.scenarios.units import parse_quantity

    fixed = dict(corrections("1e14 cm-3"))
    assert parse_quantity(next(iter(fixed)), "k", "density", dimension=3) == \
        pytest.approx(1e20, rel=1e-12)
    assert parse_quantity(corrections("20 nk")[0][0], "k", "temperature") == \
        pytest.approx(2e-8, rel=1e-12)


# ---------------------------------------------------------------------------
# 8. one display rule for units
# ---------------------------------------------------------------------------
def test_temperatures_are_shown_in_the_unit_that_fits():
    """300 K is shown as K, 20 nK as nK (the table unit follows the value);
    the number shown times its unit is the value given."""
    from probe.quantities import display_text, fitting_unit

    assert fitting_unit("temperature", 300.0) == ("K", 1.0)
    assert fitting_unit("temperature", 20e-9) == ("nK", 1e-9)
    assert fitting_unit("temperature", 1.5e-6) == ("uK", 1e-6)
    assert display_text("temperature", 300.0) == "300 K"
    r = run(["rates", EXAMPLES / "box3d_supersonic.toml", "--set",
             "condensate.temperature=300 K"])
    assert r.exit_code == 0
    assert re.search(r"^  temperature\s+300 K$", r.output, re.M), r.output
    assert "e+11 nK" not in r.output and "T = 300 K is" in r.output
    r = run(["rates", EXAMPLES / "box3d_supersonic.toml", "--set",
             "condensate.temperature=20 nK"])
    assert re.search(r"^  temperature\s+20 nK$", r.output, re.M)


@pytest.mark.parametrize("assignment,shown", [
    ("probe.gap=-150 Hz", "got '-150 Hz' (-942.478 rad/s)"),
    ("condensate.density=-1e20 m^-3", "got '-1e20 m^-3' (-1e+20 m^-3)"),
    ("condensate.temperature=-1 nK", "got '-1 nK' (-1e-09 K)"),
    ("trajectory.speed=-1 mm/s", "got '-1 mm/s' (-0.001 m/s)"),
])
def test_refused_values_are_quoted_with_their_units(assignment, shown):
    """A refused value is quoted as written, its SI value with the SI unit
    beside (2 pi x 150 = 942.478 rad/s)."""
    r = run(["rates", EXAMPLES / "box3d_supersonic.toml", "--set", assignment])
    assert r.exit_code == 2
    assert shown in r.stderr, r.stderr


def test_mach_column_has_no_float_noise(tmp_path):
    """The mach column of a sweep over speeds in c_s holds the grid's own
    decimals (np.linspace(0.5, 3, 11): 0.75, 1.0, 1.25 ... to 12 significant
    digits), not 1.3500000000000003."""
    out = tmp_path / "s.csv"
    r = run(["sweep", EXAMPLES / "box3d_supersonic.toml", "--vary",
             "trajectory.speed=0.5c_s:3c_s:11", "--out", out])
    assert r.exit_code == 0, r.output
    rows = out.read_text().splitlines()
    col = rows[0].split(",").index("mach [1]")
    cells = [row.split(",")[col] for row in rows[1:]]
    expected = [float(f"{v:.12g}") for v in np.linspace(0.5, 3.0, 11)]
    assert [float(c) for c in cells] == expected
    assert all(len(c) <= 14 for c in cells), cells


def test_significant_rounds_to_the_decimal():
    from probe.quantities import significant

    assert significant(1.3500000000000003) == 1.35
    assert significant(0.1 + 0.2) == 0.3
    assert significant(-2.5e-30 * (1 + 1e-15)) == -2.5e-30
    assert np.isnan(significant(np.nan)) and significant(0.0) == 0.0


# ---------------------------------------------------------------------------
# 10. the warning on rate x time for a straight crossing
# ---------------------------------------------------------------------------
CROSSING = EXAMPLES / "transits" / "box3d_crossing.toml"


def _crossing(sets):
    args = [a for s in sets for a in ("--set", s)]
    rates = json.loads(run(["rates", CROSSING, "--json", *args]).output)
    transit = json.loads(run(["transit", CROSSING, "--json", *args]).output)
    return rates, transit


def test_rate_times_time_is_not_called_unfair_where_the_transit_agrees():
    """The box crossing at 2 c_s (Omega t = 52, t c_s/xi = 80): the finite
    transit (transit engine, crossing switching) agrees with rate x time to a
    few per cent, and no warning says otherwise."""
    rates, transit = _crossing([])
    est = rates["transit"]["expected_up"]
    assert transit["up_probability"] == pytest.approx(est, rel=0.05)
    assert transit["down_probability"] == pytest.approx(rates["transit"]["expected_down"],
                                                        rel=0.05)
    assert not any("no fair estimate" in w or "no estimate" in w for w in rates["warnings"])


def test_rate_times_time_is_called_unfair_where_it_is_and_says_what_to_do():
    """At 0.9 c_s with a 5 Hz gap (Omega t = 1.9) the up probability of the
    transit is switching-made, ~2e-4, where rate x time gives 0: the warning
    fires and says how to get the estimate."""
    sets = ["trajectory.speed=0.9 c_s", "probe.gap=5 Hz"]
    rates, transit = _crossing(sets)
    assert rates["transit"]["expected_up"] == 0.0
    assert transit["up_probability"] > 1e-5
    text = next(w for w in rates["warnings"] if "no fair estimate" in w)
    assert 'switching = "crossing"' in text and "probe transit" in text
    assert "Omega t = 1.9" in text


# ---------------------------------------------------------------------------
# 11. labels and notes of the tables
# ---------------------------------------------------------------------------
def test_error_estimates_are_footnoted_and_the_population_named():
    r = run(["rates", EXAMPLES / "box3d_supersonic.toml"])
    assert r.exit_code == 0
    results = r.output.split("Results")[1].split("Warnings")[0]
    assert "(+/- " in results
    assert "+/- is the numerical error of the integration only" in results
    assert re.search(r"^  steady-state excited population\s+0\.37", r.output, re.M)


def test_absorbed_phonons_at_zero_and_finite_temperature():
    """absorbed_phonons is a number: 0 at T = 0; at T > 0 the up
    transitions that absorb a thermal phonon, so that up probability =
    emitted + absorbed (ground-state start).  Independent route: for a gap
    far below the inverse crossing time (Omega t ~ 2e-4) the two-level
    probe's absorption term n E- tends to the density probe's absorption
    integral n E0, computed by the transit engine on its own channel."""
    cold = json.loads(run(["transit", CROSSING, "--json"]).output)
    assert cold["absorbed_phonons"] == 0.0
    sets = ["--set", "condensate.temperature=30 nK", "--set", "probe.gap=1e-3 Hz"]
    warm = json.loads(run(["transit", CROSSING, "--json", *sets]).output)
    assert warm["absorbed_phonons"] > 0
    assert warm["emitted_phonons"] + warm["absorbed_phonons"] == pytest.approx(
        warm["up_probability"], rel=1e-12)
    density = json.loads(run(["transit", CROSSING, "--json", "--set",
                              "condensate.temperature=30 nK", "--unset", "probe.gap",
                              "--set", "probe.model=density"]).output)
    assert warm["absorbed_phonons"] == pytest.approx(density["absorbed_phonons"], rel=1e-5)
    table = run(["transit", CROSSING, *sets]).output
    assert re.search(r"^  absorbed phonons\s+0\.0084", table, re.M)
    assert "up probability = emitted + absorbed" in table
