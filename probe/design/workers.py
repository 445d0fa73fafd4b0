"""Local worker processes of the design tools: how they are started.

On Linux, when this process runs no other thread that is not a daemon (a
sweep starts its pool before it computes anything), the workers are forked
from this process itself: they start in milliseconds, with every module
and scenario already imported, instead of importing numpy, scipy and the
package again (about half a second of a core, a quarter of a small sweep).
What a forked worker must not keep is given up at its start
(:func:`forget_in_workers`: the write end of the pipe it watches, the
sweep's lock file), and its signal handlers are reset.  Elsewhere (no fork,
or other threads running) workers are forked from a fork server, a process
of its own that has imported what a worker needs (:data:`WORKER_MODULES`);
where there is no fork server they are spawned.  This module imports
nothing heavy: a command starts the fork server (:func:`start_fork_server`)
before it imports the engines, so that the two imports run side by side,
when it will be the one used."""
from __future__ import annotations

import os
import sys
import threading

#: what a worker forked from the fork server imports before its first task
WORKER_MODULES = ("probe.design.sweep", "probe.engines.stationary", "probe.scenarios.config",
                  "scipy.special")

#: open files of this process that a forked worker closes at its start
_PARENT_ONLY = set()


def forget_in_workers(fd, keep=True):
    """Have workers forked from now on close ``fd`` at their start
    (``keep=False``: no longer, the file is closed here)."""
    (_PARENT_ONLY.add if keep else _PARENT_ONLY.discard)(fd)


def _forking_is_safe():
    """Forking this process: Linux, and no thread running but this one and
    daemon threads (a progress timer); threads that compute may hold locks
    that a forked child would find held for ever."""
    if not sys.platform.startswith("linux"):
        return False
    here = threading.current_thread()
    return all(t is here or t.daemon for t in threading.enumerate())


def worker_context(direct=None):
    """The multiprocessing context of local workers: fork (``direct``: by
    default when :func:`_forking_is_safe`), else the fork server (importing
    :data:`WORKER_MODULES`), else spawn."""
    import multiprocessing as mp

    methods = mp.get_all_start_methods()
    if direct is None:
        direct = _forking_is_safe()
    if direct and "fork" in methods:
        return mp.get_context("fork")
    if "forkserver" in methods:
        ctx = mp.get_context("forkserver")
        ctx.set_forkserver_preload(list(WORKER_MODULES))
        return ctx
    return mp.get_context("spawn")


def in_forked_worker():
    """At the start of a worker forked from this process: close what only
    the sweep's process may hold, and take the default SIGTERM back (the
    sweep's handler raises its interrupt in the process that set it)."""
    import signal
    for fd in list(_PARENT_ONLY):
        try:
            os.close(fd)
        except OSError:
            pass
    _PARENT_ONLY.clear()
    signal.signal(signal.SIGTERM, signal.SIG_DFL)


def start_fork_server():
    """Start the fork server now, without waiting for it, when it will be
    the one starting the workers: it imports the engine on another core
    while this process imports, reads and plans.  Nothing happens where
    workers are forked from this process, where there is no fork server,
    or when it already runs."""
    if worker_context().get_start_method() != "forkserver":
        return
    from multiprocessing import forkserver
    try:
        forkserver.ensure_running()
    except (OSError, ValueError):          # tried again when the pool starts
        pass
