"""Excitation spectra of the gas, in the gas's natural units.

Every method works on dimensionless numpy arrays: wavenumber ``q = k xi``,
angular frequency in units of ``c/xi = m c^2/hbar`` and speed in units of the
sound speed ``c`` (``xi = hbar/(m c)``).  In these units the sound speed is 1.

A dispersion supplies ``omega(q)``, ``structure_factor(q)`` (T = 0 static
structure factor S(q)), ``group_velocity(q)`` and ``inverse(omega)``, and the
polynomial ``F(q) = omega(q)^2`` through its divided differences (used to
evaluate factors that vanish at known roots without cancellation).  The base
class finds the crossings of ``omega(q)`` with straight lines ``v q + W`` that
bound the golden-rule windows; a new dispersion only needs the closed forms.

What the rate engine may use beyond that is declared, with a base-class
default, never inferred from the class: ``bounded_windows`` (omega(q)/q
unbounded, so supersonic windows are finite), ``qs_integral(a, b)`` and
``qs_omega_integral(a, b)`` (closed forms of the 3D point-probe window
integrals, or None), ``phase_divided(q, r)`` (the divided difference of
the phase velocity free of cancellation, or None) and ``omega_precise(q)``
(omega and its slope to 40 digits at one point, or None), and
``weight_increasing`` (q^(d-1) S(q)/v_g(q) non-decreasing in q for d = 2
and 3, and growing no faster than omega^3, which lets the circular sums
bound a whole family of harmonics by one of them).  A new dispersion is one
subclass and one entry in ``DISPERSIONS``.

Both spectra here are convex with omega(0) = 0, which the window logic in the
rate engine assumes.
"""
from __future__ import annotations

from decimal import Decimal, localcontext

import numpy as np

_EPS = np.finfo(float).eps


def _bracketed_newton(f, fprime, lo, hi, iters=100):
    """Vectorised safeguarded Newton iteration for a root of ``f`` in
    ``[lo, hi]`` where ``f(lo) <= 0 <= f(hi)`` (f increasing on the bracket).

    ``f`` and ``fprime`` take (x, mask) and return arrays for the masked
    entries.  Returns the root to a few ulps.
    """
    lo = np.array(lo, dtype=float)
    hi = np.array(hi, dtype=float)
    x = 0.5 * (lo + hi)
    active = np.ones(x.shape, dtype=bool)
    for _ in range(iters):
        idx = np.nonzero(active)[0]
        if idx.size == 0:
            break
        xi = x[idx]
        fx = f(xi, idx)
        neg = fx < 0
        lo[idx] = np.where(neg, xi, lo[idx])
        hi[idx] = np.where(neg, hi[idx], xi)
        dfx = fprime(xi, idx)
        with np.errstate(divide="ignore", invalid="ignore"):
            xn = xi - fx / dfx
        bad = ~np.isfinite(xn) | (xn <= lo[idx]) | (xn >= hi[idx])
        xn = np.where(bad, 0.5 * (lo[idx] + hi[idx]), xn)
        # a Newton step this small leaves an error of its square: converged
        done = (~bad & (np.abs(xn - xi) <= 1e-12 * np.abs(xn))) | (fx == 0) | (
            hi[idx] - lo[idx] <= 4 * _EPS * np.abs(hi[idx]))
        x[idx] = np.where(fx == 0, xi, xn)
        active[idx[done]] = False
    return x


def _monotone_newton(f, fprime, x0, iters=100):
    """Newton's iteration for a convex (or concave) monotone function started
    on the side of the root where the tangent never overshoots: the iterates
    approach the root monotonically and then quadratically.  Vectorised;
    each entry stops once its step is below 1e-12 relative (the next error is
    the square of that)."""
    x = np.array(x0, dtype=float)
    idx = np.arange(x.size)
    for _ in range(iters):
        if idx.size == 0:
            break
        xi = x[idx]
        fx = f(xi, idx)
        with np.errstate(divide="ignore", invalid="ignore"):
            step = fx / fprime(xi, idx)
        step = np.where(np.isfinite(step), step, 0.0)
        xn = xi - step
        x[idx] = xn
        done = np.abs(step) <= 1e-12 * np.abs(xn)
        idx = idx[~done]
    return x


def _loss(value, size, diff):
    """Rounding of a difference in units of eps: the size of its terms over
    the size of the difference (inf where the value is not finite or the
    difference vanishes)."""
    with np.errstate(divide="ignore", invalid="ignore"):
        return np.where(np.isfinite(value) & (diff != 0), size / np.abs(diff), np.inf)


def _quartic_moment(a, b):
    """(b^4 - a^4)/8 = int_a^b q^3/2 dq, factored so that close edges do not
    cancel."""
    return (b - a) * (b + a) * (b * b + a * a) / 8


class Dispersion:
    """Base class: crossings and thresholds from the closed forms below."""

    name = "base"
    #: True when omega(q)/q is unbounded (supersonic windows are finite)
    bounded_windows = True
    #: True when q S(q)/v_g(q) and q^2 S(q)/v_g(q) are non-decreasing in q
    #: and grow no faster than omega(q)^3
    weight_increasing = False

    # --- to be supplied by a subclass -----------------------------------
    def omega(self, q):
        raise NotImplementedError

    def structure_factor(self, q):
        raise NotImplementedError

    def group_velocity(self, q):
        raise NotImplementedError

    def inverse(self, w):
        """q with omega(q) = w (w >= 0)."""
        raise NotImplementedError

    def divided_difference(self, q, r):
        """F[q, r] = (F(q) - F(r))/(q - r) of F = omega^2, exact polynomial."""
        raise NotImplementedError

    def divided_difference2(self, q, r1, r2):
        """Second divided difference F[q, r1, r2] of F = omega^2."""
        raise NotImplementedError

    def upper_bound(self, v, W):
        """A q beyond which omega(q) > v q + W (v, W >= 0 arrays)."""
        raise NotImplementedError

    def inverse_group_velocity(self, v):
        """q where the group velocity equals v (v >= 1); inf if never."""
        raise NotImplementedError

    # --- declared capabilities (defaults: none) --------------------------
    def qs_integral(self, a, b):
        """int_a^b q S(q) dq in closed form, or None if the spectrum has none
        (the engine then integrates numerically)."""
        return None

    def qs_omega_integral(self, a, b):
        """int_a^b q S(q) omega(q) dq in closed form (the energy moment of a
        3D point probe), or None (the engine then integrates numerically).
        Used only where ``qs_integral`` has a closed form too."""
        return None

    def phase_divided(self, q, r):
        """p[q, r] = (p(q) - p(r))/(q - r) of the phase velocity p = omega/q,
        free of cancellation, or None if the spectrum has no such form.  The
        2D engine uses it for a gapless probe just above the sound speed,
        where the window factor built from ``omega_divided`` cancels."""
        return None

    def omega_precise(self, q):
        """(omega(q), omega'(q)) at one double q to 40 significant digits
        (``decimal.Decimal``), or None if the spectrum offers none.  The 3D
        engine uses them for the line through the threshold point,
        V = (omega + W)/q and its mismatch omega' - V, to better than double
        precision: the up window's width grows as sqrt(v - v_th), so just
        above the threshold the rounding of v_th (eps v_th) would leave the
        rate with a relative error eps/(v/v_th - 1)."""
        return None

    # --- common work ----------------------------------------------------
    def omega_divided(self, q, r):
        """omega[q, r] = (omega(q) - omega(r))/(q - r), free of cancellation."""
        return self.divided_difference(q, r) / (self.omega(q) + self.omega(r))

    def omega_divided2(self, q, r1, r2):
        """Second divided difference omega[q, r1, r2], free of cancellation
        both as the points merge and when they lie far apart: the exact
        form of ``omega_divided2_forms`` with the least rounding."""
        forms = self.omega_divided2_forms(q, r1, r2)
        best, best_loss = forms[0]
        for val, loss in forms[1:]:
            better = loss < best_loss
            best = np.where(better, val, best)
            best_loss = np.where(better, loss, best_loss)
        return best

    def omega_divided2_forms(self, q, r1, r2):
        """Exact forms of omega[q, r1, r2], each with its loss (the size of
        its terms over the size of their difference: its rounding in units
        of eps; inf where it cannot be formed).

        Through F = omega^2, (F[q, r1, r2] (w1 + w2) - F[r2, r1] omega[q, r2])
        / ((w_q + w1)(w1 + w2)), which keeps its digits as the points merge
        (at q >~ 1) but cancels when one lies far from the others (an up
        window [r1, r2] of a fast probe: the terms grow as r2^4); and the
        first differences (omega[q, r1] - omega[r1, r2])/(q - r2) and
        (omega[q, r2] - omega[r1, r2])/(q - r1), which cancel only as q
        approaches the point in the denominator.  A subclass may add forms
        of its own spectrum."""
        w1, w2, wq = self.omega(r1), self.omega(r2), self.omega(q)
        t1 = self.divided_difference2(q, r1, r2) * (w1 + w2)
        t2 = self.divided_difference(r2, r1) * self.omega_divided(q, r2)
        d12 = self.omega_divided(r1, r2)
        d1 = self.omega_divided(q, r1)
        d2 = self.omega_divided(q, r2)
        with np.errstate(divide="ignore", invalid="ignore"):
            forms = [((t1 - t2) / ((wq + w1) * (w2 + w1)), np.abs(t1) + np.abs(t2), t1 - t2),
                     ((d1 - d12) / (q - r2), np.abs(d1) + np.abs(d12), d1 - d12),
                     ((d2 - d12) / (q - r1), np.abs(d2) + np.abs(d12), d2 - d12)]
        return [(val, _loss(val, size, diff)) for val, size, diff in forms]

    def root_minus(self, v, W):
        """q_a: omega(q) + v q = W, the low edge of the down window
        (0 where W = 0)."""
        v, W = np.broadcast_arrays(np.asarray(v, float), np.asarray(W, float))
        v, W = v.ravel(), W.ravel()
        # omega(q) + v q is convex and increasing, and omega >= q: start at the
        # phonon estimate W/(1 + v), to the right of the root
        root = _monotone_newton(
            lambda x, i: self.omega(x) + v[i] * x - W[i],
            lambda x, i: self.group_velocity(x) + v[i],
            np.minimum(W / (1 + v), self.inverse(W)))
        return np.where(W == 0, 0.0, root)

    def root_plus(self, v, W):
        """q_b: omega(q) - v q = W (W > 0: the unique positive root; W = 0:
        the nonzero root, present only for v > 1).  inf where there is none
        because the window is unbounded; nan where the window is empty."""
        v, W = np.broadcast_arrays(np.asarray(v, float), np.asarray(W, float))
        v, W = v.ravel(), W.ravel()
        out = np.full(v.shape, np.nan)
        # W = 0: crossing of the phase velocity omega/q with v
        zero = W == 0
        pos = ~zero
        if np.any(pos):
            lo = self.inverse(W[pos])
            hi = self.upper_bound(v[pos], W[pos])
            ok = np.isfinite(hi)
            vv, WW = v[pos][ok], W[pos][ok]
            # convex, increasing through the root: from the upper bound down
            r = _monotone_newton(
                lambda x, i: self.omega(x) - vv[i] * x - WW[i],
                lambda x, i: self.group_velocity(x) - vv[i], hi[ok])
            tmp = np.full(lo.shape, np.inf)
            tmp[ok] = r
            out[pos] = tmp
        if np.any(zero):
            out[zero] = self.phase_velocity_crossing(v[zero])
        return out

    def phase_velocity_crossing(self, v):
        """Nonzero q with omega(q)/q = v: nan for v <= 1, inf if unbounded."""
        v = np.asarray(v, float)
        out = np.full(v.shape, np.nan)
        sup = v > 1
        if np.any(sup):
            hi = self.upper_bound(v[sup], np.zeros(np.count_nonzero(sup)))
            ok = np.isfinite(hi)
            tmp = np.full(hi.shape, np.inf)
            if np.any(ok):
                qs = self.inverse_group_velocity(v[sup][ok])
                vv = v[sup][ok]
                tmp[ok] = _bracketed_newton(
                    lambda x, i: self.omega(x) - vv[i] * x,
                    lambda x, i: self.group_velocity(x) - vv[i], qs, hi[ok])
            out[sup] = tmp
        return out

    def roots_up(self, v, W):
        """(q_c, q_d): omega(q) - v q = -W, the up-emission window (W > 0).
        nan where empty (v below threshold); q_d = inf if unbounded."""
        v, W = np.broadcast_arrays(np.asarray(v, float), np.asarray(W, float))
        v, W = v.ravel(), W.ravel()
        qc = np.full(v.shape, np.nan)
        qd = np.full(v.shape, np.nan)
        sup = v > 1
        if not np.any(sup):
            return qc, qd
        iv = np.nonzero(sup)[0]
        qs = self.inverse_group_velocity(v[iv])
        fin = np.isfinite(qs)
        gmin = np.where(fin, self.omega(np.where(fin, qs, 0)) - v[iv] * np.where(fin, qs, 0) + W[iv], -np.inf)
        has = gmin <= 0
        iv, qs, fin = iv[has], qs[has], fin[has]
        if iv.size == 0:
            return qc, qd
        vv, WW = v[iv], W[iv]
        # lower root on [0, q*]: g decreasing there, so solve -g = 0 increasing
        lo_c = np.zeros(iv.size)
        hi_c = np.where(fin, qs, np.inf)
        # convex g = omega - v q + W: the lower root from q = 0 rightwards,
        # the upper one from the upper bound leftwards (no overshoot)
        rc = _monotone_newton(
            lambda x, i: self.omega(x) - vv[i] * x + WW[i],
            lambda x, i: self.group_velocity(x) - vv[i], lo_c)
        rc = np.minimum(rc, hi_c)
        rd = np.full(iv.size, np.inf)
        if np.any(fin):
            j = np.nonzero(fin)[0]
            hi_d = self.upper_bound(vv[j], np.zeros(j.size))
            v2, W2 = vv[j], WW[j]
            rd[j] = _monotone_newton(
                lambda x, i: self.omega(x) - v2[i] * x + W2[i],
                lambda x, i: self.group_velocity(x) - v2[i], hi_d)
        qc[iv] = rc
        qd[iv] = rd
        return qc, qd

    def threshold(self, W):
        """Up-transition threshold speed min_q (omega(q) + W)/q and the q at
        which it is reached (W > 0 arrays).  The last answer is kept: the
        engine's checks and the probe model ask for the same gaps."""
        W = np.asarray(W, float).ravel()
        key = W.tobytes()
        last = getattr(self, "_last_threshold", None)
        if last is not None and last[0] == key:
            return last[1].copy(), last[2].copy()
        vt, q = self._threshold(W)
        self._last_threshold = (key, vt, q)
        return vt.copy(), q.copy()

    def _threshold(self, W):
        # h(q) = q v_g - omega - W, increasing, h(0) = -W
        hi = np.maximum(np.minimum(np.cbrt(8 * W), np.sqrt(4 * W)), 1e-300)
        for _ in range(200):
            bad = hi * self.group_velocity(hi) - self.omega(hi) - W < 0
            if not np.any(bad):
                break
            hi = np.where(bad, 2 * hi, hi)
        # h is convex (h' = q omega'' grows) for the spectra here: Newton
        # from the right converges monotonically
        q = _monotone_newton(
            lambda x, i: x * self.group_velocity(x) - self.omega(x) - W[i],
            lambda x, i: x * self.curvature(x), hi)
        return self.group_velocity(q), q

    def curvature(self, q):
        """d^2 omega / d q^2."""
        raise NotImplementedError


class Bogoliubov(Dispersion):
    """Bogoliubov spectrum of the weakly interacting Bose gas
    (Pitaevskii and Stringari, *Bose-Einstein Condensation and
    Superfluidity*, 2016):

        omega = q sqrt(1 + q^2/4),   S = q / sqrt(4 + q^2),
        v_g = (1 + q^2/2) / sqrt(1 + q^2/4)

    in units xi = hbar/(mc), c/xi.  Phonons (omega ~ q, S ~ q/2) at q << 1,
    free particles (omega ~ q^2/2, S -> 1) at q >> 1.
    """

    name = "bogoliubov"
    #: q S/v_g = q^2/(2 + q^2) and q^2 S/v_g = q^3/(2 + q^2) both increase
    weight_increasing = True

    def omega(self, q):
        q = np.asarray(q, float)
        return q * np.sqrt(1 + 0.25 * q * q)

    def structure_factor(self, q):
        q = np.asarray(q, float)
        return q / np.sqrt(4 + q * q)

    def group_velocity(self, q):
        q = np.asarray(q, float)
        return (1 + 0.5 * q * q) / np.sqrt(1 + 0.25 * q * q)

    def curvature(self, q):
        q = np.asarray(q, float)
        s = 1 + 0.25 * q * q
        return q * (0.75 + 0.125 * q * q) / (s * np.sqrt(s))

    def inverse(self, w):
        w = np.asarray(w, float)
        # q^2 = 2 (sqrt(1 + w^2) - 1), written without cancellation
        return np.sqrt(2 * w * w / (np.sqrt(1 + w * w) + 1))

    def divided_difference(self, q, r):
        # F = q^2 + q^4/4
        return (q + r) * (1 + 0.25 * (q * q + r * r))

    def divided_difference2(self, q, r1, r2):
        # F[q,r1,r2] = 1 + (q^2 + r1^2 + r2^2 + q r1 + q r2 + r1 r2)/4
        return 1 + 0.25 * (q * q + r1 * r1 + r2 * r2 + q * r1 + q * r2 + r1 * r2)

    def upper_bound(self, v, W):
        # omega > q^2/2 and omega > q, so omega > v q + W once q^2/2 >= v q + W
        v = np.asarray(v, float)
        W = np.asarray(W, float)
        return v + np.sqrt(v * v + 2 * W) + 1e-12

    def qs_integral(self, a, b):
        """int_a^b q^2/sqrt(q^2 + 4) dq.  With q = 2 sinh(u) it is
        [sinh(2u) - 2u], written as 2[(cosh(s) - 1) sinh(d) + (sinh(d) - d)]
        with s = u_a + u_b, d = u_b - u_a, free of cancellation for close
        edges and small q."""
        a = np.asarray(a, float)
        b = np.asarray(b, float)
        x, y = 0.5 * b, 0.5 * a
        # asinh(x) - asinh(y) = asinh((x^2 - y^2)/(x sqrt(1+y^2) + y sqrt(1+x^2)))
        with np.errstate(invalid="ignore", divide="ignore"):
            den = x * np.sqrt(1 + y * y) + y * np.sqrt(1 + x * x)
            d = np.arcsinh(np.where(den > 0, (x - y) * (x + y) / np.where(den > 0, den, 1), 0.0))
        sg = np.arcsinh(x) + np.arcsinh(y)
        cosh_m1 = 2 * np.sinh(0.5 * sg) ** 2
        small = np.abs(d) < 0.5
        d2 = d * d
        # sinh(d) - d = sum_{k>=1} d^(2k+1)/(2k+1)!, to d^15 below 0.5
        series = d * d2 / 6 * (1 + d2 / 20 * (1 + d2 / 42 * (1 + d2 / 72 * (
            1 + d2 / 110 * (1 + d2 / 156 * (1 + d2 / 210))))))
        shd_m_d = np.where(small, series, np.sinh(d) - d)
        return 2 * (cosh_m1 * np.sinh(d) + shd_m_d)

    def qs_omega_integral(self, a, b):
        """int_a^b q S omega dq = int_a^b q^3/2 dq = (b^4 - a^4)/8, since
        S omega = q^2/2 (the f-sum rule of the Bogoliubov spectrum)."""
        return _quartic_moment(a, b)

    def phase_velocity_crossing(self, v):
        """As the base class; just above the sound speed (v - 1 < 1e-2) from
        the closed form q = 2 sqrt((v - 1)(v + 1)) of sqrt(1 + q^2/4) = v,
        where Newton's root of the nearly flat omega(q)/q - v keeps only
        about eps/(v - 1) relative accuracy."""
        out = super().phase_velocity_crossing(v)
        v = np.asarray(v, float)
        near = (v > 1) & (v - 1 < 1e-2)
        if np.any(near):
            out = np.where(near, 2.0 * np.sqrt(np.abs((v - 1) * (v + 1))), out)
        return out

    def phase_divided(self, q, r):
        """p[q, r] = (p(q) - p(r))/(q - r) of the phase velocity
        p = omega/q = sqrt(1 + q^2/4), free of cancellation:
        (q + r) / (4 (p(q) + p(r)))."""
        q = np.asarray(q, float)
        r = np.asarray(r, float)
        return (q + r) / (4.0 * (np.sqrt(1 + 0.25 * q * q) + np.sqrt(1 + 0.25 * r * r)))

    def omega_precise(self, q):
        """omega = q p and omega' = (1 + q^2/2)/p, p = sqrt(1 + q^2/4), in
        40-digit decimal arithmetic (q exact)."""
        with localcontext() as ctx:
            ctx.prec = 40
            x = Decimal(float(q))
            p = (1 + x * x / 4).sqrt()
            return x * p, (1 + x * x / 2) / p

    def omega_divided2_forms(self, q, r1, r2):
        """The base class's forms and the product rule for omega = q p with
        p = sqrt(1 + q^2/4): omega[q, r1, r2] = q p[q, r1, r2] + p[r1, r2],
        p[r1, r2] = (r1 + r2)/(4 (p1 + p2)) and
        p[q, r1, r2] = (p1 + p2 - (r1 + r2) p[q, r2]) / (4 (p_q + p1)(p1 + p2)),
        which keeps its digits at small q, where the form through
        F = omega^2 loses about 1/q^2 of them (the threshold point of a small
        gap)."""
        q, r1, r2 = (np.asarray(x, float) for x in (q, r1, r2))
        pq, p1, p2 = (np.sqrt(1 + 0.25 * x * x) for x in (q, r1, r2))
        cross = (r1 + r2) * self.phase_divided(q, r2)
        diff = p1 + p2 - cross
        value = q * diff / (4 * (pq + p1) * (p1 + p2)) + self.phase_divided(r1, r2)
        return super().omega_divided2_forms(q, r1, r2) + [(value, _loss(value, p1 + p2 + cross, diff))]

    def inverse_group_velocity(self, v):
        v = np.asarray(v, float)
        v2 = v * v
        u = 0.5 * (v2 - 4 + np.sqrt(v2 * v2 + 8 * v2))
        # the closed form loses accuracy near v = 1: u = 4 (v^2 - 1)/(...)
        u = np.where(v2 < 2, 8 * (v2 - 1) / (4 - v2 + np.sqrt(v2 * v2 + 8 * v2)), u)
        return np.sqrt(np.maximum(u, 0))


class Phonon(Dispersion):
    """Linear (acoustic) spectrum used for comparison with the analogue-
    gravity picture: omega = q, S = q/2, v_g = 1 (units c, xi).

    Supersonic windows are unbounded: with a point probe the d = 2, 3 rates
    diverge, and only a finite probe width makes them finite.
    """

    name = "phonon"
    bounded_windows = False
    #: q S/v_g = q^2/2 and q^2 S/v_g = q^3/2 both increase
    weight_increasing = True

    def omega(self, q):
        return np.asarray(q, float) * 1.0

    def structure_factor(self, q):
        return 0.5 * np.asarray(q, float)

    def group_velocity(self, q):
        return np.ones_like(np.asarray(q, float))

    def curvature(self, q):
        return np.zeros_like(np.asarray(q, float))

    def inverse(self, w):
        return np.asarray(w, float) * 1.0

    def divided_difference(self, q, r):
        return q + r

    def divided_difference2(self, q, r1, r2):
        return np.ones_like(q + r1 + r2)

    def upper_bound(self, v, W):
        v = np.asarray(v, float)
        W = np.asarray(W, float)
        with np.errstate(divide="ignore"):
            return np.where(v < 1, W / np.where(v < 1, 1 - v, 1) * (1 + 1e-12) + 1e-300, np.inf)

    def root_minus(self, v, W):
        v, W = np.broadcast_arrays(np.asarray(v, float), np.asarray(W, float))
        return (W / (1 + v)).ravel()

    def root_plus(self, v, W):
        v, W = np.broadcast_arrays(np.asarray(v, float), np.asarray(W, float))
        v, W = v.ravel(), W.ravel()
        with np.errstate(divide="ignore", invalid="ignore"):
            r = np.where(v < 1, W / (1 - v), np.inf)
        return np.where((W == 0) & (v <= 1), np.nan, r)

    def phase_velocity_crossing(self, v):
        v = np.asarray(v, float)
        return np.where(v > 1, np.inf, np.nan)

    def qs_integral(self, a, b):
        """int_a^b q^2/2 dq = (b - a)(a^2 + a b + b^2)/6."""
        a = np.asarray(a, float)
        b = np.asarray(b, float)
        return (b - a) * (a * a + a * b + b * b) / 6

    def qs_omega_integral(self, a, b):
        """int_a^b q S omega dq = int_a^b q^3/2 dq = (b^4 - a^4)/8."""
        return _quartic_moment(a, b)

    def phase_divided(self, q, r):
        """p[q, r] of the constant phase velocity p = 1: zero."""
        return np.zeros(np.broadcast(np.asarray(q, float), np.asarray(r, float)).shape)

    def inverse_group_velocity(self, v):
        return np.full(np.shape(v), np.inf)

    def roots_up(self, v, W):
        v, W = np.broadcast_arrays(np.asarray(v, float), np.asarray(W, float))
        v, W = v.ravel(), W.ravel()
        with np.errstate(divide="ignore", invalid="ignore"):
            qc = np.where(v > 1, W / (v - 1), np.nan)
        qd = np.where(v > 1, np.inf, np.nan)
        return qc, qd

    def threshold(self, W):
        W = np.asarray(W, float).ravel()
        return np.ones_like(W), np.full(W.shape, np.inf)


DISPERSIONS = {"bogoliubov": Bogoliubov, "phonon": Phonon}
