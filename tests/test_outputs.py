"""What the command line writes and refuses: output files checked before
anything is computed (regular files only, never a file the command reads),
written together or not at all; usage errors as one line; the same output
options on every command; progress on a terminal only; a zero target of a
rate that vanishes below a threshold.

The references here are the file system itself (``os.lstat``: what is at a
path before and after a run), JSON and CSV parsers of the standard library,
and click's own parsing; no number of the physics is checked here (those
have their tests elsewhere), except that the refused zero target lies below
the threshold speed that ``probe threshold`` reports.
"""
from __future__ import annotations

import csv
import io
import json
import os
import shutil
import stat
from pathlib import Path

import pytest
from click.testing import CliRunner

from probe.cli import cli

ROOT = Path(__file__).resolve().parents[1]
BOX = ROOT / "examples" / "box3d_supersonic.toml"
DRAG = ROOT / "examples" / "drag3d_density.toml"
STIR = ROOT / "examples" / "transits" / "stir2d_spline.toml"
STIR_PATH = ROOT / "examples" / "transits" / "stir2d_path.csv"
TRAP = ROOT / "examples" / "passages" / "push3d_trap.toml"
SPEEDS = "trajectory.speed=0.5c_s:3c_s:4"


def run(*args):
    return CliRunner().invoke(cli, [str(a) for a in args])


def refused(r, key):
    """Exit status 2, nothing on stdout, one line ``error: key: ...``."""
    assert r.exit_code == 2, r.output
    assert r.stdout == ""
    lines = r.stderr.strip().splitlines()
    assert len(lines) == 1, lines
    assert lines[0].startswith(f"error: {key}: "), lines[0]
    assert "Traceback" not in r.output and "Usage:" not in r.output
    return lines[0]


def names(folder):
    return sorted(p.name for p in Path(folder).iterdir())


@pytest.fixture
def box(tmp_path):
    path = tmp_path / "B3.toml"
    shutil.copy(BOX, path)
    return path


@pytest.fixture
def stir(tmp_path):
    for src in (STIR, STIR_PATH):
        shutil.copy(src, tmp_path / src.name)
    return tmp_path / STIR.name


@pytest.fixture
def no_computing(monkeypatch):
    """Fail the test if a sweep (of sweep, compare, solve) is started."""
    import probe.design.sweep as sweeps

    def forbidden(*args, **kwargs):
        raise AssertionError("computed before the output paths were checked")
    monkeypatch.setattr(sweeps, "sweep", forbidden)


# ---------------------------------------------------------------------------
# A. file safety: never an input, only regular files
# ---------------------------------------------------------------------------
@pytest.mark.parametrize("option", ["-o", "--out", "--output"])
def test_rates_refuses_to_overwrite_its_scenario(box, option):
    before = box.read_bytes()
    line = refused(run("rates", box, option, box), "--output")
    assert "input file" in line
    assert box.read_bytes() == before


def test_no_command_overwrites_a_file_its_scenario_reads(stir, tmp_path, no_computing):
    """The waypoint CSV named by the scenario (relative to its folder) and
    the scenario itself are inputs of every command."""
    csv_path = tmp_path / "stir2d_path.csv"
    before = {p: p.read_bytes() for p in (stir, csv_path)}
    for target in (csv_path, stir):
        line = refused(run("sweep", stir, "--vary", "probe.gap=100Hz:200Hz:2",
                           "--out", target), "--out")
        assert "input file" in line
        line = refused(run("transit", stir, "-o", target), "--out")
        assert "input file" in line
    assert {p: p.read_bytes() for p in before} == before


def test_the_sidecar_and_a_hard_link_are_checked_too(tmp_path, no_computing):
    """``--out S.csv`` writes the sidecar ``S.json``: a scenario of that name
    is an input; so is a hard link to the scenario (the same file)."""
    scenario = tmp_path / "s.json"
    shutil.copy(BOX, scenario)
    line = refused(run("sweep", scenario, "--vary", SPEEDS, "--out", tmp_path / "s.csv"),
                   "--out")
    assert "the JSON sidecar" in line and "input file" in line
    os.link(scenario, tmp_path / "hard.toml")
    line = refused(run("rates", scenario, "-o", tmp_path / "hard.toml"), "--output")
    assert "input file" in line
    assert names(tmp_path) == ["hard.toml", "s.json"]


@pytest.mark.parametrize("kind", ["folder", "fifo", "symlink", "dangling symlink"])
def test_only_regular_files_are_written(box, tmp_path, kind):
    target = tmp_path / "out.json"
    victim = tmp_path / "victim.json"
    victim.write_text("kept")
    if kind == "folder":
        target.mkdir()
    elif kind == "fifo":
        os.mkfifo(target)
    elif kind == "symlink":
        target.symlink_to(victim)
    else:
        target.symlink_to(tmp_path / "nowhere.json")
    mode = os.lstat(target).st_mode
    for args, key in ((["rates", box, "-o", target], "--output"),
                      (["threshold", box, "--out", target], "--out"),
                      (["solve", box, "--for", "trajectory.speed", "--target",
                        "up_rate=10 1/s", "-o", target], "--out"),
                      (["sweep", box, "--vary", SPEEDS, "--out", target], "--out")):
        line = refused(run(*args), key)
        assert "regular file" in line, line
        assert os.lstat(target).st_mode == mode          # still what it was
    assert victim.read_text() == "kept"
    assert not stat.S_ISREG(os.lstat(target).st_mode)


def test_two_outputs_may_not_share_a_name(box, tmp_path):
    line = refused(run("passage", TRAP, "-o", tmp_path / "p.svg", "--plot",
                       tmp_path / "p.svg"), "--plot")
    assert "also the file of --out" in line
    assert names(tmp_path) == ["B3.toml"]


# ---------------------------------------------------------------------------
# B. exit 2 leaves no files behind; paths checked before computing
# ---------------------------------------------------------------------------
def test_sweep_sidecar_folder_refused_before_computing(box, tmp_path, no_computing):
    (tmp_path / "o.json").mkdir()
    line = refused(run("sweep", box, "--vary", SPEEDS, "--out", tmp_path / "o.csv"),
                   "--out")
    assert "sidecar" in line and "folder" in line
    assert names(tmp_path) == ["B3.toml", "o.json"]


@pytest.mark.parametrize("what", ["partial", "plot"])
def test_sweep_files_that_are_folders_refused_before_computing(box, tmp_path, what,
                                                                no_computing):
    blocked = tmp_path / ("o.csv.partial" if what == "partial" else "o.png")
    blocked.mkdir()
    refused(run("sweep", box, "--vary", SPEEDS, "--out", tmp_path / "o.csv",
                "--plot", tmp_path / "o.png"), "--out" if what == "partial" else "--plot")
    assert names(tmp_path) == sorted(["B3.toml", blocked.name])


@pytest.mark.parametrize("command", ["sweep", "compare", "threshold"])
def test_a_figure_that_cannot_be_written_leaves_no_table(box, tmp_path, monkeypatch,
                                                         command):
    """The figure fails after the computation (the disk refuses it): the
    table and sidecar of this run are removed with it."""
    from probe.design import plots
    from probe.errors import InputError

    def refuse(fig, path):
        raise InputError("--plot", f"cannot write {os.fspath(path)!r}: No space left "
                                   "on device")
    monkeypatch.setattr(plots, "save", refuse)
    args = {"sweep": ["--vary", SPEEDS], "compare": ["--vary", SPEEDS],
            "threshold": ["--vary", "probe.gap=100Hz:200Hz:3"]}[command]
    r = run(command, box, *args, "--out", tmp_path / "o.csv", "--plot", tmp_path / "o.png")
    refused(r, "--plot")
    assert names(tmp_path) == ["B3.toml"]


def test_a_failing_run_keeps_an_earlier_file_and_writes_nothing(box, tmp_path):
    out = tmp_path / "o.csv"
    out.write_text("earlier")
    refused(run("threshold", box, "--vary", "probe.gap=1Hz:1e20Hz:3", "--out", out),
            "probe.gap")
    assert out.read_text() == "earlier"
    assert names(tmp_path) == ["B3.toml", "o.csv"]


# ---------------------------------------------------------------------------
# C. one-line refusals of the command line itself
# ---------------------------------------------------------------------------
def test_quantity_checked_without_plot(box, tmp_path, no_computing):
    line = refused(run("sweep", box, "--vary", SPEEDS, "--out", tmp_path / "o.csv",
                       "--quantity", "up_rat"), "--quantity")
    assert "'up_rat'" in line and "up_rate" in line and "down_rate" in line
    assert names(tmp_path) == ["B3.toml"]


@pytest.mark.parametrize("args, key, text", [
    (["sweep", BOX, "--vary", SPEEDS, "--out", "o.csv", "--workers", "two"], "--workers",
     "'two' is not a valid integer"),
    (["sweep", BOX, "--vary", SPEEDS], "--out", "missing"),
    (["sweep", BOX, "--out", "o.csv"], "--vary", "missing; give --vary KEY=START:STOP:NUM"),
    (["rates"], "CONFIG", "missing"),
    (["rates", BOX, "--jsn"], "--jsn", "no such option; did you mean --json"),
    (["rates", BOX, "--set"], "--set", "requires an argument"),
    (["solve", BOX, "--for", "trajectory.speed"], "--target", "missing"),
    (["threshold", BOX, BOX], "arguments", "unexpected extra argument"),
    (["ratez", BOX], "COMMAND", "no such command 'ratez'; did you mean 'rates'?"),
])
def test_usage_errors_are_one_line(args, key, text, tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)
    line = refused(run(*args), key)
    assert text in line, line
    assert names(tmp_path) == []


# ---------------------------------------------------------------------------
# D. the same output options on every command
# ---------------------------------------------------------------------------
COMMANDS = ["rates", "transit", "passage", "sweep", "compare", "threshold", "solve"]


@pytest.mark.parametrize("command", COMMANDS)
def test_every_command_takes_out_and_json(command):
    r = run(command, "--help")
    assert r.exit_code == 0, r.output
    text = " ".join(r.stdout.split())
    assert "-o, --out, --output FILE" in text, text
    assert "--json" in text


def test_rates_old_and_new_spellings_write_the_same(box, tmp_path):
    outs = {}
    for option in ("-o", "--out", "--output"):
        path = tmp_path / f"r{len(outs)}.txt"
        r = run("rates", box, option, path)
        assert r.exit_code == 0 and r.stdout == ""
        outs[option] = path.read_text()
    assert len(set(outs.values())) == 1 and outs["-o"].startswith("== ")
    # JSON by the file's suffix, as with --json
    r = run("rates", box, "-o", tmp_path / "r.json")
    assert r.exit_code == 0
    assert json.loads((tmp_path / "r.json").read_text())["up_rate"] > 0


def test_threshold_and_solve_json(box, tmp_path):
    r = run("threshold", box, "--vary", "probe.gap=100Hz:400Hz:4", "--json")
    assert r.exit_code == 0, r.output
    data = json.loads(r.stdout)
    cols = [c["name"] for c in data["columns"]]
    assert "up_threshold_speed" in cols and len(data["rows"]) == 4
    # the same table as the CSV, and the JSON file by suffix
    r = run("threshold", box, "--vary", "probe.gap=100Hz:400Hz:4", "-o", tmp_path / "t.csv")
    assert r.exit_code == 0
    rows = list(csv.reader((tmp_path / "t.csv").open()))
    assert [c.split(" [")[0] for c in rows[0]] == cols
    assert [float(x) for x in rows[2]] == pytest.approx(data["rows"][1], rel=1e-15)
    r = run("threshold", box, "--vary", "probe.gap=100Hz:400Hz:4", "-o", tmp_path / "t.json")
    assert json.loads((tmp_path / "t.json").read_text())["rows"] == data["rows"]

    r = run("solve", box, "--for", "trajectory.speed", "--target", "up_rate=10 1/s", "--json")
    assert r.exit_code == 0, r.output
    sol = json.loads(r.stdout)
    assert sol["quantity"] == "up_rate" and sol["target"] == 10.0
    assert sol["achieved"] == pytest.approx(10.0, rel=1e-6)
    r = run("solve", box, "--for", "trajectory.speed", "--target", "up_rate=10 1/s",
            "-o", tmp_path / "s.txt")
    assert r.exit_code == 0 and r.stdout == ""
    assert (tmp_path / "s.txt").read_text().startswith("trajectory.speed = ")


def test_sweep_and_compare_json(box, tmp_path):
    r = run("sweep", box, "--vary", SPEEDS, "--json")
    assert r.exit_code == 0, r.output
    data = json.loads(r.stdout)
    assert data["shape"] == [4] and len(data["rows"]) == 4
    assert data["columns"][-1]["name"] == "warnings"
    assert names(tmp_path) == ["B3.toml"]               # no --out: nothing written
    r = run("compare", DRAG, "--vary", "trajectory.speed=1c_s:2c_s:3", "--json")
    assert r.exit_code == 0, r.output
    data = json.loads(r.stdout)
    assert data["models"][0]["name"] == "configured" and len(data["rows"]) == 3
    assert any("phonon" in s for s in data["differences"])


# ---------------------------------------------------------------------------
# E. progress on a terminal, nothing elsewhere
# ---------------------------------------------------------------------------
class Terminal(io.StringIO):
    def isatty(self):
        return True


def test_progress_shows_steps_and_time_left_on_a_terminal_only(monkeypatch):
    import time
    from probe.cli.progress import Progress

    shown = Terminal()
    bar = Progress(4, "solve", stream=shown)
    for _ in range(3):
        time.sleep(0.45)                 # click estimates the time left after 1 s
        bar(1)
    bar.grow(2)                          # refinement steps announced later
    bar(3)
    bar.close()
    text = shown.getvalue()
    assert "solve" in text and "3/4" in text and "6/6" in text
    assert " left" in text
    # a delayed bar of a run shorter than its delay shows nothing
    quiet = Terminal()
    with Progress(3, "rates", delay=5.0, stream=quiet) as bar:
        bar(3)
    assert quiet.getvalue() == ""
    # ... and appears once the delay is over, even for one step
    late = Terminal()
    with Progress(1, "transit", delay=0.05, stream=late):
        time.sleep(0.3)
    assert "transit" in late.getvalue() and "0/1" in late.getvalue()


@pytest.mark.parametrize("command, args", [
    ("solve", ["--for", "trajectory.speed", "--target", "up_rate=10 1/s"]),
    ("compare", ["--vary", SPEEDS]),
    ("rates", []),
])
def test_long_commands_report_progress_on_a_terminal(box, command, args, monkeypatch):
    from probe.cli import progress

    screen = Terminal()
    monkeypatch.setattr(progress, "terminal_stream", lambda: screen)
    monkeypatch.setattr(progress, "PROGRESS_DELAY", 0.0)
    extra = [box] if command == "rates" else []     # two scenarios
    r = run(command, box, *extra, *args)
    assert r.exit_code == 0, r.output
    assert r.stderr == ""                              # the bar went to the terminal
    assert command in screen.getvalue()
    # not a terminal: nothing at all on stderr
    monkeypatch.undo()
    r = run(command, box, *extra, *args)
    assert r.exit_code == 0 and r.stderr == ""


# ---------------------------------------------------------------------------
# F. a zero target of a rate that vanishes below a threshold
# ---------------------------------------------------------------------------
def test_zero_target_below_the_threshold_points_to_threshold(box):
    line = refused(run("solve", box, "--for", "trajectory.speed",
                       "--target", "up_rate=0 1/s"), "--target")
    assert "probe threshold" in line and "vanishes below a threshold" in line
    assert "also reached" not in line
    # the stretch it names ends below the threshold that probe threshold gives
    table = json.loads(run("threshold", box, "--json").stdout)
    c = table["rows"][0][[col["name"] for col in table["columns"]].index("sound_speed")]
    vth_over_c = table["configured"]["threshold_speed"] / c
    top = float(line.split(" c_s)")[-2].split("(")[-1])
    assert top < vth_over_c


def test_a_sweep_on_a_real_terminal_shows_its_bar_on_stderr_only(box, tmp_path):
    """stderr on a pseudo-terminal (pty), stdout on a pipe: the bar goes to
    the terminal, the summary to the pipe; with stderr on a pipe, no bar."""
    import pty
    import subprocess
    import sys

    command = [sys.executable, "-c", "import sys; from probe.cli import main; sys.exit(main())",
               "sweep", str(box), "--vary", SPEEDS, "--out", str(tmp_path / "o.csv")]
    master, slave = pty.openpty()
    try:
        proc = subprocess.run(command, stdout=subprocess.PIPE, stderr=slave, timeout=300,
                              cwd=tmp_path)
        os.close(slave)
        screen = b""
        while True:
            try:
                chunk = os.read(master, 4096)
            except OSError:                      # the terminal's other end is closed
                break
            if not chunk:
                break
            screen += chunk
    finally:
        os.close(master)
    assert proc.returncode == 0
    assert b"sweep" in screen and b"4/4" in screen
    assert proc.stdout.decode().startswith("wrote ")
    piped = subprocess.run(command, capture_output=True, timeout=300, cwd=tmp_path)
    assert piped.returncode == 0 and piped.stderr == b""


#: a short 1D transit (a fraction of a second) with ten Monte Carlo samples
SAMPLED = """[condensate]
dimension = 1
species = "87Rb"
density = "5e7 m^-1"
scattering_length = "5.3 nm"
transverse_frequency = "2 kHz"

[probe]
gap = "100 Hz"
coupling_length = "1 nm"

[trajectory]
kind = "spline"
waypoints = { units = { t = "ms", x = "um" }, t = [0, 0.2, 0.4, 0.6], x = [0, 0.5, 1.5, 2] }

[numerics]
transit_rtol = 1e-2

[uncertainty]
"condensate.density" = "10 %"
samples = 10
"""


def test_a_transit_counts_its_monte_carlo_samples(tmp_path, monkeypatch):
    """One transit and its 10 draws and 2 elasticity points: 13 steps."""
    from probe.cli import progress

    scenario = tmp_path / "s.toml"
    scenario.write_text(SAMPLED)
    screen = Terminal()
    monkeypatch.setattr(progress, "terminal_stream", lambda: screen)
    monkeypatch.setattr(progress, "PROGRESS_DELAY", 0.0)
    r = run("transit", scenario, "--json")
    assert r.exit_code == 0, r.output
    assert "uncertainty" in json.loads(r.stdout)
    assert "transit" in screen.getvalue() and "13/13" in screen.getvalue()
