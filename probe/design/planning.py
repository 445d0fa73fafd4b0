"""Planning under uncertainty: the ``[uncertainty]`` and ``[readout]`` tables
of a scenario, and what they add to a result.

``planning_spec(scenario)`` reads both tables with the scenario they belong
to (the nominal values of the uncertain keys are the scenario's own) and
refuses bad input with an ``InputError`` naming the key, before anything is
computed.  ``run_planning`` then gives, for every main output of a result,

- the quantiles ``LEVELS`` (the median and the 68 % and 95 % intervals) of a
  Monte Carlo over the uncertain inputs (``probe.design.uncertainty``:
  log-normal draws of positive quantities with the median at the nominal
  value, normal draws of signed ones), evaluated through the engines by
  ``probe.design.sampling``;
- the elasticities d ln Y / d ln X at the nominal point (central
  differences in ln X) and the input that moves each output most;
- with ``[readout]``, the probability of reading the probe excited
  (``measured_probability``), that of the reference setting
  (``reference_probability``) and the repetitions needed to tell them apart
  (``shots_needed``; ``probe.design.shots``).

The signal of a readout is the output the quantity registry marks with a
``readout`` (``probe.quantities``): the up probability of a two-level (or
dressed) probe, read as it is, and the contrast C of a Ramsey sequence,
read as (1 - C)/2: the probability of finding the probe in the upper state
after the closing pulse whose phase (compensating the mean-field phase)
would return a fully coherent probe to the lower one.  A model with
neither (the structureless density probe) has no readout.  The reference
``"rest"`` is the same switching with the probe held at rest (the same
gas, coupling and width); ``"none"`` is a true probability of zero, read
with the same errors.
"""
from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from probe.design import sampling
from probe.design.shots import check_readout, excited_probability, measured, \
    shots_needed, shots_sentence, signal_of
from probe.design.uncertainty import (ELASTICITY_STEP, LEVELS, UncertainInput,
                                      check_samples, dominant_input, draw_inputs, elasticity,
                                      quantiles)
from probe.errors import InputError
from probe.quantities import QUANTITIES, error_names, in_registry_order
from probe.scenarios import planning as keys
from probe.scenarios.keys import suggest
from probe.scenarios.schema import KEYS
from probe.scenarios.units import parse_quantity
from probe.scenarios.values import choice, quantity

#: scenario keys whose values may take either sign (drawn normal; every
#: other quantity is positive and drawn log-normal)
SIGNED_KEYS = frozenset({"probe.coupling_length", "probe.coupling", "probe.coupling_length_a",
                         "probe.coupling_length_b", "probe.coupling_a", "probe.coupling_b",
                         "probe.detuning", "trajectory.switching_centre", "trajectory.stop"})

#: the outputs a readout adds, in this order
READOUT_OUTPUTS = ("measured_probability", "reference_probability", "shots_needed")


@dataclass(frozen=True)
class Readout:
    """The ``[readout]`` table: error probabilities, significance z and
    reference (``"rest"`` or ``"none"``)."""

    false_excited: float
    missed_excited: float
    significance: float
    reference: str


@dataclass(frozen=True)
class PlanningSpec:
    """What a scenario asks for: the uncertain inputs (nominal values of this
    scenario), the number of samples and the seed, the readout (or None),
    and the uncertain speeds written in c_s."""

    inputs: tuple
    samples: int
    seed: int
    readout: Readout | None
    relative: frozenset = frozenset()


# ---------------------------------------------------------------------------
# reading the tables
# ---------------------------------------------------------------------------
def _declared(dotted, name):
    """The numeric scenario key ``dotted`` (its Key), or InputError."""
    key = KEYS.get(dotted)
    if key is None:
        numeric = [k for k, v in KEYS.items() if v.kind is not None and not v.vector]
        raise InputError(name, f"{dotted!r} is not a scenario key; "
                               f"{suggest(dotted, numeric)}give a key such as "
                               "\"condensate.density\"")
    if key.kind is None or key.vector or key.section == "numerics":
        what = "settings of the computation" if key.section == "numerics" else \
            "not a single number with units"
        raise InputError(name, f"{dotted} is {what}; an uncertainty belongs to a numeric "
                               "input such as condensate.density or probe.coupling_length")
    return key


def _nominal(scenario, key, name):
    """The scenario's own value of ``key`` (SI)."""
    body = scenario.raw.get(key.section, {})
    if key.name not in body:
        raise InputError(name, f"the scenario does not set {key.dotted}; give its value in "
                               f"[{key.section}] to make it uncertain")
    value = body[key.name]
    if isinstance(value, (list, tuple, dict)):
        raise InputError(name, f"{key.dotted} is a list in this scenario; an uncertainty "
                               "belongs to a single quantity")
    cond = scenario.condensate
    return parse_quantity(value, key.dotted, key.kind, dimension=cond.dimension,
                          sound_speed=cond.sound_speed), value


def _uncertain_input(scenario, dotted, text):
    """One entry of ``[uncertainty]`` as an :class:`UncertainInput`, and
    whether it is a speed written in c_s."""
    name = f"uncertainty.{dotted}"
    key = _declared(dotted, name)
    nominal, written = _nominal(scenario, key, name)
    if not isinstance(text, str) or not text.strip():
        raise InputError(name, f"must be a standard uncertainty such as \"10 %\" or a "
                               f"quantity with units, got {text!r}")
    cond = scenario.condensate
    if text.strip().endswith("%"):
        u = parse_quantity(text, name, "dimensionless")
        spread = {"relative": u}
    else:
        u = parse_quantity(text, name, key.kind, dimension=cond.dimension,
                           sound_speed=cond.sound_speed)
        spread = {"absolute": u}
    if not u > 0:
        raise InputError(name, f"must be a standard uncertainty > 0, got {text!r}")
    positive = dotted not in SIGNED_KEYS
    if positive and not nominal > 0:
        raise InputError(name, f"{dotted} = {written!r} must be > 0 to carry an "
                               "uncertainty (its draws are log-normal about it)")
    if not positive and nominal == 0 and "relative" in spread:
        raise InputError(name, f"{dotted} is 0: a relative uncertainty of it is zero; "
                               "give it with units")
    relative_speed = key.kind == "speed" and sampling.in_sound_speeds(written)
    return UncertainInput(dotted, nominal, positive=positive, **spread), relative_speed


def _seed(body):
    seed = body.get(keys.SEED.name, keys.SEED.default)
    if isinstance(seed, bool) or not isinstance(seed, int) or seed < 0:
        raise InputError(keys.SEED.dotted, f"must be a whole number >= 0, got {seed!r}")
    return seed


def _uncertainty(scenario):
    """(inputs, samples, seed, relative speeds) of ``[uncertainty]``."""
    body = scenario.raw.get(keys.UNCERTAINTY)
    if body is None:
        return (), keys.SAMPLES.default, keys.SEED.default, frozenset()
    samples = check_samples(body.get(keys.SAMPLES.name, keys.SAMPLES.default))
    seed = _seed(body)
    entries = [(k, v) for k, v in body.items() if keys.is_entry(keys.UNCERTAINTY, k)]
    if not entries:
        raise InputError(keys.UNCERTAINTY, "no uncertain input; add e.g. "
                                           "\"condensate.density\" = \"10 %\"")
    inputs, relative = [], set()
    for dotted, text in entries:
        u, rel = _uncertain_input(scenario, dotted, text)
        inputs.append(u)
        if rel:
            relative.add(dotted)
    return tuple(inputs), samples, seed, frozenset(relative)


def _readout(scenario):
    """The ``[readout]`` table, checked, or None."""
    body = scenario.raw.get(keys.READOUT)
    if body is None:
        return None
    e0 = quantity(body, keys.FALSE_EXCITED)
    e1 = quantity(body, keys.MISSED_EXCITED)
    z = quantity(body, keys.SIGNIFICANCE)
    check_readout(e0, e1, z)
    return Readout(e0, e1, z, choice(body, keys.REFERENCE))


def planning_spec(scenario, outputs=None, rest=True):
    """The :class:`PlanningSpec` of a scenario, or None when it has neither
    ``[uncertainty]`` nor ``[readout]``; InputError for bad entries, for a
    readout of a result whose ``outputs`` (default: the model's transit
    outputs) give nothing to read, and for ``reference = "rest"`` where the
    result has no setting at rest (``rest`` False: a passage)."""
    readout = _readout(scenario)
    if readout is not None:
        names = scenario.probe.transit_outputs if outputs is None else outputs
        readout_signal(scenario, band_names(names))
        if readout.reference == "rest" and not rest:
            raise InputError(keys.REFERENCE.dotted,
                             "a passage through a cloud has no setting at rest to compare "
                             "with (where and for how long would the probe rest?); give "
                             "reference = \"none\" (a true probability of zero)")
    inputs, samples, seed, relative = _uncertainty(scenario)
    if not inputs and readout is None:
        return None
    return PlanningSpec(inputs, samples, seed, readout, relative)


def band_names(names):
    """The main outputs among ``names``, in registry order: registered
    outputs of a model (or totals of a passage) that are not error
    estimates."""
    errors = error_names()
    return [n for n in in_registry_order(names)
            if QUANTITIES[n].role in ("output", "passage") and n not in errors]


def readout_signal(scenario, names):
    """The output a readout sees (:func:`probe.design.shots.signal_of`), or
    InputError ("readout") for a model without one."""
    signal = signal_of(names)
    if signal is None:
        raise InputError(keys.READOUT, f"the {scenario.probe.name} model has no state to "
                                       f"read out (its outputs: {', '.join(names)}); "
                                       "remove [readout]")
    return signal


# ---------------------------------------------------------------------------
# the reference of a readout
# ---------------------------------------------------------------------------
def transit_at_rest(scenario):
    """The transit of the same probe with the same switching, held at rest
    (a :class:`TransitResult`)."""
    from probe.engines.transit import transit_probabilities
    from trajectories import Linear

    d = scenario.condensate.dimension
    rest = Linear(0.0, direction=(1.0, 0.0, 0.0)[:d])
    return transit_probabilities(scenario.condensate, scenario.probe, rest,
                                 scenario.switching, rtol=scenario.transit_rtol,
                                 method=scenario.transit_method)


@dataclass
class Planning:
    """What planning adds to one result.

    ``names``: the outputs with a band (main outputs, then the readout's);
    ``nominal``: name -> the value at the nominal inputs; ``quantiles``:
    name -> list at ``LEVELS`` (empty without uncertain inputs);
    ``sensitivity``: name -> {key: d ln Y / d ln X}; ``dominant``: name ->
    the key whose uncertainty moves it most; ``signal``: the output the
    readout sees; ``warnings``: samples without a result."""

    spec: PlanningSpec
    names: list
    nominal: dict
    quantiles: dict = field(default_factory=dict)
    sensitivity: dict = field(default_factory=dict)
    dominant: dict = field(default_factory=dict)
    signal: str | None = None
    warnings: list = field(default_factory=list)

    @property
    def levels(self):
        return list(LEVELS)

    def sentence(self):
        """The number of shots in words (with a readout)."""
        return shots_sentence(self.nominal["shots_needed"], self.spec.readout.significance)


def readout_values(readout, signal, reference):
    """{measured_probability, reference_probability, shots_needed} for
    true probabilities ``signal`` and ``reference`` (arrays or numbers)."""
    e0, e1 = readout.false_excited, readout.missed_excited
    m = measured(signal, e0, e1)
    r = measured(reference, e0, e1)
    return {"measured_probability": m, "reference_probability": r,
            "shots_needed": shots_needed(m, r, readout.significance)}


# ---------------------------------------------------------------------------
# running the Monte Carlo
# ---------------------------------------------------------------------------
def elasticity_step(rtol):
    """The step h in ln X of the central differences for results accurate to
    a relative ``rtol``: h^3 ~ rtol balances the noise (rtol / h) against the
    truncation (h^2) of the difference, within [ELASTICITY_STEP, 0.1].  The
    stationary engine's errors lie far below its rtol and take
    ``ELASTICITY_STEP``; an adaptive transit (rtol 1e-4) takes h ~ 0.05.  A
    power law is differenced exactly at any step."""
    return min(0.1, max(ELASTICITY_STEP, rtol ** (1.0 / 3.0)))


def _points(spec, step):
    """{key: array}: the Monte Carlo draws, then for each input its nominal
    value times exp(+step) and exp(-step), the others nominal."""
    draws = draw_inputs(spec.inputs, spec.samples, spec.seed)
    extra = {u.key: [] for u in spec.inputs}
    for u in spec.inputs:
        for sign in (1.0, -1.0):
            for v in spec.inputs:
                extra[v.key].append(v.nominal * math.exp(sign * step) if v is u
                                    else v.nominal)
    return {k: np.concatenate([draws[k], np.array(extra[k], float)]) for k in draws}


def _sample(scenario, spec, values, names, evaluate_one, rest_one, fast):
    """{name: array} over the points of ``values`` (and the failures)."""
    if fast:
        return sampling.many_gases_outputs(scenario, values, names)
    wanted = list(names)
    one = evaluate_one
    if rest_one is not None:
        wanted.append("_reference")

        def one(sc):
            return {**evaluate_one(sc), "_reference": rest_one(sc)}
    return sampling.rebuilt_outputs(scenario, values, wanted, one, spec.relative)


def _monte_carlo(scenario, plan, evaluate_one, rest_one, fast, step):
    """Fill the quantiles, elasticities and dominant inputs of ``plan``."""
    spec, n = plan.spec, plan.spec.samples
    values = _points(spec, step)
    base = [m for m in plan.names if m not in READOUT_OUTPUTS]
    outs, failures = _sample(scenario, spec, values, base, evaluate_one, rest_one, fast)
    steps = outs
    if spec.readout is not None:
        signal = excited_probability(plan.signal, outs[plan.signal])
        ref = excited_probability(plan.signal, outs["_reference"]) \
            if rest_one is not None else np.zeros_like(signal)
        outs.update(readout_values(spec.readout, signal, ref))
        # the whole number of shots moves in steps of one: differentiate the
        # real number before rounding up
        steps = {**outs, "shots_needed": shots_needed(
            outs["measured_probability"], outs["reference_probability"],
            spec.readout.significance, whole=False)}
    plan.quantiles = {m: quantiles(outs[m][:n]) for m in plan.names}

    def at_step(changed):
        """The outputs at one of the points of the differences (rows after
        the draws: +step then -step for each input in turn)."""
        (key, value), = changed.items()
        j = next(i for i, u in enumerate(spec.inputs) if u.key == key)
        row = n + 2 * j + (0 if value / spec.inputs[j].nominal > 1 else 1)
        return {m: float(steps[m][row]) for m in plan.names}
    plan.sensitivity = elasticity(at_step, spec.inputs, plan.names, step=step)
    plan.dominant = {m: dominant_input(plan.sensitivity[m], spec.inputs)
                     for m in plan.names}
    bad = int(np.sum(~np.isfinite(outs[base[0]][:n]))) if base else 0
    if failures.count or bad:
        plan.warnings.append(
            f"uncertainty: {max(bad, failures.count)} of {n} samples gave no result and "
            "are left out of the bands" + (f" (first: {failures.first})"
                                           if failures.first else ""))


def run_planning(scenario, spec, names, nominal, evaluate_one, rest_one=None,
                 fast=False, step=ELASTICITY_STEP):
    """The :class:`Planning` of one result.

    ``names``: the result's outputs (the main ones with a finite nominal
    value get bands: a passage's largest Mach number is infinite where it
    leaves the cloud); ``nominal``:
    their values (name -> number); ``evaluate_one(scenario)``: the outputs
    of another scenario (name -> number), used for the rebuilt samples;
    ``rest_one(scenario)``: the readout's signal output with the probe at
    rest (None: no reference run, as for ``reference = "none"``); ``fast``:
    the samples go through the many-gases route; ``step``: of the
    elasticities.  InputError ("readout.reference") when the signal equals
    its reference."""
    finite = [m for m in band_names(names)
              if nominal.get(m) is not None and np.isfinite(float(nominal[m]))]
    plan = Planning(spec, finite, {m: float(nominal[m]) for m in finite})
    readout = spec.readout
    if readout is not None:
        plan.signal = readout_signal(scenario, plan.names)
        rest_one = rest_one if readout.reference == "rest" else None
        ref = 0.0 if rest_one is None else rest_one(scenario)
        values = readout_values(readout, excited_probability(plan.signal,
                                                             plan.nominal[plan.signal]),
                                excited_probability(plan.signal, ref))
        if not math.isfinite(values["shots_needed"]):
            raise InputError("readout.reference", f"the signal is read as excited with the "
                             f"probability {values['measured_probability']:.6g} of its "
                             f"reference (reference = \"{readout.reference}\"): no number "
                             "of repetitions tells them apart")
        plan.nominal.update({m: float(v) for m, v in values.items()})
        plan.names += list(READOUT_OUTPUTS)
    else:
        rest_one = None
    if spec.inputs:
        _monte_carlo(scenario, plan, evaluate_one, rest_one, fast, step)
    return plan


# ---------------------------------------------------------------------------
# the results of the commands
# ---------------------------------------------------------------------------
def plan_rates(scenario, result, spec):
    """The :class:`Planning` of stationary rates (``probe rates``): bands and
    elasticities of the model's rate outputs; a readout does not apply to
    rates (a note says so) and is left out."""
    from dataclasses import replace

    from probe.engines.stationary import engine_for, stationary_rates
    from probe.quantities import stationary_outputs

    names = stationary_outputs(scenario.probe, engine_for(scenario.trajectory))

    def one(sc):
        r = stationary_rates(sc.condensate, sc.probe, sc.trajectory, rtol=sc.rtol)
        return {m: getattr(r, m, None) for m in names}
    keys_ = [u.key for u in spec.inputs]
    plan = run_planning(scenario, replace(spec, readout=None), names,
                        {m: getattr(result, m, None) for m in names}, one,
                        fast=bool(keys_) and sampling.many_gases_apply(scenario, keys_))
    if spec.readout is not None:
        plan.warnings.append("[readout] is not used here: stationary rates have no "
                             "probability to read; 'probe transit' gives the readout of "
                             "the switched transit")
    return plan


def sample_count(spec):
    """The scenarios a planning evaluates one by one: the draws and two
    points per uncertain input for the elasticities (0 without inputs)."""
    return spec.samples + 2 * len(spec.inputs) if spec.inputs else 0


def plan_transit(scenario, result, spec, progress=None):
    """The :class:`Planning` of a finite transit (``probe transit``): bands
    and elasticities of the model's transit outputs, one transit per sample
    (and one with the probe at rest for the reference of a readout).
    ``progress`` is called with 1 after each sample (:func:`sample_count`
    of them)."""
    names = list(scenario.probe.transit_outputs)
    signal = readout_signal(scenario, band_names(names)) if spec.readout else None
    reference = []

    def one(sc):
        r = sc.transit()
        if progress is not None:
            progress(1)
        return {m: getattr(r, m, None) for m in names}

    def rest(sc):
        r = transit_at_rest(sc)
        if sc is scenario:
            reference.extend(r.warnings)
        return getattr(r, signal)
    plan = run_planning(scenario, spec, names, {m: getattr(result, m, None) for m in names},
                        one, rest_one=rest if signal else None,
                        step=elasticity_step(scenario.transit_rtol))
    plan.warnings[:0] = [f"reference (probe held at rest): {w}" for w in reference]
    return plan


def plan_passage(scenario, result, spec, progress=None):
    """The :class:`Planning` of a passage through a cloud (``probe
    passage``): bands and elasticities of its totals, one passage per
    sample; a readout compares with a true probability of zero.
    ``progress`` is called with 1 after each sample."""
    from probe.scenarios.passage import passage_outputs

    names = passage_outputs(scenario.probe)

    def one(sc):
        r = sc.passage()
        if progress is not None:
            progress(1)
        return {m: getattr(r, m, None) for m in names}
    return run_planning(scenario, spec, names, {m: getattr(result, m, None) for m in names},
                        one)
