"""The two-level (Unruh-DeWitt-type) detector: a probe with an internal gap
hbar*Omega coupled through sigma_x to the density of the gas."""
from __future__ import annotations

import numpy as np

from probe.detectors.base import HBAR, KB, Channel, InputError, ProbeModel


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
    rate_outputs = ("up_rate", "up_rate_error", "down_rate", "down_rate_error",
                    "effective_temperature", "excited_population", "up_threshold_speed")
    # the error of emitted_phonons (the emission term of up_probability) is
    # that of up_probability: not an output of its own
    transit_outputs = ("up_probability", "up_probability_error", "down_probability",
                       "down_probability_error", "emitted_phonons",
                       "emitted_phonons_excited", "emitted_energy")
    array_keys = {"probe.gap": "gap"}

    def __init__(self, gap, coupling, width=0.0):
        super().__init__(coupling, width)
        self._gap = _checked_gap(gap)

    @property
    def gap(self):
        return self._gap

    def channels(self, gap=None):
        g = self.gap if gap is None else _checked_gap(gap)
        return (Channel("gap", g, self.coupling),)

    def rate_results(self, raw, context):
        (up, up_err), (dn, dn_err) = raw["gap"]["up"], raw["gap"]["down"]
        gap = context.detuning["gap"]
        teff, pop = effective_temperature(gap, up, dn, up_err, dn_err,
                                          up_positive=context.up_cannot_vanish)
        out = {"up_rate": up, "up_rate_error": up_err, "down_rate": dn,
               "down_rate_error": dn_err, "effective_temperature": teff,
               "excited_population": pop}
        if context.kind == "inertial":
            cond = context.condensate
            vt, _ = cond.dispersion.threshold(gap / cond.frequency_unit)
            out["up_threshold_speed"] = vt * cond.sound_speed
        return out

    def transit_results(self, raw):
        ch = raw["gap"]
        (up, up_err), (dn, dn_err) = ch["up"], ch["down"]
        values = {"up_probability": up, "down_probability": dn,
                  "up_probability_error": up_err, "down_probability_error": dn_err,
                  "emitted_phonons": ch["up_emission"], "emitted_phonons_error": up_err,
                  "emitted_phonons_excited": ch["down_emission"],
                  "emitted_energy": ch["energy"]}
        return values, {"up": up, "down": dn}


def _checked_gap(gap):
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
    return g if g.ndim else float(g)


def effective_temperature(gap, up, down, up_err=None, down_err=None, up_positive=False):
    """Effective temperature hbar Omega / (k_B ln(down/up)) and steady excited
    population up/(up + down) (detailed balance of a two-level system in a
    thermal bath: Birrell and Davies 1982, ch. 3).

    Where ln(down/up) is not larger than 4 times its own error (from the
    rates' error estimates) the effective temperature is not determined and
    is NaN (the regime warnings say so and give a bound).  ``up_positive``
    marks points whose up rate cannot vanish (a warm gas, or circular
    motion): there an up rate of 0 has underflowed, and the effective
    temperature is NaN too, not 0."""
    with np.errstate(divide="ignore", invalid="ignore"):
        ratio = down / up
        log = np.log(ratio)
        teff = HBAR * gap / (KB * log)
        if up_err is not None:
            unc = 4.0 * (up_err / up + down_err / down)
            teff = np.where((up > 0) & ~(np.abs(log) > unc), np.nan, teff)
        zero = up == 0
        teff = np.where(zero, np.where(up_positive & (down > 0), np.nan, 0.0), teff)
        pop = np.where(up + down > 0, up / (up + down), 0.0)
    return teff, pop
