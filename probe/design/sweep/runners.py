"""Tasks of a sweep and where they run: in this process, in local worker
processes, or on a Dask cluster (the numbers are the same in all three).

Points that share the values of every key not passed to the engine as an
array share one scenario; a task holds chunks of such points, the
configuration and the text of every file the scenario reads (read once when
the sweep was planned: a worker never reads them from its own disk or
working folder).

Local workers (``run_local``): ``workers - 1`` processes start in the
background (on Linux forked from this process, elsewhere from a fork
server that has imported the engine: ``probe.design.workers``) while this
process computes; the workers take
tasks from the start of the list, handed to them ahead, this process from
its end, at last also those handed that no worker has begun (whoever
begins a task claims it first), so that neither side waits while the other
has work queued.  Each worker watches a pipe from this process and exits as
soon as it closes: when this process ends (even killed by SIGKILL) or stops
the pool (an interrupt).  A Dask cluster (``run_dask``) that stops answering
ends the run with :class:`SweepStopped`; the rows already finished stay.
"""
from __future__ import annotations

import collections
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


#: in a worker: the pool's claims (one flag per task, shared by all processes)
_CLAIMS = None


def _claim(claims, i):
    """True for the first process that claims task ``i`` (it computes it).
    No lock (a worker killed while holding one would stop the others): two
    processes may, rarely, both claim a task; it is then computed twice, and
    its rows are kept once (the same numbers)."""
    if claims[i]:
        return False
    claims[i] = 1
    return True


def _claimed_task(i, task):
    """In a worker: the result of task ``i``, or None when another process
    claimed it first."""
    return run_task(task) if _claim(_CLAIMS, i) else None


def _worker_init(life, claims, life_w=None):
    """In each worker: Ctrl-C goes to the sweep's process (which stops the
    pool), and the worker ends when that process does.  A worker forked
    from the sweep's process itself (``life_w``: the pipe's write end it
    inherited) closes that end and what else only the sweep holds."""
    import signal
    global _CLAIMS
    _CLAIMS = claims
    if life_w is not None:
        life_w.close()
        in_forked_worker()
    signal.signal(signal.SIGINT, signal.SIG_IGN)
    threading.Thread(target=_watch_parent, args=(life,), daemon=True,
                     name="sweep-parent-watch").start()


class LocalPool:
    """``size`` worker processes for ``tasks`` tasks: forked from this
    process at once (``executor`` set: tasks can be handed to them before
    this process computes its first), or started in the background from a
    fork server (a fraction of a second or more: the caller computes
    meanwhile; ``executor`` is None until they are ready).  ``claims`` holds
    a flag per task, set by the process that computes it."""

    def __init__(self, size, tasks):
        self.ctx = worker_context()
        self.size = size
        self.claims = self.ctx.Array("b", tasks, lock=False)
        self._life_r, self._life_w = self.ctx.Pipe(duplex=False)
        self.executor = None
        self.error = None
        self._closed = False
        self._lock = threading.Lock()
        self._direct = self.ctx.get_start_method() == "fork"
        self._thread = None
        if self._direct:
            # forked here, in this thread, before any other starts: the
            # first call forks every worker at once (milliseconds), and
            # tasks can be handed to them at once
            self.executor, self.error = self._submit_first()
            if self.error is not None and self.executor is not None:
                self.executor.shutdown(wait=True, cancel_futures=True)
                self.executor = None
            return
        self._thread = threading.Thread(target=self._start, daemon=True,
                                        name="sweep-pool-start")
        self._thread.start()

    def _executor(self):
        from concurrent.futures import ProcessPoolExecutor

        return ProcessPoolExecutor(max_workers=self.size, mp_context=self.ctx,
                                   initializer=_worker_init,
                                   initargs=(self._life_r, self.claims,
                                             self._life_w if self._direct else None))

    def _submit_first(self):
        """(executor, None) with the workers forked, or (executor or None,
        the error that stopped the start)."""
        ex = None
        try:
            ex = self._executor()
            ex.submit(os.getpid)            # forks every worker now
            return ex, None
        except Exception as exc:              # the caller computes alone
            return ex, exc

    def _start(self):
        """In a thread: start the workers from the fork server and wait
        until they are ready."""
        ex = None
        try:
            ex = self._executor()
            for fut in [ex.submit(os.getpid) for _ in range(self.size)]:
                fut.result()                # the workers are ready
        except Exception as exc:              # the caller computes alone
            self.error = exc
        with self._lock:
            if self._closed or self.error is not None:
                if ex is not None:
                    ex.shutdown(wait=True, cancel_futures=True)
            else:
                self.executor = ex

    def stop(self, finished):
        """Stop the workers: after their last task when the sweep
        ``finished``, at once otherwise."""
        with self._lock:
            self._closed = True
            ex = self.executor
        if ex is None:
            # processes still starting end as soon as they read the closed
            # pipe; wait for that (a process still reading its start-up data
            # when this one exits would fail noisily)
            self._life_w.close()
            if self._thread is not None:
                self._thread.join(60)
        else:
            if not finished:
                self._life_w.close()             # the workers end now
            ex.shutdown(wait=True, cancel_futures=not finished)
            self._life_w.close()
        self._life_r.close()


@contextlib.contextmanager
def _pool_errors():
    """A pool whose worker died, or whose worker computes other columns,
    ends the sweep with :class:`SweepStopped`."""
    from concurrent.futures.process import BrokenProcessPool

    try:
        yield
    except BrokenProcessPool:
        raise SweepStopped("--workers", "a worker process ended before its task "
                                        "was done (killed?)") from None
    except OtherColumns as exc:
        raise SweepStopped("--workers", str(exc)) from None


def _take(pending, handle, block):
    """Hand the finished tasks' results to ``handle`` (waiting for one when
    ``block``)."""
    from concurrent.futures import FIRST_COMPLETED, wait

    done = wait(pending, return_when=FIRST_COMPLETED)[0] if block else \
        [f for f in pending if f.done()]
    for fut in done:
        pending.discard(fut)
        with _pool_errors():
            result = fut.result()
        if result is not None:           # None: a task claimed by another process
            handle(result)


#: tasks handed to the pool ahead of its workers, per worker process (enough
#: that a worker never waits for this process to hand it more)
AHEAD = 32


class _Shared:
    """The tasks of a sweep shared between this process and the pool: the
    pool is handed tasks from the start of the list (up to :data:`AHEAD`
    per worker ahead), this process takes them from the end, at last also
    those handed that no worker has begun.  Whoever begins a task first
    claims it (``pool.claims``); a worker skips a task claimed here."""

    def __init__(self, tasks, pool, handle, aside=None):
        self.queue = collections.deque(enumerate(tasks))   # not handed to the pool
        self.handed = collections.deque()                  # (i, task), in order
        self.pending = set()
        self.pool, self.handle, self.aside = pool, handle, aside

    def hand(self):
        """Hand the pool tasks from the start of the list."""
        ex = self.pool.executor
        if ex is None:
            return
        with _pool_errors():
            while self.queue and len(self.pending) < AHEAD * self.pool.size:
                i, task = self.queue.popleft()
                self.pending.add(ex.submit(_claimed_task, i, task))
                self.handed.append((i, task))

    def next_here(self):
        """The task this process computes next: the last one not handed,
        else the last one handed that no worker has claimed; None when the
        workers hold all that is left."""
        if self.queue:
            return self.queue.pop()[1]
        if self.handed:
            i, task = self.handed.pop()
            if _claim(self.pool.claims, i):
                return task
            self.handed.clear()   # a worker began it, and every task before it
        return None

    def run(self):
        while self.queue or self.pending:
            self.hand()
            if self.aside is not None and self.pending:
                self.aside()                  # while the workers compute
                self.aside = None
            _take(self.pending, self.handle, block=False)
            task = self.next_here()
            if task is not None:
                self.handle(run_task(task))
            elif self.pending:
                _take(self.pending, self.handle, block=True)


def run_local(tasks, workers, handle, aside=None):
    """Run the tasks here (``workers`` <= 1) or here and in ``workers - 1``
    local processes; every task's result goes to ``handle`` as it finishes.
    The workers take tasks from the start of the list, this process from
    its end (:class:`_Shared`).  ``aside``: work of this process that needs
    no result, called once as soon as the workers have tasks (if they
    start), so that it does not wait until the end, when they would be
    idle (the caller calls it otherwise)."""
    if workers <= 1 or len(tasks) < 2:
        for t in tasks:
            handle(run_task(t))
        return
    pool = LocalPool(workers - 1, len(tasks))
    finished = False
    try:
        _Shared(tasks, pool, handle, aside).run()
        finished = True
    finally:
        pool.stop(finished)


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
