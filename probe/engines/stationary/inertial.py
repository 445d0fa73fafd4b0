"""Stationary golden-rule rates for inertial and circular motion.

Kernels work in the gas's natural units (q = k xi, frequencies in c/xi,
speeds in c, lengths in xi) on plain numpy arrays; ``stationary_rates`` and
the ``*_rates`` functions convert SI inputs and outputs.

With ``A = (kappa/hbar)^2 n`` the rate of a transition with frequency change
``D`` (+Omega up, -Omega down) is

    Gamma = A int d^dk/(2pi)^d S |F|^2 [(1+n_k) 2pi delta(D + w_k - k.v)
                                       +   n_k  2pi delta(D - w_k + k.v)]

for inertial motion (Birrell and Davies 1982, ch. 3; the phonon field's
Wightman function along x = v t).  The delta functions restrict k to two
windows: ``W1 = {|w - Omega| <= k v}`` (down emission, up absorption) and
``W2 = {w + Omega <= k v}`` (up emission, the anomalous-Doppler process of
Ginzburg and Frolov, Sov. Phys. Usp. 30, 1073 (1987), and down absorption).
For a convex spectrum each window is one interval ``[a, b]``; in d = 1 the
rate is the sum over its edges.

For circular motion of radius R and angular frequency w_c the Jacobi-Anger
expansion turns the time integral into a sum over harmonics m of
``2 pi delta(D +- w_k - m w_c)``.
"""
from __future__ import annotations

import math

import numpy as np
from scipy import constants as sc
from probe.engines.bessel import jv_int as jv

from probe.gas.dispersion import Bogoliubov, Phonon
from probe.errors import InputError, ModelError
from probe.engines.quadrature import integrate
from probe.detectors.base import RateContext
from probe.engines.results import RateResult
from probe.quantities import guarded_names

HBAR = sc.hbar
KB = sc.k

#: |F|^2 = exp(-q^2 s^2) is below exp(-_CUT) beyond q = sqrt(_CUT)/s
_CUT = 80.0
#: relative floor of every error estimate: rounding in roots, nodes and sums
_ROUNDING = 1e-13
#: absolute floor of every error estimate in the gas's units (A xi^-d xi/c):
#: a product of factors that passes through the subnormal range (below
#: 2.2e-308) keeps only a few digits, so a value this small has none
_TINY = 1e-300
_EPS = float(np.finfo(float).eps)

# --- range of the inputs (in the gas's units) the engine is checked over in
# tests/test_robustness.py; outside it a ModelError says so ------------------
#: largest speed, in units of the sound speed c
MAX_SPEED_OVER_C = 1e6
#: gap Omega in units of c/xi: below, the two-level probe is the density probe
#: (up and down rates agree to 1e-12); above, the resonant k xi exceeds 1e6
GAP_RANGE = (1e-12, 1e12)
#: smallest circle radius, in healing lengths (the circle is then a point)
MIN_RADIUS_OVER_XI = 1e-9
#: below this speed (units of c) straight motion is treated as static: the
#: windows shrink onto the resonance shell and their edges, computed one by
#: one, lose digits as eps/v (3D) or collapse (1D, 2D, v < eps), while the
#: static value differs by O(v^2).  In 3D the switch is made per point, up to
#: STATIC_SPEED_3D, wherever the static value's error bound is the smaller.
STATIC_SPEED = 1e-8
STATIC_SPEED_3D = 1e-4
#: |v - v_th| / v_th below this is "at" a threshold speed (rounding of v and
#: of v_th): in 1D the rate diverges there, in 2D it jumps
AT_THRESHOLD = 1e-13
#: a rate whose estimated relative error exceeds this is not returned
MAX_RELATIVE_ERROR = 1e-3
#: 2D gapless probe: below v = c (1 + NEAR_SOUND) the window factor is formed
#: from the phase velocity's divided difference (see _window_integrals)
NEAR_SOUND = 1e-2
#: circular sums: largest predicted number of Bessel-function evaluations
#: (about 30 s on one core of the development machine, ~0.4 us each); the
#: running sum stops at twice this whatever the prediction said
MAX_BESSEL_EVALUATIONS = 7.5e7
#: seconds per Bessel-function evaluation in a large 3D sum (measured on the
#: development machine; only used to put a time on the refusal message)
_SECONDS_PER_BESSEL = 4e-7


# ---------------------------------------------------------------------------
# dimensionless kernels
# ---------------------------------------------------------------------------
class _Gas:
    """Dimensionless description of the gas and probe shared by kernels."""

    def __init__(self, dispersion, d, width, temperature):
        self.disp = dispersion
        self.d = d
        self.s = np.asarray(width, float)       # s / xi
        self.T = float(temperature)             # k_B T / (m c^2)

    def form(self, q, s):
        # (q s)^2 may overflow for absurd widths: exp(-inf) = 0 is the answer
        with np.errstate(over="ignore"):
            return np.exp(-(q * s) ** 2)

    def occupation(self, q):
        if self.T == 0:
            return np.zeros_like(q)
        with np.errstate(over="ignore", divide="ignore"):
            return 1.0 / np.expm1(self.disp.omega(q) / self.T)

    def qcut(self, s):
        with np.errstate(divide="ignore"):
            return np.where(s > 0, math.sqrt(_CUT) / np.where(s > 0, s, 1), np.inf)


def _edge_rounding(gas, q, v, W, s, vg, denom, tag):
    """Relative rounding error of a 1D edge term S |F|^2 weight / |v_g -+ v|.

    The edge q solves w(q) -+ v q = W to within its rounding, so it is off by
    dq = eps (w + v q + |W|)/denom; that moves the denominator by
    w''(q) dq and the numerator by its logarithmic derivative times dq.  Near
    a caustic (denom -> 0, where two edges merge and the rate diverges) this
    grows as eps/(v - v_th): the estimate makes the loss of digits visible.
    """
    dq = _EPS * (gas.disp.omega(q) + v * q + np.abs(W)) / denom
    log_slope = 2.0 / q + 2.0 * q * s * s
    if tag in ("thermal", "thermal_energy") and gas.T > 0:
        with np.errstate(over="ignore"):
            log_slope = log_slope + vg * (1.0 + gas.occupation(q)) / gas.T
    return (gas.disp.curvature(q) * dq + _EPS * (vg + v)) / denom + dq * log_slope


def _weights(gas, q, tag):
    """Weight factor of the integrand: 'plain' (1), 'thermal' (n_k),
    'energy' (w_k) or 'thermal_energy'."""
    if tag == "plain":
        return np.ones_like(q)
    if tag == "thermal":
        return gas.occupation(q)
    if tag == "energy":
        return gas.disp.omega(q)
    raise ValueError(tag)


def _window_integrals(gas, v, W, s, a, b, kind, tags, rtol):
    """Integrals over one window for every point.

    kind 'W1': edges a (w + v q = W) and b (w - v q = W);
    kind 'W2': edges a, b both roots of w - v q = -W.
    Returns {tag: (value, error)} of the dimensionless rate integral
    I_d (so that Gamma = A xi^-d / (c/xi) * I_d).
    """
    disp, d = gas.disp, gas.d
    n = v.size
    out = {t: (np.zeros(n), np.zeros(n)) for t in tags}
    present = np.isfinite(a) & ~np.isnan(b) & (b > a)
    if d == 1:
        # sum over the real roots of k v = X(|k|): the window edges
        for t in tags:
            val = np.zeros(n)
            err = np.zeros(n)
            for edge, sign in ((a, +1.0 if kind == "W1" else -1.0), (b, -1.0)):
                ok = present & np.isfinite(edge) & (edge > 0)
                if kind == "W1" and edge is a:
                    ok = ok & (W > 0)
                q = np.where(ok, edge, 1.0)
                vg = disp.group_velocity(q)
                denom = np.abs(vg + sign * v)
                with np.errstate(divide="ignore", invalid="ignore"):
                    term = (disp.structure_factor(q) * gas.form(q, s)
                            * _weights(gas, q, t) / denom)
                    rel = _edge_rounding(gas, q, v, W, s, vg, denom, t)
                val += np.where(ok, term, 0.0)
                # a term that is exactly zero (form factor underflow) has no error
                with np.errstate(invalid="ignore", over="ignore"):
                    err += np.where(ok & (term != 0), np.abs(term) * rel, 0.0)
            out[t] = (val, np.abs(val) * 1e-14 + err)
        return out

    qc = gas.qcut(s)
    bb = np.where(np.isinf(b), qc, b)
    if np.any(present & np.isinf(bb)):
        raise ModelError(
            "condensate.dispersion",
            "with the 'phonon' dispersion and a point probe (width 0) the "
            "supersonic rate diverges: the window of emitted wavenumbers is "
            "unbounded; give the probe a width or use 'bogoliubov'")
    present = present & (bb > a)
    idx = np.nonzero(present)[0]
    if idx.size == 0:
        return out
    aa, bq, vv, WW, ss = a[idx], bb[idx], v[idx], W[idx], s[idx]
    unbounded = np.isinf(b[idx])
    bcut = b[idx] > bq * (1 + 1e-15)  # window cut by the form factor

    if d == 3:
        closed = None
        if np.all(ss == 0) and not np.any(unbounded):
            closed = disp.qs_integral(aa, bq)
        if closed is not None:
            # point probe: int q S dq (and int q S w dq = int q^3/2 dq, since
            # S w = q^2/2 for both spectra) in closed form
            for t in tags:
                if t == "plain":
                    val = closed / (2 * math.pi * vv)
                elif t == "energy" and isinstance(disp, (Bogoliubov, Phonon)):
                    val = (bq - aa) * (bq + aa) * (bq * bq + aa * aa) / (16 * math.pi * vv)
                else:
                    continue
                out[t][0][idx] = val
                out[t][1][idx] = 0.0
            tags = [t for t in tags if t == "thermal" or (
                t == "energy" and not isinstance(disp, (Bogoliubov, Phonon)))]

        def make(t):
            def f(x, i):
                return (x * disp.structure_factor(x) * gas.form(x, ss[i, None])
                        * _weights(gas, x, t)) / (2 * math.pi * vv[i, None])
            return f
        for t in tags:
            val, err, _ = integrate(make(t), aa, bq, rtol=rtol * 0.1)
            out[t][0][idx] = val
            out[t][1][idx] = err
        _narrow_window_error(out, idx, aa, bq)
        return out

    # d = 2: 2/sqrt(k^2 v^2 - X^2) with inverse-square-root edges
    def factor(x, i):
        """sqrt((q - a)(b - q) / ((kv - X)(kv + X))) without cancellation,
        or sqrt((q - a)/((kv - X)(kv + X))) on unbounded windows."""
        A_, B_, V, Wd = aa[i, None], b[idx][i, None], vv[i, None], WW[i, None]
        if kind == "W1":
            lower = V + disp.omega_divided(x, A_)              # (kv+X)/(q-a)
            with np.errstate(invalid="ignore"):
                Bf = np.where(np.isinf(B_), 0, B_)
                upper_fin = disp.omega_divided(x, Bf) - V
                if hasattr(disp, "phase_divided"):
                    # gapless probe just above the sound speed: b is the crossing
                    # w(b)/b = v, so (kv - w)/(b - q) = q p[q, b] with p = w/q,
                    # while w[q, b] - v cancels to ~(v - 1) and, at v - 1 ~ 1e-9,
                    # to zero or below at some nodes (an infinite rate)
                    near = (Wd == 0) & (V - 1 < NEAR_SOUND)
                    upper_fin = np.where(near, x * disp.phase_divided(x, Bf), upper_fin)
            upper = np.where(np.isinf(B_), x * V + Wd - disp.omega(x), upper_fin)
            fin = ~np.isinf(B_)
            # finite: (kv - X)/(b - q); unbounded: kv - X itself
            return 1.0 / np.sqrt(lower * upper), fin
        # W2: kv - X = (q - a)(b - q) w[q,a,b]; kv + X = v q + W + w
        fin = ~np.isinf(B_)
        with np.errstate(invalid="ignore"):
            mid = disp.omega_divided2(x, A_, np.where(fin, B_, A_ + 1))
        plus = V * x + Wd + disp.omega(x)
        lower_only = V - disp.omega_divided(x, A_)             # unbounded: (kv-X)/(q-a)
        val = np.where(fin, mid * plus, lower_only * plus)
        return 1.0 / np.sqrt(val), fin

    def make2(t):
        def f(th, i):
            A_ = aa[i, None]
            Bf = b[idx][i, None]
            fin = ~np.isinf(Bf)
            # finite windows: q = (a+b)/2 - (b-a)/2 cos(theta), dq/sqrt(..)=dtheta
            # unbounded: q = a + t^2, dq/sqrt(q - a) = 2 dt
            Bs = np.where(fin, Bf, A_ + 1.0)
            qf = 0.5 * (A_ + Bs) - 0.5 * (Bs - A_) * np.cos(th)
            qu = A_ + th * th
            q = np.where(fin, qf, qu)
            fac, _ = factor(q, i)
            jac = np.where(fin, 1.0, 2.0)
            g = (q * disp.structure_factor(q) * gas.form(q, ss[i, None])
                 * _weights(gas, q, t))
            return g * 2.0 * fac * jac / (2 * math.pi)
        return f

    # integration variable limits
    fin = ~unbounded
    th_hi = np.empty(idx.size)
    with np.errstate(invalid="ignore"):
        cosarg = np.clip((aa + b[idx] - 2 * bq) / np.where(fin, b[idx] - aa, 1), -1, 1)
    th_hi[fin] = np.where(bcut[fin], np.arccos(cosarg[fin]), math.pi)
    th_hi[~fin] = np.sqrt(bq[~fin] - aa[~fin])
    for t in tags:
        val, err, _ = integrate(make2(t), np.zeros(idx.size), th_hi, rtol=rtol * 0.1)
        out[t][0][idx] = val
        out[t][1][idx] = err
    if kind == "W2":
        # near the threshold the up window [a, b] is narrow and the factor
        # (q - a)(b - q) w[q, a, b] carries the rounding of both edges
        _narrow_window_error(out, idx, aa, bq)
    return out


def _narrow_window_error(out, idx, a, b):
    """Add the rounding of the window edges to the error estimates: each
    edge is known to a few ulps, a relative error 4 eps (a + b)/(b - a) of
    the window's width (negligible unless the window is narrow: slow motion
    in 3D, speeds just above the up threshold)."""
    with np.errstate(divide="ignore", invalid="ignore"):
        rel = np.where(b > a, 4.0 * _EPS * (a + b) / (b - a), 0.0)
    for t in out:
        out[t][1][idx] += np.abs(out[t][0][idx]) * rel


def _static_values(gas, W, s, tag):
    """v = 0: Gamma/A' = S|F|^2 weight * {q^2/(pi v_g), q/v_g, 2/v_g} at w = W."""
    disp, d = gas.disp, gas.d
    q = disp.inverse(W)
    vg = disp.group_velocity(np.where(q > 0, q, 1.0))
    with np.errstate(invalid="ignore", divide="ignore"):
        base = disp.structure_factor(q) * gas.form(q, s) * _weights(gas, q, tag)
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


def inertial_kernel(gas, v, W, s, rtol=1e-8, energy=False):
    """Dimensionless inertial rates.

    Returns dict with 'down', 'up' (two-level, W > 0) or 'emission',
    'absorption', 'energy' (density probe, W = 0), each (value, error),
    in units of A xi^-d xi/c.
    """
    v, W, s = (np.asarray(x, float).ravel() for x in np.broadcast_arrays(v, W, s))
    disp = gas.disp
    thermal = gas.T > 0
    tags = ["plain"] + (["thermal"] if thermal else []) + (["energy"] if energy else [])
    # very slow motion is static (see STATIC_SPEED); for the gapless density
    # probe every subsonic speed gives zero, so only W > 0 points are affected
    slow = v < STATIC_SPEED
    if gas.d == 3:
        with np.errstate(divide="ignore", invalid="ignore"):
            vg0 = disp.group_velocity(disp.inverse(W))
            window_err = 4.0 * _EPS * vg0 / v          # 4 eps (a + b)/(b - a)
        slow = slow | ((v < STATIC_SPEED_3D) & (_slow_static_error(gas, v, W, s) < window_err))
    moving = ~slow | ((v > 0) & (W == 0))
    res = {}
    nW = v.size
    zero = np.zeros(nW)

    qa = np.full(nW, np.nan)
    qb = np.full(nW, np.nan)
    qc = np.full(nW, np.nan)
    qd = np.full(nW, np.nan)
    if np.any(moving):
        m = moving
        qa[m] = disp.root_minus(v[m], W[m])
        qb[m] = disp.root_plus(v[m], W[m])
        upm = m & (W > 0)
        if np.any(upm):
            c_, d_ = disp.roots_up(v[upm], W[upm])
            qc[upm], qd[upm] = c_, d_
    I1 = _window_integrals(gas, v, W, s, qa, qb, "W1", tags, rtol)
    I2 = _window_integrals(gas, v, W, s, qc, qd, "W2", tags, rtol)

    def pick(I, t):
        return I[t] if t in I else (zero, zero)

    st = ~moving
    static = {t: _static_values(gas, W, s, t) for t in tags}
    p1, e1 = pick(I1, "plain")
    p2, e2 = pick(I2, "plain")
    t1, f1 = pick(I1, "thermal")
    t2, f2 = pick(I2, "thermal")
    sp = static["plain"]
    stt = static.get("thermal", zero)
    # floor of the error estimate: rounding in the window edges and sums
    fl = _ROUNDING
    if np.all(W > 0):
        down = np.where(st, sp + stt, p1 + t1 + t2)
        up = np.where(st, stt, p2 + t2 + t1)
        slow = _slow_static_error(gas, v, W, s) * st
        res["down"] = (down, np.where(st, 0.0, e1 + f1 + f2) + (fl + slow) * down)
        res["up"] = (up, np.where(st, 0.0, e2 + f2 + f1) + (fl + slow) * up)
    else:
        # density probe: W = 0, both windows coincide with [0, q_b]
        em = np.where(st, 0.0, p1 + t1)
        ab = np.where(st, 0.0, t1)
        res["emission"] = (em, e1 + f1 + fl * em)
        res["absorption"] = (ab, f1 + fl * ab)
        en = pick(I1, "energy")
        ev = np.where(st, 0.0, en[0])
        res["energy"] = (ev, en[1] + fl * ev)
    res["edges"] = (qa, qb, qc, qd)
    return res


# --- circular --------------------------------------------------------------
def _kapteyn(z):
    """rho(z) with |J_m(m z)| <= rho(z)^m for 0 <= z <= 1 (Kapteyn's
    inequality, Watson, *Theory of Bessel Functions*, sec. 8.7)."""
    z = np.clip(z, 0, 1)
    r = np.sqrt(1 - z * z)
    with np.errstate(divide="ignore"):
        return np.where(z > 0, z * np.exp(r) / (1 + r), 0.0)


def _w3_terms(m, x):
    """Number of Bessel functions summed by ``_w3`` for each (m, x): orders up
    to 2x + 40 + 8 (2x)^(1/3) beyond 2m + 1."""
    z = 2 * np.asarray(x, float)
    return np.maximum(0, np.ceil((z + 40 + 8 * np.cbrt(z) - 2 * np.abs(m) - 1) / 2)
                      ).astype(int) + 8


def _w3(m, x):
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
    nmax = _w3_terms(mm, xx)
    acc = np.zeros(mm.shape)
    order = np.argsort(nmax)
    # process in groups of similar length to bound memory
    start = 0
    while start < order.size:
        stop = min(order.size, start + max(1, 4_000_000 // max(1, nmax[order[min(order.size - 1, start + 255)]])))
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


_TOO_MANY_HARMONICS = (
    "harmonics are spaced by the angular frequency, so a slow rotation or a "
    "large circle needs very many; for R >> xi the rate approaches that of "
    "straight motion at the same speed (kind = \"linear\"), for v << c the "
    "static one")


def circular_work(gas, R, v, W, s, rtol=1e-8):
    """Predicted (harmonics, Bessel-function evaluations) of
    ``circular_kernel`` for one point, from the same window edges and stopping
    rule (Kapteyn's bound below 0.1 rtol), without evaluating any Bessel
    function.  Used to refuse sums that would take minutes.  The evaluation
    count is doubled: against counted runs (R = 10 to 1e4 xi, v = 1e-5 to
    1e3 c) the plain prediction was low by a factor of up to 1.9."""
    disp, d = gas.disp, gas.d
    wc = v / R
    qcut = math.sqrt(_CUT) / s if s > 0 else math.inf
    harmonics = 0.0
    evals = 0.0
    for sign in ((+1, -1) if W > 0 else (+1,)):
        mlo = math.floor(-sign * W / wc) + 1
        if W == 0:
            mlo = max(mlo, 1)
        if sign > 0:
            qe = float(disp.root_plus(np.array([v]), np.array([W]))[0])
        else:
            qe = float(disp.roots_up(np.array([v]), np.array([W]))[1][0])
            if np.isnan(qe):
                qe = float(disp.threshold(np.array([W]))[1][0]) if W > 0 else 0.0
        qe = min(qe, qcut) if np.isfinite(qe) else qcut
        m_edge = (float(disp.omega(qe)) - sign * W) / wc if np.isfinite(qe) else math.inf
        start = 0 if (sign > 0 and W > 0) else mlo

        def z_of(m):
            q = disp.inverse(sign * W + m * wc)
            return q * R / np.maximum(m, 1), q

        def done(m):
            z, q = z_of(m)
            rho2 = _kapteyn(np.minimum(z, 1.0)) ** 2
            with np.errstate(divide="ignore"):
                tail = m * np.log(np.where(rho2 > 0, rho2, 1e-300))
            return (q > qcut) | ((z < 1) & (tail < math.log(0.1 * rtol)))

        lo = max(start, 1, int(min(m_edge, 1e15)) if np.isfinite(m_edge) else 1)
        hi = lo
        while not bool(done(np.array([float(hi)]))[0]):
            hi *= 2
            if hi > 1e15:
                return math.inf, math.inf
        # first m >= lo at which the sum stops (bisection on integers)
        a_, b_ = lo, hi
        while b_ - a_ > 1:
            mid = (a_ + b_) // 2
            if bool(done(np.array([float(mid)]))[0]):
                b_ = mid
            else:
                a_ = mid
        m_hi = b_
        count = (m_hi - start + 1) + (start - mlo if start > mlo else 0)
        harmonics += count
        if d == 3 and math.isfinite(count):
            # sample the per-harmonic cost and integrate (trapezoid)
            m = np.unique(np.round(np.linspace(mlo, m_hi, 2049)))
            w = sign * W + m * wc
            q = disp.inverse(np.where(w > 0, w, 0.0))
            cost = _w3_terms(m, q * R).astype(float)
            evals += 2.0 * (float(np.sum(0.5 * (cost[1:] + cost[:-1]) * np.diff(m)))
                            + cost[0])
        else:
            evals += 2.0 * count
    return harmonics, evals


def circular_kernel(gas, R, v, W, s, rtol=1e-8, energy=False, max_harmonics=2_000_000,
                    max_evaluations=math.inf):
    """Dimensionless circular rates for one point (scalars R, v, W, s), in
    units of A xi^-d xi/c.  Returns dict like ``inertial_kernel`` plus the
    number of harmonics used.

    Each family of harmonics (``w_k = W + m w_c`` and ``w_k = m w_c - W``) is
    summed outward from the region where ``k R ~ |m|`` until Kapteyn's
    inequality bounds what is left below the tolerance.
    """
    disp, d = gas.disp, gas.d
    wc = v / R
    thermal = gas.T > 0
    if (not disp.bounded_windows) and v >= 1 and s == 0:
        raise ModelError(
            "condensate.dispersion",
            "with the 'phonon' dispersion and a point probe (width 0) the "
            "supersonic circular rate diverges: every harmonic radiates; give "
            "the probe a width or use 'bogoliubov'")
    qcut = math.sqrt(_CUT) / s if s > 0 else math.inf
    keys = ("plain", "thermal", "energy")
    work = [0.0]          # Bessel functions evaluated so far

    def terms(m, sign):
        w = sign * W + m * wc
        q = disp.inverse(w)
        vg = disp.group_velocity(q)
        Sq = disp.structure_factor(q)
        x = q * R
        if d == 2:
            B = jv(m, x) ** 2
            P0 = q * Sq / vg
            work[0] += m.size
        else:
            B = _w3(m, x)
            P0 = q * q * Sq / (math.pi * vg)
            work[0] += float(np.sum(_w3_terms(m, x)))
        if work[0] > max_evaluations:
            raise ModelError(
                "trajectory.radius",
                f"the circular sum (radius {R:.4g} xi, speed {v:.4g} c) stopped "
                f"after {work[0]:.3g} Bessel-function evaluations, the limit; "
                + _TOO_MANY_HARMONICS)
        base = P0 * gas.form(q, s) * B
        n_th = gas.occupation(q) if thermal else np.zeros_like(q)
        sums = {"plain": base.sum(), "thermal": (base * n_th).sum(),
                "energy": (base * w).sum() if energy else 0.0}
        return sums, q, P0, w, n_th

    def converged(tot, tail, n_end, w_end):
        bound = {"plain": tail, "thermal": tail * n_end,
                 "energy": tail * w_end * math.e if energy else 0.0}
        ok = all(bound[k] <= rtol * 0.1 * abs(tot[k]) + 1e-300 for k in keys)
        return ok, bound

    def sweep(sign, m_first, direction, m_stop, m_edge):
        """Sum terms m_first, m_first+direction, ... (not past m_stop) until
        the remainder bound is met.  Returns sums, bounds, count."""
        tot = dict.fromkeys(keys, 0.0)
        bnd = dict.fromkeys(keys, 0.0)
        count = 0
        m0 = m_first
        first = True
        while True:
            if direction > 0:
                size = 256 if not first else int(min(8192, max(256, m_edge - m0 + 64)))
                size = max(size, int(min(8192, abs(m_edge) / 8)))
                m = np.arange(m0, m0 + size, dtype=float)
            else:
                size = int(min(8192, max(256, (m0 - m_edge) + 64 if first else abs(m_edge) / 8 + 256)))
                lo = max(m_stop, m0 - size + 1)
                m = np.arange(m0, lo - 1, -1, dtype=float)
            first = False
            if m.size == 0:
                break
            sums, q, P0, w, n_th = terms(m, sign)
            for k in keys:
                tot[k] += sums[k]
            count += m.size
            M = m[-1]
            m0 = M + direction
            if direction < 0 and M <= m_stop:
                break
            qM = q[-1]
            if qM > qcut and direction > 0:
                # the form factor is below exp(-80) from here on
                break
            zM = qM * R / abs(M) if M != 0 else math.inf
            past_peak = True
            if direction > 0 and sign < 0 and W > 0:
                past_peak = M >= m_edge
            if zM < 1 and past_peak:
                r = _kapteyn(zM) ** 2
                g = r * math.exp(3.0 / abs(M)) if direction > 0 else r
                if g < 1:
                    tail = P0[-1] * r ** abs(M) * g / (1 - g)
                    ok, b = converged(tot, tail, n_th[-1], w[-1])
                    if ok:
                        bnd = b
                        break
            if count > max_harmonics:
                raise ModelError(
                    "trajectory.radius",
                    f"the harmonic sum did not converge within {max_harmonics} "
                    f"terms (radius {R:.4g} xi, speed {v:.4g} c, angular "
                    f"frequency v/R = {wc:.4g} c/xi); " + _TOO_MANY_HARMONICS)
        return tot, bnd, count

    def family(sign):
        mlo = math.floor(-sign * W / wc) + 1
        if W == 0:
            mlo = max(mlo, 1)
        if sign > 0:
            qe = float(disp.root_plus(np.array([v]), np.array([W]))[0])
            if not np.isfinite(qe):
                qe = qcut
        else:
            qc_, qd_ = disp.roots_up(np.array([v]), np.array([W]))
            if np.isfinite(qd_[0]):
                qe = float(qd_[0])
            elif np.isnan(qd_[0]):
                qe = float(disp.threshold(np.array([W]))[1][0]) if W > 0 else 0.0
                if not np.isfinite(qe):
                    qe = qcut
            else:
                qe = qcut
        m_edge = (float(disp.omega(qe)) - sign * W) / wc if np.isfinite(qe) else 1e9
        up_start = max(mlo, 0 if sign > 0 and W > 0 else mlo)
        tot, bnd, cnt = sweep(sign, up_start, +1, None, m_edge)
        if up_start > mlo:
            # negative harmonics: w = W - |m| w_c > 0; they matter down to
            # |m| ~ q_a R and decay beyond
            qa = float(disp.root_minus(np.array([v]), np.array([W]))[0])
            m_edge_neg = -(W - float(disp.omega(qa))) / wc
            t2, b2, c2 = sweep(sign, up_start - 1, -1, mlo, m_edge_neg)
            for k in keys:
                tot[k] += t2[k]
                bnd[k] += b2[k]
            cnt += c2
        return tot, bnd, cnt

    res = {}
    bessel = 1e-10   # relative accuracy of the Bessel functions (see bessel.py)
    if W > 0:
        t1, e1, n1 = family(+1)
        t2, e2, n2 = family(-1)
        down = t1["plain"] + t1["thermal"] + t2["thermal"]
        up = t2["plain"] + t2["thermal"] + t1["thermal"]
        res["down"] = (down, e1["plain"] + e1["thermal"] + e2["thermal"] + bessel * down)
        res["up"] = (up, e2["plain"] + e2["thermal"] + e1["thermal"] + bessel * up)
        res["harmonics"] = n1 + n2
    else:
        t1, e1, n1 = family(+1)
        em = t1["plain"] + t1["thermal"]
        res["emission"] = (em, e1["plain"] + e1["thermal"] + bessel * em)
        res["absorption"] = (t1["thermal"], e1["thermal"] + bessel * t1["thermal"])
        res["energy"] = (t1["energy"], e1["energy"] + bessel * t1["energy"])
        res["harmonics"] = n1
    return res


# ---------------------------------------------------------------------------
# SI layer
# ---------------------------------------------------------------------------
def _prefactor(cond, coupling):
    """A xi^-d / (c/xi): converts dimensionless integrals to 1/s."""
    try:
        A = (coupling / HBAR) ** 2 * cond.density
        pref = A * cond.healing_length ** (-cond.dimension) / cond.frequency_unit
    except OverflowError:
        pref = math.inf
    if not math.isfinite(pref) or pref <= 0:
        raise ModelError(
            "probe.coupling",
            f"the rate scale (kappa/hbar)^2 n xi^-d / (c/xi) = {pref:.4g} s^-1 "
            f"for kappa = {coupling:.4g} J m^{cond.dimension} and density "
            f"n = {cond.density:.4g} m^-{cond.dimension} is not a finite positive "
            "number; coupling or density is far outside the range of first-order "
            "perturbation theory in a dilute gas")
    return pref


def _gas(cond, probe):
    return _Gas(cond.dispersion, cond.dimension, probe.width / cond.healing_length,
                KB * cond.temperature / cond.energy_unit)


def _check_array(name, x, allow_zero=True):
    x = np.asarray(x, float)
    if not np.all(np.isfinite(x)):
        raise InputError(name, f"must be finite, got {x!r}")
    if np.any(x < 0) or (not allow_zero and np.any(x == 0)):
        raise InputError(name, f"must be {'>= 0' if allow_zero else '> 0'}, got {x!r}")
    return x


def _channels(probe, gap):
    """The probe model's channels with their detunings checked as arrays."""
    out = []
    for ch in probe.channels(gap):
        det = np.asarray(ch.detuning, float)
        if ch.gapped:
            det = _check_array(ch.key, det, allow_zero=False)
        out.append((ch, det))
    return out


def _range_checks(condensate, speed, gaps=(), radius=None):
    """ModelError where an input leaves the range the engine is checked over
    (MAX_SPEED_OVER_C, GAP_RANGE, MIN_RADIUS_OVER_XI); ``gaps`` are
    ``(key, detuning)`` pairs of the gapped channels."""
    c, xi, w0 = condensate.sound_speed, condensate.healing_length, condensate.frequency_unit
    v = np.asarray(speed, float) / c
    if np.any(v > MAX_SPEED_OVER_C):
        bad = v > MAX_SPEED_OVER_C
        raise ModelError(
            "trajectory.speed",
            f"{_at(bad)}the speed {np.max(v):.4g} c_s ({np.max(v) * c:.4g} m/s) is "
            f"above the largest the engine handles, {MAX_SPEED_OVER_C:g} c_s "
            f"({MAX_SPEED_OVER_C * c:.4g} m/s)")
    for key, gap in gaps:
        _gap_range_check(key, np.asarray(gap, float) / w0, w0)
    if radius is not None:
        R = np.asarray(radius, float) / xi
        if np.any(R < MIN_RADIUS_OVER_XI):
            raise ModelError(
                "trajectory.radius",
                f"{_at(R < MIN_RADIUS_OVER_XI)}the radius {np.min(R):.4g} xi is "
                f"below {MIN_RADIUS_OVER_XI:g} xi: such a circle is a point; the "
                "rates approach those of a probe at rest (kind = \"linear\", "
                "speed 0)")


def _gap_range_check(key, W, w0):
    lo, hi = GAP_RANGE
    if np.any(W < lo):
        raise ModelError(
            key,
            f"{_at(W < lo)}the gap Omega = {np.min(W):.4g} c/xi "
            f"({np.min(W) * w0:.4g} rad/s) is below {lo:g} c/xi: there the "
            "two-level probe is the structureless one (up and down rates "
            "agree); use probe.model = \"density\"")
    if np.any(W > hi):
        raise ModelError(
            key,
            f"{_at(W > hi)}the gap Omega = {np.max(W):.4g} c/xi "
            f"({np.max(W) * w0:.4g} rad/s) is above {hi:g} c/xi, where the "
            "resonant k xi exceeds 1e6 and the contact-coupled Bogoliubov "
            "gas is no model")


def _at(mask):
    """'at N of M grid points, ' for an array mask, '' for a scalar."""
    mask = np.asarray(mask)
    if mask.size <= 1:
        return ""
    return f"at {int(np.count_nonzero(mask))} of {mask.size} grid points, "


def _threshold_checks(condensate, gapped, vv, WW):
    """ModelError at a speed where a rate is singular: exactly (within
    rounding, AT_THRESHOLD) at the up threshold in 1D (the rate diverges as
    1/sqrt(v - v_th): the two up-window edges merge, a caustic) and 2D (the up
    rate jumps from 0 to a finite value), at the sound speed for a 1D channel
    without detuning (1/sqrt(v - c)) and for the 1D phonon dispersion."""
    d = condensate.dimension
    if d == 3:
        return
    v = np.asarray(vv, float).ravel()
    W = np.asarray(WW, float).ravel()
    if gapped:
        _gapped_threshold_check(condensate.dispersion, d, v, W)
    elif d == 1:
        near = np.abs(v - 1.0) <= AT_THRESHOLD
        if np.any(near):
            why = ("the 1D emission rate is zero below the sound speed and "
                   "diverges as 1/sqrt(v - c) above it"
                   if condensate.dispersion.bounded_windows
                   else "with the 'phonon' dispersion every wavenumber is "
                   "resonant at the sound speed")
            raise ModelError(
                "trajectory.speed",
                f"{_at(near)}the speed is the sound speed (to within rounding): "
                f"{why}, so at v = c it is undefined; give another speed")


def _gapped_threshold_check(disp, d, v, W):
    if disp.bounded_windows:
        vt, _ = disp.threshold(W)
        near = np.abs(v - vt) <= AT_THRESHOLD * vt
        how = {1: "the 1D up rate diverges as 1/sqrt(v - v_th) there (the "
                  "two edges of the resonant window merge)",
               2: "the 2D up rate jumps there from 0 to a finite value"}[d]
        if np.any(near):
            i = int(np.argmax(near))
            raise ModelError(
                "trajectory.speed",
                f"{_at(near)}the speed {v[i]:.15g} c_s is the up-transition "
                f"threshold speed v_th = {vt[i]:.15g} c_s (to within "
                f"{AT_THRESHOLD:g} relative, the rounding of both): {how}, so "
                "the rate is undefined; give a speed further from v_th")
    elif d == 1:
        near = np.abs(v - 1.0) <= AT_THRESHOLD
        if np.any(near):
            raise ModelError(
                "trajectory.speed",
                f"{_at(near)}with the 'phonon' dispersion in 1D the rates "
                "diverge as (v - c)^-2 at the sound speed, and the speed "
                "is the sound speed (to within rounding); give another "
                "speed or use 'bogoliubov'")


def _error_check(name, value, error, key="trajectory.speed"):
    """ModelError where a rate's error estimate exceeds MAX_RELATIVE_ERROR
    of the rate (near a caustic rounding leaves no reliable digits)."""
    val = np.asarray(value, float)
    err = np.asarray(error, float)
    with np.errstate(divide="ignore", invalid="ignore"):
        rel = np.where(val > 0, err / val, 0.0)
    bad = rel > MAX_RELATIVE_ERROR
    if np.any(bad):
        raise ModelError(
            key,
            f"{_at(bad)}the {name} cannot be computed reliably here: rounding "
            f"leaves it with a relative error of {np.max(rel):.2g} (more than "
            f"{MAX_RELATIVE_ERROR:g}); this happens within about "
            f"{_EPS / MAX_RELATIVE_ERROR:.0e} (relative) of a speed where the "
            "rate diverges; give a speed further from it")


def _guard(condensate, probe, res):
    """Never hand back a silent NaN, inf or negative rate: ModelError naming
    the quantity and the inputs (in the gas's units) instead.  Which
    quantities are guarded is declared in the quantity registry."""
    for name in guarded_names():
        value = getattr(res, name, None)
        if value is None:
            continue
        a = np.asarray(value, float)
        bad = ~np.isfinite(a) | (a < 0)
        if np.any(bad):
            what = "not finite" if not np.all(np.isfinite(a)) else "negative"
            w0 = condensate.frequency_unit
            inputs = (f"speed {_max_of(res.speed) / condensate.sound_speed:.4g} c_s, "
                      f"temperature {KB * condensate.temperature / condensate.energy_unit:.4g} "
                      f"mu/k_B, width {probe.width / condensate.healing_length:.4g} xi")
            if res.gap is not None:
                inputs += f", gap {_max_of(res.gap) / w0:.4g} c/xi"
            raise ModelError(
                "inputs",
                f"{_at(bad)}the {name.replace('_', ' ')} is {what} ({float(a[bad].flat[0])!r}) "
                f"for {inputs}: the inputs are outside the range the engine can "
                "represent; no number is returned")


def _max_of(x):
    if x is None:
        return float("nan")
    return float(np.max(np.asarray(x, float)))


def _tiny_floor(value_error):
    """The error estimate of a dimensionless (value, error) pair with the
    absolute floor _TINY wherever the value is not zero."""
    val, err = (np.asarray(x, float) for x in value_error)
    return np.where(val != 0, np.maximum(err, _TINY), err)


def _shape(x, shape):
    x = np.asarray(x, float).reshape(shape)
    return float(x) if x.ndim == 0 else x


#: processes of a channel with a detuning (up, down) and without (emission,
#: absorption, and the energy moment that gives the power)
_GAPPED = ("up", "down")
_GAPLESS = ("emission", "absorption", "energy")


def _si_channel(cond, ch, out, keys=None):
    """Dimensionless kernel output of one channel -> SI (value, error) per
    process: rates in 1/s, the energy moment as a power in W."""
    pref = _prefactor(cond, ch.coupling)
    raw = {}
    for k in keys or (_GAPPED if ch.gapped else _GAPLESS):
        val, err = (np.asarray(x, float) for x in out[k])
        if k == "energy":
            raw["power"] = (val * pref * HBAR * cond.frequency_unit, err * pref)
        else:
            raw[k] = (val * pref, _tiny_floor((val, err)) * pref)
    return raw


def _build_result(condensate, probe, kind, raw, speed, detunings, shape, up_cannot_vanish):
    """RateResult from the SI channel results: the probe model names and
    combines them into its outputs."""
    res = RateResult(kind=kind, model=probe.name, sound_speed=condensate.sound_speed,
                     healing_length=condensate.healing_length,
                     chemical_potential=condensate.chemical_potential)
    ctx = RateContext(kind, condensate, speed, detunings, up_cannot_vanish)
    for name, value in probe.rate_results(raw, ctx).items():
        setattr(res, name, _shape(value, shape))
    res.speed = _shape(speed, shape)
    gapped = [d for d in detunings.values() if np.all(d > 0)]
    if gapped:
        res.gap = _shape(gapped[0], shape)
    return res


def inertial_rates(condensate, probe, speed, gap=None, rtol=1e-8):
    """Golden-rule rates for uniform straight motion at ``speed`` (m/s).

    ``speed`` and ``gap`` (rad/s; default the probe's) broadcast together.
    Returns a :class:`RateResult` with arrays of the broadcast shape.
    """
    speed = _check_array("trajectory.speed", speed)
    c, w0 = condensate.sound_speed, condensate.frequency_unit
    gas = _gas(condensate, probe)
    channels = _channels(probe, gap)
    _range_checks(condensate, speed, [(ch.key, det) for ch, det in channels if ch.gapped])
    shape = np.broadcast_shapes(np.shape(speed), *(np.shape(det) for _, det in channels))
    vv = np.broadcast_to(speed / c, shape)
    raw, detunings = {}, {}
    for ch, det in channels:
        WW = np.broadcast_to(det / w0, shape)
        _threshold_checks(condensate, ch.gapped, vv, WW)
        out = inertial_kernel(gas, vv, WW, gas.s, rtol=rtol, energy=not ch.gapped)
        for k in (_GAPPED if ch.gapped else _GAPLESS[:1]):
            _error_check(f"{'emission' if k == 'emission' else k} rate", out[k][0], out[k][1])
        raw[ch.label] = _si_channel(condensate, ch, out)
        detunings[ch.label] = WW.ravel() * w0
    return _with_regime(condensate, probe, _build_result(
        condensate, probe, "inertial", raw, vv.ravel() * c, detunings, shape,
        up_cannot_vanish=condensate.temperature > 0), rtol=rtol)


def circular_rates(condensate, probe, radius, speed, gap=None, rtol=1e-8,
                   max_bessel_evaluations=MAX_BESSEL_EVALUATIONS):
    """Golden-rule rates on a circle of ``radius`` (m) at ``speed`` (m/s),
    in the plane of a 2D gas or inside a 3D gas.  Arrays broadcast.

    A point whose harmonic sum is predicted (``circular_work``) to need more
    than ``max_bessel_evaluations`` Bessel functions (about 0.4 us each) is
    refused with a ModelError before any work; raise the limit to wait."""
    if condensate.dimension == 1:
        raise InputError("trajectory.kind",
                         "a circular path needs a 2D or 3D gas; this gas is 1D")
    radius = _check_array("trajectory.radius", radius, allow_zero=False)
    speed = _check_array("trajectory.speed", speed)
    c, xi, w0 = condensate.sound_speed, condensate.healing_length, condensate.frequency_unit
    gas = _gas(condensate, probe)
    channels = _channels(probe, gap)
    _range_checks(condensate, speed, [(ch.key, det) for ch, det in channels if ch.gapped],
                  radius)
    shape = np.broadcast_shapes(np.shape(radius), np.shape(speed),
                                *(np.shape(det) for _, det in channels))
    Rf = np.broadcast_to(radius / xi, shape).ravel()
    vf = np.broadcast_to(speed / c, shape).ravel()
    raw, detunings = {}, {}
    harmonics = np.zeros(Rf.size, dtype=int)
    for ch, det in channels:
        Wf = np.broadcast_to(det / w0, shape).ravel()
        vals, errs, count = _circular_points(gas, Rf, vf, Wf, ch.gapped, rtol,
                                             max_bessel_evaluations)
        harmonics += count
        keys = _GAPPED if ch.gapped else _GAPLESS
        raw[ch.label] = _si_channel(condensate, ch, {k: (vals[k], errs[k]) for k in keys})
        detunings[ch.label] = Wf * w0
    res = _build_result(condensate, probe, "circular", raw, vf * c, detunings, shape,
                        up_cannot_vanish=vf > 0)
    res.radius = _shape(Rf * xi, shape)
    res.harmonics = harmonics.reshape(shape) if shape else int(harmonics[0])
    return _with_regime(condensate, probe, res, rtol=rtol)


def _circular_points(gas, Rf, vf, Wf, gapped, rtol, max_bessel_evaluations):
    """The circular kernel point by point (a probe at rest by the inertial
    kernel): dimensionless values and errors per process, harmonics used."""
    n = Rf.size
    keys = _GAPPED if gapped else _GAPLESS
    vals = {k: np.zeros(n) for k in keys}
    errs = {k: np.zeros(n) for k in keys}
    harmonics = np.zeros(n, dtype=int)
    for i in range(n):
        if vf[i] == 0:
            o = inertial_kernel(gas, np.array([0.0]), np.array([Wf[i]]), gas.s,
                                rtol=rtol, energy=not gapped)
            for k in keys:
                vals[k][i] = o[k][0][0]
                errs[k][i] = o[k][1][0]
            continue
        _work_check(gas, Rf[i], vf[i], Wf[i], float(gas.s), rtol,
                    max_bessel_evaluations, n)
        o = circular_kernel(gas, Rf[i], vf[i], Wf[i], float(gas.s), rtol=rtol,
                            energy=not gapped,
                            max_evaluations=2 * max_bessel_evaluations)
        for k in keys:
            vals[k][i], errs[k][i] = o[k]
        harmonics[i] = o["harmonics"]
    return vals, errs, harmonics


def _clearly_cheap(gas, R, v, W, s, limit):
    """A few-flop upper estimate of the circular sum's work: True when it is
    far below the limits, so that ``circular_work`` (about 0.5 ms) is not
    needed.  Harmonics reach about omega(q_hi) R/v with q_hi beyond the
    window edge (q^2/2 > v q + W for Bogoliubov), plus the negative ones
    (W R/v) and Kapteyn's tail, which is short (a few hundred terms) unless
    v is near c; each 3D harmonic costs about 2 q R + 48 Bessel terms."""
    if 0.9 < v < 1.1:
        return False
    qcut = math.sqrt(_CUT) / s if s > 0 else math.inf
    if gas.disp.bounded_windows:
        q_hi = v + math.sqrt(v * v + 2 * W) + 2
    else:
        q_hi = W / (1 - v) + 2 if v < 1 else math.inf
    q_hi = min(q_hi, qcut)
    if not math.isfinite(q_hi):
        return False
    w_hi = float(gas.disp.omega(np.array([q_hi]))[0])
    harmonics = R * (w_hi + 2 * W) / v + 2 * R * q_hi + 2000
    if harmonics > 2e5:
        return False
    return gas.d != 3 or harmonics * (2 * q_hi * R + 48) < 0.01 * limit


def _work_check(gas, R, v, W, s, rtol, limit, npoints):
    """ModelError before a circular sum predicted to need more than ``limit``
    Bessel-function evaluations or more harmonics than the kernel sums."""
    if gas.disp.bounded_windows is False and v >= 1 and s == 0:
        return              # the kernel itself reports this divergence
    if _clearly_cheap(gas, R, v, W, s, limit):
        return              # the kernel's running counts still stop runaways
    harmonics, evals = circular_work(gas, R, v, W, s, rtol)
    where = f"at radius {R:.4g} xi and speed {v:.4g} c_s" + (
        " (one of the grid points)" if npoints > 1 else "")
    if not math.isfinite(harmonics) or harmonics > 2_000_000:
        raise ModelError(
            "trajectory.radius",
            f"{where} the circular sum needs about {harmonics:.3g} harmonics "
            f"(angular frequency v/R = {v / R:.4g} c/xi), more than the 2e6 "
            "the engine sums; " + _TOO_MANY_HARMONICS)
    if evals > limit:
        raise ModelError(
            "trajectory.radius",
            f"{where} the circular sum needs about {evals:.3g} Bessel-function "
            f"evaluations over {harmonics:.3g} harmonics (about "
            f"{evals * _SECONDS_PER_BESSEL:.0f} s), more than the limit of "
            f"{limit:.3g}; "
            + _TOO_MANY_HARMONICS + "; from Python, "
            "circular_rates(..., max_bessel_evaluations=...) raises the limit")


def stationary_rates(condensate, probe, trajectory, rtol=1e-8):
    """Rates for a trajectory that declares itself stationary (uniform
    straight or uniform circular motion).  Arrays in the trajectory's
    parameters broadcast."""
    if not getattr(trajectory, "stationary", False):
        raise InputError("trajectory.kind",
                         "stationary rates need uniform straight or circular "
                         "motion; finite paths give transition probabilities")
    p = trajectory.stationary_parameters()
    kind = trajectory.stationary_kind
    if kind == "inertial":
        res = inertial_rates(condensate, probe, p["speed"], rtol=rtol)
    elif kind == "circular":
        res = circular_rates(condensate, probe, p["radius"], p["speed"], rtol=rtol)
    else:
        raise InputError("trajectory.kind", f"no stationary engine for {kind!r}")
    from probe.engines.regime import path_warnings
    for w in path_warnings(condensate, probe, trajectory, res):
        if w not in res.warnings:
            res.warnings.append(w)
    return res


def _with_regime(condensate, probe, res, rtol=None):
    """Check the result (``_guard``) and attach the regime-of-validity
    warnings (no duplicates)."""
    from probe.engines.regime import regime_warnings
    _guard(condensate, probe, res)
    for w in regime_warnings(condensate, probe, res, rtol=rtol):
        if w not in res.warnings:
            res.warnings.append(w)
    return res
