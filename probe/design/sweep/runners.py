"""Tasks of a sweep and where they run: in this process, in local worker
processes, or on a Dask cluster (the numbers are the same in all three).

Points that share the values of every key not passed to the engine as an
array share one scenario; a task holds chunks of such points."""
from __future__ import annotations

import functools
import json
import threading

import numpy as np

from probe.design.sweep.evaluators import evaluator_for
from probe.design.sweep.keys import assign
from probe.errors import InputError

#: the warnings of a point joined into one CSV cell
WARNING_SEPARATOR = " | "

_SCENARIO_LOCK = threading.Lock()


@functools.lru_cache(maxsize=64)
def _scenario(raw_json, source, group):
    from probe.scenarios.config import scenario_from_dict

    raw = json.loads(raw_json)
    return scenario_from_dict(assign(raw, dict(group)), source=source)


def _group_scenario(raw_json, source, group):
    # pint's registry is not meant for concurrent use: one build at a time
    with _SCENARIO_LOCK:
        return _scenario(raw_json, source, group)


def run_task(task):
    """Evaluate one task: ``(raw_json, source, pieces)`` with pieces
    ``(group, axes, index)``; ``group`` is a tuple of (key, config value) for
    the axes set through the configuration, ``axes`` a tuple of
    (key, engine argument or None, relative, values) for every axis.
    Returns a list of (index, rows, warnings)."""
    raw_json, source, pieces = task
    out = []
    for group, axes, index in pieces:
        scenario = _group_scenario(raw_json, source, group)
        n = len(index)
        c = scenario.condensate.sound_speed
        arrays, axis_cols = {}, []
        for key, arg, relative, values in axes:
            v = np.asarray(values, float) * (c if relative else 1.0)
            axis_cols.append(v)
            if arg is not None:
                arrays[arg] = v
        rows, warns = evaluator_for(scenario).evaluate(scenario, arrays, n)
        full = np.column_stack([np.asarray(index, float)] + axis_cols + [rows]) \
            if axis_cols else np.column_stack([np.asarray(index, float), rows])
        out.append((np.asarray(index), full, [WARNING_SEPARATOR.join(w) for w in warns]))
    return out


def _groups(plan, indices):
    """(sub, group_axes, gkey, order): the grid indices of the points, the
    axes set through the configuration, each point's indices along them and
    the points sorted by group."""
    sub = np.unravel_index(indices, plan.shape) if plan.axes else ()
    group_axes = [k for k, a in enumerate(plan.axes) if a.key not in plan.vector]
    if group_axes:
        gkey = np.stack([sub[k] for k in group_axes], axis=1)
        order = np.lexsort(gkey.T[::-1])
    else:
        gkey = np.zeros((len(indices), 0), int)
        order = np.arange(len(indices))
    return sub, group_axes, gkey, order


def make_tasks(plan, indices, chunk):
    """Split the points ``indices`` (sorted flat indices) into tasks of
    about ``chunk`` points."""
    raw_json = json.dumps(plan.raw, sort_keys=True)
    axes = plan.axes
    sub, group_axes, gkey, order = _groups(plan, indices)
    tasks, current, filled = [], [], 0

    def flush():
        nonlocal current, filled
        if current:
            tasks.append((raw_json, plan.source, tuple(current)))
        current, filled = [], 0

    start = 0
    while start < len(order):
        g = tuple(gkey[order[start]])
        stop = start
        while stop < len(order) and tuple(gkey[order[stop]]) == g:
            stop += 1
        sel = order[start:stop]
        group = tuple((axes[k].key, axes[k].text(i)) for k, i in zip(group_axes, g))
        for s in range(0, sel.size, chunk):
            part = sel[s:s + chunk]
            if filled and filled + part.size > chunk:
                flush()
            ax = tuple((a.key, plan.vector.get(a.key), a.relative,
                        a.values[sub[k][part]]) for k, a in enumerate(axes))
            current.append((group, ax, indices[part]))
            filled += part.size
            if filled >= chunk:
                flush()
        start = stop
    flush()
    return tasks


def _worker_init():
    import signal
    signal.signal(signal.SIGINT, signal.SIG_IGN)


def _pool(workers):
    """Worker processes started from a fork server that has imported the
    engine (cheap to start; forking this process directly would share its
    memory copy-on-write, which measurably slows the workers, and is unsafe
    when it runs other threads); spawned where there is no fork server."""
    import multiprocessing as mp
    from concurrent.futures import ProcessPoolExecutor

    if "forkserver" in mp.get_all_start_methods():
        ctx = mp.get_context("forkserver")
        ctx.set_forkserver_preload(["probe.design.sweep", "probe.engines.stationary",
                                    "probe.scenarios.config"])
    else:
        ctx = mp.get_context("spawn")
    return ProcessPoolExecutor(max_workers=workers, mp_context=ctx,
                               initializer=_worker_init)


def run_local(tasks, workers, handle):
    """Run the tasks here (``workers`` <= 1) or in local processes; every
    task's result goes to ``handle`` as it finishes."""
    if workers <= 1 or len(tasks) < 2:
        for t in tasks:
            handle(run_task(t))
        return
    from concurrent.futures import as_completed

    ex = _pool(workers)
    try:
        futures = [ex.submit(run_task, t) for t in tasks]
        for fut in as_completed(futures):
            handle(fut.result())
    except BaseException:
        ex.shutdown(wait=True, cancel_futures=True)
        raise
    ex.shutdown(wait=True)


def _client(scheduler):
    """(client, own): a Dask client for ``scheduler`` (an address, or a
    client to use as it is)."""
    from distributed import Client

    if isinstance(scheduler, Client):
        return scheduler, False
    try:
        return Client(scheduler, timeout="20s"), True
    except (OSError, TimeoutError, ValueError) as exc:
        raise InputError("--scheduler", f"cannot connect to {scheduler!r}: "
                                        f"{exc}") from None


def run_dask(tasks, scheduler, handle):
    """Run the tasks on a Dask cluster; results go to ``handle``."""
    try:
        from distributed import as_completed
    except ImportError:
        raise InputError("--scheduler", "needs the optional Dask packages: "
                                        "pip install 'condensate-probe[cluster]'") from None
    client, own = _client(scheduler)
    try:
        futures = client.map(run_task, tasks, pure=False)
        try:
            for fut in as_completed(futures):
                handle(fut.result())
        except BaseException:
            client.cancel(futures)
            raise
    finally:
        if own:
            client.close()
