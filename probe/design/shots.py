"""How many repetitions an experiment needs, with a readout that misreads.

A probe truly excited with probability ``P`` reads "excited" with

    p = e0 + (1 - e0 - e1) P,

``e0`` the probability of reading "excited" for a probe in the ground state
(``false_excited``) and ``e1`` that of reading "ground" for an excited one
(``missed_excited``).  Telling a signal ``p_s`` from a reference ``p_r`` at
``z`` standard errors with two independent samples of ``N`` shots each, in
the normal approximation (the two-proportion z-test; NIST/SEMATECH
e-Handbook of Statistical Methods, section 7.3.3), takes

    N = ceil(z^2 (p_s (1 - p_s) + p_r (1 - p_r)) / (p_s - p_r)^2)

shots per setting.

Which output a readout sees is declared in the quantity registry
(``Quantity.readout``): ``"excited"`` for the probability of finding the
probe excited (the up probability of a transit, the excited probability of
a passage), ``"contrast"`` for a Ramsey fringe contrast C, read as (1 - C)/2.
"""
from __future__ import annotations

import math

import numpy as np

from probe.errors import InputError
from probe.quantities import QUANTITIES


def check_readout(false_excited, missed_excited, significance):
    """InputError (naming the ``readout.*`` key) unless 0 <= e0, e1 < 1,
    e0 + e1 < 1 and z > 0."""
    for key, value in (("readout.false_excited", false_excited),
                       ("readout.missed_excited", missed_excited)):
        if not (isinstance(value, (int, float)) and math.isfinite(value) and 0 <= value < 1):
            raise InputError(key, f"must be a probability in [0, 1), got {value!r}")
    if false_excited + missed_excited >= 1:
        raise InputError("readout.missed_excited",
                         f"false_excited + missed_excited = "
                         f"{false_excited + missed_excited:g} must be below 1 (at 1 the "
                         "readout carries no information about the state)")
    if not (isinstance(significance, (int, float)) and math.isfinite(significance)
            and significance > 0):
        raise InputError("readout.significance",
                         f"must be a number of standard errors > 0, got {significance!r}")


def measured(probability, false_excited, missed_excited):
    """p = e0 + (1 - e0 - e1) P: the probability of reading "excited"."""
    return false_excited + (1.0 - false_excited - missed_excited) * np.asarray(probability,
                                                                               float)


def shots_needed(signal, reference, significance=3.0, whole=True):
    """Shots per setting to tell ``signal`` from ``reference`` (measured
    probabilities) at ``significance`` standard errors (two-proportion
    z-test, normal approximation), rounded up to a whole number (``whole``
    False: the real number before rounding, for derivatives).  ``inf`` where
    they are equal."""
    ps, pr = np.broadcast_arrays(np.asarray(signal, float), np.asarray(reference, float))
    var = ps * (1 - ps) + pr * (1 - pr)
    diff2 = (ps - pr) ** 2
    with np.errstate(divide="ignore", invalid="ignore"):
        n = significance ** 2 * var / np.where(diff2 > 0, diff2, 1.0)
        n = np.where(diff2 > 0, np.ceil(n) if whole else n, np.inf)
    return float(n) if n.ndim == 0 else n


def shots_sentence(n, significance):
    """The number of shots in words."""
    if not math.isfinite(n):
        return ("the signal equals its reference: no number of repetitions tells "
                "them apart")
    return (f"about {int(n):,} repetitions of each setting (signal and reference) to "
            f"see the effect at {significance:g} sigma")


def signal_of(names):
    """The first of the outputs ``names`` that a readout sees (its
    registry entry has a ``readout``), or None."""
    for name in names:
        q = QUANTITIES.get(name)
        if q is not None and q.readout is not None:
            return name
    return None


def excited_probability(name, value):
    """The probability of reading the probe excited that the output
    ``name`` with ``value`` means: the value itself for ``readout =
    "excited"``, (1 - C)/2 for a contrast C."""
    how = QUANTITIES[name].readout
    v = np.asarray(value, float)
    out = v if how == "excited" else 0.5 * (1.0 - v)
    return float(out) if out.ndim == 0 else out
