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

Every physical quantity is a string with units (see ``probe.units``).
``load_config`` reads a file, removes the ``--unset`` keys, applies
``--set`` style overrides, validates every key and builds the library
objects; ``rates_from_config`` goes on to compute the rates.
"""
from __future__ import annotations

import copy
import difflib
import os
import re
import tomllib
from dataclasses import dataclass, field

import numpy as np
from scipy import constants as sc

from probe.gas.condensate import Condensate
from probe.errors import InputError
from probe.detectors import DensityProbe, TwoLevelProbe, coupling_from_scattering_length
from probe.scenarios.units import parse_quantity, parse_vector

# ---------------------------------------------------------------------------
# Schema: section -> key -> example value (used in "missing key" messages)
# ---------------------------------------------------------------------------
SCHEMA = {
    "condensate": {
        "dimension": "3",
        "species": '"87Rb"',
        "mass": '"86.909 u"',
        "density": '"1.2e20 m^-3"',
        "scattering_length": '"5.3 nm"',
        "transverse_frequency": '"2 kHz"',
        "temperature": '"50 nK"',
        "dispersion": '"bogoliubov"',
        "size": '"50 um"',
    },
    "probe": {
        "model": '"two-level"',
        "gap": '"200 Hz"',
        "coupling_length": '"5 nm"',
        "coupling": '"1e-50 J m^3"',
        "mass": '"86.909 u"',
        "species": '"87Rb"',
        "width": '"0 um"',
    },
    "trajectory": {
        "kind": '"linear"',
        "speed": '"1.5 c_s"',
        "direction": "[1, 0, 0]",
        "start": '["0 um", "0 um", "0 um"]',
        "radius": '"10 um"',
        "angular_frequency": '"100 rad/s"',
        "centre": '["0 um", "0 um", "0 um"]',
        "normal": "[0, 0, 1]",
    },
    "numerics": {
        "rtol": "1e-8",
    },
}

REQUIRED_SECTIONS = ("condensate", "probe", "trajectory")

PROBE_MODEL_NAMES = ("two-level", "density")
TRAJECTORY_KINDS = ("linear", "circular")
DISPERSION_NAMES = ("bogoliubov", "phonon")

_LINEAR_KEYS = {"kind", "speed", "direction", "start"}
_CIRCULAR_KEYS = {"kind", "radius", "speed", "angular_frequency", "centre",
                  "normal"}


def _suggest(word, choices):
    close = difflib.get_close_matches(word, list(choices), n=1, cutoff=0.5)
    return f"did you mean '{close[0]}'? " if close else ""


def _check_key(section, key):
    """Raise InputError for an unknown section or key."""
    if section not in SCHEMA:
        raise InputError(
            section, f"unknown section; {_suggest(section, SCHEMA)}"
            f"allowed: {', '.join(SCHEMA)}")
    if key is not None and key not in SCHEMA[section]:
        raise InputError(
            f"{section}.{key}", f"unknown key; {_suggest(key, SCHEMA[section])}"
            f"allowed: {', '.join(SCHEMA[section])}")


def validate_keys(raw):
    """Check the section and key names of a configuration dict."""
    if not isinstance(raw, dict):
        raise InputError("config", f"must be a table of sections, got {raw!r}")
    for section, body in raw.items():
        _check_key(section, None)
        if not isinstance(body, dict):
            raise InputError(section, f"must be a table [{section}], got {body!r}")
        for key in body:
            _check_key(section, key)
    for section in REQUIRED_SECTIONS:
        if section not in raw:
            raise InputError(section, f"missing section [{section}]")


# ---------------------------------------------------------------------------
# Reading and overriding
# ---------------------------------------------------------------------------
def read_toml(path):
    """The dict of a TOML file; InputError naming the file on any failure."""
    try:
        name = os.fspath(path)
    except TypeError:
        raise InputError("config", f"expected a file path, got {path!r}") from None
    try:
        with open(name, "rb") as fh:
            data = fh.read()
    except OSError as exc:
        raise InputError(name, f"cannot read file: {exc.strerror or exc}") from None
    try:
        text = data.decode("utf-8")
    except UnicodeDecodeError as exc:
        raise InputError(name, f"not a UTF-8 text file ({exc})") from None
    try:
        return tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise InputError(name, f"TOML syntax error: {exc}") from None
    except RecursionError:
        raise InputError(name, "TOML syntax error: arrays or tables nested too "
                               "deeply to read") from None


def _toml_value(text):
    """A --set value: a TOML value if it parses as one, else the plain string."""
    try:
        return tomllib.loads(f"v = {text}")["v"]
    except (tomllib.TOMLDecodeError, RecursionError):
        return text.strip()


def override(config, assignment):
    """Return a copy of ``config`` with ``"section.key=value"`` applied.

    ``value`` is read as a TOML value when it is one (``3``, ``[1, 0, 0]``,
    ``"87Rb"``), otherwise as a plain string (``2 c_s``).  Unknown sections
    and keys are rejected with a suggestion.
    """
    if not isinstance(config, dict):
        raise InputError("config", f"must be a table of sections, got {config!r}")
    if not isinstance(assignment, str) or "=" not in assignment:
        raise InputError("--set", f"expected KEY=VALUE such as "
                                  f"'trajectory.speed=2 c_s', got {assignment!r}")
    dotted, text = assignment.split("=", 1)
    dotted = dotted.strip()
    section, key = _section_key(dotted, "--set", "trajectory.speed")
    if not text.strip():
        raise InputError(dotted, "--set needs a value after '='")
    out = copy.deepcopy(config)
    body = out.setdefault(section, {})
    if not isinstance(body, dict):
        raise InputError(section, f"must be a table [{section}], got {body!r}")
    body[key] = _toml_value(text)
    return out


def _section_key(dotted, option, example):
    """(section, key) of a known ``"section.key"`` named on ``option``."""
    parts = dotted.split(".")
    if len(parts) != 2 or not all(parts):
        raise InputError(option, f"key {dotted!r} must be SECTION.KEY, e.g. '{example}'")
    section, key = parts
    _check_key(section, key)
    return section, key


def unset(config, dotted):
    """Return a copy of ``config`` without the key ``"section.key"``.

    The key must be a known SECTION.KEY (as for :func:`override`) and be
    present in ``config``; removing a key that is not there is an error
    naming it.  A section left empty stays (as an empty table).
    """
    if not isinstance(config, dict):
        raise InputError("config", f"must be a table of sections, got {config!r}")
    if not isinstance(dotted, str):
        raise InputError("--unset", f"expected KEY such as 'probe.gap', got {dotted!r}")
    dotted = dotted.strip()
    if "=" in dotted:
        raise InputError("--unset", f"expected KEY such as 'probe.gap' (no '=value'; "
                                    f"use --set to change a value), got {dotted!r}")
    section, key = _section_key(dotted, "--unset", "probe.gap")
    body = config.get(section)
    if body is not None and not isinstance(body, dict):
        raise InputError(section, f"must be a table [{section}], got {body!r}")
    if body is None or key not in body:
        raise InputError(dotted, "not in the scenario, nothing to unset")
    out = copy.deepcopy(config)
    del out[section][key]
    return out


def apply_edits(config, overrides=(), removals=()):
    """``config`` with the ``removals`` ("section.key", as ``--unset``)
    taken out first, then the ``overrides`` ("section.key=value", as
    ``--set``) applied; a single string counts as one entry."""
    if isinstance(removals, str):
        removals = (removals,)
    if isinstance(overrides, str):
        overrides = (overrides,)
    removed = set()
    for dotted in removals:
        name = dotted.strip() if isinstance(dotted, str) else dotted
        if name in removed:
            raise InputError(name, "given twice to --unset")
        config = unset(config, dotted)
        removed.add(name)
    for assignment in overrides:
        config = override(config, assignment)
    return config


# ---------------------------------------------------------------------------
# Building objects
# ---------------------------------------------------------------------------
_SPECIES = re.compile(r"^\s*(?:(\d+)\s*-?\s*([A-Za-z]{1,2})|([A-Za-z]{1,2})\s*-?\s*(\d+))\s*$")


def species_mass(species, key="condensate.species"):
    """Atomic mass (kg) of an isotope written like ``"87Rb"`` (or ``"Rb87"``,
    ``"Rb-87"``), from the ``periodictable`` package."""
    import periodictable

    if not isinstance(species, str):
        raise InputError(key, f"must be an isotope such as \"87Rb\", got {species!r}")
    m = _SPECIES.match(species)
    if not m:
        raise InputError(key, f"{species!r} is not an isotope; write mass number "
                              "and element symbol, e.g. \"87Rb\", \"23Na\", \"39K\"")
    a_text, sym = (m.group(1), m.group(2)) if m.group(1) else (m.group(4), m.group(3))
    sym = sym[0].upper() + sym[1:].lower()
    try:
        element = periodictable.elements.symbol(sym)
    except ValueError:
        raise InputError(key, f"{species!r}: unknown element symbol {sym!r}") from None
    a = int(a_text)
    try:
        iso = element[a]
    except KeyError:
        known = list(element.isotopes)
        span = f"{known[0]}..{known[-1]}" if known else "none"
        raise InputError(key, f"{species!r}: {sym} has no isotope with mass "
                              f"number {a} (known: {span})") from None
    mass_u = iso.mass
    if mass_u is None or not np.isfinite(mass_u):
        raise InputError(key, f"{species!r}: no mass tabulated for this isotope")
    return float(mass_u) * sc.atomic_mass


def _require(body, section, key):
    if key not in body:
        raise InputError(f"{section}.{key}",
                         f"missing; add e.g. {key} = {SCHEMA[section][key]}")
    return body[key]


def _choice(body, section, key, choices, default):
    value = body.get(key, default)
    if value not in choices:
        hint = _suggest(str(value), choices) if isinstance(value, str) else ""
        raise InputError(f"{section}.{key}",
                         f"{value!r} is not allowed; {hint}allowed: "
                         f"{', '.join(repr(c) for c in choices)}")
    return value


def _mass(body, section, default=None, default_label=None):
    """Mass from ``species`` or ``mass`` (exactly one); (kg, label)."""
    if "species" in body and "mass" in body:
        raise InputError(f"{section}.mass", "give either species or mass, not both")
    if "species" in body:
        return species_mass(body["species"], f"{section}.species"), body["species"]
    if "mass" in body:
        return parse_quantity(body["mass"], f"{section}.mass", "mass"), None
    if default is not None:
        return default, default_label
    raise InputError(f"{section}.species",
                     f"missing; add e.g. species = {SCHEMA[section]['species']} "
                     f"or mass = {SCHEMA[section]['mass']}")


def _not_applicable(body, section, keys, reason):
    for key in sorted(keys):
        if key in body:
            raise InputError(f"{section}.{key}", f"not used {reason}; remove it")


def build_condensate(body):
    """A :class:`Condensate` from the ``[condensate]`` table."""
    s = "condensate"
    dim = _require(body, s, "dimension")
    if isinstance(dim, bool) or not isinstance(dim, int) or dim not in (1, 2, 3):
        raise InputError(f"{s}.dimension", f"must be the integer 1, 2 or 3, got {dim!r}")
    mass, species = _mass(body, s)
    density = parse_quantity(_require(body, s, "density"), f"{s}.density",
                             "density", dimension=dim)
    a = parse_quantity(_require(body, s, "scattering_length"),
                       f"{s}.scattering_length", "length")
    if dim < 3:
        wperp = parse_quantity(_require(body, s, "transverse_frequency"),
                               f"{s}.transverse_frequency", "frequency")
    elif "transverse_frequency" in body:
        wperp = parse_quantity(body["transverse_frequency"],
                               f"{s}.transverse_frequency", "frequency")
    else:
        wperp = None
    temperature = parse_quantity(body.get("temperature", "0 K"),
                                 f"{s}.temperature", "temperature")
    dispersion = _choice(body, s, "dispersion", DISPERSION_NAMES, "bogoliubov")
    size = None
    if "size" in body:
        size = parse_quantity(body["size"], f"{s}.size", "length")
    cond = Condensate(dim, mass, density, a, transverse_frequency=wperp,
                      temperature=temperature, dispersion=dispersion, size=size)
    return cond, species


def build_probe(body, condensate, gas_species=None):
    """A probe model from the ``[probe]`` table, for the given gas."""
    s = "probe"
    model = _choice(body, s, "model", PROBE_MODEL_NAMES, "two-level")
    d = condensate.dimension
    if model == "density":
        _not_applicable(body, s, {"gap"},
                        "by the density model (a structureless impurity has no gap)")
    width = parse_quantity(body.get("width", "0 um"), f"{s}.width", "length")
    if "coupling" in body and "coupling_length" in body:
        raise InputError(f"{s}.coupling",
                         "give either coupling (energy x length^d) or "
                         "coupling_length (probe-boson scattering length), not both")
    if "coupling" in body:
        _not_applicable(body, s, {"mass", "species"},
                        "with an explicit coupling (only with coupling_length, "
                        "to form the reduced mass)")
        kappa = parse_quantity(body["coupling"], f"{s}.coupling", "coupling",
                               dimension=d)
        probe_mass, probe_species = None, None
    elif "coupling_length" in body:
        a_pb = parse_quantity(body["coupling_length"], f"{s}.coupling_length",
                              "length")
        probe_mass, probe_species = _mass(body, s, default=condensate.mass,
                                          default_label=gas_species)
        kappa = coupling_from_scattering_length(a_pb, condensate.mass, probe_mass,
                                                condensate, width)
    else:
        raise InputError(f"{s}.coupling_length",
                         f"missing; add e.g. coupling_length = "
                         f"{SCHEMA[s]['coupling_length']} or coupling = "
                         f"'{_coupling_example(d)}'")
    if model == "two-level":
        gap = parse_quantity(_require(body, s, "gap"), f"{s}.gap", "frequency")
        probe = TwoLevelProbe(gap, kappa, width)
    else:
        probe = DensityProbe(kappa, width)
    return probe, probe_mass, probe_species


def _coupling_example(d):
    return {1: "1e-37 J m", 2: "1e-43 J m^2", 3: "1e-50 J m^3"}[d]


def _in_gas(vec, key, d, what):
    """Reject vector components along the frozen directions of a d < 3 gas."""
    if d < 3 and vec.size > d and np.any(vec[d:] != 0):
        axes = "x axis" if d == 1 else "x-y plane"
        raise InputError(key, f"the gas is {d}D (it extends along the {axes} "
                              f"only) but the {what} {vec.tolist()} leaves it")


#: above this many sound speeds a speed is refused (the engine's range, see
#: probe.engine.MAX_SPEED_OVER_C); checked here to give a hint about units
_MAX_SPEED_OVER_C = 1e6


def _speed(value, key, sound_speed):
    """A speed (m/s) from a string with units; a speed beyond the engine's
    range written with ``c`` (pint's speed of light) gets a hint that the
    sound speed is written ``c_s``."""
    speed = parse_quantity(value, key, "speed", sound_speed=sound_speed)
    if speed > _MAX_SPEED_OVER_C * sound_speed:
        hint = ""
        if isinstance(value, str) and re.search(r"(?<![\w.])c(?![\w.])", value):
            hint = ("; 'c' is the speed of light: write the gas's sound speed "
                    "as 'c_s'")
        raise InputError(key, f"{value!r} is {speed / sound_speed:.4g} times the "
                              f"sound speed c_s = {sound_speed:.4g} m/s, above "
                              f"the largest speed handled, {_MAX_SPEED_OVER_C:g} "
                              f"c_s{hint}")
    return speed


def _position_limit(condensate):
    """(limit in xi, limit in m, xi in m): positions are handled within
    probe.transit_config.MAX_DISTANCE_OVER_XI healing lengths of the origin
    along each axis, as for spline waypoints."""
    from probe.scenarios.transit import MAX_DISTANCE_OVER_XI
    xi = condensate.healing_length
    return MAX_DISTANCE_OVER_XI, MAX_DISTANCE_OVER_XI * xi, xi


def _check_position(vec, key, what, condensate):
    """InputError naming ``key[i]`` unless every component of ``vec`` (m)
    lies within the positions handled (``_position_limit``)."""
    lim_xi, lim, xi = _position_limit(condensate)
    out = np.flatnonzero(~(np.abs(vec) <= lim))
    if out.size:
        i = int(out[0])
        raise InputError(f"{key}[{i}]",
                         f"{vec[i]:.6g} m is outside the positions handled: the "
                         f"{what} must lie within {lim_xi:g} xi = {lim:.4g} m of the "
                         f"origin along each axis (healing length xi = {xi:.4g} m "
                         f"in this gas)")


def _check_radius(radius, key, condensate):
    """InputError for a radius above the positions handled
    (``_position_limit``); radii <= 0 are left to ``Circular``."""
    lim_xi, lim, xi = _position_limit(condensate)
    if radius > lim:
        raise InputError(key, f"{radius:.6g} m is above the largest radius handled, "
                              f"{lim_xi:g} xi = {lim:.4g} m (healing length xi = "
                              f"{xi:.4g} m in this gas); for R >> xi the rate "
                              f"approaches that of straight motion at the same "
                              f"speed (kind = \"linear\")")


def build_trajectory(body, condensate):
    """A trajectory object from the ``[trajectory]`` table."""
    from trajectories import Circular, Linear, TrajectoryError

    s = "trajectory"
    kind = _choice(body, s, "kind", TRAJECTORY_KINDS, _require(body, s, "kind"))
    d = condensate.dimension
    c = condensate.sound_speed
    try:
        if kind == "linear":
            _not_applicable(body, s, set(body) - _LINEAR_KEYS,
                            "by a linear trajectory (keys: "
                            + ", ".join(sorted(_LINEAR_KEYS)) + ")")
            speed = _speed(_require(body, s, "speed"), f"{s}.speed", c)
            direction = parse_vector(body.get("direction", [1, 0, 0]),
                                     f"{s}.direction", "dimensionless")
            _in_gas(direction, f"{s}.direction", d, "direction")
            start = None
            if "start" in body:
                start = parse_vector(body["start"], f"{s}.start", "length")
                _in_gas(start, f"{s}.start", d, "start point")
                _check_position(start, f"{s}.start", "start point", condensate)
            return Linear(speed, direction=direction, start=start)
        _not_applicable(body, s, set(body) - _CIRCULAR_KEYS,
                        "by a circular trajectory (keys: "
                        + ", ".join(sorted(_CIRCULAR_KEYS)) + ")")
        radius = parse_quantity(_require(body, s, "radius"), f"{s}.radius", "length")
        _check_radius(radius, f"{s}.radius", condensate)
        if ("speed" in body) == ("angular_frequency" in body):
            raise InputError(f"{s}.speed",
                             "give exactly one of speed (e.g. \"0.5 c_s\") and "
                             "angular_frequency (e.g. \"100 rad/s\")")
        speed = omega = None
        if "speed" in body:
            speed = _speed(body["speed"], f"{s}.speed", c)
        else:
            omega = parse_quantity(body["angular_frequency"],
                                   f"{s}.angular_frequency", "angular_frequency")
        centre = None
        if "centre" in body:
            centre = parse_vector(body["centre"], f"{s}.centre", "length",
                                  sizes=(2, 3))
            _in_gas(centre, f"{s}.centre", d, "centre")
            _check_position(centre, f"{s}.centre", "centre", condensate)
        normal = parse_vector(body.get("normal", [0, 0, 1]), f"{s}.normal",
                              "dimensionless", sizes=(3,))
        if d == 2 and np.any(normal[:2] != 0):
            raise InputError(f"{s}.normal", f"the gas is 2D (x-y plane); the circle's "
                                            f"normal must be along z, got {normal.tolist()}")
        return Circular(radius, speed=speed, angular_frequency=omega,
                        centre=centre, normal=normal)
    except TrajectoryError as exc:
        key = exc.key if exc.key.startswith(f"{s}.") else f"{s}.{exc.key}"
        raise InputError(key, exc.message) from None


#: allowed numerics.rtol: the inertial engine's error floor is 1e-13 (its
#: rounding floor, probe.engine._ROUNDING); a tolerance above 0.1 is no
#: longer a tolerance
RTOL_RANGE = (1e-13, 0.1)


def _rtol(raw):
    body = raw.get("numerics", {})
    value = body.get("rtol", 1e-8)
    if isinstance(value, bool) or not isinstance(value, (int, float, str)):
        raise InputError("numerics.rtol", f"must be a number such as 1e-8, got {value!r}")
    rtol = parse_quantity(value, "numerics.rtol", "dimensionless")
    if not RTOL_RANGE[0] <= rtol <= RTOL_RANGE[1]:
        raise InputError("numerics.rtol",
                         f"must be between {RTOL_RANGE[0]:g} and {RTOL_RANGE[1]:g} "
                         f"(e.g. 1e-8), got {rtol!r}; the engine's rounding floor "
                         f"is about {RTOL_RANGE[0]:g}")
    return rtol


# ---------------------------------------------------------------------------
# Scenario
# ---------------------------------------------------------------------------
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
    switching: object = None          # finite transits: probe/transit_config.py
    transit_rtol: float = 1e-4
    transit_method: str = "auto"

    @property
    def is_transit(self):
        """True for a switched transit (spline path, or a switching function)."""
        return self.switching is not None

    def transit(self, spectrum=False, workers=None):
        """First-order transit probabilities (a :class:`TransitResult`)."""
        return _transit.run_transit(self, spectrum=spectrum, workers=workers)

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
        probe = {
            "model": self.probe.name,
            "gap": float(self.probe.gap) if self.probe.has_gap else None,
            "coupling": self.probe.coupling,
            "width": self.probe.width,
            "mass": self.probe_mass,
            "species": self.probe_species,
        }
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
        result.warnings = existing + notes
        return result


def scenario_from_dict(raw, overrides=(), source=None, removals=()):
    """Validate a configuration dict (after removing the ``removals`` keys
    and applying the ``overrides``) and build a Scenario."""
    raw = apply_edits(raw, overrides, removals)
    validate_keys(raw)
    raw = copy.deepcopy(raw)
    cond, species = build_condensate(raw["condensate"])
    probe, probe_mass, probe_species = build_probe(raw["probe"], cond, species)
    trajectory, switching = _transit.build_path(raw["trajectory"], cond, source)
    rtol = _rtol(raw)
    return Scenario(condensate=cond, probe=probe, trajectory=trajectory,
                    rtol=rtol, raw=raw, source=source, species=species,
                    probe_mass=probe_mass, probe_species=probe_species,
                    switching=switching,
                    transit_rtol=_transit.transit_rtol(raw, trajectory),
                    transit_method=_transit.transit_method(raw))


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


# Finite transits (spline paths, switching): keys and builders in transit_config
from probe.scenarios import transit as _transit  # noqa: E402

for _section, _keys in _transit.SCHEMA_KEYS.items():
    SCHEMA[_section].update(_keys)
