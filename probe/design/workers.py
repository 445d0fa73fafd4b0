"""Local worker processes of the design tools: how they are started.

Workers are forked from a fork server, a process of their own that has
imported what a worker needs (:data:`WORKER_MODULES`) once, so that every
worker starts warm; where there is no fork server they are spawned.  Forking
the calling process directly would share its memory copy-on-write and its
open files (such as the lock of a sweep's output), and is unsafe when it
runs other threads.  This module imports nothing heavy: a command starts the
fork server (:func:`start_fork_server`) before it imports the engines, so
that the two imports run side by side on two cores."""
from __future__ import annotations

#: what a worker imports before its first task
WORKER_MODULES = ("probe.design.sweep", "probe.engines.stationary", "probe.scenarios.config",
                  "scipy.special", "periodictable")


def worker_context():
    """The multiprocessing context of local workers: the fork server
    (importing :data:`WORKER_MODULES`), else spawn."""
    import multiprocessing as mp

    if "forkserver" in mp.get_all_start_methods():
        ctx = mp.get_context("forkserver")
        ctx.set_forkserver_preload(list(WORKER_MODULES))
        return ctx
    return mp.get_context("spawn")


def start_fork_server():
    """Start the fork server now, without waiting for it: it imports the
    engine on another core while this process imports, reads and plans, so
    that the workers start at once when the tasks are ready.  Nothing
    happens where there is no fork server, or when it already runs."""
    if worker_context().get_start_method() != "forkserver":
        return
    from multiprocessing import forkserver
    try:
        forkserver.ensure_running()
    except (OSError, ValueError):          # tried again when the pool starts
        pass
