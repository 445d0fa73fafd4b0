"""Finite transits from scenario files and ``probe transit``.

Config parsing (inline waypoints with units, CSV files relative to the
scenario, every bad value named by its key), the JSON and spectrum outputs,
the long-switching limit against ``probe rates``, and the bundled examples.
"""
from __future__ import annotations

import json
import math
from pathlib import Path

import numpy as np
import pytest
from click.testing import CliRunner

from probe.cli import cli
from probe.scenarios.config import load_config, scenario_from_dict
from probe.cli.transit import directions_path

EXAMPLES = Path(__file__).resolve().parents[1] / "examples"

GAS_2D = """
[condensate]
dimension = 2
species = "23Na"
density = "3e13 m^-2"
scattering_length = "2.75 nm"
transverse_frequency = "1.5 kHz"

[probe]
model = "two-level"
gap = "200 Hz"
coupling_length = "2 nm"
width = "0.6 um"
"""

T_MS = [0, 1, 2, 3, 4, 5]
X_UM = [0, 0.5, 2, 4, 5.5, 6]
Y_UM = [0, 1, 1.5, 1.5, 1, 0]


def _strings(values, unit):
    return "[" + ", ".join(f'"{v} {unit}"' for v in values) + "]"


INLINE = GAS_2D + f"""
[trajectory]
kind = "spline"
waypoints = {{ t = {_strings(T_MS, "ms")}, x = {_strings(X_UM, "um")}, y = {_strings(Y_UM, "um")} }}
"""

CSV_TEXT = "# a short curved path\nt [ms], x [um], y [um]\n" + "".join(
    f"{t}, {x}, {y}\n" for t, x, y in zip(T_MS, X_UM, Y_UM))


def run(*args):
    return CliRunner().invoke(cli, [str(a) for a in args])


def write(folder, name, text):
    path = Path(folder) / name
    path.write_text(text)
    return path


def read_csv(path):
    """(header cells, data array) of a file with '#' comment lines."""
    lines = [ln for ln in Path(path).read_text().splitlines() if not ln.startswith("#")]
    header = [h.strip() for h in lines[0].split(",")]
    data = np.array([[float(x) for x in ln.split(",")] for ln in lines[1:]])
    return header, data


# ---------------------------------------------------------------------------
# parsing
# ---------------------------------------------------------------------------
def test_inline_waypoints_strings_and_unit_columns_give_si_spline():
    strings = scenario_from_dict(_toml(INLINE))
    numbers = _toml(GAS_2D)
    numbers["trajectory"] = {"kind": "spline", "waypoints": {
        "units": {"t": "s", "x": "nm", "y": "mm"},
        "t": [t * 1e-3 for t in T_MS], "x": [x * 1e3 for x in X_UM],
        "y": [y * 1e-3 for y in Y_UM]}}
    numbers = scenario_from_dict(numbers)
    for sc_ in (strings, numbers):
        path = sc_.trajectory
        assert sc_.is_transit and not path.stationary
        np.testing.assert_allclose(path.times, np.array(T_MS) * 1e-3, rtol=1e-14)
        np.testing.assert_allclose(path.waypoints,
                                   np.stack([X_UM, Y_UM], axis=1) * 1e-6, rtol=1e-14)
        assert path.order == 3
        # default switching of a spline: its own time span, 5 % ramps
        assert (sc_.switching.start, sc_.switching.stop) == (0.0, 5e-3)
        assert sc_.switching.ramp == pytest.approx(0.25e-3)
        assert sc_.transit_rtol == 1e-4 and sc_.rtol == 1e-8


def test_csv_file_is_read_relative_to_the_config_folder(tmp_path, monkeypatch):
    sub = tmp_path / "scenarios"
    sub.mkdir()
    write(sub, "path.csv", CSV_TEXT)
    cfg = write(sub, "a.toml", GAS_2D + '\n[trajectory]\nkind = "spline"\nfile = "path.csv"\n'
                'order = 2\nmax_speed = "0.1 c_s"\n')
    monkeypatch.chdir(tmp_path)            # not the config's folder
    from_file = load_config(Path("scenarios") / "a.toml").trajectory
    inline = scenario_from_dict(_toml(INLINE), ["trajectory.order=2"]).trajectory
    assert from_file.order == 2
    np.testing.assert_allclose(from_file.times, np.array(T_MS) * 1e-3, rtol=1e-14)
    t = np.linspace(-1e-3, 6e-3, 50)
    np.testing.assert_allclose(from_file.position(t), inline.position(t), rtol=1e-12,
                               atol=1e-18)
    # max_speed far below the path's speed: the spline warns, naming the key
    assert from_file.warnings and "above trajectory.max_speed" in from_file.warnings[0]
    assert cfg.exists()


def _toml(text):
    import tomllib
    return tomllib.loads(text)


def _inline_with(t=None, x=None):
    t = t or _strings(T_MS, "ms")
    x = x or _strings(X_UM, "um")
    return GAS_2D + f'\n[trajectory]\nkind = "spline"\nwaypoints = {{ t = {t}, x = {x} }}\n'


@pytest.mark.parametrize("t,x,key,words", [
    ('["0 ms", "1 ms", "3 ms", "2 ms", "4 ms", "5 ms"]', None,
     "trajectory.waypoints.t", "strictly increasing"),
    ('["0 ms", "1 ms", "nan ms", "3 ms", "4 ms", "5 ms"]', None,
     "trajectory.waypoints.t[2]", "not finite"),
    (None, '["0 um", "1 um", "2 umm", "3 um", "4 um", "5 um"]',
     "trajectory.waypoints.x[2]", "cannot read '2 umm'"),
    (None, '["0 um", "1 um", "2 kg", "3 um", "4 um", "5 um"]',
     "trajectory.waypoints.x[2]", "length"),
    ('[0, 1, 2, 3, 4, 5]', None, "trajectory.waypoints.t[0]", "must carry units"),
    (None, '["0 um", "1 um"]', "trajectory.waypoints.x", "has 2 entries but t has 6"),
])
def test_bad_inline_waypoints_exit_2_naming_the_key(tmp_path, t, x, key, words):
    cfg = write(tmp_path, "bad.toml", _inline_with(t, x))
    r = run("transit", cfg)
    assert r.exit_code == 2, r.output
    assert r.stderr.startswith(f"error: {key}: "), r.stderr
    assert words in r.stderr
    assert "Traceback" not in r.output


@pytest.mark.parametrize("body,key,words", [
    # NaN through a TOML float with a unit column
    ('waypoints = { units = { t = "ms", x = "um" }, t = [0, 1, nan, 3], x = [0, 1, 2, 3] }',
     "trajectory.waypoints.t[2]", "not finite"),
    ('waypoints = { units = { t = "ms", x = "furlongs_per_ms" }, t = [0, 1, 2, 3], '
     'x = [0, 1, 2, 3] }', "trajectory.waypoints.units.x", "cannot read"),
    ('waypoints = { t = ["0 ms", "1 ms", "2 ms", "3 ms"], xx = ["0 um"] }',
     "trajectory.waypoints.xx", "did you mean 'x'"),
    ('waypoints = { t = ["0 ms", "1 ms", "2 ms", "3 ms"], x = ["0 um", "1 um", "2 um", "3 um"],'
     ' y = ["0 um", "0 um", "0 um", "0 um"], z = ["0 um", "1 um", "0 um", "0 um"] }',
     "trajectory.waypoints.z", "the gas is 2D"),
    ('file = "missing.csv"', "trajectory.file", "no such file"),
    ('file = "back.csv"', "trajectory.file", "column t: line 5: times must be strictly"),
    ('file = "path.csv"\norder = 9', "trajectory.order", "integer from 1 to 5"),
    ('file = "path.csv"\nspeed = "1 c_s"', "trajectory.speed", "not used by a spline"),
    ('file = "path.csv"\nswitching = "gauss"', "trajectory.switching",
     "did you mean 'gaussian'"),
    ('file = "path.csv"\nswitching = "gaussian"', "trajectory.switching_width", "missing"),
    ('file = "path.csv"\nswitching = "window"\nstart = "2 ms"\nstop = "1 ms"',
     "trajectory.stop", "must be after start"),
    ('file = "path.csv"\nramp = "3 ms"', "trajectory.ramp", "do not fit"),
    ('file = "path.csv"\nswitching_width = "1 ms"', "trajectory.switching_width",
     "not used with switching = 'path'"),
    ('file = "path.csv"\nswitching_widht = "1 ms"', "trajectory.switching_widht",
     "did you mean 'switching_width'"),
])
def test_bad_transit_keys_exit_2_naming_the_key(tmp_path, body, key, words):
    write(tmp_path, "path.csv", CSV_TEXT)
    write(tmp_path, "back.csv", CSV_TEXT.replace("\n2, ", "\n0.5, "))
    cfg = write(tmp_path, "bad.toml", GAS_2D + f'\n[trajectory]\nkind = "spline"\n{body}\n')
    r = run("transit", cfg)
    assert r.exit_code == 2, r.output
    assert r.stderr.startswith(f"error: {key}: "), r.stderr
    assert words in r.stderr, r.stderr
    assert "Traceback" not in r.output


_UNITS = 'units = { t = "ms", x = "um" }, '
_PLAIN = f'waypoints = {{ {_UNITS}t = [0, 1, 2, 3], x = [0, 1, 2, 3] }}\n'


def _one_clean_error(folder, cfg, key, words):
    """`probe transit --spectrum` with warnings as errors: exit 2, nothing on
    stdout, exactly one stderr line naming the key, no spectrum file."""
    import warnings

    spec = folder / "spec.csv"
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        r = run("transit", cfg, "--spectrum", spec)
    assert r.exit_code == 2, (r.exit_code, r.output, r.exception)
    assert r.stdout == ""
    lines = r.stderr.splitlines()
    assert len(lines) == 1, r.stderr
    assert lines[0].startswith(f"error: {key}: "), lines[0]
    assert words in lines[0], lines[0]
    assert not list(folder.glob("spec*"))


@pytest.mark.parametrize("body,key,words", [
    # huge but finite waypoint coordinates and times: the spline's derivative
    # coefficients (differences over time steps) overflowed in scipy, and
    # the speed scan squared them
    (f'waypoints = {{ {_UNITS}t = [0, 1, 2, 3], x = [0, 1e308, 2, 3] }}',
     "trajectory.waypoints.x[1]", "within 1e+12 xi"),
    ('waypoints = { t = ["0 ms", "1 ms", "2 ms", "3 ms"], '
     + 'x = ["0 um", "1e308 m", "2 um", "3 um"] }', "trajectory.waypoints.x[1]", "within 1e+12 xi"),
    (f'waypoints = {{ {_UNITS}t = [0, 1, 2, 1e308], x = [0, 1, 2, 3] }}',
     "trajectory.waypoints.t[3]", "within +-1e+06 xi/c_s"),
    ('waypoints = { units = { t = "s", x = "um" }, t = [-1e308, 1, 2, 1e308], x = [0, 1, 2, 3] }',
     "trajectory.waypoints.t[0]", "within +-1e+06 xi/c_s"),
    ('waypoints = { units = { t = "min", x = "um" }, t = [0, 1, 2, 1e308], x = [0, 1, 2, 3] }',
     "trajectory.waypoints.t[3]", "beyond double precision"),
    ('file = "huge_x.csv"', "trajectory.file", "huge_x.csv, column x: line 3: "),
    ('file = "huge_t.csv"', "trajectory.file", "huge_t.csv, column t: line 5: "),
    ('file = "huge_min.csv"', "trajectory.file", "huge_min.csv, column t: line 5: "),
    # finite coordinates, but a mean speed between waypoints above 1e6 c_s
    (f'waypoints = {{ {_UNITS}t = [0, 1, 2, 3], x = [0, 0, 1e9, 1e9] }}',
     "trajectory.waypoints", "above the largest speed handled, 1e+06 c_s"),
    # switching far outside the times handled
    (_PLAIN + 'switching = "gaussian"\nswitching_width = "1e308 s"',
     "trajectory.switching_width", "within +-1e+06 xi/c_s"),
    (_PLAIN + 'switching = "gaussian"\nswitching_width = "1e300 s"',
     "trajectory.switching_width", "within +-1e+06 xi/c_s"),
    (_PLAIN + 'switching = "gaussian"\nswitching_width = "1 ms"\nswitching_centre = "1e300 s"',
     "trajectory.switching_centre", "within +-1e+06 xi/c_s"),
    (_PLAIN + 'switching = "window"\nstart = "0 s"\nstop = "1e308 s"',
     "trajectory.stop", "within +-1e+06 xi/c_s"),
])
def test_huge_transit_values_give_one_clean_line(tmp_path, body, key, words):
    """Bad values beyond the range handled end with exactly one line on
    stderr naming the key and the range, exit status 2, no floating-point
    warning (warnings are errors here) and no spectrum file."""
    write(tmp_path, "huge_x.csv", "t [ms], x [um]\n0, 0\n1, 1e308\n2, 2\n3, 3\n")
    write(tmp_path, "huge_t.csv", "t [s], x [um]\n0, 0\n1, 1\n2, 2\n1e308, 3\n")
    write(tmp_path, "huge_min.csv", "t [min], x [um]\n0, 0\n1e-5, 1\n2e-5, 2\n1e308, 3\n")
    cfg = write(tmp_path, "bad.toml", GAS_2D + f'\n[trajectory]\nkind = "spline"\n{body}\n')
    _one_clean_error(tmp_path, cfg, key, words)


def test_huge_switching_width_of_a_linear_transit(tmp_path):
    import warnings

    cfg = write(tmp_path, "l.toml", GAS_2D + '\n[trajectory]\nkind = "linear"\n'
                'speed = "0.5 c_s"\nswitching = "gaussian"\nswitching_width = "1e308 s"\n')
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        r = run("transit", cfg)
    assert r.exit_code == 2 and r.stdout == ""
    line, = r.stderr.splitlines()
    assert line.startswith("error: trajectory.switching_width: '1e308 s' ")
    assert "within +-1e+06 xi/c_s" in line and "probe rates" in line


@pytest.mark.parametrize("path,key,words", [
    ('kind = "linear"\nspeed = "0.5 c_s"\nstart = ["1e308 m", "0 m", "0 m"]',
     "trajectory.start[0]", "within 1e+12 xi"),
    ('kind = "circular"\nspeed = "0.5 c_s"\nradius = "1e300 m"',
     "trajectory.radius", "1e+12 xi"),
    ('kind = "circular"\nspeed = "0.5 c_s"\nradius = "5 um"\ncentre = ["0 m", "1e300 m"]',
     "trajectory.centre[1]", "within 1e+12 xi"),
])
def test_huge_start_radius_or_centre_of_a_switched_path(tmp_path, path, key, words):
    """A linear or circular transit placed far outside the positions handled
    (as for spline waypoints, 1e12 xi) ends with one line naming the key:
    before the check the linear case's positions in units of xi overflowed to
    inf and the engine stopped on the NaNs that followed, with
    RuntimeWarnings and a traceback."""
    cfg = write(tmp_path, "far.toml", GAS_2D + f'\n[trajectory]\n{path}\n'
                'switching = "gaussian"\nswitching_width = "1 ms"\n')
    _one_clean_error(tmp_path, cfg, key, words)


def test_rates_and_transit_refuse_each_others_scenarios(tmp_path):
    spline = write(tmp_path, "s.toml", INLINE)
    r = run("rates", spline)
    assert r.exit_code == 2
    assert r.stderr.startswith("error: trajectory.kind: ") and "probe transit" in r.stderr
    linear = write(tmp_path, "l.toml", GAS_2D + '\n[trajectory]\nkind = "linear"\n'
                   'speed = "0.5 c_s"\n')
    r = run("transit", linear)
    assert r.exit_code == 2
    assert r.stderr.startswith("error: trajectory.switching: ") and "probe rates" in r.stderr
    r = run("transit", linear, "--set", "numerics.transit_rtol=0.5",
            "--set", "trajectory.switching=gaussian",
            "--set", "trajectory.switching_width=1 ms")
    assert r.exit_code == 2 and r.stderr.startswith("error: numerics.transit_rtol: ")


# ---------------------------------------------------------------------------
# outputs
# ---------------------------------------------------------------------------
CONTRACT_KEYS = ("up_probability", "down_probability", "up_probability_error",
                 "down_probability_error", "emitted_phonons", "emitted_phonons_error",
                 "warnings", "sound_speed", "healing_length", "achieved_rtol",
                 "transit_duration", "effective_duration")


def test_json_has_the_contract_keys_and_table_the_results(tmp_path):
    cfg = write(tmp_path, "s.toml", INLINE)
    r = run("transit", cfg, "--json")
    assert r.exit_code == 0, r.output
    out = json.loads(r.stdout)
    for key in CONTRACT_KEYS:
        assert key in out, key
    assert 0 < out["up_probability"] < out["down_probability"] < 0.1
    assert out["emitted_phonons"] == out["up_probability"]    # T = 0: emission only
    assert out["up_probability_error"] <= 1e-4 * out["up_probability"]
    assert isinstance(out["warnings"], list)
    gas = load_config(cfg).condensate
    assert out["sound_speed"] == pytest.approx(gas.sound_speed, rel=1e-12)
    assert out["healing_length"] == pytest.approx(gas.healing_length, rel=1e-12)
    assert out["transit_duration"] == pytest.approx(5e-3, rel=0.05)
    assert out["inputs"]["trajectory"]["waypoints"] == len(T_MS)
    assert out["inputs"]["numerics"]["transit_rtol"] == 1e-4

    r2 = run("transit", cfg, cfg, "--json")
    both = json.loads(r2.stdout)
    assert isinstance(both, list) and len(both) == 2
    assert both[0]["up_probability"] == out["up_probability"]

    table = run("transit", cfg).stdout
    for label in ("up probability", "down probability", "emitted phonons",
                  "achieved accuracy", "transit duration", "sound speed c_s",
                  "healing length", "Warnings"):
        assert label in table, label
    assert f"{out['up_probability']:.6g}" in table


@pytest.mark.parametrize("method", ["phasor", "fft"])
def test_spectrum_files_have_units_and_integrate_to_emitted_phonons(tmp_path, method):
    cfg = write(tmp_path, "s.toml", INLINE)
    spec = tmp_path / "spec.csv"
    r = run("transit", cfg, "--json", "--spectrum", spec,
            "--set", f"numerics.transit_method={method}")
    assert r.exit_code == 0, r.output
    out = json.loads(r.stdout)
    n, err = out["emitted_phonons"], out["emitted_phonons_error"]
    header, data = read_csv(spec)
    assert header[:5] == ["k [1/m]", "energy [J]", "dk [1/m]", "dN_dk [m]", "dN_dE [1/J]"]
    assert all("[" in h and h.endswith("]") for h in header)
    k, energy, dk, dn_dk = data[:, 0], data[:, 1], data[:, 2], data[:, 3]
    assert np.all(np.diff(k) > 0) and np.all(dn_dk >= 0) and np.all(np.diff(energy) > 0)
    # the quadrature weights reproduce the total to the file's 10 digits ...
    assert abs(np.sum(dn_dk * dk) - n) <= 1e-8 * n
    assert out["grid"]["method"] == method
    if method == "phasor":
        # ... and the plain uniform sum to within the reported accuracy
        assert abs(np.sum(dn_dk) * (k[1] - k[0]) - n) <= max(err, out["achieved_rtol"] * n)
    else:
        # nodes uniform in energy: dk = dE / (hbar v_g), with v_g = dE/(hbar dk)
        # from the file's own columns (interior nodes, where the end
        # corrections of the weights are 1)
        dE = np.diff(energy)
        assert np.allclose(dE, dE[0], rtol=1e-8)
        vg_dk = (energy[4:-1] - energy[2:-3]) / (k[4:-1] - k[2:-3])
        assert np.allclose(dk[3:-2], dE[0] / vg_dk, rtol=1e-3)
    dirs = Path(directions_path(spec))
    assert dirs.name == "spec.directions.csv" and out["spectrum_directions_file"] == str(dirs)
    header, data = read_csv(dirs)
    assert header[:4] == ["phi_low [rad]", "phi_high [rad]", "phi [rad]", "dN_dphi [1/rad]"]
    assert abs(np.sum(data[:, 3] * (data[:, 1] - data[:, 0])) - n) <= 1e-8 * n
    assert not list(tmp_path.glob("*.partial"))


def test_spectrum_not_written_when_the_run_fails(tmp_path):
    # a hard cut (ramp 0) with a point probe has no convergent k integral:
    # the engine refuses after the inputs were accepted
    cfg = write(tmp_path, "s.toml", INLINE.replace('width = "0.6 um"', 'width = "0 um"'))
    spec = tmp_path / "spec.csv"
    r = run("transit", cfg, "--spectrum", spec, "--set", "trajectory.ramp=0 ms")
    assert r.exit_code == 2 and r.stderr.startswith("error: trajectory.ramp: ")
    assert "Traceback" not in r.output
    assert not list(tmp_path.glob("spec*"))
    r = run("transit", cfg, cfg, "--spectrum", spec)
    assert r.exit_code == 2 and r.stderr.startswith("error: --spectrum: ")
    r = run("transit", cfg, "--spectrum", tmp_path / "no" / "spec.csv")
    assert r.exit_code == 2 and "does not exist" in r.stderr


# ---------------------------------------------------------------------------
# physics through the command line
# ---------------------------------------------------------------------------
GASES = {
    3: 'dimension = 3\nspecies = "87Rb"\ndensity = "6e19 m^-3"\nscattering_length = "5.3 nm"',
    2: 'dimension = 2\nspecies = "23Na"\ndensity = "3e13 m^-2"\n'
       'scattering_length = "2.75 nm"\ntransverse_frequency = "1.5 kHz"',
    1: 'dimension = 1\nspecies = "87Rb"\ndensity = "4e7 m^-1"\n'
       'scattering_length = "5.3 nm"\ntransverse_frequency = "8 kHz"',
}


@pytest.mark.parametrize("d", [3, 2, 1])
def test_long_gaussian_switching_gives_sqrt_pi_tau_times_the_rate(tmp_path, d):
    """Golden rule, long-time limit: for chi = exp(-t^2/(2 tau^2)) on a
    stationary path |chi~(f)|^2 -> 2 pi (int chi^2 dt) delta(f) with
    int chi^2 dt = sqrt(pi) tau, so P_down -> sqrt(pi) tau Gamma_down; the
    deviation falls like 1/tau^2 (the rate smoothed over frequencies ~1/tau).
    tau = 10 ms is 29 (3D), 21 (2D) and 213 (1D) xi/c here."""
    cfg = write(tmp_path, "l.toml", f"""
[condensate]
{GASES[d]}

[probe]
model = "two-level"
gap = "150 Hz"
coupling_length = "0.3 nm"
width = "0.3 um"

[trajectory]
kind = "linear"
speed = "0.6 c_s"
switching = "gaussian"
switching_width = "10 ms"
""")
    rates = run("rates", cfg, "--json")
    assert rates.exit_code == 0, rates.output
    rates = json.loads(rates.stdout)
    assert any("ignored" in w and "probe transit" in w for w in rates["warnings"])
    gamma = rates["down_rate"]
    devs = []
    for tau in (5e-3, 10e-3):
        r = run("transit", cfg, "--json", "--set", f"trajectory.switching_width={tau * 1e3} ms")
        assert r.exit_code == 0, r.output
        out = json.loads(r.stdout)
        assert out["effective_duration"] == pytest.approx(math.sqrt(math.pi) * tau, rel=1e-12)
        devs.append(out["down_probability"] / (math.sqrt(math.pi) * tau * gamma) - 1)
    assert abs(devs[1]) < 0.01, devs
    assert abs(devs[1]) < 0.4 * abs(devs[0]), devs


# ---------------------------------------------------------------------------
# examples
# ---------------------------------------------------------------------------
def test_transit_examples_run():
    r = run("transit", EXAMPLES / "transits" / "stir2d_spline.toml", EXAMPLES / "cross3d_gaussian.toml",
            "--json")
    assert r.exit_code == 0, r.output
    stir, cross = json.loads(r.stdout)
    assert stir["inputs"]["trajectory"]["waypoints"] >= 50
    assert stir["inputs"]["trajectory"]["max_speed"] > stir["sound_speed"]
    for out in (stir, cross):
        assert 0 < out["up_probability"] < out["down_probability"] < 0.1
        assert out["achieved_rtol"] < 1e-4
        assert out["warnings"] == []
    # the Gaussian crossing against its stationary rate (slow switching)
    rates = json.loads(run("rates", EXAMPLES / "cross3d_gaussian.toml", "--json").stdout)
    assert cross["mean_down_rate"] == pytest.approx(rates["down_rate"], rel=0.01)


@pytest.mark.parametrize("name", sorted(p.name for p in EXAMPLES.glob("*.toml")))
def test_rates_still_run_on_stationary_examples(name):
    r = run("rates", EXAMPLES / name)
    if load_config(EXAMPLES / name).trajectory.stationary:
        assert r.exit_code == 0, r.output
    else:
        assert r.exit_code == 2 and "probe transit" in r.stderr


def test_rates_on_all_top_level_examples_in_one_call():
    """`probe rates examples/*.toml` works for every example; finite-transit
    scenarios live in examples/transits/ and run with `probe transit`."""
    files = sorted(EXAMPLES.glob("*.toml"))
    assert len(files) >= 4
    r = run("rates", *files, "--json")
    assert r.exit_code == 0, r.output
    assert len(json.loads(r.stdout)) == len(files)
    r = run("transit", *sorted((EXAMPLES / "transits").glob("*.toml")), "--json")
    assert r.exit_code == 0, r.output


def test_transit_method_key_selects_the_route_and_is_checked(tmp_path):
    """numerics.transit_method: both routes give the same probabilities
    (independent evaluations of one integral); an unknown name exits 2."""
    cfg = write(tmp_path, "s.toml", INLINE)
    outs = {}
    for method in ("phasor", "fft", "auto"):
        r = run("transit", cfg, "--json", "--set", f"numerics.transit_method={method}")
        assert r.exit_code == 0, r.output
        outs[method] = json.loads(r.stdout)
        assert outs[method]["inputs"]["numerics"]["transit_method"] == method
    assert outs["phasor"]["grid"]["method"] == "phasor"
    assert outs["fft"]["grid"]["method"] == "fft"
    for name in ("up_probability", "down_probability"):
        a, b = outs["phasor"][name], outs["fft"][name]
        assert b == pytest.approx(a, rel=2 * outs["phasor"]["achieved_rtol"] + 1e-12)
    table = run("transit", cfg, "--set", "numerics.transit_method=fft").stdout
    assert "transit_method = 'fft'" in table and "FFT over time" in table
    bad = run("transit", cfg, "--set", "numerics.transit_method=fast")
    assert bad.exit_code == 2
    assert bad.stderr.strip().startswith("error: numerics.transit_method:")
    assert "'auto', 'phasor', 'fft'" in bad.stderr


# ---------------------------------------------------------------------------
# --unset
# ---------------------------------------------------------------------------
def test_transit_unset_switches_model_and_restores_defaults(tmp_path):
    cross = EXAMPLES / "cross3d_gaussian.toml"
    base = json.loads(run("transit", cross, "--json").stdout)
    # switching_centre = "0 ms" is the default of a linear path: same result
    r = run("transit", cross, "--json", "--unset", "trajectory.switching_centre")
    assert r.exit_code == 0, r.output
    assert json.loads(r.stdout)["down_probability"] == base["down_probability"]
    # a two-level transit turned into the density probe's
    r = run("transit", cross, "--json", "--unset", "probe.gap", "--set", "probe.model=density")
    assert r.exit_code == 0, r.output
    dens = json.loads(r.stdout)
    assert dens["model"] == "density" and dens["up_probability"] is None
    text = cross.read_text().replace('model = "two-level"', 'model = "density"')
    text = text.replace('gap = "150 Hz"\n', "")
    want = json.loads(run("transit", write(tmp_path, "d.toml", text), "--json").stdout)
    assert dens["emitted_phonons"] == pytest.approx(want["emitted_phonons"], rel=1e-12)
    assert dens["emitted_phonons"] > 0


@pytest.mark.parametrize("args, expected", [
    (("--unset", "trajectory.ramp"), "error: trajectory.ramp: not in the scenario, nothing to unset"),
    (("--unset", "switching_width"), "error: --unset: key 'switching_width' must be SECTION.KEY"),
    (("--unset", "trajectory.switching_width"),
     "error: trajectory.switching_width: missing; add e.g. switching_width"),
])
def test_transit_bad_unset_exits_2(tmp_path, args, expected):
    spec = tmp_path / "spec.csv"
    r = run("transit", EXAMPLES / "cross3d_gaussian.toml", "--spectrum", spec, *args)
    assert r.exit_code == 2, r.output
    assert r.stdout == ""
    lines = r.stderr.strip().splitlines()
    assert len(lines) == 1 and lines[0].startswith(expected), lines
    assert list(tmp_path.iterdir()) == []


def test_spectrum_of_a_model_without_emitted_phonons_is_refused(tmp_path):
    """A Ramsey sequence reads a phase, not emitted phonons: --spectrum is
    refused in one line before computing, and no file is written."""
    from click.testing import CliRunner
    from probe.cli import cli
    target = tmp_path / "spectrum.csv"
    r = CliRunner().invoke(cli, ["transit", "examples/transits/ramsey3d_moving.toml",
                                 "--spectrum", str(target)])
    assert r.exit_code == 2
    assert "error: --spectrum: the ramsey model has no emitted-phonon spectrum to write" \
        in r.output
    assert list(tmp_path.iterdir()) == []


def test_spline_speed_warning_names_the_key_and_gives_ms():
    # the warning names trajectory.max_speed, gives times in ms (the path spans
    # 20 ms) and the largest speed as the trajectory's own scan finds it
    stir = Path(__file__).resolve().parents[1] / "examples" / "transits" / "stir2d_spline.toml"
    sc_ = load_config(stir, overrides=["trajectory.max_speed=1 c_s"])
    (warning,) = sc_.trajectory.warnings
    assert warning.startswith("trajectory.max_speed: ") and " ms" in warning
    assert " s," not in warning and " s (" not in warning
    vmax = sc_.trajectory.max_speed()        # trajectories' own scan (refined)
    assert f"reaches {vmax:.4g} m/s" in warning
    c = sc_.condensate.sound_speed
    assert f"({vmax / c:.4g} c_s)" in warning
    assert load_config(stir, overrides=["trajectory.max_speed=2 c_s"]).trajectory.warnings == []
