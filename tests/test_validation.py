"""Input validation: every bad input gets one line naming the key, the value
and what is allowed; the CLI exits with status 2, prints no traceback and
leaves no output file half written; the Python API raises InputError.

The table of bad inputs in docs/bad_inputs.md is made from CASES below by
running the CLI; ``test_docs_table_is_current`` fails when the document and
the tool disagree.  Regenerate it with ``python tests/test_validation.py``.
"""
import json
import os
import re
import sys
from pathlib import Path

import numpy as np
import pytest
from click.testing import CliRunner

from probe.cli import cli
from probe.gas.condensate import Condensate
from probe.scenarios.config import load_config, override, scenario_from_dict
from probe.engines.stationary import circular_rates, inertial_rates
from probe.errors import InputError
from probe.detectors import DensityProbe, TwoLevelProbe
from probe.scenarios.units import parse_quantity, parse_vector

from conftest import RB87_MASS

DOC = Path(__file__).resolve().parents[1] / "docs" / "bad_inputs.md"

GAS3 = """[condensate]
dimension = 3
species = "87Rb"
density = "1.2e20 m^-3"
scattering_length = "5.3 nm"

[probe]
gap = "200 Hz"
coupling_length = "1 nm"

[trajectory]
kind = "linear"
speed = "1.5 c_s"
"""

GAS2 = """[condensate]
dimension = 2
species = "23Na"
density = "1e14 m^-2"
scattering_length = "2.75 nm"
transverse_frequency = "1 kHz"

[probe]
gap = "100 Hz"
coupling_length = "1 nm"

[trajectory]
kind = "circular"
radius = "5 um"
speed = "0.8 c_s"
"""

GAS1 = """[condensate]
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

GAS3T = """[condensate]
dimension = 3
species = "87Rb"
scattering_length = "5.3 nm"
trap = "harmonic"
trap_frequencies = "50 Hz"
atom_number = 2e5

[probe]
gap = "200 Hz"
coupling_length = "1 nm"

[trajectory]
kind = "linear"
speed = "0.9 c_s"
"""

BASES = {"3D": GAS3, "2D": GAS2, "1D": GAS1, "3D trap": GAS3T}

# sweeps that meet the files of another run: a setup runs in the folder first
# (its docstring says how the case is given; it returns what undoes it, or None)
def _another_run_writes(folder):
    """while another `probe sweep` writes grid.csv (holds grid.csv.lock)"""
    from probe.design.sweep.files import SweepLock
    lock = SweepLock(Path(folder) / "grid.csv")
    lock.acquire()
    return lock.release


#: a 1D spline path through waypoints in path.csv (a short transit)
SPLINE_1D = ('[trajectory]\nkind = "linear"\nspeed = "1.5 c_s"\n',
             '[trajectory]\nkind = "spline"\nfile = "path.csv"\n\n'
             '[numerics]\ntransit_rtol = 1e-2\n')
VARY_DENSITY = "condensate.density=4e7 m^-1:6e7 m^-1:3"


def _waypoints_changed(folder):
    """after the same sweep was interrupted, path.csv changed"""
    from probe.design.sweep import sweep

    def stop(n):
        raise KeyboardInterrupt

    (Path(folder) / "path.csv").write_text("t [ms], x [um]\n0, 0\n0.2, 0.5\n0.4, 1.5\n0.6, 2\n")
    try:
        sweep("scenario.toml", [VARY_DENSITY], out="grid.csv", chunk_size=1, progress=stop)
    except KeyboardInterrupt:
        pass
    (Path(folder) / "path.csv").write_text("t [ms], x [um]\n0, 0\n0.2, 1.0\n0.4, 1.2\n0.6, 3\n")


# (what is wrong, base, file text change or None, --set arguments, extra CLI args
#  such as --unset[, the command when not `probe rates`[, a setup]])
CASES = [
    # --- files ---------------------------------------------------------------------------
    ("file does not exist", "3D", "MISSING", [], []),
    ("TOML syntax error (unclosed table)", "3D", ("[condensate]", "[condensate"), [], []),
    ("file is not UTF-8 text", "3D", "BINARY", [], []),
    ("tables nested too deeply", "3D", "DEEP", [], []),
    ("missing section", "3D", ("[trajectory]\nkind = \"linear\"\nspeed = \"1.5 c_s\"\n", ""), [], []),
    ("unknown section (suggests the closest)", "3D", None, ["numeric.rtol=1e-6"], []),
    ("unknown key (suggests the closest)", "3D", None, ["trajectory.sped=2 c_s"], []),
    ("key in the wrong section (names its section)", "3D", None, ["condensate.speed=2 c_s"], []),
    ("--set without '='", "3D", None, ["trajectory.speed"], []),
    ("--set key without section", "3D", None, ["speed=2 c_s"], []),
    ("--set with an empty value", "3D", None, ["probe.gap="], []),
    ("--unset of a key not in the file", "3D", None, [], ["--unset", "condensate.temperature"]),
    ("--unset key without section", "3D", None, [], ["--unset", "gap"]),
    # --- missing keys ---------------------------------------------------------------------
    ("missing key", "3D", ('density = "1.2e20 m^-3"\n', ""), [], []),
    ("neither species nor mass", "3D", ('species = "87Rb"\n', ""), [], []),
    ("transverse frequency missing for d < 3", "2D", ('transverse_frequency = "1 kHz"\n', ""), [], []),
    ("circle without radius", "2D", ('radius = "5 um"\n', ""), [], []),
    # --- wrong types ---------------------------------------------------------------------------
    ("dimension not 1, 2 or 3", "3D", None, ["condensate.dimension=4"], []),
    ("dimension as a string", "3D", None, ['condensate.dimension="3"'], []),
    ("number without units", "3D", None, ["condensate.scattering_length=5.3e-9"], []),
    ("list where a quantity is expected", "3D", None, ["trajectory.speed=[1, 2]"], []),
    ("boolean where a quantity is expected", "3D", None, ["trajectory.speed=true"], []),
    ("table where a quantity is expected", "3D", None, ["trajectory.speed={a = 1}"], []),
    ("unknown isotope", "3D", None, ["condensate.species=87Xx"], []),
    ("unknown choice (suggests the closest)", "3D", None, ["probe.model=two_level"], []),
    # --- units ------------------------------------------------------------------------------------
    ("units of the wrong dimension", "3D", None, ["trajectory.speed=2 K"], []),
    ("a 2D density in a 3D gas", "3D", None, ["condensate.density=1e14 m^-2"], []),
    ("a 2D coupling in a 3D gas", "3D", ('coupling_length = "1 nm"', 'coupling = "1e-43 J m^2"'), [], []),
    ("1/s for a gap (Hz or rad/s?)", "3D", None, ["probe.gap=100 1/s"], []),
    ("offset temperature scale", "3D", None, ["condensate.temperature=20 degC"], []),
    ("temperature difference", "3D", None, ["condensate.temperature=1 delta_degC"], []),
    ("unknown unit", "3D", None, ["probe.gap=1 blargh"], []),
    ("power without ^ (suggests cm^-3)", "3D", None, ["condensate.density=1e14 cm-3"], []),
    ("unit in the wrong case (suggests nK)", "3D", None, ["condensate.temperature=20 nk"], []),
    ("unreadable expression", "3D", None, ["probe.gap=(((("], []),
    ("power tower", "3D", None, ["probe.gap=10**10**10 Hz"], []),
    ("overlong value", "3D", None, ["probe.gap=" + "1" * 201 + " Hz"], []),
    # --- values not allowed ------------------------------------------------------------------------
    ("NaN", "3D", None, ["condensate.density=nan m^-3"], []),
    ("infinity", "3D", None, ["trajectory.speed=inf mm/s"], []),
    ("number too large for a double", "3D", None, ["probe.gap=1e400 Hz"], []),
    ("negative density", "3D", None, ["condensate.density=-1e20 m^-3"], []),
    ("zero density", "3D", None, ["condensate.density=0 m^-3"], []),
    ("negative scattering length", "3D", None, ["condensate.scattering_length=-5 nm"], []),
    ("negative temperature", "3D", None, ["condensate.temperature=-1 nK"], []),
    ("zero transverse frequency", "2D", None, ["condensate.transverse_frequency=0 Hz"], []),
    ("zero gap", "3D", None, ["probe.gap=0 Hz"], []),
    ("negative width", "3D", None, ["probe.width=-1 um"], []),
    ("negative speed", "3D", None, ["trajectory.speed=-1 mm/s"], []),
    ("zero radius", "2D", None, ["trajectory.radius=0 um"], []),
    ("zero direction", "3D", None, ["trajectory.direction=[0, 0, 0]"], []),
    ("direction out of a 1D gas", "1D", None, ["trajectory.direction=[0, 1, 0]"], []),
    ("direction of 2 components in a 3D gas", "3D", None, ["trajectory.direction=[1, 0]"], []),
    ("direction that is not a list of numbers", "3D", None,
     ['trajectory.direction=["a", 0, 0]'], []),
    ("speed and angular frequency both", "2D", None, ["trajectory.angular_frequency=1 rad/s"], []),
    ("zero cloud size", "3D", None, ["condensate.size=0 um"], []),
    ("rtol outside [1e-13, 0.1]", "3D", None, ["numerics.rtol=1e-300"], []),
    ("circle in a 1D gas", "1D", None, ["trajectory.kind=circular", "trajectory.radius=5 um"], []),
    # --- beyond what the model can do ------------------------------------------------------------------
    ("speed above 1e6 c_s", "3D", None, ["trajectory.speed=1e7 c_s"], []),
    ("'c' (speed of light) for 'c_s'", "3D", None, ["trajectory.speed=1.5 c"], []),
    ("gap below 1e-12 c/xi", "3D", None, ["probe.gap=1e-12 Hz"], []),
    ("gap above 1e12 c/xi", "3D", None, ["probe.gap=1e20 Hz"], []),
    ("1D density probe exactly at the sound speed", "1D", None, ["trajectory.speed=1 c_s"], []),
    ("1D two-level probe exactly at its threshold speed", "1D",
     ('model = "density"', 'model = "two-level"\ngap = "100 Hz"'), ["trajectory.speed={VT1} c_s"], []),
    ("phonon dispersion, point probe, supersonic", "3D", None, ["condensate.dispersion=phonon"], []),
    ("radius below 1e-9 xi", "2D", None, ["trajectory.radius=1e-12 um"], []),
    ("3D circle with too many harmonics (R ~ 1e6 xi, 1.5 c_s)", "3D", None,
     ["trajectory.kind=circular", "trajectory.radius=300 mm"], []),
    ("slow rotation on a large circle", "2D", None,
     ["trajectory.radius=5 mm", "trajectory.speed=1e-3 c_s"], []),
    ("linear start beyond 1e12 xi", "3D", None,
     ['trajectory.start=["1e308 m", "0 m", "0 m"]'], []),
    ("circle radius above 1e12 xi", "3D", None,
     ["trajectory.kind=circular", "trajectory.radius=1e300 m"], []),
    ("circle centre beyond 1e12 xi", "2D", None,
     ['trajectory.centre=["0 m", "1e300 m"]'], []),
    ("coupling so large the rates overflow", "3D", None, ["probe.coupling_length=1e300 nm"], []),
    ("gas scales underflow", "3D", None, ["condensate.density=1e-320 m^-3"], []),
    ("--output folder does not exist", "3D", None, [], ["--output", "no/such/folder/out.json"]),
    # --- trapped clouds and passages -----------------------------------------------------------
    ("harmonic trap with atom number and density", "3D trap", None,
     ["condensate.density=1e20 m^-3"], []),
    ("harmonic trap with neither atom number nor density", "3D trap", ("atom_number = 2e5\n", ""),
     [], []),
    ("trap frequencies of the wrong count", "3D trap", None,
     ['condensate.trap_frequencies=["50 Hz", "50 Hz"]'], []),
    ("zero trap frequency", "3D trap", None,
     ['condensate.trap_frequencies=["50 Hz", "0 Hz", "50 Hz"]'], []),
    ("trap keys without trap = \"harmonic\"", "3D", None, ["condensate.atom_number=2e5"], []),
    ("size in a harmonic trap", "3D trap", None, ["condensate.size=20 um"], []),
    ("turns not positive", "2D", None, ["trajectory.turns=0"], []),
    ("crossing switching without a box", "3D", None, ["trajectory.switching=crossing"], []),
    ("passage through a uniform gas without size", "3D", None, [], [], "passage"),
    ("straight passage that never enters the cloud", "3D trap", None,
     ['trajectory.start=["0 um", "15 um", "0 um"]'], [], "passage"),
    # --- planning under uncertainty ------------------------------------------------------------
    ("uncertainty on a key the scenario does not set", "3D", None,
     ["uncertainty.condensate.size=10 %"], []),
    ("uncertainty on an unknown key", "3D", None, ["uncertainty.condensate.densty=10 %"], []),
    ("uncertainty on a key that is not a number", "3D", None,
     ["uncertainty.probe.model=10 %"], []),
    ("negative uncertainty", "3D", None, ["uncertainty.condensate.density=-10 %"], []),
    ("zero uncertainty", "3D", None, ["uncertainty.condensate.density=0 m^-3"], []),
    ("uncertainty about a zero temperature", "3D", None,
     ["condensate.temperature=0 nK", "uncertainty.condensate.temperature=5 nK"], []),
    ("fewer than 10 samples", "3D", None,
     ["uncertainty.condensate.density=10 %", "uncertainty.samples=5"], []),
    ("more than 1e6 samples", "3D", None,
     ["uncertainty.condensate.density=10 %", "uncertainty.samples=2000000"], []),
    ("readout error probability outside [0, 1)", "3D", None, ["readout.false_excited=1.5"], []),
    ("readout errors summing to 1", "3D", None,
     ["readout.false_excited=0.6", "readout.missed_excited=0.4"], []),
    ("readout of a probe without internal states", "1D", None, ["readout.false_excited=0.03"],
     []),
    ("readout signal equal to its reference (probe at rest)", "3D", None,
     ["trajectory.speed=0 m/s", "trajectory.switching=gaussian",
      "trajectory.switching_width=1 ms", "readout.false_excited=0.03"], [], "transit"),
    # --- limits of the numerics and of the other commands --------------------------------------
    ("rtol below the 1e-12 of circular sums", "2D", None, ["numerics.rtol=5e-13"], []),
    ("1D phonon dispersion, point probe, at the sound speed", "1D",
     ('model = "density"', 'model = "two-level"\ngap = "100 Hz"'),
     ["condensate.dispersion=phonon", "trajectory.speed=1 c_s"], []),
    ("value of 300 characters", "3D", None, ["condensate.species=" + "X" * 300], []),
    ("window keys left beside a Gaussian switching", "3D", None,
     ["trajectory.switching=gaussian", "trajectory.switching_width=1 ms",
      "trajectory.stop=10 ms"], [], "transit"),
    ("transit time grid beyond the machine's memory", "3D", None,
     ["trajectory.switching=gaussian", "trajectory.switching_width=2 ms",
      "probe.gap=2.89e15 rad/s"], [], "transit"),
    ("solve target without a value", "3D", None, [],
     ["--for", "trajectory.speed", "--target", "up_rate="], "solve"),
    ("threshold over gaps above 1e12 c/xi", "3D", None, [],
     ["--vary", "probe.gap=1Hz:1e20Hz:3"], "threshold"),
    ("grid of 1e30 points", "3D", None, [],
     ["--vary", "trajectory.speed=1c_s:2c_s:1" + "0" * 30, "--out", "grid.csv"], "sweep"),
    # --- output files and the command line -----------------------------------------------------
    ("output file is the scenario it reads", "3D", None, [], ["-o", "scenario.toml"]),
    ("output path is a folder", "3D", None, [], ["-o", "."]),
    ("output path is a device", "3D", None, [], ["-o", "/dev/null"]),
    ("output path is a symbolic link", "3D", None, [], ["-o", "/dev/stdout"]),
    ("one name for two outputs", "3D trap", None, [], ["-o", "p.png", "--plot", "p.png"],
     "passage"),
    ("--quantity that is not a column (without --plot)", "3D", None, [],
     ["--vary", "trajectory.speed=1c_s:2c_s:2", "--out", "grid.csv", "--quantity", "up_rat"],
     "sweep"),
    ("sweep without --out or --json", "3D", None, [], ["--vary", "trajectory.speed=1c_s:2c_s:2"],
     "sweep"),
    ("--resume without --out", "3D", None, [],
     ["--vary", "trajectory.speed=1c_s:2c_s:2", "--json", "--resume"], "sweep"),
    ("option value of the wrong type", "3D", None, [],
     ["--vary", "trajectory.speed=1c_s:2c_s:2", "--out", "grid.csv", "--workers", "two"],
     "sweep"),
    ("unknown option", "3D", None, [], ["--jsn"]),
    ("option without its value", "3D", None, [], ["--unset"]),
    ("solve for a zero rate that vanishes below a threshold", "3D", None, [],
     ["--for", "trajectory.speed", "--target", "up_rate=0 1/s"], "solve"),
    ("sweep output being written by another run", "3D", None, [],
     ["--vary", "trajectory.speed=1c_s:2c_s:2", "--out", "grid.csv", "--resume"], "sweep",
     _another_run_writes),
    ("resume after the waypoint file changed", "1D", SPLINE_1D, [],
     ["--vary", VARY_DENSITY, "--out", "grid.csv", "--resume"], "sweep", _waypoints_changed),
]


def _threshold_1d():
    """The up-threshold speed (in c_s) of the 1D two-level case, as a string."""
    text = GAS1.replace('model = "density"', 'model = "two-level"\ngap = "100 Hz"')
    import tomllib
    sc_ = scenario_from_dict(tomllib.loads(text))
    c = sc_.condensate.sound_speed
    vt = inertial_rates(sc_.condensate, sc_.probe, c).up_threshold_speed
    return repr(vt / c)


VT1 = _threshold_1d()


def _sets(case):
    return [s.replace("{VT1}", VT1) for s in case[3]]


def _command(case):
    """The command a case runs: ``rates`` unless the case names another."""
    return case[5] if len(case) > 5 else "rates"


def _text(case):
    _, base, change, _, _ = case[:5]
    text = BASES[base]
    if isinstance(change, tuple):
        old, new = change
        assert old in text, old
        text = text.replace(old, new, 1)
    return text


def run_case(case, folder):
    """Run one case in ``folder`` (the scenario file is 'scenario.toml' there)."""
    name, base, change, sets, extra = case[:5]
    path = Path(folder) / "scenario.toml"
    if change == "BINARY":
        path.write_bytes(b"\xff\xfe[condensate]\n")
    elif change == "DEEP":
        path.write_text("a = " + "[" * 3000 + "]" * 3000 + "\n")
    elif change != "MISSING":
        path.write_text(_text(case))
    args = [_command(case), "scenario.toml" if change != "MISSING" else "missing.toml"]
    for s in _sets(case):
        args += ["--set", s]
    old = os.getcwd()
    os.chdir(folder)
    undo = case[6](folder) if len(case) > 6 else None
    try:
        result = CliRunner().invoke(cli, args + extra)
    finally:
        if undo is not None:
            undo()
        os.chdir(old)
    return result


def _how(case):
    name, base, change, sets, extra = case[:5]
    parts = [] if _command(case) == "rates" else [f"`probe {_command(case)}`"]
    if change == "MISSING":
        parts.append("`probe rates missing.toml`")
    elif change == "BINARY":
        parts.append("file starting with bytes `ff fe`")
    elif change == "DEEP":
        parts.append("`a = [[[...]]]` nested 3000 deep")
    elif isinstance(change, tuple):
        old, new = change
        parts.append(f"{base} file, `{old.strip()}` " + (f"-> `{new.strip()}`" if new.strip()
                                                          else "removed"))
    else:
        parts.append(f"{base} file")
    for s in _sets(case):
        shown = s if len(s) <= 60 else s[:40] + "..." + s[-8:]
        parts.append(f"`--set '{shown}'`")
    if extra:
        parts.append("`" + " ".join(extra) + "`")
    if len(case) > 6:
        parts.append(case[6].__doc__.strip())
    return ", ".join(parts)


def _cell(text):
    return text.replace("|", "\\|").replace("\n", " ")


def doc_text(folder):
    rows = []
    for case in CASES:
        r = run_case(case, folder)
        rows.append(f"| {_cell(case[0])} | {_cell(_how(case))} | {r.exit_code} | "
                    f"`{_cell(r.stderr.strip())}` |")
    head = [
        "# What `probe rates` does with bad input",
        "",
        "Generated by `python tests/test_validation.py` from the cases in that file",
        "(the test suite checks that this table is current).  The base scenarios",
        "are the 3D (87Rb, linear), 2D (23Na, circular) and 1D (87Rb, density probe)",
        "files in that module.  Every bad input ends with exit status 2, one line on",
        "stderr, nothing on stdout and no output file; the Python API raises",
        "`probe.InputError` or `probe.ModelError` with the same key and message.",
        "",
        "| Bad input | How it is given | Exit | Message (stderr) |",
        "| --- | --- | --- | --- |",
    ]
    return "\n".join(head + rows) + "\n"


@pytest.mark.parametrize("case", CASES, ids=[c[0] for c in CASES])
def test_bad_input_exits_2_with_one_line(case, tmp_path):
    r = run_case(case, tmp_path)
    assert r.exit_code == 2, (r.exit_code, r.output)
    assert r.exception is None or isinstance(r.exception, SystemExit)
    assert r.stdout == ""
    lines = r.stderr.strip().splitlines()
    assert len(lines) == 1 and lines[0].startswith("error: ")
    assert "Traceback" not in r.stderr
    # the message names a key: 'error: <key>: <message>'
    key = lines[0][len("error: "):].split(": ", 1)[0]
    assert key and " " not in key


def test_messages_name_value_and_what_is_allowed(tmp_path):
    expect = {
        "unknown key (suggests the closest)": ("trajectory.sped", "did you mean 'speed'?", "allowed:"),
        "units of the wrong dimension": ("trajectory.speed", "'2 K'", "a speed (m/s"),
        "a 2D density in a 3D gas": ("condensate.density", "'1e14 m^-2'", "1/length^3"),
        "negative density": ("condensate.density", "-1e+20", "> 0"),
        "zero radius": ("trajectory.radius", "must be > 0", ""),
        "NaN": ("condensate.density", "'nan m^-3'", "not finite"),
        "speed above 1e6 c_s": ("trajectory.speed", "'1e7 c_s'", "1e+06 c_s"),
        "'c' (speed of light) for 'c_s'": ("trajectory.speed", "speed of light", "'c_s'"),
        "transverse frequency missing for d < 3": ("condensate.transverse_frequency", "missing", "kHz"),
        "1D density probe exactly at the sound speed": ("trajectory.speed", "1/sqrt(v - c)", ""),
        "3D circle with too many harmonics (R ~ 1e6 xi, 1.5 c_s)": ("trajectory.radius",
                                                                    "harmonics", "linear"),
        "linear start beyond 1e12 xi": ("trajectory.start[0]", "1e+308 m", "within 1e+12 xi"),
        "circle radius above 1e12 xi": ("trajectory.radius", "1e+300 m", "1e+12 xi"),
        "circle centre beyond 1e12 xi": ("trajectory.centre[1]", "1e+300 m", "within 1e+12 xi"),
    }
    by_name = {c[0]: c for c in CASES}
    for name, (key, *texts) in expect.items():
        line = run_case(by_name[name], tmp_path).stderr.strip()
        assert line.startswith(f"error: {key}: "), line
        for t in texts:
            assert t in line, (name, t, line)


#: rows whose message quotes text of Python, tomllib or pint (which may change
#: with their versions) or numbers of the machine (its memory and threads):
#: only the part before that text is compared
LIBRARY_TEXT = re.compile(r"(TOML syntax error: |cannot read file: |not a UTF-8 text file |"
                          r"as a quantity \(|mixes incompatible units \(|"
                          # the memory and worker threads of the machine
                          r"time grid needs |"
                          # the number of the process that holds a lock
                          r"another sweep \(process )")


def _stable(text):
    m = LIBRARY_TEXT.search(text)
    return text[:m.end()] if m else text


def test_docs_table_is_current(tmp_path):
    assert DOC.exists(), "run: python tests/test_validation.py"
    have = [_stable(line) for line in DOC.read_text().splitlines()]
    want = [_stable(line) for line in doc_text(tmp_path).splitlines()]
    assert have == want, (
        "docs/bad_inputs.md is out of date; run: python tests/test_validation.py")


# --- output files ------------------------------------------------------------------------------
def test_failed_run_leaves_no_output_file(tmp_path):
    good = tmp_path / "good.toml"
    good.write_text(GAS3)
    bad = tmp_path / "bad.toml"
    bad.write_text(GAS3.replace('"1.5 c_s"', '"1e7 c_s"'))
    out = tmp_path / "out.json"
    r = CliRunner().invoke(cli, ["rates", "--json", str(good), str(bad), "-o", str(out)])
    assert r.exit_code == 2 and not out.exists()
    # an existing file is left as it was
    out.write_text("previous")
    r = CliRunner().invoke(cli, ["rates", str(bad), "--output", str(out)])
    assert r.exit_code == 2 and out.read_text() == "previous"
    assert sorted(p.name for p in tmp_path.iterdir()) == ["bad.toml", "good.toml", "out.json"]


def test_good_run_writes_the_whole_file(tmp_path):
    good = tmp_path / "good.toml"
    good.write_text(GAS3)
    out = tmp_path / "out.json"
    r = CliRunner().invoke(cli, ["rates", "--json", str(good), "-o", str(out)])
    assert r.exit_code == 0 and r.stdout == ""
    data = json.loads(out.read_text())
    assert data["up_rate"] > 0 and "warnings" in data
    assert sorted(p.name for p in tmp_path.iterdir()) == ["good.toml", "out.json"]


# --- Python API -------------------------------------------------------------------------------------
M = RB87_MASS


@pytest.mark.parametrize("kwargs, key", [
    (dict(dimension=True), "condensate.dimension"),
    (dict(dimension=3.0), "condensate.dimension"),
    (dict(mass="1.4e-25"), "condensate.mass"),
    (dict(mass=True), "condensate.mass"),
    (dict(density=float("nan")), "condensate.density"),
    (dict(density=-1.0), "condensate.density"),
    (dict(scattering_length=[1e-9, 2e-9]), "condensate.scattering_length"),
    (dict(temperature=float("inf")), "condensate.temperature"),
    (dict(size=0.0), "condensate.size"),
    (dict(dispersion=["phonon"]), "condensate.dispersion"),
    (dict(density=1e-320), "condensate"),
])
def test_condensate_rejects(kwargs, key):
    args = dict(dimension=3, mass=M, density=1e20, scattering_length=5e-9)
    args.update(kwargs)
    with pytest.raises(InputError) as err:
        Condensate(**args)
    assert err.value.key == key


def test_probe_and_engine_arguments_are_checked():
    cond = Condensate(3, M, 1e20, 5e-9)
    w0 = cond.frequency_unit
    for bad in ("200 Hz", True, [], float("nan"), -1.0, [1.0, 0.0]):
        with pytest.raises(InputError) as err:
            TwoLevelProbe(bad, 1e-50)
        assert err.value.key == "probe.gap"
    for bad in ("1e-50", float("inf"), 0.0, None):
        with pytest.raises(InputError) as err:
            DensityProbe(bad)
        assert err.value.key == "probe.coupling"
    p = TwoLevelProbe(0.5 * w0, 1e-50)
    for bad in (float("nan"), -1.0, [1.0, float("inf")]):
        with pytest.raises(InputError) as err:
            inertial_rates(cond, p, bad)
        assert err.value.key == "trajectory.speed"
    with pytest.raises(InputError) as err:
        circular_rates(cond, p, 0.0, 1e-3)
    assert err.value.key == "trajectory.radius"


def test_config_api_errors():
    with pytest.raises(InputError) as err:
        load_config(12345)
    assert err.value.key == "config"
    with pytest.raises(InputError):
        override(["not", "a", "dict"], "probe.gap=1 Hz")
    with pytest.raises(InputError) as err:
        scenario_from_dict({"condensate": 3})
    assert err.value.key == "condensate"
    with pytest.raises(InputError) as err:
        parse_quantity(float("nan"), "numerics.rtol", "dimensionless")
    assert "not finite" in err.value.message
    with pytest.raises(InputError):
        parse_vector(["1 um", "nan um", "0 um"], "trajectory.start", "length")


def test_array_results_phrase_warnings_per_grid_point():
    # grid results: 'at N of M grid points ..., largest ...'
    cond = Condensate(3, M, 1e20, 5e-9)
    c, w0 = cond.sound_speed, cond.frequency_unit
    r = inertial_rates(cond, TwoLevelProbe(0.5 * w0, 3e-50), np.array([0.5, 2.0, 30.0]) * c)
    first = [w for w in r.warnings if w.startswith("first-order")]
    assert len(first) >= 1 and "grid points" in first[0] and "largest" in first[0]
    fast = [w for w in r.warnings if "sound speed (more than" in w]
    assert fast and fast[0].startswith("at 1 of 3 grid points")


def test_regime_warnings_reach_table_and_json(tmp_path):
    path = tmp_path / "s.toml"
    path.write_text(GAS3.replace('scattering_length = "5.3 nm"\n',
                                 'scattering_length = "5.3 nm"\nsize = "30 um"\n')
                    .replace('speed = "1.5 c_s"\n',
                             'speed = "1.5 c_s"\nstart = ["-40 um", "0 um", "0 um"]\n'))
    table = CliRunner().invoke(cli, ["rates", str(path)])
    assert table.exit_code == 0
    assert "starts outside the uniform region" in table.stdout
    assert "transit time (uniform region)" in table.stdout
    data = json.loads(CliRunner().invoke(cli, ["rates", "--json", str(path)]).stdout)
    assert any("starts outside" in w for w in data["warnings"])
    t = data["transit"]
    # chord through the centre of a sphere of radius 30 um: 60 um, divided by v
    assert t["chord"] == pytest.approx(60e-6) and t["time"] == pytest.approx(60e-6 / data["speed"])
    assert t["expected_up"] == pytest.approx(data["up_rate"] * t["time"])
    assert data["inputs"]["condensate"]["size"] == pytest.approx(30e-6)


if __name__ == "__main__":   # regenerate docs/bad_inputs.md
    import tempfile
    with tempfile.TemporaryDirectory() as folder:
        DOC.parent.mkdir(exist_ok=True)
        DOC.write_text(doc_text(folder))
    print(f"wrote {DOC}", file=sys.stderr)
