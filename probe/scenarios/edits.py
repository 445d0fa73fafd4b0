"""Reading a scenario file and editing its dict: the ``--set`` overrides
(``"section.key=value"``) and ``--unset`` removals (``"section.key"``) of
every command, checked against the schema."""
from __future__ import annotations

import copy
import os
import tomllib

from probe.errors import InputError
from probe.scenarios.planning import UNCERTAINTY
from probe.scenarios.schema import check_key, component_key
from probe.scenarios.units import vector_components


def read_toml(path):
    """The dict of a TOML file; InputError naming the file on any failure."""
    try:
        name = os.fspath(path)
    except TypeError:
        raise InputError("config", f"expected a file path, got {path!r}") from None
    try:
        with open(name, "rb") as fh:
            data = fh.read()
    except OSError as exc:
        raise InputError(name, f"cannot read file: {exc.strerror or exc}") from None
    try:
        text = data.decode("utf-8")
    except UnicodeDecodeError as exc:
        raise InputError(name, f"not a UTF-8 text file ({exc})") from None
    try:
        return tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise InputError(name, f"TOML syntax error: {exc}") from None
    except RecursionError:
        raise InputError(name, "TOML syntax error: arrays or tables nested too "
                               "deeply to read") from None


def _toml_value(text):
    """A --set value: a TOML value if it parses as one, else the plain string."""
    try:
        return tomllib.loads(f"v = {text}")["v"]
    except (tomllib.TOMLDecodeError, RecursionError):
        return text.strip()


def override(config, assignment):
    """Return a copy of ``config`` with ``"section.key=value"`` applied.

    ``value`` is read as a TOML value when it is one (``3``, ``[1, 0, 0]``,
    ``"87Rb"``), otherwise as a plain string (``2 c_s``).  Unknown sections
    and keys are rejected with a suggestion.
    """
    if not isinstance(config, dict):
        raise InputError("config", f"must be a table of sections, got {config!r}")
    if not isinstance(assignment, str) or "=" not in assignment:
        raise InputError("--set", f"expected KEY=VALUE such as "
                                  f"'trajectory.speed=2 c_s', got {assignment!r}")
    dotted, text = assignment.split("=", 1)
    dotted = dotted.strip()
    component = component_key(dotted)
    section, key = ((component[0].section, component[0].name) if component else
                    _section_key(dotted, "--set", "trajectory.speed"))
    if not text.strip():
        raise InputError(dotted, "--set needs a value after '='")
    out = copy.deepcopy(config)
    body = out.setdefault(section, {})
    if not isinstance(body, dict):
        raise InputError(section, f"must be a table [{section}], got {body!r}")
    if component:
        set_component(body, component, _toml_value(text),
                      out.get("condensate", {}).get("dimension"))
    else:
        body[key] = _toml_value(text)
    return out


def set_component(body, component, value, dimension):
    """Set one component of a vector key in ``body`` (``component``:
    ``(Key, index)``, ``schema.component_key``): of the vector as written (a
    list, or ``"(0, 2, 0) um"``), or of the origin with a component per
    dimension of the gas (``dimension``; three if not 1, 2 or 3) when the
    key is absent.  ``--set`` and the sweeps' ``--vary`` both set
    components here."""
    key, index = component
    if key.name in body:
        vec = vector_components(body[key.name], key.dotted, key.kind, key.example)
    else:
        d = dimension
        vec = ["0 m"] * (d if d in (1, 2, 3) else 3)
    vec += ["0 m"] * (index + 1 - len(vec))
    vec[index] = value
    body[key.name] = vec


def _section_key(dotted, option, example):
    """(section, key) of a known ``"section.key"`` named on ``option`` (an
    entry of ``[uncertainty]`` is itself a scenario key: ``"uncertainty.
    condensate.density"``)."""
    entry = dotted.startswith(f"{UNCERTAINTY}.")
    parts = dotted.split(".", 1) if entry else dotted.split(".")
    if len(parts) != 2 or not all(parts):
        raise InputError(option, f"key {dotted!r} must be SECTION.KEY, e.g. '{example}'")
    section, key = parts
    check_key(section, key)
    return section, key


def unset(config, dotted):
    """Return a copy of ``config`` without the key ``"section.key"``.

    The key must be a known SECTION.KEY (as for :func:`override`) and be
    present in ``config``; removing a key that is not there is an error
    naming it.  A section left empty stays (as an empty table).
    """
    if not isinstance(config, dict):
        raise InputError("config", f"must be a table of sections, got {config!r}")
    if not isinstance(dotted, str):
        raise InputError("--unset", f"expected KEY such as 'probe.gap', got {dotted!r}")
    dotted = dotted.strip()
    if "=" in dotted:
        raise InputError("--unset", f"expected KEY such as 'probe.gap' (no '=value'; "
                                    f"use --set to change a value), got {dotted!r}")
    component = component_key(dotted)
    if component:
        raise InputError(dotted, f"one component cannot be removed; set it (--set "
                                 f"'{dotted}=0 um') or remove the whole "
                                 f"{component[0].name} (--unset {component[0].dotted})")
    section, key = _section_key(dotted, "--unset", "probe.gap")
    body = config.get(section)
    if body is not None and not isinstance(body, dict):
        raise InputError(section, f"must be a table [{section}], got {body!r}")
    if body is None or key not in body:
        raise InputError(dotted, "not in the scenario, nothing to unset")
    out = copy.deepcopy(config)
    del out[section][key]
    return out


def apply_edits(config, overrides=(), removals=()):
    """``config`` with the ``removals`` ("section.key", as ``--unset``)
    taken out first, then the ``overrides`` ("section.key=value", as
    ``--set``) applied; a single string counts as one entry."""
    if isinstance(removals, str):
        removals = (removals,)
    if isinstance(overrides, str):
        overrides = (overrides,)
    removed = set()
    for dotted in removals:
        name = dotted.strip() if isinstance(dotted, str) else dotted
        if name in removed:
            raise InputError(name, "given twice to --unset")
        config = unset(config, dotted)
        removed.add(name)
    for assignment in overrides:
        config = override(config, assignment)
    return config
