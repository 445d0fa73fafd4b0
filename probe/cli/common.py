"""What every command shares: the clean one-line refusal (``error: <key>:
<message>``, exit status 2), number formatting for tables (result quantities
by their entry in ``probe.quantities``), and files written whole or not at
all."""
from __future__ import annotations

import math
import os
import re
import tempfile

import click
import numpy as np
from probe import constants as sc

from probe.errors import InputError, ModelError
from probe.quantities import error_names, in_registry_order, num, quantity, table_unit

EXIT_INPUT = 2


class ProbeError(click.ClickException):
    """Bad input, reported as ``error: <key>: <message>`` with status 2."""

    exit_code = EXIT_INPUT

    def show(self, file=None):
        click.echo(f"error: {self.message}", err=True, file=file)


def input_errors():
    from trajectories import TrajectoryError
    return (InputError, ModelError, TrajectoryError)


_CONTROL = re.compile(r"[\x00-\x1f\x7f]")


def refusal(key, message):
    """The :class:`ProbeError` ``error: <key>: <message>``, on one line
    whatever the input: control characters (a newline inside a quoted TOML
    key, say) are shown escaped."""
    if key and not message.startswith(f"{key}:"):
        message = f"{key}: {message}"
    return ProbeError(_CONTROL.sub(lambda m: m.group(0).encode("unicode_escape").decode(),
                                   message))


def load_configs(configs, overrides=(), removals=()):
    """The scenarios of the files ``configs``; with several files, a bad
    one's message ends with the file's name (``(in FILE)``)."""
    from probe.scenarios.config import load_config

    scenarios = []
    for path in configs:
        try:
            scenarios.append(load_config(path, overrides, removals=removals))
        except InputError as exc:
            if len(configs) < 2:
                raise
            raise InputError(exc.key, f"{exc.message} (in {path})") from None
    return scenarios


def fail(exc):
    raise refusal(getattr(exc, "key", None),
                  getattr(exc, "message", None) or str(exc)) from None


# ---------------------------------------------------------------------------
# Formatting
# ---------------------------------------------------------------------------
def q(x, unit, scale=1.0):
    """``x / scale`` followed by its display unit."""
    if x is None:
        return "-"
    a = np.asarray(x, dtype=float)
    return f"{num(a / scale)} {unit}".rstrip()


def _speed_extra(value, sound_speed):
    return f"  ({num(np.asarray(value, float) / sound_speed)} c_s)"


def _energy_extra(value, sound_speed):
    return f"  (E/h = {num(np.asarray(value, float) / sc.h)} Hz)"


def _frequency_extra(value, sound_speed):
    return f"  ({num(np.asarray(value, float))} rad/s)"


#: what a table adds after a value of each kind: a speed in units of the
#: sound speed, an energy as a frequency E/h, an (ordinary) frequency in rad/s
KIND_EXTRAS = {"speed": _speed_extra, "energy": _energy_extra,
               "frequency": _frequency_extra}


def quantity_text(name, value, error=None, note="", sound_speed=None, dimension=3):
    """A result quantity (registered in ``probe.quantities``) for a table
    row: the value in the table unit of its kind (a count as a whole number;
    NaN: undetermined), ``(+/- error)``, what its kind adds
    (:data:`KIND_EXTRAS`, which needs ``sound_speed`` for speeds) and
    ``note``."""
    qty = quantity(name)
    a = np.asarray(value, float)
    if a.ndim == 0 and math.isnan(float(a)):
        return "undetermined (see warnings)"
    if qty.kind == "count":
        text = str(value)
    else:
        unit, scale = table_unit(qty.kind, dimension, value=a)
        text = q(a, unit, scale)
        if error is not None:
            text += f"  (+/- {num(np.asarray(error, float) / scale, 2)}" \
                    f"{' ' + unit if unit else ''})"
    extra = KIND_EXTRAS.get(qty.kind)
    if extra is not None:
        text += extra(value, sound_speed)
    return f"{text}  {note}" if note else text


def result_rows(result, names, values=None, sound_speed=None, dimension=3):
    """Table rows ``(label, text)`` of the quantities ``names`` of a result
    (attributes of ``result``, or entries of ``values`` when given), in
    registry order: error estimates beside their quantity, quantities
    without a value left out, notes where the quantity they need is among
    ``names``."""
    present = set(names)
    errors = error_names()

    def value_of(name):
        if values is not None and name in values:
            return values[name]
        return getattr(result, name, None)

    rows = []
    for name in in_registry_order(names):
        value = value_of(name)
        if name in errors or value is None:
            continue
        qty = quantity(name)
        error = value_of(qty.error) if qty.error else None
        note = qty.note if qty.note_with is None or qty.note_with in present else ""
        rows.append((qty.label, quantity_text(name, value, error, note, sound_speed,
                                              dimension)))
    return rows


def json_value(x):
    if x is None:
        return None
    a = np.asarray(x, float)
    if a.ndim:
        return [None if not math.isfinite(v) else v for v in a.tolist()]
    v = float(a)
    return v if math.isfinite(v) else None


def outputs_json(result, names):
    """Every field of an engine's result (``to_dict``, SI) and the quantities
    ``names`` (a model's declared outputs) that the result holds beside its
    fields."""
    out = result.to_dict()
    for name in names:
        if name not in out:
            out[name] = json_value(getattr(result, name, None))
    return out


def jsonable(obj):
    """``obj`` with numpy numbers and arrays as plain numbers and lists, and
    NaN and infinities as null (JSON has no such numbers)."""
    if isinstance(obj, dict):
        return {str(k): jsonable(v) for k, v in obj.items()}
    if isinstance(obj, (list, tuple)):
        return [jsonable(v) for v in obj]
    if isinstance(obj, np.ndarray):
        return jsonable(obj.tolist())
    if isinstance(obj, (bool, np.bool_)):
        return bool(obj)
    if isinstance(obj, (int, np.integer)):
        return int(obj)
    if isinstance(obj, (float, np.floating)):
        return float(obj) if math.isfinite(obj) else None
    return obj


def json_text(obj):
    """The JSON text of ``obj`` (:func:`jsonable`), indented."""
    import json
    return json.dumps(jsonable(obj), indent=2, allow_nan=False)


# ---------------------------------------------------------------------------
# Options every command takes
# ---------------------------------------------------------------------------
def out_option(metavar, help):
    """``-o/--out FILE`` (also spelled ``--output``): the command's output file."""
    return click.option("-o", "--out", "--output", "out", default=None, metavar=metavar,
                        help=help)


def json_option(help="Print the result as JSON on stdout."):
    """``--json``: the result as JSON on stdout."""
    return click.option("--json", "as_json", is_flag=True, help=help)


def write_atomic(path, text):
    """Write ``text`` to ``path`` whole or not at all: a temporary file in the
    same folder, renamed over ``path`` once complete.  InputError (key
    ``--output``) when the file cannot be written."""
    target = os.fspath(path)
    folder = os.path.dirname(os.path.abspath(target))
    tmp = None
    try:
        fd, tmp = tempfile.mkstemp(prefix=f".{os.path.basename(target)}.",
                                   suffix=".tmp", dir=folder)
        with os.fdopen(fd, "w") as fh:
            fh.write(text)
        os.replace(tmp, target)
        tmp = None
    except OSError as exc:
        raise InputError("--output", f"cannot write {target!r}: "
                                     f"{exc.strerror or exc}") from None
    finally:
        if tmp is not None and os.path.exists(tmp):
            os.unlink(tmp)


#: the line under a block whose values carry error estimates
ERROR_FOOTNOTE = ("  (+/- is the numerical error of the integration only, not an "
                  "uncertainty of the model or of its inputs)")


def report(source, blocks, warnings):
    """The readable report of one scenario: ``== source ==``, the titled
    blocks of ``(label, text)`` rows aligned in one column, and the
    warnings (or "(none)")."""
    width = max(len(label) for _, rows in blocks for label, _ in rows)
    lines = [f"== {source} =="] if source else []
    for title, rows in blocks:
        lines.append(title)
        lines += [f"  {label:<{width}}  {value}" for label, value in rows]
        if any("(+/- " in value for _, value in rows):
            lines.append(ERROR_FOOTNOTE)
    lines.append("Warnings")
    lines += [f"  - {w}" for w in warnings] if warnings else ["  (none)"]
    return "\n".join(lines)
