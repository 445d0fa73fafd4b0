"""The declaration of a scenario key, and of a part of a scenario (the keys
that one builder reads).

Every key of a scenario file is one :class:`Key`, declared next to what it
builds: the gas keys in ``probe.scenarios.gas``, each probe model's keys on
its class (``config_keys``; the keys every model reads on
``probe.detectors.base.ProbeModel.common_config_keys``), each trajectory
kind's keys in ``probe.scenarios.path`` and ``probe.scenarios.spline``, each
switching's keys in ``probe.scenarios.switching``, the numerics in
``probe.scenarios.numerics``.  ``probe.scenarios.schema`` collects them into
the schema, the list of numeric keys, the plot labels and the documentation.

This module imports nothing from the project (the detectors import it when
``probe`` is imported, before pint is needed).
"""
from __future__ import annotations

import difflib
from dataclasses import dataclass


@dataclass(frozen=True)
class Key:
    """One scenario key.

    ``section`` and ``name`` place it (``[section] name = ...``);
    ``example`` is a TOML value written as text (used in "missing" messages
    and the documentation); ``help`` says what it sets, in one sentence.
    ``kind`` is the kind of quantity as understood by
    :func:`probe.scenarios.units.parse_quantity` (None for a key that is not
    one quantity: an integer, a name, a table); ``vector`` marks a list of
    such quantities.  ``choices`` are the allowed names of a key that picks
    one.  ``default`` is the value taken when the key is absent (a TOML
    value; None: no default, or one that depends on other keys and is told
    in ``help``).  ``required`` is True when the key must be given wherever
    its part applies, or the condition in words (e.g. "for dimension 1 and
    2").  ``label`` is the plot label of the key (None: its name).  ``vary``
    is the key's place in the list of numeric keys that ``--vary`` accepts
    (the order in which messages list them), None if it cannot be varied;
    ``array`` names the engine argument when the engines take the key's
    values as an array (broadcast with the other array keys).
    """

    section: str
    name: str
    example: str
    help: str
    kind: str | None = None
    vector: bool = False
    choices: tuple = ()
    default: object = None
    required: bool | str = False
    label: str | None = None
    vary: int | None = None
    array: str | None = None

    @property
    def dotted(self):
        """``"section.name"``, as in messages and ``--set``."""
        return f"{self.section}.{self.name}"


@dataclass(frozen=True)
class Part:
    """The keys one builder reads: a section (``[probe]``), what selects the
    part in words (``used_by``: ``'model = "two-level"'``, ``'kind =
    "linear"'``, ``"every model"``, or ``""`` for a whole section) and the
    keys, in the order of the schema."""

    section: str
    used_by: str
    keys: tuple


def suggest(word, choices):
    """``"did you mean 'x'? "`` for the closest of ``choices``, or ``""``."""
    close = difflib.get_close_matches(word, list(choices), n=1, cutoff=0.5)
    return f"did you mean '{close[0]}'? " if close else ""


def _group(keys):
    return (keys,) if isinstance(keys, Key) else tuple(keys)


def _names(keys):
    return " and ".join(key.name for key in _group(keys))


def unset_hint(first, second):
    """How to drop one of two alternatives given together (``first`` and
    ``second``: Keys, or tuples of Keys given together), from the file or
    from the command line: ``"; remove one from the file, or add --unset
    probe.tweezer_frequency (keeps width) or --unset probe.width (keeps
    tweezer_frequency)"``."""
    def unset(keys):
        return " ".join(f"--unset {key.dotted}" for key in _group(keys))
    return (f"; remove one from the file, or add {unset(second)} (keeps "
            f"{_names(first)}) or {unset(first)} (keeps {_names(second)}) on the "
            "command line")


def both_given(first, second, what=""):
    """The message for two alternatives of one section given together
    (``what``: a note after their names), with :func:`unset_hint`."""
    return (f"give either {_names(first)} or {_names(second)}{what}, not both"
            + unset_hint(first, second))
