import json
import math
import subprocess
import sys
from pathlib import Path

import pytest
from click.testing import CliRunner
from scipy import constants as sc

import probe
from probe.cli import cli

M_RB = 86.909180531 * sc.atomic_mass     # 87Rb (AME2016, from memory)

TWO_LEVEL = """
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

DENSITY_1D = """
[condensate]
dimension = 1
species = "87Rb"
density = "5e7 m^-1"
scattering_length = "5.3 nm"
transverse_frequency = "2 kHz"

[probe]
model = "density"
coupling_length = "1 nm"

[trajectory]
kind = "linear"
speed = "1.5 c_s"
"""

CIRCULAR_2D = """
[condensate]
dimension = 2
species = "23Na"
density = "1e14 m^-2"
scattering_length = "2.75 nm"
transverse_frequency = "1 kHz"

[probe]
gap = "100 Hz"
coupling = "1e-44 J m^2"

[trajectory]
kind = "circular"
radius = "5 um"
speed = "0.8 c_s"
"""

CONTRACT_KEYS = ("up_rate", "down_rate", "up_threshold_speed", "drag_force",
                 "sound_speed", "healing_length", "effective_temperature", "warnings")


@pytest.fixture
def files(tmp_path):
    out = {}
    for name, text in (("two_level", TWO_LEVEL), ("density", DENSITY_1D),
                       ("circular", CIRCULAR_2D)):
        p = tmp_path / f"{name}.toml"
        p.write_text(text)
        out[name] = str(p)
    return out


def run(*args):
    return CliRunner().invoke(cli, list(args))


def test_table_output(files):
    r = run("rates", files["two_level"])
    assert r.exit_code == 0, r.output
    out = r.stdout
    for text in ("87Rb", "1.2e+20 m^-3", "xi = hbar/(m c)", "up rate", "down rate",
                 "up threshold speed", "effective temperature", "excited population",
                 "Warnings", "(1.5 c_s)"):
        assert text in out
    # gap shown both ways: 200 Hz is Omega = 2 pi x 200 = 1256.64 rad/s (SI brochure)
    assert "200 Hz" in out and "1256.64 rad/s" in out


def test_table_numbers_match_library(files):
    res = probe.rates_from_config(files["two_level"])
    out = run("rates", files["two_level"]).stdout
    assert f"{res.up_rate:.6g} s^-1" in out
    assert f"{res.down_rate:.6g} s^-1" in out
    assert f"{res.sound_speed:.6g} m/s" in out


def test_table_density_model(files):
    r = run("rates", files["density"])
    assert r.exit_code == 0, r.output
    for text in ("emission rate", "drag force", " N", "power to the gas", " W",
                 "Lieb-Liniger gamma"):
        assert text in r.stdout
    assert "up rate" not in r.stdout


def test_json_contract(files):
    r = run("rates", "--json", files["two_level"])
    assert r.exit_code == 0, r.output
    data = json.loads(r.stdout)
    assert isinstance(data, dict)
    for key in CONTRACT_KEYS:
        assert key in data
    for key in ("up_rate", "down_rate", "up_threshold_speed", "sound_speed",
                "healing_length", "effective_temperature"):
        assert isinstance(data[key], float) and math.isfinite(data[key])
    assert data["drag_force"] is None
    assert isinstance(data["warnings"], list)
    assert data["config"] == files["two_level"]
    # Bogoliubov sound speed c = sqrt(4 pi hbar^2 a n) / m and xi = hbar/(m c)
    # (Pitaevskii and Stringari, ch. 4 and 6)
    c = math.sqrt(4 * math.pi * sc.hbar**2 * 5.3e-9 * 1.2e20) / M_RB
    assert data["sound_speed"] == pytest.approx(c, rel=1e-6)
    assert data["healing_length"] == pytest.approx(sc.hbar / (M_RB * c), rel=1e-6)
    assert data["speed"] == pytest.approx(1.5 * c, rel=1e-6)
    assert data["up_rate"] > 0 and data["down_rate"] > data["up_rate"]


def test_json_several_configs_and_models(files):
    r = run("rates", "--json", files["two_level"], files["density"], files["circular"])
    assert r.exit_code == 0, r.output
    data = json.loads(r.stdout)
    assert isinstance(data, list) and len(data) == 3
    two, dens, circ = data
    for obj in data:
        for key in CONTRACT_KEYS:
            assert key in obj
    assert isinstance(dens["drag_force"], float) and dens["drag_force"] > 0
    assert dens["up_rate"] is None
    # a threshold speed exists only for inertial motion
    assert circ["up_threshold_speed"] is None and circ["kind"] == "circular"
    assert [o["config"] for o in data] == [files["two_level"], files["density"],
                                            files["circular"]]


def test_set_override(files):
    base = json.loads(run("rates", "--json", files["two_level"]).stdout)
    r = run("rates", "--json", files["two_level"], "--set", "trajectory.speed=2 c_s",
            "--set", "probe.coupling_length=2 nm")
    assert r.exit_code == 0, r.output
    new = json.loads(r.stdout)
    assert new["speed"] == pytest.approx(2 * new["sound_speed"], rel=1e-12)
    assert new["speed"] != pytest.approx(base["speed"])


@pytest.mark.parametrize("args, expected", [
    (("--set", "trajectory.sped=2 c_s"),
     "error: trajectory.sped: unknown key; did you mean 'speed'?"),
    (("--set", "condensate.density=1e14 m^-2"),
     "error: condensate.density: '1e14 m^-2' is a 2D density"),
    (("--set", "probe.gap=100 1/s"), "error: probe.gap:"),
    (("--set", "trajectory.speed=-1 mm/s"), "error: trajectory.speed:"),
    (("--set", "condensate.species=87Xx"), "error: condensate.species:"),
])
def test_bad_input_exit_status_2(files, args, expected):
    r = run("rates", files["two_level"], *args)
    assert r.exit_code == 2
    assert r.stderr.startswith(expected)
    assert "Traceback" not in r.output
    assert r.stdout == ""


def test_bad_toml_and_missing_file(tmp_path):
    bad = tmp_path / "bad.toml"
    bad.write_text("[condensate\ndimension = 3\n")
    r = run("rates", str(bad))
    assert r.exit_code == 2 and r.stderr.startswith(f"error: {bad}: TOML syntax error")
    assert "line 1" in r.stderr
    r = run("rates", str(tmp_path / "missing.toml"))
    assert r.exit_code == 2 and "cannot read file" in r.stderr


def test_model_error_from_engine_is_reported(files):
    # a circular path in a 1D gas is impossible: the engine refuses it
    r = run("rates", files["density"], "--set", "trajectory.kind=circular",
            "--set", "trajectory.radius=5 um")
    assert r.exit_code == 2
    assert r.stderr.startswith("error: trajectory.")
    assert "Traceback" not in r.output


def test_version():
    r = run("--version")
    assert r.exit_code == 0 and probe.__version__ in r.stdout


def _console_script():
    path = Path(sys.executable).with_name("probe")
    assert path.exists(), ("the probe console script is missing: run "
                           "'pip install -e .' into this environment")
    return str(path)


def test_installed_console_script(files):
    exe = _console_script()
    bad = subprocess.run([exe, "rates", files["two_level"], "--set",
                          "trajectory.sped=1 c_s"], capture_output=True, text=True,
                         timeout=60)
    assert bad.returncode == 2
    assert bad.stderr.startswith("error: trajectory.sped:")
    assert "Traceback" not in bad.stderr + bad.stdout
    good = subprocess.run([exe, "rates", "--json", files["two_level"]],
                          capture_output=True, text=True, timeout=60)
    assert good.returncode == 0, good.stderr
    data = json.loads(good.stdout)
    for key in CONTRACT_KEYS:
        assert key in data
    assert isinstance(data["up_rate"], float)
