"""Model comparison, threshold table and solve: the numbers against the
engine and an independent route, the stated differences, the CLI contracts."""
import csv
import json
import math
import re
from pathlib import Path

import numpy as np
import pytest
from click.testing import CliRunner
from scipy.optimize import minimize_scalar

from probe.cli import cli
from probe.design.compare import compare
from probe.scenarios.config import load_config
from probe.design.solver import solve, threshold_table
from probe.engines.stationary import inertial_rates
from probe.errors import InputError
from probe.design.sweep import sweep

EXAMPLES = Path(__file__).resolve().parent.parent / "examples"
BOX = str(EXAMPLES / "box3d_supersonic.toml")
RING = str(EXAMPLES / "ring2d_circular.toml")
DRAG = str(EXAMPLES / "drag3d_density.toml")
GUIDE = str(EXAMPLES / "guide1d_linear.toml")

SPEEDS = [("trajectory.speed", "0.5 c_s", "3 c_s", 11)]


# ---------------------------------------------------------------------------
# compare
# ---------------------------------------------------------------------------
@pytest.fixture(scope="module")
def point_probe_comparison():
    return compare(BOX, SPEEDS, overrides=["probe.width=0 um"], width="0.5 um",
                   temperature="30 nK")


def test_compare_columns_are_the_sweeps_of_each_model(point_probe_comparison):
    cmp = point_probe_comparison
    names = [v.name for v in cmp.variants]
    assert names == ["configured", "density", "phonon", "wide", "thermal"]
    # each model's column is exactly the sweep of that model's configuration
    for v, sets in ((cmp.variants[0], []),
                    (cmp.variants[2], ['condensate.dispersion="phonon"']),
                    (cmp.variants[3], ["probe.width=0.5 um"]),
                    (cmp.variants[4], ["condensate.temperature=30 nK"])):
        ref = sweep(BOX, SPEEDS, overrides=["probe.width=0 um", *sets])
        got = cmp.column(f"up_rate:{v.name}")
        want = ref.column("up_rate")
        assert np.array_equal(np.isnan(got), np.isnan(want))
        assert np.array_equal(got[~np.isnan(got)], want[~np.isnan(want)])
    # the density variant: model = "density" without the gap
    raw = cmp.variants[1].raw
    assert raw["probe"]["model"] == "density" and "gap" not in raw["probe"]
    ref = sweep(raw, SPEEDS)
    assert np.array_equal(cmp.column("emission_rate:density"), ref.column("emission_rate"))
    assert cmp.units[cmp.columns.index("up_rate:configured")] == "1/s"


def test_compare_states_where_the_phonon_model_diverges(point_probe_comparison):
    cmp = point_probe_comparison
    status = cmp.column("status:phonon")
    mach = cmp.column("trajectory.speed") / cmp.column("sound_speed")
    # the point probe with the phonon dispersion diverges exactly when supersonic
    assert np.array_equal(status == "diverges", mach >= 1 - 1e-12)
    assert np.all(np.isnan(cmp.column("up_rate:phonon")[mach >= 1]))
    text = "\n".join(cmp.statements)
    assert re.search(r"phonon dispersion: up_rate diverges at 9 of 11 points "
                     r"\(trajectory\.speed 1 c_s \.\. 3 c_s\)", text), text
    # the width cuts the spectrum: the finite-width rates are lower
    assert "finite width 0.5 um: up_rate differs by more than 10%" in text
    assert "cuts the spectrum above k ~ 1/s" in text
    # the thermal gas excites the probe below the threshold
    assert re.search(r"T = 30 nK: up_rate is nonzero at \d+ points where the "
                     r"configured model's vanishes", text)
    wide, point = cmp.column("up_rate:wide"), cmp.column("up_rate:configured")
    assert np.all(wide[point > 0] < point[point > 0])
    summary = cmp.summary()
    assert "Model comparison over trajectory.speed" in summary
    assert "diverges" in summary.split("Table")[1]


def test_compare_density_probe_onsets(point_probe_comparison):
    text = "\n".join(point_probe_comparison.statements)
    # the density probe emits from the sound speed on, the two-level probe is
    # excited only above its (higher) threshold
    m = re.search(r"onset of up_rate: trajectory.speed = ([\d.]+) c_s, of "
                  r"emission_rate: trajectory.speed = ([\d.]+) c_s", text)
    assert m, text
    assert 1.0 < float(m.group(2)) < float(m.group(1))


def test_compare_csv_and_cli(tmp_path):
    out, plot = tmp_path / "cmp.csv", tmp_path / "cmp.png"
    r = CliRunner().invoke(cli, ["compare", DRAG, "--vary", "trajectory.speed=0.5c_s:2c_s:7",
                                 "--models", "dispersion", "--out", str(out),
                                 "--plot", str(plot)])
    assert r.exit_code == 0, r.output
    assert "bogoliubov" in r.output and "phonon dispersion: emission_rate diverges" in r.output
    rows = list(csv.reader(out.open()))
    assert rows[0][:3] == ["point [1]", "trajectory.speed [m/s]", "sound_speed [m/s]"]
    assert "emission_rate:phonon [1/s]" in rows[0] and rows[0][-1] == "status:phonon [text]"
    # speeds 0.5, 0.75, 1, ... 2 c_s: at exactly c_s the density probe's window
    # closes; above it the phonon model diverges
    assert [r_[-1] for r_ in rows[1:]] == ["ok"] * 3 + ["diverges"] * 4
    assert plot.stat().st_size > 1000


@pytest.mark.parametrize("args, expected", [
    (["--models", "width"], "error: --models: width: the configured probe is point-like"),
    (["--models", "colour"], "error: --models: unknown comparison 'colour'"),
    (["--models", "probe"], "error: --models: probe: the configured probe is a density probe"),
    (["--plot", "x.gif"], "error: --plot:"),
])
def test_compare_bad_input(tmp_path, args, expected):
    r = CliRunner().invoke(cli, ["compare", DRAG, "--vary", "trajectory.speed=1c_s:2c_s:3",
                                 "--out", str(tmp_path / "c.csv"), *args])
    assert r.exit_code == 2, r.output
    assert expected in r.output and "Traceback" not in r.output
    assert list(tmp_path.iterdir()) == []


def test_compare_skips_what_cannot_apply():
    cmp = compare(BOX, [("probe.gap", "50 Hz", "500 Hz", 3)])
    assert [v.comparison for v in cmp.variants[1:]] == ["dispersion", "width"]
    assert any(n.startswith("probe: probe.gap is varied") for n in cmp.notes)
    assert any(n.startswith("temperature: the configured gas is at T = 0") for n in cmp.notes)


# ---------------------------------------------------------------------------
# threshold
# ---------------------------------------------------------------------------
def _threshold_by_minimisation(W):
    """min_q (w(q) + W)/q for the Bogoliubov spectrum (units c, xi, c/xi),
    by scipy's bounded scalar minimiser: an independent route."""
    f = lambda q: (q * math.sqrt(1 + q * q / 4) + W) / q
    r = minimize_scalar(f, bounds=(1e-6, 50), method="bounded",
                        options={"xatol": 1e-12})
    return r.fun, r.x


def test_threshold_table_against_the_engine_and_a_minimisation():
    tab = threshold_table(BOX)
    sc_ = load_config(BOX)
    cond = sc_.condensate
    c, xi, w0 = cond.sound_speed, cond.healing_length, cond.frequency_unit
    gaps = tab.column("probe.gap")
    assert gaps.size == 41
    assert gaps[0] == pytest.approx(sc_.probe.gap / 10) and \
        gaps[-1] == pytest.approx(sc_.probe.gap * 10)
    vt = tab.column("up_threshold_speed")
    eng = inertial_rates(cond, sc_.probe, np.full(gaps.size, c), gap=gaps)
    assert np.allclose(vt, eng.up_threshold_speed, rtol=1e-14)
    for g, v, k in zip(gaps[::8], vt[::8], tab.column("threshold_wavenumber")[::8]):
        m, q = _threshold_by_minimisation(g / w0)
        assert v / c == pytest.approx(m, rel=1e-9)
        assert k * xi == pytest.approx(q, rel=1e-4)
    assert np.all(vt > c) and np.all(np.diff(vt) > 0)
    assert np.allclose(tab.column("threshold_mach"), vt / c, rtol=1e-15)
    assert np.allclose(tab.column("gap_frequency"), gaps / (2 * math.pi), rtol=1e-15)
    # the configured speed 1.6 c_s is above the 150 Hz threshold
    assert tab.configured["speed"] > tab.configured["threshold_speed"]
    s = tab.summary()
    assert "is above it (up transitions at T = 0)" in s


def test_threshold_phonon_dispersion_is_the_sound_speed():
    tab = threshold_table(BOX, overrides=['condensate.dispersion="phonon"'])
    assert np.allclose(tab.column("threshold_mach"), 1.0, rtol=0, atol=0)
    assert any("sound speed at every gap" in n for n in tab.notes)


def test_threshold_cli_vary_and_errors(tmp_path):
    out = tmp_path / "th.csv"
    r = CliRunner().invoke(cli, ["threshold", BOX, "--vary", "probe.gap=10Hz:1kHz:5",
                                 "--out", str(out)])
    assert r.exit_code == 0, r.output
    rows = list(csv.reader(out.open()))
    assert rows[0][:4] == ["point [1]", "probe.gap [rad/s]", "gap_frequency [Hz]",
                           "up_threshold_speed [m/s]"]
    assert [float(x[2]) for x in rows[1:]] == pytest.approx([10, 257.5, 505, 752.5, 1000])
    r = CliRunner().invoke(cli, ["threshold", BOX])
    assert r.exit_code == 0 and "gap/2pi [Hz]" in r.output
    for args, expected in (
            (["--vary", "trajectory.speed=1c_s:2c_s:3"], "error: --vary: threshold tabulates"),
            (["--set", 'probe.model="density"', "--set", "probe.gap=1Hz"], "error: probe.gap"),
    ):
        r = CliRunner().invoke(cli, ["threshold", BOX, *args])
        assert r.exit_code == 2 and expected in r.output, r.output
    r = CliRunner().invoke(cli, ["threshold", DRAG])
    assert r.exit_code == 2 and "error: probe.model: the density probe has no gap" in r.output


# ---------------------------------------------------------------------------
# solve
# ---------------------------------------------------------------------------
def _value(output, key):
    m = re.search(rf"^{re.escape(key)} = (\S+) (\S+)", output, re.M)
    assert m, output
    return m.group(1), m.group(2)


def test_solve_finds_the_speed_that_rates_confirms():
    r = CliRunner().invoke(cli, ["solve", BOX, "--for", "trajectory.speed",
                                 "--target", "up_rate=20"])
    assert r.exit_code == 0, r.output
    value, unit = _value(r.output, "trajectory.speed")
    assert unit == "m/s"
    check = CliRunner().invoke(cli, ["rates", BOX, "--json", "--set",
                                     f"trajectory.speed={value} {unit}"])
    assert json.loads(check.output)["up_rate"] == pytest.approx(20, rel=1e-8)
    assert "c_s)" in r.output and "gives up_rate = 20" in r.output


def test_solve_radius_with_target_units_and_range():
    sol = solve(RING, "trajectory.radius", "up_rate=0.5 Hz", bounds="1um:20um")
    assert sol.unit == "m" and 1e-6 < sol.value < 20e-6
    ref = load_config(RING, [f"trajectory.radius={sol.value!r} m"]).rates()
    assert ref.up_rate == pytest.approx(0.5, rel=1e-8)
    assert sol.achieved == pytest.approx(0.5, rel=1e-9)
    # the up rate falls with the radius on this circle: one crossing
    assert sol.others == []


def test_solve_reports_every_crossing():
    # the up rate rises above threshold, peaks near 2.2 c_s and falls again
    sol = solve(BOX, "trajectory.speed", "up_rate=38", bounds="1c_s:3c_s")
    assert len(sol.others) == 1
    c = sol.sound_speed
    assert 1.4 < sol.value / c < 2.2 < sol.others[0] / c < 3
    for v in (sol.value, *sol.others):
        ref = load_config(BOX, [f"trajectory.speed={v!r} m/s"]).rates()
        assert ref.up_rate == pytest.approx(38, rel=1e-8)
    assert "also reached at" in sol.summary()


@pytest.mark.parametrize("args, expected", [
    (["--for", "trajectory.speed", "--target", "up_rate=50", "--range", "0c_s:3c_s"],
     "error: --target: no trajectory.speed in [0 c_s, 3 c_s] gives up_rate = 50 1/s: "
     "there up_rate runs from 0 to"),
    (["--for", "trajectory.speed", "--target", "up_rate=5 m"],
     "error: --target: '5 m' has units of m but up_rate is in 1/s"),
    (["--for", "trajectory.speed", "--target", "up_probability=0.2"],
     "error: --target: up_probability is a probability of a finite transit"),
    (["--for", "trajectory.speed", "--target", "drag_force=1e-30"],
     "error: --target: 'drag_force' is not a result of this scenario"),
    (["--for", "trajectory.kind", "--target", "up_rate=5"],
     "error: trajectory.kind: is not a numeric key"),
    (["--for", "trajectory.speed", "--target", "up_rate=5", "--range", "1c_s"],
     "error: --range: expected LO:HI"),
])
def test_solve_bad_input(args, expected):
    r = CliRunner().invoke(cli, ["solve", BOX, *args])
    assert r.exit_code == 2, r.output
    assert expected in r.output and "Traceback" not in r.output


def test_solve_needs_a_range_without_a_configured_value():
    r = CliRunner().invoke(cli, ["solve", GUIDE, "--for", "probe.width", "--target",
                                 "up_rate=5"])
    assert r.exit_code == 2
    assert "error: --range: give --range LO:HI for probe.width" in r.output


def test_solve_density_probe_drag_force():
    sol = solve(DRAG, "trajectory.speed", "drag_force=1e-27 N", bounds="1c_s:3c_s")
    ref = load_config(DRAG, [f"trajectory.speed={sol.value!r} m/s"]).rates()
    assert ref.drag_force == pytest.approx(1e-27, rel=1e-8)


def test_solve_api_errors_are_input_errors():
    with pytest.raises(InputError, match="no trajectory.speed"):
        solve(BOX, "trajectory.speed", "up_rate=1e6")
