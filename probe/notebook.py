"""Results in a notebook: HTML tables of rate, transit and passage results and
of sweeps, and a sweep as a labelled ``xarray.Dataset``.

Jupyter shows an object through its ``_repr_html_``; the result classes
delegate to :func:`result_html` and :func:`sweep_html` here, so one module
decides how every result looks.  Labels and units come from the output
quantity registry (``probe.quantities``): the values are shown in the units
of the printed tables (rates in s^-1, temperatures in nK, gaps as ordinary
frequencies in Hz), each with its numerical error where the engine gives
one.

:func:`to_xarray` turns a :class:`~probe.design.sweep.SweepResult` into an
``xarray.Dataset`` whose dimensions are the varied keys (coordinates in SI
units, or in multiples of the sound speed for a speed given in c_s), whose
data variables are the other columns reshaped to the grid, and whose
attributes carry the SI unit (``units``) and a readable label
(``long_name``) of every variable; the scenario and the run's record are
dataset attributes (JSON text).  xarray is an optional dependency
(``pip install "condensate-probe[notebook]"``); :func:`write_netcdf` writes
the dataset to a NetCDF file (through scipy's NetCDF-3 writer when the
netCDF4 library is absent).
"""
from __future__ import annotations

import html
import json

import numpy as np

from probe.errors import InputError
from probe.quantities import QUANTITIES, num, table_unit

#: rows shown of a long array or a sweep (the rest summarised in one line)
MAX_ROWS = 30


def _scaled(name, value, dimension):
    """``(text, unit)`` of a registered quantity in its table unit."""
    unit, scale = table_unit(QUANTITIES[name].kind, dimension)
    return num(float(value) / scale), unit


def _quantity_rows(values, dimension):
    """(label, value, +/- error, unit) of every registered scalar output in
    ``values`` (a result's ``to_dict``), in the registry's order."""
    rows = []
    errors = {q.error for q in QUANTITIES.values() if q.error}
    for name, q in QUANTITIES.items():
        v = values.get(name)
        if name in errors or v is None or isinstance(v, (list, dict, str)):
            continue
        text, unit = _scaled(name, v, dimension)
        err = values.get(q.error) if q.error else None
        err_text = "" if err is None or isinstance(err, list) else _scaled(q.error, err,
                                                                          dimension)[0]
        rows.append((q.label, text, err_text, unit))
    return rows


def _array_rows(values, dimension):
    """Column names and rows of the registered outputs given as arrays."""
    names = [n for n, v in values.items()
             if n in QUANTITIES and isinstance(v, list) and v and not isinstance(v[0], list)]
    if not names:
        return [], []
    size = min(len(values[n]) for n in names)
    head = [f"{QUANTITIES[n].label} [{table_unit(QUANTITIES[n].kind, dimension)[0]}]"
            for n in names]
    scales = [table_unit(QUANTITIES[n].kind, dimension)[1] for n in names]
    rows = [[num(np.nan if values[n][i] is None else values[n][i] / s)
             for n, s in zip(names, scales)] for i in range(min(size, MAX_ROWS))]
    return head, rows


def _table(head, rows):
    cells = "".join(f"<th>{html.escape(h)}</th>" for h in head)
    body = "".join("<tr>" + "".join(f"<td>{html.escape(str(c))}</td>" for c in r) + "</tr>"
                   for r in rows)
    return f"<table><thead><tr>{cells}</tr></thead><tbody>{body}</tbody></table>"


def _warnings_html(warnings):
    if not warnings:
        return ""
    items = "".join(f"<li>{html.escape(str(w))}</li>" for w in warnings)
    return f"<p><b>Warnings</b></p><ul>{items}</ul>"


def result_html(result, title):
    """HTML of a rate, transit or passage result: its registered outputs with
    labels, values, numerical errors and units, then its warnings."""
    values = result.to_dict()
    dimension = int(values.get("dimension") or 3)
    model = values.get("model", "")
    parts = [f"<p><b>{html.escape(title)}</b> ({html.escape(str(model))} probe)</p>"]
    rows = _quantity_rows(values, dimension)
    if rows:
        parts.append(_table(["quantity", "value", "+/- numerical error", "unit"], rows))
    head, arows = _array_rows(values, dimension)
    if head:
        parts.append(_table(head, arows))
    parts.append(_warnings_html(values.get("warnings")))
    return "".join(parts)


def sweep_html(result):
    """HTML of a sweep: the grid, then the first rows of its table."""
    axes = ", ".join(f"{a.key} ({a.size} values, {a.unit})" for a in result.axes)
    head = [f"{c} [{u}]" for c, u in zip(result.columns, result.units)] + ["warnings"]
    rows = [[num(x) for x in result.data[i]] + [result.warnings[i]]
            for i in range(min(result.data.shape[0], MAX_ROWS))]
    more = result.data.shape[0] - len(rows)
    tail = f"<p>... {more} more rows</p>" if more > 0 else ""
    flagged = sum(1 for w in result.warnings if w)
    note = f"<p>{flagged} points carry warnings (see the warnings column).</p>" if flagged \
        else ""
    return (f"<p><b>Sweep</b> over {html.escape(axes)}: {result.data.shape[0]} points</p>"
            + _table(head, rows) + tail + note)


def _xarray():
    try:
        import xarray
    except ImportError:
        raise InputError("xarray", "to_xarray and NetCDF output need the optional package "
                         "xarray: pip install \"condensate-probe[notebook]\"") from None
    return xarray


def _long_name(column):
    q = QUANTITIES.get(column)
    return q.label if q is not None else column


def to_xarray(result):
    """The sweep as an ``xarray.Dataset`` (see the module docstring)."""
    xr = _xarray()
    dims = [a.key for a in result.axes]
    coords = {a.key: (a.key, np.asarray(a.values, float),
                      {"units": a.unit, "long_name": _long_name(a.key),
                       "spacing": "log" if a.log else "linear"})
              for a in result.axes}
    data = {}
    for column, unit in zip(result.columns, result.units):
        if column in dims or column == "warnings":
            continue
        data[column] = (dims, result.grid(column), {"units": unit,
                                                    "long_name": _long_name(column)})
    data["warnings"] = (dims, np.array(result.warnings, dtype=str).reshape(result.shape),
                        {"long_name": "regime-of-validity warnings ('' where none)"})
    attrs = {"scenario": json.dumps(result.config, default=str),
             "run": json.dumps(result.meta, default=str)}
    return xr.Dataset(data, coords=coords, attrs=attrs)


def _netcdf_names(ds):
    """NetCDF-3 names may not hold every character of a key: ``[`` and ``]``
    of component keys become ``_``; the original name is kept as an
    attribute."""
    renames = {}
    for name in list(ds.variables):
        safe = name.replace("[", "_").replace("]", "")
        if safe != name:
            renames[name] = safe
    ds = ds.rename(renames)
    for old, new in renames.items():
        ds[new].attrs["key"] = old
    return ds


def write_netcdf(result, path):
    """Write the sweep to ``path`` as NetCDF (atomically: a temporary file in
    the same folder renamed at the end)."""
    import os
    import tempfile

    ds = _netcdf_names(to_xarray(result))
    folder = os.path.dirname(os.path.abspath(path))
    fd, tmp = tempfile.mkstemp(prefix=".sweep-", suffix=".nc", dir=folder)
    os.close(fd)
    try:
        try:
            import netCDF4  # noqa: F401
            engine = "netcdf4"
        except ImportError:
            engine = "scipy"
        ds.to_netcdf(tmp, engine=engine)
        os.replace(tmp, path)
    except BaseException:
        if os.path.exists(tmp):
            os.unlink(tmp)
        raise
