"""Reading physical quantities written as strings with units.

Every quantity in a configuration is a string such as ``"1.2e20 m^-3"``,
``"5 um"``, ``"200 Hz"``, ``"1.5 c_s"`` or ``"50 nK"``.  ``parse_quantity``
turns it into a plain SI float after checking its dimension against the kind
of quantity expected; ``parse_vector`` does the same for short lists.

Frequencies.  pint treats ``Hz`` and ``rad/s`` as the same unit (both are
``1/s``), which silently loses a factor 2 pi.  Here the unit *as written*
decides:

* ``Hz``, ``kHz``, ``MHz`` ... are ordinary frequencies nu; the angular
  frequency used everywhere in the library is ``2 pi nu``;
* ``rad/s``, ``krad/s``, ``turn/s``, ``rpm`` ... are angular already;
* a bare ``1/s`` (``s^-1``) is ambiguous and rejected, for a ``"frequency"``
  (gap or trap frequency) and an ``"angular_frequency"`` (a circle's) alike:
  "40 1/s" could be 40 rad/s or 40 turns per second;
* an energy (``J``, ``eV``) given for a ``"frequency"`` is ``hbar Omega``.

Speeds may be given in units of the gas's own sound speed, written ``c_s``
(``"1.5 c_s"``); plain ``c`` keeps pint's meaning, the speed of light.

Physical constants.  pint's own definitions compute some constants from
others (the Bohr radius as hbar/(alpha m_e c), the Hartree energy from the
Rydberg constant ...), which differs from the CODATA value in the last
digits.  Every constant the registry knows that a scenario may use (the
Bohr radius ``a0``, the atomic mass unit ``u``, ``hbar``, ``k_B``, the
Planck constant, ``c``, ``e``, the electron, proton and neutron masses, the
Hartree and Rydberg energies, the Bohr magneton, alpha, mu_0, epsilon_0, N_A,
G) is defined here from ``scipy.constants`` (CODATA), so that ``"1 a0"`` is
``scipy.constants.physical_constants["Bohr radius"][0]`` metres exactly
(``h`` stays pint's hour; the Planck constant is ``planck_constant``).

The registry (``ureg``, or ``unit_registry()``) is built on first use, not on
import, from definitions parsed once and kept in the user's cache folder
(``cache_dir()``; ``PROBE_CACHE_DIR=`` with an empty value turns the cache
off): parsing pint's definitions file is most of the start-up time of a
command.  The strings read are kept there too (``memo_key``: their SI values,
refusals never), so that a scenario read again needs neither pint nor the
registry; the file is named by a hash of this module's code, the CODATA
definitions and pint's files, so that any change of them starts a new one.
"""
from __future__ import annotations

import math
import re
import atexit
import hashlib
import sys
import threading
from importlib import resources
from pathlib import Path

import numpy as np

from probe import constants as sc
from probe.cache import CACHE_ENV  # noqa: F401 - the cache's switch, named here too
from probe.cache import cache_dir, installed_stamp
from probe.cache import prune_stale as _prune_stale, read_cache as _read_cache, \
    write_cache as _write_cache
from probe.errors import InputError

_CODATA = sc.physical_constants

#: pint's definitions of the constants, with their names and aliases, but
#: the values of scipy.constants (CODATA)
CODATA_DEFINITIONS = (
    f"speed_of_light = {sc.c!r} m/s = c = c_0",
    f"planck_constant = {sc.h!r} J s = ℎ",
    f"dirac_constant = {sc.hbar!r} J s = ħ = hbar = atomic_unit_of_action = a_u_action",
    f"elementary_charge = {sc.e!r} C = e",
    f"avogadro_number = {sc.N_A!r}",
    f"boltzmann_constant = {sc.k!r} J K^-1 = k = k_B",
    f"newtonian_constant_of_gravitation = {sc.G!r} m^3/(kg s^2) = _ = gravitational_constant",
    f"rydberg_constant = {sc.Rydberg!r} m^-1 = R_∞ = R_inf",
    f"atomic_mass_constant = {sc.atomic_mass!r} kg = m_u",
    f"electron_mass = {sc.m_e!r} kg = m_e = atomic_unit_of_mass = a_u_mass",
    f"proton_mass = {sc.m_p!r} kg = m_p",
    f"neutron_mass = {sc.m_n!r} kg = m_n",
    f"fine_structure_constant = {sc.alpha!r} = α = alpha",
    f"vacuum_permeability = {sc.mu_0!r} N A^-2 = µ_0 = mu_0 = mu0 = magnetic_constant",
    f"vacuum_permittivity = {sc.epsilon_0!r} F m^-1 = ε_0 = epsilon_0 = eps_0 = eps0 "
    "= electric_constant",
    f"bohr = {_CODATA['Bohr radius'][0]!r} m = a_0 = a0 = bohr_radius "
    "= atomic_unit_of_length = a_u_length",
    f"rydberg = {_CODATA['Rydberg constant times hc in J'][0]!r} J = Ry",
    f"hartree = {_CODATA['Hartree energy'][0]!r} J = E_h = Eh = hartree_energy "
    "= atomic_unit_of_energy = a_u_energy",
    f"bohr_magneton = {_CODATA['Bohr magneton'][0]!r} J/T = µ_B = mu_B",
)


#: the sound speed of the gas under study is not a fixed unit: it gets its own
#: base dimension so that it can never be converted silently, and is replaced
#: by the numerical sound speed of the gas in ``parse_quantity``
GAS_SOUND_SPEED = "gas_sound_speed = [gas_speed] = c_s"

#: raised when what the cache holds changes shape
_CACHE_FORMAT = 1

_LOCK = threading.Lock()
_REGISTRY = None
_PINT = None


def _pint():
    """pint, imported without its dask support.

    pint imports ``dask.base`` at import time when dask is installed (about a
    third of a second), for quantities that wrap dask arrays; here pint only
    reads strings into SI floats, so dask is hidden from it while it is
    imported (unless dask or pint is imported already)."""
    global _PINT
    if _PINT is None:
        if "pint" in sys.modules or "dask" in sys.modules:
            import pint
        else:
            sys.modules["dask"] = None      # find_spec("dask") is then None
            try:
                import pint
            finally:
                if sys.modules.get("dask", False) is None:
                    del sys.modules["dask"]
        _PINT = pint
    return _PINT


def _definitions_file():
    return resources.files("pint") / "default_en.txt"


def cache_key(pint):
    """Name of the cache file: pint's version, Python's, and a hash of pint's
    definitions file and of ``CODATA_DEFINITIONS``."""
    digest = hashlib.sha256()
    digest.update(_definitions_file().read_bytes())
    for line in CODATA_DEFINITIONS:
        digest.update(b"\n" + line.encode())
    version = getattr(pint, "__version__", "unknown")
    python = "{}{}".format(*sys.version_info[:2])
    return f"units-{_CACHE_FORMAT}-pint{version}-py{python}-{digest.hexdigest()[:20]}"


def _parse_definitions(reg):
    """pint's definitions followed by ``CODATA_DEFINITIONS``, parsed, in order."""
    parser = reg._def_parser
    parsed = [parser.parse_file(str(_definitions_file()))]
    parsed += [parser.parse_string(line) for line in CODATA_DEFINITIONS]
    return [d for project in parsed for d in parser.iter_parsed_project(project)]


def _empty_registry(pint):
    return pint.UnitRegistry(filename=None, on_redefinition="ignore")


def _filled(reg, definitions):
    for definition in definitions:
        reg._helper_dispatch_adder(definition)
    reg.default_system = "mks"
    reg.define(GAS_SOUND_SPEED)
    return reg


def build_registry(cache=True):
    """pint's default registry with the constants of ``CODATA_DEFINITIONS``
    and the gas's sound speed ``c_s``.

    The definitions are loaded into an empty registry and the constants
    replaced before any conversion is cached (a registry built with its
    definitions precomputes its conversions, so a later redefinition would
    not reach them).  Parsing pint's definitions file is most of the cost:
    with ``cache`` the parsed definitions are kept in ``cache_dir()`` under
    ``cache_key`` and read back on the next run; a cache that is missing,
    unreadable or does not fill a registry is rebuilt from the files."""
    pint = _pint()
    folder = cache_dir() if cache else None
    if folder is not None:
        key = cache_key(pint)
        path = folder / f"{key}.pickle"
        definitions = _read_cache(path, key)
        if definitions is not None:
            try:
                return _filled(_empty_registry(pint), definitions)
            except Exception:  # noqa: BLE001 - a stale or damaged cache: rebuild
                pass
    reg = _empty_registry(pint)
    definitions = _parse_definitions(reg)
    if folder is not None:
        _write_cache(path, key, definitions)
        _prune_stale(path, f"units-{_CACHE_FORMAT}-")
    return _filled(reg, definitions)


def unit_registry():
    """The one unit registry of the project, built on first use."""
    global _REGISTRY
    if _REGISTRY is None:
        with _LOCK:
            if _REGISTRY is None:
                _REGISTRY = build_registry()
    return _REGISTRY


class _InSoundSpeeds(float):
    """A speed read in units of the gas's sound speed ``c_s`` (the number of
    sound speeds), multiplied by the gas's sound speed when it is known."""


#: strings already read: (text, kind, dimension) -> SI float or _InSoundSpeeds;
#: kept between runs in ``cache_dir()`` beside the definitions (None: not loaded)
_MEMO = None
_MEMO_NEW: dict = {}
#: most strings kept
MEMO_LIMIT = 20000


def memo_key():
    """Name of the file of strings read: a hash of this module's code, of
    ``CODATA_DEFINITIONS`` and of the installed pint (size and time of its
    definitions file and two modules, found without importing it:
    ``probe.cache.installed_stamp``), and Python's version."""
    digest = hashlib.sha256(Path(__file__).read_bytes())
    for line in CODATA_DEFINITIONS:
        digest.update(b"\n" + line.encode())
    stamp = installed_stamp("pint", "__init__.py", "default_en.txt",
                            "facets/plain/registry.py")
    digest.update((stamp or "no pint").encode())
    python = "{}{}".format(*sys.version_info[:2])
    return f"strings-{_CACHE_FORMAT}-py{python}-{digest.hexdigest()[:20]}"


def _memo():
    """The strings read by earlier runs ({} without a cache)."""
    global _MEMO
    if _MEMO is None:
        memo = {}
        folder = cache_dir()
        if folder is not None:
            key = memo_key()
            stored = _read_cache(folder / f"{key}.pickle", key, dict)
            memo = stored if stored is not None else {}
            atexit.register(_save_memo, folder / f"{key}.pickle", key)
        _MEMO = memo
    return _MEMO


def _remembered(value, kind, dimension):
    if not isinstance(value, str):
        return None
    found = _MEMO_NEW.get((value, kind, dimension))
    return found if found is not None else _memo().get((value, kind, dimension))


def _remember(value, kind, dimension, result):
    if isinstance(value, str) and len(_MEMO_NEW) < MEMO_LIMIT:
        _MEMO_NEW[(value, kind, dimension)] = result


def _save_memo(path, key):
    """Add the strings read in this run to the file (merged with what
    another run may have written meanwhile; atomic replacement); beyond
    ``MEMO_LIMIT`` strings the oldest are dropped."""
    if not _MEMO_NEW:
        return
    merged = _read_cache(path, key, dict) or {}
    for item in _MEMO_NEW:
        merged.pop(item, None)
    merged.update(_MEMO_NEW)                    # the newest last
    if len(merged) > MEMO_LIMIT:
        merged = dict(list(merged.items())[-MEMO_LIMIT:])
    _write_cache(path, key, merged)
    _prune_stale(path, f"strings-{_CACHE_FORMAT}-")


def __getattr__(name):
    # ``ureg`` (the registry) is built when first asked for, so that
    # importing this module costs neither pint nor the definitions
    if name == "ureg":
        return unit_registry()
    raise AttributeError(f"module {__name__!r} has no attribute {name!r}")


KINDS = ("length", "speed", "mass", "temperature", "time", "frequency",
         "angular_frequency", "density", "coupling", "dimensionless")

_EXAMPLES = {
    "length": "'5 um'",
    "speed": "'2 mm/s' or '1.5 c_s'",
    "mass": "'86.909 u' or '1.44e-25 kg'",
    "temperature": "'50 nK'",
    "time": "'2 ms'",
    "frequency": "'200 Hz' or '1257 rad/s'",
    "angular_frequency": "'1000 rad/s' or '160 Hz'",
    "density": {1: "'5e7 m^-1'", 2: "'1e14 m^-2'", 3: "'1.2e20 m^-3'"},
    "coupling": {1: "'1e-37 J m'", 2: "'1e-43 J m^2'", 3: "'1e-50 J m^3'"},
    "dimensionless": "'1e-8'",
}

_ALLOWED = {
    "length": "a length (m, um, nm, a0 ...)",
    "speed": "a speed (m/s, mm/s, um/ms ...) or a multiple of the sound speed c_s",
    "mass": "a mass (kg, u ...)",
    "temperature": "an absolute temperature (K, mK, uK, nK)",
    "time": "a time (s, ms, us ...)",
    "frequency": ("an ordinary frequency (Hz, kHz, MHz), an angular frequency "
                  "(rad/s, krad/s) or an energy hbar*Omega (J, eV)"),
    "angular_frequency": ("an angular frequency (rad/s, krad/s) or an ordinary "
                          "frequency (Hz, kHz)"),
    "dimensionless": "a pure number",
}

_OFFSET_UNITS = ("degC", "degF", "celsius", "fahrenheit", "degree_Celsius",
                 "degree_Fahrenheit", "degRe", "reaumur")

# 2 pi as a number: Hz -> rad/s
_TWO_PI = 2.0 * math.pi

_NUMBER_ONLY = re.compile(
    r"^\s*[+-]?(\d+(\.\d*)?|\.\d+)([eE][+-]?\d+)?\s*$")

#: longest quantity string accepted (a guard against pathological input)
MAX_TEXT = 200

# An integer literal (not part of a decimal number, an exponent or a name).
# pint evaluates integer powers exactly, so that '10**10**10 Hz' would build
# an integer of ten billion digits; written as floats the same expression
# overflows at once and is reported as an input error.
_INT_LITERAL = re.compile(r"(?<![\w.])(?<![eE][+-])(\d[\d_]*)(?![\w.])")

#: a temperature difference (delta_degC, delta_degF ...) is not a temperature
_DELTA_UNIT = re.compile(r"\bdelta_?deg|\bdelta_?(celsius|fahrenheit)", re.I)


def example(kind, dimension=None, declared=None):
    """An example value of ``kind`` for messages (``"'5 um'"``); for a
    density or coupling, the one of a ``dimension``-D gas (default 3D).
    ``declared`` is the example of the key being read (TOML text, as in its
    declaration: ``'"5.3 nm"'``, ``"2e5"``): a typical value of that key,
    shown instead where the kind's example does not depend on the gas's
    dimension."""
    ex = _EXAMPLES.get(kind, "")
    if isinstance(ex, dict):
        return ex.get(dimension, ex[3])
    if declared:
        text = str(declared).strip()
        return f"'{text[1:-1]}'" if len(text) > 1 and text[0] == text[-1] == '"' else text
    return ex


def vector_example(kind, declared=None):
    """An example of a vector of ``kind`` for messages: the key's declared
    example (TOML text: ``[1, 0, 0]``, ``["0 um", "2 um", "0 um"]``), else
    plain numbers for a ``"dimensionless"`` vector (a direction) or the two
    forms with a unit of ``kind``."""
    if declared:
        return str(declared).strip()
    if kind == "dimensionless":
        return "[1, 0, 0]"
    unit = re.match(r"'\S+ ([^']+)'", example(kind)).group(1)
    return f'"(1, 0, 0) {unit}" or ["1 {unit}", "0 {unit}", "0 {unit}"]'


def _allowed(kind, dimension=None):
    if kind == "density":
        d = dimension or 3
        return f"a {d}D number density (1/length^{d})"
    if kind == "coupling":
        d = dimension or 3
        return f"an energy times length^{d} (J m^{d}) for a {d}D gas"
    return _ALLOWED[kind]


def _units_text(q):
    """Units of a parsed quantity as written, for messages."""
    return format(q.units, "~") or "no units"


def _unit_names(q):
    """Canonical base names (without prefixes) of the units written in ``q``."""
    names = []
    for name in q._units:          # UnitsContainer: name -> exponent
        for _prefix, base, _suffix in unit_registry().parse_unit_name(name):
            names.append(base)
            break
        else:
            names.append(name)
    return names


def _plain_number(value, key):
    """A number given without units (a dimensionless value) as a finite float."""
    try:
        number = float(value)
    except OverflowError:
        number = math.inf
    if not math.isfinite(number):
        raise InputError(key, f"{value!r} is not finite")
    return number


def _parse(value, key, kind, shown):
    """A pint Quantity from the string ``value``; InputError if impossible
    (``shown``: the example its messages give)."""
    if isinstance(value, bool):
        raise InputError(key, f"expected a quantity with units, got {value!r}")
    if isinstance(value, (int, float, np.integer, np.floating)):
        if kind == "dimensionless":
            return unit_registry().Quantity(_plain_number(value, key))
        raise InputError(
            key, f"{value!r} must carry units, e.g. {shown} "
            "(write the value as a string with its unit)")
    if not isinstance(value, str):
        raise InputError(
            key, f"expected a string with units such as "
            f"{shown}, got {value!r}")
    text = value.strip()
    if not text:
        raise InputError(key, f"is empty; give a value such as "
                              f"{shown}")
    if len(text) > MAX_TEXT:
        raise InputError(key, f"is {len(text)} characters long (at most "
                              f"{MAX_TEXT}); give a value such as "
                              f"{shown}")
    if kind == "temperature" and _DELTA_UNIT.search(text):
        raise InputError(
            key, f"{value!r} is a temperature difference; give an absolute "
            "temperature in K, mK, uK or nK")
    if "," in text:
        raise InputError(key, f"{value!r} looks like a list; a single value "
                              f"such as {shown} is expected")
    if any(re.search(rf"\b{u}\b", text) for u in _OFFSET_UNITS):
        raise InputError(
            key, f"{value!r}: offset temperature scales (degC, degF) are not "
            "accepted; give an absolute temperature in K, mK, uK or nK")
    if kind != "dimensionless" and _NUMBER_ONLY.match(text):
        raise InputError(key, f"{value!r} must carry units, e.g. "
                              f"{shown}")
    pint, ureg = _pint(), unit_registry()
    try:
        q = ureg.parse_expression(_INT_LITERAL.sub(r"\1.0", text))
    except pint.errors.OffsetUnitCalculusError:
        raise InputError(
            key, f"{value!r}: offset temperature scales (degC, degF) are not "
            "accepted; give an absolute temperature in K, mK, uK or nK") from None
    except pint.errors.DimensionalityError as exc:
        raise InputError(key, f"{value!r} mixes incompatible units ({exc})") from None
    except OverflowError:
        raise InputError(key, f"{value!r} is not finite (the number overflows)") from None
    except Exception as exc:  # noqa: BLE001 - pint's parser raises many types
        # (undefined units, syntax and tokenizer errors, assertions on
        # truncated input ...): whatever it is, the string is not a quantity
        why = f" ({exc})" if str(exc) else ""
        raise InputError(key, f"cannot read {value!r} as a quantity{why}; "
                              f"write e.g. {shown}") from None
    try:
        if not isinstance(q, pint.Quantity):
            q = ureg.Quantity(float(q))
        mag = float(q.magnitude)
    except OverflowError:
        raise InputError(key, f"{value!r} is not finite (the number overflows)") from None
    except (TypeError, ValueError):
        raise InputError(key, f"{value!r} is not a single number with units") from None
    if not math.isfinite(mag):
        raise InputError(key, f"{value!r} is not finite")
    return q


def _wrong_dimension(key, value, q, kind, shown, dimension=None):
    return InputError(
        key, f"{value!r} has units of {_units_text(q)} "
        f"({q.dimensionality}) but it must be {_allowed(kind, dimension)}, "
        f"e.g. {shown}")


def _frequency(q, key, value, kind):
    """Angular frequency (rad/s) from a quantity of dimension 1/time."""
    names = _unit_names(q)
    ordinary = "hertz" in names
    root = q.to_root_units()
    angular = "radian" in root._units
    if ordinary and (angular or "pi" in names):
        raise InputError(
            key, f"{value!r} mixes an ordinary frequency (Hz) with an angle or "
            "2 pi; write either '200 Hz' (read as Omega = 2 pi x 200 s^-1) "
            "or the angular frequency in rad/s")
    if ordinary:
        return _TWO_PI * float(q.to("Hz").magnitude)
    if angular:
        return float(q.to("rad/s").magnitude)
    raise InputError(
        key, f"{value!r} is ambiguous: 1/s could be an ordinary or an angular "
        "frequency; write Hz (ordinary, multiplied by 2 pi) or rad/s (angular)")


def parse_quantity(value, key, kind, *, dimension=None, sound_speed=None, declared=None):
    """Return ``value`` (a string with units) as an SI float.

    Parameters
    ----------
    value : str (or a number, for ``kind="dimensionless"`` only)
    key : name of the configuration entry, used in error messages
    kind : one of ``KINDS``.  ``"frequency"`` and ``"angular_frequency"``
        return an angular frequency in rad/s (see the module docstring);
        ``"density"`` returns m^-d and ``"coupling"`` J m^d for
        ``dimension`` d; ``"temperature"`` returns K.
    dimension : 1, 2 or 3, required for ``"density"`` and ``"coupling"``
    sound_speed : m/s; required to read a speed written in ``c_s``
    declared : the key's declared example (TOML text), shown in messages
        (see :func:`example`)

    Raises
    ------
    InputError naming ``key``, the value and what is allowed.
    """
    if kind not in KINDS:
        raise ValueError(f"unknown quantity kind {kind!r}; one of {KINDS}")
    if kind in ("density", "coupling") and dimension not in (1, 2, 3):
        raise InputError(key, f"the gas dimension must be 1, 2 or 3 to read a "
                              f"{kind}, got {dimension!r}")
    if kind == "dimensionless" and isinstance(value, (int, float, np.integer, np.floating)) \
            and not isinstance(value, bool):
        return _plain_number(value, key)
    remembered = _remembered(value, kind, dimension)
    if remembered is None:
        remembered = _read(value, key, kind, dimension,
                           example(kind, dimension, declared))
        _remember(value, kind, dimension, remembered)
    if isinstance(remembered, _InSoundSpeeds):
        if sound_speed is None:
            raise InputError(key, f"{value!r} is given in units of the sound "
                                  "speed c_s, which is not known here; give m/s")
        return float(remembered) * float(sound_speed)
    return remembered


def _read(value, key, kind, dimension, shown):
    """``value`` read by pint as an SI float, or as ``_InSoundSpeeds`` (a
    multiple of the gas's sound speed); ``shown``: the example of messages."""
    q = _parse(value, key, kind, shown)
    dim = q.dimensionality

    if kind == "dimensionless":
        if not q.dimensionless:
            raise _wrong_dimension(key, value, q, kind, shown)
        return float(q.to("dimensionless").magnitude)

    if kind == "speed":
        if dim == unit_registry().c_s.dimensionality:
            return _InSoundSpeeds(q.to("c_s").magnitude)
        if not q.check("[length]/[time]"):
            raise _wrong_dimension(key, value, q, kind, shown)
        return float(q.to("m/s").magnitude)

    if kind in ("frequency", "angular_frequency"):
        if q.check("1/[time]"):
            return _frequency(q, key, value, kind)
        if kind == "frequency" and q.check("[energy]"):
            return float(q.to("J").magnitude) / sc.hbar
        raise _wrong_dimension(key, value, q, kind, shown)

    if kind == "density":
        if q.check(f"1/[length]**{dimension}"):
            return float(q.to(f"1/m**{dimension}").magnitude)
        for k in (1, 2, 3):
            if k != dimension and q.check(f"1/[length]**{k}"):
                raise InputError(
                    key, f"{value!r} is a {k}D density (1/length^{k}) but the "
                    f"gas is {dimension}D; give 1/length^{dimension}, e.g. "
                    f"{shown}")
        raise _wrong_dimension(key, value, q, kind, shown, dimension)

    if kind == "coupling":
        if q.check(f"[energy]*[length]**{dimension}"):
            return float(q.to(f"J*m**{dimension}").magnitude)
        for k in (1, 2, 3):
            if k != dimension and q.check(f"[energy]*[length]**{k}"):
                raise InputError(
                    key, f"{value!r} is a {k}D coupling (energy x length^{k}) "
                    f"but the gas is {dimension}D; give energy x "
                    f"length^{dimension}, e.g. {shown}")
        raise _wrong_dimension(key, value, q, kind, shown, dimension)

    target = {"length": ("[length]", "m"), "mass": ("[mass]", "kg"),
              "temperature": ("[temperature]", "K"),
              "time": ("[time]", "s")}[kind]
    if not q.check(target[0]):
        raise _wrong_dimension(key, value, q, kind, shown)
    return float(q.to(target[1]).magnitude)


_VECTOR_STRING = re.compile(r"^\s*[\(\[]([^()\[\]]*)[\)\]]\s*(.*?)\s*$")


def vector_components(value, key, kind, declared=None):
    """The components of a vector as written: the items of a list, or the
    strings of ``"(1, 0, 0) um"`` (each with the unit); InputError naming
    ``key`` (with an example, ``declared`` if given) for anything else."""
    if isinstance(value, str):
        m = _VECTOR_STRING.match(value)
        if not m:
            raise InputError(key, f"cannot read {value!r} as a vector; write "
                                  f"e.g. {vector_example(kind, declared)}")
        parts, unit = m.group(1), m.group(2)
        items = [p.strip() for p in parts.split(",") if p.strip()]
        if not items:
            raise InputError(key, f"{value!r} has no components")
        if unit:
            return [f"({p}) {unit}" if kind != "dimensionless" else
                    f"({p}) * {unit}" for p in items]
        return items
    if isinstance(value, (list, tuple, np.ndarray)):
        return list(value)
    raise InputError(key, f"expected a list such as {vector_example(kind, declared)}, "
                          f"got {value!r}")


def parse_vector(value, key, kind, *, dimension=None, sound_speed=None,
                 sizes=(1, 2, 3), declared=None):
    """Return a short list of quantities as an SI numpy array.

    ``value`` is a list of strings with units (``["1 um", "0 um", "0 um"]``),
    a string with one unit after a parenthesised tuple (``"(1, 0, 0) um"``),
    or, for ``kind="dimensionless"`` (directions, normals), a list of plain
    numbers (``[1, 0, 0]``).  The number of components must be in ``sizes``;
    ``declared`` is the key's declared example (TOML text), shown in messages.
    """
    components = vector_components(value, key, kind, declared)
    if len(components) not in sizes:
        allowed = " or ".join(str(s) for s in sizes)
        raise InputError(key, f"must have {allowed} components, got "
                              f"{len(components)}: {value!r}")
    out = []
    for i, comp in enumerate(components):
        out.append(parse_quantity(comp, f"{key}[{i}]", kind,
                                  dimension=dimension, sound_speed=sound_speed))
    return np.array(out, dtype=float)
