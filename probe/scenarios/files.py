"""The files a scenario reads besides itself (a spline's waypoint CSV).

A scenario names such a file relative to its own folder.  Reading it through
:func:`read_text` lets a tool that builds the scenario many times (a sweep,
possibly in other processes or on other machines) read each file once:

- ``with recording() as files:`` builds the scenario and collects the text of
  every file read, under the key ``(source, name)`` (the scenario file as
  given and the name written in it: independent of the working folder);
- ``with pinned(files):`` builds it again from that text alone (a file not
  among them is refused instead of being read from the disk, where it may
  have changed or resolve against another working folder);
- :func:`digests` gives the SHA-256 of each file's content, for a plan's
  fingerprint.
"""
from __future__ import annotations

import contextlib
import contextvars
import hashlib
import os

from probe.errors import InputError

_STATE = contextvars.ContextVar("probe_scenario_files", default=None)


class _Files:
    def __init__(self, files, pinned):
        self.files = dict(files)
        self.pinned = pinned


def _read(path):
    """The file's text as the waypoint reader decodes it, or None where it
    cannot be read (the reader then says why)."""
    try:
        with open(os.fspath(path), encoding="utf-8-sig") as fh:
            return fh.read()
    except (OSError, UnicodeDecodeError):
        return None


def read_text(path, source, name, key="trajectory.file"):
    """The text of the file ``name`` that the scenario ``source`` names
    (read from ``path``), or None when it cannot be read."""
    state = _STATE.get()
    ident = (None if source is None else os.fspath(source), name)
    if state is not None and ident in state.files:
        return state.files[ident]
    if state is not None and state.pinned:
        raise InputError(key, f"{name}: not among the files read when the plan was "
                              "made; plan again")
    text = _read(path)
    if state is not None and text is not None:
        state.files[ident] = text
    return text


@contextlib.contextmanager
def recording():
    """Collect the files read while the block runs: yields the dict
    ``(source, name) -> text`` filled as they are read."""
    state = _Files({}, pinned=False)
    token = _STATE.set(state)
    try:
        yield state.files
    finally:
        _STATE.reset(token)


@contextlib.contextmanager
def pinned(files):
    """Read files only from ``files`` (``(source, name) -> text``, or the
    same as pairs) while the block runs."""
    token = _STATE.set(_Files(dict(files), pinned=True))
    try:
        yield
    finally:
        _STATE.reset(token)


def digests(files):
    """``{name: SHA-256 of the content}`` of recorded files, sorted."""
    return {f"{name}": hashlib.sha256(text.encode("utf-8")).hexdigest()
            for (_, name), text in sorted(dict(files).items(), key=lambda kv: kv[0][1])}
