"""The same sweep on a Dask distributed cluster: an in-process local cluster
on the loopback interface, results identical to the local run."""
from pathlib import Path

import numpy as np
import pytest
from click.testing import CliRunner

distributed = pytest.importorskip("distributed")

from probe.cli import cli  # noqa: E402
from probe.design.sweep import read_sweep, sweep  # noqa: E402

EXAMPLES = Path(__file__).resolve().parent.parent / "examples"
RING = str(EXAMPLES / "ring2d_circular.toml")
DRAG = str(EXAMPLES / "drag3d_density.toml")
VARY = ["trajectory.speed=0.3c_s:1.5c_s:6", "trajectory.radius=2um:10um:5"]


@pytest.fixture(scope="module")
def cluster():
    with distributed.LocalCluster(n_workers=1, threads_per_worker=2, processes=False,
                                  host="127.0.0.1", protocol="tcp",
                                  dashboard_address=None) as c:
        yield c


def test_dask_and_local_results_are_identical(cluster, tmp_path):
    assert cluster.scheduler_address.startswith("tcp://127.0.0.1:")
    local = sweep(RING, VARY, out=tmp_path / "local.csv")
    remote = sweep(RING, VARY, out=tmp_path / "dask.csv",
                   scheduler=cluster.scheduler_address, chunk_size=4)
    assert (tmp_path / "local.csv").read_bytes() == (tmp_path / "dask.csv").read_bytes()
    assert np.array_equal(local.data, remote.data) and local.warnings == remote.warnings
    assert remote.meta["evaluation"]["scheduler"] == cluster.scheduler_address
    assert remote.meta["libraries"]["distributed"]


def test_dask_from_the_command_line_with_configuration_keys(cluster, tmp_path):
    # a configuration key (one scenario per density) and points without a
    # result go through the cluster too
    args = ["sweep", DRAG, "--vary", "condensate.density=5e19 m^-3:2e20 m^-3:3",
            "--vary", "trajectory.speed=0.5c_s:2c_s:4", "--set",
            'condensate.dispersion="phonon"']
    r = CliRunner().invoke(cli, [*args, "--out", str(tmp_path / "d.csv"),
                                 "--scheduler", cluster.scheduler_address])
    assert r.exit_code == 0, r.output
    r = CliRunner().invoke(cli, [*args, "--out", str(tmp_path / "l.csv")])
    assert r.exit_code == 0, r.output
    assert (tmp_path / "d.csv").read_bytes() == (tmp_path / "l.csv").read_bytes()
    res = read_sweep(tmp_path / "d.csv")
    assert sum(w.startswith("no result") for w in res.warnings) == 6


def test_scheduler_and_workers_exclude_each_other(cluster, tmp_path):
    r = CliRunner().invoke(cli, ["sweep", RING, "--vary", VARY[0], "--out",
                                 str(tmp_path / "x.csv"),
                                 "--scheduler", cluster.scheduler_address,
                                 "--workers", "2"])
    assert r.exit_code == 2 and "error: --workers: not used with --scheduler" in r.output
    assert list(tmp_path.iterdir()) == []


# ---------------------------------------------------------------------------
# a scheduler and a worker in processes of their own
# ---------------------------------------------------------------------------
import os  # noqa: E402
import signal  # noqa: E402
import subprocess  # noqa: E402
import sys  # noqa: E402
import time  # noqa: E402

import test_sweep_safety as safety  # noqa: E402

VARY_MAP = ["trajectory.speed=0.3c_s:1.6c_s:40", "trajectory.radius=2um:8um:30"]


RemoteCluster = safety.RemoteCluster


@pytest.fixture(scope="module")
def map_reference(tmp_path_factory):
    ref = tmp_path_factory.mktemp("ref") / "ref.csv"
    sweep(RING, VARY_MAP, out=ref)
    return ref.read_bytes()


def test_a_worker_in_another_folder_uses_the_planned_waypoint_file(tmp_path):
    """The worker's own folder holds another path.csv: the numbers are those
    of the file beside the scenario, read once by the planning process."""
    config = safety.spline_folder(tmp_path / "a", safety.PATH_A)
    safety.spline_folder(tmp_path / "b", safety.PATH_B)
    cluster = RemoteCluster(tmp_path / "cluster", worker_cwd=tmp_path / "b")
    try:
        args = safety.cli_args("s.toml", safety.GAPS, "remote.csv", "--scheduler",
                               cluster.address)
        done = subprocess.run(safety.EXE + args, cwd=config.parent, capture_output=True,
                              text=True, timeout=300)
        assert done.returncode == 0, done.stderr
    finally:
        cluster.close()
    sweep(str(config), safety.GAPS, out=tmp_path / "local.csv")
    assert (config.parent / "remote.csv").read_bytes() == \
        (tmp_path / "local.csv").read_bytes()


def _stopped_run(tmp_path, stop):
    """A CLI sweep on a cluster of its own, stopped by ``stop(proc,
    cluster)`` after its first rows; returns (proc, stderr, out)."""
    out = tmp_path / "out" / "map.csv"
    out.parent.mkdir()
    cluster = RemoteCluster(tmp_path / "c1")
    try:
        proc = safety.start_cli(safety.cli_args(RING, VARY_MAP, out, "--scheduler",
                                                cluster.address))
        safety.wait_for(lambda: safety.rows_in(str(out) + ".partial") >= 1, proc,
                        what="the first rows")
        t0 = time.monotonic()
        stop(proc, cluster)
        _, err = proc.communicate(timeout=120)
        assert time.monotonic() - t0 < 60
    finally:
        cluster.close()
    return proc, err, out


def _resume_on_a_new_cluster(tmp_path, out, reference):
    cluster = RemoteCluster(tmp_path / "c2")
    try:
        done = subprocess.run(safety.EXE + safety.cli_args(
            RING, VARY_MAP, out, "--resume", "--scheduler", cluster.address),
            capture_output=True, text=True, timeout=300)
    finally:
        cluster.close()
    assert done.returncode == 0, done.stderr
    assert "resumed:" in done.stdout
    assert out.read_bytes() == reference
    assert safety.leftovers(out.parent, ("map.csv", "map.json")) == []


def test_killing_the_scheduler_keeps_the_rows_and_resume_continues(tmp_path, map_reference):
    proc, err, out = _stopped_run(
        tmp_path, lambda proc, cluster: cluster.scheduler.send_signal(signal.SIGKILL))
    partial = str(out) + ".partial"
    if proc.returncode == 0:
        pytest.skip("the sweep had finished when the scheduler was killed")
    assert proc.returncode == 2, err
    assert err.strip().splitlines() == [
        f"error: --scheduler: lost the connection to the scheduler at "
        f"{err.split(' at ')[1].split(';')[0]}; the finished rows are kept in "
        f"{partial}: run the same command with --resume to continue"], err
    assert "Traceback" not in err and safety.rows_in(partial) >= 1
    _resume_on_a_new_cluster(tmp_path, out, map_reference)


def test_ctrl_c_stops_a_scheduler_sweep(tmp_path, map_reference):
    proc, err, out = _stopped_run(
        tmp_path, lambda proc, cluster: proc.send_signal(signal.SIGINT))
    if proc.returncode == 0:
        pytest.skip("the sweep had finished when Ctrl-C came")
    assert proc.returncode == 130, err
    assert err.strip().splitlines() == [
        f"interrupted: finished rows are kept in {out}.partial; run the same command "
        "with --resume to continue"]
    _resume_on_a_new_cluster(tmp_path, out, map_reference)
