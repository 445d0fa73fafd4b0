"""The inertial kernel: golden-rule rates of uniform straight motion, in the
gas's units (q = k xi, frequencies in c/xi, speeds in c).

The delta functions of the golden rule restrict k to two windows:
``W1 = {|w - Omega| <= k v}`` (down emission, up absorption) and
``W2 = {w + Omega <= k v}`` (up emission, the anomalous-Doppler process of
Ginzburg and Frolov, Sov. Phys. Usp. 30, 1073 (1987), and down absorption).
For a convex spectrum each window is one interval ``[a, b]``; in d = 1 the
rate is the sum over its edges, in d = 2 and 3 an integral over the window
(the angular integral done in closed form: ``2/sqrt(k^2 v^2 - X^2)`` in 2D,
``1/(k v)`` in 3D).
"""
from __future__ import annotations

import functools
import math
from dataclasses import dataclass

import numpy as np

from probe.engines.quadrature import (FIXED_ORDERS, Primitive, gauss_legendre, integrate,
                                      integrate_smooth)
from probe.engines.stationary.limits import (CUT, EPS, NEAR_SOUND, ROUNDING, STATIC_SPEED,
                                             STATIC_SPEED_3D)
from probe.engines.stationary.threshold import refine_up_window
from probe.errors import ModelError


def _edge_rounding(gas, q, v, W, s, vg, denom, tag):
    """Relative rounding error of a 1D edge term S |F|^2 weight / |v_g -+ v|.

    The edge q solves w(q) -+ v q = W to within its rounding, so it is off by
    dq = eps (w + v q + |W|)/denom; that moves the denominator by
    w''(q) dq and the numerator by its logarithmic derivative times dq.  Near
    a caustic (denom -> 0, where two edges merge and the rate diverges) this
    grows as eps/(v - v_th): the estimate makes the loss of digits visible.
    """
    dq = EPS * (gas.disp.omega(q) + v * q + np.abs(W)) / denom
    log_slope = 2.0 / q + 2.0 * q * s * s
    if tag == "thermal" and gas.T > 0:
        with np.errstate(over="ignore"):
            log_slope = log_slope + vg * (1.0 + gas.occupation(q)) / gas.T
    return (gas.disp.curvature(q) * dq + EPS * (vg + v)) / denom + dq * log_slope


def _edge_sums(gas, v, W, s, a, b, kind, tags, present):
    """d = 1: the sum over the real roots of k v = X(|k|), the window edges
    (``S |F|^2 weight / |v_g -+ v|`` at each), with its rounding error."""
    disp = gas.disp
    n = v.size
    out = {}
    for t in tags:
        val = np.zeros(n)
        err = np.zeros(n)
        for lower, edge, sign in ((True, a, +1.0 if kind == "W1" else -1.0), (False, b, -1.0)):
            ok = present & np.isfinite(edge) & (edge > 0)
            if kind == "W1" and lower:
                ok = ok & (W > 0)
            q = np.where(ok, edge, 1.0)
            vg = disp.group_velocity(q)
            denom = np.abs(vg + sign * v)
            with np.errstate(divide="ignore", invalid="ignore"):
                term = (disp.structure_factor(q) * gas.form(q, s)
                        * gas.weights(q, t) / denom)
                rel = _edge_rounding(gas, q, v, W, s, vg, denom, t)
            val += np.where(ok, term, 0.0)
            # a term that is exactly zero (form factor underflow) has no error
            with np.errstate(invalid="ignore", over="ignore"):
                err += np.where(ok & (term != 0), np.abs(term) * rel, 0.0)
        out[t] = (val, np.abs(val) * 1e-14 + err)
    return out


@dataclass
class _Window:
    """The points with a nonempty window in d = 2, 3: their indices ``idx``
    and, for them, the edges ``a``, ``b`` (inf where unbounded), the upper
    limit ``bq`` of the integral (b cut by the form factor), speed ``v``,
    detuning ``W``, width ``s`` and ``unbounded``."""

    idx: np.ndarray
    a: np.ndarray
    b: np.ndarray
    bq: np.ndarray
    v: np.ndarray
    W: np.ndarray
    s: np.ndarray
    unbounded: np.ndarray


def _cut_window(gas, v, W, s, a, b, present):
    """The :class:`_Window` of the points with a window, or None; a
    ModelError where an unbounded window is not cut by a form factor."""
    # every window, bounded or not, ends where the form factor has decayed:
    # a fast probe's window [a, ~2v] is far wider than the part where the
    # integrand lives, which the quadrature's nodes would miss
    # (measured from the window's start: |F|^2 falls by exp(-CUT) from there)
    with np.errstate(invalid="ignore"):
        bb = np.minimum(b, np.hypot(np.where(np.isfinite(a), a, 0.0), gas.qcut(s)))
    if np.any(present & np.isinf(bb)):
        raise ModelError(
            "condensate.dispersion",
            "with the 'phonon' dispersion and a point probe (width 0) the "
            "supersonic rate diverges: the window of emitted wavenumbers is "
            "unbounded; give the probe a width or use 'bogoliubov'")
    present = present & (bb > a)
    idx = np.nonzero(present)[0]
    if idx.size == 0:
        return None
    bq = bb[idx]
    return _Window(idx=idx, a=a[idx], b=b[idx], bq=bq, v=v[idx], W=W[idx], s=s[idx],
                   unbounded=np.isinf(b[idx]))


def window_integrals(gas, v, W, s, a, b, kind, tags, rtol):
    """Integrals over one window for every point.

    kind 'W1': edges a (w + v q = W) and b (w - v q = W);
    kind 'W2': edges a, b both roots of w - v q = -W.
    Returns {tag: (value, error)} of the dimensionless rate integral
    I_d (so that Gamma = A xi^-d / (c/xi) * I_d).
    """
    n = v.size
    present = np.isfinite(a) & ~np.isnan(b) & (b > a)
    if gas.d == 1:
        return _edge_sums(gas, v, W, s, a, b, kind, tags, present)
    out = {t: (np.zeros(n), np.zeros(n)) for t in tags}
    win = _cut_window(gas, v, W, s, a, b, present)
    if win is None:
        return out
    if gas.d == 3:
        _window_3d(gas, win, kind, tags, rtol, out)
    else:
        _window_2d(gas, win, kind, tags, rtol, out)
    return out


def _closed_forms_3d(disp, win, tags, out):
    """Point probe in 3D on bounded windows: int q S dq (and int q S w dq
    where the dispersion declares them, ``qs_integral`` and
    ``qs_omega_integral``) in closed form, written into ``out``.  Returns
    the tags left to integrate numerically."""
    if not (np.all(win.s == 0) and not np.any(win.unbounded)):
        return tags
    closed = disp.qs_integral(win.a, win.bq)
    if closed is None:
        return tags
    done = {"plain": closed}
    if "energy" in tags:
        energy = disp.qs_omega_integral(win.a, win.bq)
        if energy is not None:
            done["energy"] = energy
    for t, integral in done.items():
        if t in tags:
            out[t][0][win.idx] = integral / (2 * math.pi * win.v)
            out[t][1][win.idx] = 0.0
    return [t for t in tags if t not in done]


def _weighted(gas, q, s, t):
    """q S |F|^2 weight: the 3D integrand without its 1/(2 pi v)."""
    return q * gas.disp.structure_factor(q) * gas.form(q, s) * gas.weights(q, t)


def _window_3d(gas, win, kind, tags, rtol, out):
    """d = 3: int_a^b q S |F|^2 weight dq / (2 pi v) per tag, into ``out``;
    up windows just above the threshold from edges found relative to the
    threshold's q (``threshold.refine_up_window``)."""
    disp = gas.disp

    def make(t):
        def f(x, i):
            return _weighted(gas, x, win.s[i, None], t) / (2 * math.pi * win.v[i, None])
        return f
    for t in _closed_forms_3d(disp, win, tags, out):
        f = make(t)
        top = _tag_top(gas, win, t)
        val, err = _integrals_3d(gas, win, t, f, top, rtol * 0.1)
        rows = np.arange(win.idx.size)
        with np.errstate(invalid="ignore", over="ignore"):
            tail = f(top[:, None], rows)[:, 0] * _tail_length(gas, win, t, top)
        out[t][0][win.idx] = val
        out[t][1][win.idx] = err + np.where((top > win.a) & (top < win.b), tail, 0.0)
    _narrow_window_error(out, win.idx, win.a, win.bq)
    if kind == "W2":
        refine_up_window(gas, win, tags, rtol, out, make)


#: orders of the pair of rules on the windows a table leaves (narrow ones,
#: where G(b) - G(a) cancels)
_NARROW_ORDERS = (24, 16)
#: width of the primitive's panels in u = asinh(q / sigma)
_PANEL_WIDTH = 0.25


def _integrals_3d(gas, win, t, f, top, tol):
    """int_a^top f dq for every row of ``win``: where the rows share one
    probe width, as differences of one tabulated primitive in
    u = asinh(q / sigma) (``quadrature.Primitive``: two short series per
    row, whatever the window), directly (``_integrate_sinh``) for the rows
    whose difference misses ``tol`` (narrow windows, where G(b) - G(a)
    cancels) and for mixed widths."""
    n = win.idx.size
    sigma = _scale(gas, t)
    val, err = np.zeros(n), np.full(n, np.inf)
    orders = FIXED_ORDERS
    reach = _table_reach(gas, win.s[0], t)
    if np.all(win.s == win.s[0]) and math.isfinite(reach):
        def g(u):
            q = sigma * np.sinh(u)
            return _weighted(gas, q, win.s[0], t) * (sigma * np.cosh(u))
        table = _primitive(g, (gas.disp.name, gas.d, float(win.s[0]), gas.T, t), sigma, reach)
        inside = top <= reach
        with np.errstate(invalid="ignore"):
            ua = np.arcsinh(win.a / sigma)
            ub = np.maximum(np.arcsinh(np.minimum(top, reach) / sigma), ua)
        val, err = table.integral(ua, ub)
        val, err = val / (2 * math.pi * win.v), np.where(inside, err / (2 * math.pi * win.v),
                                                          np.inf)
        orders = _NARROW_ORDERS
    with np.errstate(invalid="ignore"):
        redo = np.nonzero(~(np.isfinite(val) & (err <= tol * np.abs(val))) & (top > win.a))[0]
    if redo.size:
        def fr(x, i):
            return f(x, redo[i])
        # after a table, narrow windows: a short pair of rules, adaptive beyond it
        v_, e_, _ = _integrate_sinh(fr, win.a[redo], top[redo], sigma, tol, orders)
        val[redo], err[redo] = v_, e_
    return val, np.where(top > win.a, err, 0.0)


def _table_reach(gas, s, t):
    """The q up to which the primitive of weight ``t`` is tabulated for width
    ``s``: where |F|^2 and, for the occupation, n_k have decayed by exp(-CUT)
    from q = 0.  Fixed by the gas and width alone, so that a point gets the
    same table alone or in any grid (rows beyond it are integrated directly)."""
    reach = float(gas.qcut(np.asarray(s, float)))
    if t == "thermal" and gas.T > 0:
        reach = min(reach, float(gas.disp.inverse(CUT * gas.T)))
    # a table over an empty range would hold nothing but the 0/0 of its
    # integrand at q = 0: the rows are then integrated directly
    return reach if reach > 0 else math.inf


def _primitive(g, key, sigma, reach):
    """The tabulated primitive of ``g`` on u in [0, asinh(reach / sigma)]
    (panels of _PANEL_WIDTH), kept for the last few gases and widths."""
    key = key + (sigma, reach)
    table = _TABLES.get(key)
    if table is None:
        u_hi = math.asinh(reach / sigma)
        table = Primitive(g, 0.0, u_hi, max(4, math.ceil(u_hi / _PANEL_WIDTH)))
        if len(_TABLES) >= 16:
            _TABLES.clear()
        _TABLES[key] = table
    return table


#: tabulated primitives by (dispersion, d, width, T, weight, sigma, reach)
_TABLES = {}


def _scale(gas, t):
    """Distance from the real axis of the integrand's nearest complex
    singularities, which lie near q = 0: the dispersion's own at q ~ 1 (the
    healing length: Bogoliubov's branch points at q = +-2i) and the poles of
    the Bose occupation at w = 2 pi i T (q ~ 2 pi T for a cold gas)."""
    if t == "thermal" and gas.T > 0:
        return min(1.0, 2 * math.pi * gas.T)
    return 1.0


def _integrate_sinh(f, a, b, sigma, rtol, orders=FIXED_ORDERS):
    """int_a^b f(q) dq in the variable u of q = sigma sinh(u): graded
    towards q = 0, near which the singularities at distance ~sigma lie, so
    that a window far longer than sigma needs no more nodes than a short
    one (fixed pair of rules, adaptive only where it misses rtol)."""
    def g(u, i):
        return f(sigma * np.sinh(u), i) * (sigma * np.cosh(u))
    with np.errstate(invalid="ignore"):
        lo, hi = np.arcsinh(a / sigma), np.arcsinh(b / sigma)
    return integrate_smooth(g, lo, np.where(b > a, hi, lo), rtol=rtol, orders=orders)


def _tag_top(gas, win, t):
    """Upper limit of the integral of weight ``t``: the window's end cut by
    the form factor (``bq``) and, for the Bose occupation n_k, at
    w_k = w(a) + CUT T, beyond which n_k < exp(-CUT) n(a).  The quadrature's nodes
    spread over [a, top]: a window far wider than the part where the
    integrand lives (a fast probe's reaches q ~ 2 v) would put no node
    there and return 0 with an error estimate of 0."""
    if t == "thermal" and gas.T > 0:
        # n_k falls by exp(-CUT) from the window's start (a window of a large
        # gap starts where n_k is already tiny: a cut at w = CUT T would
        # leave a tail of the order of the whole integral)
        return np.minimum(win.bq, gas.disp.inverse(gas.disp.omega(win.a) + CUT * gas.T))
    return win.bq


def _tail_length(gas, win, t, top):
    """Decay length of the integrand beyond a cut at ``top``: twice the
    inverse of its logarithmic slope there (2 q s^2 from the form factor,
    v_g (1 + n)/T from the occupation), so that integrand(top) times it
    bounds the neglected tail of a Gaussian or exponential decay whose
    polynomial prefactor grows by less than a factor 2 over one length."""
    slope = 2.0 * top * win.s ** 2
    if t == "thermal" and gas.T > 0:
        slope = slope + gas.disp.group_velocity(top) / gas.T
    with np.errstate(divide="ignore"):
        return np.where(slope > 0, 2.0 / np.where(slope > 0, slope, 1.0), 0.0)


def _factor_w1(disp, x, A_, B_, V, Wd):
    """W1 in 2D: 1/sqrt(((kv + X)/(q - a)) ((kv - X)/(b - q))) without
    cancellation (on unbounded windows (kv - X) itself).  kv - X =
    v q + W - w(q) is formed directly where w(q) is below half of v q + W
    (no cancellation there) and as (b - q)(w[q, b] - v) nearer the edge b,
    where the direct form cancels (w[q, b] - v itself cancels near q = a of
    a fast probe: it is of order W/v there)."""
    lower = V + disp.omega_divided(x, A_)              # (kv+X)/(q-a)
    with np.errstate(invalid="ignore", divide="ignore"):
        Bf = np.where(np.isinf(B_), 0, B_)
        wx = disp.omega(x)
        direct = (V * x + Wd - wx) / (Bf - x)
        upper_fin = np.where(2 * wx < V * x + Wd, direct,
                             disp.omega_divided(x, Bf) - V)
        phase = disp.phase_divided(x, Bf)
        if phase is not None:
            # gapless probe just above the sound speed: b is the crossing
            # w(b)/b = v, so (kv - w)/(b - q) = q p[q, b] with p = w/q,
            # while w[q, b] - v cancels to ~(v - 1) and, at v - 1 ~ 1e-9,
            # to zero or below at some nodes (an infinite rate)
            near = (Wd == 0) & (V - 1 < NEAR_SOUND)
            upper_fin = np.where(near, x * phase, upper_fin)
    upper = np.where(np.isinf(B_), x * V + Wd - disp.omega(x), upper_fin)
    return 1.0 / np.sqrt(lower * upper)


def _factor_w2(disp, x, A_, B_, V, Wd):
    """W2 in 2D: kv - X = (q - a)(b - q) w[q, a, b], kv + X = v q + W + w;
    on unbounded windows (kv - X)/(q - a)."""
    fin = ~np.isinf(B_)
    with np.errstate(invalid="ignore"):
        mid = disp.omega_divided2(x, A_, np.where(fin, B_, A_ + 1))
    plus = V * x + Wd + disp.omega(x)
    lower_only = V - disp.omega_divided(x, A_)
    val = np.where(fin, mid * plus, lower_only * plus)
    return 1.0 / np.sqrt(val)


def _integrand_2d(gas, win, kind, t):
    """The 2D integrand in the variable that removes the inverse-square-root
    edges: finite windows q = (a+b)/2 - (b-a)/2 cos(theta), so that
    dq/sqrt((q-a)(b-q)) = dtheta; unbounded ones q = a + t^2,
    dq/sqrt(q - a) = 2 dt."""
    disp = gas.disp
    factor = _factor_w1 if kind == "W1" else _factor_w2

    def f(th, i):
        A_ = win.a[i, None]
        Bf = win.b[i, None]
        fin = ~np.isinf(Bf)
        Bs = np.where(fin, Bf, A_ + 1.0)
        # a + (b - a) sin^2(theta/2), from the nearer edge (no cancellation
        # of a small q against the window's centre when b >> a)
        qf = np.where(th < 0.5 * math.pi, A_ + (Bs - A_) * np.sin(0.5 * th) ** 2,
                      Bs - (Bs - A_) * np.cos(0.5 * th) ** 2)
        qu = A_ + th * th
        q = np.where(fin, qf, qu)
        fac = factor(disp, q, A_, Bf, win.v[i, None], win.W[i, None])
        jac = np.where(fin, 1.0, 2.0)
        g = (q * disp.structure_factor(q) * gas.form(q, win.s[i, None])
             * gas.weights(q, t))
        return g * 2.0 * fac * jac / (2 * math.pi)
    return f


#: the first rule of the 2D windows not cut short: a pair of midpoint rules
#: (orders) in phi of theta = phi - alpha sin(phi) (``_periodic_nodes``)
_PERIODIC_2D = (32, 24)
#: grading of the periodic rule: 1 - alpha = 2^-level, the level from the
#: angle 2 sqrt(a/(b - a)) of the window's start (``_periodic_level``)
_MAX_LEVEL = 6
#: orders of the fixed pairs of Gauss-Legendre rules of the 2D windows in a
#: graded angle: the first where the periodic rule misses the tolerance or
#: the window is cut, the second where the first misses it
_PAIRS_2D = ((44, 34), (72, 56))
#: grading of the 2D variable: theta = c sinh(w) with c = _GRADE 2 sqrt(1/(b - a)),
#: the theta at which q - a reaches the healing scale q ~ 1 of a wide window
_GRADE = 0.3
#: nodes per block of the 2D fixed rules (rows times nodes per row): the
#: node arrays stay in cache and within numpy's buffer (8192 elements), past
#: which its broadcasting operations run in buffered chunks, far slower
_BLOCK = 8192


def _theta_top(win, top):
    """theta of q = top on the finite windows (a + (b - a) sin^2(theta/2)),
    sqrt(top - a) on the unbounded ones (q = a + t^2)."""
    fin = ~win.unbounded
    with np.errstate(invalid="ignore", divide="ignore"):
        frac = np.clip((top - win.a) / np.where(fin, win.b - win.a, 1), 0, 1)
        return np.where(fin, np.where(top < win.b, 2 * np.arcsin(np.sqrt(frac)), math.pi),
                        np.sqrt(np.maximum(top - win.a, 0.0)))


@functools.lru_cache(maxsize=64)
def _periodic_nodes(level, orders):
    """sin^2(theta/2), cos^2(theta/2) and the weights theta'(phi)/n at the
    nodes phi = (k + 1/2) pi/n of the midpoint rules of ``orders`` on
    [0, pi], theta = phi - alpha sin(phi), alpha = 1 - 2^-level: the rules
    of (1/pi) int_0^pi h(theta) dtheta.

    Every 2D integrand h is an even, 2 pi-periodic function of theta
    (q = a + (b - a) sin^2(theta/2)), and so is h(theta(phi)) theta'(phi):
    the midpoint rule is the trapezoidal rule of a periodic analytic
    function, which converges geometrically with the distance of its nearest
    complex singularity from the real axis (Trefethen and Weideman, SIAM
    Rev. 56, 385 (2014)), about twice as fast per node as Gauss-Legendre on
    [0, pi] for the same singularity.  Near phi = 0, theta ~ (1 - alpha) phi
    + alpha phi^3/6 spreads the window's start over more nodes: there lies,
    for a small gap, the other root of k v -+ X at q ~ -a, a branch point at
    theta ~ 2 i sqrt(2 a/(b - a))."""
    out = []
    alpha = 1.0 - 2.0 ** -level
    for n in orders:
        phi = (np.arange(n) + 0.5) * (math.pi / n)
        th = phi - alpha * np.sin(phi)
        out.append((np.sin(0.5 * th) ** 2, np.cos(0.5 * th) ** 2,
                    (1.0 - alpha * np.cos(phi)) / n))
    return tuple(np.concatenate(x) for x in zip(*out))


def _periodic_level(win, rows):
    """The grading level of each row: 1 - alpha = 2^-level about three times
    the angle 2 sqrt(a/(b - a)) at which the window's start resolves the
    branch point near q = -a (no grading, alpha = 0, when that is ~1);
    _MAX_LEVEL + 1 where that would need more than _MAX_LEVEL (a gap so
    small that the branch point nearly meets the edge: the graded
    Gauss-Legendre rules take those rows)."""
    with np.errstate(divide="ignore", invalid="ignore"):
        angle = 6.0 * np.sqrt(win.a[rows] / (win.b[rows] - win.a[rows]))
        level = np.ceil(-np.log2(np.minimum(angle, 1.0)))
    return np.clip(np.nan_to_num(level, nan=_MAX_LEVEL + 1), 0, _MAX_LEVEL + 1).astype(int)


def _grading(win, rows):
    """c of the graded angle theta = c sinh(w) of the finite windows
    ``rows``: _GRADE 2/sqrt(b - a), the healing scale of a wide window;
    the angle sqrt(a/(b - a)) of the branch point near q = -a where the
    periodic rule's grading does not reach it (a gap so small that the
    branch point, at theta ~ 2 i sqrt(2 a/(b - a)), nearly meets the
    window's start: a kink that rules on the scale of the window would not
    see, both rules of a pair missing it alike)."""
    L = win.b[rows] - win.a[rows]
    c = _GRADE * 2 / np.sqrt(L)
    with np.errstate(invalid="ignore"):
        near = np.sqrt(win.a[rows] / L)
    return np.where((near > 0) & (6 * near < 2.0 ** -_MAX_LEVEL) & (near < c), near, c)


@functools.lru_cache(maxsize=256)
def _uncut_nodes(level, orders):
    """sin^2(theta/2), cos^2(theta/2) and dtheta/dw (times the half length)
    at the nodes theta = c sinh(w) of ``orders`` on [0, pi], c = 2^level."""
    x0 = np.concatenate([gauss_legendre(k)[0] for k in orders])
    c = 2.0 ** level
    w_hi = math.asinh(math.pi / c)
    w = 0.5 * w_hi * (x0 + 1)
    th = c * np.sinh(w)
    return np.sin(0.5 * th) ** 2, np.cos(0.5 * th) ** 2, 0.5 * w_hi * c * np.cosh(w)


def _graded_nodes(rows, win, th_hi, orders):
    """sin^2(theta/2), cos^2(theta/2) and dtheta/dw times the half length
    (the rules' weights then apply directly) at the nodes theta = c sinh(w)
    of the pair of Gauss-Legendre rules of ``orders`` on w in
    [0, asinh(th_hi / c)], c of ``_grading``.  Windows not cut
    (th_hi = pi) take c rounded to a power of 2 and nodes tabulated once."""
    c = _grading(win, rows)
    level = np.clip(np.round(np.log2(c)), -30, 4).astype(int)
    uncut = th_hi >= math.pi
    size = sum(orders)
    s2, c2, jac = (np.empty((rows.size, size)) for _ in range(3))
    for lev in np.unique(level[uncut]):
        k = np.nonzero(uncut & (level == lev))[0]
        s2[k], c2[k], jac[k] = _uncut_nodes(int(lev), orders)
    k = np.nonzero(~uncut)[0]
    if k.size:
        x0 = np.concatenate([gauss_legendre(n)[0] for n in orders])
        w_hi = np.arcsinh(th_hi[k] / c[k])
        e = np.exp(0.5 * w_hi[:, None] * (x0[None, :] + 1))
        inv = 1 / e
        th = (0.5 * c[k, None]) * (e - inv)
        s2[k], c2[k] = np.sin(0.5 * th) ** 2, np.cos(0.5 * th) ** 2
        jac[k] = (0.25 * w_hi * c[k])[:, None] * (e + inv)
    return s2, c2, jac


def _pair_sums_2d(gas, win, kind, tags, rows, s2, c2, wts, n):
    """The 2D integrals of ``tags`` for the finite windows ``rows`` by a
    pair of rules in theta: nodes ``s2`` = sin^2(theta/2), ``c2`` =
    cos^2(theta/2) with weights ``wts`` (rows' or shared), the first ``n``
    the rule whose value is returned, the rest the rule it is compared with.
    One evaluation of the part the tags share (q S |F|^2 and the window
    factor, formed directly: sqrt((q - a)(b - q) / ((k v)^2 - X^2)), whose
    terms vanish at the edges: their rounding, node by node, is part of the
    estimate).  {tag: (value, the other rule's value, rounding sum)}: the
    estimate from ``_pair_estimate``."""
    disp = gas.disp
    col = (lambda x: x[rows, None])
    a, b, v, W, s = (col(x) for x in (win.a, win.b, win.v, win.W, win.s))
    L = b - a
    da = L * s2
    db = L * c2
    q = a + da
    om = disp.omega(q)
    vq = v * q
    p1 = vq + om if kind == "W1" else vq - om
    p1 -= W
    p2 = vq - om if kind == "W1" else vq + om
    p2 += W
    with np.errstate(invalid="ignore", divide="ignore", over="ignore", under="ignore"):
        den = p1 * p2
        base = da * db
        base /= den
        np.sqrt(base, out=base)
        base *= q * disp.structure_factor(q)
        if np.any(s > 0):
            form = q * q
            form *= -s * s
            base *= np.exp(form, out=form)
        base *= wts
        # rounding of the factor: each of p1, p2 is off by ~2 eps (v q + w + W)
        # (its terms and the edge it vanishes at), halved by the square root,
        # p1 + p2 = 2 v q: a relative 4 eps v q (v q + w + W)/|p1 p2| + 16 eps
        # at a node (the values are positive where the factor is real)
        k = slice(0, n)
        rnd = vq[:, k] + om[:, k]
        rnd += W
        rnd *= vq[:, k]
        rnd /= den[:, k]
    out = {}
    for t in tags:
        if t == "thermal":
            with np.errstate(over="ignore", divide="ignore"):
                vals = om * (1.0 / gas.T)
                np.expm1(vals, out=vals)
                np.divide(base, vals, out=vals)
        else:
            vals = base * om if t == "energy" else base
        # row by row sums (each row's own loop, whatever the number of
        # rows): a point's value is the same alone or in a grid
        out[t] = (np.einsum("ij->i", vals[:, :n]), np.einsum("ij->i", vals[:, n:]),
                  np.einsum("ij,ij->i", vals[:, :n], rnd))
    return out


def _pair_estimate(hi, lo, rs):
    """The estimate of a pair of rules from ``_pair_sums_2d``'s sums: the
    rules' difference and the rounding of the factor, 4 eps ``rs`` + 16 eps
    of the value (inf where not finite)."""
    with np.errstate(invalid="ignore", over="ignore"):
        bound = np.abs(hi - lo) + 16 * EPS * np.abs(hi) + 4 * EPS * np.abs(rs)
    return np.where(np.isfinite(bound), bound, np.inf)


def _lean_pair_2d(gas, win, kind, tags, rows, th_hi, orders, level=None):
    """The 2D integrals of ``tags`` over [0, th_hi] in theta for the finite
    windows ``rows``: with a grading ``level`` (rows of one level), the
    periodic pair of midpoint rules of ``_periodic_nodes`` (th_hi = pi),
    else the fixed pair of Gauss-Legendre rules in the graded angle of
    ``_graded_nodes``.  The sums of ``_pair_sums_2d`` per tag."""
    if level is not None:
        s2, c2, wts = _periodic_nodes(level, orders)
        return _pair_sums_2d(gas, win, kind, tags, rows, s2, c2, wts, orders[0])
    n, m = (gauss_legendre(k)[1] for k in orders)
    s2, c2, jac = _graded_nodes(rows, win, th_hi, orders)
    jac *= np.concatenate([n, m]) / math.pi
    return _pair_sums_2d(gas, win, kind, tags, rows, s2, c2, jac, n.size)


def _lean_2d(gas, win, kind, tags, tops, orders, todo):
    """Values and estimates {tag: (value, error)} of the finite windows by
    ``_lean_pair_2d``: all tags at once on the rows where their cuts lie
    close together (each tag then integrated to the largest cut, its
    integrand below exp(-CUT) of its peak beyond its own), each tag alone
    elsewhere (the periodic pair only where the largest cut is the window's
    end, theta = pi); inf estimates on the unbounded windows and the rows
    not done.  Also returns the theta each tag's integral reached."""
    n = win.idx.size
    res = {t: (np.zeros(n), np.full(n, np.inf)) for t in tags}
    ths = {t: _theta_top(win, tops[t]) for t in tags}
    th_max = np.max([ths[t] for t in tags], axis=0)
    # a gapless probe just above the sound speed: k v - X = q (v - w/q)
    # cancels to ~(v - 1) at every node; the factor of ``_integrand_2d``
    # (phase velocity's divided difference) keeps its digits there
    near_sound = (win.W == 0) & (win.v - 1 < NEAR_SOUND)
    ok = ~win.unbounded & todo & ~near_sound
    close = np.all([ths[t] >= 0.6 * th_max for t in tags], axis=0)
    jobs = [(tags, ok & close & (th_max > 0), th_max, None)] + [
        ([t], ok & ~close & (ths[t] > 0), ths[t], None) for t in tags]
    if orders == _PERIODIC_2D:
        # one job per grading level (rows of one level share their nodes)
        level = np.full(n, _MAX_LEVEL + 1)
        level[ok] = _periodic_level(win, np.nonzero(ok)[0])
        mask = ok & close & (th_max >= math.pi)
        jobs = [(tags, mask & (level == lev), th_max, lev) for lev in range(_MAX_LEVEL + 1)]
    block = max(16, _BLOCK // sum(orders))
    sums = {t: np.zeros((3, n)) for t in tags}
    done = {t: np.zeros(n, dtype=bool) for t in tags}
    for job_tags, mask, th, lev in jobs:
        sel = np.nonzero(mask)[0]
        for k in range(0, sel.size, block):
            rows = sel[k:k + block]
            got = _lean_pair_2d(gas, win, kind, job_tags, rows, th[rows], orders, lev)
            for t in job_tags:
                sums[t][:, rows] = got[t]
                done[t][rows] = True
    for t in tags:
        res[t][0][done[t]] = sums[t][0, done[t]]
        res[t][1][done[t]] = _pair_estimate(*sums[t][:, done[t]])
    return res, {t: np.where(ok & close, th_max, ths[t]) for t in tags}


def _window_2d(gas, win, kind, tags, rtol, out):
    """d = 2: the integral of q S |F|^2 weight 2/sqrt(k^2 v^2 - X^2) dq /
    (2 pi) over the window per tag, into ``out``: the periodic pair of
    rules, then the fixed pairs in a graded angle (``_lean_2d``), where they
    meet the tolerance, the adaptive rule on the factor free of cancellation
    (``_integrand_2d``) elsewhere."""
    rows = np.arange(win.idx.size)
    # each process's rate is a sum of positive window integrals: each within
    # tol of itself keeps the sum within tol; half of rtol, less the floors
    tol = max(0.1 * rtol, 0.5 * rtol - 2 * ROUNDING)
    tops = {t: _tag_top(gas, win, t) for t in tags}
    todo = np.ones(win.idx.size, dtype=bool)
    for orders in (_PERIODIC_2D,) + _PAIRS_2D:
        got, th_got = _lean_2d(gas, win, kind, tags, tops, orders, todo)
        if orders == _PERIODIC_2D:
            lean, th_used = got, th_got
        else:
            for t in tags:
                lean[t][0][todo], lean[t][1][todo] = got[t][0][todo], got[t][1][todo]
                th_used[t][todo] = th_got[t][todo]
        with np.errstate(invalid="ignore"):
            todo = np.any([~(np.isfinite(lean[t][0]) & (lean[t][1] <= tol * np.abs(lean[t][0])))
                           for t in tags], axis=0)
        if not np.any(todo):
            break
    for t in tags:
        _finish_2d(gas, win, kind, t, tol, lean[t], th_used[t], rows, out)
    if kind == "W2":
        # near the threshold the up window [a, b] is narrow and the factor
        # (q - a)(b - q) w[q, a, b] carries the rounding of both edges
        _narrow_window_error(out, win.idx, win.a, win.bq)


def _finish_2d(gas, win, kind, t, tol, lean, th_hi, rows, out):
    """One tag's 2D integrals into ``out``: the fixed rules' values
    ``lean`` where they met ``tol``, the adaptive rule elsewhere, and the
    tail beyond the cut ``th_hi`` the integral reached in the estimate."""
    fin = ~win.unbounded
    val, err = lean
    # the cut the integral reached, in q
    top = np.where(fin & (th_hi < math.pi),
                   win.a + (win.b - win.a) * np.sin(0.5 * th_hi) ** 2,
                   np.where(fin, win.b, win.a + th_hi ** 2))
    top = np.where(fin & (th_hi >= math.pi), win.b, top)
    cut = (th_hi < math.pi) & fin | (~fin & (top < win.b))
    f = _integrand_2d(gas, win, kind, t)
    with np.errstate(invalid="ignore"):
        redo = np.nonzero(~(np.isfinite(val) & (err <= tol * np.abs(val))) & (th_hi > 0))[0]
    if redo.size:
        # in the graded angle theta = c sinh(w) on the finite windows
        c = np.where(fin[redo], _grading(win, redo), np.inf)

        def fr(x, i):
            ci = c[i, None]
            fine = np.isfinite(ci)
            th = np.where(fine, np.where(fine, ci, 1.0) * np.sinh(x), x)
            jac = np.where(fine, np.where(fine, ci, 1.0) * np.cosh(x), 1.0)
            return f(th, redo[i]) * jac
        with np.errstate(invalid="ignore", divide="ignore"):
            hi = np.where(np.isfinite(c), np.arcsinh(th_hi[redo] / c), th_hi[redo])
        v_, e_, _ = integrate(fr, np.zeros(redo.size), hi, rtol=tol)
        val[redo], err[redo] = v_, e_
    err = np.where(th_hi > 0, err, 0.0)
    # the neglected tail beyond the cut: the integrand in q there is
    # f(theta) / (dq/dtheta), dq/dtheta = (b - a) sin(theta)/2 or 2 t
    with np.errstate(invalid="ignore", over="ignore", divide="ignore"):
        dq = np.where(fin, 0.5 * (win.b - win.a) * np.sin(th_hi), 2.0 * th_hi)
        k = np.nonzero(cut & (top > win.a) & (dq > 0))[0]
        if k.size:
            err[k] += (f(th_hi[k, None], rows[k])[:, 0] / dq[k]
                       * _tail_length(gas, win, t, top)[k])
    out[t][0][win.idx] = val
    out[t][1][win.idx] = err


def _narrow_window_error(out, idx, a, b):
    """Add the rounding of the window edges to the error estimates: each
    edge is known to a few ulps, a relative error 4 eps (a + b)/(b - a) of
    the window's width (negligible unless the window is narrow: slow motion
    in 3D, speeds just above the up threshold)."""
    with np.errstate(divide="ignore", invalid="ignore"):
        rel = np.where(b > a, 4.0 * EPS * (a + b) / (b - a), 0.0)
    for t in out:
        out[t][1][idx] += np.abs(out[t][0][idx]) * rel


def _static_values(gas, W, s, tag):
    """v = 0: Gamma/A' = S|F|^2 weight * {q^2/(pi v_g), q/v_g, 2/v_g} at w = W."""
    disp, d = gas.disp, gas.d
    q = disp.inverse(W)
    vg = disp.group_velocity(np.where(q > 0, q, 1.0))
    with np.errstate(invalid="ignore", divide="ignore"):
        base = disp.structure_factor(q) * gas.form(q, s) * gas.weights(q, tag)
    geo = {3: q * q / math.pi, 2: q, 1: 2.0 * np.ones_like(q)}[d]
    return np.where(W > 0, base * geo / vg, 0.0)


def _slow_static_error(gas, v, W, s):
    """Relative error of the static value used for 0 < v < STATIC_SPEED.

    The window around the resonance shell q0 has half-width dq = v q0/v_g;
    the rate is its mean, exact to first order in dq, so the error is of the
    order (dq L)^2 + v^2 with L the logarithmic slope of the integrand
    (geometry ~ 4/q0, form factor 2 q0 s^2, Bose factor v_g/T)."""
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        q0 = gas.disp.inverse(W)
        vg = gas.disp.group_velocity(q0)
        slope = 4.0 / q0 + 2.0 * q0 * s * s + (vg / gas.T if gas.T > 0 else 0.0)
        eta = v * q0 / vg * slope
        err = eta * eta + v * v
    return np.where((v > 0) & np.isfinite(err), err, 0.0)


def _static_points(gas, v, W, s):
    """Where very slow motion is treated as static (see STATIC_SPEED)."""
    slow = v < STATIC_SPEED
    i = np.nonzero(v < STATIC_SPEED_3D)[0] if gas.d == 3 else np.zeros(0, dtype=int)
    if i.size:
        disp = gas.disp
        si = s[i] if np.ndim(s) else s
        with np.errstate(divide="ignore", invalid="ignore"):
            vg0 = disp.group_velocity(disp.inverse(W[i]))
            window_err = 4.0 * EPS * vg0 / v[i]          # 4 eps (a + b)/(b - a)
        slow[i] |= _slow_static_error(gas, v[i], W[i], si) < window_err
    return slow


def _window_edges(disp, v, W, moving):
    """Edges (q_a, q_b) of W1 and (q_c, q_d) of W2 at the moving points
    (nan elsewhere, and for W2 where W = 0)."""
    edges = [np.full(v.size, np.nan) for _ in range(4)]
    qa, qb, qc, qd = edges
    if np.any(moving):
        m = moving
        qa[m] = disp.root_minus(v[m], W[m])
        qb[m] = disp.root_plus(v[m], W[m])
        upm = m & (W > 0)
        if np.any(upm):
            c_, d_ = disp.roots_up(v[upm], W[upm])
            qc[upm], qd[upm] = c_, d_
    return qa, qb, qc, qd


def _pick(I, t, n):
    return I[t] if t in I else (np.zeros(n), np.zeros(n))


def _up_down(gas, v, W, s, I1, I2, static, tags):
    """Two-level rates (W > 0): down = W1 emission + W1 and W2 absorption,
    up = W2 emission + both absorptions; static points from v = 0."""
    n = v.size
    p1, e1 = _pick(I1, "plain", n)
    p2, e2 = _pick(I2, "plain", n)
    t1, f1 = _pick(I1, "thermal", n)
    t2, f2 = _pick(I2, "thermal", n)
    sp, stt = np.zeros(n), np.zeros(n)
    if np.any(static):
        i = np.nonzero(static)[0]
        si = s[i] if np.ndim(s) else s
        sp[i] = _static_values(gas, W[i], si, "plain")
        if "thermal" in tags:
            stt[i] = _static_values(gas, W[i], si, "thermal")
    # floor of the error estimate: rounding in the window edges and sums
    fl = ROUNDING
    down = np.where(static, sp + stt, p1 + t1 + t2)
    up = np.where(static, stt, p2 + t2 + t1)
    slow = np.zeros(n)
    if np.any(static):
        slow[i] = _slow_static_error(gas, v[i], W[i], si)
    return {"down": (down, np.where(static, 0.0, e1 + f1 + f2) + (fl + slow) * down),
            "up": (up, np.where(static, 0.0, e2 + f2 + f1) + (fl + slow) * up)}


def _emission_absorption(I1, static, n):
    """Density probe (W = 0, both windows coincide with [0, q_b]): emission,
    absorption and the energy moment; zero at the static points."""
    fl = ROUNDING
    p1, e1 = _pick(I1, "plain", n)
    t1, f1 = _pick(I1, "thermal", n)
    em = np.where(static, 0.0, p1 + t1)
    ab = np.where(static, 0.0, t1)
    en = _pick(I1, "energy", n)
    ev = np.where(static, 0.0, en[0])
    return {"emission": (em, e1 + f1 + fl * em), "absorption": (ab, f1 + fl * ab),
            "energy": (ev, en[1] + fl * ev)}


def inertial_kernel(gas, v, W, s, rtol=1e-8, energy=False):
    """Dimensionless inertial rates.

    Returns dict with 'down', 'up' (two-level, W > 0) or 'emission',
    'absorption', 'energy' (density probe, W = 0), each (value, error),
    in units of A xi^-d xi/c, and 'edges' (q_a, q_b, q_c, q_d).
    """
    v, W, s = (np.asarray(x, float).ravel() for x in np.broadcast_arrays(v, W, s))
    tags = ["plain"] + (["thermal"] if gas.T > 0 else []) + (["energy"] if energy else [])
    # very slow motion is static (see STATIC_SPEED); for the gapless density
    # probe every subsonic speed gives zero, so only W > 0 points are affected
    moving = ~_static_points(gas, v, W, s) | ((v > 0) & (W == 0))
    qa, qb, qc, qd = _window_edges(gas.disp, v, W, moving)
    I1 = window_integrals(gas, v, W, s, qa, qb, "W1", tags, rtol)
    I2 = window_integrals(gas, v, W, s, qc, qd, "W2", tags, rtol)
    if np.all(W > 0):
        res = _up_down(gas, v, W, s, I1, I2, ~moving, tags)
    else:
        res = _emission_absorption(I1, ~moving, v.size)
    res["edges"] = (qa, qb, qc, qd)
    return res
