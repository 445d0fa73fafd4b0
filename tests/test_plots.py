"""Pictures: every kind is produced, is not blank, carries labelled axes with
units, follows the file extension; the tour scripts run."""
import runpy
import sys
from pathlib import Path

import numpy as np
import pytest
from click.testing import CliRunner
from matplotlib.image import imread

from probe.cli import cli
from probe.design.compare import compare
from probe.scenarios.config import load_config
from probe.design.solver import threshold_table
from probe.errors import InputError
from probe.design.plots import check_plot_path, plot_comparison, plot_sweep, plot_threshold
from probe.design.transit_plots import plot_emission_pattern, plot_emission_spectrum
from probe.design.sweep import sweep

ROOT = Path(__file__).resolve().parent.parent
EXAMPLES = ROOT / "examples"
BOX = str(EXAMPLES / "box3d_supersonic.toml")
RING = str(EXAMPLES / "ring2d_circular.toml")
DRAG = str(EXAMPLES / "drag3d_density.toml")
TOUR = sorted((EXAMPLES / "tour").glob("[a-z]*.py"))


def assert_picture(path, low=0.02, high=0.75):
    """A PNG that is not blank: enough non-white pixels, several grey levels
    (lines, text and fills), and not one solid block."""
    img = imread(str(path))
    assert img.ndim == 3 and img.shape[0] > 300 and img.shape[1] > 300
    rgb = img[..., :3]
    grey = rgb.mean(axis=2)
    ink = np.mean(grey < 0.95)
    assert low < ink < high, ink
    assert len(np.unique(np.round(grey, 2))) > 10
    # ink in every quarter of the picture's width: axes, ticks or labels
    w = grey.shape[1]
    for k in range(4):
        assert np.mean(grey[:, k * w // 4:(k + 1) * w // 4] < 0.95) > 0.005
    return ink


def labels(fig):
    ax = fig.axes[0]
    return ax.get_xlabel(), ax.get_ylabel()


def test_rates_versus_speed(tmp_path):
    res = sweep(BOX, [("trajectory.speed", "0.5 c_s", "3 c_s", 41)])
    fig = plot_sweep(res, tmp_path / "r.png")
    assert_picture(tmp_path / "r.png")
    x, y = labels(fig)
    assert x == "speed $v/c_s$" and y == "rate [s$^{-1}$]"
    ax = fig.axes[0]
    # sound speed and threshold marked at their places on the c_s axis
    xs = sorted(ln.get_xdata()[0] for ln in ax.get_lines() if len(ln.get_xdata()) == 2)
    vt = res.column("up_threshold_speed")[0] / res.column("sound_speed")[0]
    assert xs == pytest.approx([1.0, vt])
    texts = [t.get_text() for t in fig.legends[0].get_texts()]
    assert texts[:2] == [r"up rate $\Gamma_\uparrow$", r"down rate $\Gamma_\downarrow$"]
    assert "sound speed $c_s$" in texts
    assert any(t.startswith(r"threshold $v_\mathrm{th}$ = 1.434 $c_s$") for t in texts)


def test_speed_axis_in_m_per_s_gets_a_c_s_axis_and_log_scale(tmp_path):
    res = sweep(RING, [("trajectory.speed", "0.5 mm/s", "3 mm/s", 30)])
    fig = plot_sweep(res, tmp_path / "ring.png", quantity="up_rate")
    assert_picture(tmp_path / "ring.png")
    x, y = labels(fig)
    assert x == "speed $v$ [mm/s]" and y.startswith(r"up rate $\Gamma_\uparrow$ [")
    assert fig.axes[0].get_yscale() == "log"           # spans many decades
    assert any(getattr(a, "get_xlabel", lambda: "")() == "$v/c_s$" for a in fig.axes[0].child_axes)


def test_map_with_contours_and_no_result_region(tmp_path):
    res = sweep(DRAG, [("trajectory.speed", "0.5 c_s", "2 c_s", 16),
                       ("condensate.density", "5e19 m^-3", "2e20 m^-3", 12)],
                overrides=['condensate.dispersion="phonon"', "probe.width=0 um"])
    assert any(w.startswith("no result") for w in res.warnings)
    fig = plot_sweep(res, tmp_path / "m.png")
    assert_picture(tmp_path / "m.png")
    x, y = labels(fig)
    assert x == "speed $v/c_s$" and y == "density $n$ [m$^{-3}$]"
    res = sweep(RING, [("trajectory.speed", "0.3 c_s", "1.6 c_s", 14),
                       ("trajectory.radius", "2 um", "40 um", 10)],
                log=["trajectory.radius"])
    fig = plot_sweep(res, tmp_path / "ring.png")
    assert_picture(tmp_path / "ring.png")
    ax = fig.axes[0]
    assert ax.get_ylabel() == "radius $R$ [µm]" and ax.get_yscale() == "log"
    assert len(ax.texts) >= 3                           # contour labels
    assert "up rate" in fig.axes[1].get_ylabel()        # colour bar


def test_comparison_and_threshold(tmp_path):
    cmp = compare(BOX, [("trajectory.speed", "0.5 c_s", "3 c_s", 21)],
                  overrides=["probe.width=0 um"], models=["dispersion", "width"],
                  width="0.5 um")
    fig = plot_comparison(cmp, tmp_path / "c.png")
    assert_picture(tmp_path / "c.png")
    styles = {str(ln.get_linestyle()) for ln in fig.axes[0].get_lines()
              if len(ln.get_xdata()) > 2 and ln.get_linestyle() != "None"}
    assert len(styles) == 3                             # one line style per model
    fig = plot_threshold(threshold_table(BOX), tmp_path / "t.png")
    assert_picture(tmp_path / "t.png")
    assert labels(fig) == (r"gap $\Omega/2\pi$ [Hz]", "speed [mm/s]")


def test_two_dimensional_comparison(tmp_path):
    cmp = compare(RING, [("trajectory.speed", "0.4 c_s", "1.4 c_s", 8),
                         ("trajectory.radius", "2 um", "20 um", 6)],
                  models=["dispersion"])
    plot_comparison(cmp, tmp_path / "c2.png")
    assert_picture(tmp_path / "c2.png")


def test_emission_pattern_and_spectrum(tmp_path):
    from probe.detectors.switching import Gaussian
    from probe.engines.transit import transit_probabilities
    from trajectories import Linear

    sc_ = load_config(RING, ["probe.coupling_length=0.5 nm"])
    cond = sc_.condensate
    v = 1.5 * cond.sound_speed
    res = transit_probabilities(cond, sc_.probe, Linear(v, (1.0, 0.0)),
                                Gaussian(8 / cond.frequency_unit), rtol=1e-3,
                                spectrum=True)
    fig = plot_emission_pattern(res, tmp_path / "p.png", speed=v)
    assert_picture(tmp_path / "p.png")
    assert fig.axes[0].name == "polar"
    fig = plot_emission_spectrum(res, tmp_path / "s.png")
    assert_picture(tmp_path / "s.png")
    assert labels(fig)[0] == r"wavenumber $k\xi$"
    res.spectrum = None
    with pytest.raises(InputError, match="spectrum=True"):
        plot_emission_spectrum(res)


def test_format_follows_the_extension(tmp_path):
    res = sweep(BOX, [("trajectory.speed", "0.5 c_s", "3 c_s", 9)])
    plot_sweep(res, tmp_path / "r.pdf")
    plot_sweep(res, tmp_path / "r.svg")
    assert (tmp_path / "r.pdf").read_bytes()[:5] == b"%PDF-"
    assert b"<svg" in (tmp_path / "r.svg").read_bytes()[:2000]
    for bad in ("r.jpg", "r", "r.png.txt"):
        with pytest.raises(InputError, match="must end in .png, .pdf, .svg"):
            check_plot_path(tmp_path / bad)
    assert sorted(p.name for p in tmp_path.iterdir()) == ["r.pdf", "r.svg"]


def test_cli_plot_options(tmp_path):
    r = CliRunner().invoke(cli, ["sweep", RING, "--vary", "trajectory.speed=0.3c_s:1.5c_s:8",
                                 "--vary", "trajectory.radius=2um:10um:6",
                                 "--out", str(tmp_path / "m.csv"),
                                 "--plot", str(tmp_path / "m.png")])
    assert r.exit_code == 0, r.output
    assert_picture(tmp_path / "m.png")
    r = CliRunner().invoke(cli, ["threshold", BOX, "--plot", str(tmp_path / "t.svg")])
    assert r.exit_code == 0 and (tmp_path / "t.svg").exists()
    r = CliRunner().invoke(cli, ["sweep", BOX, "--vary", "trajectory.speed=1c_s:2c_s:3",
                                 "--out", str(tmp_path / "q.csv"), "--plot",
                                 str(tmp_path / "q.png"), "--quantity", "up_rat"])
    assert r.exit_code == 2 and "error: --quantity: 'up_rat' is not a column" in r.output
    assert not (tmp_path / "q.csv").exists() and not (tmp_path / "q.png").exists()


@pytest.mark.parametrize("script", TOUR, ids=[p.stem for p in TOUR])
def test_tour_script(script, tmp_path, monkeypatch, capsys):
    monkeypatch.syspath_prepend(str(script.parent))
    monkeypatch.setattr(sys, "argv", [str(script), str(tmp_path)])
    runpy.run_path(str(script), run_name="__main__")
    png = tmp_path / f"{script.stem}.png"
    assert str(png) in capsys.readouterr().out
    assert_picture(png)
