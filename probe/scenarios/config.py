"""Scenario files: a TOML description of gas, probe and path.

Example::

    [condensate]
    dimension = 3
    species = "87Rb"
    density = "1.2e20 m^-3"
    scattering_length = "5.3 nm"
    temperature = "0 K"

    [probe]
    model = "two-level"
    gap = "200 Hz"
    coupling_length = "5 nm"

    [trajectory]
    kind = "linear"
    speed = "1.5 c_s"

Every physical quantity is a string with units (see ``probe.scenarios.units``).
``load_config`` reads a file, removes the ``--unset`` keys, applies
``--set`` style overrides, validates every key and builds the library
objects; ``rates_from_config`` goes on to compute the rates.

This is the entry of the scenario layer; the work is done by
``probe.scenarios.edits`` (reading and editing the TOML dict),
``schema`` (the keys, collected from their declarations), and the builders
``gas``, ``detector``, ``path`` (with ``spline`` and ``switching``) and
``numerics``; ``transit`` runs and describes finite transits, ``passage``
the passages through a cloud (a harmonic trap, or the box of ``size``).
"""
from __future__ import annotations

import copy
import os
from dataclasses import dataclass, field

from probe.gas.condensate import Condensate
from probe.scenarios import numerics
from probe.scenarios import passage as _passage
from probe.scenarios import transit as _transit
from probe.scenarios.detector import build_probe
from probe.scenarios.edits import apply_edits, override, read_toml, unset
from probe.scenarios.gas import build_gas, unused_notes
from probe.scenarios.path import build_path
from probe.errors import InputError
from probe.scenarios.schema import SCHEMA, as_written, validate_keys
from probe.scenarios.values import species_mass

__all__ = ["SCHEMA", "Scenario", "apply_edits", "load_config", "override",
           "rates_from_config", "read_toml", "scenario_from_dict", "species_mass",
           "unset", "validate_keys"]


@dataclass
class Scenario:
    """A validated configuration and the objects built from it (SI units)."""

    condensate: Condensate
    probe: object
    trajectory: object
    rtol: float
    raw: dict
    source: str | None = None
    species: str | None = None
    probe_mass: float | None = None
    probe_species: str | None = None
    extra: dict = field(default_factory=dict)
    switching: object = None          # finite transits: probe.scenarios.switching
    transit_rtol: float = 1e-4
    transit_method: str = "auto"
    trap: object = None               # the HarmonicTrap of trap = "harmonic"
    passage_samples: int = 1000
    #: warnings on keys given but not used (each names its key and says why)
    unused: list = field(default_factory=list)

    @property
    def is_passage(self):
        """True for a gas in a harmonic trap: its natural result is a passage
        through the cloud (``probe passage``; sweeps compute passages)."""
        return self.trap is not None

    @property
    def is_transit(self):
        """True for a switched transit (spline path, or a switching function)."""
        return self.switching is not None

    def transit(self, spectrum=False, workers=None):
        """First-order transit probabilities (a :class:`TransitResult`); in a
        harmonic trap, of the uniform gas at its centre (said in a warning)."""
        res = _transit.run_transit(self, spectrum=spectrum, workers=workers)
        for w in (self.unused + numerics.transit_notes(self.raw)
                  + _passage.transit_region_warnings(self)
                  + _passage.harmonic_notes(self, "probe transit")):
            if w not in res.warnings:
                res.warnings.append(w)
        return res

    def passage(self):
        """The passage through the cloud (a :class:`PassageResult`)."""
        res = _passage.run_passage(self)
        res.warnings = self.unused + [w for w in res.warnings if w not in self.unused]
        return res

    def describe(self):
        """Inputs and derived quantities as a dict of SI values (JSON safe)."""
        cond = self.condensate
        gas = {
            "dimension": cond.dimension,
            "species": self.species,
            "mass": cond.mass,
            "density": cond.density,
            "scattering_length": cond.scattering_length,
            "transverse_frequency": cond.transverse_frequency,
            "temperature": cond.temperature,
            "dispersion": cond.dispersion.name,
        }
        probe = {**self.probe.describe(), "mass": self.probe_mass,
                 "species": self.probe_species}
        traj = {"kind": self.raw["trajectory"]["kind"]}
        for k, v in (self.trajectory.stationary_parameters().items()
                     if self.trajectory.stationary else ()):
            traj[k] = float(v)
        derived = {
            "chemical_potential": cond.chemical_potential,
            "sound_speed": cond.sound_speed,
            "healing_length": cond.healing_length,
            "healing_length_convention": "xi = hbar/(m c)",
            "gas_parameter": cond.gas_parameter,
            "gas_parameter_name": cond.gas_parameter_name,
            "coupling_g": cond.coupling,
            "critical_temperature": cond.critical_temperature,
            "transverse_length": cond.transverse_length,
        }
        if self.trap is not None:
            gas["trap"] = {"kind": "harmonic",
                           "trap_frequencies": self.trap.frequencies.tolist(),
                           **self.trap.summary()}
        elif "trap" in self.raw["condensate"]:
            gas["trap"] = {"kind": "box", "size": cond.size}
        return {"source": self.source, "condensate": gas, "probe": probe,
                "trajectory": traj, "derived": derived,
                "numerics": {"rtol": self.rtol}}

    def rates(self):
        """Golden-rule rates (a :class:`RateResult`) with regime warnings."""
        from probe.engines.stationary import stationary_rates
        from probe.engines.regime import regime_warnings

        notes = _transit.rates_notes(self)   # raises for a path with no rate
        result = stationary_rates(self.condensate, self.probe, self.trajectory,
                                  rtol=self.rtol)
        existing = list(result.warnings or [])
        for w in regime_warnings(self.condensate, self.probe, result):
            if w not in existing:
                existing.append(w)
        result.warnings = (self.unused + existing + notes
                           + _passage.harmonic_notes(self, "probe rates"))
        return result


def scenario_from_dict(raw, overrides=(), source=None, removals=()):
    """Validate a configuration dict (after removing the ``removals`` keys
    and applying the ``overrides``) and build a Scenario."""
    raw = apply_edits(raw, overrides, removals)
    validate_keys(raw)
    raw = copy.deepcopy(raw)
    try:
        return _build(raw, source)
    except InputError as exc:
        raise as_written(exc, raw) from None


def _build(raw, source):
    """The Scenario of a validated configuration dict."""
    cond, species, trap = build_gas(raw["condensate"])
    probe, probe_mass, probe_species = build_probe(raw["probe"], cond, species)
    trajectory, switching = build_path(raw["trajectory"], cond, source)
    _passage.turns(raw["trajectory"])
    rtol = numerics.rtol(raw)
    return Scenario(condensate=cond, probe=probe, trajectory=trajectory,
                    rtol=rtol, raw=raw, source=source, species=species,
                    probe_mass=probe_mass, probe_species=probe_species,
                    switching=switching,
                    transit_rtol=numerics.transit_rtol(raw, trajectory),
                    transit_method=numerics.transit_method(raw), trap=trap,
                    passage_samples=numerics.passage_samples(raw),
                    unused=unused_notes(raw["condensate"]))


def load_config(path, overrides=(), removals=()):
    """Read a TOML scenario file, remove the ``removals`` keys
    ("section.key" strings, as ``--unset``), then apply ``overrides``
    ("section.key=value" strings, as ``--set``) and return the validated
    :class:`Scenario`."""
    raw = read_toml(path)
    return scenario_from_dict(raw, overrides, source=os.fspath(path),
                              removals=removals)


def rates_from_config(path_or_dict, overrides=(), removals=()):
    """Rates (:class:`RateResult`) for a scenario file path or dict."""
    if isinstance(path_or_dict, dict):
        scenario = scenario_from_dict(path_or_dict, overrides, removals=removals)
    else:
        scenario = load_config(path_or_dict, overrides, removals=removals)
    return scenario.rates()
