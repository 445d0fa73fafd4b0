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
