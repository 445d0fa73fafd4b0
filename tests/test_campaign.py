"""Interrupted sweeps, drawn at random with a fixed seed: small scenarios of
random dimension, path kind and grid, run by the command line with one
worker, two workers or a Dask scheduler and worker (processes of their own
on 127.0.0.1; skipped when dask.distributed is not installed), killed by
SIGKILL or SIGTERM after a random number of rows, resumed (sometimes killed
again), until one run completes.

Reference: the same sweep computed in this process without interruption.
The resumed file must equal it byte for byte; its rows are whole, each
point once and in order; no process started below a killed run outlives it;
the output folder holds nothing but the table and its sidecar.
"""
import importlib.util
import random
import signal
import subprocess
from pathlib import Path

import pytest

import test_sweep_safety as safety
from probe.design.sweep import sweep

SEED = 20261203
HAS_DASK = importlib.util.find_spec("distributed") is not None

GASES = {
    1: """[condensate]
dimension = 1
species = "87Rb"
density = "4e7 m^-1"
scattering_length = "5.3 nm"
transverse_frequency = "8 kHz"
temperature = "20 nK"
""",
    2: """[condensate]
dimension = 2
species = "23Na"
density = "3e13 m^-2"
scattering_length = "2.75 nm"
transverse_frequency = "1.5 kHz"
""",
    3: """[condensate]
dimension = 3
species = "87Rb"
density = "6e19 m^-3"
scattering_length = "5.3 nm"
""",
}
PROBE = """
[probe]
gap = "100 Hz"
coupling_length = "2 nm"
width = "0.3 um"
"""
#: path kinds: (dimensions, trajectory table, axes to draw from, most points per axis)
KINDS = {
    "linear": ((1, 2, 3), '[trajectory]\nkind = "linear"\nspeed = "1.5 c_s"\n',
               ["trajectory.speed=0.3c_s:2.5c_s", "probe.gap=40Hz:300Hz"], 14),
    "circular": ((2,), '[trajectory]\nkind = "circular"\nradius = "3 um"\nspeed = "0.8 c_s"\n',
                 ["trajectory.speed=0.3c_s:1.5c_s", "trajectory.radius=2um:5um"], 9),
    "spline": ((1,), None, ["probe.gap=60Hz:200Hz"], 5),
}
MODES = ["workers 1", "workers 2", "dask"]


def _draw(rng):
    """(scenario text, vary entries) of a random small sweep."""
    kind = rng.choice(sorted(KINDS))
    dims, table, axes, most = KINDS[kind]
    d = rng.choice(dims)
    if kind == "spline":
        return safety.SPLINE, [f"{axes[0]}:{rng.randint(2, most)}"]
    picked = rng.sample(axes, rng.choice([1, 2]))
    vary = [f"{a}:{rng.randint(2, most)}" for a in picked]
    return GASES[d] + PROBE + table, vary


def _cases():
    rng = random.Random(SEED)
    cases = []
    for i in range(9):
        text, vary = _draw(rng)
        mode = MODES[i % 3]
        kills = [(rng.choice([signal.SIGKILL, signal.SIGTERM]), rng.random())
                 for _ in range(rng.choice([1, 1, 2]))]
        cases.append((i, text, vary, mode, kills))
    return cases


CASES = _cases()


@pytest.fixture(scope="module")
def cluster(tmp_path_factory):
    if not HAS_DASK:
        yield None
        return
    c = safety.RemoteCluster(tmp_path_factory.mktemp("cluster"))
    yield c
    c.close()
    assert safety.wait_gone(c.processes()) == set()


def _mode_args(mode, cluster):
    if mode == "dask":
        return ["--scheduler", cluster.address]
    return ["--workers", mode.split()[1]]


def _kill_after(proc, partial, size, fraction, sig):
    """Signal ``proc`` once ``fraction`` of the rows are in (or it ended);
    returns the processes seen below it."""
    want = int(fraction * size)
    below = set()

    def ready():
        below.update(safety.descendants(proc.pid))
        return proc.poll() is not None or (partial.exists() and
                                            safety.rows_in(partial) >= want)
    safety.wait_for(ready, timeout=120, what="the rows to kill after")
    if proc.poll() is None:
        proc.send_signal(sig)
    _, err = proc.communicate(timeout=120)
    return below, err


def _check_ending(proc, err, sig, out):
    if proc.returncode == 0:
        return
    if sig == signal.SIGKILL:
        assert proc.returncode == -signal.SIGKILL, err
    elif proc.returncode == 128 + signal.SIGTERM:          # 143, as a shell reports it
        assert err.strip().splitlines() == [
            f"interrupted: finished rows are kept in {out}.partial; run the same "
            "command with --resume to continue"], err
    else:                                   # before the sweep took over SIGTERM
        assert proc.returncode == -signal.SIGTERM, err
    assert "Traceback" not in err


@pytest.mark.parametrize("case", CASES, ids=[f"{c[0]}-{c[3]}" for c in CASES])
def test_interrupted_sweeps_resume_to_the_uninterrupted_file(case, tmp_path, cluster):
    i, text, vary, mode, kills = case
    if mode == "dask" and cluster is None:
        pytest.skip("dask.distributed is not installed")
    config = safety.spline_folder(tmp_path / "scn") if text is safety.SPLINE else \
        tmp_path / "scn.toml"
    if text is not safety.SPLINE:
        config.write_text(text)
    ref = sweep(str(config), vary, out=tmp_path / "ref.csv")
    size = ref.data.shape[0]
    folder = tmp_path / "run"
    folder.mkdir()
    out = folder / "out.csv"
    partial = Path(str(out) + ".partial")
    args = safety.cli_args(config, vary, out, *_mode_args(mode, cluster))
    for round_, (sig, fraction) in enumerate(kills):
        proc = safety.start_cli(args + (["--resume"] if partial.exists() else []))
        below, err = _kill_after(proc, partial, size, fraction, sig)
        _check_ending(proc, err, sig, out)
        assert safety.wait_gone(below) == set(), f"processes outlived run {round_}"
        if proc.returncode == 0:
            break
    if not out.exists():
        done = subprocess.run(safety.EXE + args + (["--resume"] if partial.exists() else []),
                              capture_output=True, text=True, timeout=300)
        assert done.returncode == 0, done.stderr
    assert out.read_bytes() == (tmp_path / "ref.csv").read_bytes()
    safety.check_table(out, size)
    assert safety.leftovers(folder, ("out.csv", "out.json")) == []
