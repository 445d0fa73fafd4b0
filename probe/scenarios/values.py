"""Reading the values of declared keys (:class:`probe.scenarios.keys.Key`)
from a table of a scenario: presence, choices, quantities with units,
isotopes.  Every bad value raises :class:`probe.errors.InputError` naming
its key."""
from __future__ import annotations

import re

import numpy as np

from probe import constants as sc
from probe.cache import Memo, installed_stamp
from probe.errors import InputError
from probe.scenarios.keys import both_given, suggest
from probe.scenarios.spelling import with_hint
from probe.scenarios.units import parse_quantity, parse_vector


def require(body, key):
    """The raw value of ``key`` in ``body``; InputError with an example if
    it is missing."""
    if key.name not in body:
        raise InputError(key.dotted, f"missing; add e.g. {key.name} = {key.example}")
    return body[key.name]


def choice(body, key, default=None):
    """The name given for ``key`` (``default``, else the key's default, if
    absent), checked against ``key.choices`` with a suggestion."""
    value = body.get(key.name, key.default if default is None else default)
    if value not in key.choices:
        hint = suggest(str(value), key.choices) if isinstance(value, str) else ""
        raise InputError(key.dotted, f"{value!r} is not allowed; {hint}allowed: "
                                     f"{', '.join(repr(c) for c in key.choices)}")
    return value


def quantity(body, key, **kwargs):
    """The SI value of the quantity ``key`` (a float; a numpy array for a
    vector key): read from ``body``, else from the key's default; missing
    is an error for a required key, and None otherwise.  ``kwargs``
    (``dimension``, ``sound_speed``, ``sizes``) go to the parser."""
    if key.name in body:
        value = body[key.name]
    elif key.default is not None:
        value = key.default
    elif key.required is True:
        value = require(body, key)
    else:
        return None
    if key.vector:
        _numbers_only(value, key)
        return parse_vector(value, key.dotted, key.kind, declared=key.example, **kwargs)
    kwargs.pop("sizes", None)
    return with_hint(lambda v: parse_quantity(v, key.dotted, key.kind,
                                              declared=key.example, **kwargs),
                     value, key.dotted)


def _numbers_only(value, key):
    """InputError unless a list for a vector of pure numbers (a direction,
    a normal) holds numbers only."""
    if key.kind != "dimensionless" or not isinstance(value, (list, tuple)):
        return
    for i, comp in enumerate(value):
        if isinstance(comp, bool) or not isinstance(comp, (int, float)):
            raise InputError(key.dotted, f"a {key.name} is a list of numbers such as "
                                         f"{key.example}, got {value!r} (component {i}, "
                                         f"{comp!r}, is not a number)")


def read(body, key, **kwargs):
    """The value of any declared key: a name for a key with choices, the SI
    value of a quantity (:func:`quantity`), else the raw value (or the
    default; missing and required is an error)."""
    if key.choices:
        return choice(body, key)
    if key.kind is not None:
        return quantity(body, key, **kwargs)
    if key.name not in body and key.required is True:
        require(body, key)
    return body.get(key.name, key.default)


def not_applicable(body, section, keys, reason):
    """InputError for the first (in sorted order) of ``keys`` present in
    ``body``: "not used <reason>; remove it"."""
    for name in sorted(keys):
        if name in body:
            raise InputError(f"{section}.{name}", f"not used {reason}; remove it")


_SPECIES = re.compile(r"^\s*(?:(\d+)\s*-?\s*([A-Za-z]{1,2})|([A-Za-z]{1,2})\s*-?\s*(\d+))\s*$")


#: isotope masses already looked up (``(symbol, mass number)`` -> u), kept in
#: the cache folder while the same ``periodictable`` is installed: importing it
#: builds its whole table, a tenth of a small command's start-up
_ISOTOPE_MASSES = Memo("isotopes-1", lambda: installed_stamp(
    "periodictable", "__init__.py", "mass.py", "core.py"))


def species_mass(species, key="condensate.species"):
    """Atomic mass (kg) of an isotope written like ``"87Rb"`` (or ``"Rb87"``,
    ``"Rb-87"``), from the ``periodictable`` package (a mass looked up once
    is read back from the cache folder by later runs: ``probe.cache``)."""
    if not isinstance(species, str):
        raise InputError(key, f"must be an isotope such as \"87Rb\", got {species!r}")
    m = _SPECIES.match(species)
    if not m:
        raise InputError(key, f"{species!r} is not an isotope; write mass number "
                              "and element symbol, e.g. \"87Rb\", \"23Na\", \"39K\"")
    a_text, sym = (m.group(1), m.group(2)) if m.group(1) else (m.group(4), m.group(3))
    sym = sym[0].upper() + sym[1:].lower()
    mass_u = _ISOTOPE_MASSES.get((sym, int(a_text)))
    if mass_u is None:
        mass_u = _isotope_mass(species, key, sym, int(a_text))
        _ISOTOPE_MASSES.put((sym, int(a_text)), mass_u)
    return mass_u * sc.atomic_mass


def species_name(species):
    """An isotope as the tool writes it: mass number then symbol (``"Rb87"``,
    ``"rb-87"`` -> ``"87Rb"``); a text that is not an isotope unchanged."""
    m = _SPECIES.match(species) if isinstance(species, str) else None
    if not m:
        return species
    a_text, sym = (m.group(1), m.group(2)) if m.group(1) else (m.group(4), m.group(3))
    return f"{int(a_text)}{sym[0].upper()}{sym[1:].lower()}"


def _isotope_mass(species, key, sym, a):
    """Mass (u) of isotope ``a`` of element ``sym`` from ``periodictable``."""
    import periodictable

    try:
        element = periodictable.elements.symbol(sym)
    except ValueError:
        raise InputError(key, f"{species!r}: unknown element symbol {sym!r}") from None
    try:
        iso = element[a]
    except KeyError:
        known = list(element.isotopes)
        span = f"{known[0]}..{known[-1]}" if known else "none"
        raise InputError(key, f"{species!r}: {sym} has no isotope with mass "
                              f"number {a} (known: {span})") from None
    mass_u = iso.mass
    if mass_u is None or not np.isfinite(mass_u):
        raise InputError(key, f"{species!r}: no mass tabulated for this isotope")
    return float(mass_u)


def mass(body, species_key, mass_key, default=None, default_label=None):
    """``(kg, species or None)`` from ``species_key`` (an isotope) or
    ``mass_key`` (a mass with units): exactly one of them, or ``default``
    (and its label) when both are absent and a default is given."""
    section = species_key.section
    if species_key.name in body and mass_key.name in body:
        raise InputError(mass_key.dotted, both_given(species_key, mass_key))
    if species_key.name in body:
        species = body[species_key.name]
        return species_mass(species, species_key.dotted), species_name(species)
    if mass_key.name in body:
        return quantity(body, mass_key), None
    if default is not None:
        return default, default_label
    raise InputError(f"{section}.species",
                     f"missing; add e.g. {species_key.name} = {species_key.example} "
                     f"or {mass_key.name} = {mass_key.example}")
