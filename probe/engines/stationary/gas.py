"""The gas and probe as the kernels see them: dimensionless (q = k xi,
frequencies in c/xi, temperature k_B T / (m c^2), widths in xi)."""
from __future__ import annotations

import math

import numpy as np
from probe import constants as sc

from probe.engines.stationary.limits import CUT


class KernelGas:
    """Dimensionless description of the gas and probe shared by kernels:
    the dispersion, the dimension d, the probe width s/xi and the
    temperature k_B T/(m c^2)."""

    def __init__(self, dispersion, d, width, temperature):
        self.disp = dispersion
        self.d = d
        self.s = np.asarray(width, float)       # s / xi
        self.T = float(temperature)             # k_B T / (m c^2)

    def form(self, q, s):
        """|F|^2 = exp(-(q s)^2), the Gaussian probe's form factor."""
        # (q s)^2 may overflow for absurd widths: exp(-inf) = 0 is the answer
        with np.errstate(over="ignore"):
            return np.exp(-(q * s) ** 2)

    def occupation(self, q):
        """Bose occupation n_k = 1/(exp(w_k/T) - 1) (0 at T = 0)."""
        if self.T == 0:
            return np.zeros_like(q)
        with np.errstate(over="ignore", divide="ignore"):
            return 1.0 / np.expm1(self.disp.omega(q) / self.T)

    def qcut(self, s):
        """q beyond which |F|^2 < exp(-CUT) (inf for a point probe)."""
        with np.errstate(divide="ignore"):
            return np.where(s > 0, math.sqrt(CUT) / np.where(s > 0, s, 1), np.inf)

    def weights(self, q, tag):
        """Weight factor of the integrand: 'plain' (1), 'thermal' (n_k) or
        'energy' (w_k)."""
        if tag == "plain":
            return np.ones_like(q)
        if tag == "thermal":
            return self.occupation(q)
        if tag == "energy":
            return self.disp.omega(q)
        raise ValueError(tag)


def kernel_gas(condensate, probe):
    """The :class:`KernelGas` of an SI condensate and probe model."""
    return KernelGas(condensate.dispersion, condensate.dimension,
                     probe.width / condensate.healing_length,
                     sc.k * condensate.temperature / condensate.energy_unit)
