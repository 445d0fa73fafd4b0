"""Poisson summation of a long run of 2D harmonics.

A family's sum runs over the integers m = A ... B of f(m) = P(m) J_|m|(x_m)^2
(P the smooth weights: q S/v_g, form factor, occupation or frequency; x_m =
q_m R on the resonant shell).  f(t) is analytic in a real t between the
integers, so with a smooth window psi Poisson's summation formula

    sum_m f(m) psi(m) = sum_k int f(t) psi(t) exp(-2 pi i k t) dt

turns the sum into integrals.  Above the turning point J_nu(x)^2 =
|H|^2/2 + (|H|^2/2) cos(Phi + c) (Debye, A&S 9.3.15-16), with the mean
|H|^2/2 smooth (``bessel.mean_square``) and the phase Phi = 2 (r - nu
arctan(r/nu)) + ..., whose rate along the run is Phi'(t) = 2 (x' sin phi -
sgn(t) phi), cos phi = nu/x and x' = dx/dt = v/v_g.  The run is split by a
partition of unity 1 = psi_F + psi_S + psi_D whose edges are erfc steps
(Gaussians of width sigma, whose transforms are exp(-(sigma w)^2/4)):

* psi_F where Phi' stays at least DELTA from every multiple of 2 pi: no term
  of the formula with the oscillating part has a stationary point, and with
  sigma w >= alias at every edge's frequency margin w they are all below
  exp(-alias^2/4) = DROPPED rtol (times the largest term over w); what is
  left is the integral of the mean;
* psi_S where |Phi'| <= DELTA_S (near a stationary point of the phase, near
  a turning point and below it, where J^2 changes slowly): the terms k != 0
  are as small, and the sum is the integral of f psi_S itself;
* psi_D = 1 - psi_F - psi_S (the run's ends, and wherever neither holds):
  summed term by term, exactly.

The integrals use Gauss-Legendre rules of 20 and 16 nodes on panels split
until their difference (the error estimate) is below 0.01 min(rtol, 1e-8)
of the run, for every sum, or below the Bessel functions' own error bounds
there.  The reported error
is that estimate, the integrated bounds of the Bessel functions' errors, the
bound on the dropped terms and Kapteyn's bound on a negligible head below
the first turning point that is left out.  A run this does not suit (Debye's
mean short of 1e-16 at a node, panels that do not settle, a head that is
not negligible) returns None and is summed term by term.

Only runs of at least MIN_SPAN harmonics are tried: the edges cost a few
hundred evaluations each, against one per harmonic.
"""
from __future__ import annotations

import math

import numpy as np

from probe.engines.bessel import mean_square
from probe.engines.stationary.harmonics import kapteyn
from probe.engines.stationary.limits import EPS

#: what the dropped terms of Poisson's formula may reach, relative to rtol
#: (times the largest term over the frequency margin): each window edge is a
#: Gaussian of width sigma whose transform at a frequency margin w is
#: exp(-(sigma w)^2/4), so sigma w >= alias = 2 sqrt(ln(1/(DROPPED rtol)))
DROPPED = 1e-3
#: an edge rises over [c, c + 2 TAPER sigma] (erfc(TAPER)/2 ~ 1e-17 at c)
TAPER = 6.0
#: least distance of Phi' to 2 pi Z on the fast parts (1.5 DELTA at the samples)
DELTA = 0.1
#: largest |Phi'| on the slow parts
DELTA_S = 0.3
#: runs shorter than this are summed term by term
MIN_SPAN = 6000
#: spacing of the samples that classify the run (harmonics), and their
#: largest number (the features they locate are at least ~ 30 harmonics
#: wide at R = 1e4 xi, and widen with the run)
_SAMPLE = 4.0
_SAMPLES = 6000
#: the largest panel, and the oscillation periods a panel may span
_LARGEST_PANEL = 1024.0
_LARGEST_MEAN_PANEL = 4096.0
#: panels on a window edge, in its sigmas; on the Airy scale near a turning point
_EDGE_PANEL = 4.0
_AIRY_PANEL = 3.0
_PERIODS = 3.0
#: rounds of panel splitting before the run is given up
_ROUNDS = 12
_CUT = 1e-17

_RULES = {}


def _rule(n):
    if n not in _RULES:
        x, w = np.polynomial.legendre.leggauss(n)
        _RULES[n] = (x, w)
    return _RULES[n]


def _erfc():
    from scipy.special import erfc       # imported when first needed (start-up)
    return erfc


def _bumps(t, bumps):
    """Sum of the erfc bumps (c, d, sigma_c, sigma_d): 1/4 erfc((c + 6 sigma_c
    - t)/sigma_c) erfc((t - d + 6 sigma_d)/sigma_d), 1e-17 at c and d, 1
    inside [c + 12 sigma_c, d - 12 sigma_d]."""
    erfc = _erfc()
    out = np.zeros_like(t)
    for c, d, sc, sd in bumps:
        sel = (t > c) & (t < d)
        if sel.any():
            u = t[sel]
            out[sel] += 0.25 * erfc((c + TAPER * sc - u) / sc) \
                * erfc((u - d + TAPER * sd) / sd)
    return out


def _edge_sigma(t_s, margin, c, d, inward, alias):
    """The least sigma of an edge at c (rising toward d, or falling from d
    toward c when not ``inward``) such that alias/sigma stays below the
    frequency ``margin`` (sampled) everywhere on the edge, 2 TAPER sigma
    long; inf where the interval is too short."""
    sel = np.nonzero((t_s >= c) & (t_s <= d))[0]
    if not inward:
        sel = sel[::-1]
    if sel.size < 2:
        return math.inf
    length = np.abs(t_s[sel] - t_s[sel[0]])
    sigma = length / (2 * TAPER)
    low = np.minimum.accumulate(margin[sel])
    ok = np.nonzero((sigma * low >= alias) & (sigma > 0))[0]
    return float(sigma[ok[0]]) if ok.size else math.inf


def _runs(mask, t):
    """(start, end) values of t over the runs of True in ``mask``, each
    shrunk by one sample at both ends (the classification is sampled)."""
    edges = np.flatnonzero(np.diff(np.concatenate(([0], mask.astype(np.int8), [0]))))
    out = []
    for a, b in zip(edges[::2], edges[1::2]):
        lo, hi = a + 1, b - 2
        if hi > lo:
            out.append((float(t[lo]), float(t[hi])))
    return out


def _subtract(intervals, holes):
    """Intervals minus the union of ``holes`` (both lists of (a, b))."""
    out = list(intervals)
    for h0, h1 in holes:
        nxt = []
        for a, b in out:
            if h1 <= a or h0 >= b:
                nxt.append((a, b))
                continue
            if h0 > a:
                nxt.append((a, h0))
            if h1 < b:
                nxt.append((h1, b))
        out = nxt
    return [(a, b) for a, b in out if b > a]


class _Run:
    """The run m = A ... B of family ``sign`` of point ``i`` of the sums
    ``hs`` (a ``circular._HarmonicSums``)."""

    def __init__(self, hs, sign, i, A, B):
        self.hs, self.sign, self.i = hs, sign, i
        self.A, self.B = float(A), float(B)
        self.R, self.v = float(hs.R[i]), float(hs.v[i])
        self.keys = ["plain"] + (["thermal"] if hs.gas.T > 0 else []) \
            + (["energy"] if hs.energy else [])
        self.evaluations = 0
        self.alias = 2 * math.sqrt(math.log(1 / (DROPPED * hs.rtol)))

    def shells(self, t):
        own = np.full(t.size, self.i, dtype=np.intp)
        sh = self.hs.shells(t, self.sign, own)
        weights = {"plain": sh["pf"]}
        if "thermal" in self.keys:
            weights["thermal"] = sh["pf"] * sh["n_th"]
        if "energy" in self.keys:
            weights["energy"] = sh["pf"] * sh["w"]
        return sh, weights

    def phase_rate(self, t, sh):
        """Phi'(t) above the turning point (0 below it) and x, nu, r."""
        nu = np.abs(t)
        x = sh["q"] * self.R
        r = np.sqrt(np.maximum((x - nu) * (x + nu), 0.0))
        with np.errstate(divide="ignore", invalid="ignore"):
            xp = self.v / self.hs.disp.group_velocity(sh["q"])
            rate = 2 * (xp * r / x - np.sign(t) * np.arctan2(r, nu))
        return np.where(x > nu, rate, 0.0), x, nu, r

    # --- the integrands, per key: (values, error bounds) at nodes t -------
    def full(self, t):
        sh, weights = self.shells(t)
        J2, e2, _ = self.hs.weights(t, sh["q"] * self.R, np.zeros(t.size, dtype=np.intp))
        self.evaluations += t.size
        return {k: (w * J2, w * e2) for k, w in weights.items()}

    def mean(self, t):
        sh, weights = self.shells(t)
        val, err, good = mean_square(np.abs(t), sh["q"] * self.R)
        self.evaluations += t.size
        if not good.all():
            raise _GiveUp
        return {k: (w * val, w * err) for k, w in weights.items()}

    def integral(self, integrand, window, panels, extra=None):
        """Sum over ``panels`` (a, b) of the integral of integrand * window:
        (values, quadrature error estimates, integrated error bounds, largest
        |integrand|) per key, panels split until the estimate is below
        0.01 min(rtol, 1e-8) of the run's share, for every sum (or below
        the Bessel errors' bound);
        and the integrand at the points ``extra``, evaluated with the first
        round (one call: the values near a turning point share its route)."""
        x20, w20 = _rule(20)
        x16, w16 = _rule(16)
        lo = np.array([p[0] for p in panels])
        hi = np.array([p[1] for p in panels])
        tot, qerr, berr, peak = ({k: 0.0 for k in self.keys} for _ in range(4))
        extra = np.zeros(0) if extra is None else extra
        at_extra = None
        for _ in range(_ROUNDS):
            if lo.size == 0:
                if at_extra is None:
                    at_extra = integrand(extra) if extra.size else {}
                return tot, qerr, berr, peak, at_extra
            mid, half = (lo + hi) / 2, (hi - lo) / 2
            t20 = (mid[:, None] + half[:, None] * x20).ravel()
            t16 = (mid[:, None] + half[:, None] * x16).ravel()
            t = np.concatenate((t20, t16))
            n20, n = t20.size, t.size
            win = window(t)
            vals = integrand(t if at_extra is not None else np.concatenate((t, extra)))
            if at_extra is None:
                at_extra = {k: (f[n:], e[n:]) for k, (f, e) in vals.items()}
            q20, q16, b20 = {}, {}, {}
            for k, (f, e) in vals.items():
                f = f[:n] * win
                peak[k] = max(peak[k], float(np.max(np.abs(f))))
                q20[k] = (f[:n20].reshape(-1, 20) @ w20) * half
                q16[k] = (f[n20:].reshape(-1, 16) @ w16) * half
                b20[k] = ((e[:n20] * win[:n20]).reshape(-1, 20) @ w20) * half
            bad = np.zeros(lo.size, dtype=bool)
            share = (hi - lo) / max(self.B - self.A, 1.0)
            for k in self.keys:
                # every sum (a sharp occupation shapes the thermal one alone)
                est = np.abs(q20[k] - q16[k])
                scale = abs(tot[k]) + abs(float(np.sum(q20[k])))
                # (below the bound of the Bessel functions' errors, splitting
                # does not help: their rounding is noise from node to node)
                floor = np.maximum(64 * EPS * np.abs(q20[k]), 2 * np.abs(b20[k]))
                # (at least to 1e-10 of the sum whatever the tolerance: a
                # looser rule let the 20- and 16-node rules agree on a wrong
                # value, 3e-10 off at rtol 1e-6, with a random-campaign case)
                bad |= est > np.maximum(1e-2 * min(self.hs.rtol, 1e-8) * scale * share, floor)
            good = ~bad
            for k in self.keys:
                tot[k] += float(np.sum(q20[k][good]))
                qerr[k] += float(np.sum(np.abs(q20[k][good] - q16[k][good])))
                berr[k] += float(np.sum(np.abs(b20[k][good])))
            lo, hi = lo[bad], hi[bad]
            mid = (lo + hi) / 2
            lo, hi = np.concatenate((lo, mid)), np.concatenate((mid, hi))
        raise _GiveUp


class _GiveUp(Exception):
    """The run is summed term by term instead."""


def _panels(intervals, density, t_s):
    """Panels over ``intervals``: breakpoints where the integral of
    ``density`` (per harmonic, sampled at t_s) crosses an integer, and at
    least at the interval ends."""
    out = []
    cum = np.concatenate(([0.0], np.cumsum(0.5 * (density[1:] + density[:-1])
                                          * np.diff(t_s))))
    for a, b in intervals:
        ca, cb = np.interp([a, b], t_s, cum)
        k = np.arange(math.floor(ca) + 1, math.ceil(cb))
        inner = np.interp(k, cum, t_s) if k.size else np.zeros(0)
        pts = np.unique(np.concatenate(([a], inner[(inner > a) & (inner < b)], [b])))
        out.extend(zip(pts[:-1], pts[1:]))
    return out


def poisson_run(hs, sign, i, A, B):
    """Sum of family ``sign`` of point ``i`` over the harmonics A ... B
    (integers, B - A >= MIN_SPAN, not crossing 0), by Poisson summation:
    ({key: sum}, {key: quadrature and dropped-term error}, {key: Bessel
    error bound}, Bessel evaluations), or None where the run does not suit
    it."""
    run = _Run(hs, sign, i, A, B)
    try:
        return _poisson(run)
    except _GiveUp:
        return None


class _Samples:
    """The run sampled (at most _SAMPLES points): shells, Phi', x, nu, r."""

    def __init__(self, run):
        n_s = int(min((run.B - run.A) / _SAMPLE, _SAMPLES)) + 2
        self.t = np.linspace(run.A, run.B, n_s)
        sh, self.weights = run.shells(self.t)
        self.rate, self.x, self.nu, self.r = run.phase_rate(self.t, sh)

    def keep(self, sel):
        for name in ("t", "rate", "x", "nu", "r"):
            setattr(self, name, getattr(self, name)[sel])
        self.weights = {k: w[sel] for k, w in self.weights.items()}


def _drop_head(run, smp):
    """Drop the head of the run below its first turning point whose terms
    are negligible (below 1e-4 rtol of a rough sum), bounded by Kapteyn's
    inequality J_nu(x)^2 <= rho(x/nu)^(2 nu) (Watson sec. 8.7) with the
    largest bound up to the next sample; returns the bound per key."""
    head = {k: 0.0 for k in run.keys}
    x, nu, t = smp.x, smp.nu, smp.t
    below = np.cumprod(x < nu).astype(bool)
    if not below[1:].any():
        return head
    with np.errstate(divide="ignore", invalid="ignore"):
        rho = kapteyn(np.where(below, x / np.maximum(nu, 1e-300), 0.0))
        kb = {k: w * np.exp(2 * nu * np.log(np.where(rho > 0, rho, 1e-300)))
              for k, w in smp.weights.items()}
        rough = float(np.sum(np.where(x > nu, smp.weights["plain"] / (np.pi * smp.r), 0.0))) \
            * (t[1] - t[0])
    j = np.nonzero(below)[0]
    bound = {k: (np.floor(t[j[:-1]]) - run.A) * np.maximum.accumulate(kb[k][j[1:]])
             for k in kb}
    fine = np.nonzero(bound["plain"] <= 1e-4 * run.hs.rtol * rough)[0]
    if fine.size:
        cut = fine[-1]
        run.A = float(np.floor(t[j[cut]]))
        head = {k: float(bound[k][cut]) for k in kb}
        smp.keep(t >= run.A)
    return head


def _windows(run, smp):
    """The fast parts F and slow parts S as bumps (c, d, sigma_c, sigma_d)."""
    dist = np.abs(smp.rate - 2 * np.pi * np.round(smp.rate / (2 * np.pi)))
    x, nu, r = smp.x, smp.nu, smp.r
    # fast: far from every multiple of 2 pi, Debye's mean valid (its
    # corrections fall like (nu^3/r^4)^k: r^4 > 100 nu^3 keeps the 18 of them
    # below 1e-16, checked again at every node), each edge as narrow as its
    # frequency margin allows
    fast = (x > nu) & (dist >= 1.5 * DELTA) & (r > 60) & (r ** 4 > 100 * nu ** 3)
    F = []
    for a, b in _runs(fast, smp.t):
        sa = _edge_sigma(smp.t, dist, a, b, True, run.alias)
        sb = _edge_sigma(smp.t, dist, a, b, False, run.alias)
        if 2 * TAPER * (sa + sb) + 1 < b - a:
            F.append((a, b, sa, sb))
    # slow: |Phi'| small (or below the turning point), inside the run
    sig_s = run.alias / (2 * np.pi - DELTA_S)
    S = [(max(a, run.A + 1), min(b, run.B - 1)) for a, b in _runs(np.abs(smp.rate) <= DELTA_S,
                                                                   smp.t)]
    S = [(a, b, sig_s, sig_s) for a, b in S if b - a > 4 * TAPER * sig_s + 1]
    return F, S


def _cores(bumps):
    return [(a + 2 * TAPER * sa, b - 2 * TAPER * sb) for a, b, sa, sb in bumps]


def _edge_density(dens, t_s, bumps):
    """Raise the panel density on each bump's edges to one panel per
    _EDGE_PANEL sigmas."""
    for a, b, sa, sb in bumps:
        for lo, hi, sg in ((a, a + 2 * TAPER * sa, sa), (b - 2 * TAPER * sb, b, sb)):
            edge = (t_s >= lo) & (t_s <= hi)
            dens[edge] = np.maximum(dens[edge], 1.0 / (_EDGE_PANEL * sg))
    return dens


def _slow_density(run, smp):
    """Panels on the slow parts: _PERIODS periods of Phi', and near a
    turning point two Airy lengths (J^2 changes on the scale nu^(1/3) in x,
    nu^(1/3)/|x' - 1| in t)."""
    dens = np.maximum(np.abs(smp.rate) / (2 * np.pi * _PERIODS), 1.0 / _LARGEST_PANEL)
    cube = np.cbrt(np.maximum(smp.nu, 1.0))
    near = np.abs(smp.x - smp.nu) < 8 * cube
    slope = np.abs(run.v / run.hs.disp.group_velocity(smp.x / run.R) - 1)
    dens[near] = np.maximum(dens[near], np.maximum(slope[near], 1e-3) / (_AIRY_PANEL * cube[near]))
    return dens


def _poisson(run):
    smp = _Samples(run)
    head = _drop_head(run, smp)
    F, S = _windows(run, smp)

    def psi_f(t):
        return _bumps(t, F)

    def psi_s(t):
        return (1 - psi_f(t)) * _bumps(t, S)

    keys = run.keys
    total, qerr, berr = ({k: 0.0 for k in keys} for _ in range(3))
    peaks = []
    # the fast parts: the mean of J^2
    dens = _edge_density(np.full(smp.t.size, 1.0 / _LARGEST_MEAN_PANEL), smp.t, F)
    parts = [(run.mean, psi_f, _panels([(a, b) for a, b, _, _ in F], dens, smp.t))]
    # the slow parts without the fast parts' cores: J^2 itself
    dens = _edge_density(_slow_density(run, smp), smp.t, F + S)
    parts.append((run.full, psi_s, _panels(_subtract([(a, b) for a, b, _, _ in S], _cores(F)),
                                           dens, smp.t)))
    # the rest term by term (evaluated with the slow parts): the integers
    # outside every core
    ranges = _subtract([(run.A - 0.5, run.B + 0.5)], _cores(F) + _cores(S))
    m = np.concatenate([np.arange(math.ceil(a), math.floor(b) + 1, dtype=float)
                        for a, b in ranges]) if ranges else np.zeros(0)
    m = m[(m >= run.A) & (m <= run.B)]
    w_d = 1 - psi_f(m) - psi_s(m)
    m, w_d = m[w_d > _CUT], w_d[w_d > _CUT]
    for integrand, window, panels in parts:
        val, qe, be, peak, at_m = run.integral(integrand, window, panels,
                                               m if integrand == run.full else None)
        peaks.append(peak)
        for k in keys:
            total[k] += val[k]
            qerr[k] += qe[k]
            berr[k] += be[k]
    for k, (f, e) in at_m.items():
        total[k] += float(np.sum(f * w_d))
        berr[k] += float(np.sum(e * w_d))
    if head["plain"] > 1e-3 * run.hs.rtol * abs(total["plain"]):
        raise _GiveUp
    # the dropped terms of Poisson's formula: each window edge's transform at
    # its least frequency margin (at least 1.5 DELTA), times the largest term
    edges = 2 * (len(F) + len(S))
    for k in keys:
        peak = max(p[k] for p in peaks)
        qerr[k] += head[k] + edges * DROPPED * run.hs.rtol * peak * (1 / (1.5 * DELTA) + 1)
    return total, qerr, berr, run.evaluations
