"""Pictures: every kind is produced, is not blank, carries labelled axes with
units, follows the file extension; the tour scripts run."""
import runpy
import sys
from pathlib import Path

import numpy as np
import pytest
from click.testing import CliRunner
from matplotlib.colors import BoundaryNorm
from matplotlib.image import imread

from probe.cli import cli
from probe.design.compare import compare
from probe.scenarios.config import load_config
from probe.design.solver import threshold_table
from probe.errors import InputError
from probe.design.plots import (check_plot_path, plot_comparison, plot_lines, plot_sweep,
                                plot_threshold)
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


# ---------------------------------------------------------------------------
# what the figures say: the scenario as computed, warnings, hidden points
# ---------------------------------------------------------------------------
def title_of(fig):
    """The figure's title as one line of plain text (the edits are kept
    whole with no-break spaces)."""
    return " ".join(fig._suptitle.get_text().replace("\u00a0", " ").split())


def legend_texts(fig):
    return [" ".join(t.get_text().split()) for leg in fig.legends for t in leg.get_texts()]


def open_marker_lines(ax):
    """The artists that mark flagged points: markers only, white faces."""
    return [ln for ln in ax.get_lines() if ln.get_linestyle() == "None"
            and ln.get_markerfacecolor() == "white"]


def test_title_states_the_overridden_scenario(tmp_path):
    # the file says Bogoliubov and a 0.2 um probe (examples/box3d_supersonic.toml);
    # the figure must say what was computed instead
    res = sweep(BOX, [("trajectory.speed", "0.5 c_s", "3 c_s", 11)],
                overrides=['condensate.dispersion="phonon"', "probe.width=0um"])
    title = title_of(plot_sweep(res, tmp_path / "p.png"))
    assert title.startswith("box3d_supersonic.toml: 3D 87Rb gas, phonon dispersion, T = 0")
    assert "two-level probe (gap 150 Hz, point-like)" in title
    assert "bogoliubov" not in title and "200 nm" not in title
    assert "as computed with --set condensate.dispersion=phonon, --set probe.width=0um" in title
    # the varied key's configured value (1.6 c_s) is not stated
    assert "linear path;" not in title and "1.6 c_s" not in title
    # --unset appears as such; without edits there is no such line
    res = sweep(BOX, [("trajectory.speed", "1.2 c_s", "2 c_s", 5)],
                overrides=["condensate.temperature=5 nK"], removals=["probe.width"])
    title = title_of(plot_sweep(res, tmp_path / "d.png"))
    assert "T = 5 nK" in title and "point-like" in title, title
    assert "--set condensate.temperature=5 nK, --unset probe.width" in title, title
    res = sweep(BOX, [("trajectory.speed", "0.5 c_s", "3 c_s", 5)])
    assert "as computed" not in title_of(plot_sweep(res))


def test_gap_sweep_marks_the_points_past_first_order(tmp_path):
    res = sweep(BOX, [("probe.gap", "0.1 Hz", "1000 Hz", 40)], log=["probe.gap"])
    # the first-order limit of the README: a rate above 0.1 Omega
    gap = res.column("probe.gap")
    past = np.maximum(res.column("up_rate"), res.column("down_rate")) > 0.1 * gap
    n = int(past.sum())
    assert 10 <= n < 40
    fig = plot_sweep(res, tmp_path / "g.png")
    assert_picture(tmp_path / "g.png")
    ax = fig.axes[0]
    x = gap / (2 * np.pi)                               # the axis shows Omega/2pi in Hz
    marks = open_marker_lines(ax)
    assert len(marks) == 2                              # up and down rate
    for ln in marks:
        assert np.allclose(np.sort(ln.get_xdata()), np.sort(x[past]))
    # the hatched band covers the flagged gaps and none of the others
    spans = [p for p in ax.patches if p.get_hatch() == "xx"]
    covered = np.zeros(x.size, bool)
    for p in spans:
        xs = p.get_path().vertices[:, 0] if not hasattr(p, "get_x") else \
            [p.get_x(), p.get_x() + p.get_width()]
        covered |= (x >= min(xs)) & (x <= max(xs))
    assert np.array_equal(covered, past)
    texts = legend_texts(fig)
    assert any(f"validity warning at {n} of 40 points: first-order perturbation theory "
               "is breaking down" in t for t in texts), texts


def test_temperature_sweep_marks_k_b_t_above_mu(tmp_path):
    from scipy.constants import k as k_B

    res = sweep(RING, [("condensate.temperature", "0 nK", "100 nK", 21)],
                overrides=["trajectory.radius=20 um"])
    mu = res.meta["scenario"]["derived"]["chemical_potential"]
    hot = k_B * res.column("condensate.temperature") > mu    # the 2D criterion k_B T > mu
    fig = plot_sweep(res, tmp_path / "t.png")
    ax = fig.axes[0]
    flagged = {round(v, 6) for ln in open_marker_lines(ax) for v in ln.get_xdata()}
    assert flagged == {round(v, 6) for v in res.column("condensate.temperature")[hot] * 1e9}
    assert any(f"thermal fluctuations dominate the 2D gas ({int(hot.sum())})" in t
               for t in legend_texts(fig))
    assert "T = " not in title_of(fig)                  # varied: not restated


def test_points_off_a_log_axis_are_counted(tmp_path):
    res = sweep(BOX, [("trajectory.speed", "0.2 c_s", "3 c_s", 15)])
    up = res.column("up_rate")
    zeros = int(np.sum(up == 0))                        # below the threshold speed: exactly 0
    assert 0 < zeros < up.size
    fig = plot_lines(res, tmp_path / "l.png", ["up_rate", "up_rate_error"])
    assert fig.axes[0].get_yscale() == "log"
    assert any(t.startswith(r"up rate $\Gamma_\uparrow$: 0 at "
                            f"{zeros} of {up.size} points (off the log axis)")
               for t in legend_texts(fig)), legend_texts(fig)
    # a curve with nothing to draw says so instead of a bare legend entry
    res = sweep(BOX, [("trajectory.speed", "0.5 c_s", "3 c_s", 51)],
                overrides=['condensate.dispersion="phonon"', "probe.width=0um"])
    fig = plot_sweep(res)
    finite = int(np.isfinite(res.column("up_rate")).sum())
    assert any(t.endswith(f"not drawn: 0 at all {finite} points with a result")
               for t in legend_texts(fig)), legend_texts(fig)


def test_coinciding_sound_speed_and_threshold_share_one_entry():
    # phonon dispersion: v_th = c_s exactly (omega = c k has no gap to add a wavenumber)
    res = sweep(BOX, [("trajectory.speed", "0.5 c_s", "3 c_s", 11)],
                overrides=['condensate.dispersion="phonon"', "probe.width=0.3um"])
    fig = plot_sweep(res)
    ax = fig.axes[0]
    verticals = [ln for ln in ax.get_lines() if len(ln.get_xdata()) == 2]
    assert [ln.get_label() for ln in verticals] == [
        r"sound speed $c_s$ = threshold $v_\mathrm{th}$"]
    assert verticals[0].get_xdata()[0] == pytest.approx(1.0)
    assert not ax.texts                                  # no labels crowding on the axes
    # guide1d: the 1D up rate spikes at v_th just above c_s; both named in the legend
    res = sweep(str(EXAMPLES / "guide1d_linear.toml"),
                [("trajectory.speed", "0.5 c_s", "3 c_s", 26)])
    fig = plot_sweep(res)
    texts = legend_texts(fig)
    vt = res.column("up_threshold_speed")[0] / res.column("sound_speed")[0]
    assert "sound speed $c_s$" in texts
    assert rf"threshold $v_\mathrm{{th}}$ = {vt:.4g} $c_s$" in texts
    assert not fig.axes[0].texts


def test_comparison_names_the_configured_threshold_and_spaces_units():
    cmp = compare(BOX, [("trajectory.speed", "0.5 c_s", "3 c_s", 9)], models=["temperature"],
                  temperature="10nK")
    fig = plot_comparison(cmp)
    texts = legend_texts(fig)
    assert any(t.startswith(r"threshold $v_\mathrm{th}$") and t.endswith("(configured model)")
               for t in texts), texts
    assert "T = 10 nK: up rate" in texts
    assert title_of(fig).startswith("model comparison — box3d_supersonic.toml")


def test_threshold_figure_names_the_scenario_and_labels_the_gap_axis():
    table = threshold_table(BOX, overrides=["condensate.temperature=5 nK"])
    fig = plot_threshold(table)
    title = title_of(fig)
    assert title.startswith("threshold of straight motion — box3d_supersonic.toml")
    assert "T = 5 nK" in title and "--set condensate.temperature=5 nK" in title
    ax = fig.axes[0]
    fig.canvas.draw()
    lo, hi = ax.get_xlim()
    shown = [t for t in ax.xaxis.get_major_ticks()
             if lo <= t.get_loc() <= hi and t.label1.get_text()]
    assert hi / lo < 1000 and len(shown) >= 5            # 20, 50, 100, 200, 500, 1000


def test_map_colours_spread_over_the_supersonic_half():
    res = sweep(RING, [("trajectory.speed", "0.2 c_s", "2 c_s", 16),
                       ("trajectory.radius", "2 um", "50 um", 8)], log=["trajectory.radius"])
    fig = plot_sweep(res)
    mesh = next(c for c in fig.axes[0].collections if hasattr(c, "norm")
                and c.get_array() is not None and c.get_array().ndim >= 1)
    z = res.grid("up_rate")
    speed = res.grid("trajectory.speed") / res.grid("sound_speed")
    fast = speed > 1.45
    steps = mesh.norm(z[fast])
    # a log scale over the twelve decades of the map put the fast cells (within a
    # factor of about 3 of each other) in one colour; steps at quantiles give them several
    assert np.ptp(np.log10(z[fast])) < 0.6 and np.ptp(np.log10(z[z > 0])) > 6
    assert len(set(np.asarray(steps).ravel().tolist())) >= 3
    # and they span a good part of the colour scale (the position of a value in
    # the colour map: a BoundaryNorm gives colour indices, other norms [0, 1])
    where = np.asarray(steps, float)
    if isinstance(mesh.norm, BoundaryNorm):
        where = where / (mesh.cmap.N - 1)
    assert np.ptp(where) >= 0.25


def test_transit_plot_from_the_command_line(tmp_path):
    out = tmp_path / "t.png"
    r = CliRunner().invoke(cli, ["transit", str(EXAMPLES / "cross3d_gaussian.toml"),
                                 "--set", "trajectory.switching_width=3 ms",
                                 "--plot", str(out)])
    assert r.exit_code == 0, r.output
    assert_picture(out)
    # refused before computing, one line, no file: no emitted phonons, or a route
    # that averages the directions exactly
    cases = [([str(EXAMPLES / "transits" / "ramsey3d_moving.toml")],
              "error: --plot: the ramsey model has no emitted-phonon spectrum"),
             ([str(EXAMPLES / "cross3d_gaussian.toml"), "--set", "numerics.transit_method=lag"],
              "error: --plot: numerics.transit_method = 'lag' gives no emitted-phonon spectrum"),
             ([str(EXAMPLES / "cross3d_gaussian.toml")] * 2,
              "error: --plot: draws the transit of one scenario")]
    for args, message in cases:
        bad = tmp_path / "bad.png"
        r = CliRunner().invoke(cli, ["transit", *args, "--plot", str(bad)])
        assert r.exit_code == 2 and r.output.startswith(message), r.output
        assert len(r.output.strip().splitlines()) == 1 and not bad.exists()


def test_transit_figure_says_what_was_computed(tmp_path):
    import math

    from probe.design.transit_plots import plot_transit

    sc_ = load_config(str(EXAMPLES / "cross3d_gaussian.toml"),
                      ["trajectory.switching_width=1 ms", "numerics.transit_rtol=1e-3"])
    res = sc_.transit(spectrum=True)
    fig = plot_transit(sc_, res, tmp_path / "t.png")
    assert_picture(tmp_path / "t.png")
    title = title_of(fig)
    assert title.startswith("phonons emitted in the transit — cross3d_gaussian.toml")
    assert "linear path at 1.6 c_s; gaussian switching, τ = 1 ms" in title
    assert "--set trajectory.switching_width=1 ms" in title
    assert f"N = {res.emitted_phonons:.4g}" in title
    spectrum, polar = fig.axes[0], next(a for a in fig.axes if a.name == "polar")
    assert spectrum.get_xlabel() == r"wavenumber $k\xi$"
    # the Mach cone at cos(theta) = c_s/v = 1/1.6 (the file's speed)
    cone = sorted({round(abs(ln.get_xdata()[0]), 9) for ln in polar.get_lines()
                   if len(ln.get_xdata()) == 2})
    assert cone == [round(math.acos(1 / 1.6), 9)]
    assert any(t.startswith("Mach cone, cos = $c_s/v$ = 0.625") for t in legend_texts(fig))


def test_passage_figure_names_the_scenario(tmp_path):
    from probe.design.passage_plots import plot_passage
    from probe.scenarios.passage import cloud_of

    sc_ = load_config(str(EXAMPLES / "passages" / "push3d_trap.toml"),
                      ["numerics.passage_samples=300", "trajectory.speed=0.8 c_s"])
    res = sc_.passage()
    fig = plot_passage(res, cloud_of(sc_), tmp_path / "p.png", scenario=sc_)
    title = title_of(fig)
    assert title.startswith("passage through the cloud — push3d_trap.toml")
    assert "in a harmonic trap" in title and "linear path at 0.8 c_s" in title
    assert "--set trajectory.speed=0.8 c_s" in title
    assert f"excited probability {res.totals['excited_probability']:.3g}" in title


def test_every_figure_the_readme_shows_exists():
    import re

    readme = (ROOT / "README.md").read_text(encoding="utf-8")
    links = re.findall(r"!\[[^\]]*\]\(([^)\s]+)\)", readme)
    assert len(links) >= 7
    missing = [ln for ln in links if not (ROOT / ln).is_file()]
    assert not missing, missing
    for kind in ("sweep", "map", "compare", "threshold", "transit", "passage", "planning"):
        assert f"docs/figures/{kind}.png" in links
        img = imread(str(ROOT / "docs" / "figures" / f"{kind}.png"))
        assert 400 < img.shape[1] <= 1200                # small PNGs (100 dpi)
