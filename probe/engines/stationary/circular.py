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
from probe.engines.stationary.poisson import MIN_SPAN, poisson_run
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
#: harmonics evaluated together, at most (the blocks of many points at once)
_GROUP = 1 << 16


def first_harmonic(W, wc, sign):
    """Lowest harmonic m with a resonant shell, sign W + m w_c > 0 (m >= 1
    without a detuning), per point (arrays W, w_c)."""
    mlo = np.floor(-sign * W / wc) + 1
    return np.where(W == 0, np.maximum(mlo, 1), mlo)


def _window_edge_q(disp, v, W, sign, speeds=None):
    """The wavenumber of a family's window edge, per point (arrays): the
    down window's root_plus, or the up window's upper edge; where the up
    window is empty, the threshold's q (0 without a gap); not capped.
    ``speeds`` (an array like v), if given, receives the threshold speed
    where the up window is empty and a gap is given (left alone elsewhere)."""
    if sign > 0:
        return disp.root_plus(v, W)
    qe = disp.roots_up(v, W)[1]
    gap = np.isnan(qe)
    if gap.any():
        qt = np.zeros(int(np.count_nonzero(gap)))
        has = W[gap] > 0
        if has.any():
            vt, qt[has] = disp.threshold(W[gap][has])
            if speeds is not None:
                speeds[np.nonzero(gap)[0][has]] = vt
        qe[gap] = qt
    return qe


def _work_edge(disp, v, W, wc, sign, qcut):
    """The harmonic at the window edge for ``circular_work`` (arrays over
    points): the edge q (root_plus, or the up window's upper edge, or the
    threshold's q), capped at the form factor's cutoff."""
    qe = _window_edge_q(disp, v, W, sign)
    qe = np.where(np.isfinite(qe), np.minimum(qe, qcut), qcut)
    fin = np.isfinite(qe)
    with np.errstate(invalid="ignore", over="ignore"):
        edge = (disp.omega(np.where(fin, qe, 0.0)) - sign * W) / wc
    return np.where(fin, edge, math.inf)


def _last_harmonic(disp, R, W, wc, sign, qcut, rtol, lo, resolution=0.0):
    """First harmonic m >= lo (per point and family: ``sign`` an array) at
    which the sum stops (beyond the cutoff, or Kapteyn's bound of the
    remainder below 0.1 rtol): doubling, then bisection on integers (or
    until the bracket is below ``resolution`` times its top: the harmonic
    returned is then one where the sum stops, not the first).  inf where it
    is beyond 1e15."""
    def stops(m, i):
        q = disp.inverse(sign[i] * W[i] + m * wc[i])
        z = q * R[i] / np.maximum(m, 1)
        rho2 = kapteyn(np.minimum(z, 1.0)) ** 2
        with np.errstate(divide="ignore"):
            tail = m * np.log(np.where(rho2 > 0, rho2, 1e-300))
        return (q > qcut) | ((z < 1) & (tail < math.log(0.1 * rtol)))

    hi = np.array(lo, dtype=float)
    act = np.arange(hi.size)
    while act.size:
        act = act[~stops(hi[act], act)]
        hi[act] *= 2
        act = act[hi[act] <= 1e15]
    a_, b_ = np.array(lo, dtype=float), hi
    act = np.nonzero((b_ - a_ > np.maximum(1, resolution * b_)) & (b_ <= 1e15))[0]
    while act.size:
        mid = np.floor((a_[act] + b_[act]) / 2)
        ok = stops(mid, act)
        b_[act[ok]] = mid[ok]
        a_[act[~ok]] = mid[~ok]
        act = act[b_[act] - a_[act] > np.maximum(1, resolution * b_[act])]
    return np.where(b_ > 1e15, math.inf, b_)


def _bessel_cost_3d(disp, R, W, wc, sign, mlo, m_hi):
    """Bessel functions of the 3D harmonics mlo..m_hi: the per-harmonic
    cost ``w3_terms`` sampled and integrated (trapezoid), doubled."""
    m = np.unique(np.round(np.linspace(mlo, m_hi, 2049)))
    w = sign * W + m * wc
    q = disp.inverse(np.where(w > 0, w, 0.0))
    cost = w3_terms(m, q * R).astype(float)
    return 2.0 * (float(np.sum(0.5 * (cost[1:] + cost[:-1]) * np.diff(m))) + cost[0])


def circular_works(gas, R, v, W, s, rtol=1e-8):
    """Predicted (harmonics, Bessel-function evaluations) of
    ``circular_kernels`` for each point (arrays R, v > 0, W; scalar s), from
    the same window edges and stopping rule (Kapteyn's bound below 0.1
    rtol), without evaluating any Bessel function (inf where a sum would
    not stop).  Used to refuse sums that would take minutes.  The
    evaluation count is doubled: against counted runs (R = 10 to 1e4 xi,
    v = 1e-5 to 1e3 c) the plain prediction was low by a factor of up to
    1.9."""
    R, v, W = (np.asarray(a, float).ravel() for a in np.broadcast_arrays(R, v, W))
    disp, d = gas.disp, gas.d
    wc = v / R
    qcut = math.sqrt(CUT) / s if s > 0 else math.inf
    harmonics, evals = np.zeros(R.size), np.zeros(R.size)
    fam = []                          # (sign, points, mlo, start, lo) of each family
    for sign in (+1, -1):
        pts = np.arange(R.size) if sign > 0 else np.nonzero(W > 0)[0]
        Wp, wp = W[pts], wc[pts]
        mlo = first_harmonic(Wp, wp, sign)
        m_edge = _work_edge(disp, v[pts], Wp, wp, sign, qcut) if pts.size else mlo
        start = np.where((Wp > 0) & (sign > 0), 0.0, mlo)
        lo = np.maximum(np.maximum(start, 1),
                        np.where(np.isfinite(m_edge), np.trunc(np.minimum(m_edge, 1e15)), 1))
        fam.append((sign, pts, mlo, start, lo))
    # both families' last harmonics in one search
    every = np.concatenate([f[1] for f in fam])
    signs = np.concatenate([np.full(f[1].size, float(f[0])) for f in fam])
    m_hi_all = _last_harmonic(disp, R[every], W[every], wc[every], signs, qcut, rtol,
                              np.concatenate([f[4] for f in fam]))
    offset = 0
    for sign, pts, mlo, start, _ in fam:
        m_hi = m_hi_all[offset:offset + pts.size]
        offset += pts.size
        count = (m_hi - start + 1) + np.maximum(start - mlo, 0)
        harmonics[pts] += count
        if d == 3:
            cost = [_bessel_cost_3d(disp, R[j], W[j], wc[j], sign, mlo[i], m_hi[i])
                    if math.isfinite(count[i]) else math.inf for i, j in enumerate(pts)]
            evals[pts] += np.array(cost)
        else:
            evals[pts] += 2.0 * count
    return harmonics, evals


def circular_work(gas, R, v, W, s, rtol=1e-8):
    """``circular_works`` of one point: (harmonics, Bessel-function
    evaluations) as floats."""
    harmonics, evals = circular_works(gas, R, v, W, s, rtol)
    return float(harmonics[0]), float(evals[0])


_CUBE_ROOTS = np.zeros(0)


def _cube_roots(n):
    """np.cbrt of the harmonics' orders n (integers >= 0 stored as floats),
    from a table kept for the process (cube roots are dear, and sums over
    many points meet the same orders again)."""
    global _CUBE_ROOTS
    top = int(n.max()) + 1 if n.size else 0
    if top > _CUBE_ROOTS.size:
        _CUBE_ROOTS = np.cbrt(np.arange(max(top, 2 * _CUBE_ROOTS.size), dtype=float))
    return _CUBE_ROOTS[n.astype(np.intp)]


def _group_ends(sizes, limit):
    """Split consecutive blocks of ``sizes`` into groups of at most ``limit``
    harmonics (each group at least one block): the group boundaries."""
    ends = np.cumsum(sizes)
    cuts, base = [0], 0
    for i in range(sizes.size):
        if ends[i] - base > limit and i > cuts[-1]:
            cuts.append(i)
            base = ends[i - 1]
    cuts.append(sizes.size)
    return cuts


def _flat_blocks(m0, sizes, direction):
    """Harmonics of consecutive blocks (block i: m0[i], m0[i] + direction,
    ... sizes[i] terms) as one flat array, and each block's first index."""
    starts = np.zeros(sizes.size, dtype=np.intp)
    np.cumsum(sizes[:-1], out=starts[1:])
    offset = np.arange(int(starts[-1] + sizes[-1]), dtype=float) - np.repeat(starts, sizes)
    return np.repeat(m0, sizes) + direction * offset, starts


class _HarmonicSums:
    """The harmonic sums of many points at once (arrays R, v, W; scalar s):
    for each point, blocks of harmonics summed outward until Kapteyn's bound
    on the remainder is below 0.1 rtol of every sum, with a running count of
    Bessel functions.  The blocks of all points still summing are evaluated
    together (in groups of at most _GROUP harmonics); each point sees the
    same blocks and stopping tests as if it were summed alone."""

    def __init__(self, gas, R, v, W, s, rtol, energy, max_harmonics, max_evaluations):
        self.gas, self.disp, self.d = gas, gas.disp, gas.d
        self.R, self.v, self.W, self.s = R, v, W, s
        self.rtol, self.energy = rtol, energy
        self.max_harmonics, self.max_evaluations = max_harmonics, max_evaluations
        self.wc = v / R
        self.qcut = math.sqrt(CUT) / s if s > 0 else math.inf
        self.work = np.zeros(R.size)     # Bessel functions evaluated so far, per point
        #: v/v_th, the largest q R/m on the up family's shells, where it is
        #: below 1 (inf elsewhere; set with the up family's edge, ``_edge``)
        self.zstar = np.full(R.size, math.inf)
        #: bounds of the Bessel functions' errors, per family and sum
        self.bessel = {sign: {k: np.zeros(R.size) for k in _KEYS} for sign in (+1, -1)}

    def weights(self, m, x, groups=None):
        """J_m(x)^2 (2D) or W_m(x) (3D), bounds on their errors (those of the
        Bessel functions and the effect of the argument's rounding: x = q R to
        _ARGUMENT relative, dJ/dx ~ (r + m^(1/3)) (envelope + |J|)/x with
        r = sqrt|x^2 - m^2|; dW/dx = (J_2m(2x) - W)/x) and the Bessel
        functions each cost (``groups``: labels for ``jv_bounded``)."""
        n = np.abs(m)
        if self.d == 2:
            J, e, env, r = jv_bounded(m, x, groups)
            e = e + _ARGUMENT * (r + _cube_roots(n) + 1) * (env + np.abs(J))
            return J * J, e * (2 * np.abs(J) + e), None
        Wm, e = w3(m, x, with_error=True)
        r = np.sqrt(np.abs((2 * x - 2 * n) * (2 * x + 2 * n)))
        return (Wm, e + _ARGUMENT * (envelope(2 * n, 2 * x) + Wm * (2 * n + r + 3)),
                w3_terms(m, x).astype(float))

    def _count_work(self, pts, starts, sizes, cost):
        """Add each block's Bessel functions to its point's count; ModelError
        at the first point past the limit."""
        self.work[pts] += sizes if cost is None else np.add.reduceat(cost, starts)
        over = np.nonzero(self.work[pts] > self.max_evaluations)[0]
        if over.size:
            i = pts[over[0]]
            raise ModelError(
                "trajectory.radius",
                f"the circular sum (radius {self.R[i]:.4g} xi, speed {self.v[i]:.4g} c) stopped "
                f"after {self.work[i]:.3g} Bessel-function evaluations, the limit; "
                + TOO_MANY_HARMONICS)

    def weight(self, q):
        """P0, a harmonic's weight without J^2 or W_m (nor form factor or
        occupation) on the shell q: q S/v_g in 2D, q^2 S/(pi v_g) in 3D."""
        disp = self.disp
        vg = disp.group_velocity(q)
        Sq = disp.structure_factor(q)
        return q * Sq / vg if self.d == 2 else q * q * Sq / (math.pi * vg)

    def shells(self, m, sign, own):
        """What harmonics ``m`` (of the points ``own``, one per harmonic) of
        one family need besides their Bessel functions: the resonant w and q,
        P0 (the weight without J^2 or W_m), P0 times the form factor, n_th."""
        gas, disp = self.gas, self.disp
        w = sign * self.W[own] + m * self.wc[own]
        q = disp.inverse(w)
        P0 = self.weight(q)
        pf = P0 * gas.form(q, self.s) if self.s > 0 else P0
        n_th = gas.occupation(q) if gas.T > 0 else np.zeros_like(q)
        return {"w": w, "q": q, "P0": P0, "pf": pf, "n_th": n_th}

    def terms(self, m, sign, pts, own, starts, sizes, sh):
        """Sums over each block of harmonics (flat ``m``: block i of point
        pts[i] from starts[i], ``sh`` their ``shells``) of one family, with
        the bounds of their Bessel functions' errors added into
        ``self.bessel``."""
        # each block its own group: its route near the turning point is the
        # same whatever other points share the call
        block = np.repeat(np.arange(sizes.size), sizes)
        B, eB, cost = self.weights(m, sh["q"] * self.R[own], block)
        self._count_work(pts, starts, sizes, cost)
        pf, w, n_th = sh["pf"], sh["w"], sh["n_th"]
        base = pf * B
        ebase = pf * eB
        sums = {"plain": np.add.reduceat(base, starts)}
        errs = self.bessel[sign]
        errs["plain"][pts] += np.add.reduceat(ebase, starts)
        if self.gas.T > 0:
            sums["thermal"] = np.add.reduceat(base * n_th, starts)
            errs["thermal"][pts] += np.add.reduceat(ebase * n_th, starts)
        if self.energy:
            sums["energy"] = np.add.reduceat(base * w, starts)
            errs["energy"][pts] += np.add.reduceat(ebase * w, starts)
        return sums

    def _block_sizes(self, m0, direction, m_stop, m_edge, previous):
        """Sizes of the next blocks of harmonics from ``m0`` in ``direction``
        (per point): the first reaches past the window edge, the next ones
        double up to 256 or an eighth of the edge's harmonic (small circles
        need a few dozen harmonics in all); downward blocks end at m_stop."""
        reach = (m_edge - m0) if direction > 0 else (m0 - m_edge)
        # no edge (an up family whose q R/m grows without a turning point,
        # marked 1e9): blocks grow from the first one
        reach = np.where(np.abs(m_edge) >= 1e9, 0.0, reach)
        size = np.where(previous == 0, np.fmax(_FIRST_BLOCK, reach + _FIRST_BLOCK),
                        np.fmin(2 * previous, np.fmax(256, np.abs(m_edge) / 8)))
        size = np.trunc(np.fmin(_LARGEST_BLOCK, size))
        if direction > 0:
            return size.astype(np.intp)
        lo = np.maximum(m_stop, m0 - size + 1)
        return np.maximum(m0 - lo + 1, 0).astype(np.intp)

    def _remainder(self, sign, direction, pts, M, m_edge, last, tot):
        """Kapteyn's bound on what is left beyond harmonic M (per point) for
        each sum, and whether it is below the tolerance.  ``last`` = (q, P0,
        n_th, w) of harmonic M."""
        qM, P0, n_end, w_end = last
        aM = np.abs(M)
        with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
            zM = np.where(M != 0, qM * self.R[pts] / aM, math.inf)
            ok = zM < 1
            factor = 1.0
            if direction > 0 and sign < 0:
                # before the edge z still grows: bound it by its supremum
                before = (M < m_edge) & (self.W[pts] > 0)
                early = before & self._early_ok(pts, aM)
                ok &= ~before | early
                zM = np.where(early, self.zstar[pts], zM)
                factor = np.where(early, 8.0, 1.0)
            r = kapteyn(np.where(ok, zM, 0.0)) ** 2
            g = r * np.exp(3.0 / aM) if direction > 0 else r
            ok &= g < 1
            tail = np.where(ok, factor * P0 * r ** aM * g / (1 - g), 0.0)
        bound = {"plain": tail, "thermal": tail * n_end,
                 "energy": tail * w_end * math.e if self.energy else np.zeros_like(tail)}
        for k in _KEYS:
            ok &= bound[k] <= self.rtol * 0.1 * np.abs(tot[k][pts]) + 1e-300
        return bound, ok

    def _early_ok(self, pts, aM):
        """Where the up family's remainder beyond harmonic M may be bounded
        before the edge harmonic (``_remainder``): below the threshold speed
        (z <= zstar = v/v_th < 1 on every shell) and M >= 2 W/w_c, so that
        w_m/w_M = (m - W/w_c)/(M - W/w_c) <= 2 m/M; with the weights P0
        growing at most like w^3 (``weight_increasing``) P0(m) <= 8 P0(M)
        (m/M)^3 there, which the remainder's factor 8 e^(3 (m - M)/M)
        covers.  The occupation falls as q grows."""
        if not self.disp.weight_increasing:
            return np.zeros(pts.size, dtype=bool)
        return (self.zstar[pts] < 1) & (aM >= 2 * self.W[pts] / self.wc[pts])

    def _stop(self, sign, direction, pts, M, m_stop, m_edge, last, tot, bnd, open_):
        """Which points stop after their block ending at harmonic M (a
        downward sweep at m_stop, an upward one beyond the form factor's cut,
        or with the remainder bound met, which is then kept in ``bnd``)."""
        if direction < 0:
            stop = M <= m_stop
        else:
            # the form factor is below exp(-80) from here on
            stop = last[0] > self.qcut
        bound, ok = self._remainder(sign, direction, pts, M, m_edge, last, tot)
        met = ok & ~stop & open_
        for k in _KEYS:
            bnd[k][pts[met]] = bound[k][met]
        return stop | met

    def sweep(self, sign, pts, m_first, direction, m_stop, m_edge):
        """For each point pts[i], sum terms m_first[i], m_first[i] + direction,
        ... (not past m_stop[i]) until the remainder bound is met.  Returns
        sums, bounds and counts (indexed like the points of the kernel)."""
        n = self.R.size
        tot = {k: np.zeros(n) for k in _KEYS}
        bnd = {k: np.zeros(n) for k in _KEYS}
        count = np.zeros(n, dtype=np.intp)
        m0, size = np.zeros(n), np.zeros(n)
        m0[pts] = m_first
        edge, stop_at = np.zeros(n), np.zeros(n)
        edge[pts] = m_edge
        if m_stop is not None:
            stop_at[pts] = m_stop
        active = np.asarray(pts, dtype=np.intp)
        while active.size:
            sizes = self._block_sizes(m0[active], direction, stop_at[active], edge[active],
                                      size[active])
            active, sizes = active[sizes > 0], sizes[sizes > 0]
            cuts = _group_ends(sizes, _GROUP) if active.size else [0]
            done = []
            for a, b in zip(cuts[:-1], cuts[1:]):
                done.append(self._sweep_group(sign, direction, active[a:b], sizes[a:b],
                                              m0, size, stop_at, edge, tot, bnd, count))
            active = active[~np.concatenate(done)] if done else active
        return tot, bnd, count

    def _trim(self, sign, direction, pts, m, starts, sizes, sh, edge, tot, bnd, later):
        """Blocks after a point's first end at the first harmonic M where the
        sum stops: beyond the form factor's cut (upward) or with Kapteyn's
        bound on what is left below 0.1 rtol of the sums before the block
        (which the sums up to M only exceed), found before any Bessel
        function is evaluated.  Returns the kept harmonics' mask, the new
        sizes and which blocks were cut (those stop)."""
        row = np.repeat(np.arange(pts.size), sizes)
        own = pts[row]
        local = np.arange(m.size) - starts[row]
        # the bound needs q R < |m| (Kapteyn's inequality): only those are tried
        idx = np.nonzero(later[row] & (sh["q"] * self.R[own] < np.abs(m)))[0]
        bound, ok = self._remainder(sign, direction, own[idx], m[idx], edge[own[idx]],
                                    tuple(sh[k][idx] for k in ("q", "P0", "n_th", "w")), tot)
        beyond = sh["q"] > self.qcut if direction > 0 else np.zeros(m.size, dtype=bool)
        stops = beyond & later[row]
        stops[idx[ok]] = True
        first = np.minimum.reduceat(np.where(stops, local, m.size), starts)
        first = np.where(later, first, sizes - 1)   # a first block is summed whole
        cut = first < sizes - 1
        keep = local <= first[row]
        met = np.nonzero(cut)[0]
        at = starts[met] + first[met]
        with_bound = ~beyond[at]
        where = np.searchsorted(idx, at[with_bound])
        for k in _KEYS:
            bnd[k][pts[met[with_bound]]] = bound[k][where]
        return keep, np.minimum(sizes, first + 1), cut

    def _sweep_group(self, sign, direction, pts, sizes, m0, size, stop_at, edge, tot, bnd,
                     count):
        """One block of each point of ``pts``: sums added, counts and next
        starts advanced; returns which points stop."""
        m, starts = _flat_blocks(m0[pts], sizes, direction)
        own = np.repeat(pts, sizes)
        sh = self.shells(m, sign, own)
        cut = np.zeros(pts.size, dtype=bool)
        later = size[pts] > 0
        if later.any():
            keep, sizes, cut = self._trim(sign, direction, pts, m, starts, sizes, sh, edge,
                                          tot, bnd, later)
            m, own = m[keep], own[keep]
            sh = {k: val[keep] for k, val in sh.items()}
            starts = np.zeros(sizes.size, dtype=np.intp)
            np.cumsum(sizes[:-1], out=starts[1:])
        sums = self.terms(m, sign, pts, own, starts, sizes, sh)
        for k, val in sums.items():
            tot[k][pts] += val
        count[pts] += sizes
        size[pts] = sizes
        M = m0[pts] + direction * (sizes - 1)
        m0[pts] = M + direction
        last = starts + sizes - 1
        last = (sh["q"][last], sh["P0"][last], sh["n_th"][last], sh["w"][last])
        stop = cut | self._stop(sign, direction, pts, M, stop_at[pts], edge[pts], last, tot,
                                bnd, ~cut)
        over = np.nonzero(~stop & (count[pts] > self.max_harmonics))[0]
        if over.size:
            i = pts[over[0]]
            raise ModelError(
                "trajectory.radius",
                f"the harmonic sum did not converge within {self.max_harmonics} "
                f"terms (radius {self.R[i]:.4g} xi, speed {self.v[i]:.4g} c, angular "
                f"frequency v/R = {self.wc[i]:.4g} c/xi); " + TOO_MANY_HARMONICS)
        return stop

    def _edge(self, sign, pts):
        """The harmonic at the family's window edge (where k R ~ |m|), per point."""
        disp, v, W, qcut = self.disp, self.v[pts], self.W[pts], self.qcut
        vt = np.full(pts.size, math.inf)
        qe = _window_edge_q(disp, v, W, sign, vt)
        if sign < 0:
            # (a threshold speed only where the up window is empty)
            self.zstar[pts] = np.where(np.isfinite(vt), v / vt, math.inf)
        qe = np.where(np.isfinite(qe), qe, qcut)
        fin = np.isfinite(qe)
        with np.errstate(invalid="ignore", over="ignore"):
            edge = (disp.omega(np.where(fin, qe, 0.0)) - sign * W) / self.wc[pts]
        return np.where(fin, edge, 1e9)

    def silent_bound(self, pts, mlo, m_edge):
        """A bound on the whole up family (``w_k = m w_c - W``, harmonics
        from ``mlo``, edge harmonic ``m_edge``) of each point below the
        threshold speed: (mask where it applies, its logarithm).  It does
        not apply at T > 0, to the energy sum, or to spectra without
        ``weight_increasing``; a family whose bound is below the smallest
        doubles is not summed.  On the resonant shell z_m = q R/m =
        v q/(omega(q) + W) <= v/v_th (the threshold speed is the least
        (omega + W)/q), so Kapteyn's inequality bounds J_m^2 and W_m by
        g^m with g = rho(v/v_th)^2 < 1; the weights P0 grow with q, so up
        to the edge harmonic M (where z peaks) P0(q_M) bounds them, and
        beyond it the remainder bound of ``_remainder`` applies:
        sum <= P0(q_M) (g^mlo/(1 - g) + g^M g'/(1 - g')), g' = g e^(3/M)."""
        disp = self.disp
        if self.gas.T > 0 or self.energy or not disp.weight_increasing:
            return np.zeros(pts.size, dtype=bool), np.zeros(pts.size)
        W = self.W[pts]
        z = self.zstar[pts]
        M = np.ceil(np.where(np.isfinite(m_edge), m_edge, 0.0))
        ok = (z < 1) & (M >= mlo) & (M >= 1) & (m_edge < 1e9)
        with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
            log_g = 2 * np.log(kapteyn(np.where(ok, z, 0.5)))
            P0 = self.weight(disp.inverse(np.where(ok, M * self.wc[pts] - W, 1.0)))
            log_g2 = log_g + 3.0 / np.maximum(M, 1)
            ok &= (log_g2 < 0) & (P0 > 0) & np.isfinite(P0)
            first = mlo * log_g - np.log1p(-np.exp(log_g))
            rest = M * log_g + log_g2 - np.log1p(-np.exp(np.where(ok, log_g2, -1.0)))
            log_bound = np.log(np.where(ok, P0, 1.0)) + np.logaddexp(first, rest)
        return ok, np.where(ok, log_bound, math.inf)

    def poisson(self, sign, pts, up_start, edge, mlo=None):
        """Sum the long runs of family ``sign`` (2D, at least
        ``poisson.MIN_SPAN`` harmonics) by Poisson summation
        (``poisson_run``): upward from up_start to where Kapteyn's bound on
        the remainder is far below the tolerance, or (``mlo`` given) the
        negative harmonics mlo ... up_start - 1.  Returns which of ``pts``
        were summed so (the others are summed term by term) and their sums,
        error bounds and counts (indexed like the points of the kernel)."""
        n = self.R.size
        runs = ({k: np.zeros(n) for k in _KEYS}, {k: np.zeros(n) for k in _KEYS},
                np.zeros(n, dtype=np.intp))
        done = np.zeros(pts.size, dtype=bool)
        if self.d != 2 or pts.size == 0:
            return done, runs
        if mlo is not None:
            cand = np.nonzero(up_start - mlo > MIN_SPAN)[0]
            first, last = mlo[cand], up_start[cand] - 1
        else:
            # a cheap first look: where the run's bulk ends, the edge harmonic
            # or (no edge: every shell radiates) the form factor's cut
            with np.errstate(invalid="ignore", over="ignore"):
                cut = (self.disp.omega(self.qcut) - sign * self.W[pts]) / self.wc[pts] \
                    if math.isfinite(self.qcut) else np.full(pts.size, math.inf)
            bulk = np.where(edge < 1e9, edge, cut)
            # only runs with a window of resonant shells above the turning
            # point (a finite edge, or none because every shell radiates):
            # without one every term is below the turning point and the
            # terms stop at Kapteyn's bound long before MIN_SPAN
            v, W = self.v[pts], self.W[pts]
            with np.errstate(invalid="ignore"):
                window = (self.disp.root_plus(v, W) if sign > 0
                          else self.disp.roots_up(v, W)[1])
            cand = np.nonzero(~np.isnan(window) & np.isfinite(bulk)
                              & (bulk - up_start >= MIN_SPAN / 2))[0]
            p = pts[cand]
            first = up_start[cand]
            lo = np.maximum(np.ceil(np.where(edge[cand] < 1e9, edge[cand], first)), first)
            last = _last_harmonic(self.disp, self.R[p], self.W[p], self.wc[p],
                                  np.full(p.size, float(sign)), self.qcut, 1e-6 * self.rtol,
                                  lo, 0.01) if p.size else first
        tot, bnd, cnt = runs
        for j, c in enumerate(cand):
            i, A, B = pts[c], float(first[j]), float(last[j])
            if not (math.isfinite(B) and MIN_SPAN <= B - A < self.max_harmonics):
                continue
            out = poisson_run(self, sign, i, A, B)
            if out is None:
                continue
            sums, errs, bessel, evaluations = out
            bound = {k: 0.0 for k in _KEYS}
            if mlo is None:
                # what lies beyond B: Kapteyn's bound, as for a sweep
                here = {k: np.zeros(n) for k in _KEYS}
                for k in sums:
                    here[k][i] = sums[k]
                sh = self.shells(np.array([B]), sign, np.array([i]))
                if sh["q"][0] > self.qcut:
                    # the form factor is below exp(-80) from here on (as in _stop)
                    beyond, ok = {k: np.zeros(1) for k in _KEYS}, np.ones(1, dtype=bool)
                else:
                    last_ = tuple(sh[k] for k in ("q", "P0", "n_th", "w"))
                    beyond, ok = self._remainder(sign, +1, np.array([i]), np.array([B]),
                                                 np.array([edge[c]]), last_, here)
                if not ok[0]:
                    continue
                bound = {k: float(beyond[k][0]) for k in _KEYS}
            self._count_work(np.array([i]), np.zeros(1, dtype=np.intp),
                             np.array([evaluations]), None)
            for k in sums:
                tot[k][i] = sums[k]
                bnd[k][i] = errs[k] + bound[k]
                self.bessel[sign][k][i] += bessel[k]
            cnt[i] = int(B - A + 1)
            done[c] = True
        return done, runs

    def family(self, sign, pts):
        """Sums, remainder bounds and counts of one family of harmonics for
        the points ``pts``: upward from the first (or from m = 0), then the
        negative harmonics downward."""
        if pts.size == 0:
            zero = {k: np.zeros(self.R.size) for k in _KEYS}
            return zero, dict(zero), np.zeros(self.R.size, dtype=np.intp)
        W, wc = self.W[pts], self.wc[pts]
        mlo = first_harmonic(W, wc, sign)
        up_start = np.maximum(mlo, 0) if sign > 0 else mlo
        up_start = np.where(W > 0, up_start, mlo)
        edge = self._edge(sign, pts)
        ok, log_bound = (self.silent_bound(pts, mlo, edge) if sign < 0
                         else (np.zeros(pts.size, dtype=bool), None))
        quiet = ok & (log_bound < math.log(1e-300)) if ok.any() else ok
        # every term below the smallest double (quiet): the family is 0; a
        # long run in 2D: Poisson summation (``poisson``) where it applies
        loud = np.nonzero(~quiet)[0]
        direct = ~quiet
        long_, runs = self.poisson(sign, pts[loud], up_start[loud], edge[loud])
        direct[loud] = ~long_
        tot, bnd, cnt = self.sweep(sign, pts[direct], up_start[direct], +1, None, edge[direct])
        for k in _KEYS:
            tot[k] += runs[0][k]
            bnd[k] += runs[1][k]
        cnt = cnt + runs[2]
        if quiet.any():
            bnd["plain"][pts[quiet]] = np.maximum(np.exp(log_bound[quiet]), 5e-324)
        neg = up_start > mlo
        if neg.any():
            # negative harmonics: w = W - |m| w_c > 0; they matter down to
            # |m| ~ q_a R and decay beyond
            sub = pts[neg]
            qa = self.disp.root_minus(self.v[sub], self.W[sub])
            m_edge_neg = -(self.W[sub] - self.disp.omega(qa)) / self.wc[sub]
            long_, runs = self.poisson(sign, sub, up_start[neg], m_edge_neg, mlo[neg])
            rest = ~long_
            t2, b2, c2 = self.sweep(sign, sub[rest], up_start[neg][rest] - 1, -1, mlo[neg][rest],
                                    m_edge_neg[rest])
            for k in _KEYS:
                tot[k] += t2[k] + runs[0][k]
                bnd[k] += b2[k] + runs[1][k]
            cnt = cnt + c2 + runs[2]
        return tot, bnd, cnt


def circular_kernels(gas, R, v, W, s, rtol=1e-8, energy=False, max_harmonics=MAX_HARMONICS,
                     max_evaluations=math.inf):
    """Dimensionless circular rates of many points (1D arrays R, v > 0, W;
    scalar s) in units of A xi^-d xi/c: dict of (values, errors) arrays per
    process ("down", "up" where W > 0; "emission", "absorption", "energy"
    where W = 0; NaN elsewhere) and "harmonics" (counts per point).

    Each family of harmonics (``w_k = W + m w_c`` and ``w_k = m w_c - W``) is
    summed outward from the region where ``k R ~ |m|`` until Kapteyn's
    inequality bounds what is left below the tolerance; in 2D the blocks of
    all points are evaluated together, each point's digits as if alone.
    """
    R, v, W = (np.asarray(a, float).ravel() for a in np.broadcast_arrays(R, v, W))
    if gas.d == 3 and R.size > 1:
        # the spherical averages' recurrences run as long as the longest of
        # their group: a 3D point is summed alone, so that its digits do not
        # depend on the other points of the call
        parts = [circular_kernels(gas, R[i:i + 1], v[i:i + 1], W[i:i + 1], s, rtol, energy,
                                  max_harmonics, max_evaluations) for i in range(R.size)]
        return {k: (tuple(np.concatenate([p[k][j] for p in parts]) for j in (0, 1))
                    if k != "harmonics" else np.concatenate([p[k] for p in parts]))
                for k in parts[0]}
    if (not gas.disp.bounded_windows) and np.any(v >= 1) and s == 0:
        raise ModelError(
            "condensate.dispersion",
            "with the 'phonon' dispersion and a point probe (width 0) the "
            "supersonic circular rate diverges: every harmonic radiates; give "
            "the probe a width or use 'bogoliubov'")
    hs = _HarmonicSums(gas, R, v, W, s, rtol, energy, max_harmonics, max_evaluations)
    gapped = W > 0
    t1, e1, n1 = hs.family(+1, np.arange(R.size))
    t2, e2, n2 = hs.family(-1, np.nonzero(gapped)[0])
    b1, b2 = hs.bessel[+1], hs.bessel[-1]
    nan = np.full(R.size, np.nan)
    down = t1["plain"] + t1["thermal"] + t2["thermal"]
    up = t2["plain"] + t2["thermal"] + t1["thermal"]
    em = t1["plain"] + t1["thermal"]
    out = {"down": (down, e1["plain"] + e1["thermal"] + e2["thermal"]
                    + b1["plain"] + b1["thermal"] + b2["thermal"] + _SUMMING * down),
           "up": (up, e2["plain"] + e2["thermal"] + e1["thermal"]
                  + b2["plain"] + b2["thermal"] + b1["thermal"] + _SUMMING * up),
           "emission": (em, e1["plain"] + e1["thermal"] + b1["plain"] + b1["thermal"]
                        + _SUMMING * em),
           "absorption": (t1["thermal"], e1["thermal"] + b1["thermal"]
                          + _SUMMING * t1["thermal"]),
           "energy": (t1["energy"], e1["energy"] + b1["energy"] + _SUMMING * t1["energy"])}
    for key, (val, err) in out.items():
        mine = gapped if key in ("down", "up") else ~gapped
        out[key] = (np.where(mine, val, nan), np.where(mine, err, nan))
    out["harmonics"] = n1 + n2
    return out


def circular_kernel(gas, R, v, W, s, rtol=1e-8, energy=False, max_harmonics=MAX_HARMONICS,
                    max_evaluations=math.inf):
    """Dimensionless circular rates for one point (scalars R, v, W, s), in
    units of A xi^-d xi/c: dict like ``inertial_kernel`` (down and up where
    W > 0, else emission, absorption and energy) plus the number of
    harmonics used (``circular_kernels`` of one point)."""
    out = circular_kernels(gas, np.array([float(R)]), np.array([float(v)]),
                           np.array([float(W)]), s, rtol=rtol, energy=energy,
                           max_harmonics=max_harmonics, max_evaluations=max_evaluations)
    keys = ("down", "up") if W > 0 else ("emission", "absorption", "energy")
    res = {k: (float(out[k][0][0]), float(out[k][1][0])) for k in keys}
    res["harmonics"] = int(out["harmonics"][0])
    return res
