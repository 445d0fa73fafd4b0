"""A scenario's outputs at many values of its uncertain inputs, as arrays.

Two routes give the same numbers (``tests/test_uncertainty_cli.py`` checks
that they agree):

- **many gases** (stationary straight motion): every sample's uniform gas
  (:class:`Condensate`) and probe model are built from SI numbers, without
  reading a string again, and all samples go to
  :func:`probe.engines.stationary.local.local_inertial_rates` in one call
  (one kernel call for a gas at T = 0, one per sample in a warm gas).  It
  takes the gas keys (mass, density, scattering length, transverse
  frequency, temperature), the probe's coupling (``coupling_length`` or
  ``coupling``), ``width`` and the keys the model takes as arrays (the
  two-level gap), and ``trajectory.speed``, for a probe model rebuilt from
  its coupling, width and array keys alone;
- **rebuilt scenarios** (any key, any path, any result): each sample's
  scenario is built from the file's values with the sampled ones written in
  SI, and evaluated by the function the caller gives (one engine call per
  sample: a finite transit takes ~20 ms).

A speed written in units of the sound speed (``"1.6 c_s"``) keeps its Mach
number: in every sample it is that multiple of the sample's own sound speed,
as in sweeps; its own draws (when it is uncertain) are made at the nominal
gas and carried as multiples of c_s.

A sample without an answer (the engine raises ``ModelError``, or a drawn
value is refused) gets NaN, and its reason is counted.
"""
from __future__ import annotations

import copy
import inspect

import numpy as np

from probe.detectors.base import coupling_from_scattering_length
from probe.engines.stationary import engine_for
from probe.engines.stationary.local import local_inertial_rates
from probe.errors import InputError, ModelError
from probe.gas.condensate import Condensate
from probe.quantities import si_unit
from probe.scenarios.schema import KEYS
from probe.scenarios.units import parse_quantity

#: gas keys and the :class:`Condensate` argument each sets
GAS_ARGUMENTS = {"condensate.mass": "mass", "condensate.density": "density",
                 "condensate.scattering_length": "scattering_length",
                 "condensate.transverse_frequency": "transverse_frequency",
                 "condensate.temperature": "temperature"}
#: probe keys the many-gases route forms the coupling and width from
PROBE_KEYS = ("probe.coupling_length", "probe.coupling", "probe.width")
#: the many-gases function of each stationary engine that has one (by name)
MANY_GASES = {"inertial": local_inertial_rates}


def _errors():
    from trajectories import TrajectoryError
    return (InputError, ModelError, TrajectoryError)


class Failures:
    """Samples without an answer: how many, and the first reason."""

    def __init__(self):
        self.count = 0
        self.first = None

    def add(self, exc):
        self.count += 1
        if self.first is None:
            key = getattr(exc, "key", None)
            message = getattr(exc, "message", None) or str(exc)
            self.first = f"{key}: {message}" if key else message


# ---------------------------------------------------------------------------
# rebuilt scenarios
# ---------------------------------------------------------------------------
def raw_with(scenario, values, relative):
    """A copy of the scenario's file values with ``values`` (key -> SI
    number) written in SI units; keys in ``relative`` are written as
    multiples of the nominal sound speed (``c_s``)."""
    out = copy.deepcopy(scenario.raw)
    d = scenario.condensate.dimension
    c0 = scenario.condensate.sound_speed
    for key, value in values.items():
        section, name = key.split(".", 1)
        kind = KEYS[key].kind
        if key in relative:
            text = f"{float(value) / c0!r} c_s"
        elif kind == "dimensionless":
            text = float(value)
        else:
            text = f"{float(value)!r} {si_unit(kind, d)}"
        out[section][name] = text
    return out


def rebuilt_outputs(scenario, values, names, evaluate_one, relative=frozenset()):
    """{name: array} over the samples of ``values`` (key -> array): each
    sample's scenario built from the file with the sampled values, then
    ``evaluate_one(scenario)`` (-> {name: number}).  Returns
    ``(outputs, failures)``."""
    from probe.scenarios.config import scenario_from_dict

    n = len(next(iter(values.values())))
    out = {name: np.full(n, np.nan) for name in names}
    failures = Failures()
    errors = _errors()
    for i in range(n):
        point = {k: v[i] for k, v in values.items()}
        try:
            sc_ = scenario_from_dict(raw_with(scenario, point, relative),
                                     source=scenario.source)
            got = evaluate_one(sc_)
        except errors as exc:
            failures.add(exc)
            continue
        for name in names:
            v = got.get(name)
            out[name][i] = np.nan if v is None else float(v)
    return out, failures


# ---------------------------------------------------------------------------
# many gases in one engine call
# ---------------------------------------------------------------------------
def _model_parameters(probe):
    return tuple(inspect.signature(type(probe)).parameters)


def many_gases_apply(scenario, keys):
    """True when the many-gases route evaluates the rates of ``scenario``
    with the uncertain ``keys``."""
    if getattr(scenario, "is_transit", False) or getattr(scenario, "trap", None) is not None:
        return False
    if not getattr(scenario.trajectory, "stationary", False):
        return False
    if engine_for(scenario.trajectory).name not in MANY_GASES:
        return False
    probe = scenario.probe
    arrays = dict(probe.array_keys)
    rebuilt = {"coupling", "width", *arrays.values()}
    if not set(_model_parameters(probe)) <= rebuilt:
        return False
    allowed = set(GAS_ARGUMENTS) | set(PROBE_KEYS) | set(arrays) | {"trajectory.speed"}
    return set(keys) <= allowed


def _gases(scenario, values, n, failures):
    """Each sample's uniform gas (None where a drawn value is refused)."""
    cond = scenario.condensate
    base = {"mass": cond.mass, "density": cond.density,
            "scattering_length": cond.scattering_length,
            "transverse_frequency": cond.transverse_frequency,
            "temperature": cond.temperature}
    drawn = {GAS_ARGUMENTS[k]: v for k, v in values.items() if k in GAS_ARGUMENTS}
    out = []
    for i in range(n):
        args = {**base, **{a: float(v[i]) for a, v in drawn.items()}}
        try:
            out.append(Condensate(cond.dimension, dispersion=cond.dispersion.name,
                                  size=cond.size, **args))
        except InputError as exc:
            failures.add(exc)
            out.append(None)
    return out


def _couplings(scenario, values, gases):
    """kappa of every sample: given directly, or from the probe-boson
    scattering length with the sample's gas and width (the builder's
    formula, :func:`coupling_from_scattering_length`)."""
    probe, body = scenario.probe, scenario.raw["probe"]
    n = len(gases)
    if "coupling_length" not in body:
        return values.get("probe.coupling", np.full(n, probe.coupling))
    changes = {"probe.coupling_length", "probe.width", "condensate.mass",
               "condensate.transverse_frequency"}
    if not changes & set(values):
        return np.full(n, probe.coupling)
    a0 = parse_quantity(body["coupling_length"], "probe.coupling_length", "length")
    a = values.get("probe.coupling_length", np.full(n, a0))
    width = values.get("probe.width", np.full(n, probe.width))
    out = np.full(n, np.nan)
    for i, g in enumerate(gases):
        if g is not None:
            out[i] = coupling_from_scattering_length(a[i], g.mass, scenario.probe_mass, g,
                                                     width[i])
    return out


def _probes(scenario, values, gases, failures):
    """Each sample's probe model, rebuilt from its coupling, width and
    array keys (None where refused or without a gas)."""
    probe = scenario.probe
    kappa = _couplings(scenario, values, gases)
    width = values.get("probe.width", np.full(len(gases), probe.width))
    arrays = {arg: values[key] for key, arg in probe.array_keys.items() if key in values}
    out = []
    for i in range(len(gases)):
        if gases[i] is None:
            out.append(None)
            continue
        args = {name: getattr(probe, name) for name in _model_parameters(probe)}
        args.update(coupling=float(kappa[i]), width=float(width[i]),
                    **{a: float(v[i]) for a, v in arrays.items()})
        try:
            out.append(type(probe)(**args))
        except InputError as exc:
            failures.add(exc)
            out.append(None)
    return out


def in_sound_speeds(text):
    """True if a speed is written in units of the gas's sound speed
    (``"1.6 c_s"``)."""
    if not isinstance(text, str):
        return False
    from probe.scenarios.units import ureg   # here: the registry is built on first use
    try:
        q = ureg.parse_expression(text)
    except Exception:  # parse errors are reported when the value is read
        return False
    return hasattr(q, "dimensionality") and q.dimensionality == ureg.c_s.dimensionality


def _speeds(scenario, values, gases):
    """Each sample's speed (m/s): drawn or nominal, and for a speed written
    in c_s that multiple of the sample's sound speed."""
    c0 = scenario.condensate.sound_speed
    v0 = float(scenario.trajectory.stationary_parameters()["speed"])
    v = values.get("trajectory.speed", np.full(len(gases), v0))
    if not in_sound_speeds(scenario.raw["trajectory"].get("speed")):
        return np.asarray(v, float)
    c = np.array([g.sound_speed if g is not None else np.nan for g in gases])
    return np.asarray(v, float) / c0 * c


def many_gases_outputs(scenario, values, names):
    """{name: array} of stationary straight-motion rates over the samples
    of ``values`` in one call of the engine's many-gases function; a batch
    the engine refuses is split into single samples.  Returns
    ``(outputs, failures)``."""
    n = len(next(iter(values.values())))
    failures = Failures()
    gases = _gases(scenario, values, n, failures)
    probes = _probes(scenario, values, gases, failures)
    speeds = _speeds(scenario, values, gases)
    function = MANY_GASES[engine_for(scenario.trajectory).name]
    ok = [i for i in range(n) if probes[i] is not None]
    out = {name: np.full(n, np.nan) for name in names}
    rtol = scenario.rtol

    def run(idx):
        rows = function([gases[i] for i in idx], [probes[i] for i in idx],
                        [speeds[i] for i in idx], rtol=rtol)
        for i, row in zip(idx, rows):
            for name in names:
                v = row.get(name)
                out[name][i] = np.nan if v is None else float(v)
    try:
        if ok:
            run(ok)
    except _errors():
        for i in ok:
            try:
                run([i])
            except _errors() as exc:
                failures.add(exc)
    return out, failures
