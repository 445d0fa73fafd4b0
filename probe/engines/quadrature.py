"""Vectorised Gauss-Legendre quadrature over many intervals at once.

``integrate(f, a, b)`` computes ``int_a^b f(x) dx`` for every entry of the
arrays ``a``, ``b``.  Each interval is cut into ``2**L`` equal panels with an
``n``-point Gauss-Legendre rule on each; ``L`` grows until two successive
levels agree to the tolerance.  The returned error estimate is the difference
of the last two levels (conservative for smooth integrands, where the finer
value is far more accurate than the difference suggests).

``integrate_smooth(f, a, b)`` first tries one pair of fixed rules on every
interval at once, for integrands made smooth by the caller (endpoint
singularities mapped out, the variable scaled to where the integrand
changes): Gauss-Legendre of orders ``n`` and ``m < n`` at once, the value of
order ``n`` and the difference of the two as its error estimate (the
error of the order-``m`` rule, which bounds that of the order-``n`` one
by far when both converge geometrically).  Only the intervals where the two
disagree by more than the tolerance go on to ``integrate``.
"""
from __future__ import annotations

import numpy as np

_NODES = {}
EPS_Q = float(np.finfo(float).eps)


def gauss_legendre(n):
    """Nodes and weights on [-1, 1] (cached)."""
    if n not in _NODES:
        _NODES[n] = np.polynomial.legendre.leggauss(n)
    return _NODES[n]


def _composite(f, a, b, idx, level, n):
    x0, w0 = gauss_legendre(n)
    panels = 2 ** level
    h = (b - a) / panels                         # (P,)
    j = np.arange(panels)
    left = a[:, None] + h[:, None] * j[None, :]  # (P, panels)
    x = left[:, :, None] + 0.5 * h[:, None, None] * (x0[None, None, :] + 1)
    x = x.reshape(len(a), panels * n)
    fx = f(x, idx)
    return 0.5 * h * (fx.reshape(len(a), panels, n) * w0).sum(axis=(1, 2))


def _start(a, b, atol):
    """Flat interval ends and tolerances, zero results, and the indices of
    the intervals with b > a (the others integrate to 0, converged)."""
    a = np.asarray(a, float).ravel()
    b = np.asarray(b, float).ravel()
    atol = np.broadcast_to(np.asarray(atol, float), a.shape)
    converged = np.ones(a.shape, dtype=bool)
    return (a, b, atol, np.zeros(a.shape), np.zeros(a.shape), converged,
            np.nonzero(b > a)[0])


def integrate(f, a, b, rtol=1e-10, atol=0.0, n=20, max_level=12,
              chunk=2_000_000):
    """Integrate ``f`` over ``[a_i, b_i]`` for each i.

    ``f(x, idx)`` receives ``x`` of shape (P, M) and the indices ``idx`` (P,)
    of the intervals the rows belong to, and returns an array like ``x``.
    ``atol`` may be an array (one absolute tolerance per interval).

    Returns ``(value, error_estimate, converged)`` arrays.
    """
    a, b, atol, value, error, converged, todo = _start(a, b, atol)
    if todo.size == 0:
        return value, error, converged
    prev = None
    level = 0
    while todo.size:
        per_point = n * 2 ** level
        step = max(1, chunk // per_point)
        cur = np.empty(todo.size)
        for s in range(0, todo.size, step):
            sl = todo[s:s + step]
            cur[s:s + step] = _composite(f, a[sl], b[sl], sl, level, n)
        if prev is not None:
            err = np.abs(cur - prev)
            value[todo] = cur
            error[todo] = err
            ok = err <= np.maximum(rtol * np.abs(cur), atol[todo])
            if level >= max_level:
                converged[todo[~ok]] = False
                break
            keep = ~ok
            todo, prev = todo[keep], cur[keep]
        else:
            prev = cur
        level += 1
    return value, error, converged


#: orders of the fixed pair of ``integrate_smooth``
FIXED_ORDERS = (40, 28)


def fixed_pair(f, a, b, idx, orders=FIXED_ORDERS):
    """Gauss-Legendre rules of the two ``orders`` on [a_i, b_i] (rows
    ``idx`` of ``f``) from one call of ``f`` on all their nodes: the value
    of the higher order and the difference of the two."""
    (xn, wn), (xm, wm) = (gauss_legendre(k) for k in orders)
    x0 = np.concatenate([xn, xm])
    half = 0.5 * (b - a)
    x = 0.5 * (a + b)[:, None] + half[:, None] * x0[None, :]
    fx = f(x, idx)
    # row by row sums (not a matrix product, whose summation order depends
    # on the number of rows): a point's value is the same alone or in a grid
    hi = half * (fx[:, :xn.size] * wn).sum(axis=1)
    lo = half * (fx[:, xn.size:] * wm).sum(axis=1)
    return hi, np.abs(hi - lo)


def integrate_smooth(f, a, b, rtol=1e-10, atol=0.0, orders=FIXED_ORDERS, chunk=2000000,
                     **adaptive):
    """``integrate`` for integrands the caller has made smooth: the pair of
    fixed rules of ``orders`` on every interval (``fixed_pair``), the
    adaptive rule of ``integrate`` only where the pair misses
    ``max(rtol |value|, atol)``.  Same arguments and returns as
    ``integrate`` (its keyword arguments in ``adaptive``)."""
    a, b, atol, value, error, converged, todo = _start(a, b, atol)
    step = max(1, chunk // sum(orders))
    for s in range(0, todo.size, step):
        sl = todo[s:s + step]
        value[sl], error[sl] = fixed_pair(f, a[sl], b[sl], sl, orders)
    with np.errstate(invalid="ignore"):
        bad = todo[~(np.isfinite(value[todo])
                     & (error[todo] <= np.maximum(rtol * np.abs(value[todo]), atol[todo])))]
    if bad.size:
        def g(x, i):
            return f(x, bad[i])
        val, err, conv = integrate(g, a[bad], b[bad], rtol=rtol, atol=atol[bad], **adaptive)
        value[bad], error[bad], converged[bad] = val, err, conv
    return value, error, converged


class Primitive:
    """The primitive G(x) = int_lo^x g(u) du of one smooth function, tabulated
    once for arguments anywhere in [lo, hi]: Chebyshev series of g on equal
    panels (interpolated at ``degree`` + 1 Chebyshev points each),
    integrated term by term and summed panel by panel.  Then every integral
    int_x^y g = G(y) - G(x) over that range costs two series evaluations,
    whatever its length.

    ``g(u)`` takes an array of points (never the panels' ends).  ``panels``
    equal panels span [lo, hi].  The error bound of a panel is twice its
    length times the sum of the last three coefficients of g's series
    (geometric decay of the coefficients of a function analytic around the
    panel bounds the rest by them), plus the rounding of the series: its
    terms' sizes times 4 eps.
    """

    def __init__(self, g, lo, hi, panels, degree=24):
        self.lo, self.hi = float(lo), float(hi)
        self.panels = int(panels)
        self.h = (self.hi - self.lo) / self.panels
        # Chebyshev points of the first kind: the panel's ends, where g may
        # be a limit 0/0 (as at q = 0), are not among them
        t = np.cos(np.pi * (np.arange(degree + 1) + 0.5) / (degree + 1))
        centres = self.lo + self.h * (np.arange(self.panels) + 0.5)
        values = g(centres[:, None] + 0.5 * self.h * t[None, :])    # (panels, degree+1)
        # interpolation at the first-kind points: c_k = (2 - [k = 0]) mean_j f_j T_k(t_j)
        k = np.arange(degree + 1)
        basis = np.cos(np.outer(k, np.pi * (k + 0.5) / (degree + 1))) * (2.0 / (degree + 1))
        basis[0] *= 0.5
        coef = basis @ values.T                                     # (degree+1, panels)
        # G on a panel from its left end, in the panel variable t: (h/2) int_{-1}^t
        self.coef = np.polynomial.chebyshev.chebint(coef, lbnd=-1, scl=0.5 * self.h)
        whole = np.polynomial.chebyshev.chebval(1.0, self.coef)      # each panel's integral
        self.start = np.concatenate([[0.0], np.cumsum(whole)])      # G at panel starts
        size = np.abs(values).max(axis=1) * self.h
        tail = 2 * self.h * np.abs(coef[-3:]).sum(axis=0)
        self.panel_error = tail + 4 * EPS_Q * degree * size
        self.start_error = np.concatenate([[0.0], np.cumsum(self.panel_error)])

    def _locate(self, x):
        x = np.clip(np.asarray(x, float), self.lo, self.hi)
        k = np.clip(((x - self.lo) / self.h).astype(int), 0, self.panels - 1)
        t = 2 * (x - self.lo - self.h * k) / self.h - 1
        c = np.take(self.coef, k, axis=1)                          # (degree+2, points)
        # Clenshaw's recurrence for sum_j c_j T_j(t), point by point
        b1 = np.zeros(t.shape)
        b2 = np.zeros(t.shape)
        t2 = 2 * t
        for j in range(c.shape[0] - 1, 0, -1):
            b1, b2 = c[j] + t2 * b1 - b2, b1
        return self.start[k] + (c[0] + t * b1 - b2), k

    def integral(self, x, y):
        """int_x^y g for arrays lo <= x <= y <= hi, with the bound of its
        error: the bounds of the panels from x's to y's (those before x's
        cancel in G(y) - G(x)) and the rounding of G(x), G(y) and their
        difference."""
        gx, kx = self._locate(x)
        gy, ky = self._locate(y)
        err = (self.start_error[ky] + self.panel_error[ky] - self.start_error[kx]
               + 4 * EPS_Q * (np.abs(gx) + np.abs(gy)))
        return gy - gx, err

