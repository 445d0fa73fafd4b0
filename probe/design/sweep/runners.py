"""Tasks of a sweep and where they run: in this process, in local worker
processes, or on a Dask cluster (the numbers are the same in all three).

Points that share the values of every key not passed to the engine as an
array share one scenario; a task holds chunks of such points, the
configuration and the text of every file the scenario reads (read once when
the sweep was planned: a worker never reads them from its own disk or
working folder).

Local workers (``run_local``): ``workers - 1`` processes, on Linux forked
from this process before it computes (milliseconds), elsewhere started in
the background from a fork server that has imported the engine
(``probe.design.workers``) while this process computes.  Every process
holds the whole list of tasks: the workers take them from its start, this
process from its end, and whoever begins a task claims it first (a flag
per task in shared memory), so that nobody waits for tasks to be handed
out and they all end together.  Each worker sends its results down a pipe
of its own, which this process reads between its tasks (no thread of its
own does it), and watches a pipe from this process: it exits as soon as
that closes, when this process ends (even killed by SIGKILL) or stops the
pool (at the end, or at an interrupt).  A Dask cluster (``run_dask``) that stops answering
ends the run with :class:`SweepStopped`; the rows already finished stay.
"""
from __future__ import annotations

import contextlib
import functools
import json
import logging
import os
import threading

import numpy as np

from probe.design.sweep.evaluators import evaluator_for
from probe.design.sweep.keys import assign
from probe.design.workers import in_forked_worker, worker_context
from probe.errors import InputError, ModelError


class OtherColumns(RuntimeError):
    """A worker computed rows of another width than the plan's (another
    version of the package where it runs)."""


class SweepStopped(Exception):
    """The machinery running a sweep stopped before it finished (a worker
    process died, the Dask scheduler went away): the rows already finished
    are kept.  ``option`` names the command-line option it concerns."""

    def __init__(self, option, message):
        super().__init__(message)
        self.option, self.message = option, message

#: the warnings of a point joined into one CSV cell
WARNING_SEPARATOR = " | "

_SCENARIO_LOCK = threading.Lock()


@functools.lru_cache(maxsize=64)
def _scenario(raw_json, source, files, group):
    from probe.scenarios.config import scenario_from_dict

    raw = json.loads(raw_json)
    return scenario_from_dict(assign(raw, dict(group)), source=source)


def _group_scenario(raw_json, source, files, group):
    # pint's registry is not meant for concurrent use: one build at a time
    with _SCENARIO_LOCK:
        return _scenario(raw_json, source, files, group)


def run_task(task):
    """Evaluate one task: ``(raw_json, source, files, width, pieces)`` with
    ``files`` the pairs ((source, name), text) of the files the scenario
    reads, ``width`` the numbers in a row and pieces ``(group, axes,
    index)``; ``group`` is a tuple of (key, config value) for the axes set
    through the configuration, ``axes`` a tuple of (key, engine argument or
    None, relative, values) for every axis.  Returns a list of (index, rows,
    warnings)."""
    from probe.scenarios.files import pinned

    raw_json, source, files, width, pieces = task
    with pinned(files):
        out = [_run_piece(raw_json, source, files, piece) for piece in pieces]
    for _, rows, _ in out:
        if rows.shape[1] != width:
            raise OtherColumns(f"a worker computed rows of {rows.shape[1]} numbers where "
                               f"the sweep has {width} (another version of "
                               "condensate-probe where it runs?)")
    return out


def _run_piece(raw_json, source, files, piece):
    """(index, rows, warnings) of one piece of a task."""
    group, axes, index = piece
    scenario = _group_scenario(raw_json, source, files, group)
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
    return np.asarray(index), full, [WARNING_SEPARATOR.join(w) for w in warns]


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


def _pieces(plan, chunk):
    """The pieces of the whole grid: (group, part) with ``part`` the flat
    indices of at most ``chunk`` points of one group, the same whatever
    is left to compute (an engine that evaluates an array of points at once
    may give digits that depend on the array's other points)."""
    everything = np.arange(plan.size)
    sub, group_axes, gkey, order = _groups(plan, everything)
    axes, keys = plan.axes, gkey[order]
    # where the group changes along the sorted points
    cuts = np.nonzero(np.any(keys[1:] != keys[:-1], axis=1))[0] + 1
    bounds = [0, *cuts.tolist(), len(order)] if len(order) else [0]
    for start, stop in zip(bounds[:-1], bounds[1:]):
        g = tuple(keys[start])
        sel = order[start:stop]
        group = tuple((axes[k].key, axes[k].text(i)) for k, i in zip(group_axes, g))
        for s in range(0, sel.size, chunk):
            part = sel[s:s + chunk]
            yield group, tuple((a.key, plan.vector.get(a.key), a.relative,
                                a.values[sub[k][part]]) for k, a in enumerate(axes)), \
                everything[part]


def make_tasks(plan, indices, chunk):
    """Tasks of about ``chunk`` points that compute the points ``indices``:
    every piece of the grid (:func:`_pieces`) holding one of them, whole
    (its other points are computed again and given to the caller too)."""
    raw_json = json.dumps(plan.raw, sort_keys=True)
    files = tuple(sorted(plan.files.items(), key=lambda kv: repr(kv[0])))
    width = len(plan.columns) - 1                 # without the warnings
    wanted = np.zeros(plan.size, bool)
    wanted[np.asarray(indices, int)] = True
    tasks, current, filled = [], [], 0

    def flush():
        nonlocal current, filled
        if current:
            tasks.append((raw_json, plan.source, files, width, tuple(current)))
        current, filled = [], 0

    for group, ax, part in _pieces(plan, chunk):
        if not wanted[part].any():
            continue
        if filled and filled + part.size > chunk:
            flush()
        current.append((group, ax, part))
        filled += part.size
        if filled >= chunk:
            flush()
    flush()
    return tasks


# ---------------------------------------------------------------------------
# local worker processes
# ---------------------------------------------------------------------------
def _watch_parent(life):
    """Block until the pipe from the sweep's process closes (it ended or
    stopped the pool), then end this worker at once."""
    try:
        while True:
            life.recv_bytes()
    except (EOFError, OSError):
        pass
    os._exit(1)


def _claim(claims, i):
    """True for the first process that claims task ``i`` (it computes it).
    No lock (a worker killed while holding one would stop the others): two
    processes may, rarely, both claim a task; it is then computed twice, and
    its rows are kept once (the same numbers)."""
    if claims[i]:
        return False
    claims[i] = 1
    return True


def _worker_init(life, life_w=None):
    """In each worker: Ctrl-C goes to the sweep's process (which stops the
    pool), and the worker ends when that process does.  A worker forked
    from the sweep's process itself (``life_w``: the pipe's write end it
    inherited) closes that end and what else only the sweep holds."""
    import signal
    if life_w is not None:
        life_w.close()
        in_forked_worker()
    signal.signal(signal.SIGINT, signal.SIG_IGN)
    threading.Thread(target=_watch_parent, args=(life,), daemon=True,
                     name="sweep-parent-watch").start()


def _sendable(exc):
    """(kind, arguments) that make the error again in the sweep's process:
    the project's errors from their key and message, others from their own
    arguments when these make them again, else a RuntimeError with the
    error's kind and text."""
    import pickle

    kind = type(exc)
    for args in ((getattr(exc, "key", None), getattr(exc, "message", None)), exc.args):
        try:
            again = kind(*args)
            pickle.loads(pickle.dumps((kind, args)))
        except Exception:
            continue
        if str(again) == str(exc):
            return kind, tuple(args)
    return RuntimeError, (f"{kind.__name__}: {exc}",)


def _worker_main(tasks, claims, life, results, life_w=None):
    """A worker: every task no process has claimed, from the start of the
    list, computed and its ``(i, result)`` sent down ``results``; at the
    end ``(None, None)``, or ``(None, (kind, arguments))`` of the error
    that stopped a task (:func:`_sendable`)."""
    _worker_init(life, life_w)
    try:
        for i, task in enumerate(tasks):
            if _claim(claims, i):
                results.send((i, run_task(task)))
    except Exception as exc:
        results.send((None, _sendable(exc)))
        return
    results.send((None, None))


class _Worker:
    """A worker process and the reading end of the pipe of its results."""

    def __init__(self, proc, conn):
        self.proc, self.conn, self.done = proc, conn, False


class LocalPool:
    """``size`` worker processes that compute ``tasks`` from the start of
    the list, each sending its results down a pipe of its own: forked from
    this process at once, or started in the background from a fork server
    (a fraction of a second or more: the caller computes meanwhile).
    ``claims`` holds a flag per task, set by the process that computes it;
    ``workers`` lists the workers started (:class:`_Worker`)."""

    def __init__(self, size, tasks):
        self.ctx = worker_context()
        self.size = size
        self.claims = self.ctx.Array("b", len(tasks), lock=False)
        self._life_r, self._life_w = self.ctx.Pipe(duplex=False)
        self.workers = []
        self.error = None
        self._closed = False
        self._lock = threading.Lock()
        self._direct = self.ctx.get_start_method() == "fork"
        self._thread = None
        if self._direct:
            # forked here, in this thread, before any other starts
            # (milliseconds): they compute before this process does
            self._start(tasks)
        else:
            self._thread = threading.Thread(target=self._start, args=(tasks,),
                                            daemon=True, name="sweep-pool-start")
            self._thread.start()

    def _start(self, tasks):
        """Start the workers; an error leaves the ones started (if any) and
        the caller computing."""
        try:
            for _ in range(self.size):
                conn, results = self.ctx.Pipe(duplex=False)
                proc = self.ctx.Process(
                    target=_worker_main, daemon=True, name="sweep-worker",
                    args=(tasks, self.claims, self._life_r, results,
                          self._life_w if self._direct else None))
                if self._closed:
                    conn.close()
                    results.close()
                    return
                try:
                    proc.start()
                finally:
                    results.close()
                with self._lock:
                    self.workers.append(_Worker(proc, conn))
        except Exception as exc:              # the caller computes
            self.error = exc

    def running(self):
        """The workers started that have not sent their last message."""
        with self._lock:
            return [w for w in self.workers if not w.done]

    def stop(self):
        """Stop the workers at once (after the last task they are ending
        anyway); processes still starting end as soon as they read the
        closed pipe: wait for them (a process still reading its start-up
        data when this one exits would fail noisily)."""
        with self._lock:
            self._closed = True
        self._life_w.close()
        if self._thread is not None:
            self._thread.join(60)
        for w in self.workers:
            w.proc.join(10)
            if w.proc.exitcode is None:
                w.proc.kill()
                w.proc.join()
            w.conn.close()
        self._life_r.close()


def _died():
    return SweepStopped("--workers", "a worker process ended before its task was done "
                                     "(killed?)")


class _Shared:
    """The tasks of a sweep shared between this process and the pool: the
    workers take them from the start of the list, this process from its
    end, until it meets a task claimed by another process; then it waits
    for the workers' results (which it reads between its own tasks)."""

    def __init__(self, tasks, pool, handle, aside=None):
        self.tasks, self.pool, self.handle, self.aside = tasks, pool, handle, aside
        self.left = set(range(len(tasks)))     # tasks whose result has not come
        self.next = len(tasks) - 1             # this process's next task

    def finish(self, i, result):
        if i in self.left:                     # not when computed twice
            self.left.discard(i)
            self.handle(result)

    def next_here(self):
        """The task this process computes next, or None when another
        process claimed it (and every task before it: the workers claim
        them in order)."""
        while self.next >= 0:
            i, self.next = self.next, self.next - 1
            if i not in self.left:
                continue
            if _claim(self.pool.claims, i):
                return i
            self.next = -1
        return None

    def _read(self, w, ended):
        """Hand the results waiting in the pipe of worker ``w`` to
        ``handle``; SweepStopped when it ``ended`` (or its pipe closed)
        without its last message."""
        error = None
        try:
            while not w.done and w.conn.poll():
                i, result = w.conn.recv()
                if i is not None:
                    self.finish(i, result)
                else:
                    w.done, error = True, result     # the error of a task, or None
        except (EOFError, OSError):
            raise _died() from None
        if error is not None:
            kind, args = error
            with _pool_errors():
                raise kind(*args)
        if ended and not w.done:
            raise _died()

    def receive(self, block):
        """Hand the workers' results to ``handle`` (waiting for some when
        ``block``); False when no worker is left to send any."""
        from multiprocessing.connection import wait

        live = self.pool.running()
        if not live:
            return False
        sentinels = {w.proc.sentinel: w for w in live}
        ready = set(wait([w.conn for w in live] + list(sentinels),
                         timeout=None if block else 0))
        for w in live:
            if w.conn in ready or w.proc.sentinel in ready:
                self._read(w, ended=w.proc.sentinel in ready)
        return True

    def run(self):
        while self.left:
            if self.aside is not None and self.pool.workers:
                self.aside()                  # while the workers compute
                self.aside = None
            self.receive(block=False)
            i = self.next_here()
            if i is not None:
                self.finish(i, run_task(self.tasks[i]))
            elif self.left and not self.receive(block=True):
                for i in sorted(self.left, reverse=True):     # no worker left
                    self.finish(i, run_task(self.tasks[i]))


@contextlib.contextmanager
def _pool_errors():
    """A worker that computes other columns ends the sweep with
    :class:`SweepStopped`."""
    try:
        yield
    except OtherColumns as exc:
        raise SweepStopped("--workers", str(exc)) from None


def run_local(tasks, workers, handle, aside=None):
    """Run the tasks here (``workers`` <= 1) or here and in ``workers - 1``
    local processes; every task's result goes to ``handle`` as it finishes.
    The workers take tasks from the start of the list, this process from
    its end (:class:`_Shared`).  ``aside``: work of this process that needs
    no result, called once as soon as the workers have started (if they
    do), so that it does not wait until the end, when they would be idle
    (the caller calls it otherwise)."""
    if workers <= 1 or len(tasks) < 2:
        for t in tasks:
            handle(run_task(t))
        return
    pool = LocalPool(workers - 1, tasks)
    try:
        _Shared(tasks, pool, handle, aside).run()
    finally:
        pool.stop()


# ---------------------------------------------------------------------------
# Dask
# ---------------------------------------------------------------------------
def _client(scheduler):
    """(client, own): a Dask client for ``scheduler`` (an address, or a
    client to use as it is)."""
    from distributed import Client

    if isinstance(scheduler, Client):
        return scheduler, False
    try:
        return Client(scheduler, timeout="20s"), True
    except Exception as exc:                # refused, timed out, not a scheduler
        raise InputError("--scheduler", f"cannot connect to {scheduler!r}: "
                                        f"{_reason(exc)}") from None


def _reason(exc):
    """The kind of an error and its first line, shortened."""
    text = str(exc).strip().splitlines()[0] if str(exc).strip() else ""
    text = text if len(text) <= 120 else text[:117] + "..."
    return f"{type(exc).__name__}: {text}" if text else type(exc).__name__


def _bounded(call, seconds=10):
    """Run ``call`` for at most ``seconds`` (a client talking to a scheduler
    that is gone may wait much longer)."""
    t = threading.Thread(target=lambda: _ignore(call), daemon=True)
    t.start()
    t.join(seconds)


def _ignore(call):
    try:
        call()
    except Exception:
        pass


class _Quiet:
    """No log records of an own Dask client on stderr while it runs the
    sweep: a lost scheduler is reported once, by the sweep.  After a loss
    the client's loop may still log its reconnection attempts while it
    closes, so the levels stay raised then."""

    NAMES = ("distributed", "tornado")

    def __init__(self, own):
        known = list(logging.root.manager.loggerDict)
        self.names = sorted({n for n in known + list(self.NAMES)
                             if n.split(".")[0] in self.NAMES}) if own else []
        self.levels = [logging.getLogger(n).level for n in self.names]
        self.lost = False

    def __enter__(self):
        for n in self.names:
            logging.getLogger(n).setLevel(logging.CRITICAL + 1)
        return self

    def __exit__(self, *exc):
        if not self.lost:
            for n, level in zip(self.names, self.levels):
                logging.getLogger(n).setLevel(level)


def _gather(client, tasks, handle):
    from distributed import as_completed

    futures = client.map(run_task, tasks, pure=False)
    try:
        for fut in as_completed(futures):
            handle(fut.result())
    except BaseException:
        _bounded(lambda: client.cancel(futures))
        raise


def _lost(exc):
    """The words for a cluster that stopped the sweep."""
    text = f"{type(exc).__name__}: {exc}"
    if isinstance(exc, (OSError, TimeoutError)) or "CommClosed" in text or \
            "connection-lost" in text or "connection lost" in text.lower():
        return "lost the connection to the scheduler"
    return f"the cluster stopped the sweep ({_reason(exc)})"


def run_dask(tasks, scheduler, handle):
    """Run the tasks on a Dask cluster; results go to ``handle``.  A
    scheduler that stops answering (or workers that die) end the run with
    :class:`SweepStopped`."""
    try:
        import distributed  # noqa: F401
    except ImportError:
        raise InputError("--scheduler", "needs the optional Dask packages: "
                                        "pip install 'condensate-probe[cluster]'") from None
    from trajectories import TrajectoryError

    client, own = _client(scheduler)
    address = getattr(getattr(client, "scheduler", None), "address", None) or scheduler
    with _Quiet(own) as quiet:
        try:
            _gather(client, tasks, handle)
        except (InputError, ModelError, TrajectoryError):
            raise
        except Exception as exc:
            quiet.lost = True
            raise SweepStopped("--scheduler", f"{_lost(exc)} at {address}") from None
        finally:
            if own:
                _bounded(lambda: client.close(timeout=5), 10)
