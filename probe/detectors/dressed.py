"""A two-state impurity atom dressed by a Rabi drive: the sigma_x coupling of
the two-level detector, engineered from two scattering lengths.

The impurity's states ``a`` and ``b`` (``b`` above ``a`` by hbar w_0 in free
space) couple to the density as ``kappa_a |a><a| + kappa_b |b><b|``.  With
``kappa_bar = (kappa_a + kappa_b)/2``, ``lambda = (kappa_b - kappa_a)/2``, a
drive of Rabi frequency Omega_R at detuning ``delta = w_drive - w_0`` from the
free-space transition, and the mean density ``n`` split off
(``rho = n + drho``), the rotating-frame Hamiltonian is

    H = (hbar/2)(-delta_gas tau_z + Omega_R tau_x) + (kappa_bar + lambda tau_z) drho,
    delta_gas = delta - 2 lambda n / hbar          (mean-field shift)

Rotating to the dressed basis (the dressed atom: C. Cohen-Tannoudji,
J. Dupont-Roc, G. Grynberg, *Atom-Photon Interactions*, Wiley 1992) with
``Omega_eff = sqrt(Omega_R^2 + delta_gas^2)``, ``sin(theta) = Omega_R/Omega_eff``,
``cos(theta) = delta_gas/Omega_eff``:

- transition (sigma_x) coupling ``kappa_t = |lambda| sin(theta)`` between the
  dressed states, gap ``Omega_eff``: the two-level detector;
- diagonal difference ``2 |lambda| cos(theta)``: pure dephasing between the
  dressed states, rate ``(1/2)(2 lambda cos(theta)/hbar)^2 n int d^dk/(2pi)^d
  S |F|^2 (1 + 2 n_k) 2 pi delta(w_k - k.v)``, half the emission plus
  absorption rate of a structureless probe with that coupling;
- the state-independent part ``kappa_bar`` (a drag, not a transition).

On the in-gas resonance (``delta = 2 lambda n / hbar``) the detector is the
two-level model with coupling ``|lambda|`` and gap ``Omega_R`` (J. Marino,
A. Recati, I. Carusotto, PRL 118, 045301 (2017)).
"""
from __future__ import annotations

import math

import numpy as np

from probe.detectors.base import (HBAR, Channel, InputError, _number,
                                  coupling_from_scattering_length)
from probe.detectors.two_level import TwoLevelProbe
from probe.scenarios.keys import Key, both_given

#: the two states' couplings to the density: scattering lengths (with the
#: probe's mass for the reduced mass) or the couplings themselves
STATE_COUPLING_KEYS = (
    Key("probe", "coupling_length_a", '"3 nm"', "impurity-boson scattering length of "
        "the lower state a (any sign; kappa_a as for coupling_length)", kind="length",
        required="this or coupling_a", label="scattering length $a_a$", vary=23),
    Key("probe", "coupling_length_b", '"5 nm"', "impurity-boson scattering length of "
        "the upper state b", kind="length", required="this or coupling_b",
        label="scattering length $a_b$", vary=24),
    Key("probe", "coupling_a", '"4.5e-51 J m^3"', "the coupling kappa_a of state a "
        "itself (energy x length^dimension), instead of coupling_length_a",
        kind="coupling", label=r"coupling $\kappa_a$", vary=25),
    Key("probe", "coupling_b", '"7.5e-51 J m^3"', "the coupling kappa_b of state b "
        "itself, instead of coupling_length_b", kind="coupling",
        label=r"coupling $\kappa_b$", vary=26),
)


def state_couplings(values, condensate):
    """``(kappa_a, kappa_b, scattering lengths or None)`` from the parsed
    ``[probe]`` values: both lengths (each coupling as for a single-state
    probe: reduced mass, transverse overlap) or both couplings."""
    lengths = (values.get("coupling_length_a"), values.get("coupling_length_b"))
    kappas = (values.get("coupling_a"), values.get("coupling_b"))
    if any(v is not None for v in lengths) and any(v is not None for v in kappas):
        given = [key for key in STATE_COUPLING_KEYS if values.get(key.name) is not None]
        raise InputError("probe.coupling_a", both_given(
            given[:sum(v is not None for v in lengths)],
            given[sum(v is not None for v in lengths):],
            " (the two states' scattering lengths, or their couplings)"))
    if all(v is not None for v in kappas):
        return kappas[0], kappas[1], None
    if all(v is not None for v in lengths):
        ka, kb = (coupling_from_scattering_length(a, condensate.mass, values["mass"],
                                                  condensate, values["width"])
                  for a in lengths)
        return ka, kb, lengths
    # name the first missing key of the pair that was begun (lengths by default)
    pair = ("coupling_a", "coupling_b") if any(v is not None for v in kappas) else \
        ("coupling_length_a", "coupling_length_b")
    given = kappas if pair[0] == "coupling_a" else lengths
    missing = pair[0] if given[0] is None else pair[1]
    key = next(k for k in STATE_COUPLING_KEYS if k.name == missing)
    raise InputError(key.dotted, f"missing; add e.g. {missing} = {key.example}")


def state_rows(probe):
    """Input rows of a two-state impurity: the states' scattering lengths
    (when given) and couplings."""
    rows = []
    lengths = getattr(probe, "scattering_lengths", None)
    if lengths:
        rows += [("scattering length a_a", lengths[0], "length"),
                 ("scattering length a_b", lengths[1], "length")]
    return rows + [("coupling kappa_a", probe.coupling_a, "coupling"),
                   ("coupling kappa_b", probe.coupling_b, "coupling")]


def dressed_parameters(coupling_a, coupling_b, rabi_frequency, detuning, density):
    """The dressed detector's parameters (SI): ``detuning_in_gas`` (rad/s),
    ``gap`` Omega_eff (rad/s), ``sin_theta``, ``cos_theta``,
    ``transition_coupling`` |lambda| sin(theta) and ``dephasing_coupling``
    2 |lambda| |cos(theta)| (J m^d), ``mean_field_shift`` 2 lambda n / hbar."""
    lam = 0.5 * (coupling_b - coupling_a)
    shift = 2.0 * lam * density / HBAR
    delta_gas = detuning - shift
    gap = math.hypot(rabi_frequency, delta_gas)
    sin_t, cos_t = rabi_frequency / gap, delta_gas / gap
    return {"detuning_in_gas": delta_gas, "gap": gap, "sin_theta": sin_t,
            "cos_theta": cos_t, "transition_coupling": abs(lam) * sin_t,
            "dephasing_coupling": 2.0 * abs(lam) * abs(cos_t),
            "mean_field_shift": shift}


class DressedProbe(TwoLevelProbe):
    """Rabi-dressed two-state impurity (see the module docstring).

    Parameters (SI): ``coupling_a``, ``coupling_b`` (J m^d, the gas's
    dimension, any sign, not equal), ``rabi_frequency`` Omega_R (rad/s,
    > 0), ``detuning`` delta from the free-space transition (rad/s, any
    sign), ``density`` n of the gas (m^-d) that shifts the resonance, and the
    probe ``width`` (m).
    """

    name = "dressed"
    rate_outputs = TwoLevelProbe.rate_outputs + (
        "dephasing_rate", "transition_coupling", "detuning_in_gas")
    transit_outputs = TwoLevelProbe.transit_outputs
    array_keys = {}
    coupling_config_keys = ()
    config_keys = STATE_COUPLING_KEYS + (
        Key("probe", "rabi_frequency", '"150 Hz"', "Rabi frequency Omega_R of the drive "
            "between a and b (Hz: ordinary frequency; rad/s: angular)", kind="frequency",
            required=True, label=r"Rabi frequency $\Omega_R/2\pi$", vary=27),
        Key("probe", "detuning", '"0 Hz"', "drive frequency minus the FREE-space "
            "transition frequency a -> b (may be negative; the mean-field shift is "
            "added by the tool)", kind="frequency", default="0 Hz",
            label=r"detuning $\delta/2\pi$", vary=28),
    )
    unused_config_keys = {"gap": "the dressed gap follows from rabi_frequency and "
                                 "detuning"}

    @classmethod
    def from_config(cls, values, condensate):
        ka, kb, lengths = state_couplings(values, condensate)
        probe = cls(ka, kb, values["rabi_frequency"], values["detuning"], condensate.density,
                    values["width"])
        if lengths is not None:
            probe.scattering_lengths = tuple(float(a) for a in lengths)
        return probe

    def __init__(self, coupling_a, coupling_b, rabi_frequency, detuning=0.0,
                 density=0.0, width=0.0):
        ka = _finite("probe.coupling_a", coupling_a)
        kb = _finite("probe.coupling_b", coupling_b)
        if ka == kb:
            raise InputError("probe.coupling_length_b",
                             "equals the coupling of state a: the two states then "
                             "couple alike and the drive leaves no transition "
                             "coupling (kappa_b - kappa_a = 0); give different "
                             "scattering lengths")
        rabi = _finite("probe.rabi_frequency", rabi_frequency)
        if rabi <= 0:
            raise InputError("probe.rabi_frequency", f"must be > 0, got {rabi!r} rad/s")
        delta = _finite("probe.detuning", detuning)
        n = _finite("condensate.density", density)
        p = dressed_parameters(ka, kb, rabi, delta, n)
        super().__init__(p["gap"], p["transition_coupling"], width)
        self.coupling_a, self.coupling_b = ka, kb
        self.rabi_frequency, self.detuning, self.density = rabi, delta, n
        self.parameters = p

    def channels(self, gap=None):
        if gap is not None:
            raise InputError("probe.gap", "the dressed detector's gap follows from "
                                          "rabi_frequency and detuning; vary those")
        out = [Channel("gap", self.gap, self.coupling, key="probe.rabi_frequency")]
        if self.parameters["dephasing_coupling"] > 0:
            out.append(Channel("dephasing", 0.0, self.parameters["dephasing_coupling"],
                               key="probe.detuning"))
        return tuple(out)

    def rate_results(self, raw, context):
        out = super().rate_results(raw, context)
        up = np.asarray(out["up_rate"], float)
        if "dephasing" in raw:
            em, ab = raw["dephasing"]["emission"][0], raw["dephasing"]["absorption"][0]
            out["dephasing_rate"] = 0.5 * (em + ab)
        else:   # on the in-gas resonance: no diagonal difference
            out["dephasing_rate"] = np.zeros_like(up)
        out["transition_coupling"] = np.full_like(up, self.coupling)
        out["detuning_in_gas"] = np.full_like(up, self.parameters["detuning_in_gas"])
        return out

    @classmethod
    def from_scattering_lengths(cls, length_a, length_b, boson_mass, probe_mass, condensate,
                                rabi_frequency, detuning=0.0, width=0.0):
        """The dressed detector of an impurity of mass ``probe_mass`` whose
        states scatter off the bosons with lengths ``length_a``, ``length_b``
        (m): each coupling as for a single-state probe (reduced mass; the
        transverse overlap in a quasi-low-dimensional gas)."""
        ka = coupling_from_scattering_length(length_a, boson_mass, probe_mass, condensate, width)
        kb = coupling_from_scattering_length(length_b, boson_mass, probe_mass, condensate, width)
        probe = cls(ka, kb, rabi_frequency, detuning, condensate.density, width)
        probe.scattering_lengths = (float(length_a), float(length_b))
        return probe

    def regime_warnings(self, condensate, result):
        out = super().regime_warnings(condensate, result)
        out += _suppression_warnings(self)
        return out

    def reference_detectors(self, dimension):
        gap_hz = self.gap / (2 * math.pi)
        table = {"model": "two-level", "gap": f"{self.gap!r} rad/s",
                 "coupling": f"{self.coupling!r} {_coupling_unit(dimension)}",
                 "width": f"{self.width!r} m"}
        return [("ideal", f"ideal sigma_x detector (gap {gap_hz:.4g} Hz, coupling "
                          f"{self.coupling:.3g} {_coupling_unit(dimension)})", table)]

    def in_gas(self, condensate):
        """The detector in a gas of density ``condensate.density``: the same
        couplings, drive and width; its mean-field shift, dressed gap and
        transition coupling at that density."""
        probe = type(self)(self.coupling_a, self.coupling_b, self.rabi_frequency,
                           self.detuning, condensate.density, self.width)
        if hasattr(self, "scattering_lengths"):
            probe.scattering_lengths = self.scattering_lengths
        return probe

    def input_rows(self):
        return state_rows(self) + [
            ("Rabi frequency", self.rabi_frequency, "frequency"),
            ("detuning (free space)", self.detuning, "frequency"),
            ("mean-field shift 2 lambda n/hbar", self.parameters["mean_field_shift"],
             "frequency"),
            ("detuning in the gas", self.parameters["detuning_in_gas"], "frequency"),
            ("dephasing coupling", self.parameters["dephasing_coupling"], "coupling")]

    def describe(self):
        out = super().describe()
        out.update(coupling_a=self.coupling_a, coupling_b=self.coupling_b,
                   rabi_frequency=self.rabi_frequency, detuning=self.detuning,
                   detuning_in_gas=self.parameters["detuning_in_gas"],
                   transition_coupling=self.coupling,
                   dephasing_coupling=self.parameters["dephasing_coupling"])
        return out


#: below this sin^2(theta) the drive is far from the in-gas resonance and the
#: transition coupling is strongly suppressed (common practice: a factor 10)
SUPPRESSION_LIMIT = 0.1


def _suppression_warnings(probe):
    p = probe.parameters
    sin2 = p["sin_theta"] ** 2
    if sin2 >= SUPPRESSION_LIMIT:
        return []
    two_pi = 2 * math.pi
    return [f"the drive is detuned from the in-gas resonance by "
            f"{p['detuning_in_gas'] / two_pi:.4g} Hz (the mean-field shift "
            f"2 lambda n / h is {p['mean_field_shift'] / two_pi:.4g} Hz, the Rabi "
            f"frequency {probe.rabi_frequency / two_pi:.4g} Hz): the transition coupling "
            f"is suppressed to sin(theta) = {p['sin_theta']:.3g} of |kappa_b - kappa_a|/2 "
            f"and the up and down rates by sin^2(theta) = {sin2:.3g}; a detuning of "
            f"{p['mean_field_shift'] / two_pi:.4g} Hz drives on the in-gas resonance"]


def _coupling_unit(dimension):
    return "J m" if dimension == 1 else f"J m^{dimension}"


def _finite(key, value):
    v = _number(key, value)
    if not math.isfinite(v):
        raise InputError(key, f"must be finite, got {v!r}")
    return v
