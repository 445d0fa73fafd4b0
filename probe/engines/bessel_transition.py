"""J_nu(x) near the turning point x ~ nu, from the Airy-type transition
expansion, with the decision where it reaches double precision.

Near the turning point, where Debye's corrections stay above 1e-16
(15 nu^2 > r^3 with r = sqrt|x^2 - nu^2|, i.e. |x - nu| <~ 3 nu^(1/3), and in
bessel.py's check of its last term up to |x - nu| ~ 8.3 nu^(1/3)), J_nu is
written with ``x = nu + a nu^(1/3)``, ``s = -2^(1/3) a`` and
``delta = -2^(-1/3) nu^(-2/3)`` (so that x = nu (1 + s delta)) as

    J_nu(x) = 2^(1/3) nu^(-1/3) [P(s, delta) Ai(s) + Q(s, delta) Ai'(s)],
    P = sum_k delta^k P_k(s),  Q = sum_k delta^k Q_k(s)

(the transition expansion: Abramowitz and Stegun 9.3.23, DLMF 10.19.8).
Bessel's equation becomes, for y(s) = J_nu(nu (1 + s delta)),

    (1 + s delta)^2 y'' + delta (1 + s delta) y' - (s + s^2 delta / 2) y = 0,

and with Ai'' = s Ai the coefficients of Ai and Ai' give at each order k

    P_k'' + Q_k + 2 s Q_k' = -R1_k,   2 P_k' + Q_k'' = -R2_k

(R1_k, R2_k from the lower orders), hence
``Q_k''' - 4 s Q_k' - 2 Q_k = 2 R1_k - R2_k'``, which has one polynomial
solution (found from the top degree down), and P_k from the second equation
up to its constant term.  The constants are fixed by the asymptotic series
of J_nu(nu) (the value at s = 0): from
``J_n(n) = (1/2 pi) int exp(i n (theta - sin theta)) d theta`` with the
substitution ``t^3 / 6 = theta - sin theta`` (reverted by Lagrange's
formula) each power t^(2j) gives one term ``Gamma((2j+1)/3) n^(-(2j+1)/3)``;
the terms with Gamma(1/3) are the multiples of Ai(0) (the constants of P),
those with Gamma(2/3) the multiples of Ai'(0), which must equal Q_k(0)
(a check of both routes).  Everything is generated in exact rational
arithmetic when first needed and kept, as floats, in the cache folder
(``probe.cache``; nothing at import time).

P_k and Q_k hold only the powers s^n with n = k and n = k + 1 (mod 3), so
each order is a polynomial in s^3 times s^(k mod 3) or s^((k+1) mod 3),
evaluated by Horner's rule.  The size of an order's term is bounded by the
same polynomials with the absolute values of their coefficients at
max(|s|, 1) (at |s| < 1 some orders vanish with s while the next do not;
Ai' weighted by sqrt(1 + |s|), which bounds |Ai'/Ai| below the turning
point and the ratio of their envelopes above it); a value stops summing
at the first checked order whose bound is below 1e-17 and is accepted
(``good``) when its last bound is below 1e-16, for orders NU_MIN <= nu <=
NU_MAX and |a| <= A_MAX only (the range checked against mpmath in
tests/test_bessel_transition.py).  Every step is elementwise: a value and
its decision depend on its own (nu, x) alone.
"""
from __future__ import annotations

from fractions import Fraction
from functools import lru_cache

import numpy as np

from probe.cache import Memo

#: smallest and largest orders the expansion is used for (checked up to 1e9)
NU_MIN = 100.0
NU_MAX = 1e9
#: largest |a| = |x - nu| / nu^(1/3) it is used for: the corrections of
#: bessel.py's Debye expansions stay above 1e-16 up to |a| ~ 8.3 (nu >= 1e3);
#: the orders kept here reach 1e-16 up to |a| ~ 3.4 at nu = 100, ~ 5.5 at
#: nu = 300, ~ 8.8 at nu = 1e3 and A_MAX from nu ~ 1.5e3 on
A_MAX = 9.0
#: orders of delta kept at most
ORDERS = 24
#: a value stops summing when its term's bound is below this
_STOP = 1e-17
#: and is accepted when its last term's bound is below this
_LAST_TERM = 1e-16
#: orders after which the bounds are checked
_CHECKS = frozenset(range(6, ORDERS + 1, 2))
_CBRT2 = 2.0 ** (1.0 / 3.0)


def _add(*terms):
    """Sum of (factor, shift, polynomial) = factor * s^shift * polynomial;
    polynomials are {power: Fraction}."""
    out = {}
    for f, shift, poly in terms:
        for n, c in poly.items():
            c = c if f == 1 else -c if f == -1 else f * c
            n += shift
            if n in out:
                out[n] += c
            else:
                out[n] = c
    return {n: c for n, c in out.items() if c}


def _d(poly):
    return {n - 1: n * c for n, c in poly.items() if n}


def jnn_series(K, ai_prime=True):
    """Exact (A, B), k = 0..K (B left 0 unless ``ai_prime``): J_nu(nu) ~ 2^(1/3) nu^(-1/3) [sum A_k delta^k Ai(0)
    + sum B_k delta^k Ai'(0)], delta = -2^(-1/3) nu^(-2/3).

    From ``J_n(n) = (1/pi) Re int_0^pi exp(i n w) d theta`` with
    w = theta - sin theta = t^3 / 6: theta = sum_j b_j t^(2j+1), where by
    Lagrange's formula (2j+1) b_j = [u^j] f(u)^(-(2j+1)/3),
    f(u) = 6 (theta - sin theta) / theta^3 at u = theta^2, and
    ``int_0^inf exp(i n t^3 / 6) t^(2j) dt = Gamma(p/3) (6/n)^(p/3) e^(i pi p/6) / 3``,
    p = 2j + 1.  The powers of 2^(1/3) and 3^(1/3) combine with those of
    delta, Ai(0) = 1 / (3^(2/3) Gamma(2/3)) and Ai'(0) = -1 / (3^(1/3) Gamma(1/3))
    into rationals (p = 3 (mod 6) gives no term)."""
    f = [Fraction(0)] * (K + 1)
    fact = 1
    for k in range(1, K + 2):                       # 6 (-1)^(k+1) u^(k-1) / (2k+1)!
        fact *= (2 * k) * (2 * k + 1)
        if k - 1 <= K:
            f[k - 1] = Fraction(6 * (-1) ** (k + 1), fact)
    A, B = [Fraction(0)] * (K + 1), [Fraction(0)] * (K + 1)
    for j in range(K + 1):
        if j % 3 == 1 or (j % 3 == 2 and not ai_prime):
            continue
        p, m = 2 * j + 1, j // 3
        alpha = Fraction(-p, 3)
        g = [Fraction(1)]                            # f^alpha, f_0 = 1, up to u^j
        for n in range(1, j + 1):
            g.append(sum(((alpha + 1) * i - n) * f[i] * g[n - i] for i in range(1, n + 1)) / n)
        ratio = Fraction(1)                          # Gamma(p/3) / Gamma(1/3 or 2/3)
        base = Fraction(1, 3) if j % 3 == 0 else Fraction(2, 3)
        for i in range(2 * m + (j % 3 == 2)):
            ratio *= base + i
        term = g[j] * (-1) ** (m + j) * ratio * 2 ** j
        if j % 3 == 0:
            A[j] = term * 3 ** (2 * m)
        else:
            B[j] = term * 3 ** (2 * m + 1)
    return A, B


@lru_cache(maxsize=None)
def transition_polynomials(K=ORDERS):
    """Exact P_k, Q_k (k = 0..K) as {power of s: Fraction}, normalised by
    J_nu(nu) (``jnn_series``): P_0 = 1, Q_0 = 0, P_1 = -s/5, Q_1 = -3 s^2/10, ..."""
    A = jnn_series(K, ai_prime=False)[0]
    P, Q = [{0: Fraction(1)}], [{}]
    U, V, W, X = [{1: Fraction(1)}], [{}], [{}], [{0: Fraction(1)}]
    empty = {}
    half = Fraction(-1, 2)
    for k in range(1, K + 1):
        P1, U1, V1, W1, X1 = P[k - 1], U[k - 1], V[k - 1], W[k - 1], X[k - 1]
        Q1 = Q[k - 1]
        U2, V2, W2, X2 = (U[k - 2], V[k - 2], W[k - 2], X[k - 2]) if k > 1 else (empty,) * 4
        # U = P'' + Q + 2 s Q' + s P, V = 2 P' + Q'' + s Q, W = P' + s Q, X = P + Q'
        R1 = _add((2, 1, U1), (1, 2, U2), (1, 0, W1), (1, 1, W2), (half, 2, P1))
        R2 = _add((2, 1, V1), (1, 2, V2), (1, 0, X1), (1, 1, X2), (half, 2, Q1))
        rhs = _add((2, 0, R1), (-1, 0, _d(R2)))
        q = {}
        for n in range(max(rhs, default=-1), -1, -1):
            q[n] = (Fraction((n + 3) * (n + 2) * (n + 1)) * q.get(n + 3, 0) - rhs.get(n, 0)) / (4 * n + 2)
        q = {n: c for n, c in q.items() if c}
        dp = _add((half, 0, _d(_d(q))), (half, 0, R2))             # P_k'
        p = {n + 1: c / (n + 1) for n, c in dp.items()}
        if A[k]:
            p[0] = A[k]
        P.append(p)
        Q.append(q)
        U.append(_add((1, 1, p), (-1, 0, R1)))
        V.append(_add((1, 1, q), (-1, 0, R2)))
        W.append(_add((1, 0, dp), (1, 1, q)))
        X.append(_add((1, 0, p), (1, 0, _d(q))))
    return P, Q


def _in_cubes(poly, r):
    """Coefficients (highest first) of G with poly(s) = s^r G(s^3), and of |G|."""
    top = max(poly) if poly else r
    cs = tuple(float(poly.get(n, 0)) for n in range(top, r - 1, -3))
    return cs, tuple(abs(c) for c in cs)


def _source_key():
    """Key of the kept table: a checksum of this module's text (the same
    in every copy of the same code)."""
    import zlib
    with open(__file__, "rb") as fh:
        return f"{ORDERS}:{zlib.crc32(fh.read()):08x}"


#: the float table, kept in the cache folder (``probe.cache``): generating it
#: in exact arithmetic takes 50-80 ms, reading it back well under 1 ms
_KEPT = Memo("bessel-transition-1", _source_key)


@lru_cache(maxsize=None)
def _table():
    kept = _KEPT.get("table")
    if isinstance(kept, tuple) and len(kept) == ORDERS:
        return kept
    P, Q = transition_polynomials(ORDERS)
    out = []
    for k in range(1, ORDERS + 1):
        rp, rq = k % 3, (k + 1) % 3
        assert all(n % 3 == rp for n in P[k]) and all(n % 3 == rq for n in Q[k])
        out.append((rp, *_in_cubes(P[k], rp), rq, *_in_cubes(Q[k], rq)))
    out = tuple(out)
    _KEPT.put("table", out)
    return out


def _horner(cs, z, times=None):
    """sum_l cs[l] z^(L - l) (highest coefficient first), times ``times``."""
    if len(cs) == 1:
        acc = np.full_like(z, cs[0])
    else:
        acc = z * cs[0]
        acc += cs[1]
        for c in cs[2:]:
            acc *= z
            acc += c
    if times is not None:
        acc *= times
    return acc


def _sums(s, delta):
    """P, Q and the bound of the last term kept, for each (s, delta)."""
    n = s.size
    P, Q, last = np.empty(n), np.empty(n), np.empty(n)
    idx = np.arange(n)
    p, q, dk = np.ones(n), np.zeros(n), np.ones(n)
    sig = s * s * s
    # the bounds at max(|s|, 1): at |s| < 1 the orders whose polynomials vanish
    # at s = 0 would understate the following ones
    big = np.maximum(np.abs(s), 1.0)
    asig, w = big * big * big, np.sqrt(1.0 + big)
    for k, (rp, G, Ga, rq, H, Ha) in enumerate(_table(), 1):
        dk *= delta
        sp = (None, s, s * s)
        term = _horner(G, sig, sp[rp])
        term *= dk
        p += term
        term = _horner(H, sig, sp[rq])
        term *= dk
        q += term
        if k not in _CHECKS:
            continue
        bp = (None, big, big * big)
        size = _horner(Ha, asig, bp[rq])
        size *= w
        size += _horner(Ga, asig, bp[rp])
        size *= np.abs(dk)
        stop = size < _STOP if k < ORDERS else np.ones(n, dtype=bool)
        if not stop.any():
            continue
        P[idx[stop]], Q[idx[stop]], last[idx[stop]] = p[stop], q[stop], size[stop]
        if stop.all():
            break
        keep = ~stop
        idx, p, q, dk, delta, s, sig, big, asig, w = (
            v[keep] for v in (idx, p, q, dk, delta, s, sig, big, asig, w))
        n = idx.size
    return P, Q, last


def transition_jv(nu, x):
    """J_nu(x) for 1-D float arrays nu >= 0 and x >= 0 of equal length, from
    the transition expansion: ``(values, good)``, where ``good`` marks the
    values given within ``probe.engines.bessel.jv_error`` (NU_MIN <= nu <= NU_MAX,
    |x - nu| <= A_MAX nu^(1/3) and the last term kept below 1e-16 of the
    local scale); the other values are unspecified."""
    nu = np.asarray(nu, dtype=float)
    x = np.asarray(x, dtype=float)
    values = np.zeros(nu.shape)
    good = np.zeros(nu.shape, dtype=bool)
    with np.errstate(all="ignore"):
        c = np.cbrt(nu)
        a = (x - nu) / c
        sel = np.nonzero((nu >= NU_MIN) & (nu <= NU_MAX) & (np.abs(a) <= A_MAX))[0]
    if sel.size == 0:
        return values, good
    from scipy.special import airy   # imported when first needed (start-up)
    cs = c[sel]
    s = -_CBRT2 * a[sel]
    P, Q, last = _sums(s, -1.0 / (_CBRT2 * cs * cs))
    ai, aip, _, _ = airy(s)
    values[sel] = _CBRT2 / cs * (P * ai + Q * aip)
    good[sel] = last < _LAST_TERM
    return values, good
