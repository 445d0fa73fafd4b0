"""A transit at many gaps: the grids of ``solve`` and ``compare`` over the
probe's gap from one set of lag sums.

A gap changes only the detuning of the mode amplitudes, so the transits of
one path, gas and switching at many gaps share their lag sums
(:class:`probe.engines.transit.gaps.GapScan`): computed once, each gap then
costs a small fraction of a transit.  :class:`GapGrid` evaluates the rows
of a one-key sweep over a probe parameter that the model takes as an array
(``probe.gap``; ``array_keys``) for a transit scenario, with the columns and
warnings of a transit sweep (``TransitEvaluator``); every value agrees with
the transit computed on its own to the scenario's ``transit_rtol``.
:func:`sweep_over_gaps` gives the :class:`SweepResult` of such a sweep, or
of the ordinary sweep where it does not apply.

``progress`` callables receive the number of points just finished (as the
sweep's ``progress``).
"""
from __future__ import annotations

import time

import numpy as np

from probe.design.sweep import (SweepResult, TransitEvaluator, evaluator_for, sweep,
                                sweep_meta)
from probe.design.sweep.evaluators import GAS_COLUMNS, probe_with
from probe.errors import ModelError


def gap_argument(scenario, key):
    """The probe model's argument that ``key`` sets when the scenario is a
    transit evaluated point by point and ``key`` one of the model's array
    keys (``probe.gap`` -> ``gap``); None otherwise."""
    if not isinstance(evaluator_for(scenario), TransitEvaluator):
        return None
    return scenario.probe.array_keys.get(key)


class GapGrid:
    """The rows of a transit scenario at values of one of its probe's array
    parameters (``arg``), from shared lag sums; ``rows(values)`` may be
    called again (the sums are kept while the new values lie within the
    grid they were computed on)."""

    def __init__(self, scenario, arg):
        from probe.engines.transit.gaps import GapScan
        from probe.scenarios.transit import engine_path

        self.scenario, self.arg = scenario, arg
        self.columns = [c for c, _ in TransitEvaluator.columns(scenario)]
        self.scan = GapScan(scenario.condensate, engine_path(scenario), scenario.switching,
                            rtol=scenario.transit_rtol)

    def rows(self, values, progress=None):
        """(rows (n, columns), per-point warning lists) at the SI ``values``
        of the parameter, as ``TransitEvaluator.evaluate`` gives them."""
        from probe.scenarios.transit import add_scenario_warnings

        sc, cols = self.scenario, self.columns
        probes = [probe_with(sc.probe, {self.arg: float(v)}) for v in values]
        results = self.scan.results(probes, progress=progress)
        cond = sc.condensate
        gas = [cond.sound_speed, cond.healing_length, cond.density, cond.temperature]
        fixed = len(GAS_COLUMNS) + len(sc.probe.array_keys)
        out = np.full((len(probes), len(cols)), np.nan)
        warns = []
        for i, (probe, res) in enumerate(zip(probes, results)):
            add_scenario_warnings(sc, res, probe)
            out[i, :fixed] = gas + [float(getattr(probe, a)) for a in sc.probe.array_keys.values()]
            for j, c in enumerate(cols[fixed:], start=fixed):
                v = getattr(res, c, None)
                out[i, j] = np.nan if v is None else float(v)
            warns.append(list(res.warnings or []))
        return out, warns


def gap_grid(plan):
    """A :class:`GapGrid` for a one-key sweep plan over a probe array
    parameter of a transit scenario, or None."""
    if len(plan.axes) != 1:
        return None
    arg = gap_argument(plan.scenario, plan.axes[0].key)
    return None if arg is None else GapGrid(plan.scenario, arg)


def sweep_over_gaps(plan, workers=1, scheduler=None, progress=None, grid=None):
    """The :class:`SweepResult` of ``plan``: over a probe array parameter
    of a transit from shared lag sums (``grid``: a :class:`GapGrid` to use),
    otherwise (or when the model has no answer at some point, which the
    ordinary sweep reports per point) by :func:`probe.design.sweep.sweep`."""
    grid = gap_grid(plan) if grid is None else grid
    if grid is None:
        return sweep(plan, (), workers=workers, scheduler=scheduler, progress=progress)
    axis = plan.axes[0]
    t0 = time.perf_counter()
    try:
        rows, warns = grid.rows(axis.values, progress=progress)
    except ModelError:
        return sweep(plan, (), workers=workers, scheduler=scheduler, progress=progress)
    data = np.column_stack([np.arange(axis.size, dtype=float), axis.values, rows])
    meta = sweep_meta(plan, workers=1, elapsed=time.perf_counter() - t0)
    return SweepResult(columns=list(plan.columns), units=list(plan.units), data=data,
                       warnings=[" | ".join(w) for w in warns], shape=plan.shape,
                       axes=plan.axes, config=plan.raw, meta=meta)
