"""The ``[probe]`` table: the model chosen by ``model`` and built from its
keys.

The keys live on the model classes: ``ProbeModel.common_config_keys``
(coupling, coupling_length, mass, species, width: read here for every
model) and each model's ``config_keys`` (read here by their declared kind
and handed to the model's ``from_config``).  Nothing here knows which
models exist beyond ``probe.detectors.PROBE_MODELS``.
"""
from __future__ import annotations

import math

from probe import constants as sc

from probe.detectors import PROBE_MODELS, ProbeModel, coupling_from_scattering_length
from probe.errors import InputError
from probe.scenarios.keys import Key, Part, both_given
from probe.scenarios.units import example
from probe.scenarios.values import choice, mass, not_applicable, quantity, read

_S = "probe"
HBAR = sc.hbar

MODEL = Key(_S, "model", '"two-level"', "the probe model: the two-level detector "
            "(up and down transitions) or the structureless impurity \"density\" "
            "(emission, drag, power)", choices=tuple(PROBE_MODELS), default="two-level")

_COMMON = {key.name: key for key in ProbeModel.common_config_keys}

#: the keys of ``[probe]``, in the order of the schema: the choice of model,
#: each model's own keys, the keys of every model
PARTS = (Part(_S, "", (MODEL,)),
         *(Part(_S, f'model = "{name}"', model.config_keys)
           for name, model in PROBE_MODELS.items() if model.config_keys),
         Part(_S, "every model", ProbeModel.common_config_keys))


def build_probe(body, condensate, gas_species=None):
    """``(probe model, probe mass or None, probe species or None)`` from the
    ``[probe]`` table, for the given gas (whose species is the default
    probe species)."""
    model = PROBE_MODELS[choice(body, MODEL)]
    _reject_other_models(body, model)
    values = _shared_values(body, model, condensate, gas_species)
    for key in model.config_keys:
        values[key.name] = read(body, key, dimension=condensate.dimension,
                                sound_speed=condensate.sound_speed)
    probe = model.from_config(values, condensate)
    if values.get("scattering_lengths") and not getattr(probe, "scattering_lengths", None):
        # kept for the model's check that it is small against xi
        probe.scattering_lengths = values["scattering_lengths"]
    return probe, values["mass"], values["species"]


def _reject_other_models(body, model):
    """InputError for a key of another model (or a common key) that ``model``
    does not read."""
    own = {key.name for key in model.config_keys}
    own |= {key.name for key in model.common_config_keys}
    if not model.coupling_config_keys:
        own -= set(ProbeModel.coupling_config_keys)
    others = {key.name for m in PROBE_MODELS.values() for key in m.config_keys}
    others |= set(ProbeModel.coupling_config_keys)
    for name in sorted(others - own):
        why = model.unused_config_keys.get(name)
        not_applicable(body, _S, {name}, f"by the {model.name} model"
                                         + (f" ({why})" if why else ""))


def _shared_values(body, model, condensate, gas_species):
    """``width`` (given, or that of a tweezer's ground state), the probe's
    ``mass`` and ``species`` and, for a model with one coupling, ``coupling``
    (kappa, J m^d) from the keys every model reads."""
    if not model.coupling_config_keys:
        probe_mass, species = _probe_mass(body, condensate, gas_species)
        width = _width(body, probe_mass)
        return {"width": width, "mass": probe_mass, "species": species, "coupling": None}
    return _common_values(body, condensate, gas_species)


def _probe_mass(body, condensate, gas_species):
    return mass(body, _COMMON["species"], _COMMON["mass"], default=condensate.mass,
                default_label=gas_species)


def _width(body, probe_mass):
    """The probe's rms width: ``width``, or from ``tweezer_frequency`` the
    rms width sqrt(hbar/(2 m_p w)) of the tweezer's ground-state density
    (the harmonic oscillator's ground state)."""
    tweezer = _COMMON["tweezer_frequency"]
    if tweezer.name not in body:
        return quantity(body, _COMMON["width"])
    if "width" in body:
        raise InputError(tweezer.dotted, both_given(_COMMON["width"], tweezer,
                                                    " (which sets the width)"))
    w = quantity(body, tweezer)
    if not w > 0:
        raise InputError(tweezer.dotted, f"must be > 0, got {w!r} rad/s")
    return math.sqrt(HBAR / (2 * probe_mass * w))


def _common_values(body, condensate, gas_species):
    """``width``, ``coupling`` (kappa, J m^d) and the probe's ``mass`` and
    ``species`` (None with an explicit coupling) from the keys of every
    model: ``coupling`` or ``coupling_length`` (with the probe's mass from
    ``species`` or ``mass``, by default the gas's)."""
    d = condensate.dimension
    tweezer = _COMMON["tweezer_frequency"].name in body
    width = None if tweezer else quantity(body, _COMMON["width"])
    length, coupling = _COMMON["coupling_length"], _COMMON["coupling"]
    lengths = None                  # the probe-boson scattering length, if given
    if coupling.name in body and length.name in body:
        raise InputError(coupling.dotted, both_given(
            length, coupling, " (probe-boson scattering length, or kappa itself: "
                              "energy x length^d)"))
    if coupling.name in body:
        if not tweezer:
            not_applicable(body, _S, {"mass", "species"},
                           "with an explicit coupling (only with coupling_length, "
                           "to form the reduced mass)")
        kappa = quantity(body, coupling, dimension=d)
        probe_mass, probe_species = _probe_mass(body, condensate, gas_species) if tweezer \
            else (None, None)
        width = _width(body, probe_mass) if tweezer else width
    elif length.name in body:
        a_pb = quantity(body, length)
        probe_mass, probe_species = _probe_mass(body, condensate, gas_species)
        width = _width(body, probe_mass) if tweezer else width
        kappa = coupling_from_scattering_length(a_pb, condensate.mass, probe_mass,
                                                condensate, width)
        lengths = (a_pb,)
    else:
        raise InputError(length.dotted,
                         f"missing; add e.g. {length.name} = {length.example} or "
                         f"{coupling.name} = {example(coupling.kind, d)}")
    return {"coupling": kappa, "width": width, "mass": probe_mass,
            "species": probe_species, "scattering_lengths": lengths}
