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

from conftest import RB87_MASS

M_RB = RB87_MASS

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


# --- --unset -------------------------------------------------------------------------------
EXAMPLES = Path(__file__).resolve().parents[1] / "examples"
BOX = str(EXAMPLES / "box3d_supersonic.toml")


def _without_gap_as_density(tmp_path):
    """The box example written as a density-probe file (no gap)."""
    text = Path(BOX).read_text()
    assert 'model = "two-level"' in text and 'gap = "150 Hz"' in text
    text = text.replace('model = "two-level"', 'model = "density"')
    text = "\n".join(ln for ln in text.splitlines() if not ln.startswith("gap ="))
    path = tmp_path / "box_density.toml"
    path.write_text(text + "\n")
    return str(path)


def test_unset_switches_a_two_level_file_to_the_density_model(tmp_path):
    # --set alone cannot: the file's gap is not allowed for the density model
    r = run("rates", BOX, "--set", "probe.model=density")
    assert r.exit_code == 2 and r.stderr.startswith("error: probe.gap: not used")
    r = run("rates", "--json", BOX, "--unset", "probe.gap", "--set", "probe.model=density")
    assert r.exit_code == 0, r.output
    got = json.loads(r.stdout)
    assert got["model"] == "density" and got["inputs"]["probe"]["gap"] is None
    assert got["up_rate"] is None and got["emission_rate"] > 0 and got["drag_force"] > 0
    # the same numbers as a file written for the density probe
    want = json.loads(run("rates", "--json", _without_gap_as_density(tmp_path)).stdout)
    for key in ("emission_rate", "absorption_rate", "drag_force", "power"):
        assert got[key] == pytest.approx(want[key], rel=1e-12), key
    table = run("rates", BOX, "--unset", "probe.gap", "--set", "probe.model=density")
    assert table.exit_code == 0 and "emission rate" in table.stdout
    assert "gap Omega/(2 pi)" not in table.stdout


def test_unset_comes_before_set_whatever_the_order(files):
    r = run("rates", "--json", files["two_level"], "--set", "probe.gap=300 Hz",
            "--unset", "probe.gap")
    assert r.exit_code == 0, r.output
    gap = json.loads(r.stdout)["inputs"]["probe"]["gap"]
    assert gap == pytest.approx(2 * math.pi * 300, rel=1e-12)


def test_unset_of_an_optional_key_restores_its_default(files):
    r = run("rates", "--json", BOX, "--unset", "probe.width")
    assert r.exit_code == 0, r.output
    got = json.loads(r.stdout)
    want = json.loads(run("rates", "--json", BOX, "--set", "probe.width=0 um").stdout)
    assert got["inputs"]["probe"]["width"] == 0
    assert got["up_rate"] == pytest.approx(want["up_rate"], rel=1e-12)


@pytest.mark.parametrize("args, expected", [
    (("--unset", "condensate.temperature"),
     "error: condensate.temperature: not in the scenario, nothing to unset"),
    (("--unset", "numerics.rtol"), "error: numerics.rtol: not in the scenario, nothing to unset"),
    (("--unset", "numeric.rtol"), "error: numeric: unknown section; did you mean 'numerics'?"),
    (("--unset", "probe.gpa"), "error: probe.gpa: unknown key; did you mean 'gap'?"),
    (("--unset", "gap"), "error: --unset: key 'gap' must be SECTION.KEY"),
    (("--unset", "probe."), "error: --unset: key 'probe.' must be SECTION.KEY"),
    (("--unset", "probe.gap=1 Hz"), "error: --unset: expected KEY such as 'probe.gap'"),
    (("--unset", "probe.gap", "--unset", "probe.gap"),
     "error: probe.gap: given twice to --unset"),
    # a required key: the normal message for a missing key
    (("--unset", "condensate.density"),
     'error: condensate.density: missing; add e.g. density = "1.2e20 m^-3"'),
    (("--unset", "probe.gap"), 'error: probe.gap: missing; add e.g. gap = "200 Hz"'),
])
def test_bad_unset_exits_2_with_one_error_line(files, args, expected):
    r = run("rates", files["two_level"], *args)
    assert r.exit_code == 2, r.output
    assert r.stdout == ""
    lines = r.stderr.strip().splitlines()
    assert len(lines) == 1 and lines[0].startswith(expected), lines
    assert "Traceback" not in r.output


def test_unset_reaches_every_config_and_fails_before_any_output(files, tmp_path):
    out = tmp_path / "out.json"
    r = run("rates", "--json", files["two_level"], files["circular"],
            "--unset", "probe.gap", "--set", "probe.model=density")
    assert r.exit_code == 0, r.output
    assert [o["model"] for o in json.loads(r.stdout)] == ["density", "density"]
    # the 1D file has no gap: nothing is written, and the key is named
    r = run("rates", "--json", files["two_level"], files["density"],
            "--unset", "probe.gap", "--set", "probe.model=density", "-o", str(out))
    assert r.exit_code == 2 and not out.exists()
    assert r.stderr.strip() == ("error: probe.gap: not in the scenario, nothing to unset "
                                f"(in {files['density']})")       # which of the files


def test_every_command_with_set_has_unset():
    for name in ("rates", "transit", "sweep", "compare", "threshold", "solve"):
        r = run(name, "--help")
        assert r.exit_code == 0, name
        text = " ".join(r.stdout.split())
        assert "--set KEY=VALUE" in text and "--unset KEY" in text, name
        assert "Remove a configuration entry, e.g. --unset" in text, name
        assert "(before any --set). Repeatable" in text, name


def test_sweep_with_unset_matches_rates(tmp_path):
    out = tmp_path / "s.csv"
    r = run("sweep", BOX, "--vary", "trajectory.speed=0.5c_s:3c_s:4", "--out", str(out),
            "--unset", "probe.gap", "--set", "probe.model=density")
    assert r.exit_code == 0, r.output
    from probe.design.sweep import read_sweep
    res = read_sweep(out)
    assert "emission_rate" in res.columns and "up_rate" not in res.columns
    assert "gap" not in res.meta["config"]["probe"]
    assert res.meta["config"]["probe"]["model"] == "density"
    last = json.loads(run("rates", "--json", BOX, "--unset", "probe.gap", "--set",
                          "probe.model=density", "--set", "trajectory.speed=3 c_s").stdout)
    assert res.column("emission_rate")[-1] == pytest.approx(last["emission_rate"], rel=1e-9)
    # a key not in the file: exit 2, no CSV, no sidecar, no partial file
    bad = tmp_path / "bad.csv"
    r = run("sweep", BOX, "--vary", "trajectory.speed=0.5c_s:3c_s:4", "--out", str(bad),
            "--unset", "condensate.size")
    assert r.exit_code == 2
    assert r.stderr.strip() == "error: condensate.size: not in the scenario, nothing to unset"
    assert list(tmp_path.glob("bad*")) == []


def test_compare_threshold_and_solve_take_unset(tmp_path):
    r = run("compare", BOX, "--vary", "trajectory.speed=0.5c_s:3c_s:4", "--models", "width",
            "--width", "0.3 um", "--unset", "probe.width")
    assert r.exit_code == 0, r.output
    assert "point probe" in r.stdout          # the configured variant lost its width
    r = run("compare", BOX, "--vary", "trajectory.speed=0.5c_s:3c_s:4",
            "--unset", "probe.nope")
    assert r.exit_code == 2 and r.stderr.startswith("error: probe.nope: unknown key")
    r = run("threshold", BOX, "--unset", "probe.gap", "--set", "probe.model=density")
    assert r.exit_code == 2 and r.stderr.startswith("error: probe.model: the density probe")
    r = run("solve", BOX, "--for", "trajectory.speed", "--target", "up_rate=10 1/s",
            "--unset", "probe.width")
    assert r.exit_code == 0, r.output
    ref = run("solve", BOX, "--for", "trajectory.speed", "--target", "up_rate=10 1/s",
              "--set", "probe.width=0 um")
    assert r.stdout == ref.stdout
    r = run("solve", BOX, "--for", "trajectory.speed", "--target", "up_rate=10 1/s",
            "--unset", "trajectory.start")
    assert r.exit_code == 2
    assert r.stderr.strip() == "error: trajectory.start: not in the scenario, nothing to unset"


def test_python_api_takes_removals(tmp_path):
    from probe.design.compare import compare
    from probe.scenarios.config import load_config
    from probe.design.sweep import sweep

    sc_ = load_config(BOX, ["probe.model=density"], removals=["probe.gap"])
    assert sc_.probe.name == "density"
    assert load_config(BOX, "probe.model=density", removals="probe.gap").probe.name == "density"
    # the existing signatures are unchanged
    assert load_config(BOX, ["trajectory.speed=2 c_s"]).raw["trajectory"]["speed"] == "2 c_s"
    res = probe.rates_from_config(BOX, removals=["probe.width"])
    assert res.up_rate == pytest.approx(
        probe.rates_from_config(BOX, ["probe.width=0 um"]).up_rate, rel=1e-12)
    grid = [("trajectory.speed", "1 c_s", "2 c_s", 3)]
    s = sweep(BOX, grid, overrides=["probe.model=density"], removals=["probe.gap"])
    assert "emission_rate" in s.columns
    cmp = compare(BOX, grid, models=["width"], width="0.3 um", removals=["probe.width"])
    assert cmp.variants[0].name == "configured"
    assert "width" not in cmp.variants[0].raw["probe"]
    with pytest.raises(probe.InputError) as exc:
        load_config(BOX, removals=["condensate.size"])
    assert exc.value.key == "condensate.size"


@pytest.mark.parametrize("command, good", [
    ("rates", "box3d_supersonic.toml"), ("transit", "transits/box3d_crossing.toml")])
def test_a_bad_file_among_several_is_named(tmp_path, command, good):
    bad = tmp_path / "bad.toml"
    bad.write_text('[condensate]\ndimension = 3\ndensty = "1e20 m^-3"\n')
    r = CliRunner().invoke(cli, [command, str(EXAMPLES / good), str(bad)])
    assert r.exit_code == 2
    line = r.output.strip()
    assert line.startswith("error: condensate.densty: unknown key") and "\n" not in line
    assert line.endswith(f"(in {bad})")
    alone = CliRunner().invoke(cli, [command, str(bad)])      # one file: nothing added
    assert alone.exit_code == 2 and "(in " not in alone.output


def test_counts_in_messages_agree_with_their_number(tmp_path):
    from probe.quantities import counted
    assert counted(1, "point") == "1 point" and counted(0, "point") == "0 points"
    assert counted(3, "point was", "points were") == "3 points were"
    # a one-point sweep says "1 point", not "1 points"
    out = tmp_path / "one.csv"
    r = run("sweep", BOX, "--vary", "trajectory.speed=1.6c_s:1.6c_s:1", "--out", str(out))
    assert r.exit_code == 0, r.output
    assert "(1 point," in r.output and "1 points" not in r.output
