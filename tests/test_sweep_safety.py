"""A sweep loses nothing and never mixes results: the plan covers the files
the scenario reads, the tasks carry them, one run at a time writes a partial
file, and local worker processes end with the sweep's process however it
ends (SIGKILL, SIGTERM), leaving a partial file that --resume completes to
the file of an uninterrupted run.

The process helpers here (CLI runs, the processes below one, waiting for
rows) serve tests/test_dask.py and tests/test_campaign.py too."""
import csv
import io
import json
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
from probe.design.sweep import plan_sweep, sweep
from probe.design.sweep.files import SweepLock
from probe.design.sweep.runners import _scenario, make_tasks, run_task
from probe.errors import InputError
from probe.scenarios.config import load_config

EXAMPLES = Path(__file__).resolve().parent.parent / "examples"
RING = str(EXAMPLES / "ring2d_circular.toml")

#: the command line in a fresh interpreter
EXE = [sys.executable, "-c", "import sys; from probe.cli import main; sys.exit(main())"]

#: a short 1D spline transit (about 0.1 s a point) through waypoints in a file
SPLINE = """[condensate]
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
file = "path.csv"
order = 3

[numerics]
transit_rtol = 1e-2
"""
PATH_A = "t [ms], x [um]\n0, 0\n0.2, 0.5\n0.4, 1.5\n0.6, 2\n"
PATH_B = "t [ms], x [um]\n0, 0\n0.2, 1.0\n0.4, 1.2\n0.6, 3\n"
GAPS = ["probe.gap=60Hz:200Hz:5"]


# ---------------------------------------------------------------------------
# helpers (also used by test_dask.py and test_campaign.py)
# ---------------------------------------------------------------------------
def spline_folder(folder, path_text=PATH_A):
    """A scenario file and its waypoint file in ``folder``."""
    folder = Path(folder)
    folder.mkdir(parents=True, exist_ok=True)
    (folder / "s.toml").write_text(SPLINE)
    (folder / "path.csv").write_text(path_text)
    return folder / "s.toml"


def cli_args(config, vary, out, *extra):
    args = ["sweep", str(config)]
    for v in vary:
        args += ["--vary", v]
    return args + ["--out", str(out), *extra]


def start_cli(args, cwd=None):
    return subprocess.Popen(EXE + list(args), cwd=cwd, stdout=subprocess.PIPE,
                            stderr=subprocess.PIPE, text=True)


def rows_in(partial):
    try:
        return max(0, Path(partial).read_bytes().count(b"\n") - 1)
    except OSError:
        return 0


def wait_for(condition, proc=None, timeout=120, what="a condition"):
    """Poll ``condition()`` until true; fail if ``proc`` ends first."""
    deadline = time.monotonic() + timeout
    while time.monotonic() < deadline:
        if condition():
            return
        if proc is not None and proc.poll() is not None:
            pytest.fail(f"the process ended before {what}: " + proc.stderr.read())
        time.sleep(0.01)
    pytest.fail(f"no {what} after {timeout} s")


def process_table():
    """{pid: parent pid} of the machine's processes (from /proc)."""
    table = {}
    for entry in os.listdir("/proc"):
        if entry.isdigit():
            try:
                with open(f"/proc/{entry}/stat") as fh:
                    stat = fh.read()
            except OSError:
                continue
            fields = stat[stat.rindex(")") + 2:].split()
            if fields[0] != "Z":                        # zombies have ended
                table[int(entry)] = int(fields[1])
    return table


def descendants(pid):
    """The processes started below ``pid`` (children, grandchildren ...)."""
    table = process_table()
    found, frontier = set(), {pid}
    while frontier:
        frontier = {p for p, pp in table.items() if pp in frontier} - found
        found |= frontier
    return found


def alive(pids):
    table = process_table()
    return {p for p in pids if p in table}


def wait_gone(pids, timeout=10.0):
    """The processes of ``pids`` still alive after ``timeout`` seconds."""
    deadline = time.monotonic() + timeout
    while alive(pids) and time.monotonic() < deadline:
        time.sleep(0.05)
    return alive(pids)


class RemoteCluster:
    """A Dask scheduler and one single-threaded worker (no nanny), each a
    process of its own on 127.0.0.1; the worker runs in ``worker_cwd``."""

    def __init__(self, folder, worker_cwd=None):
        folder.mkdir(parents=True, exist_ok=True)
        info = folder / f"scheduler-{time.monotonic_ns()}.json"
        quiet = dict(stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
        self.scheduler = subprocess.Popen(
            [sys.executable, "-m", "distributed.cli.dask_scheduler", "--host", "127.0.0.1",
             "--port", "0", "--no-dashboard", "--scheduler-file", str(info)], **quiet)
        wait_for(info.exists, timeout=60, what="the scheduler's address")
        time.sleep(0.2)
        self.address = json.loads(info.read_text())["address"]
        worker_cwd = worker_cwd or folder
        self.worker = subprocess.Popen(
            [sys.executable, "-m", "distributed.cli.dask_worker", self.address,
             "--nthreads", "1", "--no-nanny", "--no-dashboard", "--host", "127.0.0.1",
             "--local-directory", str(folder / "scratch")], cwd=worker_cwd, **quiet)
        import distributed

        with distributed.Client(self.address, timeout="60s") as client:
            client.wait_for_workers(1, timeout=120)

    def processes(self):
        return {self.scheduler.pid, self.worker.pid}

    def close(self):
        for proc in (self.worker, self.scheduler):
            if proc.poll() is None:
                proc.terminate()
        for proc in (self.worker, self.scheduler):
            try:
                proc.wait(timeout=5)
            except subprocess.TimeoutExpired:
                proc.kill()
                proc.wait()


def check_table(path, size):
    """The rows of a finished sweep: whole, each point once, in order."""
    rows = list(csv.reader(io.StringIO(Path(path).read_text())))
    ids = [int(r[0]) for r in rows[1:]]
    assert ids == list(range(size)), "points missing, repeated or out of order"
    assert {len(r) for r in rows} == {len(rows[0])}, "a torn row"


def leftovers(folder, keep):
    """Files in ``folder`` other than ``keep``."""
    return sorted(p.name for p in Path(folder).iterdir() if p.name not in keep)


class Stop:
    """A progress callback that interrupts the sweep after ``after`` points."""

    def __init__(self, after):
        self.after, self.seen = after, 0

    def __call__(self, n):
        self.seen += n
        if self.seen >= self.after:
            raise KeyboardInterrupt


def _refused(result, key):
    assert result.exit_code == 2, result.output
    lines = result.stderr.strip().splitlines()
    assert len(lines) == 1 and lines[0].startswith(f"error: {key}: "), result.stderr
    return lines[0]


# ---------------------------------------------------------------------------
# the files a scenario reads
# ---------------------------------------------------------------------------
def test_resume_refuses_a_waypoint_file_that_changed(tmp_path):
    config = spline_folder(tmp_path / "scn")
    ref = tmp_path / "ref.csv"
    sweep(str(config), GAPS, out=ref)
    out = tmp_path / "run.csv"
    partial = Path(str(out) + ".partial")
    with pytest.raises(KeyboardInterrupt):
        sweep(str(config), GAPS, out=out, chunk_size=1, progress=Stop(2))
    kept = partial.read_bytes()
    assert rows_in(partial) >= 2
    (tmp_path / "scn" / "path.csv").write_text(PATH_B)
    r = CliRunner().invoke(cli, cli_args(config, GAPS, out, "--resume"))
    line = _refused(r, "--resume")
    assert "'path.csv'" in line and "changed" in line
    assert partial.read_bytes() == kept and not out.exists()
    # the file as it was: the sweep continues to the uninterrupted result
    (tmp_path / "scn" / "path.csv").write_text(PATH_A)
    r = CliRunner().invoke(cli, cli_args(config, GAPS, out, "--resume"))
    assert r.exit_code == 0, r.output
    assert out.read_bytes() == ref.read_bytes()


def test_a_changed_waypoint_file_is_read_again(tmp_path):
    config = spline_folder(tmp_path)
    first = sweep(str(config), ["probe.gap=100Hz:100Hz:1"])
    (tmp_path / "path.csv").write_text(PATH_B)
    second = sweep(str(config), ["probe.gap=100Hz:100Hz:1"])
    # reference: the scenario read afresh and its one transit
    ref = load_config(str(config)).transit()
    assert second.column("up_probability")[0] == ref.up_probability
    assert first.column("up_probability")[0] != ref.up_probability


def test_tasks_carry_the_waypoint_file(tmp_path, monkeypatch):
    """A task computed where a relative path names another file (a worker's
    own working folder) gives the numbers of the planned file."""
    spline_folder(tmp_path / "a", PATH_A)
    spline_folder(tmp_path / "b", PATH_B)
    monkeypatch.chdir(tmp_path / "a")
    plan = plan_sweep("s.toml", GAPS)
    tasks = make_tasks(plan, np.arange(plan.size), 2)
    here = [run_task(t) for t in tasks]
    monkeypatch.chdir(tmp_path / "b")
    _scenario.cache_clear()
    there = [run_task(t) for t in tasks]
    for (ia, ra, wa), (ib, rb, wb) in zip(sum(here, []), sum(there, [])):
        assert np.array_equal(ia, ib) and np.array_equal(ra, rb) and wa == wb
    # and they are the numbers of the scenario in folder a (read afresh)
    monkeypatch.chdir(tmp_path / "a")
    ref = load_config("s.toml", [f"probe.gap={float(plan.axes[0].values[0])!r} rad/s"]).transit()
    col = plan.columns.index("up_probability")
    assert here[0][0][1][0, col] == ref.up_probability


# ---------------------------------------------------------------------------
# one run at a time
# ---------------------------------------------------------------------------
def test_a_held_lock_refuses_a_second_run(tmp_path):
    out = tmp_path / "o.csv"
    held = SweepLock(out)
    held.acquire()
    try:
        with pytest.raises(InputError, match=f"process {os.getpid()}, still running"):
            sweep(RING, ["trajectory.speed=0.5c_s:1c_s:3"], out=out)
        r = CliRunner().invoke(cli, cli_args(RING, ["trajectory.speed=0.5c_s:1c_s:3"], out,
                                             "--resume"))
        line = _refused(r, "--out")
        assert f"--out: {out} is being written" in line and f"process {os.getpid()}" in line
    finally:
        held.release()
    assert leftovers(tmp_path, ()) == []
    sweep(RING, ["trajectory.speed=0.5c_s:1c_s:3"], out=out)
    assert leftovers(tmp_path, ("o.csv", "o.json")) == []


def test_a_second_resume_while_the_first_runs_is_refused(tmp_path):
    vary = ["trajectory.speed=0.3c_s:1.2c_s:24", "trajectory.radius=2um:6um:20"]
    ref = tmp_path / "ref.csv"
    sweep(RING, vary, out=ref)
    out = tmp_path / "o.csv"
    partial = Path(str(out) + ".partial")
    first = start_cli(cli_args(RING, vary, out))
    try:
        wait_for(lambda: rows_in(partial) >= 1, first, what="the first rows")
        first.send_signal(signal.SIGSTOP)             # still running, holding the file
        assert first.poll() is None, "the first run ended before the second started"
        before = partial.read_bytes()
        for extra in (["--resume"], []):
            r = CliRunner().invoke(cli, cli_args(RING, vary, out, *extra))
            line = _refused(r, "--out")
            assert f"--out: {out} is being written" in line and f"process {first.pid}" in line
        assert partial.read_bytes() == before
    finally:
        first.send_signal(signal.SIGCONT)
    _, err = first.communicate(timeout=120)
    assert first.returncode == 0, err
    assert out.read_bytes() == ref.read_bytes()
    assert leftovers(tmp_path, ("ref.csv", "ref.json", "o.csv", "o.json")) == []


# ---------------------------------------------------------------------------
# local worker processes end with the sweep
# ---------------------------------------------------------------------------
#: a grid of a few seconds (large radii: many harmonics), so that the pool of
#: workers starts before the sweep is over even on a quiet machine
VARY_WORKERS = ["trajectory.speed=0.3c_s:1.6c_s:40", "trajectory.radius=20um:200um:30"]


@pytest.fixture(scope="module")
def workers_reference(tmp_path_factory):
    ref = tmp_path_factory.mktemp("ref") / "ref.csv"
    sweep(RING, VARY_WORKERS, out=ref)
    return ref.read_bytes()


def _is_fork_server(pid):
    try:
        with open(f"/proc/{pid}/cmdline", "rb") as fh:
            return b"forkserver" in fh.read()
    except OSError:
        return False


def worker_processes(proc):
    """The sweep's worker processes: forked from it (its children) or from
    a fork server (its grandchildren); not the fork server itself."""
    return [p for p in descendants(proc.pid) if not _is_fork_server(p)]


def _pool_started(proc):
    """True once the sweep's process has a worker process."""
    return bool(worker_processes(proc))


@pytest.mark.parametrize("sig", [signal.SIGKILL, signal.SIGTERM])
def test_workers_end_with_the_sweep_and_resume_completes(sig, tmp_path, workers_reference):
    out = tmp_path / "o.csv"
    partial = Path(str(out) + ".partial")
    proc = start_cli(cli_args(RING, VARY_WORKERS, out, "--workers", "2"))
    wait_for(lambda: rows_in(partial) >= 1 and _pool_started(proc), proc,
             what="rows and worker processes")
    below = descendants(proc.pid)
    proc.send_signal(sig)
    _, err = proc.communicate(timeout=60)
    if sig == signal.SIGTERM:
        assert proc.returncode == 128 + signal.SIGTERM, err     # 143, as a shell reports it
        assert err.strip().splitlines() == [
            f"interrupted: finished rows are kept in {out}.partial; run the same "
            "command with --resume to continue"]
    assert wait_gone(below) == set(), "worker processes outlived the sweep"
    assert partial.exists() and not out.exists()
    done = subprocess.run(EXE + cli_args(RING, VARY_WORKERS, out, "--resume", "--workers",
                                         "2"), capture_output=True, text=True, timeout=300)
    assert done.returncode == 0, done.stderr
    assert out.read_bytes() == workers_reference
    assert leftovers(tmp_path, ("o.csv", "o.json")) == []


def test_a_killed_worker_keeps_the_rows(tmp_path, workers_reference):
    out = tmp_path / "o.csv"
    partial = Path(str(out) + ".partial")
    proc = start_cli(cli_args(RING, VARY_WORKERS, out, "--workers", "2"))
    wait_for(lambda: rows_in(partial) >= 1 and _pool_started(proc), proc,
             what="rows and worker processes")
    workers = worker_processes(proc)
    if not workers:
        proc.kill()
        pytest.skip("no worker process here")
    for p in workers:
        os.kill(p, signal.SIGKILL)
    _, err = proc.communicate(timeout=60)
    if proc.returncode == 0:               # the parent had finished the last tasks
        assert out.read_bytes() == workers_reference
        return
    assert proc.returncode == 2, err
    line = err.strip().splitlines()
    assert len(line) == 1 and line[0].startswith("error: --workers: ") and \
        "--resume" in line[0], err
    done = subprocess.run(EXE + cli_args(RING, VARY_WORKERS, out, "--resume"),
                          capture_output=True, text=True, timeout=300)
    assert done.returncode == 0, done.stderr
    assert out.read_bytes() == workers_reference


# ---------------------------------------------------------------------------
# the same digits however the grid is split
# ---------------------------------------------------------------------------
STRAIGHT_2D = """[condensate]
dimension = 2
species = "23Na"
density = "3e13 m^-2"
scattering_length = "2.75 nm"
transverse_frequency = "1.5 kHz"

[probe]
gap = "100 Hz"
coupling_length = "2 nm"
width = "0.3 um"

[trajectory]
kind = "linear"
speed = "1.5 c_s"
"""


def test_straight_motion_is_the_same_with_two_workers_and_after_resume(tmp_path):
    """The straight-motion engine evaluates an array of points at once (its
    error estimates may depend on the array's other points in the last
    digits): pieces of the grid are fixed, so two workers and a resumed run
    write the bytes of one uninterrupted run."""
    config = tmp_path / "s.toml"
    config.write_text(STRAIGHT_2D)
    vary = ["probe.gap=40Hz:300Hz:30", "trajectory.speed=0.3c_s:2.5c_s:20"]
    sweep(str(config), vary, out=tmp_path / "ref.csv")
    ref = (tmp_path / "ref.csv").read_bytes()
    sweep(str(config), vary, out=tmp_path / "two.csv", workers=2)
    assert (tmp_path / "two.csv").read_bytes() == ref
    out = tmp_path / "run.csv"
    with pytest.raises(KeyboardInterrupt):
        sweep(str(config), vary, out=out, progress=Stop(1))
    assert 0 < rows_in(str(out) + ".partial") < 600
    sweep(str(config), vary, out=out, resume=True, workers=2)
    assert out.read_bytes() == ref
