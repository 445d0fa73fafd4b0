"""Bessel-function pieces of the circular sums: Kapteyn's bound on the
remainder and the spherical average W_m of J_m^2 used in 3D.

W_m(x) = (1/2) int_{-1}^{1} J_m(x sqrt(1-u^2))^2 du = I(2m, 2x) / (2x) with
I(n, z) = int_0^z J_n(t) dt = 2 sum_{j>=0} J_{n+2j+1}(z) (Watson, *Theory of
Bessel Functions*, secs. 2.22 and 5.21; DLMF 10.22.6).  I is found at O(1)
cost per harmonic away from the turning point z ~ n and by a short backward
recurrence near it and below it:

* above the turning point (z - n >> z^(1/3)): I = 1 - T with
  T = int_z^inf J_n = a J_n(z) + b J_n'(z).  Differentiating, T' = -J_n holds
  for every J_n when b'' - b'/z + b (z^2 + 1 - n^2)/z^2 = 1 and a = b/z - b'
  (Bessel's equation eliminates J_n'').  The non-oscillatory solution is the
  asymptotic series b = sum_k b_k, b_0 = z^2/P, P = z^2 + 1 - n^2,
  b_{k+1} = -(b_k'' - b_k'/z) z^2/P, whose terms fall as (n^2/r^3)^2 with
  r^2 = z^2 - n^2 (the parameter of Debye's expansions) and as z^-4 for
  n << z; it tends to 0 as z -> inf, so it is T itself.  The polynomials
  b_k in z and 1/P are generated below in exact rational arithmetic.
* elsewhere: the sum 2 sum_j J_{n+2j+1}(z) by Miller's backward recurrence
  J_{k-1} = (2k/z) J_k - J_{k+1}, started where J has fallen below e^-40 of
  its value at order n (or of its Airy peak) and normalised by J_n, J_{n+1}.

Each value comes with a bound on its error: the first omitted term of the
series, the recurrence's rounding and the propagated error bound of the
Bessel values (``bessel.jv_error``); tests/test_circular_accuracy.py checks
values and bounds against mpmath at 30-40 digits.
"""
from __future__ import annotations

from fractions import Fraction

import numpy as np

from probe.engines.bessel import jv_error, jv_int

_EPS = float(np.finfo(float).eps)
#: terms of the series of b kept (the next one is the truncation estimate)
_SERIES = 12
#: the series is used where its first omitted term is below this (I ~ 1)
_SERIES_TOL = 2e-16
#: Miller's recurrence starts where J has fallen by e^-_DECAY
_DECAY = 40.0


def kapteyn(z):
    """rho(z) with |J_m(m z)| <= rho(z)^m for 0 <= z <= 1 (Kapteyn's
    inequality, Watson, *Theory of Bessel Functions*, sec. 8.7)."""
    z = np.clip(z, 0, 1)
    r = np.sqrt(1 - z * z)
    with np.errstate(divide="ignore"):
        return np.where(z > 0, z * np.exp(r) / (1 + r), 0.0)


# --- the series of T = a J_n + b J_n' -------------------------------------------------------
# polynomials are {(i, j): Fraction} meaning sum c z^i p^j with p = 1/P, dp/dz = -2 z p^2

def _d(poly):
    out = {}
    for (i, j), c in poly.items():
        if i:
            out[(i - 1, j)] = out.get((i - 1, j), 0) + i * c
        if j:
            out[(i + 1, j + 1)] = out.get((i + 1, j + 1), 0) - 2 * j * c
    return {k: c for k, c in out.items() if c}


def _shift(poly, di, dj, factor=1):
    return {(i + di, j + dj): factor * c for (i, j), c in poly.items()}


def _plus(*polys):
    out = {}
    for poly in polys:
        for k, c in poly.items():
            out[k] = out.get(k, 0) + c
    return {k: c for k, c in out.items() if c}


def _series_polynomials(K):
    """[(a_k, b_k)] for k = 0..K, each {(power of u = z^2 p, power of p):
    coefficient}: b_k = sum c u^i p^j, a_k = z sum c u^i p^j."""
    bs = [{(2, 1): Fraction(1)}]
    for _ in range(K):
        d1 = _d(bs[-1])
        inner = _plus(_d(d1), _shift(d1, -1, 0, -1))
        bs.append(_shift(inner, 2, 1, -1))
    out = []
    for b in bs:
        a = _plus(_shift(b, -1, 0), _shift(_d(b), 0, 0, -1))
        # z^i p^j = u^(i/2) p^(j - i/2) (b: i even); a: z u^((i-1)/2) p^(j - (i-1)/2)
        out.append(({((i - 1) // 2, j - (i - 1) // 2): c for (i, j), c in a.items()},
                    {(i // 2, j - i // 2): c for (i, j), c in b.items()}))
    return out


_ALL = _series_polynomials(_SERIES)
#: per order k: b_k = p^k B_k(u), a_k = z p^(k+1) A_k(u) (the polynomials are
#: homogeneous); coefficients of A_k and B_k in u, highest power first
_ORDERS = [tuple([float(poly.get((i, k + shift), 0)) for i in range(max(i for i, _ in poly), -1, -1)]
                 for poly, shift in ((a, 1), (b, 0)))
           for k, (a, b) in enumerate(_ALL)]


def _horner(coeffs, u, au):
    """sum c u^i and sum |c| |u|^i (highest power first)."""
    val = np.full_like(u, coeffs[0])
    mag = np.full_like(u, abs(coeffs[0]))
    for c in coeffs[1:]:
        val = val * u + c
        mag = mag * au + abs(c)
    return val, mag


def _series(n, z):
    """T = a J_n(z) + b J_n'(z) by the series (z and n on either side of the
    turning point), order by order until the term of each point falls below
    _SERIES_TOL (1 above the turning point, |T| below it) and below half the
    previous one; (T, error bound, converged)."""
    P = z * z + 1 - n * n
    p = 1 / P
    u = z * z * p
    Jn, Jn1 = jv_int(n, z), jv_int(n + 1, z)
    dJ = n / z * Jn - Jn1
    eJn, eJn1 = jv_error(n, z, Jn), jv_error(n + 1, z, Jn1)
    envJ = np.abs(Jn) + np.abs(Jn1) + eJn + eJn1
    A = np.zeros_like(z)
    B = np.zeros_like(z)
    mag = np.zeros_like(z)
    last = np.full_like(z, np.inf)
    done = np.zeros(z.shape, dtype=bool)
    act = np.arange(z.size)
    ua, pa, za, ea, above = u, p, z, envJ, z > n
    pk, prev = np.ones_like(u), np.full_like(u, np.inf)
    for ca, cb in _ORDERS:
        au = np.abs(ua)
        av, am = _horner(ca, ua, au)
        bv, bm = _horner(cb, ua, au)
        ta, tb = za * pk * pa * av, pk * bv
        A[act] += ta
        B[act] += tb
        mag[act] += (za * np.abs(pa) * am + bm) * np.abs(pk)
        term = (np.abs(ta) + np.abs(tb)) * ea
        scale = np.where(above, 1.0, np.abs(A[act] * Jn[act] + B[act] * dJ[act]))
        conv = (term < _SERIES_TOL * scale) & (term < 0.5 * prev)
        last[act] = term
        done[act[conv]] = True
        keep = ~conv
        if not keep.any():
            break
        act, ua, pa, za, ea, above = act[keep], ua[keep], pa[keep], za[keep], ea[keep], above[keep]
        pk, prev = pk[keep] * pa, term[keep]
    T = A * Jn + B * dJ
    err = (2 * last + np.abs(A) * eJn + np.abs(B) * (n / z * eJn + eJn1)
           + 4 * _EPS * mag * envJ)
    return T, err, done


def _by_series(n, z):
    """I(n, z) where the series converges: 1 - T above the turning point,
    -T below it (there I' = J_n with I -> 0 as z -> 0, and the series for
    -I solves the same equation); (I, error bound, converged)."""
    T, err, ok = _series(n, z)
    above = z > n
    I = np.where(above, 1 - T, -T)
    err = err + np.where(above, 4 * _EPS, 0.0)
    return I, err, ok


def _span(n, z):
    """Orders above n at which Miller's recurrence starts: past the larger of
    n and z until J has fallen by e^-_DECAY (exponentially beyond the order
    ~ z by the Airy decay exp(-(2 sqrt 2/3) d^(3/2)/sqrt z), geometrically at
    the rate arccosh(n/z) beyond an order n > z)."""
    airy = 14.0 * np.cbrt(z) + 10.0
    with np.errstate(divide="ignore"):
        rate = np.arccosh(np.maximum(n / np.maximum(z, 1e-300), 1.0))
        geometric = np.where(rate > 0, _DECAY / rate + 10.0, np.inf)
    return np.ceil(np.maximum(z - n, 0) + np.minimum(airy, geometric)).astype(int) + 2


def _miller_group(n, z, span):
    """I(n, z) and its error bound by S = max(span) steps of the backward
    recurrence from order n + S for every point of the group (S even: f
    starts at order n + S, the odd orders n + 2j + 1 are summed).  Rounding
    is counted over each point's own span: what is committed above it falls
    with the recurrence's dominant solution."""
    S = int(span.max())
    S += S % 2
    fp = np.zeros_like(z)                      # order k + 1
    fc = np.ones_like(z)                       # order k = n + S
    total = np.zeros_like(z)
    size = np.zeros_like(z)
    inv = 2 / z
    k = n + S                                  # exact integers: 2k/z rounded once per step
    for s in range(0, S, 2):
        a = (k * inv) * fc - fp                # order k - 1 = n + S - s - 1 (odd offset)
        total += a
        size += np.abs(a)
        fp, fc = a, ((k - 1) * inv) * a - fc   # order k - 2
        k = k - 2
        if s % 8 == 6:
            big = np.abs(fc) > 1e200
            if big.any():
                for arr in (fp, fc, total, size):
                    arr[big] *= 1e-200
    # fp holds order n + 1, fc order n
    g = np.maximum(np.abs(fc), np.abs(fp))
    fc, fp, total, size = fc / g, fp / g, total / g, size / g
    Jn, Jn1 = jv_int(n, z), jv_int(n + 1, z)
    scale = (fc * Jn + fp * Jn1) / (fc * fc + fp * fp)
    rel_norm = (jv_error(n, z, Jn) + jv_error(n + 1, z, Jn1)) / np.maximum(
        np.hypot(Jn, Jn1), 1e-300)
    value = 2 * scale * total
    err = np.abs(value) * (rel_norm + 4 * _EPS) + 2 * np.abs(scale) * size * 4 * _EPS * (span + 4)
    return value, err


#: Miller's groups: points whose spans share a bucket of this ratio recur together
_GROUP_RATIO = 4.0


def _miller(n, z):
    """I(n, z) by backward recurrence, points grouped by their span."""
    span = _span(n, z)
    bucket = np.floor(np.log(np.maximum(span, 1)) / np.log(_GROUP_RATIO)).astype(int)
    value = np.zeros_like(z)
    err = np.zeros_like(z)
    for b in np.unique(bucket):
        sel = np.nonzero(bucket == b)[0]
        value[sel], err[sel] = _miller_group(n[sel], z[sel], span[sel])
    return value, err


def w3_terms(m, x):
    """Cost of ``w3`` for each (m, x) in units of one Bessel-function
    evaluation: about 6 above the turning point (two Bessel values and the
    series), 3 plus a sixteenth of the recurrence's span elsewhere."""
    n = 2 * np.abs(np.asarray(m, float))
    z = 2 * np.asarray(x, float)
    above = z - n > 11.6 * np.cbrt(z) + 5.0
    return np.where(above, 6, 3 + _span(n, z) // 16).astype(int)


def w3(m, x, with_error=False):
    """W_m(x) = (1/2) int_{-1}^{1} J_m(x sqrt(1-u^2))^2 du
             = (1/(2x)) int_0^{2x} J_{2m}(t) dt = (1/x) sum_{j>=0} J_{2m+2j+1}(2x).

    (The spherical average of J_m^2 over the polar angle; the second form
    uses J_m(a)^2 = (2/pi) int_0^{pi/2} J_{2m}(2a cos p) dp and the uniform
    distribution of one Cartesian coordinate on the sphere.)  With
    ``with_error``, also a bound on the absolute error of each value."""
    m = np.abs(np.asarray(m, float))
    x = np.asarray(x, float)
    m, x = np.broadcast_arrays(m, x)
    shape = m.shape
    n, z = 2 * m.ravel(), 2 * x.ravel()
    I = np.zeros(z.shape)
    err = np.zeros(z.shape)
    zero = z < 2e-8                   # W_0 = 1 - x^2/3, W_m ~ x^(2m), m > 0
    I[zero & (n == 0)] = 1.0          # (set as W below)
    err[zero] = z[zero] ** 2
    rest = ~zero
    trial = rest & (np.abs(z - n) > 10.0 * np.cbrt(z) + 5.0)
    if trial.any():
        idx = np.nonzero(trial)[0]
        val, e, ok = _by_series(n[idx], z[idx])
        I[idx[ok]], err[idx[ok]] = val[ok], e[ok]
        rest[idx[ok]] = False
    if rest.any():
        idx = np.nonzero(rest)[0]
        I[idx], err[idx] = _miller(n[idx], z[idx])
    with np.errstate(invalid="ignore", divide="ignore"):
        W = np.where(zero, I, I / np.where(zero, 1.0, z))
        E = np.where(zero, err, err / np.where(zero, 1.0, z))
    W, E = W.reshape(shape), E.reshape(shape)
    return (W, E) if with_error else W
