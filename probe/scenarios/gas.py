"""The ``[condensate]`` table: its keys and the :class:`Condensate` they
build."""
from __future__ import annotations

from probe.errors import InputError
from probe.gas.condensate import Condensate
from probe.gas.dispersion import DISPERSIONS
from probe.scenarios.keys import Key, Part
from probe.scenarios.values import choice, mass, quantity, require

_S = "condensate"

DIMENSION = Key(_S, "dimension", "3", "the gas's dimension: 1, 2 or 3 (a quasi-1D or "
                "quasi-2D gas is tightly trapped across)", required=True)
SPECIES = Key(_S, "species", '"87Rb"', "isotope of the bosons (mass from the atomic "
              "mass table)", required="this or mass")
MASS = Key(_S, "mass", '"86.909 u"', "boson mass, instead of species", kind="mass",
           required="this or species", label="boson mass", vary=5)
DENSITY = Key(_S, "density", '"1.2e20 m^-3"', "number density per length^dimension "
              "(m^-2 in 2D, m^-1 in 1D)", kind="density", required=True,
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
           "crossings get a transit time", kind="length", vary=6)

#: the keys of ``[condensate]``, in the order of the schema
PARTS = (Part(_S, "", (DIMENSION, SPECIES, MASS, DENSITY, SCATTERING_LENGTH,
                       TRANSVERSE_FREQUENCY, TEMPERATURE, DISPERSION, SIZE)),)


def build_condensate(body):
    """``(Condensate, species or None)`` from the ``[condensate]`` table."""
    dim = require(body, DIMENSION)
    if isinstance(dim, bool) or not isinstance(dim, int) or dim not in (1, 2, 3):
        raise InputError(DIMENSION.dotted, f"must be the integer 1, 2 or 3, got {dim!r}")
    boson_mass, species = mass(body, SPECIES, MASS)
    density = quantity(body, DENSITY, dimension=dim)
    a = quantity(body, SCATTERING_LENGTH)
    if dim < 3:
        require(body, TRANSVERSE_FREQUENCY)
    wperp = quantity(body, TRANSVERSE_FREQUENCY)
    temperature = quantity(body, TEMPERATURE)
    dispersion = choice(body, DISPERSION)
    size = quantity(body, SIZE)
    cond = Condensate(dim, boson_mass, density, a, transverse_frequency=wperp,
                      temperature=temperature, dispersion=dispersion, size=size)
    return cond, species
