"""The picture of a passage (``probe passage --plot``): the cloud's density
on a slice through the path, with the path coloured by its local rate, and
the populations against time.

Left: in 2D and 3D the density on the plane of the two directions along
which the path extends most (through the path's mean position in the
third), grey levels rising with the density, the cloud's edge drawn, and the
path coloured by the local up rate (the dephasing rate of a Ramsey probe,
the emission rate of a structureless one); in 1D the density along the
axis with the path's rate along it.  Right: the excited population of the
rate equation and its first order int Gamma_up dt against time (the
contrast exp(-int gamma_phi dt), or the expected emitted phonons), with the
local Mach number on a second axis.
"""
from __future__ import annotations

import numpy as np

from probe.design.plots import COLOURS, _figure, pretty_unit, save, scenario_caption, set_title
from probe.engines.passage import integral
from probe.quantities import QUANTITIES

#: the rate that colours the path, by what the model has
PATH_RATES = ("up_rate", "dephasing_rate", "emission_rate")
#: grid points per side of the density slice
SLICE_POINTS = 241


def _path_rate(result):
    for name in PATH_RATES:
        if name in result.samples:
            return name, np.asarray(result.samples[name], float)
    return None, np.zeros(result.time.size)


def _plane(result, cloud):
    """The two axes (indices) along which the path extends most, relative to
    the cloud's radii, and the path's mean position."""
    x = np.asarray(result.position, float)
    extent = np.ptp(x, axis=0) / cloud.radii + 1e-12 * np.arange(x.shape[1])[::-1]
    axes = sorted(np.argsort(extent)[::-1][:2])
    return axes, x.mean(axis=0)


def _density_slice(ax, result, cloud):
    """The density on the slice plane (2D and 3D), with the cloud's edge."""
    axes, mean = _plane(result, cloud)
    x = np.asarray(result.position, float)
    reach = np.maximum(cloud.radii[axes], np.max(np.abs(x[:, axes]), axis=0)) * 1.08
    u = np.linspace(-reach[0], reach[0], SLICE_POINTS)
    v = np.linspace(-reach[1], reach[1], SLICE_POINTS)
    grid = np.broadcast_to(mean, (v.size, u.size, mean.size)).copy()
    grid[..., axes[0]] = u[None, :]
    grid[..., axes[1]] = v[:, None]
    n = cloud.density(grid) / cloud.peak_density
    ax.pcolormesh(u * 1e6, v * 1e6, n, cmap="Greys", vmin=0, vmax=1.15, shading="auto",
                  rasterized=True)
    measure = ((grid / cloud.radii) ** 2).sum(axis=-1)
    if measure.min() < 1.0:        # the cloud's edge on the slice
        ax.contour(u * 1e6, v * 1e6, measure, levels=[1.0], colors="0.35", linewidths=0.8)
    ax.set_aspect("equal")
    names = "xyz"
    ax.set_xlabel(f"${names[axes[0]]}$ [µm]")
    ax.set_ylabel(f"${names[axes[1]]}$ [µm]")
    return axes


def _coloured_path(fig, ax, points, rate, name):
    """The path as a line coloured by ``rate`` (1/s), with its colour bar."""
    from matplotlib.collections import LineCollection

    segments = np.stack([points[:-1], points[1:]], axis=1)
    mid = 0.5 * (rate[1:] + rate[:-1])
    lines = LineCollection(segments, cmap="plasma", linewidths=2.6)
    lines.set_array(mid)
    ax.add_collection(lines)
    ax.plot(*points[0], marker="o", color=COLOURS[2], markersize=5, zorder=3)
    ax.plot(*points[-1], marker=">", color=COLOURS[2], markersize=5, zorder=3)
    label = QUANTITIES[name].plot_label if name else "rate"
    fig.colorbar(lines, ax=ax, shrink=0.8, label=f"{label} [{pretty_unit('1/s')}]")


def _cloud_panel(fig, ax, result, cloud):
    name, rate = _path_rate(result)
    x = np.asarray(result.position, float)
    if cloud.dimension == 1:
        s = np.linspace(-1.08, 1.08, SLICE_POINTS) * max(cloud.radii[0], np.abs(x).max())
        n = cloud.density(s[:, None]) / cloud.peak_density
        ax.fill_between(s * 1e6, 0, n, color="0.8", label="density $n/n_0$")
        ax.plot(s * 1e6, n, color="0.35", linewidth=0.8)
        points = np.column_stack([x[:, 0] * 1e6, cloud.density(x) / cloud.peak_density])
        ax.set_xlabel("$x$ [µm]")
        ax.set_ylabel("density $n/n_0$ along the path")
    else:
        axes = _density_slice(ax, result, cloud)
        points = x[:, axes] * 1e6
    _coloured_path(fig, ax, points, rate, name)
    ax.set_title("the cloud (grey: density) and the path", fontsize=9)


def _population_panel(ax, result):
    """Populations (or contrast, or emitted phonons) against time, and the
    local Mach number on a second axis."""
    t = (result.time - result.time[0]) * 1e3
    s = result.samples
    if "excited_population" in s:
        ax.plot(t, s["excited_population"], color=COLOURS[0], linewidth=1.6,
                label="excited population $p_e(t)$")
        ax.plot(t, _running(result.time, s["up_rate"]), color=COLOURS[1], linestyle="--",
                linewidth=1.4, label=r"first order $\int\Gamma_\uparrow dt$")
        ax.set_ylabel("probability")
    elif "dephasing_rate" in s:
        ax.plot(t, np.exp(-_running(result.time, s["dephasing_rate"])), color=COLOURS[0],
                linewidth=1.6, label=r"contrast $e^{-\int\gamma_\phi dt}$")
        ax.set_ylabel("contrast")
    else:
        ax.plot(t, _running(result.time, s.get("emission_rate", np.zeros(t.size))),
                color=COLOURS[0], linewidth=1.6, label="emitted phonons (first order)")
        ax.set_ylabel("expected number")
    ax.set_xlabel("time since the start of the passage [ms]")
    mach = ax.twinx()
    shown = np.where(np.isfinite(result.mach) & (result.density > 0), result.mach, np.nan)
    mach.plot(t, shown, color=COLOURS[2], linestyle=":", linewidth=1.2,
              label="local Mach number $v/c$")
    mach.axhline(1.0, color=COLOURS[2], linewidth=0.6, alpha=0.6)
    mach.set_ylabel("local Mach number $v/c$", color=COLOURS[2])
    if np.nanmax(shown) / max(np.nanmin(shown), 1e-300) > 100:
        mach.set_yscale("log")
    lines = ax.get_lines() + mach.get_lines()[:1]
    ax.legend(lines, [ln.get_label() for ln in lines], loc="upper left", fontsize=8,
              framealpha=0.9)
    ax.grid(True, color="0.88", linewidth=0.6)
    ax.set_title("along the passage", fontsize=9)


def _running(time, rate):
    """int_0^t rate dt at every sample (trapezoid rule)."""
    steps = 0.5 * (rate[1:] + rate[:-1]) * np.diff(time)
    return np.concatenate([[0.0], np.cumsum(steps)])


def plot_passage(result, cloud, path=None, title=None, scenario=None):
    """Draw a passage (:class:`probe.engines.passage.PassageResult`) through
    ``cloud`` (a harmonic trap or a box); writes ``path`` when given and
    returns the Figure.  The title names ``scenario`` (a
    :class:`probe.scenarios.config.Scenario`) as computed, with the edits
    of its file, or else the text ``title``."""
    import os

    fig = _figure(size=(11.0, 5.2))
    left, right = fig.subplots(1, 2, gridspec_kw={"width_ratios": [1.05, 1.0]})
    _cloud_panel(fig, left, result, cloud)
    _population_panel(right, result)
    if scenario is not None:
        lines = scenario_caption(scenario.describe(), scenario.raw,
                                 extra="passage through the cloud")
    else:
        lines = [os.path.basename(title)] if title else []
    set_title(fig, lines + [_totals_text(result)])
    if path is not None:
        save(fig, path)
    return fig


def _totals_text(result):
    """The caption line of the passage's totals (and its warnings)."""
    totals = result.totals
    if "excited_probability" in totals:
        text = f"excited probability {totals['excited_probability']:.3g}"
    elif "contrast" in totals:
        text = f"contrast {totals['contrast']:.3g}"
    elif "emitted_phonons" in totals:
        text = f"emitted phonons {integral(result.time, result.samples['emission_rate']):.3g}"
    else:
        text = ""
    n = len(result.warnings or ())
    if n:
        text += f"; {n} validity warning{'s' if n > 1 else ''} (listed with the results)"
    return text
