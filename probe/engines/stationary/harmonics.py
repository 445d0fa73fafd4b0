"""Bessel-function pieces of the circular sums: Kapteyn's bound on the
remainder and the spherical average W_m of J_m^2 used in 3D."""
from __future__ import annotations

import numpy as np

from probe.engines.bessel import jv_int as jv


def kapteyn(z):
    """rho(z) with |J_m(m z)| <= rho(z)^m for 0 <= z <= 1 (Kapteyn's
    inequality, Watson, *Theory of Bessel Functions*, sec. 8.7)."""
    z = np.clip(z, 0, 1)
    r = np.sqrt(1 - z * z)
    with np.errstate(divide="ignore"):
        return np.where(z > 0, z * np.exp(r) / (1 + r), 0.0)


def w3_terms(m, x):
    """Number of Bessel functions summed by ``w3`` for each (m, x): orders up
    to 2x + 40 + 8 (2x)^(1/3) beyond 2m + 1."""
    z = 2 * np.asarray(x, float)
    return np.maximum(0, np.ceil((z + 40 + 8 * np.cbrt(z) - 2 * np.abs(m) - 1) / 2)
                      ).astype(int) + 8


def w3(m, x):
    """W_m(x) = (1/2) int_{-1}^{1} J_m(x sqrt(1-u^2))^2 du
             = (1/(2x)) int_0^{2x} J_{2m}(t) dt = (1/x) sum_{j>=0} J_{2m+2j+1}(2x).

    (The spherical average of J_m^2 over the polar angle; the second form
    uses J_m(a)^2 = (2/pi) int_0^{pi/2} J_{2m}(2a cos p) dp and the uniform
    distribution of one Cartesian coordinate on the sphere.)"""
    m = np.abs(np.asarray(m, float))
    x = np.asarray(x, float)
    out = np.zeros(m.shape)
    small = x < 1e-8
    out[small & (m == 0)] = 1.0
    big = ~small
    if not np.any(big):
        return out
    mm, xx = m[big], x[big]
    z = 2 * xx
    nmax = w3_terms(mm, xx)
    acc = np.zeros(mm.shape)
    order = np.argsort(nmax)
    # process in groups of similar length to bound memory
    start = 0
    while start < order.size:
        longest = nmax[order[min(order.size - 1, start + 255)]]
        stop = min(order.size, start + max(1, 4_000_000 // max(1, longest)))
        sel = order[start:stop]
        J = int(nmax[sel].max())
        j = np.arange(J)
        orders = 2 * mm[sel, None] + 2 * j[None, :] + 1
        vals = jv(orders, z[sel, None])
        vals = np.where(j[None, :] < nmax[sel, None], vals, 0.0)
        acc[sel] = vals.sum(axis=1)
        start = stop
    out[big] = acc / xx
    return out
