"""Experiment-design commands of ``probe``: sweep, compare, threshold, solve.

They are registered on the ``probe`` click group (``probe.cli.cli``) when
``probe.cli`` is imported.  Bad input ends with ``error: <key>: <message>``
and exit status 2, before any output file is created.
"""
from __future__ import annotations

import shlex
import sys

import click

from probe.cli.app import cli
from probe.cli.common import EXIT_INPUT, fail, input_errors

_VARY_HELP = ("Grid over a numeric key, START and STOP with units, e.g. "
              "'trajectory.speed=0.5c_s:3c_s:101' or "
              "'trajectory.radius=2um:50um:40'. Repeat for a 2D grid "
              "(the first key varies slowest).")
_SET_HELP = ("Override a configuration entry, e.g. --set 'trajectory.speed=2 c_s'. "
             "Repeatable.")
_UNSET_HELP = ("Remove a configuration entry, e.g. --unset probe.gap (before any --set). "
               "Repeatable.")


def _command_line():
    return " ".join(shlex.quote(a) for a in ["probe", *sys.argv[1:]])


def _check_plot(path):
    if path is not None:
        from probe.design.plots import check_plot_path
        check_plot_path(path)


class _Progress:
    """click.progressbar on stderr, only when stderr is a terminal."""

    def __init__(self, total, label):
        self.bar = None
        if total > 1 and sys.stderr.isatty():
            self.bar = click.progressbar(length=total, label=label, file=sys.stderr,
                                         show_pos=True, show_eta=True)
            self.bar.__enter__()

    def __call__(self, n):
        if self.bar is not None:
            self.bar.update(n)

    def close(self):
        if self.bar is not None:
            self.bar.__exit__(None, None, None)
            self.bar = None


def _interrupted(out):
    click.echo(f"interrupted: finished rows are kept in {out}.partial; "
               "run the same command with --resume to continue", err=True)
    sys.exit(130)


# ---------------------------------------------------------------------------
# sweep
# ---------------------------------------------------------------------------
@cli.command()
@click.argument("config", metavar="CONFIG")
@click.option("--vary", "vary", multiple=True, required=True,
              metavar="KEY=START:STOP:NUM", help=_VARY_HELP)
@click.option("--log", "log", multiple=True, metavar="KEY",
              help="Space the points of KEY geometrically (repeatable).")
@click.option("--out", "out", required=True, metavar="FILE.csv",
              help="CSV to write; a JSON sidecar FILE.json records config and versions.")
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
def sweep(config, vary, log, out, overrides, removals, resume, workers, scheduler, plot,
          quantity):
    """Rates (probabilities for a switched transit) on a 1D or 2D grid over
    numeric configuration keys, written to a CSV whose header names every
    column with its unit."""
    from probe.design.sweep import plan_sweep, sidecar_path, sweep as run

    errors = input_errors()
    try:
        _check_plot(plot)
        plan = plan_sweep(config, vary, log, overrides, removals=removals)
        if plot is not None and quantity is not None:
            from probe.design.plots import check_quantity
            check_quantity(plan.columns, quantity)
        bar = _Progress(plan.size, "sweep")
        try:
            result = run(plan, vary, log, overrides, out=out, resume=resume,
                         workers=workers, scheduler=scheduler, progress=bar,
                         command=_command_line(), removals=removals)
        except KeyboardInterrupt:
            bar.close()
            _interrupted(out)
        bar.close()
        if plot is not None:
            from probe.design.plots import plot_sweep
            plot_sweep(result, plot, quantity=quantity)
    except errors as exc:
        fail(exc)
    n = result.data.shape[0]
    flagged = sum(1 for w in result.warnings if w)
    missing = sum(1 for w in result.warnings if w.startswith("no result"))
    grid = f"{' x '.join(str(s) for s in result.shape)} = {n}" if len(result.shape) > 1 \
        else f"{n}"
    click.echo(f"wrote {out} ({grid} points, {len(result.columns)} columns) "
               f"and {sidecar_path(out)}")
    resumed = result.meta["evaluation"]["points_resumed"]
    if resumed:
        click.echo(f"resumed: {resumed} points were kept from the interrupted run")
    if flagged:
        click.echo(f"warnings at {flagged} of {n} points (see the warnings column)"
                   + (f"; no result at {missing} points" if missing else ""))
    if plot is not None:
        click.echo(f"wrote {plot}")


# ---------------------------------------------------------------------------
# compare
# ---------------------------------------------------------------------------
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
@click.option("--out", "out", default=None, metavar="FILE.csv",
              help="Write the side-by-side table to a CSV.")
@click.option("--plot", "plot", default=None, metavar="FILE",
              help="Overlaid plot of the models (PNG, PDF or SVG).")
@click.option("--set", "overrides", multiple=True, metavar="KEY=VALUE", help=_SET_HELP)
@click.option("--unset", "removals", multiple=True, metavar="KEY", help=_UNSET_HELP)
@click.option("--workers", type=int, default=1, show_default=True, metavar="N",
              help="Local processes to split each grid over.")
@click.option("--scheduler", metavar="ADDRESS", default=None,
              help="Run on a Dask distributed scheduler.")
def compare(config, vary, log, models, gap, width, temperature, out, plot,
            overrides, removals, workers, scheduler):
    """Evaluate the same grid for several detector-response models and state
    where they differ."""
    from probe.design.compare import compare as run

    errors = input_errors()
    try:
        _check_plot(plot)
        names = None if models is None else [m.strip() for m in models.split(",") if m.strip()]
        result = run(config, vary, log=log, models=names, overrides=overrides,
                     removals=removals, gap=gap, width=width, temperature=temperature,
                     workers=workers, scheduler=scheduler)
        if out is not None:
            result.to_csv(out)
        if plot is not None:
            from probe.design.plots import plot_comparison
            plot_comparison(result, plot)
    except errors as exc:
        fail(exc)
    click.echo(result.summary())
    _report_written(out, plot)


def _report_written(*paths):
    """Say which of the requested files were written."""
    for path in paths:
        if path is not None:
            click.echo(f"wrote {path}")


# ---------------------------------------------------------------------------
# threshold
# ---------------------------------------------------------------------------
@cli.command()
@click.argument("config", metavar="CONFIG")
@click.option("--vary", "vary", multiple=True, metavar="probe.gap=START:STOP:NUM",
              help="Gaps to tabulate (default: a decade either side of the "
                   "configured gap, 41 points, logarithmic).")
@click.option("--log", "log", multiple=True, metavar="KEY",
              help="Space the gaps geometrically (the default grid already is).")
@click.option("--out", "out", default=None, metavar="FILE.csv", help="Write the table to a CSV.")
@click.option("--plot", "plot", default=None, metavar="FILE",
              help="Plot threshold speed and sound speed versus gap.")
@click.option("--set", "overrides", multiple=True, metavar="KEY=VALUE", help=_SET_HELP)
@click.option("--unset", "removals", multiple=True, metavar="KEY", help=_UNSET_HELP)
def threshold(config, vary, log, out, plot, overrides, removals):
    """Up-transition threshold speed of straight motion versus the gap, with
    the sound speed."""
    from probe.design.solver import threshold_table

    errors = input_errors()
    try:
        _check_plot(plot)
        table = threshold_table(config, vary=vary, log=log, overrides=overrides,
                                removals=removals)
        if out is not None:
            table.to_csv(out)
        if plot is not None:
            from probe.design.plots import plot_threshold
            plot_threshold(table, plot)
    except errors as exc:
        fail(exc)
    click.echo(table.summary(rows=out is None))
    _report_written(out, plot)


# ---------------------------------------------------------------------------
# solve
# ---------------------------------------------------------------------------
@cli.command()
@click.argument("config", metavar="CONFIG")
@click.option("--for", "key", required=True, metavar="KEY",
              help="Numeric key to solve for, e.g. trajectory.speed.")
@click.option("--target", required=True, metavar="QUANTITY=VALUE",
              help="Target, e.g. up_rate=50 (1/s) or \"up_rate=50 1/s\".")
@click.option("--range", "bounds", default=None, metavar="LO:HI",
              help="Allowed values of KEY with units, e.g. 0.5c_s:3c_s.")
@click.option("--set", "overrides", multiple=True, metavar="KEY=VALUE", help=_SET_HELP)
@click.option("--unset", "removals", multiple=True, metavar="KEY", help=_UNSET_HELP)
def solve(config, key, target, bounds, overrides, removals):
    """Find the value of KEY at which a result reaches a target (scan for a
    bracket, then Brent's method)."""
    from probe.design.solver import solve as run

    errors = input_errors()
    try:
        sol = run(config, key, target, bounds=bounds, overrides=overrides,
                  removals=removals)
    except errors as exc:
        fail(exc)
    click.echo(sol.summary())


__all__ = ["sweep", "compare", "threshold", "solve", "EXIT_INPUT"]
