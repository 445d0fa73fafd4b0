"""Notebook display and the xarray form of a sweep (probe.notebook).

Checks: the HTML tables show the registered outputs in the table units
(rates s^-1, gaps in Hz) with the engine's numerical error; the Dataset holds
the same numbers as ``SweepResult.grid`` with SI units and labels as
attributes; a NetCDF file written and read back (scipy's NetCDF-3 writer)
gives them unchanged; without xarray the refusal names the package.
"""
import math
import sys

import numpy as np
import pytest

from probe.design.sweep import sweep
from probe.errors import InputError
from probe.scenarios.config import load_config, rates_from_config


@pytest.fixture(scope="module")
def grid():
    return sweep("examples/ring2d_circular.toml",
                 vary=[("trajectory.speed", "0.2 c_s", "2 c_s", 4),
                       ("trajectory.radius", "2 um", "50 um", 3)],
                 log=("trajectory.radius",))


def test_rate_result_html_shows_values_errors_and_units():
    r = rates_from_config("examples/box3d_supersonic.toml")
    text = r._repr_html_()
    assert "<table>" in text and "up rate" in text and "s^-1" in text
    assert f"{float(r.up_rate):.6g}" in text
    assert f"{float(r.up_rate_error):.6g}" in text
    # gaps are shown as ordinary frequencies: Omega / 2 pi in Hz
    assert f"{float(r.gap) / (2 * math.pi):.6g}</td><td></td><td>Hz" in text
    assert "numerical error" in text


def test_transit_and_passage_results_render():
    t = load_config("examples/cross3d_gaussian.toml").transit()
    assert f"{float(t.up_probability):.6g}" in t._repr_html_()
    p = load_config("examples/passages/push3d_trap.toml").passage()
    text = p._repr_html_()
    assert "Passage" in text and f"{p.totals['excited_probability']:.6g}" in text
    assert "<li>" in text   # its warnings are listed


def test_sweep_html_lists_rows(grid):
    text = grid._repr_html_()
    assert "12 points" in text and text.count("<tr>") == 13


def test_to_xarray_matches_the_grid(grid):
    pytest.importorskip("xarray")
    ds = grid.to_xarray()
    assert ds["up_rate"].dims == ("trajectory.speed", "trajectory.radius")
    np.testing.assert_array_equal(ds["up_rate"].values, grid.grid("up_rate"))
    assert ds["up_rate"].attrs["units"] == "1/s"
    assert ds["up_rate"].attrs["long_name"] == "up rate"
    np.testing.assert_allclose(ds["trajectory.speed"].values, [0.2, 0.8, 1.4, 2.0])
    assert ds["trajectory.speed"].attrs["units"] == "c_s"
    assert ds["trajectory.radius"].attrs["spacing"] == "log"
    # slicing by name: the up rate at the largest radius, all speeds
    np.testing.assert_array_equal(ds["up_rate"].isel({"trajectory.radius": -1}).values,
                                  grid.grid("up_rate")[:, -1])


def test_netcdf_round_trip(grid, tmp_path):
    xr = pytest.importorskip("xarray")
    path = tmp_path / "map.nc"
    grid.to_netcdf(path)
    back = xr.open_dataset(path, engine="scipy" if "netCDF4" not in sys.modules else None)
    np.testing.assert_array_equal(back["down_rate"].values, grid.grid("down_rate"))
    assert back["down_rate"].attrs["units"] == "1/s"
    assert [p.name for p in tmp_path.iterdir()] == ["map.nc"]   # no temporary left
    back.close()


def test_without_xarray_the_refusal_names_the_package(grid, monkeypatch):
    monkeypatch.setitem(sys.modules, "xarray", None)
    with pytest.raises(InputError, match="xarray"):
        grid.to_xarray()


def _probe(args, cwd, env_extra=None):
    import os
    import subprocess
    env = dict(os.environ, **(env_extra or {}))
    return subprocess.run([sys.executable, "-m", "probe", *args], cwd=cwd, env=env,
                          capture_output=True, text=True)


def test_sweep_out_nc_writes_netcdf(tmp_path):
    xr = pytest.importorskip("xarray")
    import pathlib
    root = pathlib.Path(__file__).resolve().parents[1]
    out = tmp_path / "speeds.nc"
    r = _probe(["sweep", str(root / "examples/box3d_supersonic.toml"),
                "--vary", "trajectory.speed=0.5c_s:3c_s:6", "--out", str(out)], root)
    assert r.returncode == 0, r.stderr
    assert sorted(p.name for p in tmp_path.iterdir()) == ["speeds.json", "speeds.nc"]
    with xr.open_dataset(out, engine="scipy") as ds:
        assert ds["up_rate"].dims == ("trajectory.speed",)
        assert ds["up_rate"].attrs["units"] == "1/s"
        # below the threshold speed (about 1.43 c_s here) no up transition
        assert float(ds["up_rate"].values[0]) == 0.0 and float(ds["up_rate"].values[-1]) > 0


def test_sweep_out_nc_without_xarray_is_refused_before_computing(tmp_path):
    import pathlib
    root = pathlib.Path(__file__).resolve().parents[1]
    block = tmp_path / "block"
    block.mkdir()
    (block / "xarray.py").write_text("raise ImportError('blocked for the test')\n")
    out = tmp_path / "speeds.nc"
    r = _probe(["sweep", str(root / "examples/box3d_supersonic.toml"),
                "--vary", "trajectory.speed=0.5c_s:3c_s:6", "--out", str(out)], root,
               {"PYTHONPATH": f"{block}:{root}"})
    assert r.returncode == 2
    assert r.stderr.strip().startswith("error: --out:") and "xarray" in r.stderr
    assert len(r.stderr.strip().splitlines()) == 1
    assert sorted(p.name for p in tmp_path.iterdir()) == ["block"]


def test_speed_swept_in_c_s_is_selected_in_c_s_as_the_readme_says(grid):
    # the coordinate of a speed swept in c_s is in c_s (its units attribute):
    # .sel picks by that number; the README's to_xarray paragraph says so
    pytest.importorskip("xarray")
    from pathlib import Path
    ds = grid.to_xarray()
    assert ds["trajectory.speed"].attrs["units"] == "c_s"
    picked = ds["up_rate"].sel({"trajectory.speed": 0.8}, method="nearest")
    np.testing.assert_array_equal(picked.values, grid.grid("up_rate")[1, :])
    readme = (Path(__file__).resolve().parents[1] / "README.md").read_text(encoding="utf-8")
    text = " ".join(readme.split("SweepResult.to_xarray()", 1)[1].split("## ", 1)[0].split())
    assert "a speed swept in `c_s`, which stays in multiples of c_s" in text
    assert "its `units` attribute says `c_s`" in text
