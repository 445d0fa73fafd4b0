"""The two-level (Unruh-DeWitt-type) detector: a probe with an internal gap
hbar*Omega coupled through sigma_x to the density of the gas."""
from __future__ import annotations

import math

import numpy as np

from probe.detectors.base import HBAR, KB, Channel, InputError, ProbeModel
from probe.engines.regime.limits import RATE_OVER_GAP_LIMIT, TEFF_ERROR_FACTOR
from probe.engines.regime.wording import fmt, grid_prefix, lead, temperature_text
from probe.scenarios.keys import Key


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
                       "emitted_phonons_excited", "absorbed_phonons", "emitted_energy")
    array_keys = {"probe.gap": "gap"}
    config_keys = (
        Key("probe", "gap", '"200 Hz"', "the gap: in Hz (kHz ...) an ordinary frequency, "
            "Omega = 2 pi x value; in rad/s the angular frequency Omega; or an energy "
            "hbar Omega", kind="frequency", required=True, label=r"gap $\Omega/2\pi$",
            vary=7, array="gap"),
    )

    @classmethod
    def from_config(cls, values, condensate):
        return cls(values["gap"], values["coupling"], values["width"])

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

    def transit_results(self, raw, context=None):
        ch = raw["gap"]
        (up, up_err), (dn, dn_err) = ch["up"], ch["down"]
        values = {"up_probability": up, "down_probability": dn,
                  "up_probability_error": up_err, "down_probability_error": dn_err,
                  "emitted_phonons": ch["up_emission"], "emitted_phonons_error": up_err,
                  "emitted_phonons_excited": ch["down_emission"],
                  # up transitions that absorb a thermal phonon: the term
                  # n E- of the up integrand, whose other term (1 + n) E+ is
                  # the emission (summed on the same nodes); 0 at T = 0
                  "absorbed_phonons": np.maximum(up - ch["up_emission"], 0.0),
                  "emitted_energy": ch["energy"]}
        return values, {"up": up, "down": dn}

    # --- regime of validity (probe.engines.regime) ---------------------------
    def regime_warnings(self, condensate, result):
        """First-order perturbation theory needs the up and down rates slow
        against the gap, Gamma << Omega (RATE_OVER_GAP_LIMIT; on a grid, the
        worst point)."""
        out = super().regime_warnings(condensate, result)
        gaps = np.asarray(self.gap if result.gap is None else result.gap, float)
        for name, rate in (("up", result.up_rate), ("down", result.down_rate)):
            if rate is None:
                continue
            r = np.asarray(rate, dtype=float)
            with np.errstate(divide="ignore", invalid="ignore"):
                ratio = np.broadcast_to(r / gaps, np.broadcast(r, gaps).shape)
            finite = ratio[np.isfinite(ratio)]
            if not (finite.size and np.max(finite) > RATE_OVER_GAP_LIMIT):
                continue
            i = int(np.argmax(np.where(np.isfinite(ratio), ratio, -np.inf)))
            rv = float(np.broadcast_to(r, ratio.shape).flat[i])
            gv = float(np.broadcast_to(gaps, ratio.shape).flat[i])
            where = grid_prefix(np.isfinite(ratio) & (ratio > RATE_OVER_GAP_LIMIT))
            if where:
                out.append(
                    f"first-order perturbation theory is breaking down {where}: "
                    f"there the {name} rate exceeds {RATE_OVER_GAP_LIMIT} of the "
                    f"gap frequency; largest: the {name} rate {fmt(rv)} s^-1 is "
                    f"{fmt(rv / gv)} of Omega, Omega/(2 pi) = {fmt(gv / (2 * math.pi))} Hz "
                    f"({fmt(gv)} rad/s) (should be << 1)")
            else:
                out.append(
                    f"first-order perturbation theory is breaking down: the "
                    f"{name} rate {fmt(rv)} s^-1 is {fmt(rv / gv)} of the gap "
                    f"frequency Omega, Omega/(2 pi) = {fmt(gv / (2 * math.pi))} Hz "
                    f"({fmt(gv)} rad/s) (should be << 1; limit "
                    f"{RATE_OVER_GAP_LIMIT})")
        return out

    def rate_output_warnings(self, condensate, result):
        """Where the effective temperature is undetermined (NaN): an up rate
        that underflowed where it cannot vanish, or up and down rates that
        agree to within TEFF_ERROR_FACTOR times their error estimates; each
        sentence gives the bound on T_eff that is known."""
        te = getattr(result, "effective_temperature", None)
        if te is None or getattr(result, "up_rate", None) is None:
            return []
        te = np.asarray(te, float)
        up = np.broadcast_to(np.asarray(result.up_rate, float), te.shape)
        dn = np.broadcast_to(np.asarray(result.down_rate, float), te.shape)

        def gaps():
            return np.broadcast_to(np.asarray(self.gap if result.gap is None else result.gap,
                                              float), te.shape)
        out = []
        under = np.isnan(te) & (up == 0) & (dn > 0)
        if np.any(under):
            # up < 1e-300 down, so ln(down/up) > 690.8
            bound = HBAR * gaps() / (KB * math.log(1e300))
            out.append(
                f"{lead(under)}the effective temperature is undetermined (reported as NaN, "
                "null in JSON): the up rate is not zero here (a warm gas or circular "
                "motion) but below the smallest number a double holds, reported as 0; "
                f"T_eff < {temperature_text(float(np.max(bound)))}")
        mask = np.isnan(te) & (up > 0)
        if not np.any(mask):
            return out
        eu = getattr(result, "up_rate_error", None)
        ed = getattr(result, "down_rate_error", None)
        eu = np.broadcast_to(np.asarray(0.0 if eu is None else eu, float), te.shape)
        ed = np.broadcast_to(np.asarray(0.0 if ed is None else ed, float), te.shape)
        with np.errstate(divide="ignore", invalid="ignore"):
            unc = TEFF_ERROR_FACTOR * (eu / up + ed / dn)
            bound = HBAR * gaps() / (KB * unc)
        i = int(np.argmax(mask))
        return out + [
            f"{lead(mask)}the effective temperature is undetermined (reported as NaN, "
            f"null in JSON): the up and down rates agree to within "
            f"{TEFF_ERROR_FACTOR:g} times their error estimates "
            f"(|ln(down/up)| = {fmt(abs(math.log(dn.flat[i]) - math.log(up.flat[i])))} <= "
            f"{fmt(unc.flat[i])}), so only |T_eff| > {temperature_text(bound.flat[i])} is "
            "known (equal rates mean an infinite effective temperature)"]


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
        # ln(down/up) as a difference: the quotient overflows for a
        # subnormal up rate where the logarithm is still finite
        log = np.log(down) - np.log(up)
        teff = HBAR * gap / (KB * log)
        if up_err is not None:
            unc = 4.0 * (up_err / up + down_err / down)
            teff = np.where((up > 0) & ~(np.abs(log) > unc), np.nan, teff)
        zero = up == 0
        teff = np.where(zero, np.where(up_positive & (down > 0), np.nan, 0.0), teff)
        pop = np.where(up + down > 0, up / (up + down), 0.0)
    return teff, pop
