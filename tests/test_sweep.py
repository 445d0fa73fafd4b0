"""Sweeps: grid values, agreement with point-by-point `probe rates`, the CSV
and its sidecar, resume after an interrupt, local workers, bad input."""
import csv
import io
import json
import math
import os
import signal
import subprocess
import sys
import time
from pathlib import Path

import numpy as np
import pytest
from click.testing import CliRunner

from probe.cli import cli
from probe.scenarios.config import load_config
from probe.errors import InputError
from probe.design.sweep import (_Partial, plan_sweep, read_sweep, sidecar_path, sweep)

EXAMPLES = Path(__file__).resolve().parent.parent / "examples"
BOX = str(EXAMPLES / "box3d_supersonic.toml")
RING = str(EXAMPLES / "ring2d_circular.toml")
GUIDE = str(EXAMPLES / "guide1d_linear.toml")
DRAG = str(EXAMPLES / "drag3d_density.toml")


def _warnings(text):
    return text.split(" | ") if text else []


def _same(a, b):
    a, b = np.asarray(a, float), np.asarray(b, float)
    return a.shape == b.shape and bool(np.all((a == b) | (np.isnan(a) & np.isnan(b))))


# ---------------------------------------------------------------------------
# agreement with point-by-point rates
# ---------------------------------------------------------------------------
def test_sweep_equals_point_by_point_probe_rates_calls():
    res = sweep(BOX, vary=[("trajectory.speed", "0.5 c_s", "3 c_s", 7)])
    runner = CliRunner()
    speeds = res.column("trajectory.speed")
    assert speeds.size == 7
    for i, v in enumerate(speeds):
        out = runner.invoke(cli, ["rates", BOX, "--json", "--set",
                                  f"trajectory.speed={float(v)!r} m/s"])
        assert out.exit_code == 0, out.output
        ref = json.loads(out.output)
        for name in ("up_rate", "down_rate", "up_rate_error", "down_rate_error",
                     "effective_temperature", "excited_population",
                     "up_threshold_speed", "sound_speed"):
            assert res.column(name)[i] == ref[name], (name, i)
        assert _warnings(res.warnings[i]) == ref["warnings"]
    # the grid itself: 0.5 .. 3 c_s evenly
    c = res.column("sound_speed")[0]
    assert np.allclose(speeds / c, np.linspace(0.5, 3, 7), rtol=1e-14, atol=0)
    assert res.column("up_rate")[0] == 0.0 and res.column("up_rate")[-1] > 0


def test_circular_grid_equals_rates_per_point():
    res = sweep(RING, vary=["trajectory.speed=0.4c_s:1.4c_s:3",
                            "trajectory.radius=2um:20um:2"])
    for i in range(res.data.shape[0]):
        v = float(res.column("trajectory.speed")[i])
        r = float(res.column("trajectory.radius")[i])
        ref = load_config(RING, [f"trajectory.speed={v!r} m/s",
                                 f"trajectory.radius={r!r} m"]).rates()
        assert res.column("up_rate")[i] == ref.up_rate
        assert res.column("down_rate")[i] == ref.down_rate
        assert res.column("harmonics")[i] == ref.harmonics
        assert _warnings(res.warnings[i]) == ref.warnings


def test_configuration_keys_rebuild_the_gas_and_c_s_speeds_follow_it():
    # condensate.density changes the gas (one scenario per value); a speed in
    # c_s is resolved with each density's own sound speed
    res = sweep(GUIDE, vary=["condensate.density=2e7 m^-1:8e7 m^-1:3",
                             "trajectory.speed=1.2c_s:2c_s:2"])
    for i in range(res.data.shape[0]):
        n = float(res.column("condensate.density")[i])
        mach = float(res.column("mach")[i])
        ref = load_config(GUIDE, [f"condensate.density={n!r} m^-1",
                                  f"trajectory.speed={mach!r} c_s"]).rates()
        assert res.column("sound_speed")[i] == pytest.approx(
            ref.sound_speed, rel=1e-15)
        assert res.column("up_rate")[i] == pytest.approx(ref.up_rate, rel=1e-12)
        assert res.column("down_rate")[i] == pytest.approx(ref.down_rate, rel=1e-12)
    c = res.grid("sound_speed")
    assert np.all(np.diff(c[:, 0]) > 0)            # denser gas, faster sound
    assert np.allclose(res.grid("mach"), [[1.2, 2.0]] * 3, rtol=1e-14)


def test_gap_is_passed_as_an_array_and_warnings_are_per_point():
    res = sweep(BOX, vary=["probe.gap=20Hz:2000Hz:5"], log=["probe.gap"])
    gaps = res.column("probe.gap")
    assert np.allclose(gaps / (2 * math.pi), np.geomspace(20, 2000, 5), rtol=1e-14)
    for i, g in enumerate(gaps):
        ref = load_config(BOX, [f"probe.gap={float(g)!r} rad/s"]).rates()
        assert res.column("up_rate")[i] == ref.up_rate
        assert res.column("up_threshold_speed")[i] == ref.up_threshold_speed
        assert _warnings(res.warnings[i]) == ref.warnings


def test_points_without_a_result_are_nan_with_the_reason():
    # phonon dispersion, point probe: the supersonic rate diverges
    res = sweep(DRAG, vary=["trajectory.speed=0.5c_s:2c_s:4"],
                overrides=['condensate.dispersion="phonon"'])
    em = res.column("emission_rate")
    assert em[0] == 0.0 and em[1] == 0.0
    assert np.isnan(em[2]) and np.isnan(em[3])
    assert res.warnings[2].startswith("no result: condensate.dispersion:")
    assert "diverges" in res.warnings[3]
    assert not res.warnings[0].startswith("no result")
    # the inputs of a point without a result are still in its row
    assert res.column("mach")[3] == pytest.approx(2.0)


# ---------------------------------------------------------------------------
# grid shape and ordering
# ---------------------------------------------------------------------------
def test_2d_grid_shape_and_ordering(tmp_path):
    out = tmp_path / "map.csv"
    res = sweep(RING, vary=["trajectory.speed=0.5c_s:1.1c_s:3",
                            "trajectory.radius=2um:8um:4"], out=out)
    assert res.shape == (3, 4)
    assert res.data.shape[0] == 12
    assert np.array_equal(res.column("point"), np.arange(12))
    speed = res.grid("trajectory.speed")
    radius = res.grid("trajectory.radius")
    assert speed.shape == radius.shape == (3, 4)
    # first key slowest: constant along rows, radius constant along columns
    assert np.all(speed == speed[:, :1]) and np.all(radius == radius[:1, :])
    c = res.column("sound_speed")[0]
    assert np.allclose(speed[:, 0] / c, [0.5, 0.8, 1.1], rtol=1e-14)
    assert np.allclose(radius[0] * 1e6, [2, 4, 6, 8], rtol=1e-14)
    rows = list(csv.reader(out.open()))[1:]
    assert [int(r[0]) for r in rows] == list(range(12))
    for r in rows:
        i, j = divmod(int(r[0]), 4)
        assert float(r[1]) == speed[i, j] and float(r[2]) == radius[i, j]


def test_grid_keeps_the_end_points_exactly():
    plan = plan_sweep(BOX, ["trajectory.speed=0.3c_s:2.9c_s:7"])
    ax = plan.axes[0]
    assert ax.values[0] == 0.3 and ax.values[-1] == 2.9 and ax.unit == "c_s"
    plan = plan_sweep(RING, ["trajectory.radius=2um:0.05mm:9"], log=["trajectory.radius"])
    ax = plan.axes[0]
    assert ax.values[0] == 2e-6 and ax.values[-1] == pytest.approx(5e-5, rel=1e-15)
    assert np.allclose(np.diff(np.log(ax.values)), math.log(25) / 8)


# ---------------------------------------------------------------------------
# CSV, sidecar
# ---------------------------------------------------------------------------
def test_csv_header_units_and_json_sidecar(tmp_path):
    out = tmp_path / "speeds.csv"
    res = sweep(BOX, vary=["trajectory.speed=0.5c_s:2c_s:4"],
                overrides=["probe.width=0.1 um"], out=out)
    header = next(csv.reader(out.open()))
    assert header[:3] == ["point [1]", "trajectory.speed [m/s]", "speed [m/s]"]
    assert "up_rate [1/s]" in header and "effective_temperature [K]" in header
    assert "density [m^-3]" in header and header[-1] == "warnings [text]"
    assert all(cell.endswith("]") and " [" in cell for cell in header)
    side = sidecar_path(out)
    assert side == tmp_path / "speeds.json"
    meta = json.loads(side.read_text())
    assert meta["version"] == "0.1.0" or meta["version"]
    for lib in ("numpy", "scipy", "pint", "python", "condensate-probe"):
        assert meta["libraries"][lib]
    assert meta["config"]["probe"]["width"] == "0.1 um"      # --set applied
    assert meta["config"]["probe"]["gap"] == "150 Hz"
    assert meta["grid"]["shape"] == [4]
    assert meta["grid"]["axes"][0]["key"] == "trajectory.speed"
    assert [c["name"] for c in meta["columns"]] == res.columns
    assert not Path(str(out) + ".partial").exists()
    back = read_sweep(out)
    assert back.columns == res.columns and back.units == res.units
    assert _same(back.data, res.data) and back.warnings == res.warnings
    assert back.shape == res.shape


# ---------------------------------------------------------------------------
# nothing lost: interrupt and resume
# ---------------------------------------------------------------------------
VARY_RING = ["trajectory.speed=0.3c_s:1.5c_s:6", "trajectory.radius=2um:10um:5"]


class Stop:
    """A progress callback that interrupts the sweep after ``after`` points."""

    def __init__(self, after):
        self.after, self.seen = after, 0

    def __call__(self, n):
        self.seen += n
        if self.seen >= self.after:
            raise KeyboardInterrupt


def test_resume_after_an_interrupt_gives_the_same_file(tmp_path):
    ref = tmp_path / "ref.csv"
    sweep(RING, VARY_RING, out=ref)
    out = tmp_path / "run.csv"
    partial = Path(str(out) + ".partial")
    with pytest.raises(KeyboardInterrupt):
        sweep(RING, VARY_RING, out=out, chunk_size=4, progress=Stop(10))
    assert not out.exists()
    kept = partial.read_text().splitlines()
    assert 10 <= len(kept) - 1 < 30
    # the interrupt cut the last row short
    with partial.open("a") as fh:
        fh.write("17,0.0012,0.00")
    res = sweep(RING, VARY_RING, out=out, resume=True, chunk_size=4)
    assert out.read_bytes() == ref.read_bytes()
    assert not partial.exists() and not Path(str(out) + ".partial.json").exists()
    assert res.meta["evaluation"]["points_resumed"] == len(kept) - 1
    assert _same(res.data, read_sweep(ref).data)


def test_an_interrupted_partial_is_not_overwritten_or_mixed(tmp_path):
    out = tmp_path / "run.csv"
    with pytest.raises(KeyboardInterrupt):
        sweep(RING, VARY_RING, out=out, chunk_size=4, progress=Stop(4))
    before = Path(str(out) + ".partial").read_bytes()
    with pytest.raises(InputError, match="--resume"):
        sweep(RING, VARY_RING, out=out)
    with pytest.raises(InputError, match="different sweep"):
        sweep(RING, ["trajectory.speed=0.3c_s:1.5c_s:7", VARY_RING[1]], out=out,
              resume=True)
    assert Path(str(out) + ".partial").read_bytes() == before
    assert not out.exists()


def test_resume_after_the_process_is_killed(tmp_path):
    """A real interrupt: the CLI process is killed (SIGKILL) mid-sweep."""
    vary = ["--vary", "trajectory.speed=0.3c_s:1.2c_s:30",
            "--vary", "trajectory.radius=2um:6um:24"]
    ref = tmp_path / "ref.csv"
    sweep(RING, [v for v in vary if v != "--vary"], out=ref)
    out = tmp_path / "killed.csv"
    partial = Path(str(out) + ".partial")
    exe = [sys.executable, "-c", "import sys; from probe.cli import main; sys.exit(main())"]
    proc = subprocess.Popen(exe + ["sweep", RING, *vary, "--out", str(out)],
                            stdout=subprocess.DEVNULL, stderr=subprocess.PIPE)
    deadline = time.monotonic() + 60
    rows = 0
    while time.monotonic() < deadline and proc.poll() is None:
        if partial.exists():
            rows = partial.read_bytes().count(b"\n") - 1
            if rows >= 32:
                break
        time.sleep(0.005)
    if proc.poll() is not None:
        pytest.fail("the sweep ended before it could be interrupted: "
                    + proc.stderr.read().decode())
    proc.send_signal(signal.SIGKILL)
    proc.wait()
    proc.stderr.close()
    assert not out.exists() and partial.exists()
    assert 32 <= partial.read_bytes().count(b"\n") - 1 < 720
    done = subprocess.run(exe + ["sweep", RING, *vary, "--out", str(out), "--resume"],
                          capture_output=True, text=True, timeout=120)
    assert done.returncode == 0, done.stderr
    assert "resumed:" in done.stdout
    assert out.read_bytes() == ref.read_bytes()


def test_ctrl_c_keeps_the_rows_and_says_how_to_resume(tmp_path):
    # (a grid large enough that it cannot end between the check below and the
    # signal on a busy machine: 2,880 points, interrupted after 40 rows)
    vary = ["--vary", "trajectory.speed=0.3c_s:1.2c_s:60",
            "--vary", "trajectory.radius=2um:6um:48"]
    out = tmp_path / "int.csv"
    partial = Path(str(out) + ".partial")
    exe = [sys.executable, "-c", "import sys; from probe.cli import main; sys.exit(main())"]
    proc = subprocess.Popen(exe + ["sweep", RING, *vary, "--out", str(out)],
                            stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True)
    deadline = time.monotonic() + 60
    while time.monotonic() < deadline and proc.poll() is None:
        if partial.exists() and partial.read_bytes().count(b"\n") > 40:
            break
        time.sleep(0.005)
    assert proc.poll() is None, "the sweep ended before it could be interrupted"
    proc.send_signal(signal.SIGINT)
    stdout, stderr = proc.communicate(timeout=60)
    assert proc.returncode == 130
    assert "interrupted: finished rows are kept in" in stderr and "--resume" in stderr
    assert "Traceback" not in stderr
    assert not out.exists() and partial.read_bytes().count(b"\n") > 40


# ---------------------------------------------------------------------------
# local worker processes
# ---------------------------------------------------------------------------
def test_workers_give_the_same_numbers(tmp_path):
    one = sweep(RING, VARY_RING, out=tmp_path / "one.csv")
    two = sweep(RING, VARY_RING, out=tmp_path / "two.csv", workers=2, chunk_size=3)
    assert _same(one.data, two.data) and one.warnings == two.warnings
    assert (tmp_path / "one.csv").read_bytes() == (tmp_path / "two.csv").read_bytes()
    assert two.meta["evaluation"]["workers"] == 2


@pytest.mark.parametrize("forked_here", [True, False])
def test_workers_by_either_start_give_the_same_file(tmp_path, monkeypatch, forked_here):
    """Workers forked from this process (Linux) and workers from a fork
    server (elsewhere, or while other threads run) write the same bytes."""
    from probe.design import workers
    if forked_here and not sys.platform.startswith("linux"):
        pytest.skip("workers are forked from the sweep's process on Linux only")
    monkeypatch.setattr(workers, "_forking_is_safe", lambda: forked_here)
    assert workers.worker_context().get_start_method() == ("fork" if forked_here else
                                                           "forkserver")
    one = tmp_path / "one.csv"
    sweep(RING, VARY_RING, out=one)
    two = sweep(RING, VARY_RING, out=tmp_path / "two.csv", workers=2, chunk_size=3)
    assert one.read_bytes() == (tmp_path / "two.csv").read_bytes()
    assert two.meta["evaluation"]["workers"] == 2


def _worker_refuses(monkeypatch, error):
    """Workers forked from this process whose every task raises ``error``
    (after telling this process, which waits for that before computing, so
    that a worker surely meets one)."""
    import multiprocessing
    from probe.design import workers
    from probe.design.sweep import runners
    if not sys.platform.startswith("linux"):
        pytest.skip("workers are forked from the sweep's process on Linux only")
    monkeypatch.setattr(workers, "_forking_is_safe", lambda: True)
    here, real = os.getpid(), runners.run_task
    met = multiprocessing.get_context("fork").Event()

    def run(task):
        if os.getpid() != here:
            met.set()
            raise error
        assert met.wait(120), "no worker began a task"
        return real(task)
    monkeypatch.setattr(runners, "run_task", run)


def test_bad_input_met_by_a_worker_ends_the_sweep_as_here(tmp_path, monkeypatch):
    """An error of the input that a worker meets reaches the caller as it
    is, and the partial file is removed (as when this process meets it)."""
    _worker_refuses(monkeypatch, InputError("probe.gap", "refused in a worker"))
    with pytest.raises(InputError, match="refused in a worker") as err:
        sweep(RING, VARY_RING, out=tmp_path / "o.csv", workers=2, chunk_size=3)
    assert err.value.key == "probe.gap"
    assert sorted(p.name for p in tmp_path.iterdir()) == []


def test_a_worker_of_other_columns_stops_the_sweep_keeping_the_rows(tmp_path, monkeypatch):
    from probe.design.sweep.runners import OtherColumns
    _worker_refuses(monkeypatch, OtherColumns("a worker computed rows of 3 numbers"))
    with pytest.raises(InputError, match="a worker computed rows of 3 numbers.*--resume") \
            as err:
        sweep(RING, VARY_RING, out=tmp_path / "o.csv", workers=2, chunk_size=3)
    assert err.value.key == "--workers"
    assert sorted(p.name for p in tmp_path.iterdir()) == ["o.csv.partial",
                                                          "o.csv.partial.json"]


def test_rows_out_of_order_are_put_in_place_by_whole_blocks_or_one_by_one():
    from probe.design.sweep.files import _block_spans
    # blocks (first point, last point, start, end) of 30 characters of rows
    blocks = [(6, 9, 0, 10), (0, 2, 10, 20), (3, 5, 20, 30)]
    assert _block_spans(blocks, 30) == [(10, 20), (20, 30), (0, 10)]
    assert _block_spans(blocks, 31) is None                       # rows not in a block
    assert _block_spans(blocks + [None], 30) is None              # a block out of order
    assert _block_spans([(0, 4, 0, 10), (3, 5, 10, 20)], 20) is None   # interleaved
    assert _block_spans([], 0) is None


def test_forking_is_refused_while_another_thread_works():
    import threading
    from probe.design import workers
    stop = threading.Event()
    other = threading.Thread(target=stop.wait)           # not a daemon: may hold locks
    other.start()
    try:
        assert not workers._forking_is_safe()
        assert workers.worker_context().get_start_method() != "fork"
    finally:
        stop.set()
        other.join()


# ---------------------------------------------------------------------------
# command line
# ---------------------------------------------------------------------------
def test_cli_sweep_writes_the_table(tmp_path):
    out = tmp_path / "s.csv"
    r = CliRunner().invoke(cli, ["sweep", BOX, "--vary", "trajectory.speed=0.5c_s:3c_s:11",
                                 "--out", str(out), "--set", "probe.gap=200 Hz"])
    assert r.exit_code == 0, r.output
    assert f"wrote {out} (11 points, 17 columns)" in r.output
    res = read_sweep(out)
    assert res.data.shape[0] == 11
    assert res.column("gap")[0] == pytest.approx(2 * math.pi * 200, rel=1e-15)
    meta = json.loads(sidecar_path(out).read_text())
    assert meta["command"].startswith("probe ")


@pytest.mark.parametrize("args, expected", [
    (["--vary", "trajectory.speed=0.5c_s:3c_s"], "error: --vary: "),
    (["--vary", "trajectory.sped=0.5c_s:3c_s:5"], "did you mean 'speed'"),
    (["--vary", "trajectory.kind=1:2:3"], "error: trajectory.kind: is not a numeric key"),
    (["--vary", "trajectory.speed=2kg:3kg:4"], "error: trajectory.speed: '2kg' has units"),
    (["--vary", "trajectory.speed=0c_s:3c_s:4", "--log", "trajectory.speed"],
     "--log needs START and STOP > 0"),
    (["--vary", "trajectory.speed=1c_s:3c_s:4.5"], "NUM must be a whole number"),
    (["--vary", "trajectory.speed=1c_s:3c_s:0"], "NUM must be at least 1"),
    (["--vary", "trajectory.speed=1c_s:3mm/s:4"], "both in c_s or both in speed units"),
    (["--vary", "trajectory.speed=1c_s:3c_s:4", "--vary", "trajectory.speed=1c_s:2c_s:3"],
     "given twice"),
    (["--vary", "trajectory.radius=1um:3um:4"], "error: trajectory.radius: not used"),
    (["--vary", "probe.gap=-1Hz:3Hz:4"], "error: probe.gap: must be finite and > 0"),
    (["--vary", "trajectory.speed=1c_s:3c_s:4", "--log", "probe.gap"],
     "error: --log: 'probe.gap' is not a varied key"),
    (["--vary", "trajectory.speed=1c_s:3c_s:4", "--workers", "0"], "error: --workers:"),
    (["--vary", "trajectory.speed=1c_s:3c_s:4", "--plot", "x.jpg"], "error: --plot:"),
    (["--vary", "trajectory.speed=1c_s:3c_s:4", "--set", "probe.gapp=1 Hz"],
     "did you mean 'gap'"),
])
def test_cli_bad_input_exit_2_one_line_no_files(tmp_path, args, expected):
    out = tmp_path / "bad.csv"
    r = CliRunner().invoke(cli, ["sweep", BOX, *args, "--out", str(out)])
    assert r.exit_code == 2, r.output
    assert expected in r.output
    assert "Traceback" not in r.output
    assert [ln for ln in r.output.splitlines() if ln.startswith("error:")].__len__() == 1
    assert list(tmp_path.iterdir()) == []


def test_cli_missing_output_directory(tmp_path):
    r = CliRunner().invoke(cli, ["sweep", BOX, "--vary", "trajectory.speed=1c_s:2c_s:2",
                                 "--out", str(tmp_path / "nowhere" / "x.csv")])
    assert r.exit_code == 2 and "error: --out: directory" in r.output


def test_progress_bar_only_on_a_terminal(monkeypatch):
    from probe.cli import design as design_cli

    class Terminal(io.StringIO):
        def isatty(self):
            return True

    class Pipe(io.StringIO):
        def isatty(self):
            return False

    for stream, shown in ((Terminal(), True), (Pipe(), False)):
        monkeypatch.setattr(sys, "stderr", stream)
        bar = design_cli._Progress(20, "sweep")
        for _ in range(4):
            bar(5)
        bar.close()
        assert ("sweep" in stream.getvalue()) is shown
        assert ("20/20" in stream.getvalue()) is shown


def test_partial_header_checked_on_resume(tmp_path):
    out = tmp_path / "run.csv"
    with pytest.raises(KeyboardInterrupt):
        sweep(BOX, ["trajectory.speed=0.5c_s:3c_s:40"], out=out, chunk_size=5,
              progress=Stop(5))
    partial = Path(str(out) + ".partial")
    text = partial.read_text().splitlines(keepends=True)
    partial.write_text("x [1]\n" + "".join(text[1:]))
    plan = plan_sweep(BOX, ["trajectory.speed=0.5c_s:3c_s:40"])
    p = _Partial(out, plan, resume=True)
    with pytest.raises(InputError, match="header"):
        p.open()
    assert os.path.exists(partial)


# ---------------------------------------------------------------------------
# finite transits: probabilities instead of rates
# ---------------------------------------------------------------------------
CROSS = EXAMPLES / "cross3d_gaussian.toml"


def _transit_scenarios():
    from probe.scenarios.config import Scenario
    if not hasattr(Scenario, "is_transit") or not CROSS.exists():
        pytest.skip("scenario files do not describe switched transits here")


def test_a_transit_sweep_gives_the_probabilities_of_each_transit(tmp_path):
    _transit_scenarios()
    out = tmp_path / "transit.csv"
    res = sweep(str(CROSS), ["trajectory.switching_width=1ms:2ms:2",
                             "trajectory.speed=1.2c_s:1.8c_s:2"], out=out)
    assert "up_probability" in res.columns and "up_rate" not in res.columns
    assert res.unit("trajectory.switching_width") == "s"
    for i in range(4):
        tau = float(res.column("trajectory.switching_width")[i])
        mach = float(res.column("trajectory.speed")[i] / res.column("sound_speed")[i])
        ref = load_config(str(CROSS), [f"trajectory.switching_width={tau!r} s",
                                       f"trajectory.speed={mach!r} c_s"]).transit()
        assert res.column("up_probability")[i] == ref.up_probability
        assert res.column("down_probability")[i] == ref.down_probability
        assert _warnings(res.warnings[i]) == ref.warnings
    # a longer pulse gives the probe more time: larger probabilities
    p = res.grid("down_probability")
    assert np.all(p[1] > p[0])
    header = next(csv.reader(out.open()))
    assert "up_probability [1]" in header and "trajectory.switching_width [s]" in header


def test_a_spline_transit_reads_its_waypoint_file_from_any_folder(tmp_path, monkeypatch):
    _transit_scenarios()
    spline = EXAMPLES / "transits" / "stir2d_spline.toml"
    if not spline.exists():
        pytest.skip("no spline scenario here")
    monkeypatch.chdir(tmp_path)              # the waypoint file is relative to the scenario
    res = sweep(str(spline), ["probe.gap=50Hz:100Hz:2"], workers=2)
    for i, g in enumerate(res.column("probe.gap")):
        ref = load_config(str(spline), [f"probe.gap={float(g)!r} rad/s"]).transit()
        assert res.column("up_probability")[i] == ref.up_probability


def test_resume_without_an_interrupted_run_says_so(tmp_path):
    out = tmp_path / "r.csv"
    r = CliRunner().invoke(cli, ["sweep", BOX, "--vary", "trajectory.speed=0.5c_s:3c_s:3",
                                 "--out", str(out), "--resume"])
    assert r.exit_code == 0, r.output
    assert f"resumed: no interrupted run was found ({out}.partial)" in r.output
    plain = CliRunner().invoke(cli, ["sweep", BOX, "--vary", "trajectory.speed=0.5c_s:3c_s:3",
                                     "--out", str(tmp_path / "p.csv")])
    assert "resumed" not in plain.output
    assert out.read_bytes() == (tmp_path / "p.csv").read_bytes()


def test_a_component_swept_keeps_the_others_as_written():
    """--vary trajectory.start[0] on a start written as one string keeps its
    other components (the vector as written, the same reading as --set);
    an absent start begins at the origin with a component per dimension."""
    from probe.design.sweep.keys import assign
    raw = {"condensate": {"dimension": 3}, "trajectory": {"start": "(3, 2, 1) um"}}
    out = assign(raw, {"trajectory.start[0]": "5 um"})
    assert out["trajectory"]["start"] == ["5 um", "(2) um", "(1) um"]
    assert raw["trajectory"]["start"] == "(3, 2, 1) um"
    out = assign({"condensate": {"dimension": 2}, "trajectory": {}},
                 {"trajectory.start[1]": "4 um"}, dimension=2)
    assert out["trajectory"]["start"] == ["0 m", "4 um"]
