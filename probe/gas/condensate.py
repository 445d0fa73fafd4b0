"""The uniform, weakly interacting Bose gas in d = 1, 2 or 3 dimensions.

All quantities are plain SI floats.  Reduced dimensions assume tight harmonic
confinement of angular frequency ``transverse_frequency`` in each frozen
direction:

* quasi-2D: ``g_2 = g_3 / (sqrt(2 pi) l_z)`` (Petrov, Holzmann, Shlyapnikov,
  PRL 84, 2551 (2000), weak-coupling limit ``a << l_z``);
* quasi-1D: ``g_1 = 2 hbar w_perp a`` (Olshanii, PRL 81, 938 (1998), limit
  ``a << l_perp``),

with ``g_3 = 4 pi hbar^2 a / m`` and ``l = sqrt(hbar / (m w_perp))``.

Printed healing length convention: ``xi = hbar / (m c)`` with
``c = sqrt(mu / m)`` and ``mu = g_d n``.
"""
from __future__ import annotations

import math

import numpy as np
from probe import constants as sc

from probe.gas.dispersion import DISPERSIONS, Dispersion
from probe.errors import InputError

HBAR = sc.hbar
KB = sc.k
#: Riemann zeta(3/2), the ideal Bose gas's critical density n lambda_T^3 at T_c
#: (tests/test_constants.py checks it against scipy.special.zeta)
_ZETA_3_2 = 2.612375348685488343348567567
#: n a^3 at or above this (one atom per scattering-length cube, with n the 3D
#: density at the centre) is no dilute gas at all: refused, not warned about
#: (the regime checks warn from n a^3 > 1e-3 on)
DENSE_LIMIT = 1.0


def _positive(key, value, allow_zero=False):
    """``value`` as a finite float, > 0 (or >= 0); InputError naming ``key``.

    Booleans and strings are refused: the library takes SI numbers (strings
    with units are for the configuration reader, ``probe.units``)."""
    if isinstance(value, (bool, np.bool_)) or isinstance(value, (str, bytes)):
        raise InputError(key, f"must be a number in SI units, got {value!r} "
                              "(strings with units are read by probe.config)")
    try:
        v = float(value)
    except (TypeError, ValueError, OverflowError):
        raise InputError(key, f"must be a number, got {value!r}") from None
    if not math.isfinite(v):
        raise InputError(key, f"must be finite, got {v}")
    if v < 0 or (v == 0 and not allow_zero):
        allowed = ">= 0" if allow_zero else "> 0"
        raise InputError(key, f"must be {allowed}, got {v}")
    return v


def centre_density_3d(dimension, density, transverse_length):
    """The 3D density at the centre, m^-3: ``density`` in 3D; in a quasi-2D
    (quasi-1D) gas n / (sqrt(pi) l)^(3 - d), the density at the centre of
    the transverse ground state |phi_0(0)|^2 = 1/(sqrt(pi) l) of each frozen
    direction (oscillator length ``transverse_length`` l)."""
    if dimension == 3:
        return density
    return density / (math.sqrt(math.pi) * transverse_length) ** (3 - dimension)


def too_dense(dimension, density, scattering_length, transverse_length=None):
    """What was computed, in words, when the 3D density at the centre
    (:func:`centre_density_3d`) holds one atom or more per scattering-length
    cube (n a^3 >= ``DENSE_LIMIT``: no gas that Bogoliubov theory
    describes); else None."""
    try:
        n3 = centre_density_3d(dimension, density, transverse_length)
        na3 = n3 * scattering_length**3
    except (OverflowError, ZeroDivisionError):
        n3 = na3 = math.inf
    if na3 < DENSE_LIMIT:
        return None
    d = dimension
    where = ("" if d == 3 else
             f", with n the 3D density at the centre of the transverse ground state, "
             f"n_{d}/(sqrt(pi) l)^{3 - d} = {n3:.4g} m^-3 (oscillator length "
             f"l = {transverse_length * 1e6:.4g} um)")
    return (f"the density {density:.4g} m^-{d} and the scattering length "
            f"a = {scattering_length * 1e9:.4g} nm give n a^3 = {na3:.4g}{where}: "
            f"one atom or more per scattering-length cube (n a^3 >= {DENSE_LIMIT:g}) is "
            "no dilute gas at all")


class Condensate:
    """Homogeneous Bogoliubov gas.

    Parameters
    ----------
    dimension : 1, 2 or 3
    mass : boson mass, kg
    density : number density, m^-dimension
    scattering_length : s-wave scattering length a (3D), m; > 0
    transverse_frequency : angular frequency of the transverse confinement,
        rad/s (required for dimension < 3)
    temperature : K (default 0)
    dispersion : "bogoliubov" (default) or "phonon"
    size : optional radius of the region around the origin where the gas is
        uniform, m (the cloud radius, or half the side of a box); only used
        to warn when a probe path leaves it and to time a straight transit
    """

    def __init__(self, dimension, mass, density, scattering_length,
                 transverse_frequency=None, temperature=0.0,
                 dispersion="bogoliubov", size=None):
        if (isinstance(dimension, (bool, np.bool_))
                or not isinstance(dimension, (int, np.integer))
                or dimension not in (1, 2, 3)):
            raise InputError("condensate.dimension",
                             f"must be the integer 1, 2 or 3, got {dimension!r}")
        self.dimension = int(dimension)
        self.mass = _positive("condensate.mass", mass)
        self.density = _positive("condensate.density", density)
        self.scattering_length = _positive("condensate.scattering_length",
                                           scattering_length)
        self.temperature = _positive("condensate.temperature", temperature,
                                     allow_zero=True)
        if self.dimension < 3:
            if transverse_frequency is None:
                raise InputError(
                    "condensate.transverse_frequency",
                    f"is required for a {self.dimension}D gas (the frequency "
                    "of the tight transverse trap, e.g. '2 kHz')")
            self.transverse_frequency = _positive(
                "condensate.transverse_frequency", transverse_frequency)
        else:
            self.transverse_frequency = (
                None if transverse_frequency is None else
                _positive("condensate.transverse_frequency",
                          transverse_frequency))
        self.size = None if size is None else _positive("condensate.size", size)
        if isinstance(dispersion, Dispersion):
            self.dispersion = dispersion
        else:
            if not isinstance(dispersion, str) or dispersion not in DISPERSIONS:
                raise InputError(
                    "condensate.dispersion",
                    f"must be one of {sorted(DISPERSIONS)}, got {dispersion!r}")
            self.dispersion = DISPERSIONS[dispersion]()
        self._check_dilute()
        self._check_scales()

    def _check_dilute(self):
        """InputError naming ``condensate.density`` when the gas is too
        dense to be a dilute gas at all (:func:`too_dense`): most often a
        density written in the wrong unit.  Raised before any other check,
        which would blame a key derived from this density."""
        why = too_dense(self.dimension, self.density, self.scattering_length,
                        self.transverse_length)
        if why:
            raise InputError("condensate.density",
                             f"{why}; check the density's unit (m^-{self.dimension} "
                             f"in a {self.dimension}D gas)")

    def _check_scales(self):
        """InputError unless mu, c, xi and c/xi are finite and positive in
        double precision (a density of 1e-320 m^-3 would make c underflow)."""
        try:
            scales = {"chemical potential": self.chemical_potential,
                      "sound speed": self.sound_speed,
                      "healing length": self.healing_length,
                      "frequency unit c/xi": self.frequency_unit}
        except (ZeroDivisionError, OverflowError, ValueError):
            scales = None
        if scales is None or not all(math.isfinite(v) and v > 0 for v in scales.values()):
            shown = ("cannot be formed" if scales is None else
                     ", ".join(f"{k} {v:.3g}" for k, v in scales.items()))
            raise InputError(
                "condensate",
                f"the gas's scales are not finite positive numbers ({shown}) for "
                f"density {self.density:.3g} m^-{self.dimension}, mass "
                f"{self.mass:.3g} kg, scattering length {self.scattering_length:.3g} m"
                + ("" if self.transverse_frequency is None else
                   f", transverse frequency {self.transverse_frequency:.3g} rad/s")
                + ": these inputs are outside the range of double precision")

    # --- derived quantities -------------------------------------------------
    @property
    def centre_density_3d(self):
        """The 3D density at the centre, m^-3 (:func:`centre_density_3d`)."""
        return centre_density_3d(self.dimension, self.density, self.transverse_length)

    @property
    def transverse_length(self):
        """Oscillator length sqrt(hbar/(m w_perp)) of the frozen directions, m."""
        if self.transverse_frequency is None:
            return None
        return math.sqrt(HBAR / (self.mass * self.transverse_frequency))

    @property
    def g3(self):
        """3D contact coupling 4 pi hbar^2 a / m, J m^3."""
        return 4 * math.pi * HBAR**2 * self.scattering_length / self.mass

    @property
    def coupling(self):
        """Contact coupling g_d of the gas in its own dimension, J m^d."""
        if self.dimension == 3:
            return self.g3
        if self.dimension == 2:
            return self.g3 / (math.sqrt(2 * math.pi) * self.transverse_length)
        return 2 * HBAR * self.transverse_frequency * self.scattering_length

    @property
    def chemical_potential(self):
        """mu = g_d n, J."""
        return self.coupling * self.density

    @property
    def sound_speed(self):
        """Bogoliubov sound speed c = sqrt(mu/m), m/s."""
        return math.sqrt(self.chemical_potential / self.mass)

    @property
    def healing_length(self):
        """xi = hbar / (m c), m (the convention used throughout)."""
        return HBAR / (self.mass * self.sound_speed)

    @property
    def frequency_unit(self):
        """mc^2/hbar = c/xi, rad/s: the natural frequency of the gas."""
        return self.sound_speed / self.healing_length

    @property
    def energy_unit(self):
        """m c^2 = mu, J."""
        return self.mass * self.sound_speed**2

    @property
    def gas_parameter(self):
        """Diluteness: n a^3 (3D), the 2D coupling g_2 m / hbar^2 (quasi-2D),
        the Lieb-Liniger parameter gamma = m g_1 / (hbar^2 n) (quasi-1D)."""
        if self.dimension == 3:
            return self.density * self.scattering_length**3
        if self.dimension == 2:
            return self.coupling * self.mass / HBAR**2
        return self.mass * self.coupling / (HBAR**2 * self.density)

    @property
    def gas_parameter_name(self):
        return {3: "n a^3", 2: "g_2 m / hbar^2", 1: "Lieb-Liniger gamma"}[
            self.dimension]

    @property
    def critical_temperature(self):
        """Ideal-gas condensation temperature of the 3D gas at this density,
        K (None in reduced dimensions, where no true BEC transition exists)."""
        if self.dimension != 3:
            return None
        return (2 * math.pi * HBAR**2 / (self.mass * KB)
                * (self.density / _ZETA_3_2) ** (2 / 3))

    @property
    def degeneracy_temperature(self):
        """hbar^2 n^(2/d) / (m k_B), K: the scale below which the gas is
        degenerate in any dimension."""
        return HBAR**2 * self.density ** (2 / self.dimension) / (self.mass * KB)

    def thermal_occupation(self, omega):
        """Bose occupation 1/(exp(hbar w/k_B T) - 1) of modes of angular
        frequency ``omega`` (array), zero at T = 0."""
        omega = np.asarray(omega, dtype=float)
        if self.temperature == 0:
            return np.zeros_like(omega)
        x = HBAR * omega / (KB * self.temperature)
        with np.errstate(over="ignore", divide="ignore"):
            return 1.0 / np.expm1(x)

    def summary(self):
        """Derived quantities as a dict of SI floats."""
        return {
            "dimension": self.dimension,
            "chemical_potential": self.chemical_potential,
            "sound_speed": self.sound_speed,
            "healing_length": self.healing_length,
            "gas_parameter": self.gas_parameter,
            "coupling_g": self.coupling,
            "dispersion": self.dispersion.name,
        }
