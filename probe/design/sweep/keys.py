"""The configuration keys a sweep may vary, and numeric edits of a
configuration dict (values written back with their SI unit)."""
from __future__ import annotations

import copy
import os

import numpy as np

from probe.errors import InputError
from probe.quantities import si_unit
from probe.scenarios.edits import set_component
from probe.scenarios.keys import suggest
from probe.scenarios.schema import NUMERIC_KEYS, VECTOR_KEYS, component_key


def check_numeric_key(key, option="--vary"):
    """``key`` if it is a numeric configuration key, else InputError."""
    from probe.scenarios.schema import SCHEMA

    if not isinstance(key, str) or key.count(".") != 1 or not all(key.split(".")):
        raise InputError(option, f"key {key!r} must be SECTION.KEY, e.g. "
                                 "'trajectory.speed'")
    section, name = key.split(".")
    name = component_of(key)[0].split(".")[1]
    if section not in SCHEMA:
        raise InputError(key, f"unknown section; {suggest(section, SCHEMA)}"
                              f"allowed: {', '.join(SCHEMA)}")
    if name not in SCHEMA[section]:
        raise InputError(key, f"unknown key; {suggest(name, SCHEMA[section])}"
                              f"allowed: {', '.join(SCHEMA[section])}")
    if key not in NUMERIC_KEYS:
        raise InputError(key, "is not a numeric key and cannot be varied; "
                              f"numeric keys: {', '.join(NUMERIC_KEYS)}")
    return key


def component_of(key):
    """``(vector key, index)`` of a component key such as
    ``trajectory.start[1]``; ``(key, None)`` for any other key."""
    if key.endswith("]") and "[" in key:
        base, index = key[:-1].split("[", 1)
        if index.isdigit():
            return base, int(index)
    return key, None


def is_relative_speed(text):
    """True if a speed string is written in units of the sound speed."""
    from probe.scenarios.units import ureg

    if not isinstance(text, str):
        return False
    try:
        q = ureg.parse_expression(text)
    except Exception:  # parse errors are reported by parse_quantity
        return False
    return hasattr(q, "dimensionality") and q.dimensionality == ureg.c_s.dimensionality


def value_text(key, value, relative=False, dimension=3):
    """The configuration entry (a string with units, or a number for
    dimensionless keys) for the SI ``value`` of ``key`` (or a multiple of the
    sound speed when ``relative``).  Written with ``repr`` so that reading it
    back gives the same float."""
    kind = NUMERIC_KEYS[key]
    value = float(value)
    if relative:
        return f"{value!r} c_s"
    if kind == "dimensionless":
        return value
    return f"{value!r} {si_unit(kind, dimension)}"


def assign(raw, values, dimension=None):
    """A copy of the configuration dict ``raw`` with numeric entries set.

    ``values`` maps keys to configuration values: strings with units
    (``"2 um"``) or SI floats (written with the key's SI unit).  This is the
    sweep's own numeric override; :func:`probe.config.override` handles text.
    """
    out = copy.deepcopy(raw)
    d = dimension or (raw.get("condensate", {}).get("dimension", 3))
    for key, value in values.items():
        section, name = key.split(".")
        body = out.setdefault(section, {})
        if not isinstance(body, dict):
            raise InputError(section, f"must be a table [{section}], got {body!r}")
        if isinstance(value, (float, int, np.floating, np.integer)) and not isinstance(value, bool):
            value = value_text(key, value, dimension=d)
        component = component_key(key)
        if component is None:
            body[name] = value
        else:
            # of the vector as written in the file (a list or "(0, 2, 0) um")
            set_component(body, component, value, d)
    return out


def raw_config(config, overrides=(), source=None, removals=()):
    """(raw dict after removals and overrides, source) for a path or a dict
    (whose ``source``, the file it came from, locates relative paths in
    it).  ``removals`` ("section.key", as ``--unset``) are taken out before
    the ``overrides`` ("section.key=value", as ``--set``) are applied."""
    from probe.scenarios.config import apply_edits, read_toml

    if isinstance(config, dict):
        raw = copy.deepcopy(config)
    else:
        raw, source = read_toml(config), os.fspath(config)
    return apply_edits(raw, overrides, removals), source
