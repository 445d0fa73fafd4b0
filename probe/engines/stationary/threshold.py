"""The 3D up window just above the threshold speed, in the gas's units.

Above v_th = min_q (w(q) + W)/q (reached at q*) the up-emission window
W2 = {w + W <= q v} is the interval [c, d] around q* of width
2 sqrt(2 (v - v_th) q*/w''(q*)) to leading order; the 3D rate is an integral
over it of a smooth integrand, so its relative error is that of the width.
Found as the roots of w(q) - v q + W in double precision each edge is off by
eps (w + v q + W)/|v_g - v|, and |v_g - v| shrinks with the width: the
rate's relative error grows as eps/(v/v_th - 1) (1e-5 at v = v_th (1 + 1e-11)).

Here the edges are found relative to q* instead.  With V = (w(q*) + W)/q*
and w'(q*) (at the double q*, in 40-digit arithmetic:
``Dispersion.omega_precise``)
the line V q touches w + W at q* to within the rounding of q*, and

    w(q) + W - v q = u^2 w[q, q*, q*] + delta u - (v - V) q,   u = q - q*,

with delta = w'(q*) - V (of the order of eps, from the rounding of q*) and
w[q, q*, q*] the confluent second divided difference (free of cancellation).
Each root u follows from the quadratic formula refined by Newton's
iteration, v - V is known to double precision, and the width u_+ - u_- to a
few eps.
"""
from __future__ import annotations

from decimal import Decimal, localcontext

import numpy as np

from probe.engines.quadrature import integrate
from probe.engines.stationary.limits import EPS, ROUNDING

#: largest number of Newton steps for the roots u (a few suffice: the start
#: is the quadratic formula, exact for a window narrow against q*)
_ITERATIONS = 40


def edge_rounding(disp, v, W, c, d):
    """Relative error of the up window's width d - c from the rounding of
    its edges found in double precision: each edge q solves
    w(q) - v q + W = 0 to within 4 eps (w + v q + W), an error in q of that
    over |v_g(q) - v|, which grows as the edges merge at the threshold."""
    def dq(q):
        with np.errstate(divide="ignore", invalid="ignore"):
            return 4 * EPS * (disp.omega(q) + v * q + W) / np.abs(disp.group_velocity(q) - v)
    with np.errstate(divide="ignore", invalid="ignore"):
        rel = (dq(c) + dq(d)) / (d - c)
    return np.where(np.isfinite(rel), rel, np.inf)


def _excess_speed(disp, v, W, qs):
    """v - V and delta = w'(q*) - V with V = (w(q*) + W)/q*, from 40-digit
    values of w and w' at the double q* (delta is of the order of the
    rounding of q*; in double precision its own rounding, eps v, would move
    both edges by eps v/w'', a relative error of the rate of eps/(q* w'')
    for a small gap)."""
    excess = np.empty(v.size)
    delta = np.empty(v.size)
    for i in range(v.size):
        with localcontext() as ctx:
            ctx.prec = 40
            w, slope = disp.omega_precise(qs[i])
            V = (w + Decimal(float(W[i]))) / Decimal(float(qs[i]))
            excess[i] = float(Decimal(float(v[i])) - V)
            delta[i] = float(slope - V)
    return excess, delta


def _roots(disp, qs, v, excess, delta):
    """The offsets (u_-, u_+) of the window edges from q*: roots of
    phi(u) = u^2 w[q* + u, q*, q*] + delta u - excess (q* + u), started
    from the quadratic formula with w[., q*, q*] taken at q* and refined by
    Newton's iteration (phi' = v_g(q* + u) - v; its rounding slows the
    convergence but does not move the root, which phi fixes)."""
    beta = delta - excess
    w2 = disp.omega_divided2(qs, qs, qs)
    root = np.sqrt(beta * beta + 4 * w2 * excess * qs)
    out = []
    for sign in (-1.0, +1.0):
        # the quadratic formula's branch without cancellation
        u = np.where(sign * beta <= 0, (-beta + sign * root) / (2 * w2),
                     2 * excess * qs / (beta + sign * root))
        active = np.ones(u.size, dtype=bool)
        for _ in range(_ITERATIONS):
            q = qs + u
            phi = u * u * disp.omega_divided2(q, qs, qs) + delta * u - excess * q
            with np.errstate(divide="ignore", invalid="ignore"):
                step = phi / (disp.group_velocity(q) - v)
            step = np.where(active & np.isfinite(step), step, 0.0)
            u = u - step
            active = np.abs(step) > 4 * EPS * np.abs(u)
            if not np.any(active):
                break
        out.append(u)
    return out[0], out[1]


def refine_up_window(gas, win, tags, rtol, out, integrand):
    """Where the rounding of a bounded up window's edges (``edge_rounding``)
    exceeds ROUNDING, recompute its integrals over the window found relative
    to q* (module docstring), value and error into ``out``; without
    ``Dispersion.omega_precise``, add that rounding to the error instead.
    ``integrand(t)`` is the 3D integrand f(q, rows) of weight t."""
    disp = gas.disp
    rel = edge_rounding(disp, win.v, win.W, win.a, win.b)
    rows = np.nonzero((rel > ROUNDING) & ~win.unbounded)[0]
    if rows.size == 0:
        return
    if disp.omega_precise(1.0) is None:
        for t in out:
            out[t][1][win.idx[rows]] += np.abs(out[t][0][win.idx[rows]]) * rel[rows]
        return
    _, qs = disp.threshold(win.W[rows])
    excess, delta = _excess_speed(disp, win.v[rows], win.W[rows], qs)
    # at or below the exact threshold (v - V <= 0) the window is empty
    open_ = excess > 0
    lo, hi = _roots(disp, qs, win.v[rows], np.where(open_, excess, 0.0), delta)
    start, width = qs + lo, np.where(open_, hi - lo, 0.0)
    for t in tags:
        f = integrand(t)

        def g(x, i, f=f):
            return f(start[i, None] + width[i, None] * x, rows[i]) * width[i, None]
        val, err, _ = integrate(g, np.zeros(rows.size), np.where(open_, 1.0, 0.0),
                                rtol=rtol * 0.1)
        out[t][0][win.idx[rows]] = val
        # the width to a few eps: v - V and delta rounded, w[q, q*, q*], the roots
        out[t][1][win.idx[rows]] = err + 16 * EPS * np.abs(val)
