"""Plain-language checks of the validity of a rate calculation.

``regime_warnings(condensate, probe, result)`` lists, as sentences, every
place where the inputs or the result leave the regime in which the model
(first-order perturbation theory in a dilute, uniform, Bogoliubov gas with a
point-like probe) is trustworthy.  Each sentence names the quantity, its
value and the limit.  The thresholds are conventional rules of thumb, not
sharp boundaries; the comments say where each comes from.

For results on a parameter grid (arrays) a sentence says at how many of the
grid points a limit is passed and gives the worst case.
``path_warnings(condensate, probe, trajectory, result)`` checks the path
against the extent of the uniform gas (``Condensate.size``) and times a
straight transit through it (``transit_summary``).
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
# First order for a finite transit needs the transition probability << 1;
# 0.1 is the same common-practice cut-off as for Gamma/Omega.
PROBABILITY_LIMIT = 0.1
# A stationary rate describes a transit only if the transit lasts many gap
# periods (otherwise switching the coupling on and off dominates); 10
# periods is a common-practice minimum.
MIN_GAP_PERIODS = 10.0
# The effective temperature is reported only where |ln(down/up)| exceeds 4
# times its error (probe.engine._finish_two_level).
TEFF_ERROR_FACTOR = 4.0


def _grid_prefix(mask):
    """'at N of M grid points' for an array mask with M > 1, else ''."""
    mask = np.asarray(mask)
    if mask.size <= 1:
        return ""
    return f"at {int(np.count_nonzero(mask))} of {mask.size} grid points"


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


def regime_warnings(condensate, probe, result, rtol=None):
    """Sentences saying where the calculation leaves its regime of validity.

    Parameters
    ----------
    condensate : :class:`probe.condensate.Condensate`
    probe : a probe model (``TwoLevelProbe`` or ``DensityProbe``)
    result : :class:`probe.results.RateResult` of a rate calculation for them
    rtol : the requested relative accuracy; where given, rates whose error
        estimate is larger are named

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
                where = _grid_prefix(np.isfinite(ratio) & (ratio > RATE_OVER_GAP_LIMIT))
                if where:
                    out.append(
                        f"first-order perturbation theory is breaking down {where}: "
                        f"there the {name} rate exceeds {RATE_OVER_GAP_LIMIT} of the "
                        f"gap frequency; largest: the {name} rate {_g(rv)} s^-1 is "
                        f"{_g(rv / gv)} of Omega = {_g(gv)} rad/s (should be << 1)")
                else:
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
        speeds = (np.zeros(1) if result.speed is None
                  else np.asarray(result.speed, float).ravel())
        sup = speeds >= c
        if np.any(sup):
            vmax = float(np.max(speeds[sup]))
            lead = _grid_prefix(sup)
            lead = f"{lead} " if lead else ""
            if probe.width > 0:
                kxi_cut = xi / probe.width
                if kxi_cut > PHONON_KXI_LIMIT:
                    reasons.append(
                        f"{lead}supersonic motion (v = {_g(vmax / c)} c) emits up to the "
                        f"form-factor cutoff k xi ~ xi/width = {_g(kxi_cut)}")
            else:
                reasons.append(
                    f"{lead}supersonic motion (v = {_g(vmax / c)} c) of a point probe "
                    "emits phonons of every wavenumber")
        if gap is not None and not np.all(sup):
            # largest resonant k: Omega = (c - v) k
            kxi = np.where(sup, 0.0, gap * xi / (c - np.where(sup, 0.0, speeds)))
            hot = kxi > PHONON_KXI_LIMIT
            if np.any(hot):
                lead = _grid_prefix(hot)
                lead = f"{lead} " if lead else ""
                reasons.append(
                    f"{lead}the resonant wavenumber Omega/(c - v) reaches k xi = "
                    f"{_g(float(np.max(kxi)))} (Omega = "
                    f"{_g(gap / condensate.frequency_unit)} c/xi)")
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
    speed = _max(result.speed)
    if speed is not None and speed > SPEED_OVER_C_LIMIT * c:
        where = _grid_prefix(np.asarray(result.speed, float) > SPEED_OVER_C_LIMIT * c)
        lead = f"{where} the speed exceeds {SPEED_OVER_C_LIMIT:g} c; largest: " if where else ""
        out.append(
            f"{lead}the speed {_g(speed)} m/s is {_g(speed / c)} times the sound speed "
            f"(more than {SPEED_OVER_C_LIMIT:g}); the weak-perturbation, "
            "uniform-gas picture of the probe is doubtful")

    out += _effective_temperature_warnings(probe, result)
    if rtol is not None:
        out += _accuracy_warnings(result, rtol)
    return out


def _effective_temperature_warnings(probe, result):
    """Say where the effective temperature is undetermined (NaN)."""
    te = getattr(result, "effective_temperature", None)
    if not probe.has_gap or te is None or getattr(result, "up_rate", None) is None:
        return []
    te = np.asarray(te, float)
    up = np.broadcast_to(np.asarray(result.up_rate, float), te.shape)
    dn = np.broadcast_to(np.asarray(result.down_rate, float), te.shape)
    out = []
    under = np.isnan(te) & (up == 0) & (dn > 0)
    if np.any(under):
        gaps_ = np.broadcast_to(np.asarray(probe.gap if result.gap is None else result.gap,
                                           float), te.shape)
        # up < 1e-300 down, so ln(down/up) > 690.8
        bound = HBAR * gaps_ / (KB * math.log(1e300))
        where = _grid_prefix(under)
        lead = f"{where} " if where else ""
        out.append(
            f"{lead}the effective temperature is undetermined (reported as NaN, "
            "null in JSON): the up rate is not zero here (a warm gas or circular "
            "motion) but below the smallest number a double holds, reported as 0; "
            f"T_eff < {_g(float(np.max(bound)) * 1e9)} nK")
    mask = np.isnan(te) & (up > 0)
    if not np.any(mask):
        return out
    gaps = np.broadcast_to(np.asarray(probe.gap if result.gap is None else result.gap,
                                      float), te.shape)
    eu = getattr(result, "up_rate_error", None)
    ed = getattr(result, "down_rate_error", None)
    eu = np.broadcast_to(np.asarray(0.0 if eu is None else eu, float), te.shape)
    ed = np.broadcast_to(np.asarray(0.0 if ed is None else ed, float), te.shape)
    with np.errstate(divide="ignore", invalid="ignore"):
        unc = TEFF_ERROR_FACTOR * (eu / up + ed / dn)
        bound = HBAR * gaps / (KB * unc)
    i = int(np.argmax(mask))
    where = _grid_prefix(mask)
    lead = f"{where} " if where else ""
    return out + [
        f"{lead}the effective temperature is undetermined (reported as NaN, "
        f"null in JSON): the up and down rates agree to within "
        f"{TEFF_ERROR_FACTOR:g} times their error estimates "
        f"(|ln(down/up)| = {_g(abs(math.log(dn.flat[i] / up.flat[i])))} <= "
        f"{_g(unc.flat[i])}), so only |T_eff| > {_g(bound.flat[i] * 1e9)} nK is "
        "known (equal rates mean an infinite effective temperature)"]


def _accuracy_warnings(result, rtol):
    """Name the rates whose error estimate is above the requested rtol."""
    out = []
    for name, field in (("up rate", "up_rate"), ("down rate", "down_rate"),
                        ("emission rate", "emission_rate")):
        rate = getattr(result, field, None)
        err = getattr(result, field + "_error", None)
        if rate is None or err is None:
            continue
        r = np.asarray(rate, float)
        e = np.broadcast_to(np.asarray(err, float), r.shape)
        with np.errstate(divide="ignore", invalid="ignore"):
            rel = np.where(r > 0, e / r, 0.0)
        mask = rel > rtol
        if not np.any(mask):
            continue
        where = _grid_prefix(mask)
        lead = f"{where} " if where else ""
        out.append(
            f"{lead}the {name} is known only to a relative accuracy of "
            f"{_g(float(np.max(rel)))} (its error estimate), worse than the "
            f"requested rtol = {rtol:g}: rounding costs digits within about "
            "1e-8 (relative) of a threshold speed, and circular sums stop at "
            "about 1e-10 (the accuracy of their Bessel functions)")
    return out


# ---------------------------------------------------------------------------
# The path and the extent of the uniform gas
# ---------------------------------------------------------------------------
def _um(x):
    return _g(x * 1e6)


def _range_text(x, unit_scale, unit):
    a = np.asarray(x, float)
    if a.size <= 1:
        return f"{_g(float(a) * unit_scale)} {unit}"
    return (f"between {_g(float(np.min(a)) * unit_scale)} and "
            f"{_g(float(np.max(a)) * unit_scale)} {unit} over the grid")


def transit_summary(condensate, trajectory, result):
    """A straight path through the uniform region of a finite cloud.

    With ``condensate.size`` (radius R_u of the uniform region around the
    origin) and a linear ``trajectory`` (start s, unit direction n, speed v):
    impact parameter ``b = |s - (s.n) n|``, chord ``L = 2 sqrt(R_u^2 - b^2)``
    and transit time ``t = L / v``; at the stationary rates the expected
    numbers of transitions during the transit are ``Gamma t`` (meaningful
    while they are << 1 and t spans many gap periods).  Returns a dict of SI
    values (arrays on a grid of speeds), or None where it does not apply
    (no size, not a straight path, the line misses the region, v = 0).
    """
    size = getattr(condensate, "size", None)
    if size is None or trajectory is None or \
            getattr(trajectory, "stationary_kind", None) != "inertial":
        return None
    start = np.asarray(getattr(trajectory, "start", np.zeros(1)), float)
    n = np.asarray(trajectory.direction, float)
    along = float(np.dot(start, n))
    b = float(np.linalg.norm(start - along * n))
    if b >= size:
        return None
    v = np.asarray(result.speed, float)
    if not np.any(v > 0):
        return None
    chord = 2.0 * math.sqrt(size * size - b * b)
    with np.errstate(divide="ignore"):
        t = np.where(v > 0, chord / np.where(v > 0, v, 1.0), np.inf)
    out = {"size": size, "impact_parameter": b, "chord": chord,
           "time": t if t.ndim else float(t),
           "expected_up": None, "expected_down": None, "expected_emitted": None,
           "gap_periods": None}

    def times(rate):
        if rate is None:
            return None
        x = np.asarray(rate, float) * t
        return x if x.ndim else float(x)
    if result.up_rate is not None:
        out["expected_up"] = times(result.up_rate)
        out["expected_down"] = times(result.down_rate)
        gap = np.asarray(result.gap, float)
        periods = gap * t / (2 * math.pi)
        out["gap_periods"] = periods if periods.ndim else float(periods)
    else:
        out["expected_emitted"] = times(result.emission_rate)
    return out


def path_warnings(condensate, probe, trajectory, result):
    """Sentences on the path against the uniform region (``condensate.size``):
    a circle reaching beyond it, a straight path starting outside it or
    missing it, and the duration of a straight transit through it with the
    expected numbers of transitions."""
    size = getattr(condensate, "size", None)
    if size is None or trajectory is None:
        return []
    out = []
    kind = getattr(trajectory, "stationary_kind", None)
    if kind == "circular":
        R = np.asarray(trajectory.radius, float)
        reach = R + float(np.linalg.norm(trajectory.centre))
        bad = reach > size
        if np.any(bad):
            where = _grid_prefix(bad)
            lead = f"{where} " if where else ""
            out.append(
                f"{lead}the circular path leaves the uniform region: it reaches "
                f"radius + |centre| = {_um(float(np.max(reach)))} um from the cloud "
                f"centre, beyond condensate.size = {_um(size)} um; the uniform-gas "
                "rates do not describe the probe near or outside the edge")
        return out
    if kind != "inertial":
        return out
    start = np.asarray(getattr(trajectory, "start", np.zeros(1)), float)
    r0 = float(np.linalg.norm(start))
    if r0 > size:
        out.append(
            f"the straight path starts outside the uniform region: |start| = "
            f"{_um(r0)} um from the cloud centre, beyond condensate.size = "
            f"{_um(size)} um")
    n = np.asarray(trajectory.direction, float)
    b = float(np.linalg.norm(start - float(np.dot(start, n)) * n))
    if b >= size:
        out.append(
            f"the straight path never crosses the uniform region: the line passes "
            f"the cloud centre at {_um(b)} um, outside condensate.size = "
            f"{_um(size)} um; the rates describe an infinite uniform gas only")
        return out
    info = transit_summary(condensate, trajectory, result)
    if info is None:
        return out
    text = (f"a straight transit through the uniform region (radius "
            f"condensate.size = {_um(size)} um) lasts "
            f"t = {_range_text(info['time'], 1e3, 'ms')} (chord {_um(info['chord'])} "
            f"um at impact parameter {_um(b)} um, divided by the speed)")
    if info["expected_up"] is not None:
        text += (f"; at the stationary rates the expected numbers of transitions "
                 f"in it are Gamma_up t = {_range_text(info['expected_up'], 1, '')} "
                 f"(from the ground state) and Gamma_down t = "
                 f"{_range_text(info['expected_down'], 1, '')} (from the excited state)")
        big = np.maximum(np.asarray(info["expected_up"]), np.asarray(info["expected_down"]))
    else:
        text += (f"; at the stationary rate the expected number of emitted phonons "
                 f"is Gamma t = {_range_text(info['expected_emitted'], 1, '')}")
        big = np.asarray(info["expected_emitted"])
    out.append(text.replace(" ,", ",").replace("  ", " ") + " (informational)")
    if probe.has_gap and np.any(big > PROBABILITY_LIMIT):
        where = _grid_prefix(big > PROBABILITY_LIMIT)
        lead = f"{where} " if where else ""
        out.append(
            f"{lead}first order fails for the transit: the expected number of "
            f"transitions during it reaches {_g(float(np.max(big)))} (should be << 1; "
            f"limit {PROBABILITY_LIMIT}); a transition probability is then not "
            "rate x time")
    if info["gap_periods"] is not None:
        periods = np.asarray(info["gap_periods"], float)
        short = periods < MIN_GAP_PERIODS
        if np.any(short):
            where = _grid_prefix(short)
            lead = f"{where} " if where else ""
            out.append(
                f"{lead}the transit lasts only {_g(float(np.min(periods)))} gap "
                f"periods (fewer than {MIN_GAP_PERIODS:g}): switching the coupling "
                "on and off matters and rate x time is no estimate of the "
                "transition probability; compute the finite transit instead")
    return out
