"""The lag route: exact angular integrals for paths whose separations depend
on the lag alone.

For a path whose separations |x(t + s) - x(t)| depend on the lag s alone
(the trajectory's ``separation`` capability: linear, circular) and no
direction spectrum, the angular integral is exact --
int dOmega |a|^2 = |S^{d-1}| sum_m c_m e^{i(D + w)s_m} j_d(q r(s_m)) with
c_m the switching's autocorrelation on the time grid (by FFT) and j_d the
isotropic average of e^{-i k.dx} (sin x/x, J_0, cos) -- the same double
trapezoid sum regrouped by lag, at cost nodes x lags.
"""
from __future__ import annotations

import numpy as np
from scipy import fft as sfft
from scipy.special import j0

from probe.engines.transit.grids import radial_phasor
from probe.engines.transit.route import AngularSums, Route

# seconds per (node, lag): a cos/sin pair, a Bessel-type kernel (2 threads
# on the development machine)
_COST_LAG = 2.5e-8
_MEASURE = {1: 2.0, 2: 2 * np.pi, 3: 4 * np.pi}     # |S^{d-1}|


def _lag_coefficients(chi, wt, wt2, dt, Ds):
    """Columns mult_m c_m e^{i D s_m} over the lags s_m = m dt: c_m = sum_i
    b_i b_{i+m} with b = chi w (by FFT; mult 2 for m > 0 counts c_{-m} =
    c_m), for each D with the full time rule, then with the sub-rule."""
    n = chi.size
    nfft = sfft.next_fast_len(2 * n)

    def autocorr(b):
        B = sfft.rfft(b, nfft)
        return sfft.irfft(B * B.conj(), nfft)[:n]

    lag = dt * np.arange(n)
    mult = np.full(n, 2.0)
    mult[0] = 1.0
    cs = [autocorr(chi * wt), autocorr(chi * wt2)]
    return np.stack([mult * c * np.exp(1j * D * lag) for c in cs for D in Ds], axis=1), lag


def _isotropic_average(x, d):
    """The average of e^{-i k.dx} over directions, x = |k| |dx|: sin x/x
    (3D), J_0(x) (2D), cos x (1D)."""
    if d == 3:
        return np.sinc(x / np.pi)
    if d == 2:
        return j0(x)
    return np.cos(x)


def lag_integrals(chi, wt, wt2, dt, Ds, sep, qn, omega, d, pool):
    """Angular integrals of |a|^2 on the nodes for a path whose separations
    depend on the lag alone, r(s) = |x(t + s) - x(t)|:

        int dOmega |a(D, q n)|^2 = |S^{d-1}| sum_m c_m e^{i (D + w) s_m} j_d(q r(s_m)),

    the double trapezoid sum over time pairs regrouped by lag s_m = m dt, with
    c_m = sum_i b_i b_{i+m} (b = chi w, computed by FFT; c_{-m} = c_m) and
    the angular average of e^{-i k.dx} over an isotropic gas, j_3 = sin x/x,
    j_2 = J_0(x), j_1 = cos x.  Columns: each D with the full time rule,
    then each D with its every-other-point sub-rule (weights wt2)."""
    coef, lag = _lag_coefficients(chi, wt, wt2, dt, Ds)
    measure = _MEASURE[d]
    out = np.empty((qn.size, coef.shape[1]))
    rows = int(max(1, 4e5 // chi.size))     # blocks of ~4e5 (node, lag) pairs

    def block(i0):
        i1 = min(qn.size, i0 + rows)
        kern = _isotropic_average(np.outer(qn[i0:i1], sep), d)
        ph = np.outer(omega[i0:i1], lag)
        G = np.empty(ph.shape, complex)
        np.multiply(np.cos(ph), kern, out=G.real)
        np.multiply(np.sin(ph), kern, out=G.imag)
        out[i0:i1] = measure * (G @ coef).real

    starts = range(0, qn.size, rows)
    if pool is not None and len(starts) > 1:
        list(pool.map(block, starts))
    else:
        for i0 in starts:
            block(i0)
    return out


class _LagPlan:
    """The lag route's q-uniform grid (as the phasor route's)."""

    def __init__(self, grid):
        self.grid = grid


class LagRoute(Route):
    """Lag sums of the switching's autocorrelation: angles exact."""

    name = "lag"
    refusal = ("the lag route needs a path whose separations |x(t + s) - x(t)| depend on "
               "the lag s alone (linear, circular) and no direction spectrum; use 'auto'")

    def applies(self, problem):
        """A path that declares its separations as a function of the lag
        (``separation`` not None), and no direction spectrum."""
        separation = getattr(problem.trajectory, "separation", None)
        return (not problem.spectrum and callable(separation)
                and separation(np.zeros(1)) is not None)

    def plan(self, problem, sample, res):
        vg_max = float(problem.disp.group_velocity(res.q_max))
        return _LagPlan(radial_phasor(problem.disp, res.q_max,
                                      vg_max * problem.corr + sample.geom.D + 1e-300,
                                      res.radial))

    def cost(self, problem, sample, plan):
        return _COST_LAG * plan.grid.qn.size * sample.time.size

    def integrals(self, problem, sample, plan, pool):
        # angular integral exact: int dOmega |a|^2 = measure x sum over lags
        # of the switching's autocorrelation times j_d(q r(s)) e^{i(D+w)s}
        time, grid = sample.time, plan.grid
        sums = AngularSums(problem, grid.qn.size, time)
        lags = time.dt * np.arange(time.size) * problem.tu
        sep = np.asarray(problem.trajectory.separation(lags), float) / problem.xi
        sums.E[:] = lag_integrals(time.chi, time.wt, time.wt2, time.dt, problem.Ds, sep,
                                  grid.qn, grid.omega, problem.d, pool)
        return sums
