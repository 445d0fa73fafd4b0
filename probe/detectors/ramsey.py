"""The Ramsey (interferometric) detector: two internal states with different
couplings to the density, no drive, read out by the fringe contrast.

The states ``a``, ``b`` couple as ``kappa_a |a><a| + kappa_b |b><b|``; with the
coupling switched by chi(t) along the path, the coherence of a superposition
decays as ``|<sigma>| = C0 exp(-Lambda)`` and picks up the mean-field phase
``(kappa_b - kappa_a) n int chi dt / hbar``.  The bath is Gaussian (a linear
coupling to free Bogoliubov modes: the independent-boson model, exactly
solvable; G. D. Mahan, *Many-Particle Physics*, 3rd ed., Kluwer/Plenum 2000,
ch. 4), so the exponent is exact for this coupling, not first order:

    Lambda = (1/2) ((kappa_b - kappa_a)/hbar)^2 n int d^dk/(2pi)^d S |F|^2
             coth(hbar w_k / 2 k_B T) |int dt chi(t) exp(i (w_k t - k.x(t)))|^2

i.e. half the expected number of phonons that a structureless probe of
coupling ``kappa_b - kappa_a`` emits plus absorbs (weight ``1 + 2 n_k``).
For stationary motion the long-time slope is the dephasing rate
``gamma_phi = (1/2)(emission + absorption rate)`` of that probe (zero for
subsonic straight motion in 3D at any temperature: no resonant phonon).
Ramsey decoherence of impurities in a Bose gas is measured, e.g., by
M. G. Skou et al., Nat. Phys. 17, 731 (2021).
"""
from __future__ import annotations

import math

from probe.detectors.base import (HBAR, Channel, InputError, ProbeModel, _number,
                                  coupling_from_scattering_length)
from probe.detectors.dressed import STATE_COUPLING_KEYS, state_couplings, state_rows


class RamseyProbe(ProbeModel):
    """Pure-dephasing (Ramsey) detector with couplings ``coupling_a``,
    ``coupling_b`` (J m^d, not equal) and probe ``width`` (m); ``density``
    (m^-d) of the gas sets the mean-field phase."""

    name = "ramsey"
    rate_outputs = ("dephasing_rate", "dephasing_rate_error")
    transit_outputs = ("contrast", "decoherence_exponent", "decoherence_exponent_error",
                       "mean_field_phase")
    array_keys = {}
    coupling_config_keys = ()
    config_keys = STATE_COUPLING_KEYS
    unused_config_keys = {"gap": "a Ramsey detector has no drive and no gap",
                          "rabi_frequency": "a Ramsey detector has no drive",
                          "detuning": "a Ramsey detector has no drive"}

    @classmethod
    def from_config(cls, values, condensate):
        ka, kb, lengths = state_couplings(values, condensate)
        probe = cls(ka, kb, condensate.density, values["width"])
        if lengths is not None:
            probe.scattering_lengths = tuple(float(a) for a in lengths)
        return probe

    def __init__(self, coupling_a, coupling_b, density=0.0, width=0.0):
        ka = _number("probe.coupling_a", coupling_a)
        kb = _number("probe.coupling_b", coupling_b)
        if not (math.isfinite(ka) and math.isfinite(kb)):
            raise InputError("probe.coupling_a", "couplings must be finite")
        if ka == kb:
            raise InputError("probe.coupling_length_b",
                             "equals the coupling of state a: the two states then "
                             "couple alike and a Ramsey sequence sees nothing "
                             "(kappa_b - kappa_a = 0); give different scattering lengths")
        super().__init__(kb - ka, width)
        self.coupling_a, self.coupling_b = ka, kb
        self.density = _number("condensate.density", density)

    def channels(self, gap=None):
        if gap is not None:
            raise InputError("probe.gap", "a Ramsey detector has no gap")
        return (Channel("dephasing", 0.0, abs(self.coupling), key="probe.coupling_b"),)

    def rate_results(self, raw, context):
        ch = raw["dephasing"]
        (em, em_err), (ab, ab_err) = ch["emission"], ch["absorption"]
        return {"dephasing_rate": 0.5 * (em + ab),
                "dephasing_rate_error": 0.5 * (em_err + ab_err)}

    def transit_results(self, raw, context=None):
        ch = raw["dephasing"]
        em, em_err = ch["emission"]
        ab = ch["absorption"]
        lam = 0.5 * (em + ab)
        # the absorption term has the weight n_k <= 1 + n_k of the emission
        # term on the same nodes, so its error is bounded by the emission's
        values = {"decoherence_exponent": lam, "decoherence_exponent_error": em_err,
                  "contrast": math.exp(-lam)}
        if context is not None and "switching_integral" in context:
            values["mean_field_phase"] = mean_field_phase(
                self.coupling_a, self.coupling_b, self.density, context["switching_integral"])
        # Lambda is exact for the linear coupling: no first-order check applies
        return values, {}

    def transit_warnings(self, values):
        lam = values["decoherence_exponent"]
        if lam <= 1.0:
            return []
        return [f"the contrast has fallen to {math.exp(-lam):.3g} (below 1/e; "
                f"decoherence exponent {lam:.3g}): this is no breakdown of the "
                "calculation (for a coupling linear in the density the exponent is "
                "exact, not first order), but the fringe is hard to read; shorten the "
                "interrogation or weaken the coupling"]

    @classmethod
    def from_scattering_lengths(cls, length_a, length_b, boson_mass, probe_mass, condensate,
                                width=0.0):
        """The Ramsey detector of an impurity of mass ``probe_mass`` whose
        states scatter off the bosons with lengths ``length_a``, ``length_b`` (m)."""
        ka = coupling_from_scattering_length(length_a, boson_mass, probe_mass, condensate, width)
        kb = coupling_from_scattering_length(length_b, boson_mass, probe_mass, condensate, width)
        probe = cls(ka, kb, condensate.density, width)
        probe.scattering_lengths = (float(length_a), float(length_b))
        return probe

    def in_gas(self, condensate):
        """The detector in a gas of density ``condensate.density`` (which sets
        its mean-field phase): the same couplings and width."""
        probe = type(self)(self.coupling_a, self.coupling_b, condensate.density, self.width)
        if hasattr(self, "scattering_lengths"):
            probe.scattering_lengths = self.scattering_lengths
        return probe

    def input_rows(self):
        return state_rows(self)

    def reference_detectors(self, dimension):
        unit = "J m" if dimension == 1 else f"J m^{dimension}"
        table = {"model": "density", "coupling": f"{self.coupling!r} {unit}",
                 "width": f"{self.width!r} m"}
        return [("difference", f"density probe of coupling kappa_b - kappa_a "
                               f"({self.coupling:.3g} {unit}; its emission plus absorption "
                               "is twice the dephasing)", table)]

    def describe(self):
        out = super().describe()
        out.update(coupling_a=self.coupling_a, coupling_b=self.coupling_b)
        return out


def mean_field_phase(coupling_a, coupling_b, density, switching_integral):
    """(kappa_b - kappa_a) n int chi dt / hbar (rad)."""
    return (coupling_b - coupling_a) * density * switching_integral / HBAR
