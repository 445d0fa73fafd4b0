"""Fast J_m(x) for many (order, argument) pairs at once, with an error bound.

The circular engine needs J_m(k_m R) for thousands of harmonics, each at its
own argument.  Away from the turning point x ~ m, Debye's asymptotic
expansions (Abramowitz and Stegun 9.3.7 and 9.3.15) cost a few arithmetic
operations per value.  Their polynomials u_k follow from u_0 = 1 and
``u_{k+1}(t) = t^2 (1 - t^2) u_k'(t) / 2 + (1/8) int_0^t (1 - 5 s^2) u_k(s) ds``
(A&S 9.3.9-9.3.10), generated here in exact rational arithmetic.  With
``r = sqrt(|x^2 - m^2|)`` and ``t = m/r`` the k-th correction is
``u_k(t)/m^k = sum_p c_p t^(p-k) / r^k``, which stays finite at m = 0 (where
the oscillatory form becomes Hankel's large-argument expansion).  Terms up to
k = 18 are kept; where the last kept term exceeds 1e-16 (near the turning
point, or for small r) the value comes from the Airy-type transition
expansion (``bessel_transition``, orders >= 100, for groups of values
large enough to repay its fixed cost: ``jv_bounded``) where that reaches
double precision, else from scipy's ``jv``.  The
route of a value depends on its order and argument alone, never on the other
values of the call (a sweep's point gives the same digits in any company).

``jv_error`` bounds the absolute error of either route: a few units of
rounding in the phase (or exponent), whose size grows with the argument,
relative to the local envelope of J above the turning point and to the value
below it (checked against mpmath in tests/test_bessel.py).
"""
from __future__ import annotations

from fractions import Fraction

import numpy as np

from probe.engines.bessel_transition import NU_MIN, transition_jv

#: values near the turning point in one group from which the transition
#: expansion is used (its fixed cost, about 1 ms a call, against about 3 us
#: a value for scipy's jv)
TRANSITION_BATCH = 512
#: number of Debye corrections kept
_ORDERS = 18
#: accept the expansion where its last kept term is below this
_LAST_TERM = 1e-16
_EPS = float(np.finfo(float).eps)
#: relative floor of the Bessel values (both routes, against mpmath)
BESSEL_FLOOR = 2e-15
#: rounding of the phase or exponent per unit of the size of its parts
BESSEL_PHASE = 4 * _EPS


def _debye_polynomials(K):
    """Coefficients {power: Fraction} of u_0 ... u_K (A&S 9.3.9-9.3.10)."""
    us = [{0: Fraction(1)}]
    for _ in range(K):
        out = {}
        for p, c in us[-1].items():
            if p:
                out[p + 1] = out.get(p + 1, 0) + c * p / 2
                out[p + 3] = out.get(p + 3, 0) - c * p / 2
            out[p + 1] = out.get(p + 1, 0) + c / 8 / (p + 1)
            out[p + 3] = out.get(p + 3, 0) - 5 * c / 8 / (p + 3)
        us.append({p: c for p, c in out.items() if c})
    return us


# u_k(t) = sum_p c_p t^p (p - k even) as the coefficients of sum_p c_p t^(p-k), a
# polynomial in t^2, highest power first; at i t (the oscillatory region) each
# c_p takes the sign (-1)^(p//2) (and a factor i when p is odd)
_U = {osc: [(k, tuple(c * ((-1.0) ** (p // 2) if osc else 1.0)
                      for p, c in sorted(((p, float(c)) for p, c in u.items()), reverse=True)))
            for k, u in enumerate(_debye_polynomials(_ORDERS)) if k]
      for osc in (True, False)}
#: orders after which values whose term fell below 1e-19 stop (the rest is smaller)
_CHECKS = frozenset((4, 6, 8, 10, 12, 14, 16, _ORDERS))


def _corrections(t, r, oscillatory):
    """Even and odd sums of u_k/m^k (k = 1.._ORDERS) and the size of the last
    term.  Oscillatory region: u_k is evaluated at i t; the even terms are
    real and the odd ones imaginary, returned as their real coefficients.
    A value whose term has fallen below 1e-19 at one of the orders _CHECKS
    stops there (the rest is smaller)."""
    even = np.empty_like(t)
    odd = np.empty_like(t)
    last = np.empty_like(t)
    act = None                                  # all values still summing
    ev, od, t2 = np.zeros_like(t), np.zeros_like(t), t * t
    rinv = 1.0 / r
    rk = np.ones_like(r)
    term = np.empty_like(t)
    for k, coeffs in _U[oscillatory]:
        rk *= rinv
        # Horner in t^2, in place: ((c0 t2 + c1) t2 + c2) ... then times r^-k
        np.multiply(t2, coeffs[0], out=term)
        for c in coeffs[1:-1]:
            term += c
            term *= t2
        term += coeffs[-1]
        term *= rk
        (od if k % 2 else ev)[...] += term
        if k not in _CHECKS:
            continue
        size = np.abs(term)
        keep = size >= _LAST_TERM * 1e-3
        stop = act if act is not None else slice(None)
        if k == _ORDERS or not keep.any():
            even[stop], odd[stop], last[stop] = ev, od, size
            break
        if keep.all():
            continue
        done = ~keep
        idx = np.nonzero(done)[0] if act is None else act[done]
        even[idx], odd[idx], last[idx] = ev[done], od[done], size[done]
        act = np.nonzero(keep)[0] if act is None else act[keep]
        ev, od, t2, rinv, rk = ev[keep], od[keep], t2[keep], rinv[keep], rk[keep]
        term = np.empty_like(t2)
    return even, odd, last


def _debye(nu, x, r, out, use, angle=None):
    """Debye's expansions where they converge to 1e-16; fills ``out`` and
    marks ``use``.  ``angle``: ``_angle(nu, x, r)`` if already known."""
    # the corrections reach 1e-16 only for r >~ 60 and r >~ 4 nu^(2/3) (found
    # by scanning r at nu = 0 ... 1e4 with ten of them; more reach a little
    # closer to the turning point): below these the trial is skipped
    cand = (r > 30.0) & (15 * nu * nu < r * r * r)
    for osc in (True, False):
        sel = cand & ((x > nu) if osc else (x < nu))
        if not np.any(sel):
            continue
        n, z, rr = nu[sel], x[sel], r[sel]
        ang = _angle(n, z, rr) if angle is None else angle[sel]
        t = n / rr
        even, odd, last = _corrections(t, rr, osc)
        good = last < _LAST_TERM
        if osc:
            xi = rr - n * ang - 0.25 * np.pi
            val = np.sqrt(2 / (np.pi * rr)) * (np.cos(xi) * (1 + even) + np.sin(xi) * odd)
        else:
            expo = rr - n * ang                           # m (tanh a - a)
            val = np.exp(expo) / np.sqrt(2 * np.pi * rr) * (1 + even + odd)
        idx = np.nonzero(sel)[0][good]
        out[idx] = val[good]
        use[idx] = True


def _angle(nu, x, r):
    """arctan(r/m) above the turning point, arccosh(m/x) = log((m + r)/x)
    below it (the phase and the exponent are r - m times this)."""
    out = np.empty_like(r)
    osc = x > nu
    out[osc] = np.arctan2(r[osc], nu[osc])
    ev = ~osc
    with np.errstate(divide="ignore"):
        out[ev] = np.log((nu[ev] + r[ev]) / np.maximum(x[ev], 1e-300))
    return out


def _jv_parts(m, x, groups=None):
    """J_m(x) (flat), |m|, r = sqrt|x^2 - m^2| and ``_angle``.  ``groups``
    (an integer label per value, or None): see ``jv_bounded``."""
    m, x = np.broadcast_arrays(np.asarray(m, float), np.asarray(x, float))
    m, x = m.ravel(), x.ravel()
    nu = np.abs(m)
    out = np.empty(nu.shape)
    r = np.sqrt(np.abs((x - nu) * (x + nu)))
    angle = _angle(nu, x, r)
    use = np.zeros(nu.shape, dtype=bool)
    _debye(nu, x, r, out, use, angle)
    rest = ~use
    if groups is not None and np.any(rest):
        # near the turning point, in a group with many such values: the
        # Airy-type transition expansion where it reaches double precision
        # (its fixed cost pays only for many values), scipy's jv elsewhere
        near = np.nonzero(rest & (nu >= NU_MIN))[0]
        if near.size >= TRANSITION_BATCH:
            label = np.asarray(groups).ravel()[near]
            count = np.bincount(label)
            near = near[count[label] >= TRANSITION_BATCH]
        else:
            near = near[:0]
        if near.size:
            val, good = transition_jv(nu[near], x[near])
            out[near[good]] = val[good]
            rest[near[good]] = False
    if np.any(rest):
        from scipy.special import jv   # scipy.special is imported when first needed (start-up)
        out[rest] = jv(nu[rest], x[rest])
    odd = (m < 0) & (np.mod(nu, 2) == 1)
    out[odd] = -out[odd]
    return out, nu, x, r, angle


def mean_square(nu, x):
    """The mean of J_nu(x)^2 over its oscillation above the turning point,
    |H_nu(x)|^2 / 2 = ((1 + E)^2 + O^2) / (pi r) with Debye's even and odd
    sums E, O (A&S 9.3.15-16: J = sqrt(2/(pi r)) Re[(1 + E - i O) e^(i xi)],
    Y the imaginary part), for real nu >= 0 and x > nu (1-D arrays):
    (values, bounds of their errors, where the expansion reached 1e-16).
    The error: the last kept term (twice), the floor BESSEL_FLOOR (twice)
    and the rounding of r^2 = x^2 - nu^2, 4 eps x^2/r^2; no phase enters."""
    nu = np.asarray(nu, float)
    x = np.asarray(x, float)
    r = np.sqrt(np.maximum((x - nu) * (x + nu), 0.0))
    with np.errstate(divide="ignore", invalid="ignore"):
        even, odd, last = _corrections(nu / r, r, True)
        val = ((1 + even) ** 2 + odd * odd) / (np.pi * r)
        rel = 2 * BESSEL_FLOOR + 2 * last + 4 * _EPS * (x / r) ** 2
    good = (r > 30.0) & (15 * nu * nu < r * r * r) & (last < _LAST_TERM)
    return np.where(good, val, 0.0), np.where(good, rel * val, 0.0), good


def jv_int(m, x):
    """J_m(x) for integer orders m (any sign) and x >= 0, elementwise."""
    shape = np.broadcast_shapes(np.shape(m), np.shape(x))
    return _jv_parts(m, x)[0].reshape(shape)


def _envelope(nu, x, r):
    with np.errstate(divide="ignore", over="ignore", invalid="ignore"):
        env = np.sqrt(2 / (np.pi * np.maximum(r, 1e-300)))
        # Airy's cap 0.68 (2/nu)^(1/3) (and 1) only where it can be lower
        # (cube roots are dear): elsewhere min(env, cap) is env itself
        capped = (env * env * env * nu > 0.68**3 * 2 * (1 - 1e-9)) | (env > 1.0)
        if capped.any():
            sub = nu[capped]
            env[capped] = np.minimum(env[capped], np.minimum(
                1.0, 0.68 * np.cbrt(2 / np.maximum(sub, 1e-300))))
    return np.where(x > nu, env, 0.0)


def envelope(m, x):
    """The local envelope of |J_m(x)| above the turning point: sqrt(2/(pi r))
    capped by Airy's maximum 0.68 (2/m)^(1/3) and by 1; 0 below it."""
    nu = np.abs(np.asarray(m, float))
    x = np.asarray(x, float)
    return _envelope(nu, x, np.sqrt(np.abs((x - nu) * (x + nu))))


def _relative(nu, x, r, angle=None):
    if angle is None:
        angle = _angle(nu, x, r)
    return BESSEL_FLOOR + BESSEL_PHASE * (r + nu * angle)


def jv_error(m, x, value):
    """Bound on the absolute error of ``jv_int(m, x)`` (``value``): a floor
    and the rounding of the phase (above the turning point,
    r - m arctan(r/m)) or of the exponent (below it, r - m arccosh(m/x)),
    four units per unit of the parts' sizes, relative to the envelope above
    the turning point and to the value itself everywhere."""
    nu = np.abs(np.asarray(m, float))
    x = np.asarray(x, float)
    r = np.sqrt(np.abs((x - nu) * (x + nu)))
    rel = _relative(nu, x, r)
    absval = np.abs(value)
    return np.where(absval > 0, rel * absval, 0.0) + rel * _envelope(nu, x, r)


def jv_bounded(m, x, groups=None):
    """J_m(x), the bound ``jv_error`` of its error, the envelope and
    r = sqrt|x^2 - m^2|, from one pass over the arrays.  ``groups``: a
    non-negative integer label per value (e.g. the block of harmonics it
    belongs to); the values near the turning point of a group that has at
    least TRANSITION_BATCH of them come from the transition expansion, the
    others from scipy's jv, so that a value's route depends on its group
    alone, never on the rest of the call (without labels: scipy's jv)."""
    shape = np.broadcast_shapes(np.shape(m), np.shape(x))
    J, nu, x, r, angle = _jv_parts(m, x, groups)
    env = _envelope(nu, x, r)
    err = _relative(nu, x, r, angle) * (np.abs(J) + env)
    return tuple(a.reshape(shape) for a in (J, err, env, r))
