"""Evaluators: what one point of a sweep computes, and its columns.

``RatesEvaluator`` gives the stationary rates of uniform motion through the
engine the trajectory declares (``probe.engines.stationary.engine_for``);
``TransitEvaluator`` one finite transit per point; ``PassageEvaluator`` one
passage through the cloud per point, for a gas in a harmonic trap
(``Scenario.is_passage``; a box passage is ``probe passage`` alone, a
sweep of a box computes its rates or transits as before).  The columns follow from
declarations: the engine's ``arguments`` and the probe model's
``array_keys`` (the grid columns), the gas at the point, and the outputs the
model lists (``rate_outputs``, ``transit_outputs``) with their units from
``probe.quantities``.
"""
from __future__ import annotations

import copy
import functools
import inspect

import numpy as np

from probe.design.sweep.keys import assign, check_numeric_key, raw_config
from probe.engines.stationary import engine_for
from probe.errors import InputError, ModelError
from probe.quantities import QUANTITIES, kind_of, si_unit, significant, stationary_outputs

#: the gas at a point of a sweep
GAS_COLUMNS = ("sound_speed", "healing_length", "density", "temperature")


def _columns(names, dimension):
    return [(n, si_unit(kind_of(n), dimension)) for n in names]


def _gas_values(cond):
    return [cond.sound_speed, cond.healing_length, cond.density, cond.temperature]


@functools.lru_cache(maxsize=None)
def model_parameters(model):
    """The parameters of a probe model class: the arguments of its
    constructor, each held by its instances as the attribute of that name."""
    return tuple(inspect.signature(model).parameters)


def probe_with(probe, values):
    """The probe model with some parameters (:func:`model_parameters`)
    replaced (``values``: name -> value)."""
    model = type(probe)
    return model(**{name: values[name] if name in values else getattr(probe, name)
                    for name in model_parameters(model)})


def point_result(res, i):
    """The RateResult of point ``i`` of an array result (scalars as in a
    one-point ``probe rates`` call), without warnings."""
    point = copy.copy(res)
    for name, value in vars(res).items():
        if isinstance(value, np.ndarray) and value.ndim == 1:
            v = value[i]
            setattr(point, name, int(v) if np.issubdtype(value.dtype, np.integer)
                    else float(v))
    point.warnings = []
    return point


class RatesEvaluator:
    """Stationary golden-rule rates for uniform motion (straight or circular)
    by the trajectory's engine, which takes its arguments (speed, radius)
    and the probe model's array keys (the gap) as arrays."""

    name = "rates"

    @staticmethod
    def applies(scenario):
        return (bool(getattr(scenario.trajectory, "stationary", False))
                and not getattr(scenario, "is_transit", False))

    @staticmethod
    def engine(scenario):
        """The stationary engine of the scenario's motion."""
        return engine_for(scenario.trajectory)

    def grid_names(self, scenario):
        """The engine arguments and the model's array arguments, in registry
        order (speed, radius, gap)."""
        engine, probe = self.engine(scenario), scenario.probe
        args = set(engine.arguments) | set(probe.array_keys.values())
        return [n for n, q in QUANTITIES.items() if q.role == "grid" and n in args]

    def columns(self, scenario):
        names = self.grid_names(scenario) + ["mach", *GAS_COLUMNS]
        names += stationary_outputs(scenario.probe, self.engine(scenario))
        return _columns(names, scenario.condensate.dimension)

    def vector_keys(self, raw, scenario):
        """Varied keys passed to the engine as arrays -> engine argument: an
        argument of the motion when the trajectory table gives the other
        arguments directly (otherwise they follow from it, as the speed from
        the radius at a fixed angular frequency), and the model's array
        keys."""
        args = self.engine(scenario).arguments
        given = raw.get("trajectory", {})
        out = {f"trajectory.{a}": a for a in args
               if all(b in given for b in args if b != a)}
        out.update(scenario.probe.array_keys)
        return out

    def chunk(self, scenario):
        """Points per task."""
        return self.engine(scenario).chunk

    def pointwise(self, scenario):
        """True when a point's numbers do not depend on the other points of
        its task (an engine that evaluates point by point)."""
        return not self.engine(scenario).vectorised

    def _inputs(self, scenario, arrays, n):
        """Engine arguments and model arguments as arrays of ``n`` points:
        the varied ones from ``arrays``, the others as configured."""
        params = scenario.trajectory.stationary_parameters()
        out = {}
        for name in self.engine(scenario).arguments:
            out[name] = arrays[name] if name in arrays else np.full(n, float(params[name]))
        for name in scenario.probe.array_keys.values():
            out[name] = arrays[name] if name in arrays else \
                np.full(n, float(getattr(scenario.probe, name)))
        return {k: np.asarray(v, float) for k, v in out.items()}

    def _results(self, scenario, inputs, n, warns):
        """[(first point, RateResult)]: one engine call for every point, or,
        when it has no answer somewhere, one call per point (the points
        without an answer get a warning instead)."""
        engine = self.engine(scenario)

        def call(sl):
            return engine.rates(scenario.condensate, scenario.probe, rtol=scenario.rtol,
                                **{k: v[sl] for k, v in inputs.items()})
        try:
            return [(0, call(slice(None)))]
        except ModelError:
            pass
        done = []
        for i in range(n):
            try:
                done.append((i, call(slice(i, i + 1))))
            except ModelError as exc:
                warns[i].append(f"no result: {exc.key}: {exc.message}")
        return done

    def evaluate(self, scenario, arrays, n):
        """Rows (n, columns) and per-point warning lists for ``n`` points;
        ``arrays`` maps engine arguments (speed, radius, gap) to SI arrays."""
        from probe.engines.regime import regime_warnings

        cond, probe = scenario.condensate, scenario.probe
        inputs = self._inputs(scenario, arrays, n)
        cols = [c for c, _ in self.columns(scenario)]
        at = {c: j for j, c in enumerate(cols)}
        out = np.full((n, len(cols)), np.nan)
        for name in self.grid_names(scenario):
            out[:, at[name]] = inputs[name]
        out[:, at["mach"]] = significant(inputs["speed"] / cond.sound_speed)
        for name, value in zip(GAS_COLUMNS, _gas_values(cond)):
            out[:, at[name]] = value
        warns = [[] for _ in range(n)]
        outputs = stationary_outputs(probe, self.engine(scenario))
        varied = [a for a in probe.array_keys.values() if a in arrays]
        for first, res in self._results(scenario, inputs, n, warns):
            for j in range(np.size(res.speed)):
                i = first + j
                point = point_result(res, j)
                for c in outputs:
                    v = getattr(point, c)
                    out[i, at[c]] = np.nan if v is None else float(v)
                p = probe_with(probe, {a: inputs[a][i] for a in varied}) if varied else probe
                for w in regime_warnings(cond, p, point):
                    if w not in warns[i]:
                        warns[i].append(w)
        return out, warns


class TransitEvaluator:
    """First-order probabilities of a finite transit (a scenario whose
    coupling is switched: ``Scenario.is_transit``), one transit per point
    through ``Scenario.transit()`` (:mod:`probe.transit`)."""

    name = "transit"

    @staticmethod
    def applies(scenario):
        return bool(getattr(scenario, "is_transit", False)) and hasattr(scenario, "transit")

    @staticmethod
    def columns(scenario):
        probe = scenario.probe
        names = [*GAS_COLUMNS, *probe.array_keys.values(), *probe.transit_outputs,
                 "achieved_rtol"]
        return _columns(names, scenario.condensate.dimension)

    @staticmethod
    def vector_keys(raw, scenario):
        """None: every point is a transit of its own."""
        return {}

    @staticmethod
    def chunk(scenario):
        """One point per task: a transit takes seconds."""
        return 1

    @staticmethod
    def pointwise(scenario):
        """Every point is computed on its own."""
        return True

    def evaluate(self, scenario, arrays, n):
        cond, probe = scenario.condensate, scenario.probe
        cols = [c for c, _ in self.columns(scenario)]
        fixed = len(GAS_COLUMNS) + len(probe.array_keys)
        out = np.full((n, len(cols)), np.nan)
        out[:, :fixed] = _gas_values(cond) + [float(getattr(probe, a))
                                              for a in probe.array_keys.values()]
        warns = [[] for _ in range(n)]
        for i in range(n):
            try:
                res = scenario.transit()
            except ModelError as exc:
                warns[i].append(f"no result: {exc.key}: {exc.message}")
                continue
            for j, c in enumerate(cols[fixed:], start=fixed):
                v = getattr(res, c, None)
                out[i, j] = np.nan if v is None else float(v)
            warns[i] = list(res.warnings or [])
        return out, warns


class PassageEvaluator:
    """The passage through a harmonically trapped cloud
    (``Scenario.is_passage``), one per point through ``Scenario.passage()``
    (:mod:`probe.scenarios.passage`): the gas at the cloud's centre, the
    atom number, and the passage's results for the model
    (``passage_outputs``).  A point whose path misses the cloud gets NaN and
    the reason."""

    name = "passage"

    @staticmethod
    def applies(scenario):
        return bool(getattr(scenario, "is_passage", False))

    @staticmethod
    def outputs(scenario):
        from probe.scenarios.passage import passage_outputs
        return passage_outputs(scenario.probe)

    def columns(self, scenario):
        names = [*GAS_COLUMNS, "atom_number", *self.outputs(scenario)]
        return _columns(names, scenario.condensate.dimension)

    @staticmethod
    def vector_keys(raw, scenario):
        """None: every point is a passage of its own."""
        return {}

    @staticmethod
    def chunk(scenario):
        """One point per task: a passage takes about a second."""
        return 1

    @staticmethod
    def pointwise(scenario):
        """Every point is computed on its own."""
        return True

    def evaluate(self, scenario, arrays, n):
        cond = scenario.condensate
        names = self.outputs(scenario)
        fixed = _gas_values(cond) + [scenario.trap.atom_number]
        out = np.full((n, len(fixed) + len(names)), np.nan)
        out[:, :len(fixed)] = fixed
        warns = [[] for _ in range(n)]
        for i in range(n):
            try:
                res = scenario.passage()
            except (InputError, ModelError) as exc:
                warns[i].append(f"no result: {exc.key}: {exc.message}")
                continue
            values = res.to_dict()
            for j, name in enumerate(names, start=len(fixed)):
                v = values.get(name)
                out[i, j] = np.nan if v is None else float(v)
            warns[i] = list(res.warnings)
        return out, warns


#: evaluators tried in order: the first whose ``applies(scenario)`` holds
EVALUATORS = [PassageEvaluator(), TransitEvaluator(), RatesEvaluator()]


def evaluator_for(scenario):
    """The evaluator that handles ``scenario``, or InputError."""
    for ev in EVALUATORS:
        if ev.applies(scenario):
            return ev
    raise InputError("trajectory.kind",
                     "sweeps compute stationary rates of uniform straight or "
                     "circular motion, probabilities of a switched transit, or "
                     "passages through a harmonic trap; this scenario is none of them")


def evaluate_point(config, values, overrides=(), source=None, removals=()):
    """Rates for one point: ``values`` maps numeric keys to configuration
    values (strings with units or SI floats), after ``removals`` and
    ``overrides`` (as ``--unset`` and ``--set``).  Returns ``(columns,
    units, row, warnings)`` like one row of a sweep."""
    from probe.scenarios.config import scenario_from_dict

    raw, source = raw_config(config, overrides, source, removals)
    for key in values:
        check_numeric_key(key)
    sc_ = scenario_from_dict(assign(raw, values), source=source)
    ev = evaluator_for(sc_)
    cols = ev.columns(sc_)
    rows, warns = ev.evaluate(sc_, {}, 1)
    return [c for c, _ in cols], [u for _, u in cols], rows[0], warns[0]
