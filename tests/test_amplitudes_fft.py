"""The FFT route of the transit amplitudes against direct sums.

``probe.amplitudes_fft`` evaluates a(q_j, n) = sum_m b_m e^{i w_j t_m}
e^{-i q_j n.x_m} on frequency-uniform nodes through a Jacobi-Anger series
(Abramowitz and Stegun 9.1.44-45) and FFTs.  Each check compares with the
plain double loop over nodes and samples (an independent route), or the
Bessel values with scipy.special.jv and 40-digit mpmath.
"""
from __future__ import annotations

import math

import mpmath
import numpy as np
import pytest
from scipy.special import jv

from probe.engines.fft_kernel import (bessel_sequence, chebyshev_degree, fft_amplitude_work,
                                  fft_length)


def test_bessel_sequence_matches_scipy_and_mpmath():
    rng = np.random.default_rng(3)
    x = np.concatenate([rng.uniform(-40, 40, 200), [0.0, 1e-300, -1e-8, 1e-3]])
    K = 60
    B = bessel_sequence(x, K)
    ref = jv(np.arange(K)[:, None], x[None, :])
    assert np.abs(B - ref).max() < 1e-13
    mpmath.mp.dps = 40
    for xv, k in [(7.3, 0), (7.3, 19), (-12.5, 33), (0.25, 9), (35.0, 59)]:
        exact = float(mpmath.besselj(k, xv))
        got = bessel_sequence(np.array([xv]), K)[k, 0]
        assert got == pytest.approx(exact, rel=1e-12, abs=1e-300), (xv, k)


@pytest.mark.parametrize("x_max", [0.0, 0.5, 4.6, 30.0])
def test_chebyshev_degree_bounds_the_series_tail(x_max):
    """The dropped tail of e^{-i x tau} = sum eps_k (-i)^k J_k(x) T_k(tau)
    stays below the requested level for every |x| <= x_max."""
    eps = 1e-9
    K = chebyshev_degree(x_max, eps)
    x = np.linspace(-x_max, x_max, 41)
    tau = np.linspace(-1, 1, 57)
    kk = np.arange(K)
    J = jv(kk[:, None], x[None, :])                     # (K, nx)
    coef = J * ((-1j) ** kk)[:, None] * np.where(kk == 0, 1.0, 2.0)[:, None]
    T = np.cos(np.outer(kk, np.arccos(tau)))             # (K, ntau)
    series = np.einsum("kx,kt->xt", coef, T)
    exact = np.exp(-1j * np.outer(x, tau))
    assert np.abs(series - exact).max() < eps
    # and it is not grossly oversized: one term fewer than 3/4 of K misses
    if x_max > 1:
        k_short = int(0.75 * K)
        short = np.einsum("kx,kt->xt", coef[:k_short], T[:k_short])
        assert np.abs(short - exact).max() > eps


def _path(nt, dt):
    t = np.arange(nt) * dt
    X = np.stack([2 * np.cos(0.4 * t), 2 * np.sin(0.4 * t), 0.3 * np.sin(1.2 * t)], axis=1)
    chi = np.sin(np.pi * t / t[-1]) ** 2
    w = np.full(nt, dt)
    w[0] = w[-1] = dt / 2
    return t, X, chi * w


def _direct(dirs, red, X, t, chans, q, om, sub=True):
    """The plain double loop (nodes x samples): the independent route."""
    C = chans.shape[1]
    even = np.zeros(t.size)
    even[0::2] = 2.0
    R = np.zeros((q.size, red.shape[1], 2 * C if sub else C))
    P = dirs @ X.T
    for j in range(q.size):
        ph = np.exp(1j * om[j] * t)[None, :] * np.exp(-1j * q[j] * P)
        for c in range(C):
            R[j, :, c] = red.T @ np.abs(ph @ chans[:, c]) ** 2
            if sub:
                R[j, :, C + c] = red.T @ np.abs(ph @ (chans[:, c] * even)) ** 2
    return R


@pytest.mark.parametrize("nt,M,block", [(801, 900, 2e6), (801, 500, 2e6), (800, 220, 2e6),
                                         (1201, 1600, 2e6), (801, 900, 1.0),
                                         (801, 500, 1.2e5)])
def test_fft_amplitudes_equal_the_direct_double_loop(nt, M, block):
    """Full and sub-rule sums for a curved 3D path, with the transform longer
    than the samples (zero padding), shorter (folding), and far shorter; and
    with work arrays so small that the series terms go in chunks of one
    and of a few (the recurrence carried across chunks)."""
    rng = np.random.default_rng(7)
    dt = 0.1
    t, X, b = _path(nt, dt)
    chans = np.stack([b * np.exp(0.5j * t), b * np.exp(-0.5j * t)], axis=1)
    M = fft_length(M)
    dw = 2 * math.pi / (M * dt)
    J = min(40, M // 2 - 2)
    jb = np.arange(3, 3 + J)
    q = np.linspace(0.1, 4.0, J)
    dirs = rng.normal(size=(9, 3))
    dirs /= np.linalg.norm(dirs, axis=1)[:, None]
    red = np.stack([np.ones(9), rng.uniform(size=9)], axis=1)
    got = fft_amplitude_work(dirs, red, X, chans, q, M, jb, 2.05, 1.95, 1e-13, True,
                             block_bytes=block)
    ref = _direct(dirs, red, X, t, chans, q, jb * dw)
    assert np.abs(got - ref).max() < 1e-11 * np.abs(ref).max()


def test_shifted_channels_and_wrapped_bins():
    """Two detunings 2 Omega apart read from one signal's transform at bins
    shifted by 2 Omega/dw; bins past M/2 wrap (the trapezoid sums are
    periodic in w with period 2 pi/dt)."""
    rng = np.random.default_rng(11)
    M = fft_length(300)
    n2 = 100                       # 2 Omega = n2 dw; pushes the up channel past M/2
    Om = 0.5
    dt = 2 * math.pi * n2 / (2 * Om * M)
    t, X, b = _path(701, dt)
    chans = np.stack([b * np.exp(1j * Om * t), b * np.exp(-1j * Om * t)], axis=1)
    dw = 2 * math.pi / (M * dt)
    jb = np.arange(60, 110)
    q = np.linspace(0.2, 3.0, jb.size)
    dirs = rng.normal(size=(5, 3))
    dirs /= np.linalg.norm(dirs, axis=1)[:, None]
    red = np.ones((5, 1))
    assert jb[-1] + n2 > M // 2
    shared = fft_amplitude_work(dirs, red, X, chans[:, 1:], q, M, jb, 1.6, 1.4, 1e-13, True,
                                shifts=[(0, n2), (0, 0)])
    ref = _direct(dirs, red, X, t, chans, q, jb * dw)
    assert np.abs(shared - ref).max() < 1e-11 * np.abs(ref).max()


def test_bad_bins_are_refused():
    X = np.zeros((10, 3))
    with pytest.raises(ValueError):
        fft_amplitude_work(np.eye(3), np.ones((3, 1)), X, np.ones((10, 1), complex),
                           np.array([0.1, 0.2]), 64, np.array([1, 3]), 0.1, 0.1, 1e-9, False)
