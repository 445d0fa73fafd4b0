"""``probe passage CONFIG [--json] [-o/--out FILE.csv] [--plot FILE] [--set ...] [--unset ...]``.

The passage of a probe through a cloud (a harmonic trap, or the box of
``condensate.size``): the local-density rates along the path and the rate
equation of the populations (:mod:`probe.scenarios.passage`).  Registered on
the ``probe`` click group when ``probe.cli`` is imported.

``--out FILE.csv`` writes one row per time sample: ``time [s]``, the
position components ``x [m]`` (``y``, ``z`` in 2D and 3D), ``density
[m^-d]``, ``sound_speed [m/s]``, ``mach [1]``, ``speed [m/s]``, the local
outputs of the probe model (``gap [rad/s]``, ``up_rate [1/s]``,
``down_rate [1/s]`` ..., ``dephasing_rate [1/s]`` ...) and, for a model
with up and down rates, the ``excited_population [1]`` of the rate
equation.  ``--plot FILE`` draws the cloud with the path and the
population against time.  Both files are written whole or not at all, and
bad input ends with ``error: <key>: <message>`` and exit status 2 before
anything is written.
"""
from __future__ import annotations

import json
import warnings

import click
import numpy as np

from probe.cli.app import cli
from probe.cli.cloud import cloud_json
from probe.cli.common import (fail, input_errors, json_option, json_value, num,
                              out_option, q, quantity_text, report)
from probe.cli.outputs import Outputs, scenario_inputs
from probe.cli.progress import Progress
from probe.cli.planning import attach, planning_blocks, planning_inputs, planning_json
from probe.cli.rates import rows_derived, rows_inputs
from probe.quantities import kind_of, quantity, si_unit
from probe.scenarios.limits import fmt_time

_SET_HELP = ("Override a configuration entry, e.g. --set 'condensate.atom_number=1e5'. "
             "Repeatable.")
_UNSET_HELP = "Remove a configuration entry (before any --set). Repeatable."
AXES = ("x", "y", "z")


# ---------------------------------------------------------------------------
# table
# ---------------------------------------------------------------------------
def _vector(v, unit="um", scale=1e-6):
    return q(np.asarray(v, float), unit, scale).replace("[", "(").replace("]", ")")


def _path_rows(scenario, result):
    """What the path is and the time window of the passage."""
    raw = scenario.raw["trajectory"]
    path, kind = scenario.trajectory, raw["kind"]
    c = scenario.condensate.sound_speed
    d = scenario.condensate.dimension
    if kind == "linear":
        what = (f"straight, through {_vector(path.start[:d])} along "
                f"{num(np.asarray(path.direction[:d]))}")
    elif kind == "circular":
        what = (f"circle of radius {q(path.radius, 'um', 1e-6)} about "
                f"{_vector(path.centre[:d])}, {num(raw.get('turns', 1))} turn(s)")
    else:
        what = f"spline through {path.config_info.get('waypoints', '?')} waypoints" \
            if hasattr(path, "config_info") else "spline"
    speed = float(np.max(result.speed))
    t0, t1 = result.window
    return [("trajectory", what),
            ("speed" if kind != "spline" else "max speed",
             f"{q(speed, 'm/s')}  ({num(speed / c)} c_s at the centre)"),
            ("passage", f"t = {fmt_time(t0, t1 - t0)} .. {fmt_time(t1, t1 - t0)}  "
                        f"({fmt_time(t1 - t0)}), {result.time.size} samples")]


def _input_rows(scenario, result):
    """The gas and probe rows of ``probe rates`` (up to its path), then the
    passage's path."""
    info = scenario.describe()
    info["trajectory"] = {"kind": scenario.raw["trajectory"]["kind"],
                          "speed": float(np.max(result.speed))}
    rows = []
    for label, value in rows_inputs(scenario, info):
        if label == "trajectory":
            break
        rows.append((label, value))
    return rows + _path_rows(scenario, result)


def _result_rows(scenario, result, files):
    from probe.scenarios.passage import passage_outputs

    values = result.to_dict()
    rows = []
    for name in passage_outputs(scenario.probe):     # the totals of the model, in order
        qty = quantity(name)
        rows.append((qty.label, quantity_text(name, values[name], note=qty.note,
                                              sound_speed=scenario.condensate.sound_speed,
                                              dimension=scenario.condensate.dimension)))
    for label, name in files:
        rows.append((label, name))
    return rows


def format_passage_table(scenario, result, files=(), planning=None):
    """The readable report of a passage (and what its ``[uncertainty]`` and
    ``[readout]`` add: ``probe.cli.planning``)."""
    blocks = [("Inputs", _input_rows(scenario, result)),
              ("Derived", rows_derived(scenario, scenario.describe())),
              ("Results", _result_rows(scenario, result, files))]
    if planning is not None:
        blocks += planning_blocks(planning, scenario.condensate.dimension)
    return report(scenario.source, blocks, result.warnings)


# ---------------------------------------------------------------------------
# JSON and CSV
# ---------------------------------------------------------------------------
def passage_json(scenario, result, files=(), planning=None):
    """JSON-ready dict (SI): the passage's totals (``excited_probability``,
    ``first_order_up_probability``, ``passage_duration``, ``max_mach``,
    ``decoherence_exponent``, ``contrast`` ... as the model has them), the
    ``warnings``, the trap's derived keys, the time window and the inputs."""
    out = {"config": scenario.source}
    out.update({k: (json_value(v) if isinstance(v, float) else v)
                for k, v in result.to_dict().items()})
    out["sound_speed"] = scenario.condensate.sound_speed
    out["healing_length"] = scenario.condensate.healing_length
    out.update(cloud_json(scenario))
    out["window"] = list(result.window)
    out["samples"] = int(result.time.size)
    for key, name in files:
        out[key] = name
    info = scenario.describe()
    out["inputs"] = {k: info[k] for k in ("condensate", "probe", "trajectory", "numerics")}
    out["inputs"]["trajectory"].update(_path_json(scenario))
    out["inputs"]["numerics"]["passage_samples"] = scenario.passage_samples
    if planning is not None:
        out.update(planning_json(planning))
        out["inputs"].update(planning_inputs(planning))
    return out


def _path_json(scenario):
    """The straight line's start and direction, or the circle's centre and
    turns (SI)."""
    path, raw = scenario.trajectory, scenario.raw["trajectory"]
    if raw["kind"] == "linear":
        return {"start": path.start.tolist(), "direction": path.direction.tolist()}
    if raw["kind"] == "circular":
        from probe.scenarios.passage import turns
        return {"centre": path.centre.tolist(), "turns": turns(raw)}
    return {"time_span": list(path.time_span)}


def sample_columns(scenario, result):
    """``[(name, SI unit, values)]``: the columns of the CSV, one value per
    time sample."""
    d = scenario.condensate.dimension
    cols = [("time", "s", result.time)]
    cols += [(AXES[i], "m", result.position[:, i]) for i in range(d)]
    cols += [("density", si_unit("density", d), result.density),
             ("sound_speed", "m/s", result.sound_speed),
             ("mach", "1", result.mach), ("speed", "m/s", result.speed)]
    names = ["gap"] + [n for n in scenario.probe.rate_outputs if n != "excited_population"]
    names.append("excited_population")
    cols += [(n, si_unit(kind_of(n), d), result.samples[n]) for n in names
             if n in result.samples]
    return cols


def passage_csv(scenario, result):
    """The CSV text: a header naming every column with its unit, then one
    row per time sample (a Mach number at a point without gas is ``inf``)."""
    cols = sample_columns(scenario, result)
    lines = [",".join(f"{name} [{unit}]" for name, unit, _ in cols)]
    data = np.column_stack([np.asarray(v, float) for _, _, v in cols])
    lines += [",".join(f"{x:.10g}" for x in row) for row in data]
    return "\n".join(lines) + "\n"


# ---------------------------------------------------------------------------
# command
# ---------------------------------------------------------------------------
def _write(outputs, scenario, result, out, plot):
    """Draw the figure and write the CSV beside their targets (put in place
    by ``outputs.commit``); ``[(label, file)]`` of what is written."""
    files = []
    if plot is not None:
        from probe.design.passage_plots import plot_passage
        from probe.scenarios.passage import cloud_of
        plot_passage(result, cloud_of(scenario), outputs.temporary(plot, "--plot"),
                     scenario=scenario)
        files.append(("plot file", plot))
    if out is not None:
        outputs.stage_text(out, passage_csv(scenario, result), "--out")
        files.insert(0, ("samples file", out))
    return files


@cli.command()
@click.argument("config", metavar="CONFIG")
@json_option("Print JSON instead of the table.")
@out_option("FILE.csv", "Write one row per time sample to FILE.csv (whole or not at all).")
@click.option("--plot", "plot", default=None, metavar="FILE",
              help="Draw the cloud with the path and the population against time "
                   "(PNG, PDF or SVG by extension).")
@click.option("--set", "overrides", multiple=True, metavar="KEY=VALUE", help=_SET_HELP)
@click.option("--unset", "removals", multiple=True, metavar="KEY", help=_UNSET_HELP)
def passage(config, as_json, out, plot, overrides, removals):
    """The passage through a cloud (a harmonic trap, or the box of
    condensate.size): local-density rates along the path and the rate
    equation of the populations."""
    from probe.design.planning import plan_passage, planning_spec, sample_count
    from probe.scenarios.config import load_config
    from probe.scenarios.passage import passage_outputs

    try:
        with Outputs() as outputs:
            if plot is not None:
                from probe.design.plots import check_plot_path
                check_plot_path(plot)
            scenario = load_config(config, overrides, removals=removals)
            outputs.add_inputs(scenario_inputs(scenario.source, scenario.raw))
            outputs.check(out, "--out")
            outputs.check(plot, "--plot")
            spec = planning_spec(scenario, passage_outputs(scenario.probe), rest=False)
            steps = 1 + (0 if spec is None else sample_count(spec))
            with warnings.catch_warnings(), \
                    Progress(steps, "passage", delay=True) as bar:
                # overflow and division warnings of numpy at the cloud's edge (where
                # the density and the sound speed vanish) are not for the reader
                warnings.simplefilter("ignore", RuntimeWarning)
                result = scenario.passage()
                bar(1)
                plan = None if spec is None else plan_passage(scenario, result, spec,
                                                              progress=bar)
            if plan is not None:
                attach(result, plan)
            files = _write(outputs, scenario, result, out, plot)
            if as_json:
                keys = [("samples_file" if "samples" in label else "plot_file", name)
                        for label, name in files]
                text = json.dumps(passage_json(scenario, result, keys, plan), indent=2,
                                  allow_nan=False)
            else:
                text = format_passage_table(scenario, result, files, plan)
            outputs.commit()
    except input_errors() as exc:
        fail(exc)
    click.echo(text)


__all__ = ["passage", "passage_csv", "passage_json", "format_passage_table",
           "sample_columns"]
