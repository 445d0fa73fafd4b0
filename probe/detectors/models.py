"""Probe models: how the impurity couples to the density of the gas.

The interaction is ``H = kappa chi(t) sigma_x int d^dx rho_p(x - x(t)) drho(x)``
with ``rho_p`` a normalised isotropic Gaussian of rms width ``s`` per direction,
whose form factor is ``|F(k)|^2 = exp(-k^2 s^2)``.

A model declares its capabilities (``has_gap``) and the engine acts on those;
a new model is one small subclass.
"""
from __future__ import annotations

import math

import numpy as np
from scipy import constants as sc

from probe.errors import InputError

HBAR = sc.hbar


def _number(key, value):
    """``value`` as a float; InputError for booleans, strings and non-numbers
    (the library takes SI numbers; strings with units are for probe.config)."""
    if isinstance(value, (bool, np.bool_, str, bytes)):
        raise InputError(key, f"must be a number in SI units, got {value!r} "
                              "(strings with units are read by probe.config)")
    try:
        return float(value)
    except (TypeError, ValueError, OverflowError):
        raise InputError(key, f"must be a number, got {value!r}") from None


def _nonneg(key, value, allow_zero=True):
    v = _number(key, value)
    if not math.isfinite(v):
        raise InputError(key, f"must be finite, got {v}")
    if v < 0 or (v == 0 and not allow_zero):
        raise InputError(key, f"must be {'>= 0' if allow_zero else '> 0'}, got {v}")
    return v


def coupling_from_scattering_length(a_pb, boson_mass, probe_mass, condensate,
                                    width=0.0):
    """Probe-boson coupling kappa_d (J m^d) from the probe-boson s-wave
    scattering length ``a_pb`` (m, may be negative).

    3D: ``kappa_3 = 2 pi hbar^2 a_pb / m_r`` with the reduced mass
    ``m_r = m m_p/(m + m_p)``.  In a quasi-2D (quasi-1D) gas each frozen
    direction contributes the overlap of the condensate's transverse Gaussian
    (variance ``l^2/2``, ``l = sqrt(hbar/(m w_perp))``) with the probe's
    (variance ``s^2``): ``1/sqrt(2 pi (l^2/2 + s^2))``.  With ``s^2 = l^2/2``
    and equal masses this reproduces the gas's own g_2 (Petrov-Holzmann-
    Shlyapnikov 2000) and g_1 (Olshanii 1998) reductions.
    """
    a_pb = _number("probe.coupling_length", a_pb)
    if not math.isfinite(a_pb):
        raise InputError("probe.coupling_length", f"must be finite, got {a_pb}")
    m_p = _nonneg("probe.mass", probe_mass, allow_zero=False)
    m = _nonneg("condensate.mass", boson_mass, allow_zero=False)
    width = _nonneg("probe.width", width)
    m_r = m * m_p / (m + m_p)
    kappa3 = 2 * math.pi * HBAR**2 * a_pb / m_r
    d = condensate.dimension
    if d == 3:
        return kappa3
    l = condensate.transverse_length
    overlap_1 = 1.0 / math.sqrt(2 * math.pi * (0.5 * l * l + width * width))
    return kappa3 * overlap_1 ** (3 - d)


class ProbeModel:
    """Common work: coupling, width and the Gaussian form factor.

    Parameters
    ----------
    coupling : kappa in J m^d (the gas's dimension), any sign
    width : rms width s of the probe density per direction, m (0: point)
    """

    name = "base"
    #: True when the probe has an internal gap and makes up/down transitions
    has_gap = False

    def __init__(self, coupling, width=0.0):
        c = _number("probe.coupling", coupling)
        if not math.isfinite(c) or c == 0:
            raise InputError("probe.coupling",
                             f"must be finite and nonzero, got {coupling!r}")
        self.coupling = c
        self.width = _nonneg("probe.width", width)

    @property
    def gap(self):
        """Angular gap frequency Omega, rad/s (0 for a structureless probe)."""
        return 0.0

    def form_factor_sq(self, k):
        """|F(k)|^2 = exp(-k^2 s^2) for wavenumber ``k`` (1/m)."""
        k = np.asarray(k, float)
        return np.exp(-(k * self.width) ** 2)

    def describe(self):
        return {"model": self.name, "coupling": self.coupling,
                "width": self.width, "gap": self.gap}


class TwoLevelProbe(ProbeModel):
    """Two-level (Unruh-DeWitt-type) detector with gap hbar*Omega coupled
    through sigma_x to the density: it is excited ("up") or de-excited
    ("down") by emitting or absorbing Bogoliubov quanta (Unruh, PRD 14, 870
    (1976); Birrell and Davies, *Quantum Fields in Curved Space*, 1982).

    ``gap`` is the angular frequency Omega in rad/s (a gap of 200 Hz is
    Omega = 2 pi x 200 s^-1).
    """

    name = "two-level"
    has_gap = True

    def __init__(self, gap, coupling, width=0.0):
        super().__init__(coupling, width)
        if isinstance(gap, (bool, np.bool_, str, bytes)):
            raise InputError("probe.gap", f"must be an angular frequency in rad/s "
                                          f"(a number or an array), got {gap!r}")
        try:
            g = np.asarray(gap, dtype=float)
        except (TypeError, ValueError, OverflowError):
            raise InputError("probe.gap", f"must be a number or an array of "
                                          f"numbers (rad/s), got {gap!r}") from None
        if g.size == 0:
            raise InputError("probe.gap", "must not be empty")
        if not np.all(np.isfinite(g)) or np.any(g <= 0):
            raise InputError("probe.gap", f"must be finite and > 0, got {gap!r}")
        self._gap = g if g.ndim else float(g)

    @property
    def gap(self):
        return self._gap


class DensityProbe(ProbeModel):
    """Structureless impurity (sigma_x -> 1, Omega -> 0): emits phonons when
    it moves faster than sound (Landau criterion) and feels a drag force
    (Astrakharchik and Pitaevskii, PRA 70, 013608 (2004))."""

    name = "density"
    has_gap = False


PROBE_MODELS = {"two-level": TwoLevelProbe, "density": DensityProbe}
