"""The ``[condensate]`` table: its keys and the :class:`Condensate` they
build, and the cloud the gas fills (``trap``).

Without ``trap`` (or with ``trap = "box"``) the gas is uniform, and
``size`` is the radius of the uniform region (a box's half side).  With
``trap = "harmonic"`` it is a Thomas-Fermi cloud
(:class:`probe.gas.trap.HarmonicTrap`) of ``trap_frequencies`` (one per
free direction, or one for all) holding ``atom_number`` atoms, or of peak
``density``; the uniform :class:`Condensate` of the scenario is then the
gas at the cloud's centre (peak density).
"""
from __future__ import annotations

import numpy as np

from probe.errors import InputError
from probe.gas.condensate import Condensate, too_dense
from probe.gas.dispersion import DISPERSIONS
from probe.gas.trap import HarmonicTrap
from probe.scenarios.keys import Key, Part, unset_hint
from probe.scenarios.units import parse_quantity, parse_vector
from probe.scenarios.values import choice, mass, not_applicable, quantity, require

_S = "condensate"

DIMENSION = Key(_S, "dimension", "3", "the gas's dimension: 1, 2 or 3 (a quasi-1D or "
                "quasi-2D gas is tightly trapped across)", required=True)
SPECIES = Key(_S, "species", '"87Rb"', "isotope of the bosons (mass from the atomic "
              "mass table)", required="this or mass")
MASS = Key(_S, "mass", '"86.909 u"', "boson mass, instead of species", kind="mass",
           required="this or species", label="boson mass", vary=5)
DENSITY = Key(_S, "density", '"1.2e20 m^-3"', "number density per length^dimension "
              "(m^-2 in 2D, m^-1 in 1D); in a harmonic trap the peak density",
              kind="density", required='yes; with trap = "harmonic" this or atom_number',
              label="density $n$", vary=1)
SCATTERING_LENGTH = Key(_S, "scattering_length", '"5.3 nm"', "boson-boson s-wave "
                        "scattering length a (3D)", kind="length", required=True,
                        label="scattering length $a$", vary=2)
TRANSVERSE_FREQUENCY = Key(_S, "transverse_frequency", '"2 kHz"', "frequency of the "
                           "tight harmonic trap across a quasi-2D or quasi-1D gas",
                           kind="frequency", required="for dimension 1 and 2",
                           label=r"transverse trap $\omega_\perp/2\pi$", vary=3)
TEMPERATURE = Key(_S, "temperature", '"50 nK"', "temperature of the gas", kind="temperature",
                  default="0 K", label="temperature $T$", vary=4)
DISPERSION = Key(_S, "dispersion", '"bogoliubov"', "excitation spectrum: Bogoliubov, "
                 "or the linear phonon one (for comparison)", choices=tuple(DISPERSIONS),
                 default="bogoliubov")
SIZE = Key(_S, "size", '"50 um"', "radius of the uniform region about the origin (cloud "
           "radius or half the box side): paths leaving it are warned about, straight "
           "crossings get a transit time", kind="length", required='with trap = "box"',
           vary=6)
TRAP = Key(_S, "trap", '"harmonic"', "the cloud: a box (the uniform gas within size) or "
           "a harmonic trap (a Thomas-Fermi cloud; 'probe passage' follows its local "
           "density)", choices=("box", "harmonic"))
TRAP_FREQUENCIES = Key(_S, "trap_frequencies", '["30 Hz", "30 Hz", "30 Hz"]', "frequencies "
                       "of the harmonic trap: one string for every free direction, or a "
                       "list of one per free direction (3 in 3D, 2 in quasi-2D, 1 in "
                       "quasi-1D); Hz ordinary, rad/s angular", kind="frequency",
                       required='with trap = "harmonic"',
                       label=r"trap frequency $\omega/2\pi$", vary=40)
ATOM_NUMBER = Key(_S, "atom_number", "2e5", "atoms in the harmonic trap (a plain number), "
                  "instead of density (the peak density)", kind="dimensionless",
                  required='with trap = "harmonic": this or density',
                  label="atom number $N$", vary=41)

#: the keys of ``[condensate]``, in the order of the schema
PARTS = (Part(_S, "", (DIMENSION, SPECIES, MASS, DENSITY, SCATTERING_LENGTH,
                       TRANSVERSE_FREQUENCY, TEMPERATURE, DISPERSION, SIZE)),
         Part(_S, "", (TRAP,)),
         Part(_S, 'trap = "harmonic"', (TRAP_FREQUENCIES, ATOM_NUMBER)))

#: the keys only a harmonic trap reads
_HARMONIC_ONLY = (TRAP_FREQUENCIES, ATOM_NUMBER)


def build_condensate(body):
    """``(Condensate, species or None)`` from the ``[condensate]`` table (the
    gas at the centre of a harmonic trap)."""
    cond, species, _ = build_gas(body)
    return cond, species


def build_gas(body):
    """``(Condensate, species or None, trap)`` from the ``[condensate]``
    table: ``trap`` is the :class:`HarmonicTrap` of ``trap = "harmonic"``
    (and the Condensate the gas at its centre), else None."""
    trap = choice(body, TRAP, default="box") if TRAP.name in body else None
    if trap != "harmonic":
        for key in _HARMONIC_ONLY:
            if key.name in body:
                raise InputError(key.dotted, 'used only by a harmonic trap; add '
                                             'trap = "harmonic" (or remove it)')
        if trap == "box":
            require(body, SIZE)
        cond, species = _uniform_gas(body)
        return cond, species, None
    not_applicable(body, _S, {SIZE.name}, "by a harmonic trap (the cloud's extent is "
                                          "its Thomas-Fermi radii)")
    return _harmonic_gas(body)


def _harmonic_gas(body):
    """The Thomas-Fermi cloud of ``trap = "harmonic"`` and its centre."""
    dim = _dimension(body)
    require(body, TRAP_FREQUENCIES)
    frequencies = trap_frequencies(body[TRAP_FREQUENCIES.name], dim)
    both = DENSITY.name in body and ATOM_NUMBER.name in body
    if both or DENSITY.name not in body and ATOM_NUMBER.name not in body:
        raise InputError(ATOM_NUMBER.dotted, "give either atom_number or density (the "
                                             "peak density) for a harmonic trap, not "
                                             "both and not neither"
                         + (unset_hint(ATOM_NUMBER, DENSITY) if both else ""))
    peak = quantity(body, DENSITY, dimension=dim) if DENSITY.name in body else None
    atoms = quantity(body, ATOM_NUMBER) if ATOM_NUMBER.name in body else None
    # the gas's mass and interaction (its density, unused, is set by the trap)
    shape, species = _uniform_gas({**body, DENSITY.name: f"1 m^-{dim}"}, size=False)
    trap = HarmonicTrap(shape, frequencies, atom_number=atoms, peak_density=peak)
    dense = atoms is not None and too_dense(dim, trap.peak_density, shape.scattering_length,
                                            shape.transverse_length)
    if dense:       # name the key that was given: the atom number sets the peak
        raise InputError(ATOM_NUMBER.dotted, f"{atoms:.4g} atoms give the peak density "
                                             f"{trap.peak_density:.4g} m^-{dim}; {dense}")
    centre = trap.centre
    return centre, species, HarmonicTrap(centre, frequencies, peak_density=centre.density)


def unused_notes(body):
    """Warnings on ``[condensate]`` keys that are given but not used (the
    transverse trap of a 3D gas), each naming the key and saying why."""
    if TRANSVERSE_FREQUENCY.name in body and body.get(DIMENSION.name) == 3:
        return [f"{TRANSVERSE_FREQUENCY.dotted} = {body[TRANSVERSE_FREQUENCY.name]!r} is "
                "not used: a 3D gas has no tight transverse trap (it sets the "
                "confinement across a quasi-2D or quasi-1D gas, dimension = 2 or 1); "
                "remove it"]
    return []


def trap_frequencies(value, dimension):
    """The angular trap frequencies (rad/s), one per free direction, from
    one string (every direction) or a list of ``dimension`` of them."""
    key = TRAP_FREQUENCIES.dotted
    if isinstance(value, (list, tuple)):
        if len(value) != dimension:
            raise InputError(key, f"needs one frequency per free direction: "
                                  f"{dimension} in a {dimension}D gas (or one string "
                                  f"for all), got {len(value)}")
        w = parse_vector(value, key, "frequency", sizes=(dimension,),
                         declared=TRAP_FREQUENCIES.example)
    else:
        w = np.full(dimension, parse_quantity(value, key, "frequency"))
    if not np.all(w > 0):
        raise InputError(key, f"must be > 0 in every direction, got "
                              f"{(w / (2 * np.pi)).tolist()} Hz")
    return w


def _dimension(body):
    dim = require(body, DIMENSION)
    if isinstance(dim, bool) or not isinstance(dim, int) or dim not in (1, 2, 3):
        raise InputError(DIMENSION.dotted, f"must be the integer 1, 2 or 3, got {dim!r}")
    return dim


def _uniform_gas(body, size=True):
    """``(Condensate, species or None)`` of a uniform gas (``size``: read
    the uniform region's radius)."""
    dim = _dimension(body)
    boson_mass, species = mass(body, SPECIES, MASS)
    require(body, DENSITY)
    density = quantity(body, DENSITY, dimension=dim)
    a = quantity(body, SCATTERING_LENGTH)
    if dim < 3:
        require(body, TRANSVERSE_FREQUENCY)
    wperp = quantity(body, TRANSVERSE_FREQUENCY)
    if dim == 3:
        wperp = None          # read (a bad value is refused), not used: unused_notes
    temperature = quantity(body, TEMPERATURE)
    dispersion = choice(body, DISPERSION)
    cond = Condensate(dim, boson_mass, density, a, transverse_frequency=wperp,
                      temperature=temperature, dispersion=dispersion,
                      size=quantity(body, SIZE) if size else None)
    return cond, species
