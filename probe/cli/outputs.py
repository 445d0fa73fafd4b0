"""The files one command writes, whole and together or not at all.

Every path a run will write (its output, a sidecar, a figure, a spectrum)
is checked before anything is computed: the command writes only regular
files, so an existing folder, device, pipe, socket or symbolic link at the
path is refused, as is a file that the command reads (the scenario, a
waypoint CSV it names) and a path given to two outputs.  The outputs are
then written to hidden temporary files beside their targets and renamed
into place together once every one of them is complete; when anything fails
the temporary files are removed, and so are the files this run already put
in place.  Refusals are ``InputError(option, message)``: one line
``error: <option>: <message>`` and exit status 2 from the CLI.
"""
from __future__ import annotations

import os
import stat
import tempfile

from probe.errors import InputError


def scenario_inputs(source, raw=None):
    """The files a scenario reads: the scenario file ``source`` and every
    file its tables name (``trajectory.file``, relative to the scenario's
    folder)."""
    if not source:
        return []
    paths = [os.fspath(source)]
    folder = os.path.dirname(os.path.abspath(os.fspath(source)))
    for body in (raw or {}).values():
        name = body.get("file") if isinstance(body, dict) else None
        if isinstance(name, str) and name:
            paths.append(name if os.path.isabs(name) else os.path.join(folder, name))
    return paths


def _kind_of(mode):
    """What a non-regular file is, in words."""
    if stat.S_ISLNK(mode):
        return "a symbolic link"
    if stat.S_ISDIR(mode):
        return "a folder"
    if stat.S_ISFIFO(mode):
        return "a named pipe (FIFO)"
    if stat.S_ISSOCK(mode):
        return "a socket"
    if stat.S_ISCHR(mode) or stat.S_ISBLK(mode):
        return "a device"
    return "not a regular file"


def _same(a, b):
    try:
        return os.path.samefile(a, b)
    except OSError:
        return False


def check_output_path(path, option, inputs=(), what=None):
    """InputError (key ``option``) unless ``path`` may be written: an
    absent name in an existing, writable folder, or an existing regular file
    that is none of ``inputs``.  ``what`` names a derived file (``the JSON
    sidecar``) in the message."""
    target = os.fspath(path)
    name = f"{what} {target!r}" if what else repr(target)
    if not target or target.endswith(os.sep):
        raise InputError(option, f"{name} is not a file name; give a file such as out.csv")
    try:
        mode = os.lstat(target).st_mode
    except FileNotFoundError:
        mode = None
    except OSError as exc:
        raise InputError(option, f"cannot write {name}: {exc.strerror or exc}") from None
    if mode is not None:
        if not stat.S_ISREG(mode):
            raise InputError(option, f"{name} is {_kind_of(mode)}; the command writes only "
                                     "regular files: give the name of a file")
        for source in inputs:
            if _same(target, source):
                raise InputError(option, f"{name} is the input file {os.fspath(source)!r} "
                                         "that this command reads; writing it would "
                                         "overwrite the input: give another name")
    folder = os.path.dirname(os.path.abspath(target))
    if not os.path.isdir(folder):
        raise InputError(option, f"directory {os.path.dirname(target) or '.'!r} does not "
                                 f"exist; cannot write {name}")
    if not os.access(folder, os.W_OK | os.X_OK):
        raise InputError(option, f"directory {os.path.dirname(target) or '.'!r} is not "
                                 f"writable; cannot write {name}")
    return target


def _umask():
    mask = os.umask(0)
    os.umask(mask)
    return mask


class Outputs:
    """The output files of one run.

    ``check(path, option)`` each target before computing; ``stage_text``
    (or ``temporary`` and a writer of one's own) to write it beside its
    target; ``commit()`` to rename them all into place; ``adopt(path)``
    for a file another writer of this run put in place (a sweep's CSV and
    sidecar), removed with the rest when the run fails.  Used as a context
    manager: an exception leaves none of the run's files behind."""

    def __init__(self, inputs=()):
        self.inputs = [os.fspath(p) for p in inputs if p]
        self.targets = {}            # absolute path -> option
        self.staged = []             # (temporary, target, option)
        self.placed = []             # files of this run now in place
        self.watched = {}            # path -> what was there before the run

    def add_inputs(self, paths):
        self.inputs += [os.fspath(p) for p in paths if p]

    def check(self, path, option, what=None):
        """Check one target; returns it (None for None)."""
        if path is None:
            return None
        target = check_output_path(path, option, self.inputs, what)
        key = os.path.abspath(target)
        if key in self.targets:
            raise InputError(option, f"{target!r} is also the file of "
                                     f"{self.targets[key]}; give each output its own name")
        self.targets[key] = what or option
        return target

    def temporary(self, path, option):
        """A new empty hidden file beside ``path`` with its suffix, to be
        renamed over it by :meth:`commit`."""
        target = os.fspath(path)
        folder = os.path.dirname(os.path.abspath(target))
        base = os.path.basename(target)
        try:
            fd, tmp = tempfile.mkstemp(prefix=f".{base}.", suffix=f".tmp"
                                       f"{os.path.splitext(base)[1]}", dir=folder)
        except OSError as exc:
            raise InputError(option, f"cannot write {target!r}: {exc.strerror or exc}") \
                from None
        os.close(fd)
        self.staged.append((tmp, target, option))
        return tmp

    def stage_text(self, path, text, option):
        """Write ``text`` to a temporary file beside ``path``."""
        tmp = self.temporary(path, option)
        try:
            with open(tmp, "w", encoding="utf-8", newline="") as fh:
                fh.write(text)
        except OSError as exc:
            raise InputError(option, f"cannot write {os.fspath(path)!r}: "
                                     f"{exc.strerror or exc}") from None

    def adopt(self, *paths):
        self.placed += [os.fspath(p) for p in paths if p is not None]

    def watch(self, *paths):
        """Files another writer of this run may put in place (a sweep's CSV
        and sidecar): removed on failure if the run changed them."""
        self.watched.update({os.fspath(p): _signature(p) for p in paths if p is not None})

    def commit(self):
        """Rename every staged file over its target (mode as a new file's)."""
        mode = 0o666 & ~_umask()
        while self.staged:
            tmp, target, option = self.staged[0]
            try:
                os.chmod(tmp, mode)
                os.replace(tmp, target)
            except OSError as exc:
                raise InputError(option, f"cannot write {target!r}: "
                                         f"{exc.strerror or exc}") from None
            self.staged.pop(0)
            self.placed.append(target)

    def discard(self):
        """Remove the temporary files and the files this run put in place."""
        for tmp, _, _ in self.staged:
            _remove(tmp)
        for target in self.placed:
            _remove(target)
        for target, before in self.watched.items():
            if _signature(target) != before:
                _remove(target)
        self.staged, self.placed, self.watched = [], [], {}

    def __enter__(self):
        return self

    def __exit__(self, kind, exc, tb):
        if kind is not None:
            self.discard()
        return False


def _signature(path):
    """What is at ``path`` (inode, size, modification time), or None."""
    try:
        st = os.lstat(path)
    except OSError:
        return None
    return (st.st_ino, st.st_size, st.st_mtime_ns)


def _remove(path):
    try:
        if os.path.isfile(path) and not os.path.islink(path):
            os.unlink(path)
    except OSError:
        pass


def json_by_suffix(path):
    """True when an output file's name asks for JSON (``.json``)."""
    return path is not None and os.fspath(path).lower().endswith(".json")
