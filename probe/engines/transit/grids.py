"""Time and radial grids (natural units of the gas: q = k xi, t in xi/c).

Time: a uniform grid over the switching support with the trapezoid rule.
chi is smooth and vanishes at both ends (or is below 1e-16 there), so by the
Poisson summation formula the trapezoid error is the integrand's spectrum at
multiples of the sampling frequency 2 pi/dt: once 2 pi/dt clears the highest
local frequency ``|D| + w(q_max) + q_max |v|_max`` plus the switching
bandwidth, the error is spectrally small.  The step is chosen so that even
the every-other-point sub-rule (step 2 dt) satisfies this; the difference of
the two sums is the time-step error estimate.  The fine step thus has
2 (1 + bandwidth/f) >= 2 points per period of the highest frequency f, and
acceleration adds a margin z sqrt(q |a|) to f (curved paths spread the
spectrum beyond the instantaneous frequency, with an Airy-like tail; z is
the depth of that tail at 0.1 rtol, 3.6 at rtol = 1e-3, 4.8 at 1e-6).
Positions are evaluated once on the grid and reused for every k.

|k|: a uniform grid q_i = i h on [0, q_max] with fourth-order end weights at
q = 0 (3/8, 7/6, 23/24, 1, ...).  |a|^2 depends on q through
e^{i(w(q) s - q n.dx)} with |w'(q) s - n.dx| below the conjugate length
``L = v_g(q_max) T_c + D`` (T_c the correlation length of chi, D the path
diameter).  That bound weights every lag of the switching fully, a worst
case, so the first pass puts the full rule (not its sub-rule) at it,
h = 2 pi/L; the difference with the every-other-point sub-rule (2h) is the
radial error estimate, and h is halved when it exceeds its share.  The FFT
route's grid is uniform in frequency instead (:func:`radial_fft`).
"""
from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from probe.engines.fft_kernel import fft_length
from probe.engines.transit.rules import ANGLE_SAMPLE


class TimeGrid:
    """Nodes ``t``, step ``dt``, switching ``chi`` and trapezoid weights
    ``wt`` (full rule) and ``wt2`` (every-other-point sub-rule) of nt steps
    from t_lo, of step dt (default: ending at t_hi); times in xi/c, ``tu``
    the time unit in s."""

    def __init__(self, t_lo, t_hi, nt, switching, tu, dt=None):
        dt = (t_hi - t_lo) / nt if dt is None else dt
        self.dt = dt
        self.t = t_lo + dt * np.arange(nt + 1)
        self.chi = np.asarray(switching(self.t * tu), float)
        wt = np.full(self.t.size, dt)
        wt[0] = wt[-1] = 0.5 * dt
        wt2 = np.zeros(self.t.size)
        wt2[::2] = 2 * dt
        wt2[0] = wt2[-1] = dt
        self.wt, self.wt2 = wt, wt2

    @property
    def size(self):
        return self.t.size

    def columns(self, Ds):
        """The coefficients chi w_t e^{i D t} of the amplitudes, (Nt, 2 nD):
        each detuning D with the full rule, then each with the sub-rule."""
        t, chi = self.t, self.chi
        cols = [chi * self.wt * np.exp(1j * D * t) for D in Ds]
        cols += [chi * self.wt2 * np.exp(1j * D * t) for D in Ds]
        return np.ascontiguousarray(np.stack(cols, axis=1))


def gregory(n, h):
    """Weights of the closed uniform rule on n+1 nodes from q = 0, fourth
    order at q = 0 (3/8, 7/6, 23/24, 1, ...); the far end is where the
    integrand is negligible."""
    w = np.ones(n + 1)
    m = min(3, n + 1)
    w[:m] = np.array([3 / 8, 7 / 6, 23 / 24])[:m]
    return w * h


@dataclass
class RadialGrid:
    """Radial nodes ``qn`` (``qeval`` with q = 0 moved to a tiny q, where
    S n and q^(d-1) are evaluated), weights ``wq`` of the rule and ``wq2``
    of its every-other-node sub-rule, frequencies ``omega``.  q-uniform
    grids: step ``h``.  Frequency-uniform grids: transform length ``M``,
    frequency step ``dw``, node bins ``jbins``, the time step ``dt`` the grid
    was built for and ``shift``, the bins between the detunings +-Omega
    (0 when they do not share transforms)."""

    qn: np.ndarray
    qeval: np.ndarray
    wq: np.ndarray
    wq2: np.ndarray
    omega: np.ndarray
    h: float = None
    M: int = None
    dw: float = None
    jbins: np.ndarray = None
    dt: float = None
    shift: int = 0


def radial_phasor(disp, q_max, Lconj, fac_q):
    """Uniform q grid: the full rule at the conjugate-length bound (fac_q =
    0.5), its every-other-node sub-rule the radial check."""
    h_target = math.pi / Lconj / fac_q
    nq = max(16, int(math.ceil(q_max / h_target)))
    nq += nq % 2
    h = q_max / nq
    qn = h * np.arange(nq + 1)
    qeval = qn.copy()
    qeval[0] = 1e-9 * h                 # S n and q^(d-1) at q -> 0
    wq = gregory(nq, h)
    wq2 = np.zeros(nq + 1)
    wq2[::2] = gregory(nq // 2, 2 * h)
    return RadialGrid(qn, qeval, wq, wq2, disp.omega(qn), h=h)


def radial_fft(disp, q_max, Lw, fac_q, dt, pair=None):
    """Grid uniform in frequency, w_j = j dw with dw = 2 pi/(M dt), so that a
    length-M FFT over the time grid gives every node: the conjugate length
    in w is Lw = T_c + D/min(v_g) (the phase w s - q(w) n.dx), and the
    first pass puts the sub-rule (2 dw) at it; the rule in w carries the
    Jacobian dq/dw = 1/v_g.  With ``pair`` (a frequency difference, 2 Omega)
    dw divides it exactly and the time step becomes 2 pi/(M dw) <= dt."""
    dw_target = 0.5 * math.pi / Lw / fac_q
    shift = 0
    # M a multiple of 2 ANGLE_SAMPLE and the shift of ANGLE_SAMPLE, so that
    # the angular check's transform of length M/ANGLE_SAMPLE lands on
    # every ANGLE_SAMPLE-th node
    a = ANGLE_SAMPLE
    if pair:
        shift = a * int(math.ceil(pair / (a * dw_target)))
        dw = pair / shift
        M = fft_length(2 * math.pi / (dw * dt), 2 * a)
        dt = 2 * math.pi / (M * dw)
    else:
        M = fft_length(2 * math.pi / (dw_target * dt), 2 * a)
        dw = 2 * math.pi / (M * dt)
    w_max = float(disp.omega(q_max))
    nw = max(16, int(math.ceil(w_max / dw)))
    nw += nw % 2
    jb = np.arange(nw + 1)
    om = jb * dw
    qn = np.asarray(disp.inverse(om), float)
    qeval = qn.copy()
    qeval[0] = 1e-9 * qn[1]
    vg = np.asarray(disp.group_velocity(qn), float)
    wq = gregory(nw, dw) / vg
    wq2 = np.zeros(nw + 1)
    wq2[::2] = gregory(nw // 2, 2 * dw) / vg[::2]
    return RadialGrid(qn, qeval, wq, wq2, om, M=M, dw=dw, jbins=jb, dt=dt, shift=shift)
