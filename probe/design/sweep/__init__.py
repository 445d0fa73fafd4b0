"""Parameter sweeps: rates on 1D and 2D grids over numeric configuration keys.

Python use::

    from probe.design.sweep import sweep
    res = sweep("examples/ring2d_circular.toml",
                vary=[("trajectory.speed", "0.2 c_s", "2 c_s", 40),
                      ("trajectory.radius", "2 um", "50 um", 30)],
                log=("trajectory.radius",))
    res.columns            # ['point', 'trajectory.speed', 'trajectory.radius', ...]
    res.units              # ['1', 'm/s', 'm', ...]   (SI, pint-readable)
    res.data               # float array (points, columns), SI units
    res.grid("up_rate")    # the up rate (1/s) reshaped to (40, 30)

Grid.  Each ``vary`` entry is ``(KEY, START, STOP, NUM)`` (or the string
``"KEY=START:STOP:NUM"``); START and STOP are strings with units as in a
scenario file, and speeds may be written in units of the gas's sound speed
(``"0.5 c_s"``, resolved at every point with that point's sound speed).  A
key in ``log`` is spaced geometrically.  Points are numbered in C order: the
first key varies slowest.

Evaluation.  Points that share the values of every key other than the
engine's arguments (``trajectory.speed``, ``trajectory.radius``) and the
probe model's array keys (``probe.gap``) share one scenario; the engine is
called once per chunk of such points with arrays of speeds, radii and gaps.  A point at which the model has no answer (the engine
raises ``ModelError``, e.g. the divergent supersonic rate of a point probe
with the phonon dispersion) gets NaN values and the reason in its
``warnings`` entry; the other points are unaffected.  Chunks run in this
process, in ``workers`` local processes, or on a Dask cluster
(``scheduler``); the numbers are the same in all three cases.

Files.  With ``out`` the rows go to ``OUT.partial`` as chunks finish
(flushed), next to a plan file ``OUT.partial.json`` that identifies the
sweep (its configuration, grid, version and the content of every file the
scenario reads, such as a spline's waypoint CSV); ``resume=True`` keeps the
rows already there and computes only the missing points.  One run at a time
writes them: it holds the lock file ``OUT.lock`` (another run is refused).
An interrupt (Ctrl-C, SIGTERM), a lost Dask scheduler or a worker process
that dies keep the partial file for ``--resume``.  On completion the rows are put in point order, the CSV
appears at ``OUT`` in one rename, and a JSON sidecar (``OUT`` with suffix
``.json``) records the configuration, the grid, the columns with units and
the versions of the tool and its libraries.

Finite transits.  When the scenario is a switched transit
(``Scenario.is_transit``) every point is one transit and the columns are the
probe model's transit outputs (``up_probability``, ``down_probability`` or
``emitted_phonons`` ...) instead of rates; in a harmonic trap (``Scenario.is_passage``) every point
is one passage through the cloud (``probe passage``) and the columns are
its results (``excited_probability`` ...); evaluators are chosen by
:func:`evaluator_for`.

Uncertainty.  A scenario with ``[uncertainty]`` (or a switched transit with
``[readout]``) adds the readout's outputs and, for every main output, the
columns ``NAME_p2_5``, ``NAME_p16``, ``NAME_p50``, ``NAME_p84`` and
``NAME_p97_5`` of its Monte Carlo band at each point (``planning``).

Modules: ``keys`` (the numeric keys, edits of a configuration), ``grid``
(axes and the checked plan), ``evaluators`` (what a point computes, and its
columns), ``runners`` (tasks, local and Dask execution), ``files`` (CSV,
sidecar, partial file), ``display`` (readable units) and ``planning``
(bands of uncertain inputs).
"""
from __future__ import annotations

import contextlib
import math
import os
import signal
import threading
import time

import numpy as np

from probe.design.sweep.display import (COLUMN_KINDS, axis_value_text, column_kind,
                                        display_unit, format_value)
from probe.design.sweep.evaluators import (EVALUATORS, PassageEvaluator, RatesEvaluator,
                                           TransitEvaluator, evaluate_point, evaluator_for)
from probe.design.sweep.files import (PartialFile, SweepResult, cell_text, library_versions,
                                      meta_libraries, read_sweep, sidecar_path, sweep_meta,
                                      write_csv, write_json)
from probe.design.sweep.grid import (MAX_POINTS, Axis, Plan, make_axis, parse_vary,
                                     plan_sweep)
from probe.design.sweep.keys import (NUMERIC_KEYS, VECTOR_KEYS, assign, check_numeric_key,
                                     raw_config, value_text)
from probe.design.sweep.planning import PlanningEvaluator, band_column
from probe.design.sweep.runners import SweepStopped, make_tasks, run_dask, run_local
from probe.design.workers import start_fork_server
from probe.errors import InputError, ModelError
from probe.quantities import si_unit

#: the partial file of an unfinished sweep (the name the tests use)
_Partial = PartialFile

# a scenario with [uncertainty] (or a transit with [readout]) is planned:
# the rows of its own evaluator, the readout's outputs and the bands
EVALUATORS.insert(0, PlanningEvaluator())


class _Collector:
    """The rows of a sweep as its tasks finish: in memory, in the partial
    file, and counted for the progress display."""

    def __init__(self, plan, partial, progress):
        n = plan.size
        self.data = np.full((n, len(plan.columns) - 1), np.nan)   # without the warnings
        self.warnings = [""] * n
        self.done = np.zeros(n, bool)
        self.partial = partial
        self.progress = progress
        if partial is not None:
            partial.open()
            for idx, (row, w) in partial.done.items():
                self.data[idx] = row
                self.warnings[idx] = w
                self.done[idx] = True

    def __call__(self, results):
        count = 0
        for index, rows, wlist in results:
            new = ~self.done[index]              # a piece may repeat kept points
            index, rows = index[new], rows[new]
            wlist = [w for w, keep in zip(wlist, new) if keep]
            self.data[index] = rows
            for i, w in zip(index, wlist):
                self.warnings[int(i)] = w
            self.done[index] = True
            if self.partial is not None:
                self.partial.write(index, rows, wlist)
            count += len(index)
        if self.progress is not None:
            self.progress(count)


def _checked_workers(workers, scheduler):
    workers = 1 if workers is None else int(workers)
    if workers < 1:
        raise InputError("--workers", f"must be at least 1, got {workers}")
    if scheduler is not None and workers > 1:
        raise InputError("--workers", "not used with --scheduler (the cluster "
                                      "brings its own workers)")
    return workers


#: an engine that evaluates point by point cuts a grid into this many tasks at
#: least (fixed pieces, whatever the number of workers), so that the last
#: tasks, which decide when the workers end, are short
MIN_TASKS = 64


def _chunk_size(plan, chunk_size):
    """Points per task: the evaluator's choice for the scenario (an
    engine's chunk, one transit), fewer for a small grid of an engine that
    computes point by point.  The pieces of the grid depend neither on the
    workers nor on what a resumed run had (an engine that evaluates an array
    at once may give digits that depend on the array's other points)."""
    ev = evaluator_for(plan.scenario)
    if chunk_size is None:
        chunk_size = ev.chunk(plan.scenario)
        if ev.pointwise(plan.scenario):
            chunk_size = min(chunk_size, math.ceil(plan.size / MIN_TASKS))
    return max(1, int(chunk_size))


class SweepInterrupted(KeyboardInterrupt):
    """The sweep's process was asked to stop (SIGTERM): handled as Ctrl-C
    (the partial file is kept for ``--resume``)."""

    signum = 15


class _Signals:
    """While the sweep runs, SIGTERM raises :class:`SweepInterrupted` (in
    the main thread, where no other handler was installed), so that the
    workers are stopped and the partial file closed whole; in
    :meth:`finishing` SIGTERM and Ctrl-C wait until the table is in place
    (the work is done: the sweep then ends normally)."""

    def __init__(self):
        self.main = threading.current_thread() is threading.main_thread()
        self.installed = False
        self.deferring = False

    def _stop(self, signum, frame):
        if not self.deferring:
            raise SweepInterrupted()

    def __enter__(self):
        try:
            if self.main and signal.getsignal(signal.SIGTERM) == signal.SIG_DFL:
                signal.signal(signal.SIGTERM, self._stop)
                self.installed = True
        except (AttributeError, ValueError):
            pass
        return self

    def __exit__(self, *exc):
        if self.installed:
            signal.signal(signal.SIGTERM, signal.SIG_DFL)

    @contextlib.contextmanager
    def finishing(self):
        old = signal.getsignal(signal.SIGINT) if self.main else None
        if old is not None:
            signal.signal(signal.SIGINT, lambda signum, frame: None)
        self.deferring = True
        try:
            yield
        finally:
            self.deferring = False
            if old is not None:
                signal.signal(signal.SIGINT, old)


def _stopped(exc, partial):
    """The one-line refusal of a sweep whose machinery stopped, saying how
    to continue."""
    where = (f"; the finished rows are kept in {os.fspath(partial.path)}: run the "
             "same command with --resume to continue") if partial is not None else ""
    return InputError(exc.option, exc.message + where)


class _Versions:
    """The library versions a sweep's sidecar records, looked up once
    (tens of milliseconds): while local workers compute, else at the end."""

    def __init__(self, scheduler):
        self.extra = meta_libraries(scheduler)
        self.value = None

    def __call__(self):
        if self.value is None:
            self.value = library_versions(self.extra)
        return self.value


def _run(tasks, workers, scheduler, collect, versions=None):
    """Run the tasks; bad input at a point removes the partial file, an
    interrupt or anything else keeps it (a lost cluster or worker process
    ends in a one-line error saying how to resume)."""
    from trajectories import TrajectoryError

    partial = collect.partial
    try:
        if scheduler is not None:
            run_dask(tasks, scheduler, collect)
        else:
            run_local(tasks, workers, collect, aside=versions)
    except SweepStopped as exc:
        if partial is not None:
            partial.close()
        raise _stopped(exc, partial) from None
    except (InputError, ModelError, TrajectoryError):
        if partial is not None:
            partial.discard()
        raise
    except BaseException:
        if partial is not None:
            partial.close()
        raise


def _evaluate(plan, partial, progress, chunk_size, workers, scheduler, command, signals):
    """(collected rows, sidecar record) of the points not yet in the
    partial file; the complete table put in place."""
    collect = _Collector(plan, partial, progress)
    todo = np.nonzero(~collect.done)[0]
    tasks = make_tasks(plan, todo, _chunk_size(plan, chunk_size))
    if progress is not None and collect.done.any():
        progress(int(collect.done.sum()))
    t0 = time.perf_counter()
    versions = _Versions(scheduler)
    _run(tasks, workers, scheduler, collect, versions)
    meta = sweep_meta(plan, workers=workers, scheduler=scheduler,
                      elapsed=time.perf_counter() - t0,
                      resumed=int(plan.size - todo.size), command=command,
                      libraries=versions())
    if partial is not None:
        with signals.finishing():
            partial.finish(collect.data, collect.warnings, meta)
    return collect, meta


def sweep(config, vary, log=(), overrides=(), out=None, resume=False,
          workers=1, scheduler=None, progress=None, chunk_size=None,
          command=None, source=None, removals=()):
    """Evaluate the rates on a grid.

    Parameters
    ----------
    config : path of a scenario file, or its dict (or a :class:`Plan` from
        :func:`plan_sweep`, in which case ``vary``, ``log``, ``overrides``
        and ``removals`` are taken from it)
    vary : list of ``(KEY, START, STOP, NUM)`` or ``"KEY=START:STOP:NUM"``
        (one or two entries); START/STOP strings with units
    log : keys spaced geometrically
    overrides : ``"section.key=value"`` strings applied first (as ``--set``)
    removals : ``"section.key"`` strings removed before the overrides are
        applied (as ``--unset``)
    out : CSV path; rows are kept in ``out + ".partial"`` until the end
    resume : continue the partial file of an interrupted run of the same sweep
    workers : local processes (1: in this process); a script that uses
        several must start from an ``if __name__ == "__main__":`` block, as
        usual for :mod:`multiprocessing`
    scheduler : address of a Dask scheduler (or a ``distributed.Client``)
    progress : callable receiving the number of points finished by each chunk
    chunk_size : points per task (default: the evaluator's, by trajectory kind)
    command : the command line, recorded in the sidecar
    source : the file a dict ``config`` came from (locates relative paths)

    Returns a :class:`SweepResult` (SI units).
    """
    if scheduler is None and isinstance(workers, int) and workers > 1:
        start_fork_server()            # its imports overlap the planning
    plan = config if isinstance(config, Plan) else plan_sweep(config, vary, log, overrides,
                                                              source=source,
                                                              removals=removals)
    workers = _checked_workers(workers, scheduler)
    partial = PartialFile(out, plan, resume) if out is not None else None
    try:
        with _Signals() as signals:
            collect, meta = _evaluate(plan, partial, progress, chunk_size, workers,
                                      scheduler, command, signals)
    finally:
        if partial is not None:
            partial.release()
    return SweepResult(columns=list(plan.columns), units=list(plan.units),
                       data=collect.data, warnings=collect.warnings, shape=plan.shape,
                       axes=plan.axes, config=plan.raw, meta=meta)


__all__ = ["sweep", "plan_sweep", "Plan", "SweepResult", "Axis", "read_sweep",
           "parse_vary", "make_axis", "evaluate_point", "NUMERIC_KEYS",
           "VECTOR_KEYS", "MAX_POINTS", "EVALUATORS", "evaluator_for", "RatesEvaluator",
           "TransitEvaluator", "PassageEvaluator", "PartialFile", "library_versions", "sidecar_path",
           "sweep_meta", "write_csv", "write_json", "cell_text", "raw_config",
           "PlanningEvaluator", "band_column", "SweepStopped", "SweepInterrupted",
           "check_numeric_key", "si_unit", "display_unit", "format_value", "column_kind",
           "COLUMN_KINDS", "axis_value_text", "assign", "value_text"]
