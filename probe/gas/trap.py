"""A harmonically trapped condensate in the Thomas-Fermi approximation.

``V(x) = (m/2) sum_i w_i^2 x_i^2`` over the gas's free directions and the
Thomas-Fermi profile ``n(x) = max(0, (mu - V(x))/g_d)`` (the kinetic energy of
the condensate's shape neglected against its interaction energy; F. Dalfovo,
S. Giorgini, L. P. Pitaevskii, S. Stringari, Rev. Mod. Phys. 71, 463 (1999),
section III.B).  The cloud is an ellipsoid with radii
``R_i = sqrt(2 mu/(m w_i^2))`` and, integrating the profile over it,

    N = (2/(d + 2)) V_d (mu/g_d) prod_i R_i,      V_d = 2, pi, 4 pi/3,

which gives the chemical potential from the atom number:

- 3D: ``mu = (hbar w_bar/2)(15 N a/a_ho)^(2/5)``, ``w_bar = (w_x w_y w_z)^(1/3)``,
  ``a_ho = sqrt(hbar/(m w_bar))`` (Dalfovo et al., eq. 48);
- quasi-2D: ``mu = sqrt(N g_2 m w_x w_y / pi)``;
- quasi-1D: ``mu = (3 N g_1 w_x sqrt(m) / (4 sqrt(2)))^(2/3)``.

Locally the gas is the uniform ``Condensate`` at density ``n(x)``
(the local-density approximation: A. Zambelli, L. Pitaevskii,
D. M. Stamper-Kurn, S. Stringari, PRA 61, 063608 (2000)).
"""
from __future__ import annotations

import math

import numpy as np
from probe import constants as sc

from probe.errors import InputError
from probe.gas.condensate import Condensate

HBAR = sc.hbar
KB = sc.k

_BALL = {1: 2.0, 2: math.pi, 3: 4.0 * math.pi / 3.0}
#: a point on the edge of a cloud (to this relative rounding) is inside it
EDGE_TOLERANCE = 1e-9


class HarmonicTrap:
    """Thomas-Fermi cloud of the uniform gas ``gas`` (its mass, scattering
    length, transverse confinement, temperature and dispersion; its density
    is not used) in a harmonic trap of angular ``frequencies`` (one per free
    direction, rad/s), with either ``atom_number`` or ``peak_density``
    (m^-d) given."""

    def __init__(self, gas, frequencies, atom_number=None, peak_density=None):
        self.gas = gas
        d = gas.dimension
        w = np.atleast_1d(np.asarray(frequencies, float))
        if w.shape != (d,):
            raise InputError("condensate.trap_frequencies",
                             f"needs {d} frequencies for a {d}D gas (one per free "
                             f"direction), got {w.size}")
        if not np.all(np.isfinite(w)) or np.any(w <= 0):
            raise InputError("condensate.trap_frequencies",
                             f"must be finite and > 0, got {w.tolist()} rad/s")
        self.frequencies = w
        if (atom_number is None) == (peak_density is None):
            raise InputError("condensate.atom_number",
                             "give either atom_number or density (the peak density) "
                             "for a trapped gas, not both and not neither")
        g = gas.coupling
        if atom_number is not None:
            n_atoms = float(atom_number)
            if not math.isfinite(n_atoms) or n_atoms <= 0:
                raise InputError("condensate.atom_number", f"must be > 0, got {atom_number!r}")
            self.chemical_potential = (n_atoms / self._number_per_mu_power()) ** (
                1.0 / (1.0 + d / 2.0))
        else:
            n0 = float(peak_density)
            if not math.isfinite(n0) or n0 <= 0:
                raise InputError("condensate.density", f"must be > 0, got {peak_density!r}")
            self.chemical_potential = g * n0

    def _number_per_mu_power(self):
        """C in N = C mu^(1 + d/2)."""
        d, m, g = self.gas.dimension, self.gas.mass, self.gas.coupling
        radii_per_sqrt_mu = np.sqrt(2.0 / (m * self.frequencies ** 2))
        return 2.0 / (d + 2) * _BALL[d] / g * float(np.prod(radii_per_sqrt_mu))

    # --- derived ------------------------------------------------------------
    @property
    def dimension(self):
        return self.gas.dimension

    @property
    def peak_density(self):
        return self.chemical_potential / self.gas.coupling

    @property
    def atom_number(self):
        d = self.gas.dimension
        return self._number_per_mu_power() * self.chemical_potential ** (1 + d / 2)

    @property
    def radii(self):
        """Thomas-Fermi radii R_i = sqrt(2 mu/(m w_i^2)), m."""
        return np.sqrt(2 * self.chemical_potential / (self.gas.mass * self.frequencies ** 2))

    @property
    def centre(self):
        """The uniform gas at the peak density."""
        return self.local_gas(self.peak_density)

    def potential(self, x):
        """V(x) for positions ``x`` of shape (..., d), J."""
        x = np.asarray(x, float)
        return 0.5 * self.gas.mass * np.sum((self.frequencies * x[..., :self.dimension]) ** 2,
                                            axis=-1)

    def density(self, x):
        """Thomas-Fermi density n(x) = max(0, (mu - V(x))/g_d), m^-d."""
        return np.maximum(0.0, self.chemical_potential - self.potential(x)) / self.gas.coupling

    def density_gradient(self, x):
        """grad n(x) inside the cloud (zero outside), m^-d-1, shape (..., d)."""
        x = np.asarray(x, float)[..., :self.dimension]
        inside = (self.density(x) > 0)[..., None]
        return np.where(inside, -self.gas.mass * self.frequencies ** 2 * x / self.gas.coupling,
                        0.0)

    def local_gas(self, density):
        """The uniform gas at ``density`` (m^-d): the local-density picture."""
        g = self.gas
        return Condensate(g.dimension, g.mass, density, g.scattering_length,
                          transverse_frequency=g.transverse_frequency,
                          temperature=g.temperature, dispersion=g.dispersion)

    def passing_text(self, closest):
        """How far a straight path that misses the cloud passes the centre
        (``closest`` in units of the radii), in words."""
        return (f"it passes the centre at {closest:.4g} Thomas-Fermi radii (the cloud's "
                f"edge is at 1; radii {', '.join(f'{r * 1e6:.4g}' for r in self.radii)} um)")

    def summary(self):
        centre = self.centre
        return {"chemical_potential": self.chemical_potential,
                "peak_density": self.peak_density,
                "thomas_fermi_radii": self.radii.tolist(),
                "atom_number": self.atom_number,
                "sound_speed": centre.sound_speed,
                "healing_length": centre.healing_length}


class UniformBox:
    """The uniform gas ``gas`` within the radius ``gas.size`` of the origin
    (a box's uniform region) and nothing outside: a cloud with the interface
    of :class:`HarmonicTrap` that a passage uses."""

    def __init__(self, gas):
        self.gas = gas
        self.dimension = gas.dimension
        self.radii = np.full(gas.dimension, float(gas.size))
        self.peak_density = gas.density
        self.centre = gas

    def density(self, x):
        """n inside the ball sum x_i^2 <= size^2 (its surface included, to
        rounding), 0 outside, m^-d."""
        x = np.asarray(x, float)[..., :self.dimension]
        inside = np.sum((x / self.radii) ** 2, axis=-1) <= 1.0 + EDGE_TOLERANCE
        return np.where(inside, self.gas.density, 0.0)

    def density_gradient(self, x):
        """Zero: the gas is uniform wherever it is."""
        x = np.asarray(x, float)[..., :self.dimension]
        return np.zeros_like(x)

    def local_gas(self, density):
        """The box's gas (the only density it holds, ``density``)."""
        return self.gas

    def passing_text(self, closest):
        """How far a straight path that misses the box passes the centre."""
        return (f"it passes the centre at {closest * self.radii[0] * 1e6:.4g} um, outside "
                f"the box (condensate.size = {self.radii[0] * 1e6:.4g} um)")
