"""Threads of the transit engine: the worker count and single-threaded BLAS
while our own threads do the parallel work."""
from __future__ import annotations

import os


def available_cpus():
    """The CPUs available to this process."""
    if hasattr(os, "sched_getaffinity"):
        return len(os.sched_getaffinity(0))
    return os.cpu_count() or 1


#: the (get, set) pairs, looked up once per process
_CONTROLS = []


def _openblas_controls():
    """(get, set) pairs of every OpenBLAS loaded in this process (numpy's and
    scipy's wheels each ship one); empty where none can be found.  Looked up
    once (reading /proc/self/maps takes milliseconds, a good part of a short
    transit): the engine's own imports (numpy; scipy.optimize, which loads
    scipy.linalg) have loaded both libraries before its first call."""
    if not _CONTROLS:
        try:
            with open("/proc/self/maps") as fh:
                paths = {line.split()[-1] for line in fh
                         if "openblas" in line.lower() and ".so" in line.split()[-1]}
        except OSError:
            paths = set()
        _CONTROLS.append(_find_controls(paths))
    return _CONTROLS[0]


def _find_controls(paths):
    """The (get, set) pairs of the OpenBLAS libraries at ``paths``."""
    found = []
    import ctypes
    for path in sorted(paths):
        try:
            lib = ctypes.CDLL(path)
        except OSError:
            continue
        for prefix in ("scipy_", ""):
            for suffix in ("64_", ""):
                g = getattr(lib, f"{prefix}openblas_get_num_threads{suffix}", None)
                s = getattr(lib, f"{prefix}openblas_set_num_threads{suffix}", None)
                if g is not None and s is not None:
                    found.append((g, s))
                    break
            else:
                continue
            break
    return found


class single_threaded_blas:
    """Run the block with one OpenBLAS thread per call (our own threads do
    the parallel work; OpenBLAS's threads on the thin matrix products of the
    kernel only contend with them and slow it down many times)."""

    def __enter__(self):
        self.saved = []
        try:
            for g, s in _openblas_controls():
                self.saved.append((s, int(g())))
                s(1)
        except Exception:       # pragma: no cover - unusual BLAS builds
            pass
        return self

    def __exit__(self, *exc):
        for s, n in self.saved:
            try:
                s(n)
            except Exception:   # pragma: no cover
                pass
        return False
