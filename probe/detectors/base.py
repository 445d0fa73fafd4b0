"""What every probe model shares, and the interface through which the
engines talk to a model without knowing which one it is.

The interaction is ``H = kappa chi(t) O int d^dx rho_p(x - x(t)) drho(x)``
with ``rho_p`` a normalised isotropic Gaussian of rms width ``s`` per
direction, whose form factor is ``|F(k)|^2 = exp(-k^2 s^2)``, and ``O`` the
probe operator of the model (``sigma_x`` for a two-level detector, 1 for a
structureless impurity).

A model owns its physics:

- ``channels(gap)``: the golden-rule integrals it needs, each a
  :class:`Channel` (a coupling and a detuning; the engines evaluate the up and
  down processes of a channel with detuning > 0, and the emission, absorption
  and emitted power of one with detuning 0);
- ``rate_results(raw, context)`` and ``transit_results(raw, context)``: how
  the channel results combine into its outputs, named in the quantity
  registry (``probe.quantities``) and listed in ``rate_outputs`` and
  ``transit_outputs``;
- ``array_keys``: the configuration keys that the engines take as arrays
  (broadcast with speed and radius);
- ``regime_warnings(condensate, result)``: the checks of validity that
  belong to the model, and ``rate_output_warnings(condensate, result)``:
  its notes on its stationary outputs (placed after the gas's checks).

A new model is one module with one subclass, and one line in
``probe.detectors.PROBE_MODELS``.
"""
from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from probe import constants as sc

from probe.errors import InputError
from probe.scenarios.keys import Key

HBAR = sc.hbar
KB = sc.k


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



#: |a| above this fraction of the healing length leaves the linear (Born)
#: coupling to the density (common practice: 0.1)
LENGTH_OVER_XI_LIMIT = 0.1


def scattering_length_warnings(probe, condensate):
    """Scattering lengths (``probe.scattering_lengths``, kept by a probe
    built from them: ``coupling_length``, or a dressed or Ramsey probe's
    states) not small against the healing length: the probe's coupling to
    the density is then no longer linear (Born approximation)."""
    lengths = getattr(probe, "scattering_lengths", None)
    if not lengths:
        return []
    xi = condensate.healing_length
    big = max(abs(a) for a in lengths)
    if big <= LENGTH_OVER_XI_LIMIT * xi:
        return []
    return [f"an impurity-boson scattering length ({big * 1e9:.4g} nm) is not small "
            f"against the healing length ({xi * 1e9:.4g} nm; limit "
            f"{LENGTH_OVER_XI_LIMIT} xi): the coupling to the density is beyond the "
            "linear (Born) picture the model assumes"]


@dataclass(frozen=True)
class Channel:
    """One golden-rule integral the engines evaluate for a probe model.

    ``label`` names the channel in the raw results handed back to the model;
    ``detuning`` is the probe's transition frequency Omega (rad/s, a number or
    an array; 0 for a structureless coupling); ``coupling`` is kappa (J m^d);
    ``key`` is the configuration key to name in messages about the detuning.
    """

    label: str
    detuning: object
    coupling: float
    key: str = "probe.gap"

    @property
    def gapped(self):
        """True when the channel has up and down processes (detuning > 0)."""
        return bool(np.all(np.asarray(self.detuning, float) > 0))


@dataclass
class RateContext:
    """What a model needs besides the raw channel results to form its outputs
    (flattened arrays of the broadcast grid, SI).

    ``kind`` is the stationary motion ("inertial" or "circular"); ``speed``
    (m/s); ``detuning`` maps channel labels to their detunings (rad/s);
    ``up_cannot_vanish``: where an up rate of 0 can only be an underflow (a
    warm gas, or circular motion)."""

    kind: str
    condensate: object
    speed: np.ndarray
    detuning: dict
    up_cannot_vanish: object = False


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
    #: the outputs of stationary rates and of finite transits (names in
    #: ``probe.quantities.QUANTITIES``)
    rate_outputs: tuple = ()
    transit_outputs: tuple = ()
    #: configuration keys the engines take as arrays -> engine argument name
    array_keys: dict = {}

    # --- scenario keys (read by probe.scenarios.detector) ---------------------
    #: the keys of ``[probe]`` that every model reads: the coupling kappa
    #: (given, or formed from a probe-boson scattering length with the
    #: probe's mass) and the width
    common_config_keys = (
        Key("probe", "coupling_length", '"5 nm"', "probe-boson s-wave scattering "
            "length a_pb (any sign): kappa = 2 pi hbar^2 a_pb / m_r (reduced mass), "
            "divided by the transverse overlap in a quasi-2D or quasi-1D gas",
            kind="length", required="this or coupling",
            label="probe-boson scattering length $a_{pb}$", vary=8),
        Key("probe", "coupling", '"1e-50 J m^3"', "the coupling kappa itself (energy "
            "x length^dimension), instead of coupling_length", kind="coupling",
            required="this or coupling_length", label=r"coupling $\kappa$", vary=9),
        Key("probe", "mass", '"86.909 u"', "probe mass for the reduced mass with "
            "coupling_length (default: the boson mass)", kind="mass",
            label="probe mass", vary=10),
        Key("probe", "species", '"87Rb"', "probe isotope (its mass), instead of mass "
            "(default: the gas's species)"),
        Key("probe", "width", '"0 um"', "rms width of the Gaussian probe density per "
            "direction (0: a point probe)", kind="length", default="0 um",
            label="probe width $s$", vary=11),
        Key("probe", "tweezer_frequency", '"20 kHz"', "trap frequency of the tweezer "
            "holding the probe, instead of width: the width becomes the rms width of "
            "the tweezer's ground-state density, sqrt(hbar/(2 m_p w))", kind="frequency",
            label=r"tweezer frequency $\omega_\mathrm{tw}/2\pi$", vary=22),
    )
    #: the common keys that form the single coupling kappa (a model with
    #: couplings of its own leaves them out of ``coupling_config_keys``)
    coupling_config_keys = ("coupling_length", "coupling")
    #: the keys of ``[probe]`` that this model alone reads (by name in the
    #: values handed to ``from_config``)
    config_keys: tuple = ()
    #: keys of other models that this one does not read -> why (for the
    #: message that asks to remove them)
    unused_config_keys: dict = {}

    @classmethod
    def from_config(cls, values, condensate):
        """The model from the parsed values of a scenario's ``[probe]``
        table (SI): ``coupling`` (kappa, J m^d), ``width`` (m), ``mass`` (kg
        of the probe; None with an explicit coupling) and the model's own
        ``config_keys`` by name; ``condensate`` is the gas."""
        return cls(values["coupling"], values["width"])

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
        """The model's parameters (SI; ``gap`` None for a probe without one)."""
        return {"model": self.name, "gap": self.gap if self.has_gap else None,
                "coupling": self.coupling, "width": self.width}

    # --- the interface to the engines ----------------------------------------
    def channels(self, gap=None):
        """The :class:`Channel` s the engines evaluate; ``gap`` (rad/s)
        replaces the configured gap where the model has one."""
        raise NotImplementedError

    def rate_results(self, raw, context):
        """Outputs (name -> SI array) from the raw stationary channel results:
        ``raw[label]`` maps process names to ``(value, error)`` in SI (``up``,
        ``down`` in 1/s for a channel with a detuning; ``emission``,
        ``absorption`` in 1/s and ``power`` in W for one without)."""
        raise NotImplementedError

    def transit_results(self, raw, context=None):
        """Outputs of a finite transit from the raw channel probabilities
        (``raw[label]``: ``up``, ``down`` as ``(P, error)`` and
        ``up_emission``, ``down_emission`` for a channel with a detuning;
        ``emission`` as ``(N, error)`` and ``absorption`` without one; and
        ``energy`` (J) of the main emission channel).  Returns ``(values,
        checked)``: the outputs, and the probabilities (label -> value) that
        the transit engine checks against first order and its floor.
        ``context`` (from the engine): ``switching_integral``, int chi dt (s)."""
        raise NotImplementedError

    def regime_warnings(self, condensate, result):
        """Validity checks that belong to this model (sentences): here, for
        every model built from scattering lengths, that they are small
        against the healing length (``scattering_length_warnings``)."""
        return scattering_length_warnings(self, condensate)

    def rate_output_warnings(self, condensate, result):
        """Notes on this model's stationary outputs (sentences), placed after
        the gas's regime checks: e.g. where an output is undetermined."""
        return []

    def reference_detectors(self, dimension):
        """Simpler detectors that ``probe compare`` sets beside this one:
        ``[(name, label, [probe] table)]`` with the table's values written as
        strings with SI units (``dimension`` of the gas for the coupling's
        unit)."""
        return []

    def in_gas(self, condensate):
        """The model in the uniform gas ``condensate`` of another density
        (the local gas of a trapped cloud): this model itself where nothing
        of it depends on the gas's density."""
        return self

    def input_rows(self):
        """Rows the model adds to a table's inputs: ``(label, SI value, kind
        of quantity)`` (kinds as in ``probe.quantities.SI_UNITS``)."""
        return []

    def transit_warnings(self, values):
        """Checks of a finite transit's outputs (name -> value) that belong to
        this model (sentences)."""
        return []
