"""Pictures of the phonons a finite transit emits (``probe transit --plot``).

:func:`plot_transit` draws, for a transit computed with its spectrum
(``TransitResult.spectrum``), the wavenumber spectrum of the emitted phonons
dN/d(k xi) against k xi (left) and their directions (right): in 3D a polar
plot of dN/dOmega against the angle theta from the mean velocity, mirrored
about that axis; in 2D dN/dphi; in 1D the forward and backward counts as
bars.  A straight supersonic transit has its Mach cone cos(theta) = c_s/v
drawn.  The spectrum is that of the ``emitted_phonons`` channel (the probe
starting in its ground state; a probe with internal states adds the one
starting excited): a model without emitted phonons (a Ramsey sequence) and
an amplitude route that averages the directions exactly have none, and
:func:`check_transit_plot` refuses them before anything is computed.

The title names the scenario as computed (gas, probe, path, switching, the
``--set``/``--unset`` edits of the file; :func:`probe.design.plots.scenario_caption`).
:func:`plot_emission_pattern` and :func:`plot_emission_spectrum` draw one
panel each as a figure of its own.  matplotlib is imported only inside the
drawing functions (Agg canvas).
"""
from __future__ import annotations

import math
import types

import numpy as np

from probe.design.plots import (HATCHES, _figure, _legend, _micro, _spans_decades,
                                _style, hidden_text, pretty_unit, save, scenario_caption,
                                set_title)
from probe.errors import InputError

#: the output whose distribution the spectrum is
SPECTRUM_OUTPUT = "emitted_phonons"
#: the spectrum's values shown on a log axis: down to this fraction of its largest
SPECTRUM_FLOOR = 1e-8


# ---------------------------------------------------------------------------
# what can be drawn
# ---------------------------------------------------------------------------
def check_transit_plot(scenario, option="--plot"):
    """InputError (key ``option``: ``--plot``, or ``--spectrum`` for the
    spectrum files) unless the transit of ``scenario`` has an emitted-phonon
    spectrum: its model must output ``emitted_phonons`` and a route named by
    ``numerics.transit_method`` must give directions."""
    probe = scenario.probe
    if SPECTRUM_OUTPUT not in probe.transit_outputs:
        verb = "draw" if option == "--plot" else "write"
        raise InputError(option, f"the {probe.name} model has no emitted-phonon spectrum "
                                 f"to {verb} (its transit outputs: "
                                   f"{', '.join(probe.transit_outputs)}); use --json or "
                                   f"the table")
    method = getattr(scenario, "transit_method", "auto")
    if method == "auto":
        return
    from probe.engines.transit.routes import ROUTES

    route = next((r for r in ROUTES if r.name == method), None)
    stand_in = types.SimpleNamespace(spectrum=True, trajectory=scenario.trajectory)
    try:
        gives = route is None or route.applies(stand_in)
    except AttributeError:          # a route that asks more of the problem: let it say
        gives = True
    if not gives:
        raise InputError(option, f"numerics.transit_method = {method!r} gives no "
                                   f"emitted-phonon spectrum ({route.refusal})")


def check_transit_plot_request(path, scenarios):
    """The checks of ``probe transit --plot FILE`` before anything is
    computed: a writable figure name, one scenario, a spectrum to draw."""
    from probe.design.plots import check_plot_path

    check_plot_path(path)
    if len(scenarios) != 1:
        raise InputError("--plot", f"draws the transit of one scenario; give one CONFIG "
                                   f"(got {len(scenarios)})")
    check_transit_plot(scenarios[0])


def _spectrum_of(result):
    sp = getattr(result, "spectrum", None)
    if not sp:
        raise InputError("spectrum", "the transit result has no spectrum; call "
                                     "transit_probabilities(..., spectrum=True)")
    return sp


def _start_labels(sp):
    """Legend texts of the spectrum's series: one start, or a probe with
    internal states starting in its ground state and excited."""
    if "dN_dk_excited" in sp:
        return ("probe starts in the ground state", "probe starts excited")
    return ("emitted phonons", None)


def straight_speed(scenario):
    """The speed (m/s) of a straight stationary path (whose motion has a
    threshold), else None: the Mach cone belongs to it."""
    path = scenario.trajectory
    if not getattr(path, "stationary", False):
        return None
    from probe.engines.stationary import engine_for

    if not engine_for(path).has_threshold:
        return None
    return float(path.stationary_parameters()["speed"])


def transit_caption(scenario, extra=None):
    """The title lines of a transit's figure: the scenario as computed with
    its switching (``gaussian switching, τ = 2 ms``)."""
    from probe.scenarios.limits import fmt_time
    from probe.scenarios.transit import switching_summary

    sw = switching_summary(scenario.switching, scenario.raw.get("trajectory", {}))
    if "width" in sw:
        words = f"{sw['kind']} switching, τ = {fmt_time(sw['width'])}"
    else:
        span = sw["stop"] - sw["start"]
        words = (f"{sw['kind']} switching, on {fmt_time(sw['start'], span)} .. "
                 f"{fmt_time(sw['stop'], span)}, ramp {fmt_time(sw['ramp'])}")
    return scenario_caption(scenario.describe(), scenario.raw, extra=extra,
                            switching=_micro(words))


# ---------------------------------------------------------------------------
# panels
# ---------------------------------------------------------------------------
def spectrum_panel(ax, result):
    """dN/d(k xi) against k xi (top axis: k in 1/um), with k xi = 1 marked
    (phonons below, particle-like excitations above)."""
    sp = _spectrum_of(result)
    xi = result.healing_length
    q = np.asarray(sp["k"], float) * xi
    main, second = _start_labels(sp)
    curves = [(np.asarray(sp["dN_dk"], float) / xi, main)]
    if second:
        curves.append((np.asarray(sp["dN_dk_excited"], float) / xi, second))
    lines = [ax.plot(q, y, label=lab, markevery=max(1, q.size // 14), **_style(k))[0]
             for k, (y, lab) in enumerate(curves)]
    ys = [y for y, _ in curves]
    bottom = None
    if _spans_decades(*ys):
        ax.set_yscale("log")
        pos = np.concatenate([y[y > 0] for y in ys])
        top = pos.max()
        bottom = max(pos.min(), top * SPECTRUM_FLOOR)
        ax.set_ylim(bottom / 2, top * 3)
    else:
        ax.set_ylim(bottom=0)
    for line, y in zip(lines, ys):
        note = hidden_text(y, ax.get_yscale() == "log", bottom, points="wavenumbers")
        if note:
            line.set_label(f"{line.get_label()}: {note}")
    ax.set_xlim(0, q.max())
    ax.axvline(1.0, color="0.3", linestyle=(0, (1, 1.5)), linewidth=1.2)
    ax.annotate(r"$k\xi = 1$", xy=(1.0, 1.0), xycoords=("data", "axes fraction"),
                xytext=(3, -12), textcoords="offset points", fontsize=9)
    ax.set_xlabel(r"wavenumber $k\xi$")
    ax.set_ylabel(r"$dN/d(k\xi)$ [phonons per unit $k\xi$]")
    f = 1e-6 / xi
    sec = ax.secondary_xaxis("top", functions=(lambda x: x * f, lambda k_: k_ / f))
    sec.set_xlabel(f"k [{pretty_unit('1/um')}]")
    ax.grid(True, which="major", color="0.85", linewidth=0.6)
    ax.set_title("spectrum of the emitted phonons", fontsize=9)


def _polar_series(sp, d, main, second):
    """(series, scale, unit, angles, values, axis text) of a 2D or 3D
    direction spectrum: 3D dN/dcos(theta) -> dN/dOmega mirrored about the
    axis, 2D dN/dphi closed around the circle."""
    if d == 3:
        theta = np.arccos(np.clip(np.asarray(sp["cos_theta"], float), -1, 1))
        return ([("dN_dcos_theta", main), ("dN_dcos_theta_excited", second)],
                1 / (2 * math.pi), "1/sr", np.concatenate([theta[::-1], -theta]),
                lambda v: np.concatenate([v[::-1], v]), r"$\theta$ from the mean velocity")
    phi = np.asarray(sp["phi"], float)
    return ([("dN_dphi", main), ("dN_dphi_excited", second)], 1.0, "1/rad",
            np.concatenate([phi, phi[:1]]), lambda v: np.concatenate([v, v[:1]]),
            r"$\phi$ from the mean velocity")


def _mach_cone(ax, c, speed):
    """The Mach cone cos(theta) = c/v of a supersonic straight transit."""
    cone = math.acos(c / speed)
    for a in (cone, -cone):
        ax.plot([a, a], [0, ax.get_rmax()], color="0.3", linestyle=(0, (4, 2)),
                linewidth=1.1)
    ax.plot([], [], color="0.3", linestyle=(0, (4, 2)),
            label=f"Mach cone, cos = $c_s/v$ = {c / speed:.3g}")


def pattern_panel(ax, result, speed=None):
    """The directions of the emitted phonons on ``ax`` (polar in 2D and 3D,
    bars in 1D); ``speed`` (m/s) marks the Mach cone when supersonic."""
    import matplotlib.ticker as mticker

    sp = _spectrum_of(result)
    main, second = _start_labels(sp)
    if result.dimension == 1:
        return _pattern_bars(ax, sp, main, second)
    series, scale, unit, angles, values, axis_text = _polar_series(
        sp, result.dimension, main, second)
    ax.set_theta_zero_location("E")
    k, top = 0, 0.0
    for key, lab in series:
        if lab is None or key not in sp:
            continue
        r = np.asarray(sp[key], float) * scale
        ax.plot(angles, values(r), label=lab, markevery=max(1, angles.size // 24),
                **_style(k))
        top = max(top, float(np.nanmax(r)))
        k += 1
    if top > 0:
        ax.set_rlim(0, 1.1 * top)          # the largest lobe clear of the frame
    if speed is not None and speed > result.sound_speed:
        _mach_cone(ax, result.sound_speed, speed)
    ax.set_rlabel_position(157.5)
    ax.yaxis.set_major_locator(mticker.MaxNLocator(4))
    ax.tick_params(labelsize=8)
    ax.set_title(f"directions: dN/d{'Ω' if result.dimension == 3 else 'φ'} [{unit}], "
                 f"{axis_text}; motion to the right", fontsize=9, pad=14)


def _pattern_bars(ax, sp, main, second):
    """Forward and backward counts of a 1D transit as bars."""
    keys = [("dN_backward", "dN_forward", main)]
    if second and "dN_forward_excited" in sp:
        keys.append(("dN_backward_excited", "dN_forward_excited", second))
    width = 0.8 / len(keys)
    for k, (b, f, lab) in enumerate(keys):
        xs = np.array([0, 1]) + (k - (len(keys) - 1) / 2) * width
        ax.bar(xs, [sp[b], sp[f]], width=width, facecolor="white" if k else "0.35",
               edgecolor="black", hatch=HATCHES[k] if k else None, label=lab)
    ax.set_xticks([0, 1], ["backward (-x)", "forward (+x)"])
    ax.set_ylabel("emitted phonons")
    ax.legend(fontsize=8, loc="best")
    ax.set_title("directions: phonons emitted backward and forward", fontsize=9)


def _totals_line(result):
    """The caption line of the totals."""
    total = getattr(result, SPECTRUM_OUTPUT, None)
    if total is None:
        return None
    err = getattr(result, f"{SPECTRUM_OUTPUT}_error", None)
    start = " (probe starting in its ground state)" if \
        "dN_dk_excited" in (result.spectrum or {}) else ""
    return f"N = {total:.4g}" + (f" ± {err:.2g}" if err else "") + \
        f" emitted phonons{start}"


# ---------------------------------------------------------------------------
# figures
# ---------------------------------------------------------------------------
def plot_transit(scenario, result, path=None):
    """The spectrum and the directions of the phonons emitted in the
    transit ``result`` of ``scenario`` (computed with ``spectrum=True``) in
    one figure; writes ``path`` when given and returns the Figure."""
    check_transit_plot(scenario)
    _spectrum_of(result)
    fig = _figure((11.0, 5.4))
    left = fig.add_subplot(1, 2, 1)
    right = fig.add_subplot(1, 2, 2, projection=None if result.dimension == 1 else "polar")
    spectrum_panel(left, result)
    pattern_panel(right, result, straight_speed(scenario))
    handles, labels = left.get_legend_handles_labels()
    extra = [(h, lb) for h, lb in zip(*right.get_legend_handles_labels())
             if lb.startswith("Mach cone")]
    _legend(fig, handles + [h for h, _ in extra], labels + [lb for _, lb in extra])
    lines = transit_caption(scenario, "phonons emitted in the transit")
    total = _totals_line(result)
    set_title(fig, lines + ([total] if total else []))
    if path is not None:
        save(fig, path)
    return fig


def _own_title(fig, scenario, result, what):
    lines = transit_caption(scenario, what) if scenario is not None else \
        [f"{what}, {result.dimension}D"]
    total = _totals_line(result)
    set_title(fig, lines + ([total] if total else []))


def plot_emission_pattern(result, path=None, speed=None, scenario=None):
    """The directions of the emitted phonons of a transit
    (:class:`probe.engines.transit.TransitResult` with a spectrum) as a
    figure of its own; ``speed`` (m/s) marks the Mach cone; ``scenario``
    names what was computed in the title."""
    fig = _figure((5.8, 6.2))
    ax = fig.add_subplot(projection=None if result.dimension == 1 else "polar")
    pattern_panel(ax, result, speed)
    handles, labels = ax.get_legend_handles_labels()
    if handles:
        _legend(fig, handles, labels, ncols=1)
    _own_title(fig, scenario, result, "directions of the emitted phonons")
    if path is not None:
        save(fig, path)
    return fig


def plot_emission_spectrum(result, path=None, scenario=None):
    """The wavenumber spectrum of the emitted phonons of a transit as a
    figure of its own; ``scenario`` names what was computed in the title."""
    fig = _figure((6.4, 5.4))
    ax = fig.add_subplot()
    spectrum_panel(ax, result)
    _legend(fig, *ax.get_legend_handles_labels(), ncols=1)
    _own_title(fig, scenario, result, "spectrum of the emitted phonons")
    if path is not None:
        save(fig, path)
    return fig


__all__ = ["plot_transit", "plot_emission_pattern", "plot_emission_spectrum",
           "check_transit_plot", "check_transit_plot_request", "spectrum_panel", "pattern_panel", "transit_caption"]
