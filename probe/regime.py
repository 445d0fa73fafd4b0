"""Plain-language checks of the validity of a rate calculation.

``regime_warnings(condensate, probe, result)`` lists, as sentences, every
place where the inputs or the result leave the regime in which the model
(first-order perturbation theory in a dilute, uniform, Bogoliubov gas with a
point-like probe) is trustworthy.  Each sentence names the quantity, its
value and the limit.  The thresholds are conventional rules of thumb, not
sharp boundaries; the comments say where each comes from.
"""
from __future__ import annotations

import math

import numpy as np
from scipy import constants as sc

HBAR = sc.hbar
KB = sc.k

# First order in the coupling needs the transition rates to be slow on the
# scale of the probe's own oscillation: Gamma << Omega.  A ratio of 0.1 is
# the usual practical cut-off for "<<".
RATE_OVER_GAP_LIMIT = 0.1
# Diluteness of the 3D gas: Bogoliubov theory is an expansion in
# sqrt(n a^3); n a^3 < 1e-3 is common practice (the Lee-Huang-Yang
# correction is then a few per cent).
GAS_PARAMETER_3D_LIMIT = 1e-3
# Weak coupling in 2D: the dimensionless coupling g_2 m / hbar^2 << 1;
# 0.1 is common practice.
GAS_PARAMETER_2D_LIMIT = 0.1
# Weak coupling in 1D: Bogoliubov theory of the Lieb-Liniger gas needs
# gamma << 1; 0.1 is common practice.
GAS_PARAMETER_1D_LIMIT = 0.1
# 3D thermal depletion: the T = 0 Bogoliubov ground state is a fair
# description only well below the ideal-gas T_c; 0.5 T_c (condensate
# fraction 1 - 0.5^1.5 ~ 65 %) is a common-practice limit.
TEMPERATURE_OVER_TC_LIMIT = 0.5
# The phonon (linear) dispersion w = c k differs from Bogoliubov's
# w = c k sqrt(1 + (k xi)^2/4) by (k xi)^2/8: about 1 % at k xi = 0.3.
PHONON_KXI_LIMIT = 0.3
# A probe much wider than the healing length is far from the point-probe
# picture (informational).
WIDTH_OVER_XI_LIMIT = 10.0
# Speeds far above sound: the probe excites free-particle-like quasi
# particles at k xi >> 1 and the uniform-gas, weak-coupling picture of the
# probe (no depletion or heating of the gas around it) becomes doubtful.
SPEED_OVER_C_LIMIT = 10.0


def _max(x):
    """Largest finite entry of a scalar or array (None if there is none)."""
    if x is None:
        return None
    a = np.asarray(x, dtype=float)
    a = a[np.isfinite(a)]
    if a.size == 0:
        return None
    return float(np.max(a))


def _g(x):
    return f"{x:.4g}"


def regime_warnings(condensate, probe, result):
    """Sentences saying where the calculation leaves its regime of validity.

    Parameters
    ----------
    condensate : :class:`probe.condensate.Condensate`
    probe : a probe model (``TwoLevelProbe`` or ``DensityProbe``)
    result : :class:`probe.results.RateResult` of a rate calculation for them

    Returns
    -------
    list of str (empty when nothing is violated)
    """
    out = []
    c = condensate.sound_speed
    xi = condensate.healing_length
    mu = condensate.chemical_potential
    d = condensate.dimension
    gap = _max(probe.gap) if probe.has_gap else None
    speed = _max(result.speed)

    # --- first-order perturbation theory: Gamma << Omega ---------------------
    if probe.has_gap:
        gaps = np.asarray(probe.gap if result.gap is None else result.gap, float)
        for name, rate in (("up", result.up_rate), ("down", result.down_rate)):
            if rate is None:
                continue
            r = np.asarray(rate, dtype=float)
            with np.errstate(divide="ignore", invalid="ignore"):
                ratio = np.broadcast_to(r / gaps, np.broadcast(r, gaps).shape)
            finite = ratio[np.isfinite(ratio)]
            if finite.size and np.max(finite) > RATE_OVER_GAP_LIMIT:
                i = int(np.argmax(np.where(np.isfinite(ratio), ratio, -np.inf)))
                rv = float(np.broadcast_to(r, ratio.shape).flat[i])
                gv = float(np.broadcast_to(gaps, ratio.shape).flat[i])
                out.append(
                    f"first-order perturbation theory is breaking down: the "
                    f"{name} rate {_g(rv)} s^-1 is {_g(rv / gv)} of the gap "
                    f"frequency Omega = {_g(gv)} rad/s (should be << 1; limit "
                    f"{RATE_OVER_GAP_LIMIT})")

    # --- diluteness / weak coupling -----------------------------------------
    gp = condensate.gas_parameter
    limit = {3: GAS_PARAMETER_3D_LIMIT, 2: GAS_PARAMETER_2D_LIMIT,
             1: GAS_PARAMETER_1D_LIMIT}[d]
    if gp > limit:
        what = {3: "the gas is not dilute",
                2: "the 2D gas is not weakly coupled",
                1: "the 1D gas is not weakly coupled (towards the Tonks regime)"}[d]
        out.append(
            f"{what}: {condensate.gas_parameter_name} = {_g(gp)} exceeds "
            f"{limit:g}; Bogoliubov theory is unreliable")

    # --- reduced dimension: mu < hbar w_perp ---------------------------------
    if d < 3 and condensate.transverse_frequency is not None:
        e_perp = HBAR * condensate.transverse_frequency
        if mu >= e_perp:
            out.append(
                f"the quasi-{d}D reduction fails: the chemical potential "
                f"mu/h = {_g(mu / (2 * math.pi * HBAR))} Hz is not below the "
                f"transverse trap frequency w_perp/(2 pi) = "
                f"{_g(condensate.transverse_frequency / (2 * math.pi))} Hz "
                f"(mu/(hbar w_perp) = {_g(mu / e_perp)}, must be < 1); "
                "transverse modes are excited")

    # --- temperature ---------------------------------------------------------
    T = condensate.temperature
    if T > 0:
        if d == 3:
            tc = condensate.critical_temperature
            if T > TEMPERATURE_OVER_TC_LIMIT * tc:
                out.append(
                    f"the gas is too hot for a condensate near T = 0: T = "
                    f"{_g(T * 1e9)} nK is {_g(T / tc)} of the ideal-gas "
                    f"T_c = {_g(tc * 1e9)} nK (limit {TEMPERATURE_OVER_TC_LIMIT} "
                    f"T_c); thermal depletion is large")
        elif KB * T > mu:
            # Common-practice criterion in low dimensions: phase and density
            # fluctuations grow once k_B T exceeds mu.
            out.append(
                f"thermal fluctuations dominate the {d}D gas: k_B T = "
                f"{_g(KB * T / mu)} mu (T = {_g(T * 1e9)} nK, mu/k_B = "
                f"{_g(mu / KB * 1e9)} nK; should be k_B T < mu)")

    # --- phonon dispersion where the spectrum's curvature matters ------------
    if condensate.dispersion.name == "phonon":
        reasons = []
        if speed is not None and speed >= c:
            if probe.width > 0:
                kxi_cut = xi / probe.width
                if kxi_cut > PHONON_KXI_LIMIT:
                    reasons.append(
                        f"supersonic motion (v = {_g(speed / c)} c) emits up to the "
                        f"form-factor cutoff k xi ~ xi/width = {_g(kxi_cut)}")
            else:
                reasons.append(
                    f"supersonic motion (v = {_g(speed / c)} c) of a point probe "
                    "emits phonons of every wavenumber")
        elif gap is not None:
            v = 0.0 if speed is None else speed
            kxi = gap * xi / (c - v)  # largest resonant k: Omega = (c - v) k
            if kxi > PHONON_KXI_LIMIT:
                reasons.append(
                    f"the resonant wavenumber Omega/(c - v) reaches k xi = {_g(kxi)}"
                    f" (Omega = {_g(gap / condensate.frequency_unit)} c/xi)")
        if T > 0:
            kxi_th = KB * T / mu   # thermal phonons: hbar c k ~ k_B T
            if kxi_th > PHONON_KXI_LIMIT:
                reasons.append(f"thermal phonons reach k xi ~ k_B T/mu = {_g(kxi_th)}")
        if reasons:
            out.append(
                "the phonon dispersion w = c k is used where the Bogoliubov "
                f"curvature matters (relevant k xi above {PHONON_KXI_LIMIT}): "
                + "; ".join(reasons) + "; use dispersion = \"bogoliubov\"")

    # --- probe size ----------------------------------------------------------
    if probe.width > WIDTH_OVER_XI_LIMIT * xi:
        out.append(
            f"the probe is far from point-like: width {_g(probe.width * 1e6)} um "
            f"is {_g(probe.width / xi)} healing lengths (more than "
            f"{WIDTH_OVER_XI_LIMIT:g}); its form factor cuts off the response "
            "(informational)")

    # --- very fast motion ----------------------------------------------------
    if speed is not None and speed > SPEED_OVER_C_LIMIT * c:
        out.append(
            f"the speed {_g(speed)} m/s is {_g(speed / c)} times the sound speed "
            f"(more than {SPEED_OVER_C_LIMIT:g}); the weak-perturbation, "
            "uniform-gas picture of the probe is doubtful")
    return out
