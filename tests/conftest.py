"""Shared test material: gases, probes and scenario dicts, built in one place.

Plain factory functions (importable with ``from conftest import ...``) and
pytest fixtures over them:

- gases: a 3D 87Rb gas, a quasi-2D 23Na gas and a quasi-1D 87Rb gas, at
  T = 0 or at a temperature given in kelvin or in the gas's own unit
  ``k_B T / (m c^2)``; the isotope masses come from the ``periodictable``
  package (the table the configuration reader uses), never typed in;
- probes: every registered probe model (``probe.detectors.PROBE_MODELS``)
  built from its constructor's parameter names (``make_probe``), and the
  two-level probe alone (``two_level``), with a gap in units of ``c/xi`` and
  a width in units of ``xi`` (0: a point probe);
- scenario dicts as the configuration reader takes them: straight and
  circular stationary motion, and a finite transit along a spline.

Gas parameters are those of dilute alkali condensates (Pitaevskii and
Stringari, *Bose-Einstein Condensation and Superfluidity*, 2016): scattering
lengths of about 100 a_0 for 87Rb and 52 a_0 for 23Na.
"""
from __future__ import annotations

import atexit
import copy
import inspect
import math
import os
import shutil
import tempfile

# the suite keeps the unit registry's cache and the file of strings read in a
# folder of its own (removed at the end), never in the user's home
if "PROBE_CACHE_DIR" not in os.environ:
    _CACHE = tempfile.mkdtemp(prefix="probe-test-cache-")
    os.environ["PROBE_CACHE_DIR"] = _CACHE
    atexit.register(shutil.rmtree, _CACHE, True)

import numpy as np
import periodictable
import pytest
from scipy import constants as sc

from probe.detectors import PROBE_MODELS, coupling_from_scattering_length
from probe.engines import stationary as stationary_engines
from probe.gas.condensate import Condensate
from probe.gas.dispersion import DISPERSIONS
from trajectories import Circular, Linear

KB = sc.k

#: isotope masses (kg) from periodictable
RB87_MASS = periodictable.Rb[87].mass * sc.atomic_mass
NA23_MASS = periodictable.Na[23].mass * sc.atomic_mass
#: s-wave scattering lengths (m): about 100 a_0 (87Rb) and 52 a_0 (23Na)
RB87_SCATTERING_LENGTH = 5.3e-9
NA23_SCATTERING_LENGTH = 2.75e-9
#: angular frequency of the transverse trap of the reduced-dimension 87Rb gases
TRAP = 2 * math.pi * 5e3
#: default densities of the 87Rb gases (m^-d)
DENSITY = {1: 5e8, 2: 1e13, 3: 1e20}
#: probe couplings kappa (J m^d) of the two-level probes built by ``two_level``
KAPPA = {1: 1e-32, 2: 1e-42, 3: 1e-52}
#: the quasi-2D 23Na gas of the contract tests (density m^-2, trap rad/s)
NA23_2D_DENSITY = 3e13
NA23_2D_TRAP = 2 * math.pi * 1.5e3
#: a warm gas: k_B T = WARM m c^2
WARM = 0.3


# ---------------------------------------------------------------------------
# gases
# ---------------------------------------------------------------------------
def condensate(d, mass, density, scattering_length, transverse_frequency=None, T=0.0,
               T_nat=0.0, dispersion="bogoliubov"):
    """A uniform gas; the temperature is ``T`` in K or, when ``T_nat`` is
    given, ``k_B T = T_nat m c^2`` of this very gas."""
    kw = {} if d == 3 else {"transverse_frequency": transverse_frequency}
    if T_nat:
        cold = Condensate(d, mass, density, scattering_length, dispersion=dispersion, **kw)
        T = T_nat * cold.energy_unit / KB
    return Condensate(d, mass, density, scattering_length, temperature=T,
                      dispersion=dispersion, **kw)


def rb_gas(d, T=0.0, dispersion="bogoliubov", *, T_nat=0.0, density=None, mass=RB87_MASS,
           scattering_length=RB87_SCATTERING_LENGTH, transverse_frequency=TRAP):
    """An 87Rb gas in ``d`` dimensions (density ``DENSITY[d]`` unless given)."""
    n = DENSITY[d] if density is None else density
    return condensate(d, mass, n, scattering_length, transverse_frequency, T=T,
                      T_nat=T_nat, dispersion=dispersion)


def na_gas_2d(T=0.0, dispersion="bogoliubov", *, T_nat=0.0):
    """A quasi-2D 23Na gas (3e13 m^-2 in a 1.5 kHz trap, as in the ring example)."""
    return condensate(2, NA23_MASS, NA23_2D_DENSITY, NA23_SCATTERING_LENGTH,
                      NA23_2D_TRAP, T=T, T_nat=T_nat, dispersion=dispersion)


def contract_gas(d, T_nat=0.0, dispersion="bogoliubov"):
    """The gas of the contract tests in ``d`` dimensions: 3D and quasi-1D
    87Rb, quasi-2D 23Na."""
    if d == 2:
        return na_gas_2d(T_nat=T_nat, dispersion=dispersion)
    return rb_gas(d, T_nat=T_nat, dispersion=dispersion)


# ---------------------------------------------------------------------------
# probes
# ---------------------------------------------------------------------------
def two_level(cond, W, s=0.0, coupling=None):
    """Two-level probe with gap ``W c/xi``, width ``s xi`` and coupling
    ``KAPPA[d]`` unless given."""
    return PROBE_MODELS["two-level"](W * cond.frequency_unit,
                                     KAPPA[cond.dimension] if coupling is None else coupling,
                                     s * cond.healing_length)


#: probe-boson scattering length of the contract probes (m)
PROBE_SCATTERING_LENGTH = 2e-9


def probe_arguments(cond, W=0.5, s=0.0):
    """Example values of probe constructor parameters, by parameter name (SI):
    a gap or Rabi frequency of ``W c/xi``, a width of ``s xi``, the coupling
    of a probe of the gas's mass with scattering length 2 nm (two states:
    that and three times it), the gas's density."""
    kappa = coupling_from_scattering_length(PROBE_SCATTERING_LENGTH, cond.mass, cond.mass,
                                            cond, s * cond.healing_length)
    return {"gap": W * cond.frequency_unit, "rabi_frequency": W * cond.frequency_unit,
            "coupling": kappa, "coupling_a": kappa, "coupling_b": 3 * kappa,
            "width": s * cond.healing_length, "density": cond.density}


def make_probe(model, cond, W=0.5, s=0.0):
    """The registered probe model ``model`` (a ``PROBE_MODELS`` name) for
    ``cond``: every constructor parameter named in ``probe_arguments`` gets
    its example value, the others keep their defaults.  A new model whose
    constructor needs another parameter fails here: add it there."""
    cls = PROBE_MODELS[model]
    values = probe_arguments(cond, W, s)
    kwargs = {}
    for name, par in inspect.signature(cls).parameters.items():
        if name in values:
            kwargs[name] = values[name]
        elif par.default is inspect.Parameter.empty:
            raise AssertionError(f"probe model {model!r}: no example value for the "
                                 f"constructor parameter {name!r} (tests/conftest.py, "
                                 "probe_arguments)")
    return cls(**kwargs)


# ---------------------------------------------------------------------------
# stationary motion
# ---------------------------------------------------------------------------
def _stationary_kinds():
    """The registered stationary engines' kinds, or those of the stationary
    trajectories (uniform straight and uniform circular motion)."""
    engines = getattr(stationary_engines, "STATIONARY_ENGINES", None)
    if engines is not None:
        return tuple(engines)
    return tuple(cls.stationary_kind for cls in (Linear, Circular))


STATIONARY_KINDS = _stationary_kinds()
#: the dimensions of gas in which a stationary kind applies (default all)
KIND_DIMENSIONS = {"circular": (3, 2)}
#: (kind, dimension) of every stationary case
STATIONARY_CASES = [(kind, d) for kind in STATIONARY_KINDS
                    for d in KIND_DIMENSIONS.get(kind, (3, 2, 1))]


def stationary_path(kind, cond, mach, direction=None, radius=5.0):
    """A stationary path of ``kind`` in ``cond`` at ``mach`` sound speeds:
    straight along ``direction`` (default x), or a circle of ``radius``
    healing lengths about the origin."""
    d, v = cond.dimension, mach * cond.sound_speed
    if kind == "inertial":
        return Linear(v, direction=np.eye(d)[0] if direction is None else direction)
    if kind == "circular":
        return Circular(radius * cond.healing_length, v, centre=np.zeros(d))
    raise AssertionError(f"no test path for the stationary kind {kind!r} "
                         "(tests/conftest.py, stationary_path)")


# ---------------------------------------------------------------------------
# scenario dicts (the configuration reader's input)
# ---------------------------------------------------------------------------
#: [condensate] of the contract gases, in lab units
GAS_SECTIONS = {
    3: {"dimension": 3, "species": "87Rb", "density": "1e20 m^-3",
        "scattering_length": "5.3 nm"},
    2: {"dimension": 2, "species": "23Na", "density": "3e13 m^-2",
        "scattering_length": "2.75 nm", "transverse_frequency": "1.5 kHz"},
    1: {"dimension": 1, "species": "87Rb", "density": "5e8 m^-1",
        "scattering_length": "5.3 nm", "transverse_frequency": "5 kHz"},
}

#: [probe] of each registered model, in lab units
PROBE_SECTIONS = {
    "two-level": {"model": "two-level", "gap": "0.2 kHz", "coupling_length": "2 nm",
                  "width": "0.3 um"},
    "density": {"model": "density", "coupling_length": "2 nm", "width": "0.3 um"},
    "dressed": {"model": "dressed", "coupling_length_a": "1 nm", "coupling_length_b": "3 nm",
                "rabi_frequency": "0.2 kHz", "detuning": "50 Hz", "width": "0.3 um"},
    "ramsey": {"model": "ramsey", "coupling_length_a": "1 nm", "coupling_length_b": "3 nm",
               "width": "0.3 um"},
}


def _scenario(d, model, trajectory, temperature=None):
    gas = dict(GAS_SECTIONS[d])
    if temperature is not None:
        gas["temperature"] = temperature
    if model not in PROBE_SECTIONS:
        raise AssertionError(f"probe model {model!r}: no [probe] section in "
                             "tests/conftest.py, PROBE_SECTIONS")
    return {"condensate": gas, "probe": copy.deepcopy(PROBE_SECTIONS[model]),
            "trajectory": trajectory}


def straight_scenario_dict(d=3, model="two-level", speed="1.5 c_s", temperature=None):
    """Uniform straight motion along x."""
    return _scenario(d, model, {"kind": "linear", "speed": speed,
                                "direction": [1, 0, 0]}, temperature)


def circular_scenario_dict(d=2, model="two-level", speed="0.8 c_s", radius="4 um",
                           temperature=None):
    """Uniform circular motion about the origin (2D or 3D gas)."""
    return _scenario(d, model, {"kind": "circular", "radius": radius, "speed": speed},
                     temperature)


def spline_scenario_dict(d=2, model="two-level", temperature=None):
    """A finite transit: a curved path through six timed waypoints in 5 ms,
    switched on and off with it."""
    waypoints = {"t": [f"{t} ms" for t in (0, 1, 2, 3, 4, 5)],
                 "x": [f"{x} um" for x in (0, 0.5, 2, 4, 5.5, 6)]}
    if d >= 2:
        waypoints["y"] = [f"{y} um" for y in (0, 1, 1.5, 1.5, 1, 0)]
    return _scenario(d, model, {"kind": "spline", "waypoints": waypoints}, temperature)


#: scenario dict factory of each stationary kind
SCENARIO_OF_KIND = {"inertial": straight_scenario_dict, "circular": circular_scenario_dict}


# ---------------------------------------------------------------------------
# fixtures
# ---------------------------------------------------------------------------
_GAS_IDS = {3: "3D-87Rb", 2: "2D-23Na", 1: "1D-87Rb"}


@pytest.fixture(params=sorted(DISPERSIONS))
def dispersion(request):
    """The name of every registered dispersion."""
    return request.param


@pytest.fixture(params=[3, 2, 1], ids=_GAS_IDS.get)
def cold_gas(request, dispersion):
    """The contract gases at T = 0, with every dispersion."""
    return contract_gas(request.param, 0.0, dispersion)


@pytest.fixture(params=[3, 2, 1], ids=_GAS_IDS.get)
def warm_gas(request, dispersion):
    """The contract gases at k_B T = 0.3 m c^2, with every dispersion."""
    return contract_gas(request.param, WARM, dispersion)


@pytest.fixture(params=[(d, T) for d in (3, 2, 1) for T in (0.0, WARM)],
                ids=lambda p: f"{_GAS_IDS[p[0]]}-{'warm' if p[1] else 'cold'}")
def gas(request, dispersion):
    """The contract gases at T = 0 and T > 0, with every dispersion."""
    d, T_nat = request.param
    return contract_gas(d, T_nat, dispersion)


@pytest.fixture(params=sorted(PROBE_MODELS))
def probe_model(request):
    """The name of every registered probe model."""
    return request.param


@pytest.fixture(params=[0.0, 0.5], ids=["point", "wide"])
def probe_width(request):
    """Probe width in units of xi: a point probe and one of half a healing length."""
    return request.param


@pytest.fixture(params=STATIONARY_CASES, ids=lambda p: f"{p[0]}-{p[1]}D")
def stationary_scenario(request, probe_model):
    """A scenario dict of every stationary kind, in every dimension where it
    applies, with every registered probe model."""
    kind, d = request.param
    if kind not in SCENARIO_OF_KIND:
        raise AssertionError(f"no scenario dict for the stationary kind {kind!r} "
                             "(tests/conftest.py, SCENARIO_OF_KIND)")
    return SCENARIO_OF_KIND[kind](d, probe_model)


@pytest.fixture
def spline_scenario(probe_model):
    """A finite transit along a spline in the quasi-2D 23Na gas, with every
    registered probe model."""
    return spline_scenario_dict(2, probe_model)
