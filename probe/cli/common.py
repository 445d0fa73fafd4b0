"""What every command shares: the clean one-line refusal (``error: <key>:
<message>``, exit status 2), number formatting for tables, and files written
whole or not at all."""
from __future__ import annotations

import math
import os
import re
import tempfile

import click
import numpy as np

from probe.errors import InputError, ModelError

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


def fail(exc):
    key = getattr(exc, "key", None)
    message = getattr(exc, "message", None) or str(exc)
    if key and not message.startswith(f"{key}:"):
        message = f"{key}: {message}"
    # one line whatever the input: control characters (a newline inside a
    # quoted TOML key, say) are shown escaped
    message = _CONTROL.sub(lambda m: m.group(0).encode("unicode_escape").decode(),
                           message)
    raise ProbeError(message) from None


# ---------------------------------------------------------------------------
# Formatting
# ---------------------------------------------------------------------------
def num(x, digits=6):
    """A number with ``digits`` significant digits; arrays element-wise."""
    if x is None:
        return "-"
    a = np.asarray(x)
    if a.ndim:
        return "[" + ", ".join(num(v, digits) for v in a.ravel()) + "]"
    x = float(a)
    if math.isnan(x):
        return "nan"
    if math.isinf(x):
        return "inf" if x > 0 else "-inf"
    return f"{x:.{digits}g}"


def q(x, unit, scale=1.0):
    """``x / scale`` followed by its display unit."""
    if x is None:
        return "-"
    a = np.asarray(x, dtype=float)
    return f"{num(a / scale)} {unit}".rstrip()


def rate(rate, err):
    if rate is None:
        return "-"
    text = q(rate, "s^-1")
    if err is not None:
        text += f"  (+/- {num(err, 2)} s^-1)"
    return text


def json_value(x):
    if x is None:
        return None
    a = np.asarray(x, float)
    if a.ndim:
        return [None if not math.isfinite(v) else v for v in a.tolist()]
    v = float(a)
    return v if math.isfinite(v) else None


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
