"""Hints for common slips in quantities written with units: a power
without '^' (``"1e14 cm-3"`` for ``cm^-3``) and a unit in the wrong case
(``"20 nk"``: pint reads ``k`` as the Boltzmann constant, not kelvin).  A
value that cannot be read as written but reads once corrected gets the
corrected text in its message."""
from __future__ import annotations

import re

from probe.errors import InputError

#: unit names a slip of case is checked against
CASED_UNITS = ("K", "mK", "uK", "nK", "pK", "Hz", "kHz", "MHz", "GHz", "mHz", "s", "ms",
               "us", "ns", "m", "mm", "um", "nm", "pm", "cm", "kg", "g", "u", "J", "eV",
               "rad")

#: a power written without '^' right after a unit name ("cm-3", "m-2")
_BARE_POWER = re.compile(r"(?<=[A-Za-z])(-?\d+)\b")
_WORD = re.compile(r"[A-Za-z_]+")

#: longest text that is checked for slips (longer text is refused as written)
_MAX_TEXT = 200


def corrections(text):
    """Candidate corrections of ``text`` (number, space, units) and what
    each corrects: the powers written with '^', each unit name in its
    proper case."""
    number, _, units = text.strip().partition(" ")
    out = []
    if units and _BARE_POWER.search(units):
        out.append((f"{number} {_BARE_POWER.sub(lambda m: '^' + m.group(1), units)}",
                    "a power is written with ^, as in cm^-3"))
    for word in sorted(set(_WORD.findall(units))):
        for name in CASED_UNITS:
            if name != word and name.lower() == word.lower():
                fixed = re.sub(rf"(?<![A-Za-z_]){word}(?![A-Za-z_])", name, units)
                out.append((f"{number} {fixed}", f"unit names are case-sensitive: "
                                                  f"{name}, not {word}"))
    return out


def with_hint(parse, value, key):
    """``parse(value)``; where it fails and ``parse`` of a correction of
    ``value`` (:func:`corrections`) succeeds, the InputError says 'did you
    mean ...?'."""
    try:
        return parse(value)
    except InputError as exc:
        if not isinstance(value, str) or len(value) > _MAX_TEXT:
            raise
        for fixed, why in corrections(value):
            try:
                parse(fixed)
            except InputError:
                continue
            raise InputError(key, f"{exc.message}; did you mean {fixed!r}? ({why})") from None
        raise
