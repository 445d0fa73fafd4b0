"""``probe transit CONFIG [CONFIG ...] [--json] [-o FILE] [--spectrum FILE.csv] [--plot FILE] [--set ...]``.

First-order probabilities of finite transits (a spline path, or a linear or
circular path with a switching function; keys in
:mod:`probe.transit_config`).  Registered on the ``probe`` click group when
``probe.cli`` is imported.

``--spectrum FILE.csv`` writes the emitted-phonon distribution of the
``emitted_phonons`` channel (the probe starting in its ground state; the
density probe's emission) to two CSV files.  Lines starting with ``#`` are
comments (what was computed, totals); the first other line names every column
with its unit in square brackets (``[1]``: a pure number).

* ``FILE.csv``, over the wavenumber k (one row per quadrature node):
  ``k [1/m], energy [J], dk [1/m], dN_dk [m], dN_dE [1/J]`` and, for a
  two-level probe, ``dN_dk_excited [m]`` (starting excited).  ``dk`` is the
  node's quadrature weight (the node spacing -- uniform in k or, on the FFT
  route, in frequency, times dk/dw -- end-corrected at k = 0), so
  ``sum(dN_dk * dk)`` over the rows is ``emitted_phonons``.
* ``FILE.directions.csv`` (``.directions`` inserted before the suffix), over
  directions, bin averages: 3D ``cos_theta_low [1], cos_theta_high [1],
  cos_theta [1], dN_dcos_theta [1]`` with theta the polar angle from the
  axis given in the comments (the mean-velocity direction, or z); 2D
  ``phi_low [rad], phi_high [rad], phi [rad], dN_dphi [1/rad]`` with phi
  measured counter-clockwise from the axis; 1D ``direction [sign of k_x],
  dN [1]`` (forward and backward rows).  ``*_excited`` columns as above.
  ``sum(density * (high - low))`` is ``emitted_phonons``.

Both are written to hidden temporary files beside them and renamed when
every output of the run is complete, so an error or an interrupt never
leaves a half-written file (:mod:`probe.cli.outputs`).  Bad input ends with
``error: <key>: <message>`` and exit status 2.
"""
from __future__ import annotations

import math
from pathlib import Path

import click

from probe.cli.app import cli
from probe.cli.cloud import cloud_json
from probe.cli.common import (fail, input_errors, json_option, load_configs, num, out_option,
                              outputs_json, q, report, result_rows)
from probe.cli.outputs import Outputs, json_by_suffix, scenario_inputs
from probe.cli.progress import Progress
from probe.cli.planning import attach, planning_blocks, planning_inputs, planning_json
from probe.cli.rates import rows_derived, rows_inputs, stage_report
from probe.errors import InputError
from probe.quantities import headline, quantity
from probe.scenarios.limits import fmt_time
from probe.scenarios.transit import check_transit, describe

_SET_HELP = ("Override a configuration entry, e.g. --set 'trajectory.switching_width=3 ms'. "
             "Repeatable; applied to every CONFIG.")
_UNSET_HELP = ("Remove a configuration entry, e.g. --unset trajectory.switching_centre "
               "(before any --set). Repeatable; applied to every CONFIG.")


# ---------------------------------------------------------------------------
# derived numbers shared by the table and JSON
# ---------------------------------------------------------------------------
def _extras(scenario, result, info):
    sw = info["switching"]
    teff = sw["effective_duration"]
    out = {"transit_duration": sw["transit_duration"],
           "switching_on": sw["on_interval"],
           "effective_duration": teff}
    for name in headline(scenario.probe.transit_outputs):
        mean = quantity(name).mean_rate
        if mean is not None:
            out[mean] = getattr(result, name) / teff
    return out


# ---------------------------------------------------------------------------
# table
# ---------------------------------------------------------------------------
def _rows_path(scenario, info):
    cond = scenario.condensate
    c, xi = cond.sound_speed, cond.healing_length
    trj = info["trajectory"]
    if scenario.trajectory.stationary:
        # the gas, probe and path rows of `probe rates`
        return rows_inputs(scenario, info)
    stand_in = dict(info, trajectory={"kind": trj["kind"], "speed": trj["max_speed"]})
    rows = []
    for label, value in rows_inputs(scenario, stand_in):
        if label == "trajectory":
            break
        rows.append((label, value))
    where = f", from {trj['file']}" if "file" in trj else " (inline)"
    t0, t1 = trj["time_span"]
    rows += [("trajectory", f"spline of order {trj['order']} through "
                            f"{trj['waypoints']} waypoints{where}"),
             ("path time span", f"{fmt_time(t0, t1 - t0)} .. {fmt_time(t1, t1 - t0)}  "
                                f"({fmt_time(t1 - t0)}, {num((t1 - t0) * cond.frequency_unit)}"
                                " xi/c)"),
             ("path length", f"{q(trj['path_length'], 'um', 1e-6)}  "
                             f"({num(trj['path_length'] / xi)} xi)"),
             ("start -> end point", f"{q(trj['start_point'], 'um', 1e-6)} -> "
                                    f"{q(trj['end_point'], 'um', 1e-6)}"),
             ("max speed", f"{q(trj['max_speed'], 'm/s')}  "
                           f"({num(trj['max_speed'] / c)} c_s)"),
             ("max acceleration", q(trj["max_acceleration"], "m/s^2"))]
    return rows


def _rows_switching(scenario, info):
    sw = info["switching"]
    if sw["kind"] == "gaussian":
        what = (f"gaussian, width tau = {fmt_time(sw['width'])}, centre "
                f"t = {fmt_time(sw['centre'], sw['width'])}")
    else:
        span = sw["stop"] - sw["start"]
        what = (f"{sw['kind']}, {fmt_time(sw['start'], span)} .. "
                f"{fmt_time(sw['stop'], span)}, ramp {fmt_time(sw['ramp'])}")
    t0, t1 = sw["on_interval"]
    w0 = scenario.condensate.frequency_unit
    return [("switching", what),
            (f"coupling on (chi > {sw['on_level']:g})",
             f"{fmt_time(t0, t1 - t0)} .. {fmt_time(t1, t1 - t0)}"),
            ("transit duration", f"{fmt_time(sw['transit_duration'])}  "
                                 f"({num(sw['transit_duration'] * w0)} xi/c)"),
            ("effective duration", f"{fmt_time(sw['effective_duration'])}  "
                                   "(int chi^2 dt)"),
            ("requested accuracy", f"transit_rtol = {num(scenario.transit_rtol)}"
                                   + ("" if scenario.transit_method == "auto" else
                                      f", transit_method = {scenario.transit_method!r}"))]


def _rows_results(scenario, result, extras, files):
    names = list(scenario.probe.transit_outputs)
    names += [quantity(n).mean_rate for n in names if quantity(n).mean_rate in extras]
    rows = result_rows(result, names, values=extras, sound_speed=result.sound_speed,
                       dimension=scenario.condensate.dimension)
    g = result.grid or {}
    rows += [("achieved accuracy", f"{num(result.achieved_rtol, 3)}  (relative; requested "
                                   f"{num(scenario.transit_rtol)})"),
             ("grid", f"{g.get('n_times')} times x {g.get('n_wavenumbers')} wavenumbers "
                      f"(k_max xi = {num(g.get('k_max', math.nan) * result.healing_length, 4)})"
                      + (f" x up to {g.get('max_directions')} directions"
                         if g.get("max_directions") else "")),
             ("amplitudes", _ROUTES.get(g.get("method"), "").format(**g))]
    for label, name in zip(("spectrum file", "directions file"), files):
        rows.append((label, name))
    return rows


_ROUTES = {
    "phasor": "direct sums, wavenumber-uniform nodes",
    "fft": "FFT over time, frequency-uniform nodes (FFT length {fft_length})",
    "lag": "lag sums of the switching's autocorrelation (separations depend on the lag "
           "alone: angles exact)",
    "pairs": "double time sum over pairs of times ({chebyshev_terms} Chebyshev terms in the "
             "separation: angles exact)",
}


def format_transit_table(scenario, result, info, extras, files=(), planning=None):
    """The readable report of one transit (and what its ``[uncertainty]`` and
    ``[readout]`` add: ``probe.cli.planning``)."""
    blocks = [("Inputs", _rows_path(scenario, info) + _rows_switching(scenario, info)),
              ("Derived", rows_derived(scenario, info)),
              ("Results", _rows_results(scenario, result, extras, files))]
    if planning is not None:
        blocks += planning_blocks(planning, scenario.condensate.dimension)
    return report(scenario.source, blocks, result.warnings)


def transit_json(scenario, result, info, extras, files=(), planning=None):
    """JSON-ready dict: every TransitResult field and declared output but the
    spectrum arrays (SI), durations and mean rates, gas quantities and the
    validated inputs (and the planning's outputs and bands)."""
    out = {"config": scenario.source}
    data = outputs_json(result, scenario.probe.transit_outputs)
    data.pop("spectrum", None)
    out.update(data)
    out.update(extras)
    if planning is not None:
        out.update(planning_json(planning))
    out["gas_parameter"] = info["derived"]["gas_parameter"]
    out["gas_parameter_name"] = info["derived"]["gas_parameter_name"]
    out["healing_length_convention"] = "xi = hbar/(m c)"
    out.update(cloud_json(scenario))
    if files:
        out["spectrum_file"], out["spectrum_directions_file"] = files
    out["inputs"] = {k: info[k] for k in ("condensate", "probe", "trajectory",
                                          "switching", "numerics")}
    if planning is not None:
        out["inputs"].update(planning_inputs(planning))
    return out


# ---------------------------------------------------------------------------
# spectrum files
# ---------------------------------------------------------------------------
def directions_path(path):
    """``FILE.csv`` -> ``FILE.directions.csv``."""
    p = Path(path)
    return str(p.with_name(p.stem + ".directions" + p.suffix)) if p.suffix \
        else str(p.with_name(p.name + ".directions"))


def _g(x):
    return f"{float(x):.10g}"


def spectrum_tables(scenario, result):
    """``(radial_text, directions_text)``: the two CSV files as strings."""
    sp = result.spectrum
    k = sp["k"]
    dk = sp["dk"]
    excited = "dN_dk_excited" in sp         # a second series: the probe starting excited
    total, err = result.emitted_phonons, result.emitted_phonons_error
    what = ("probe starting in its ground state (columns *_excited: starting excited)"
            if excited else f"{result.model} probe")
    head = [f"# emitted-phonon distribution of a transit: {scenario.source or '(dict)'}",
            f"# channel: {what}",
            f"# emitted_phonons = {_g(total)} +/- {num(err, 2)}; "
            f"achieved_rtol = {num(result.achieved_rtol, 3)}",
            f"# sound_speed = {_g(result.sound_speed)} m/s, healing_length = "
            f"{_g(result.healing_length)} m"]
    rad = head + ["# sum(dN_dk * dk) over the rows = emitted_phonons "
                  "(dk: quadrature weight of the node)"]
    cols = ["k [1/m]", "energy [J]", "dk [1/m]", "dN_dk [m]", "dN_dE [1/J]"]
    data = [k, sp["energy"], dk, sp["dN_dk"], sp["dN_dE"]]
    if excited:
        cols.append("dN_dk_excited [m]")
        data.append(sp["dN_dk_excited"])
    rad.append(",".join(cols))
    rad += [",".join(_g(col[i]) for col in data) for i in range(k.size)]

    d = result.dimension
    dirs = head[:]
    if d == 3:
        axis = ", ".join(_g(a) for a in sp["axis"])
        dirs.append(f"# theta: polar angle from the axis ({axis}); bin averages; "
                    "sum(dN_dcos_theta * (high - low)) = emitted_phonons")
        e = sp["cos_theta_edges"]
        cols = ["cos_theta_low [1]", "cos_theta_high [1]", "cos_theta [1]",
                "dN_dcos_theta [1]"]
        data = [e[:-1], e[1:], sp["cos_theta"], sp["dN_dcos_theta"]]
        if excited:
            cols.append("dN_dcos_theta_excited [1]")
            data.append(sp["dN_dcos_theta_excited"])
    elif d == 2:
        axis = ", ".join(_g(a) for a in sp["axis"])
        dirs.append(f"# phi: angle from the axis ({axis}), counter-clockwise; bin "
                    "averages; sum(dN_dphi * (high - low)) = emitted_phonons")
        e = sp["phi_edges"]
        cols = ["phi_low [rad]", "phi_high [rad]", "phi [rad]", "dN_dphi [1/rad]"]
        data = [e[:-1], e[1:], sp["phi"], sp["dN_dphi"]]
        if excited:
            cols.append("dN_dphi_excited [1/rad]")
            data.append(sp["dN_dphi_excited"])
    else:
        dirs.append("# phonons emitted along +x (direction 1) and -x (direction -1); "
                    "their sum = emitted_phonons")
        cols = ["direction [sign of k_x]", "dN [1]"]
        data = [[1, -1], [sp["dN_forward"], sp["dN_backward"]]]
        if excited:
            cols.append("dN_excited [1]")
            data.append([sp["dN_forward_excited"], sp["dN_backward_excited"]])
    dirs.append(",".join(cols))
    n = len(data[0])
    dirs += [",".join(_g(col[i]) for col in data) for i in range(n)]
    return "\n".join(rad) + "\n", "\n".join(dirs) + "\n"


def write_spectrum(outputs, path, scenario, result):
    """Write both spectrum files beside their names (put in place by
    ``outputs.commit``); returns their names."""
    targets = (str(path), directions_path(path))
    for target, text in zip(targets, spectrum_tables(scenario, result)):
        outputs.stage_text(target, text, "--spectrum")
    return targets


# ---------------------------------------------------------------------------
# command
# ---------------------------------------------------------------------------
def _check_files(outputs, scenarios, out, spectrum, plot):
    """Every file the run writes, before anything is computed."""
    for scenario in scenarios:
        outputs.add_inputs(scenario_inputs(scenario.source, scenario.raw))
    outputs.check(out, "--out")
    if spectrum is not None:
        if len(scenarios) != 1:
            raise InputError("--spectrum", f"writes the files of one scenario; give "
                                           f"one CONFIG (got {len(scenarios)})")
        from probe.design.transit_plots import check_transit_plot
        check_transit_plot(scenarios[0], "--spectrum")
        outputs.check(spectrum, "--spectrum")
        outputs.check(directions_path(spectrum), "--spectrum", what="the directions file")
    if plot is not None:
        from probe.design.transit_plots import check_transit_plot_request
        check_transit_plot_request(plot, scenarios)
        outputs.check(plot, "--plot")


def _run(outputs, scenarios, spectrum, plot):
    """The transits, their planning, and the files of the spectrum and figure."""
    from probe.design.planning import plan_transit, planning_spec, sample_count

    done = []
    specs = [planning_spec(s) for s in scenarios]
    steps = sum(1 + (0 if spec is None else sample_count(spec)) for spec in specs)
    with Progress(steps, "transit", delay=True) as bar:
        for scenario, spec in zip(scenarios, specs):
            result = scenario.transit(spectrum=spectrum is not None or plot is not None)
            info = describe(scenario)
            plan = None if spec is None else plan_transit(scenario, result, spec,
                                                          progress=bar)
            if plan is not None:
                attach(result, plan)
            files = ()
            if spectrum is not None:
                files = write_spectrum(outputs, spectrum, scenario, result)
            if plot is not None:
                from probe.design.transit_plots import plot_transit
                plot_transit(scenario, result, outputs.temporary(plot, "--plot"))
            done.append((scenario, result, info, _extras(scenario, result, info), files,
                         plan))
            bar(1)
    return done


@cli.command()
@click.argument("configs", nargs=-1, required=True, metavar="CONFIG [CONFIG ...]")
@json_option("Print JSON (an object for one config, an array for several).")
@out_option("FILE", "Write the table (JSON with --json or when FILE ends in .json) to "
                    "FILE instead of the terminal; FILE is written whole or left untouched.")
@click.option("--spectrum", "spectrum", metavar="FILE.csv", default=None,
              help="Write the emitted-phonon distribution over k to FILE.csv and over "
                   "directions to FILE.directions.csv (one CONFIG only).")
@click.option("--plot", "plot", metavar="FILE", default=None,
              help="Draw the emitted-phonon spectrum and directions (PNG, PDF or SVG; "
                   "one CONFIG only).")
@click.option("--set", "overrides", multiple=True, metavar="KEY=VALUE", help=_SET_HELP)
@click.option("--unset", "removals", multiple=True, metavar="KEY", help=_UNSET_HELP)
def transit(configs, as_json, out, spectrum, plot, overrides, removals):
    """First-order transition probabilities of finite transits: a spline path
    through waypoints, or a linear or circular path with a switching function."""
    try:
        with Outputs() as outputs:
            scenarios = load_configs(configs, overrides, removals)
            for scenario in scenarios:
                check_transit(scenario)
            _check_files(outputs, scenarios, out, spectrum, plot)
            done = _run(outputs, scenarios, spectrum, plot)
            text = stage_report(outputs, out, as_json,
                                lambda: [transit_json(*item) for item in done],
                                lambda: [format_transit_table(*item) for item in done],
                                key="--out")
            outputs.commit()
    except input_errors() as exc:
        fail(exc)
    if text is not None:
        click.echo(text)
        if plot is not None and not (as_json or json_by_suffix(out)):
            click.echo(f"wrote {plot}")
