"""Experiment-design commands of ``probe``: sweep, compare, threshold, solve.

They are registered on the ``probe`` click group (``probe.cli.cli``) when
``probe.cli`` is imported.  Bad input ends with ``error: <key>: <message>``
and exit status 2, before any output file is created.
"""
from __future__ import annotations

import dataclasses
import shlex
import sys

import click

from probe.cli.app import cli
from probe.cli.common import (EXIT_INPUT, fail, input_errors, json_option, json_text,
                              jsonable, out_option)
from probe.cli.outputs import Outputs, json_by_suffix, scenario_inputs
from probe.cli.progress import Progress
from probe.errors import InputError
from probe.quantities import counted

_VARY_HELP = ("Grid over a numeric key, START and STOP with units, e.g. "
              "'trajectory.speed=0.5c_s:3c_s:101' or "
              "'trajectory.radius=2um:50um:40'. Repeat for a 2D grid "
              "(the first key varies slowest).")
_SET_HELP = ("Override a configuration entry, e.g. --set 'trajectory.speed=2 c_s'. "
             "Repeatable.")
_UNSET_HELP = ("Remove a configuration entry, e.g. --unset probe.gap (before any --set). "
               "Repeatable.")


def _target_names():
    from probe.quantities import QUANTITIES
    return ", ".join(q.name for q in QUANTITIES.values() if q.target)


#: the quantities ``probe solve --target`` may aim at (the registry's targets)
_TARGETS = _target_names()


def _command_line():
    return " ".join(shlex.quote(a) for a in ["probe", *sys.argv[1:]])


def _check_plot(outputs, path):
    """The figure's name (suffix, folder) and path, before computing."""
    if path is not None:
        from probe.design.plots import check_plot_path
        check_plot_path(path)
        outputs.check(path, "--plot")


def _stage_plot(outputs, path, draw, *args, **kwargs):
    """Draw the figure to a temporary file beside ``path`` (put in place by
    ``outputs.commit``)."""
    if path is not None:
        draw(*args, outputs.temporary(path, "--plot"), **kwargs)


def _stage_table(outputs, out, result, to_json):
    """The table of a compare or threshold run: CSV, or JSON when the name
    ends in .json."""
    if out is None:
        return
    if json_by_suffix(out):
        outputs.stage_text(out, json_text(to_json(result)) + "\n", "--out")
    else:
        result.to_csv(outputs.temporary(out, "--out"))


def _table_json(columns, units, rows):
    """Columns with their units and the rows of a table (SI)."""
    return {"columns": [{"name": c, "unit": u} for c, u in zip(columns, units)],
            "rows": rows}


#: the sweep's progress bar (one mechanism for every command: probe.cli.progress)
_Progress = Progress


def _interrupted(out, exc):
    """The one line of an interrupted sweep; exit status 128 + the signal's
    number, as a shell reports it (130 for Ctrl-C, 143 for SIGTERM)."""
    if out is None:
        click.echo("interrupted", err=True)
    else:
        click.echo(f"interrupted: finished rows are kept in {out}.partial; "
                   "run the same command with --resume to continue", err=True)
    sys.exit(128 + getattr(exc, "signum", 2))


# ---------------------------------------------------------------------------
# sweep
# ---------------------------------------------------------------------------
def _check_sweep_files(outputs, out, plot, resume):
    """Every file a sweep writes, before computing: the CSV, its sidecar,
    the partial files and the figure."""
    from probe.design.sweep import sidecar_path

    if out is None and resume:
        raise InputError("--resume", "continues the partial file of --out; give "
                                     "--out FILE.csv")
    if out is not None:
        outputs.check(out, "--out")
        _check_netcdf(out)
        outputs.check(sidecar_path(out), "--out", what="the JSON sidecar")
        outputs.check(f"{out}.partial", "--out", what="the partial file")
        outputs.check(f"{out}.partial.json", "--out", what="the partial file's plan")
    _check_plot(outputs, plot)


def _check_netcdf(out):
    """A ``.nc`` output needs xarray: refuse before computing."""
    from probe.design.sweep.files import is_netcdf

    if is_netcdf(out):
        try:
            import xarray  # noqa: F401
        except ImportError:
            raise InputError("--out", f"{out} asks for NetCDF, which needs the optional "
                             "package xarray: pip install \"condensate-probe[notebook]\" "
                             "(or give a .csv name)") from None


def sweep_json(result, out=None, plot=None):
    """The grid as JSON: columns with units, rows (SI; the warnings text
    last), the grid's shape and axes, and the files written."""
    from probe.design.sweep import sidecar_path

    rows = [[*row, w] for row, w in zip(jsonable(result.data), result.warnings)]
    files = {"out": None if out is None else str(out),
             "sidecar": None if out is None else str(sidecar_path(out)), "plot": plot}
    return {"shape": list(result.shape), "axes": [a.to_dict() for a in result.axes],
            **_table_json(result.columns, result.units, rows), "files": files}


def _sweep_summary(result, out, plot, resume=False):
    from probe.design.sweep import sidecar_path

    n = result.data.shape[0]
    flagged = sum(1 for w in result.warnings if w)
    missing = sum(1 for w in result.warnings if w.startswith("no result"))
    grid = f"{' x '.join(str(s) for s in result.shape)} = {n}" if len(result.shape) > 1 \
        else f"{n}"
    lines = [f"wrote {out} ({counted(n, 'point') if len(result.shape) == 1 else grid + ' points'}"
             f", {counted(len(result.columns), 'column')}) and {sidecar_path(out)}"]
    resumed = result.meta["evaluation"]["points_resumed"]
    if resumed:
        lines.append(f"resumed: {counted(resumed, 'point was', 'points were')} kept from "
                     "the interrupted run")
    elif resume:
        lines.append(f"resumed: no interrupted run was found ({out}.partial), "
                     "so every point was computed")
    if flagged:
        lines.append(f"warnings at {flagged} of {counted(n, 'point')} (see the warnings "
                     "column)" + (f"; no result at {counted(missing, 'point')}"
                                  if missing else ""))
    if plot is not None:
        lines.append(f"wrote {plot}")
    return "\n".join(lines)


@cli.command()
@click.argument("config", metavar="CONFIG")
@click.option("--vary", "vary", multiple=True, required=True,
              metavar="KEY=START:STOP:NUM", help=_VARY_HELP)
@click.option("--log", "log", multiple=True, metavar="KEY",
              help="Space the points of KEY geometrically (repeatable).")
@out_option("FILE.csv", "CSV to write (NetCDF for a .nc name, needs xarray); a JSON "
                        "sidecar FILE.json records config and versions (needed unless "
                        "--json).")
@json_option("Print the grid as JSON on stdout (columns with units, rows, warnings).")
@click.option("--set", "overrides", multiple=True, metavar="KEY=VALUE", help=_SET_HELP)
@click.option("--unset", "removals", multiple=True, metavar="KEY", help=_UNSET_HELP)
@click.option("--resume", is_flag=True,
              help="Continue an interrupted sweep from FILE.csv.partial.")
@click.option("--workers", type=int, default=1, show_default=True, metavar="N",
              help="Local processes to split the grid over.")
@click.option("--scheduler", metavar="ADDRESS", default=None,
              help="Run on a Dask distributed scheduler (pip install .[cluster]).")
@click.option("--plot", "plot", metavar="FILE", default=None,
              help="Also draw the result (PNG, PDF or SVG by extension).")
@click.option("--quantity", metavar="NAME", default=None,
              help="Column to plot (default: up/down rates or probabilities, or "
                   "the emission rate).")
def sweep(config, vary, log, out, as_json, overrides, removals, resume, workers, scheduler,
          plot, quantity):
    """Rates (probabilities for a switched transit) on a 1D or 2D grid over
    numeric configuration keys, written to a CSV whose header names every
    column with its unit."""
    if workers > 1 and scheduler is None:
        from probe.design.workers import start_fork_server
        start_fork_server()                  # imports the engine beside ours
    from probe.design.sweep import plan_sweep, sidecar_path, sweep as run

    try:
        with Outputs() as outputs:
            if out is None and not as_json:
                raise InputError("--out", "missing; give --out FILE.csv (the grid's CSV) "
                                          "or --json to print the grid")
            plan = plan_sweep(config, vary, log, overrides, removals=removals)
            outputs.add_inputs(scenario_inputs(plan.source, plan.raw))
            _check_sweep_files(outputs, out, plot, resume)
            if quantity is not None:
                from probe.design.plots import check_quantity
                check_quantity(plan.columns, quantity)
            if out is not None:
                outputs.watch(out, sidecar_path(out))
            with Progress(plan.size, "sweep") as bar:
                try:
                    result = run(plan, vary, log, overrides, out=out, resume=resume,
                                 workers=workers, scheduler=scheduler, progress=bar,
                                 command=_command_line(), removals=removals)
                except KeyboardInterrupt as exc:
                    bar.close()
                    _interrupted(out, exc)
            if plot is not None:
                from probe.design.plots import plot_sweep
                _stage_plot(outputs, plot, plot_sweep, result, quantity=quantity)
            outputs.commit()
    except input_errors() as exc:
        fail(exc)
    click.echo(json_text(sweep_json(result, out, plot)) if as_json
               else _sweep_summary(result, out, plot, resume))


# ---------------------------------------------------------------------------
# compare
# ---------------------------------------------------------------------------
def compare_json(cmp):
    """A comparison as JSON: the grid, the models, the stated differences,
    what was not compared, and the side-by-side table (SI; status text)."""
    status = [v.status() for v in cmp.variants]
    rows = [[*row, *(s[i] for s in status)] for i, row in enumerate(jsonable(cmp.data))]
    return {"grid": [a.to_dict() for a in cmp.axes], "tolerance": cmp.tolerance,
            "models": [{"name": v.name, "label": v.label, "comparison": v.comparison}
                       for v in cmp.variants],
            "differences": list(cmp.statements), "not_compared": list(cmp.notes),
            **_table_json(cmp.columns, cmp.units, rows)}


@cli.command()
@click.argument("config", metavar="CONFIG")
@click.option("--vary", "vary", multiple=True, required=True,
              metavar="KEY=START:STOP:NUM", help=_VARY_HELP)
@click.option("--log", "log", multiple=True, metavar="KEY",
              help="Space the points of KEY geometrically (repeatable).")
@click.option("--models", "models", default=None, metavar="LIST",
              help="Comma-separated comparisons: probe, dispersion, width, "
                   "temperature (default: every one that applies).")
@click.option("--gap", default=None, metavar="VALUE",
              help="Gap of the two-level variant when CONFIG has a density probe.")
@click.option("--width", default=None, metavar="VALUE",
              help="Width of the finite-width variant when CONFIG has a point probe.")
@click.option("--temperature", default=None, metavar="VALUE",
              help="Temperature of the thermal variant when CONFIG has T = 0.")
@out_option("FILE.csv", "Write the side-by-side table to a CSV (JSON when FILE ends "
                        "in .json).")
@json_option("Print the comparison as JSON on stdout (models, differences, table).")
@click.option("--plot", "plot", default=None, metavar="FILE",
              help="Overlaid plot of the models (PNG, PDF or SVG).")
@click.option("--set", "overrides", multiple=True, metavar="KEY=VALUE", help=_SET_HELP)
@click.option("--unset", "removals", multiple=True, metavar="KEY", help=_UNSET_HELP)
@click.option("--workers", type=int, default=1, show_default=True, metavar="N",
              help="Local processes to split each grid over.")
@click.option("--scheduler", metavar="ADDRESS", default=None,
              help="Run on a Dask distributed scheduler.")
def compare(config, vary, log, models, gap, width, temperature, out, as_json, plot,
            overrides, removals, workers, scheduler):
    """Evaluate the same grid for several detector-response models and state
    where they differ."""
    from probe.design.compare import compare as run

    try:
        with Outputs(_config_inputs(config, overrides, removals)) as outputs:
            outputs.check(out, "--out")
            _check_plot(outputs, plot)
            names = None if models is None else [m.strip() for m in models.split(",")
                                                 if m.strip()]
            with Progress(0, "compare") as bar:
                result = run(config, vary, log=log, models=names, overrides=overrides,
                             removals=removals, gap=gap, width=width,
                             temperature=temperature, workers=workers,
                             scheduler=scheduler, progress=bar)
            _stage_table(outputs, out, result, compare_json)
            if plot is not None:
                from probe.design.plots import plot_comparison
                _stage_plot(outputs, plot, plot_comparison, result)
            outputs.commit()
    except input_errors() as exc:
        fail(exc)
    if as_json:
        click.echo(json_text(compare_json(result)))
        return
    click.echo(result.summary())
    _report_written(out, plot)


def _config_inputs(config, overrides=(), removals=()):
    """The files a scenario file reads (itself and its waypoint CSV); its
    errors are left to the command that reads it."""
    from probe.design.sweep import raw_config

    try:
        raw, source = raw_config(config, overrides, removals=removals)
    except input_errors():
        return [config]
    return scenario_inputs(source, raw)


def _report_written(*paths):
    """Say which of the requested files were written."""
    for path in paths:
        if path is not None:
            click.echo(f"wrote {path}")


# ---------------------------------------------------------------------------
# threshold
# ---------------------------------------------------------------------------
def threshold_json(table):
    """The threshold table as JSON (SI), with the configured point and notes."""
    return {"dispersion": table.dispersion, "temperature": table.temperature,
            "configured": table.configured, "notes": list(table.notes),
            **_table_json(table.columns, table.units, jsonable(table.data))}


@cli.command()
@click.argument("config", metavar="CONFIG")
@click.option("--vary", "vary", multiple=True, metavar="probe.gap=START:STOP:NUM",
              help="Gaps to tabulate (default: a decade either side of the "
                   "configured gap, 41 points, logarithmic).")
@click.option("--log", "log", multiple=True, metavar="KEY",
              help="Space the gaps geometrically (the default grid already is).")
@out_option("FILE.csv", "Write the table to a CSV (JSON when FILE ends in .json).")
@json_option("Print the table as JSON on stdout.")
@click.option("--plot", "plot", default=None, metavar="FILE",
              help="Plot threshold speed and sound speed versus gap.")
@click.option("--set", "overrides", multiple=True, metavar="KEY=VALUE", help=_SET_HELP)
@click.option("--unset", "removals", multiple=True, metavar="KEY", help=_UNSET_HELP)
def threshold(config, vary, log, out, as_json, plot, overrides, removals):
    """Up-transition threshold speed of straight motion versus the gap, with
    the sound speed."""
    from probe.design.solver import threshold_table

    try:
        with Outputs(_config_inputs(config, overrides, removals)) as outputs:
            outputs.check(out, "--out")
            _check_plot(outputs, plot)
            table = threshold_table(config, vary=vary, log=log, overrides=overrides,
                                    removals=removals)
            _stage_table(outputs, out, table, threshold_json)
            if plot is not None:
                from probe.design.plots import plot_threshold
                _stage_plot(outputs, plot, plot_threshold, table)
            outputs.commit()
    except input_errors() as exc:
        fail(exc)
    if as_json:
        click.echo(json_text(threshold_json(table)))
        return
    click.echo(table.summary(rows=out is None))
    _report_written(out, plot)


# ---------------------------------------------------------------------------
# solve
# ---------------------------------------------------------------------------
def solve_json(sol):
    """The solution as JSON (SI): the key's value, the quantity reached,
    the other values that reach it, the searched range and warnings."""
    out = dataclasses.asdict(sol)
    out["warnings"] = [w for w in sol.warnings.split(" | ") if w]
    return jsonable(out)


def _flat_zero_target(sol):
    """InputError when the target is a zero that the quantity keeps over a
    stretch of the key (a rate that vanishes below a threshold): no single
    value solves it."""
    if sol.target != 0 or not sol.others:
        return
    values = [sol.value, *sol.others]
    shown = [sol._text(v).replace("  ", " ") for v in (min(values), max(values))]
    raise InputError("--target", f"{sol.quantity} = 0 holds at {len(values)} scan points "
                                 f"of {sol.key}, from {shown[0]} to {shown[1]}: it "
                                 "vanishes below a threshold, so no single value "
                                 "reaches the target; find the threshold with "
                                 "'probe threshold CONFIG'")


@cli.command()
@click.argument("config", metavar="CONFIG")
@click.option("--for", "key", required=True, metavar="KEY",
              help="Numeric key to solve for, e.g. trajectory.speed.")
@click.option("--target", required=True, metavar="QUANTITY=VALUE",
              help="Target, e.g. up_rate=50 (1/s) or \"up_rate=50 1/s\". QUANTITY is "
                   "one of the configured model's outputs among: " + _TARGETS + ".")
@click.option("--range", "bounds", default=None, metavar="LO:HI",
              help="Allowed values of KEY with units, e.g. 0.5c_s:3c_s.")
@out_option("FILE", "Write the solution to FILE instead of the terminal (JSON when "
                    "FILE ends in .json or with --json, else the text).")
@json_option("Print the solution as JSON.")
@click.option("--set", "overrides", multiple=True, metavar="KEY=VALUE", help=_SET_HELP)
@click.option("--unset", "removals", multiple=True, metavar="KEY", help=_UNSET_HELP)
def solve(config, key, target, bounds, out, as_json, overrides, removals):
    """Find the value of KEY at which a result reaches a target (scan for a
    bracket, then Brent's method)."""
    from probe.design.solver import solve as run

    try:
        with Outputs(_config_inputs(config, overrides, removals)) as outputs:
            outputs.check(out, "--out")
            with Progress(0, "solve", delay=True) as bar:
                sol = run(config, key, target, bounds=bounds, overrides=overrides,
                          removals=removals, progress=bar)
            _flat_zero_target(sol)
            as_json = as_json or json_by_suffix(out)
            text = json_text(solve_json(sol)) if as_json else sol.summary()
            if out is not None:
                outputs.stage_text(out, text + "\n", "--out")
            outputs.commit()
    except input_errors() as exc:
        fail(exc)
    if out is None:
        click.echo(text)


__all__ = ["sweep", "compare", "threshold", "solve", "EXIT_INPUT"]
