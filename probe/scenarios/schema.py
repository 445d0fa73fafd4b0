"""The schema of scenario files, collected from the keys declared by what
they build (see ``probe.scenarios.keys``), and everything derived from it:
the section -> key -> example table ``SCHEMA``, the checks of section and
key names with their messages, the numeric keys that ``--vary`` accepts
(``NUMERIC_KEYS``), the keys the engines take as arrays (``VECTOR_KEYS``),
the plot labels (``KEY_LABELS``) and the Markdown tables of the
documentation (:func:`markdown_tables`).
"""
from __future__ import annotations

import math
import re

from probe.errors import InputError
from probe.quantities import si_unit
from probe.scenarios import detector, gas, numerics, path, planning
from probe.scenarios.keys import suggest
from probe.scenarios.units import parse_quantity

#: every part of a scenario, in the order of the schema (sections in the
#: order condensate, probe, trajectory, numerics, uncertainty, readout)
PARTS = (*gas.PARTS, *detector.PARTS, *path.PARTS, *numerics.PARTS, *planning.PARTS)

#: sections every scenario has
REQUIRED_SECTIONS = ("condensate", "probe", "trajectory")


def _first_declarations():
    """``"section.name"`` -> Key, the first declaration of each name in its
    section (a name read by two parts, such as ``trajectory.start``, keeps
    the first one)."""
    out = {}
    for part in PARTS:
        for key in part.keys:
            out.setdefault(key.dotted, key)
    return out


#: ``"section.name"`` -> Key (the first declaration of each)
KEYS = _first_declarations()

#: section -> key -> example value (the allowed names, in order)
SCHEMA = {}
for _key in KEYS.values():
    SCHEMA.setdefault(_key.section, {})[_key.name] = _key.example

#: numeric configuration keys that a grid may vary, and the kind of quantity
#: (as understood by :func:`probe.scenarios.units.parse_quantity`)
NUMERIC_KEYS = {key.dotted: key.kind
                for key in sorted((k for k in KEYS.values() if k.vary is not None),
                                  key=lambda k: k.vary)}

#: the components of vector keys of lengths (a straight path's start point,
#: a circle's centre) that a sweep may vary one at a time:
#: ``trajectory.start[1]`` is the y component (the impact parameter of a
#: straight path along x)
AXES = "xyz"
COMPONENT_KEYS = {f"{key.dotted}[{i}]": key for part in PARTS for key in part.keys
                  if key.vector and key.kind == "length" for i in range(3)}
NUMERIC_KEYS.update({name: key.kind for name, key in COMPONENT_KEYS.items()})

_COMPONENT = re.compile(r"^(\w+)\.(\w+)\[\s*(\d+)\s*\]$")


def component_key(dotted):
    """``(Key, index)`` of a component key such as ``trajectory.start[1]``
    (one of ``COMPONENT_KEYS``: what ``--vary`` and ``--set`` accept), None
    for a name without ``[index]``; InputError for an index that the key
    has not, or a key whose components are not set one at a time."""
    m = _COMPONENT.match(dotted.replace(" ", ""))
    if m is None:
        return None
    section, name, index = m.group(1), m.group(2), int(m.group(3))
    check_key(section, name)
    name = f"{section}.{name}[{index}]"
    if name in COMPONENT_KEYS:
        return COMPONENT_KEYS[name], index
    own = [k for k in COMPONENT_KEYS if k.startswith(f"{section}.{m.group(2)}[")]
    raise InputError(name, f"no such component; {section}.{m.group(2)} has {own[0]} to "
                           f"{own[-1]} ({', '.join(AXES)})" if own else
                     "its components are not set one at a time; give the whole value "
                     f"(components of: {', '.join(sorted({k.split('[')[0] for k in COMPONENT_KEYS}))})")


#: keys whose values the engines take as arrays (name of the engine argument)
VECTOR_KEYS = {key.dotted: key.array for key in KEYS.values() if key.array}

#: plot labels of the keys that have one
KEY_LABELS = {key.dotted: key.label for key in KEYS.values() if key.label}
KEY_LABELS.update({name: f"{key.name} {AXES[int(name[-2])]}"
                   for name, key in COMPONENT_KEYS.items()})


def check_key(section, key):
    """Raise InputError for an unknown section, or an unknown key (``key``
    None: check the section only), with a suggestion.  Entries of
    ``[uncertainty]`` named by a scenario key pass here (they are checked
    against the scenario when it is planned)."""
    if section not in SCHEMA:
        raise InputError(
            section, f"unknown section; {suggest(section, SCHEMA)}"
            f"allowed: {', '.join(SCHEMA)}")
    if key is not None and key not in SCHEMA[section] and \
            not planning.is_entry(section, key):
        homes = [s for s in SCHEMA if key in SCHEMA[s]]
        if homes:
            where = " or ".join(f"[{s}] ({s}.{key})" for s in homes)
            raise InputError(f"{section}.{key}", f"not a key of [{section}]: {key} "
                                                 f"belongs in {where}; move it there")
        raise InputError(
            f"{section}.{key}", f"unknown key; {suggest(key, SCHEMA[section])}"
            f"allowed: {', '.join(SCHEMA[section])}")


_GOT_NUMBER = re.compile(r"got (-?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?)(?= rad/s\b)?( rad/s)?"
                         r"(?=$|[;,)]|\s)")


def as_written(exc, raw):
    """``exc`` (an InputError) with a bare SI number after "got" replaced by
    the value as the scenario wrote it, its SI value and unit beside
    (``got '-150 Hz' (-942.478 rad/s)``), when the number is the SI value of
    the scenario's key ``exc.key``; else ``exc`` unchanged."""
    key = KEYS.get(getattr(exc, "key", None) or "")
    match = _GOT_NUMBER.search(getattr(exc, "message", "") or "")
    if key is None or match is None or key.vector or key.kind in (None, "dimensionless"):
        return exc
    written = raw.get(key.section, {}).get(key.name)
    if not isinstance(written, str):
        return exc
    number = float(match.group(1))
    try:
        si = parse_quantity(written, key.dotted, key.kind, dimension=raw.get(
            "condensate", {}).get("dimension"))
    except (InputError, ValueError):
        return exc
    if not math.isclose(si, number, rel_tol=1e-9, abs_tol=0.0):
        return exc
    unit = si_unit(key.kind, raw.get("condensate", {}).get("dimension") or 3)
    shown = f"got {written!r} ({number:.6g} {unit})"
    return InputError(exc.key, exc.message[:match.start()] + shown
                      + exc.message[match.end():])


def validate_keys(raw):
    """Check the section and key names of a configuration dict."""
    if not isinstance(raw, dict):
        raise InputError("config", f"must be a table of sections, got {raw!r}")
    for section, body in raw.items():
        check_key(section, None)
        if not isinstance(body, dict):
            raise InputError(section, f"must be a table [{section}], got {body!r}")
        for key in body:
            check_key(section, key)
    for section in REQUIRED_SECTIONS:
        if section not in raw:
            raise InputError(section, f"missing section [{section}]")


def _toml(value):
    """A default value written as in a scenario file."""
    if isinstance(value, str):
        return f'"{value}"'
    if isinstance(value, (tuple, list)):
        return "[" + ", ".join(_toml(v) for v in value) + "]"
    if isinstance(value, float) and value and not 1e-3 <= abs(value) < 1e6:
        mantissa, _, exponent = f"{value:e}".partition("e")
        return f"{mantissa.rstrip('0').rstrip('.')}e{int(exponent)}"
    return f"{value:g}" if isinstance(value, float) else str(value)


def _value(key):
    """What a key takes, in words."""
    if key.choices:
        return ", ".join(f'"{c}"' for c in key.choices)
    if key.kind is None:
        return {'"': "text", "{": "table"}.get(key.example[0], "integer")
    kind = "number" if key.kind == "dimensionless" else key.kind.replace("_", " ")
    if key.kind == "speed":
        kind += " (or in c_s)"
    return f"list of {kind}s" if key.vector else kind


def _need(key):
    """The default column: the default, "required", or the condition."""
    if key.required is True:
        return "required"
    if key.required:
        return key.required
    return "" if key.default is None else _toml(key.default)


def markdown_tables():
    """The key tables of the documentation (Markdown): one table per
    section, a row per key and part that reads it (``used by``), with an
    example, what it takes, its default or whether it is required, and
    what it sets."""
    out = []
    for section in SCHEMA:
        rows, seen = [], set()
        for part in PARTS:
            if part.section != section:
                continue
            for key in part.keys:
                if id(key) in seen:
                    continue
                seen.add(id(key))
                users = [p.used_by for p in PARTS if any(k is key for k in p.keys)]
                used = ", ".join(u for u in users if u)
                rows.append(f"| `{key.name}` | {used} | `{key.example}` | {_value(key)} "
                            f"| {_need(key)} | {key.help} |")
        out += [f"`[{section}]`", "",
                "| key | used by | example | value | default | meaning |",
                "|---|---|---|---|---|---|", *rows, ""]
    return "\n".join(out)
