"""The user's cache folder: things computed once and read back by later runs.

The unit definitions parsed from pint's files, the strings read by earlier
runs (``probe.scenarios.units``) and the CODATA constants taken from
``scipy.constants`` (``probe.constants``) are kept here, so that a command
starts without parsing or importing what it only needs once.  Each file is
named by a key that changes whenever what it was built from changes; a file
that is missing, unreadable, truncated or of another key is rebuilt.

The folder is ``$PROBE_CACHE_DIR``, else ``$XDG_CACHE_HOME/condensate-probe``,
else ``~/.cache/condensate-probe``; ``PROBE_CACHE_DIR=`` with an empty value
turns the cache off (``~`` in it is the home folder; a relative path is
taken from the current folder).  A folder that cannot be written is left
alone: the command then works without a cache.  Files of the same kind
under another key (another pint, another version of the project) are
removed once no run has written them for ``STALE_DAYS`` days.
"""
from __future__ import annotations

import os
import pickle
from pathlib import Path

#: environment variable naming the folder of the cache (empty: no cache)
CACHE_ENV = "PROBE_CACHE_DIR"
#: a cache file of another key unwritten for this many days is removed
STALE_DAYS = 30


def cache_dir():
    """The cache folder (see the module's text); None when turned off."""
    env = os.environ.get(CACHE_ENV)
    if env is not None:
        return Path(env).expanduser() if env.strip() else None
    base = os.environ.get("XDG_CACHE_HOME") or os.path.join(os.path.expanduser("~"), ".cache")
    return Path(base) / "condensate-probe"


def read_cache(path, key, kind=list):
    """What is stored in ``path`` under ``key`` (a ``kind``), or None
    (missing, unreadable, truncated by a concurrent writer, or from another
    key)."""
    try:
        with open(path, "rb") as fh:
            stored_key, content = pickle.load(fh)
    except Exception:  # noqa: BLE001 - a cache that cannot be read is rebuilt
        return None
    if stored_key != key or not isinstance(content, kind):
        return None
    return content


def write_cache(path, key, content):
    """Store ``content`` under ``key`` atomically (a temporary file renamed
    over the cache file, so that a reader sees the old file or the new one,
    never a half-written one); a folder that cannot be written is left
    alone."""
    import tempfile
    tmp = None
    try:
        path.parent.mkdir(parents=True, exist_ok=True)
        fd, tmp = tempfile.mkstemp(dir=path.parent, prefix=path.name, suffix=".tmp")
        with os.fdopen(fd, "wb") as fh:
            pickle.dump((key, content), fh, protocol=pickle.HIGHEST_PROTOCOL)
        os.replace(tmp, path)
        tmp = None
    except OSError:
        pass
    finally:
        if tmp is not None:
            try:
                os.unlink(tmp)
            except OSError:
                pass


def prune_stale(path, prefix, days=None):
    """Remove the files ``<prefix>*.pickle`` beside ``path`` (other keys of
    the same kind) that were last written more than ``days`` (default
    ``STALE_DAYS``) days ago; ``path`` itself is kept.  Files in use by
    another installation are rewritten by its runs and stay; a file that
    cannot be removed is left alone."""
    import time
    limit = time.time() - 86400.0 * (STALE_DAYS if days is None else days)
    try:
        others = [p for p in path.parent.glob(f"{prefix}*.pickle") if p.name != path.name]
        for other in others:
            if other.stat().st_mtime < limit:
                other.unlink()
    except OSError:
        pass


def installed_stamp(package, *files):
    """Size and modification time of ``files`` of the installed ``package``
    (paths relative to its folder), found without importing it: a key that
    changes when another version is installed.  None when not found."""
    import importlib.util
    try:
        spec = importlib.util.find_spec(package)
        folder = os.path.dirname(spec.origin)
        stats = [os.stat(os.path.join(folder, name)) for name in files]
    except (ImportError, AttributeError, TypeError, ValueError, OSError):
        return None
    parts = [f"{name}:{s.st_size}:{s.st_mtime_ns}" for name, s in zip(files, stats)]
    return f"{spec.origin}|" + "|".join(parts)


class Memo:
    """A small table kept in the cache folder as ``<name>.pickle``, valid
    while ``key()`` returns what it returned when the table was written
    (a key of None, or no cache folder: nothing is kept)."""

    def __init__(self, name, key):
        self._name = name
        self._key = key
        self._table = None
        self._where = None

    def _load(self):
        if self._table is None:
            folder = cache_dir()
            key = self._key() if folder is not None else None
            self._where = None if key is None else (folder / f"{self._name}.pickle", key)
            stored = read_cache(*self._where, dict) if self._where else None
            self._table = stored if stored is not None else {}
        return self._table

    def get(self, item):
        """The value kept for ``item``, or None."""
        return self._load().get(item)

    def put(self, item, value):
        """Keep ``value`` for ``item`` (the file rewritten at once)."""
        table = self._load()
        table[item] = value
        if self._where is not None:
            write_cache(*self._where, table)
