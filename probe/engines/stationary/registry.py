"""Stationary engines chosen by what a trajectory declares.

A stationary trajectory declares ``stationary = True``, a
``stationary_kind`` and ``stationary_parameters()`` (SI numbers or arrays);
``STATIONARY_ENGINES[kind]`` is the engine that computes its rates."""
from __future__ import annotations

from dataclasses import dataclass
from typing import Callable

from probe.engines.regime import path_warnings
from probe.engines.stationary.si import circular_rates, inertial_rates
from probe.errors import InputError


@dataclass(frozen=True)
class StationaryEngine:
    """One stationary engine.

    ``name``: the trajectory's ``stationary_kind`` it serves;
    ``arguments``: the engine arguments taken from
    ``trajectory.stationary_parameters()`` (SI arrays that broadcast with
    the probe model's array keys); ``function(condensate, probe, *,
    gap=None, rtol=1e-8, **arguments)``: the SI engine; ``chunk``: points
    per task of a parameter sweep; ``has_threshold``: the up-transition
    threshold speed exists (straight motion; on a circle up transitions
    occur at any speed); ``vectorised``: one call evaluates a whole array of
    points (otherwise the engine works point by point)."""

    name: str
    arguments: tuple
    function: Callable
    chunk: int
    has_threshold: bool
    vectorised: bool

    def rates(self, condensate, probe, gap=None, rtol=1e-8, **arguments):
        """A :class:`RateResult`; ``arguments`` are the engine's
        ``arguments`` (SI numbers or arrays, broadcast together with
        ``gap``)."""
        return self.function(condensate, probe, gap=gap, rtol=rtol, **arguments)


#: ``trajectory.stationary_kind`` -> engine
STATIONARY_ENGINES = {
    "inertial": StationaryEngine(name="inertial", arguments=("speed",),
                                 function=inertial_rates, chunk=512,
                                 has_threshold=True, vectorised=True),
    "circular": StationaryEngine(name="circular", arguments=("radius", "speed"),
                                 function=circular_rates, chunk=32,
                                 has_threshold=False, vectorised=False),
}


def engine_for(trajectory):
    """The :class:`StationaryEngine` of a trajectory; InputError
    ("trajectory.kind") for a path that is not stationary or whose kind has
    no engine."""
    if not getattr(trajectory, "stationary", False):
        raise InputError("trajectory.kind",
                         "stationary rates need uniform straight or circular "
                         "motion; finite paths give transition probabilities")
    kind = trajectory.stationary_kind
    engine = STATIONARY_ENGINES.get(kind)
    if engine is None:
        raise InputError("trajectory.kind", f"no stationary engine for {kind!r}")
    return engine


def stationary_rates(condensate, probe, trajectory, rtol=1e-8):
    """Rates for a trajectory that declares itself stationary (uniform
    straight or uniform circular motion).  Arrays in the trajectory's
    parameters broadcast."""
    engine = engine_for(trajectory)
    p = trajectory.stationary_parameters()
    res = engine.rates(condensate, probe, rtol=rtol, **{a: p[a] for a in engine.arguments})
    for w in path_warnings(condensate, probe, trajectory, res):
        if w not in res.warnings:
            res.warnings.append(w)
    return res
