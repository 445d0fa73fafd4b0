"""The files of a sweep: the result table (CSV whose header names every
column with its unit), its JSON sidecar, the partial file of an unfinished
sweep that ``--resume`` continues, and the lock file ``OUT.lock`` that keeps
a second run from writing the same partial file while the first runs."""
from __future__ import annotations

import csv
import functools
import glob
import io
import json
import math
import os
import platform
import re
import time
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from probe.design.sweep.grid import Axis
from probe.design.workers import forget_in_workers
from probe.errors import InputError
from probe.quantities import QUANTITIES

#: columns written as integers: the point index and counts
INTEGER_COLUMNS = frozenset({"point"} | {q.name for q in QUANTITIES.values()
                                         if q.kind == "count"})


@dataclass
class SweepResult:
    """A computed grid.

    ``columns`` and ``units`` name the columns of ``data`` (float array of
    shape (points, columns), SI units as in ``units``; the first column is
    the flat point index, then one column per varied key, then the
    evaluator's columns: the engine's arguments and the probe model's array
    arguments (speed, radius, gap), the gas at the point, and the outputs
    that the probe model lists and the motion gives, named in
    ``probe.quantities``: for a two-level probe ``up_rate``, ``down_rate``
    (1/s) with errors, ``effective_temperature`` (K), ``excited_population``
    (1) and, for straight motion, ``up_threshold_speed`` (m/s); for the
    density probe ``emission_rate``, ``absorption_rate`` (1/s),
    ``drag_force`` (N), ``power`` (W); for circular motion ``harmonics``).
    ``warnings`` holds one string per point (the regime-of-validity
    sentences joined by ``' | '``, or the reason a point has no result).
    ``shape`` is the grid shape (first key slowest).
    """

    columns: list
    units: list
    data: np.ndarray
    warnings: list
    shape: tuple
    axes: list
    config: dict
    meta: dict = field(default_factory=dict)

    def index(self, name):
        try:
            return self.columns.index(name)
        except ValueError:
            raise KeyError(f"no column {name!r}; columns: {', '.join(self.columns)}") from None

    def column(self, name):
        """One column as a flat array (SI, unit ``self.unit(name)``); the
        ``warnings`` column as an object array of strings."""
        j = self.index(name)
        if name == "warnings":
            return np.array(self.warnings, dtype=object)
        return self.data[:, j]

    def grid(self, name):
        """One column reshaped to the grid ``shape``."""
        return self.column(name).reshape(self.shape)

    def unit(self, name):
        return self.units[self.index(name)]

    @property
    def header(self):
        return [f"{c} [{u}]" for c, u in zip(self.columns, self.units)]

    def to_csv(self, path):
        """Write the table (atomically) to ``path``."""
        write_csv(path, self.header, rows_text(self.columns, self.data, self.warnings))

    def to_xarray(self):
        """The grid as an ``xarray.Dataset`` with units and labels as
        attributes (needs the optional package xarray; ``probe.notebook``)."""
        from probe.notebook import to_xarray
        return to_xarray(self)

    def to_netcdf(self, path):
        """Write the grid as NetCDF (needs xarray; ``probe.notebook``)."""
        from probe.notebook import write_netcdf
        write_netcdf(self, path)

    def _repr_html_(self):
        """A table in a notebook (``probe.notebook``)."""
        from probe.notebook import sweep_html
        return sweep_html(self)


# ---------------------------------------------------------------------------
# CSV and JSON
# ---------------------------------------------------------------------------
def cell_text(x, integer=False):
    """A number as a CSV cell: exact (``repr``), ``nan``, ``inf``, or a
    whole number."""
    x = float(x)
    if math.isnan(x):
        return "nan"
    if math.isinf(x):
        return "inf" if x > 0 else "-inf"
    if integer:
        return str(int(x))
    return repr(x)


@functools.lru_cache(maxsize=16)
def _cell_kinds(columns):
    """Per column: None (the warnings column: written last), True (a whole
    number), False (any number)."""
    return tuple(None if name == "warnings" else name in INTEGER_COLUMNS for name in columns)


def row_text(columns, row, warning):
    """The cells of one row (the warnings cell last, on one line): the
    cells of :func:`cell_text`, formed from the row's Python floats."""
    cells = []
    values = row.tolist() if isinstance(row, np.ndarray) else [float(x) for x in row]
    for integer, x in zip(_cell_kinds(tuple(columns)), values):
        if integer is None:
            continue
        x = float(x)
        if x != x:
            cells.append("nan")
        elif x == math.inf or x == -math.inf:
            cells.append("inf" if x > 0 else "-inf")
        else:
            cells.append(str(int(x)) if integer else repr(x))
    cells.append(warning.replace("\n", " "))
    return cells


def rows_lines(columns, rows, warnings):
    """The CSV lines of ``rows`` (each ending in a newline) as one text:
    the lines of :func:`csv_line` of their cells (:func:`row_text`)."""
    buf = io.StringIO()
    writer = csv.writer(buf, lineterminator="\n")
    for row, w in zip(rows, warnings):
        writer.writerow(row_text(columns, row, w))
    return buf.getvalue()


def rows_text(columns, data, warnings):
    return [row_text(columns, data[i], warnings[i]) for i in range(data.shape[0])]


def csv_line(cells):
    buf = io.StringIO()
    csv.writer(buf, lineterminator="\n").writerow(cells)
    return buf.getvalue()


def _write_whole(path, write):
    """Call ``write(file)`` on a temporary file beside ``path``, then rename
    it to ``path`` (InputError "--out" when that fails)."""
    path = Path(path)
    tmp = path.with_name(f".{path.name}.{os.getpid()}.tmp")
    try:
        with open(tmp, "w", newline="") as fh:
            write(fh)
        os.replace(tmp, path)
    except OSError as exc:
        tmp.unlink(missing_ok=True)
        raise InputError("--out", f"cannot write {os.fspath(path)!r}: "
                                  f"{exc.strerror or exc}") from None


def write_csv(path, header, rows):
    """Write a CSV atomically: to a temporary file beside ``path``, then one
    rename."""
    def write(fh):
        fh.write(csv_line(header))
        for cells in rows:
            fh.write(csv_line(cells))
        fh.flush()
        os.fsync(fh.fileno())
    _write_whole(path, write)


def _block_spans(blocks, size):
    """The (start, end) of the blocks of rows (``PartialFile.blocks``) in
    point order, or None when they cannot be put in order whole (a block
    not in ascending order, blocks that interleave, or that do not cover
    the ``size`` characters of the rows)."""
    if not blocks or None in blocks:
        return None
    ordered = sorted(blocks)
    if any(a[1] >= b[0] for a, b in zip(ordered, ordered[1:])) or \
            sum(end - start for _, _, start, end in ordered) != size:
        return None
    return [(start, end) for _, _, start, end in ordered]


def _write_in_order(partial, path, header, blocks=None):
    """The rows of ``partial`` (each point once, as this run wrote them)
    written to ``path`` in point order, atomically: the table of a sweep
    whose rows came out of order, without formatting them again; whole
    blocks of rows are moved when ``blocks`` (``PartialFile.blocks``) allow
    it, else the rows one by one."""
    with open(partial, newline="") as fh:        # as it was written
        blob = fh.read()
    body = blob[len(header):]
    spans = _block_spans(blocks, len(body))
    if spans is None:
        rows = body.split("\n")[:-1]
        rows.sort(key=lambda line: int(line[:line.index(",")]))
        parts = [r + "\n" for r in rows]
    else:
        parts = [body[start:end] for start, end in spans]

    def write(fh):
        fh.write(blob[:len(header)])
        fh.writelines(parts)
        fh.flush()
        os.fsync(fh.fileno())
    _write_whole(path, write)


def _json_default(x):
    if isinstance(x, np.ndarray):
        return x.tolist()
    if isinstance(x, (np.floating, np.integer)):
        return x.item()
    return str(x)


def write_json(path, obj):
    """Write JSON atomically."""
    def write(fh):
        json.dump(obj, fh, indent=2, sort_keys=False, default=_json_default)
        fh.write("\n")
    _write_whole(path, write)


def is_netcdf(out):
    """True when a sweep's output name asks for NetCDF (``.nc``: the grid as
    an xarray Dataset, ``probe.notebook``) instead of CSV."""
    return Path(out).suffix.lower() == ".nc"


def sidecar_path(out):
    """The JSON sidecar of a CSV: same name with suffix ``.json``."""
    out = Path(out)
    return out.with_suffix(".json") if out.suffix.lower() != ".json" else \
        out.with_name(out.name + ".meta.json")


# ---------------------------------------------------------------------------
# The sidecar
# ---------------------------------------------------------------------------
def library_versions(extra=()):
    """Versions of Python and of the libraries that produce the numbers."""
    from importlib.metadata import PackageNotFoundError, version

    out = {"python": platform.python_version()}
    for name in ("condensate-probe", "numpy", "scipy", "pint", "periodictable",
                 "click", "matplotlib", *extra):
        try:
            out[name] = version(name)
        except PackageNotFoundError:
            out[name] = None
    return out


def meta_libraries(scheduler=None):
    """The libraries whose versions a sweep's sidecar records besides the
    usual ones (:func:`library_versions`): Dask's, for a cluster."""
    return ("dask", "distributed") if scheduler is not None else ()


def _jsonable_scenario(scenario):
    return json.loads(json.dumps(scenario.describe(), default=_json_default))


def sweep_meta(plan, workers=1, scheduler=None, elapsed=None, resumed=0, command=None,
               libraries=None):
    """The sidecar record of a sweep (``libraries``: the record of
    :func:`library_versions` for it, when already looked up)."""
    from probe import __version__

    if libraries is None:
        libraries = library_versions(meta_libraries(scheduler))
    return {
        "tool": "condensate-probe",
        "version": __version__,
        "libraries": libraries,
        "platform": platform.platform(),
        "created": time.strftime("%Y-%m-%dT%H:%M:%S%z"),
        "command": command,
        "source": plan.source,
        "config": plan.raw,
        "scenario": _jsonable_scenario(plan.scenario),
        "grid": {"shape": list(plan.shape), "order": "C (first key slowest)",
                 "axes": [a.to_dict() for a in plan.axes]},
        "columns": [{"name": c, "unit": u} for c, u in zip(plan.columns, plan.units)],
        "evaluation": {"workers": workers,
                       "scheduler": None if scheduler is None else str(
                           getattr(scheduler, "scheduler", scheduler)),
                       "seconds": elapsed, "points_resumed": resumed},
        "fingerprint": plan.fingerprint(),
    }


_HEADER_CELL = re.compile(r"^(.*) \[(.*)\]$")


def read_sweep(path):
    """Load a sweep CSV (and its sidecar, when present) as a SweepResult."""
    path = Path(path)
    try:
        text = path.read_text()
    except OSError as exc:
        raise InputError(os.fspath(path), f"cannot read file: {exc.strerror or exc}") from None
    rows = list(csv.reader(io.StringIO(text)))
    if not rows:
        raise InputError(os.fspath(path), "empty file")
    columns, units = [], []
    for cell in rows[0]:
        m = _HEADER_CELL.match(cell)
        if not m:
            raise InputError(os.fspath(path), f"header cell {cell!r} is not 'name [unit]'")
        columns.append(m.group(1))
        units.append(m.group(2))
    body = rows[1:]
    data = np.array([[float(x) for x in r[:-1]] for r in body], float).reshape(
        len(body), len(columns) - 1)
    warnings = [r[-1] for r in body]
    meta, axes, shape, config = {}, [], (len(body),), {}
    side = sidecar_path(path)
    if side.exists():
        meta = json.loads(side.read_text())
        config = meta.get("config", {})
        shape = tuple(meta["grid"]["shape"])
        axes = [Axis.from_dict(a) for a in meta["grid"]["axes"]]
    return SweepResult(columns=columns, units=units, data=data, warnings=warnings,
                       shape=shape, axes=axes, config=config, meta=meta)


# ---------------------------------------------------------------------------
# The partial file
# ---------------------------------------------------------------------------
def _cannot_write(path, exc):
    return InputError("--out", f"cannot write {os.fspath(path)!r}: {exc.strerror or exc}")


def _try_lock(fd):
    """Take an exclusive lock on the open file ``fd`` without waiting (True),
    or find it held by another process (False)."""
    try:
        import fcntl
    except ImportError:                       # Windows
        import msvcrt
        try:
            msvcrt.locking(fd, msvcrt.LK_NBLCK, 1)
            return True
        except OSError:
            return False
    try:
        fcntl.flock(fd, fcntl.LOCK_EX | fcntl.LOCK_NB)
        return True
    except OSError:
        return False


def _holder(fd):
    """Who holds a lock file: the process number it recorded."""
    try:
        text = os.pread(fd, 64, 0).decode("ascii", "replace").strip()
    except (OSError, AttributeError):
        text = ""
    return f"process {text}" if text.isdigit() else "another process"


class SweepLock:
    """``OUT.lock``: held (an OS file lock, released when the process ends,
    however it ends) by the one run that writes ``OUT`` and its partial file;
    it records that process's number and is removed when the run ends."""

    def __init__(self, out):
        self.out = Path(out)
        self.path = Path(os.fspath(out) + ".lock")
        self.fd = None

    def acquire(self):
        """Hold the lock, or InputError naming the process that holds it."""
        for _ in range(20):
            try:
                fd = os.open(self.path, os.O_RDWR | os.O_CREAT, 0o644)
            except OSError as exc:
                raise _cannot_write(self.path, exc) from None
            if not _try_lock(fd):
                who = _holder(fd)
                os.close(fd)
                raise InputError("--out", f"{os.fspath(self.out)} is being written by "
                                          f"another sweep ({who}, still running); wait "
                                          "for it to end, or stop it and continue with "
                                          "--resume")
            try:          # the holder may have removed the file just before
                same = os.path.samestat(os.fstat(fd), os.stat(self.path))
            except OSError:
                same = False
            if same:
                break
            os.close(fd)
        else:
            raise InputError("--out", f"cannot lock {os.fspath(self.path)!r}")
        os.ftruncate(fd, 0)
        os.write(fd, f"{os.getpid()}\n".encode())
        self.fd = fd
        forget_in_workers(fd)           # a forked worker must not hold the lock

    def release(self):
        """Remove the lock file (while still holding it) and let go."""
        if self.fd is None:
            return
        try:
            self.path.unlink(missing_ok=True)
        except OSError:
            pass
        forget_in_workers(self.fd, keep=False)
        os.close(self.fd)
        self.fd = None


def _stored_plan(plan):
    """What the plan file ``OUT.partial.json`` records of a sweep."""
    return {"fingerprint": plan.fingerprint(), "config": plan.raw,
            "axes": [a.to_dict() for a in plan.axes], "columns": plan.header(),
            "files": plan.file_digests()}


class PartialFile:
    """Rows of an unfinished sweep in ``OUT.partial`` (+ ``.partial.json``),
    written by the one run that holds ``OUT.lock``."""

    def __init__(self, out, plan, resume):
        self.out = Path(out)
        self.path = Path(os.fspath(out) + ".partial")
        self.plan_path = Path(os.fspath(out) + ".partial.json")
        self.plan = plan
        self.header_line = csv_line(plan.header())
        self.fh = None
        self.done = {}
        self.ordered = True
        self.last = -1
        self.count = 0
        # the rows this run wrote, in blocks: (first point, last point,
        # start, end) with start and end counted in characters after the
        # header (None: a block whose points are not in ascending order)
        self.blocks = []
        self.written = 0
        parent = self.out.parent
        if not parent.is_dir():
            raise InputError("--out", f"directory {os.fspath(parent) or '.'!r} "
                                      "does not exist")
        if self.out.is_dir():
            raise InputError("--out", f"{os.fspath(self.out)!r} is a directory")
        self.lock = SweepLock(self.out)
        self.lock.acquire()
        exists = self.path.exists()
        if exists and not resume:
            self.lock.release()
            raise InputError("--out", f"{os.fspath(self.path)!r} holds an "
                                      "interrupted sweep; continue it with "
                                      "--resume, or delete it to start afresh")
        self.resumed = bool(exists and resume)

    def open(self):
        """Create the partial file, or reopen it to resume."""
        try:
            if self.resumed:
                self._load()
                self.fh = open(self.path, "a", newline="")
            else:
                # the plan first: a run killed between the two leaves a plan
                # without rows (started afresh), never rows without a plan
                write_json(self.plan_path, _stored_plan(self.plan))
                self.fh = open(self.path, "w", newline="")
                self.fh.write(self.header_line)
                self.fh.flush()
        except OSError as exc:
            raise _cannot_write(self.path, exc) from None

    def _check_stored(self, blob):
        """InputError unless the partial file was started by this sweep."""
        try:
            with open(self.plan_path) as fh:
                stored = json.load(fh)
        except (OSError, ValueError):
            stored = {}
        if stored.get("fingerprint") != self.plan.fingerprint():
            raise InputError("--resume", f"{os.fspath(self.path)!r} was started "
                                         f"by a different sweep ({self._differs(stored)}); "
                                         "delete it to start afresh")
        if not blob.startswith(self.header_line.encode()):
            raise InputError("--resume", f"{os.fspath(self.path)!r} does not start "
                                         "with this sweep's header; delete it")

    def _differs(self, stored):
        """What differs between the stored plan and this one, in words."""
        now = json.loads(json.dumps(_stored_plan(self.plan), default=str))
        same = [k for k in ("config", "axes", "columns") if stored.get(k) == now[k]]
        files = stored.get("files")
        if len(same) == 3 and isinstance(files, dict) and files != now["files"]:
            changed = sorted(n for n in set(files) | set(now["files"])
                             if files.get(n) != now["files"].get(n))
            return "the content of " + ", ".join(repr(n) for n in changed) + \
                " changed since it was started"
        return "configuration, grid, files read or version differ"

    def _parse_row(self, line):
        """(index, values, warning) of a stored row, or None where the file
        stops being readable (a row cut short, a repeated or foreign index)."""
        try:
            cells = next(csv.reader([line]))
            if len(cells) != len(self.plan.columns):
                return None
            idx = int(cells[0])
            vals = np.array([float(x) for x in cells[1:-1]])
        except (ValueError, StopIteration):
            return None
        if not 0 <= idx < self.plan.size or idx in self.done:
            return None
        return idx, vals, cells[-1]

    def _remember(self, idx):
        self.count += 1
        self.ordered = self.ordered and idx > self.last
        self.last = max(self.last, idx)

    def _load(self):
        blob = self.path.read_bytes()
        self._check_stored(blob)
        pos = good = len(self.header_line.encode())
        while pos < len(blob):
            end = blob.find(b"\n", pos)
            if end < 0:
                break                      # a row cut short by the interrupt
            row = self._parse_row(blob[pos:end + 1].decode("utf-8", errors="replace"))
            if row is None:
                break
            idx, vals, warning = row
            self.done[idx] = (np.concatenate([[float(idx)], vals]), warning)
            self._remember(idx)
            pos = good = end + 1
        if good < len(blob):
            with open(self.path, "r+b") as fh:
                fh.truncate(good)

    def write(self, index, rows, warnings):
        """Write the rows of the points ``index``."""
        self.write_text(index, rows_lines(self.plan.columns, rows, warnings))

    def write_text(self, index, text):
        """Write the lines ``text`` (:func:`rows_lines`) of the points
        ``index``, and remember where they are in the file."""
        self.fh.write(text)
        idx = np.asarray(index).tolist()
        if idx:
            ascending = all(a < b for a, b in zip(idx, idx[1:]))
            self.blocks.append((idx[0], idx[-1], self.written, self.written + len(text))
                               if ascending else None)
            self.count += len(idx)
            self.ordered = self.ordered and ascending and idx[0] > self.last
            self.last = max(self.last, max(idx))
        self.written += len(text)
        self.fh.flush()

    def close(self):
        if self.fh is not None and not self.fh.closed:
            self.fh.close()

    def release(self):
        """Close the file and let another run write ``OUT``."""
        self.close()
        self.lock.release()

    def finish(self, data, warnings, meta):
        """Put the complete table in place and remove the partial files:
        the sidecar first, then the table by one rename (until then the
        partial file is there to resume from), then what is left of this
        run and of runs killed while they wrote (their temporary files)."""
        self.close()
        n = data.shape[0]
        write_json(sidecar_path(self.out), meta)
        if is_netcdf(self.out):
            SweepResult(columns=list(self.plan.columns), units=list(self.plan.units),
                        data=data, warnings=warnings, shape=self.plan.shape,
                        axes=self.plan.axes, config=self.plan.raw,
                        meta=meta).to_netcdf(self.out)
            self.path.unlink(missing_ok=True)
        elif self.ordered and self.count == n and not self.resumed:
            os.replace(self.path, self.out)
        elif self.count == n and not self.resumed:         # from several workers
            _write_in_order(self.path, self.out, self.header_line, self.blocks)
            self.path.unlink(missing_ok=True)
        else:
            write_csv(self.out, self.plan.header(), rows_text(self.plan.columns, data, warnings))
            self.path.unlink(missing_ok=True)
        self.plan_path.unlink(missing_ok=True)
        self._remove_temporaries()

    def _remove_temporaries(self):
        """Temporary files beside ``OUT`` left by a run killed while it wrote
        the table or its sidecar (this run holds the lock: none is in use)."""
        for target in (self.out, sidecar_path(self.out)):
            for tmp in target.parent.glob(f".{glob.escape(target.name)}.*.tmp"):
                try:
                    tmp.unlink()
                except OSError:
                    pass

    def discard(self):
        self.close()
        self.path.unlink(missing_ok=True)
        self.plan_path.unlink(missing_ok=True)
        self._remove_temporaries()
