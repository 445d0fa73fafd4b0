"""The pair route: the double time sum over pairs of times, directions
averaged exactly.

In an isotropic gas the angular integral of |a(D, q n)|^2 is exact as a sum
over pairs of times (the first-order probability as a double time integral
of the gas's correlation function):

    int dOmega |a|^2 = |S^{d-1}| sum_ij b_i b_j e^{i (D + w) (t_i - t_j)} j_d(q r_ij),

b = chi w_t on the time grid, r_ij = |x(t_i) - x(t_j)| and j_d the
isotropic average of e^{-i k.dx} (sin x/x, J_0, cos).  Grouped by the lag
s_l = l dt,

    U_l(q) = sum_i b_i b_{i+l} j_d(q r_{i,i+l}),
    int dOmega |a|^2 = |S^{d-1}| sum_l mult_l U_l(q) cos((D + w(q)) s_l)

(mult 2 for l > 0), so ``U`` does not depend on the detuning: one set of
lag sums serves every gap (:class:`LagSpectrum`).  ``j_d(q r)`` is even in r
and entire: on r <= r_max it is a Chebyshev series in y = 2 (r/r_max)^2 - 1,
j_d(q r) = sum_k a_k(q) T_k(y), with K ~ q_max r_max / 2 + a few terms
(the Jacobi-Anger bound of each direction's e^{-i q r u}, averaged over u),
so that

    U_l(q) = sum_k H_lk a_k(q),    H_lk = sum_i b_i b_{i+l} T_k(y_{i,i+l}):

the pairs cost K cheap recurrence steps each (no transcendental function),
and the nodes only the product H A.  Cost: pairs x K + lags x nodes.  The
dropped Chebyshev tail (below ``_TAIL``, bounded by the Jacobi-Anger terms)
and the rounding of the K-term sums, times (sum |b|)^2, are the route's
angular error bound: a floor, which refining cannot lower (the driver then
turns to the direction routes); time and radial
errors come from the same sub-rules as the other routes (the every-other-
point time rule has its own lag sums on the even times).
"""
from __future__ import annotations

import math

import numpy as np
from scipy import fft as sfft

from probe.engines.fft_kernel import chebyshev_degree
from probe.engines.transit.grids import radial_phasor
from probe.engines.transit.lag import _MEASURE, _isotropic_average
from probe.engines.transit.route import AngularSums, Route

#: dropped Chebyshev tail of j_d(q r) (absolute; |j_d| <= 1)
_TAIL = 1e-15
_EPS = 2.0 ** -53
#: elements of the (lags x pairs) blocks of the moment recurrence
_BLOCK = 16_000
# seconds per (pair, Chebyshev term) and per (lag, node) (2 threads on the
# development machine); a pair's separation and weight cost about _SETUP terms
_COST_PAIR = 4.0e-9
_SETUP = 10
_COST_NODE = 6.0e-9


def chebyshev_terms(z_max, angular=1.0):
    """Terms K of the series in y of j_d(q r) for q r_max <= z_max: half the
    Jacobi-Anger terms of e^{-i z x} (the even ones) whose tail is below
    _TAIL, raised with the angular refinement factor."""
    kx = chebyshev_degree(z_max * angular, _TAIL)
    return int(kx // 2 + 2)


def _bessel_ld(x, n):
    """J_0(x) .. J_{n-1}(x) in long double, (n,) + x.shape, x >= 0: the
    downward ratio recurrence J_k/J_{k-1} = x/(2k - x J_{k+1}/J_k) from well
    past n and the normalisation J_0 + 2 sum J_2k = 1."""
    x = np.asarray(x, np.longdouble)
    top = n + int(math.ceil(float(x.max()) if x.size else 0.0)) + 40
    ratio = np.zeros((top + 1,) + x.shape, np.longdouble)
    r = np.zeros_like(x)
    for k in range(top, 0, -1):
        r = x / (2 * k - x * r)
        ratio[k] = r
    J = np.cumprod(ratio[1:], axis=0)               # J_k/J_0, k = 1 .. top
    J0 = 1.0 / (1.0 + 2.0 * J[1::2].sum(axis=0))
    out = np.empty((n,) + x.shape, np.longdouble)
    out[0] = J0
    out[1:] = J[:n - 1] * J0
    return out


def chebyshev_coefficients(q, r_max, d, K):
    """a_k(q), (K, nq): j_d(q r) = sum_k a_k T_k(2 (r/r_max)^2 - 1) on
    r <= r_max, computed in long double; and per node the error of the
    K-term series in doubles: twice the sum of |a_k| of the 8 terms past K
    (the dropped tail, whose terms fall faster than geometrically there)
    plus the rounding of the coefficients to doubles.  2D: a_k = e_k (-1)^k J_k(q r_max/2)^2 (e_0 = 1,
    else 2); 1D and 3D: interpolation at K + 8 Chebyshev points."""
    n = K + 8
    if d == 2:
        sign = np.where(np.arange(n) % 2 == 0, 1.0, -1.0) * np.where(np.arange(n) > 0, 2, 1)
        a = sign[:, None] * _bessel_ld(0.5 * r_max * np.asarray(q, np.longdouble), n) ** 2
    else:
        y = np.cos(np.pi * (np.arange(n, dtype=np.longdouble) + 0.5) / n)
        z = np.outer(r_max * np.sqrt(0.5 * (1.0 + y)), np.asarray(q, np.longdouble))
        if d == 3:
            f = np.ones_like(z)
            nz = z != 0
            f[nz] = np.sin(z[nz]) / z[nz]
        else:
            f = np.cos(z)
        a = sfft.dct(f, type=2, axis=0) / n
        a[0] *= 0.5
    a64 = np.ascontiguousarray(np.asarray(a[:K], float))
    # the dropped tail, and the rounding of the coefficients to doubles
    # (shared by the full rule and the sub-rule, unlike the rounding of the
    # pair sums, which shows in the time estimate)
    floor = _EPS * np.asarray(np.abs(a[:K]).sum(axis=0), float)
    return a64, 2.0 * np.asarray(np.abs(a[K:]).sum(axis=0), float) + floor


def _block_moments(Xpad, bpad, N, inv, K, l0, l1, out):
    """H[l, k] for the lags l0 <= l < l1 (rows of ``out``): the pair sums
    sum_i b_i b_{i+l} T_k(y) with y = 2 r^2/r_max^2 - 1 (inv = 2/r_max^2),
    on a (lags x pairs) block of strided views into the padded positions
    and weights (weights 0 past the end)."""
    m = N - l0
    L = l1 - l0
    win = np.lib.stride_tricks.sliding_window_view
    C = win(bpad, m)[l0:l1] * bpad[:m]
    Y = np.zeros((L, m))
    for c in range(Xpad.shape[1]):
        dx = win(Xpad[:, c], m)[l0:l1] - Xpad[:m, c]
        dx *= dx
        Y += dx
    Y *= inv
    Y -= 1.0
    np.clip(Y, -1.0, 1.0, out=Y)
    T = np.empty((K, L, m))
    T[0] = 1.0
    if K > 1:
        T[1] = Y
    Y *= 2.0
    for k in range(2, K):
        np.multiply(Y, T[k - 1], out=T[k])
        T[k] -= T[k - 2]
    # the reduction over pairs as one batched product: (lags, K, m) @ (lags, m, 1)
    out[l0:l1] = np.matmul(T.transpose(1, 0, 2), C[:, :, None])[:, :, 0]


def lag_moments(X, b, r_max, K, pool=None):
    """H (lags, K): H[l, k] = sum_i b_i b_{i+l} T_k(2 r_{i,i+l}^2/r_max^2 - 1)
    for every lag of the time grid (positions X in the gas's units)."""
    N = b.size
    H = np.zeros((N, K))
    inv = 2.0 / max(r_max, 1e-300) ** 2
    # positions and weights padded by N (weights 0) for the strided views
    Xpad = np.concatenate([X, np.repeat(X[-1:], N, axis=0)])
    bpad = np.concatenate([b, np.zeros(N)])
    blocks, l0 = [], 0
    while l0 < N:
        rows = max(4, _BLOCK // max(N - l0, 1))
        blocks.append((l0, min(N, l0 + rows)))
        l0 = blocks[-1][1]

    def run(blk):
        _block_moments(Xpad, bpad, N, inv, K, blk[0], blk[1], H)

    if pool is not None and len(blocks) > 1:
        list(pool.map(run, blocks))
    else:
        for blk in blocks:
            run(blk)
    return H


#: the smallest r_max (healing lengths) of the series: a path at rest has
#: every separation 0, which any positive r_max covers with a few terms
MIN_REACH = 1e-3


def path_reach(X):
    """An upper bound of every distance between two points of the path: the
    smaller of the diagonal of its bounding box and twice the largest
    distance from the box's centre (|x_i - x_j| <= |x_i - c| + |x_j - c|;
    a loop of radius R: 2 R, where the diagonal is 2.8 R)."""
    if X.shape[0] == 0:
        return 0.0
    lo, hi = X.min(axis=0), X.max(axis=0)
    radius = float(np.sqrt(((X - 0.5 * (lo + hi)) ** 2).sum(axis=1)).max())
    return min(float(np.sqrt(((hi - lo) ** 2).sum())), 2.0 * radius)


def cached_moments(problem, sample, K, r_max, pool):
    """Lag moments H (lags, K) of the full rule of ``sample`` and of its
    every-other-point sub-rule, the latter taken from the problem's
    ``route_cache`` when a coarser pass computed them (its full rule on the
    even nodes) -- each pass of the time ladder costs its own full rule."""
    time = sample.time
    nt = time.size - 1
    cache = problem.route_cache.setdefault("pairs_moments", {})
    b_full = time.chi * time.wt
    full = cache.get((nt, K, r_max))
    if full is None:
        full = cache[(nt, K, r_max)] = lag_moments(sample.X, b_full, r_max, K, pool)
    sub = cache.get((nt // 2, K, r_max))
    if sub is None:
        b_sub = (time.chi * time.wt2)[::2]
        sub = cache[(nt // 2, K, r_max)] = lag_moments(sample.X[::2], b_sub, r_max, K, pool)
    return full, sub, float(np.abs(b_full).sum())


class LagSpectrum:
    """The detuning-free lag sums of a pass: U_l(q) of the full time rule
    (lags l dt) and of its every-other-point sub-rule (lags 2 l dt) on the
    radial nodes, each multiplied by the cos and sin of w(q) s_l, and the
    angular error bound per node.  :meth:`sums` gives the
    :class:`AngularSums` of any detunings: cost lags x nodes per detuning."""

    def __init__(self, problem, sample, grid, K, r_max, pool):
        time, d = sample.time, problem.d
        self.measure = _MEASURE[d]
        self.time, self.grid = time, grid
        A, tail = chebyshev_coefficients(grid.qn, r_max, d, K)
        full, sub, b_sum = cached_moments(problem, sample, K, r_max, pool)
        self.parts = []
        for H, dt in ((full, time.dt), (sub, 2 * time.dt)):
            U = H @ A                                     # (lags, nodes)
            s = dt * np.arange(H.shape[0])
            ph = np.outer(s, grid.omega)
            mult = np.full(s.size, 2.0)
            mult[0] = 1.0
            self.parts.append((s, mult, U * np.cos(ph), U * np.sin(ph)))
        # the series' dropped tail and rounded coefficients, relative to the
        # largest possible value |S^{d-1}| (sum |b|)^2
        self.bound = self.measure * b_sum ** 2 * tail

    def columns(self, Ds):
        """E (nodes, 2 nD): |S^{d-1}| sum_l mult U_l cos((D + w) s_l) for each
        detuning with the full rule, then each with the sub-rule."""
        cols = []
        for s, mult, UC, US in self.parts:
            for D in Ds:
                cD, sD = mult * np.cos(D * s), mult * np.sin(D * s)
                cols.append(self.measure * (cD @ UC - sD @ US))
        return np.stack(cols, axis=1)

    def sums(self, problem, Ds=None):
        """The :class:`AngularSums` of ``problem`` for the detunings ``Ds``
        (default: the problem's)."""
        Ds = problem.Ds if Ds is None else Ds
        sums = AngularSums(problem, self.grid.qn.size, self.time)
        sums.E[:] = self.columns(Ds)
        sums.angular_error[:, :len(Ds)] = self.bound[:, None]
        return sums


def _within(nt, sample):
    """Whether ``nt`` steps are no more than the pass's own grid (up to the
    rounding of the ladder's base)."""
    return nt <= 1.05 * (sample.time.size - 1) + 4


class _PairPlan:
    """The pair route's q-uniform grid, Chebyshev terms, path reach, its
    own time grid (``sample``) and the steps of the rungs it may still need
    (``rungs``)."""

    def __init__(self, grid, K, r_max, sample, rungs):
        self.grid, self.K, self.r_max, self.sample = grid, K, r_max, sample
        self.rungs = rungs


class PairRoute(Route):
    """Pair sums of the double time integral: angles exact (isotropic gas).

    Its cost grows as the square of the time steps, so it climbs a ladder of
    its own: the first pass takes the steps whose sub-rule samples the
    highest frequency of the path and the phonons, without the switching's
    bandwidth (the pass's own grid puts even its sub-rule at the bound with
    that bandwidth, set at an amplitude level far below rtol), a miss of the
    time estimate doubles them (:meth:`climb`) up to the pass's grid, and
    the moments of one rung are the next rung's sub-rule, so a miss costs
    little.  The cost model counts this rung and half of those above it."""

    name = "pairs"
    time_ladder = True
    angular_floor = True
    refusal = ("the pair route averages directions exactly and gives no direction "
               "spectrum; use 'auto'")

    def applies(self, problem):
        """Every transit without a direction spectrum (the gas is
        isotropic)."""
        return not problem.spectrum

    @staticmethod
    def _ladder(problem, sample, res):
        """(steps of this pass, path reach): the ladder's base is fixed at
        the first pass, its rung raised by :meth:`climb`."""
        cache = problem.route_cache.setdefault("pairs_ladder", {})
        if not cache:
            # the first rung's sub-rule samples the frequencies of the path
            # and the phonons without the switching's bandwidth
            n1 = (sample.time.size - 1) / res.time
            core = problem.highest_frequency(res.q_max, switching=False)
            share = min(1.0, core / problem.highest_frequency(res.q_max))
            cache["base"] = max(8, 2 * int(math.ceil(0.5 * n1 * share)))
            cache["rung"] = 1
            # a probe at rest has reach 0: any r_max > 0 holds every separation
            cache["reach"] = max(1.02 * path_reach(sample.X), MIN_REACH)
        nt = int(round(cache["base"] * cache["rung"] * res.time))
        return nt, cache["reach"]

    def climb(self, problem, sample, res):
        """Double the route's own time steps after a miss of the time
        estimate, while they stay within the pass's grid (True); False once
        the pass's grid itself must be refined."""
        cache = problem.route_cache.get("pairs_ladder")
        nt, _ = self._ladder(problem, sample, res)
        if cache is None or not _within(2 * nt, sample):
            return False
        cache["rung"] *= 2
        return True

    def plan(self, problem, sample, res):
        vg_max = float(problem.disp.group_velocity(res.q_max))
        grid = radial_phasor(problem.disp, res.q_max,
                             vg_max * problem.corr + sample.geom.D + 1e-300, res.radial)
        nt, r_max = self._ladder(problem, sample, res)
        K = chebyshev_terms(res.q_max * r_max, res.angular)
        rungs = [nt]
        while _within(2 * rungs[-1], sample):
            rungs.append(2 * rungs[-1])
        return _PairPlan(grid, K, r_max, problem.on_steps(sample, nt), rungs)

    def cost(self, problem, sample, plan):
        """This rung and half the rungs above it (each a full rule: the
        sub-rule is the rung below), the lower sub-rule if not yet done."""
        cache = problem.route_cache.get("pairs_moments", {})

        def pairs(n):
            return 0.0 if (n, plan.K, plan.r_max) in cache else 0.5 * n * n
        total = pairs(plan.rungs[0]) + pairs(plan.rungs[0] // 2)
        total += 0.5 * sum(pairs(n) for n in plan.rungs[1:])
        nodes = plan.grid.qn.size
        return (_COST_PAIR * total * (plan.K + _SETUP)
                + _COST_NODE * 1.5 * plan.rungs[0] * nodes * (1 + 0.25 * problem.nD))

    def spectrum(self, problem, sample, plan, pool):
        """The pass's :class:`LagSpectrum` (all detunings)."""
        return LagSpectrum(problem, sample, plan.grid, plan.K, plan.r_max, pool)

    def integrals(self, problem, sample, plan, pool):
        return self.spectrum(problem, plan.sample, plan, pool).sums(problem)

    def grid_report(self, problem, plan):
        return {"chebyshev_terms": int(plan.K), "path_reach": plan.r_max * problem.xi}
