"""The circular kernel: golden-rule rates of uniform circular motion of
radius R and angular frequency w_c = v/R, in the gas's units.

The Jacobi-Anger expansion turns the time integral into a sum over
harmonics m of ``2 pi delta(D +- w_k - m w_c)``: harmonic m absorbs the
resonant shell w_k = +-D + m w_c with weight J_m(k R)^2 (2D, in the plane)
or its average over the polar angle W_m(k R) (3D, ``harmonics.w3``).  Each
family of harmonics is summed outward from the region where ``k R ~ |m|``
until Kapteyn's inequality bounds what is left below the tolerance.
"""
from __future__ import annotations

import math

import numpy as np

from probe.engines.bessel import envelope, jv_bounded
from probe.engines.stationary.harmonics import kapteyn, w3, w3_terms
from probe.engines.stationary.limits import CUT, EPS, MAX_HARMONICS
from probe.errors import ModelError

TOO_MANY_HARMONICS = (
    "harmonics are spaced by the angular frequency, so a slow rotation or a "
    "large circle needs very many; for R >> xi the rate approaches that of "
    "straight motion at the same speed (kind = \"linear\"), for v << c the "
    "static one")

_KEYS = ("plain", "thermal", "energy")
#: relative rounding of the harmonic's weights (root q, structure factor,
#: group velocity, form factor, occupation) and of the summation
_SUMMING = 64 * EPS
#: harmonics in the first block beyond the window edge, and the largest block
_FIRST_BLOCK = 32
_LARGEST_BLOCK = 8192
#: relative rounding of a harmonic's argument x = q R (q a root of w_q = w)
_ARGUMENT = 8 * EPS


def first_harmonic(W, wc, sign):
    """Lowest harmonic m with a resonant shell, sign W + m w_c > 0 (m >= 1
    without a detuning)."""
    mlo = math.floor(-sign * W / wc) + 1
    if W == 0:
        mlo = max(mlo, 1)
    return mlo


def _work_edge(disp, v, W, wc, sign, qcut):
    """The harmonic at the window edge for ``circular_work``: the edge q
    (root_plus, or the up window's upper edge, or the threshold's q), capped
    at the form factor's cutoff."""
    if sign > 0:
        qe = float(disp.root_plus(np.array([v]), np.array([W]))[0])
    else:
        qe = float(disp.roots_up(np.array([v]), np.array([W]))[1][0])
        if np.isnan(qe):
            qe = float(disp.threshold(np.array([W]))[1][0]) if W > 0 else 0.0
    qe = min(qe, qcut) if np.isfinite(qe) else qcut
    return (float(disp.omega(qe)) - sign * W) / wc if np.isfinite(qe) else math.inf


def _last_harmonic(disp, R, W, wc, sign, qcut, rtol, lo):
    """First harmonic m >= lo at which the sum stops (beyond the cutoff, or
    Kapteyn's bound of the remainder below 0.1 rtol): doubling, then
    bisection on integers.  None if it is beyond 1e15."""
    def done(m):
        q = disp.inverse(sign * W + m * wc)
        z = q * R / np.maximum(m, 1)
        rho2 = kapteyn(np.minimum(z, 1.0)) ** 2
        with np.errstate(divide="ignore"):
            tail = m * np.log(np.where(rho2 > 0, rho2, 1e-300))
        return (q > qcut) | ((z < 1) & (tail < math.log(0.1 * rtol)))

    def stops(m):
        return bool(done(np.array([float(m)]))[0])
    hi = lo
    while not stops(hi):
        hi *= 2
        if hi > 1e15:
            return None
    a_, b_ = lo, hi
    while b_ - a_ > 1:
        mid = (a_ + b_) // 2
        if stops(mid):
            b_ = mid
        else:
            a_ = mid
    return b_


def _bessel_cost_3d(disp, R, W, wc, sign, mlo, m_hi):
    """Bessel functions of the 3D harmonics mlo..m_hi: the per-harmonic
    cost ``w3_terms`` sampled and integrated (trapezoid), doubled."""
    m = np.unique(np.round(np.linspace(mlo, m_hi, 2049)))
    w = sign * W + m * wc
    q = disp.inverse(np.where(w > 0, w, 0.0))
    cost = w3_terms(m, q * R).astype(float)
    return 2.0 * (float(np.sum(0.5 * (cost[1:] + cost[:-1]) * np.diff(m))) + cost[0])


def circular_work(gas, R, v, W, s, rtol=1e-8):
    """Predicted (harmonics, Bessel-function evaluations) of
    ``circular_kernel`` for one point, from the same window edges and stopping
    rule (Kapteyn's bound below 0.1 rtol), without evaluating any Bessel
    function.  Used to refuse sums that would take minutes.  The evaluation
    count is doubled: against counted runs (R = 10 to 1e4 xi, v = 1e-5 to
    1e3 c) the plain prediction was low by a factor of up to 1.9."""
    disp, d = gas.disp, gas.d
    wc = v / R
    qcut = math.sqrt(CUT) / s if s > 0 else math.inf
    harmonics = 0.0
    evals = 0.0
    for sign in ((+1, -1) if W > 0 else (+1,)):
        mlo = first_harmonic(W, wc, sign)
        m_edge = _work_edge(disp, v, W, wc, sign, qcut)
        start = 0 if (sign > 0 and W > 0) else mlo
        lo = max(start, 1, int(min(m_edge, 1e15)) if np.isfinite(m_edge) else 1)
        m_hi = _last_harmonic(disp, R, W, wc, sign, qcut, rtol, lo)
        if m_hi is None:
            return math.inf, math.inf
        count = (m_hi - start + 1) + (start - mlo if start > mlo else 0)
        harmonics += count
        if d == 3 and math.isfinite(count):
            evals += _bessel_cost_3d(disp, R, W, wc, sign, mlo, m_hi)
        else:
            evals += 2.0 * count
    return harmonics, evals


class _HarmonicSum:
    """The harmonic sums of one point (scalars R, v, W, s): blocks of
    harmonics summed outward until Kapteyn's bound on the remainder is below
    0.1 rtol of every sum, with a running count of Bessel functions."""

    def __init__(self, gas, R, v, W, s, rtol, energy, max_harmonics, max_evaluations):
        self.gas, self.disp, self.d = gas, gas.disp, gas.d
        self.R, self.v, self.W, self.s = R, v, W, s
        self.rtol, self.energy = rtol, energy
        self.max_harmonics, self.max_evaluations = max_harmonics, max_evaluations
        self.wc = v / R
        self.qcut = math.sqrt(CUT) / s if s > 0 else math.inf
        self.work = 0.0          # Bessel functions evaluated so far
        #: bounds of the Bessel functions' errors, per family and sum
        self.bessel = {sign: dict.fromkeys(_KEYS, 0.0) for sign in (+1, -1)}

    def weights(self, m, x):
        """J_m(x)^2 (2D) or W_m(x) (3D) and bounds on their errors: those of
        the Bessel functions and the effect of the argument's rounding
        (x = q R to _ARGUMENT relative: dJ/dx ~ (r + m^(1/3)) (envelope + |J|)/x
        with r = sqrt|x^2 - m^2|; dW/dx = (J_2m(2x) - W)/x)."""
        n = np.abs(m)
        if self.d == 2:
            J, e, env, r = jv_bounded(m, x)
            e = e + _ARGUMENT * (r + np.cbrt(n) + 1) * (env + np.abs(J))
            self.work += m.size
            return J * J, e * (2 * np.abs(J) + e)
        self.work += float(np.sum(w3_terms(m, x)))
        Wm, e = w3(m, x, with_error=True)
        r = np.sqrt(np.abs((2 * x - 2 * n) * (2 * x + 2 * n)))
        return Wm, e + _ARGUMENT * (envelope(2 * n, 2 * x) + Wm * (2 * n + r + 3))

    def terms(self, m, sign):
        """Sums over the harmonics ``m`` of one family (with the bounds of
        their Bessel functions' errors added into ``self.bessel``), and the
        last terms' q, P0 (the harmonic's weight without J^2), w and n_th."""
        gas, disp = self.gas, self.disp
        w = sign * self.W + m * self.wc
        q = disp.inverse(w)
        vg = disp.group_velocity(q)
        Sq = disp.structure_factor(q)
        B, eB = self.weights(m, q * self.R)
        P0 = q * Sq / vg if self.d == 2 else q * q * Sq / (math.pi * vg)
        if self.work > self.max_evaluations:
            raise ModelError(
                "trajectory.radius",
                f"the circular sum (radius {self.R:.4g} xi, speed {self.v:.4g} c) stopped "
                f"after {self.work:.3g} Bessel-function evaluations, the limit; "
                + TOO_MANY_HARMONICS)
        pf = P0 * gas.form(q, self.s)
        base = pf * B
        n_th = gas.occupation(q) if gas.T > 0 else np.zeros_like(q)
        sums = {"plain": base.sum(), "thermal": (base * n_th).sum(),
                "energy": (base * w).sum() if self.energy else 0.0}
        ebase = pf * eB
        errs = self.bessel[sign]
        errs["plain"] += ebase.sum()
        errs["thermal"] += (ebase * n_th).sum()
        errs["energy"] += (ebase * w).sum() if self.energy else 0.0
        return sums, q, P0, w, n_th

    def _block(self, m0, direction, m_stop, m_edge, previous):
        """The next block of harmonics from ``m0`` in ``direction``: the
        first reaches past the window edge, the next ones double up to 256
        or an eighth of the edge's harmonic (small circles need a few dozen
        harmonics in all)."""
        reach = (m_edge - m0) if direction > 0 else (m0 - m_edge)
        if previous == 0:
            size = max(_FIRST_BLOCK, reach + _FIRST_BLOCK)
        else:
            size = min(2 * previous, max(256, abs(m_edge) / 8))
        size = int(min(_LARGEST_BLOCK, size))
        if direction > 0:
            return np.arange(m0, m0 + size, dtype=float)
        lo = max(m_stop, m0 - size + 1)
        return np.arange(m0, lo - 1, -1, dtype=float)

    def _remainder(self, sign, direction, M, m_edge, last, tot):
        """Kapteyn's bound on what is left beyond harmonic M for each sum, if
        it is below the tolerance; else None.  ``last`` = (q, P0, n_th, w)
        of harmonic M."""
        qM, P0, n_end, w_end = last
        zM = qM * self.R / abs(M) if M != 0 else math.inf
        past_peak = True
        if direction > 0 and sign < 0 and self.W > 0:
            past_peak = M >= m_edge
        if not (zM < 1 and past_peak):
            return None
        r = kapteyn(zM) ** 2
        g = r * math.exp(3.0 / abs(M)) if direction > 0 else r
        if not g < 1:
            return None
        tail = P0 * r ** abs(M) * g / (1 - g)
        bound = {"plain": tail, "thermal": tail * n_end,
                 "energy": tail * w_end * math.e if self.energy else 0.0}
        ok = all(bound[k] <= self.rtol * 0.1 * abs(tot[k]) + 1e-300 for k in _KEYS)
        return bound if ok else None

    def sweep(self, sign, m_first, direction, m_stop, m_edge):
        """Sum terms m_first, m_first+direction, ... (not past m_stop) until
        the remainder bound is met.  Returns sums, bounds, count."""
        tot = dict.fromkeys(_KEYS, 0.0)
        bnd = dict.fromkeys(_KEYS, 0.0)
        count = 0
        m0 = m_first
        size = 0
        while True:
            m = self._block(m0, direction, m_stop, m_edge, size)
            size = m.size
            if m.size == 0:
                break
            sums, q, P0, w, n_th = self.terms(m, sign)
            for k in _KEYS:
                tot[k] += sums[k]
            count += m.size
            M = m[-1]
            m0 = M + direction
            if direction < 0 and M <= m_stop:
                break
            if q[-1] > self.qcut and direction > 0:
                # the form factor is below exp(-80) from here on
                break
            bound = self._remainder(sign, direction, M, m_edge,
                                    (q[-1], P0[-1], n_th[-1], w[-1]), tot)
            if bound is not None:
                bnd = bound
                break
            if count > self.max_harmonics:
                raise ModelError(
                    "trajectory.radius",
                    f"the harmonic sum did not converge within {self.max_harmonics} "
                    f"terms (radius {self.R:.4g} xi, speed {self.v:.4g} c, angular "
                    f"frequency v/R = {self.wc:.4g} c/xi); " + TOO_MANY_HARMONICS)
        return tot, bnd, count

    def _edge(self, sign):
        """The harmonic at the family's window edge (where k R ~ |m|)."""
        disp, v, W, qcut = self.disp, self.v, self.W, self.qcut
        if sign > 0:
            qe = float(disp.root_plus(np.array([v]), np.array([W]))[0])
            if not np.isfinite(qe):
                qe = qcut
        else:
            qc_, qd_ = disp.roots_up(np.array([v]), np.array([W]))
            if np.isfinite(qd_[0]):
                qe = float(qd_[0])
            elif np.isnan(qd_[0]):
                qe = float(disp.threshold(np.array([W]))[1][0]) if W > 0 else 0.0
                if not np.isfinite(qe):
                    qe = qcut
            else:
                qe = qcut
        return (float(disp.omega(qe)) - sign * W) / self.wc if np.isfinite(qe) else 1e9

    def family(self, sign):
        """Sums, remainder bounds and count of one family of harmonics:
        upward from the first (or from m = 0), then the negative harmonics
        downward."""
        W, wc = self.W, self.wc
        mlo = first_harmonic(W, wc, sign)
        up_start = max(mlo, 0 if sign > 0 and W > 0 else mlo)
        tot, bnd, cnt = self.sweep(sign, up_start, +1, None, self._edge(sign))
        if up_start > mlo:
            # negative harmonics: w = W - |m| w_c > 0; they matter down to
            # |m| ~ q_a R and decay beyond
            qa = float(self.disp.root_minus(np.array([self.v]), np.array([W]))[0])
            m_edge_neg = -(W - float(self.disp.omega(qa))) / wc
            t2, b2, c2 = self.sweep(sign, up_start - 1, -1, mlo, m_edge_neg)
            for k in _KEYS:
                tot[k] += t2[k]
                bnd[k] += b2[k]
            cnt += c2
        return tot, bnd, cnt


def circular_kernel(gas, R, v, W, s, rtol=1e-8, energy=False, max_harmonics=MAX_HARMONICS,
                    max_evaluations=math.inf):
    """Dimensionless circular rates for one point (scalars R, v, W, s), in
    units of A xi^-d xi/c.  Returns dict like ``inertial_kernel`` plus the
    number of harmonics used.

    Each family of harmonics (``w_k = W + m w_c`` and ``w_k = m w_c - W``) is
    summed outward from the region where ``k R ~ |m|`` until Kapteyn's
    inequality bounds what is left below the tolerance.
    """
    if (not gas.disp.bounded_windows) and v >= 1 and s == 0:
        raise ModelError(
            "condensate.dispersion",
            "with the 'phonon' dispersion and a point probe (width 0) the "
            "supersonic circular rate diverges: every harmonic radiates; give "
            "the probe a width or use 'bogoliubov'")
    hs = _HarmonicSum(gas, R, v, W, s, rtol, energy, max_harmonics, max_evaluations)
    t1, e1, n1 = hs.family(+1)
    b1 = hs.bessel[+1]
    if W > 0:
        t2, e2, n2 = hs.family(-1)
        b2 = hs.bessel[-1]
        down = t1["plain"] + t1["thermal"] + t2["thermal"]
        up = t2["plain"] + t2["thermal"] + t1["thermal"]
        return {"down": (down, e1["plain"] + e1["thermal"] + e2["thermal"]
                         + b1["plain"] + b1["thermal"] + b2["thermal"] + _SUMMING * down),
                "up": (up, e2["plain"] + e2["thermal"] + e1["thermal"]
                       + b2["plain"] + b2["thermal"] + b1["thermal"] + _SUMMING * up),
                "harmonics": n1 + n2}
    em = t1["plain"] + t1["thermal"]
    return {"emission": (em, e1["plain"] + e1["thermal"] + b1["plain"] + b1["thermal"]
                         + _SUMMING * em),
            "absorption": (t1["thermal"], e1["thermal"] + b1["thermal"]
                           + _SUMMING * t1["thermal"]),
            "energy": (t1["energy"], e1["energy"] + b1["energy"] + _SUMMING * t1["energy"]),
            "harmonics": n1}
