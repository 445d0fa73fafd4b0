"""Sweeps of a scenario with ``[uncertainty]`` (or a switched transit with
``[readout]``): every point's row is that of the evaluator the scenario
would otherwise have (its nominal values under their usual columns), then
the readout's ``measured_probability``, ``reference_probability`` and
``shots_needed``, then the band of every main output: columns
``NAME_p2_5``, ``NAME_p16``, ``NAME_p50``, ``NAME_p84`` and ``NAME_p97_5``
(the quantiles ``LEVELS`` of its Monte Carlo over the uncertain inputs, in
the unit of ``NAME``).

Every point is a scenario of its own (the varied keys are written into the
configuration, so that a speed in c_s keeps its meaning), planned by
``probe.design.planning`` with the same seed: the draws are the same at
every point (common random numbers), and the bands change smoothly along
the grid.  A point where the readout's signal equals its reference gets no
readout values (NaN) and a warning; the sweep goes on.
"""
from __future__ import annotations

import types
from dataclasses import replace

import numpy as np

from probe.design.planning import (READOUT_OUTPUTS, band_names, plan_passage, plan_rates,
                                   plan_transit, planning_spec)
from probe.design.sweep.evaluators import EVALUATORS
from probe.design.uncertainty import LEVELS
from probe.errors import InputError
from probe.quantities import kind_of, si_unit
from probe.scenarios.planning import READOUT, UNCERTAINTY

#: how each base evaluator (by name) is planned
PLANNERS = {"rates": plan_rates, "transit": plan_transit, "passage": plan_passage}
#: the evaluators whose results a readout reads (and whether they have a
#: setting at rest to compare with)
READ = {"transit": True, "passage": False}


def band_column(name, level):
    """The column of ``name`` at quantile ``level``: ``up_rate_p16``,
    ``up_rate_p2_5``."""
    return f"{name}_p{100 * level:g}".replace(".", "_")


class PlanningEvaluator:
    """The rows of another evaluator (:data:`EVALUATORS`), with the readout's
    outputs and the bands of the main outputs."""

    name = "planning"

    def base(self, scenario):
        """The evaluator of the scenario without its planning tables."""
        for ev in EVALUATORS:
            if ev is not self and ev.applies(scenario):
                return ev
        raise InputError(UNCERTAINTY, "the scenario has no result a sweep computes")

    def applies(self, scenario):
        """A scenario with ``[uncertainty]``, or a transit with ``[readout]``
        (a readout elsewhere is checked, then left to the notes of
        ``probe rates``: stationary rates have nothing to read)."""
        raw = scenario.raw
        if UNCERTAINTY in raw:
            return any(ev.applies(scenario) for ev in EVALUATORS if ev is not self)
        if READOUT not in raw:
            return False
        self.spec(scenario)
        return self._readout(scenario)

    def _readout(self, scenario):
        """True when the scenario's readout applies: a transit's or a
        passage's."""
        return READOUT in scenario.raw and self.base(scenario).name in READ

    def spec(self, scenario):
        """The scenario's PlanningSpec, checked against its results."""
        base = self.base(scenario)
        return planning_spec(scenario, band_names(c for c, _ in base.columns(scenario)),
                             rest=READ.get(base.name, True))

    def _names(self, scenario, spec):
        """(base columns, outputs with a band)."""
        base = [c for c, _ in self.base(scenario).columns(scenario)]
        names = band_names(base)
        if spec.readout is not None and self._readout(scenario):
            names += list(READOUT_OUTPUTS)
        return base, names

    def columns(self, scenario):
        spec = self.spec(scenario)
        if self.base(scenario).name not in PLANNERS:
            raise InputError(UNCERTAINTY, f"a sweep of {self.base(scenario).name} results "
                                          "has no bands")
        d = scenario.condensate.dimension
        out = list(self.base(scenario).columns(scenario))
        base, names = self._names(scenario, spec)
        out += [(m, si_unit(kind_of(m), d)) for m in names if m in READOUT_OUTPUTS]
        if spec.inputs:
            out += [(band_column(m, level), si_unit(kind_of(m), d))
                    for m in names for level in LEVELS]
        return out

    @staticmethod
    def vector_keys(raw, scenario):
        """None: every point is a scenario of its own."""
        return {}

    @staticmethod
    def chunk(scenario):
        """One point per task: a point is a Monte Carlo."""
        return 1

    @staticmethod
    def pointwise(scenario):
        """Every point is computed on its own."""
        return True

    def _plan(self, scenario, spec, nominal, warns):
        """The point's Planning (or None where it has no nominal result);
        without readout values where the signal equals its reference."""
        planner = PLANNERS[self.base(scenario).name]
        result = types.SimpleNamespace(**nominal)
        if not self._readout(scenario):
            spec = replace(spec, readout=None)
        try:
            return planner(scenario, result, spec)
        except InputError as exc:
            if exc.key != "readout.reference":
                raise
            warns.append(f"no readout: {exc.key}: {exc.message}")
            return planner(scenario, result, replace(spec, readout=None))

    def evaluate(self, scenario, arrays, n):
        rows, warns = self.base(scenario).evaluate(scenario, arrays, n)
        spec = self.spec(scenario)
        base, names = self._names(scenario, spec)
        cols = [c for c, _ in self.columns(scenario)][len(base):]
        at = {c: j for j, c in enumerate(cols)}
        extra = np.full((n, len(cols)), np.nan)
        for i in range(n):
            if any(w.startswith("no result") for w in warns[i]):
                continue
            nominal = dict(zip(base, rows[i]))
            plan = self._plan(scenario, spec, nominal, warns[i])
            for m in plan.names:
                if m in at:
                    extra[i, at[m]] = plan.nominal[m]
                for level, value in zip(LEVELS, plan.quantiles.get(m, ())):
                    extra[i, at[band_column(m, level)]] = value
            warns[i] += [w for w in plan.warnings if w not in warns[i]]
        return np.hstack([rows, extra]), warns
