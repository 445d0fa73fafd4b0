"""Mode amplitudes of a transit on a frequency-uniform grid by FFT.

For one direction n the transit amplitudes on the radial nodes are

    a(q_j) = sum_m b_m e^{i w_j t_m} e^{-i q_j u_m},     u_m = n.x(t_m),

with b_m = chi(t_m) w_m e^{i D t_m} (trapezoid weights w_m on the uniform
time grid t_m = t_0 + m dt).  When the nodes are uniform in frequency,
w_j = j dw with dw = 2 pi/(M dt), the sum over m is a length-M discrete
Fourier transform -- except for the factor e^{-i q_j u_m}, which couples
the node to the time.  That factor has low rank on the path: with u
centred on the path's extent along n (a phase per direction, which leaves
|a| unchanged), |u| <= U, q = q_c + (q - q_c) and the Jacobi-Anger
expansion in the path coordinate

    e^{-i (q - q_c) u} = sum_k eps_k (-i)^k J_k((q - q_c) U) T_k(u/U),
    eps_0 = 1, eps_k = 2

(Abramowitz and Stegun 9.1.44-45, Chebyshev polynomials T_k),

    a(q_j) = sum_k eps_k (-i)^k J_k((q_j - q_c) U) FFT_m[b_m e^{-i q_c u_m} T_k(u_m/U)](j).

The Bessel functions are needed on the nodes only (a downward ratio
recurrence r_k = J_k/J_{k-1} = x/(2k - x r_{k+1}) from r_N = 0, the
continued fraction for the minimal solution, stable and free of overflow,
times scipy's j0); the time signals follow from T_{k+1} = 2u T_k - T_{k-1}.
The series is cut where its tail, bounded by 2 (x/2)^k/k!, falls below the
requested level: K is about q_h U + a few (q_h the half-width of the node
range), so for a path of bounded size (a loop, a stirring motion) the cost
per direction is K FFTs of length M instead of one multiply-add per (time,
node): the gain grows with the transit's duration.

The even and odd time samples are transformed separately (length M/2 each):
their sum is the full trapezoid sum and twice the even part is the
every-other-point sub-rule (step 2 dt) that estimates the time-step error,
so the check costs nothing extra.  A time series longer than the transform
is folded, which leaves the sums at the grid frequencies exact.
"""
from __future__ import annotations

import math

import numpy as np
from scipy import fft as sfft
from scipy.special import j0

__all__ = ["chebyshev_degree", "bessel_sequence", "fft_amplitude_work",
           "fft_length"]


def chebyshev_degree(x_max, eps):
    """Number of terms K of the Jacobi-Anger series of e^{-i x tau}
    (|tau| <= 1, |x| <= x_max) whose dropped tail is below ``eps``: the
    terms are bounded by 2 (x/2)^k/k!, summed here until they fall below
    eps past k = x."""
    x = abs(float(x_max))
    eps = max(float(eps), 1e-300)
    k = 0
    logt = math.log(2.0)                   # log of 2 (x/2)^k/k! at k = 0
    lx = math.log(max(x / 2, 1e-300))
    while True:
        k += 1
        logt += lx - math.log(k)
        if k > x and logt < math.log(eps) - 1.0:
            return k
        if k > 100000:                     # pragma: no cover - absurd sizes
            return k


def bessel_sequence(x, K, n_start=None):
    """J_0(x), ..., J_{K-1}(x) for real x (any shape): returns an array of
    shape (K,) + x.shape.  Downward ratio recurrence from n_start (default
    K + max|x| + 12) times J_0."""
    x = np.asarray(x, float)
    xm = float(np.abs(x).max()) if x.size else 0.0
    N = int(n_start if n_start is not None else K + math.ceil(xm) + 12)
    out = np.empty((K,) + x.shape)
    r = np.zeros_like(x)
    for k in range(N, 0, -1):
        r = x / (2.0 * k - x * r)
        if k < K:
            out[k] = r
    out[0] = j0(x)
    for k in range(1, K):
        out[k] *= out[k - 1]
    return out


def fft_length(m_min, multiple=2):
    """A length >= m_min, a multiple of ``multiple`` (even) whose quotient is
    a fast FFT size (so M/2, M/multiple ... are fast too)."""
    q = sfft.next_fast_len(max(1, int(math.ceil(m_min / float(multiple)))))
    return int(multiple) * q


class _ChebyshevSignals:
    """The signals T_k(u_im) b[i, m] (k = 0, 1, ...) in chunks of terms,
    each folded onto the transform length, by the recurrence
    T_{k+1} = 2u T_k - T_{k-1} run on the products themselves (on their
    interleaved real storage; w2 = 2 u repeated per re/im, |u| <= 1).
    Folding onto the transform length leaves the sums at the grid
    frequencies exact.  Only the last two terms are kept between chunks, so
    the memory is that of one chunk."""

    def __init__(self, w2, b, half):
        n = b.shape[-1]
        if n < half:                     # zero signal beyond the samples
            pad = half - n
            b = np.concatenate([b, np.zeros(b.shape[:-1] + (pad,), complex)], axis=-1)
            w2 = np.concatenate([w2, np.zeros(w2.shape[:-1] + (2 * pad,))], axis=-1)
        self.w2, self.b, self.half = w2, b, half
        self.prev = self.prev2 = None
        self.k = 0

    def fill(self, buf):
        """Write the next buf.shape[0] terms into buf (kc, m, half)."""
        kc = buf.shape[0]
        n, half = self.b.shape[-1], self.half
        G = buf if n == half else np.empty((kc,) + self.b.shape, complex)
        Gv = G.view(float)
        w2 = self.w2
        for i in range(kc):
            k = self.k + i
            if k == 0:
                G[i] = self.b
            elif k == 1:
                np.multiply(self.b, 0.5 * w2[:, ::2], out=G[i])
            else:
                pv = (Gv[i - 2] if i >= 2 else (self.prev if i == 1 else self.prev2))
                cv = Gv[i - 1] if i >= 1 else self.prev
                np.multiply(w2, cv, out=Gv[i])
                Gv[i] -= pv
        # keep the last two terms (real views) for the next chunk
        if kc >= 2:
            self.prev2, self.prev = Gv[kc - 2].copy(), Gv[kc - 1].copy()
        else:
            self.prev2, self.prev = self.prev, Gv[0].copy()
        self.k += kc
        if n > half:
            buf[...] = 0.0
            for a in range(0, n, half):
                e = min(n, a + half)
                buf[..., :e - a] += G[..., a:e]


def fft_amplitude_work(dirs, red, X, chans, q, M, jbins, q_c, q_h, eps, want_sub,
                       shifts=None, block_bytes=8e6):
    """Reductions R[j, r, c] = sum_n red[n, r] |a_c(q_j, n)|^2.

    dirs (N, d) unit directions; red (N, r) their reduction weights; X
    (Nt, d) the path (centred), sampled on the uniform time grid; chans (Nt,
    S) the coefficients b_m of each signal (full trapezoid weights); q (J,)
    the radial nodes, whose frequencies are jbins * 2 pi/(M dt) (consecutive
    integers from jbins[0] >= 0); the nodes lie in [q_c - q_h, q_c + q_h].
    ``shifts`` lists the output channels as (signal, bin shift): channel c
    is sum_m b_m e^{i (w_j + shift dw) t_m} e^{-i q_j n.x_m} of its signal
    (default: one channel per signal, no shift), so channels whose detunings
    differ by whole bins share one set of transforms.  Columns c: the
    channels with the full rule, then (``want_sub``) the channels with the
    every-other-point time sub-rule.  ``eps`` is the truncation level of the
    Jacobi-Anger series relative to sum |b|.  Work arrays are about
    ``block_bytes`` (directions in blocks, series terms in chunks) plus a
    few rows of length Nt per direction of a block.

    With u = n.x centred on the path's extent (a phase per direction, which
    leaves |a| unchanged) and |u| <= U, the series is taken in u:
    e^{-i (q - q_c) u} = sum_k eps_k (-i)^k J_k((q - q_c) U) T_k(u/U), so the
    Bessel functions are needed on the nodes only and the time signals are
    Chebyshev polynomials of the path, b_m e^{-i q_c u_m} T_k(u_m/U).
    """
    jbins = np.asarray(jbins)
    if M % 2 or np.any(np.diff(jbins) != 1) or jbins[0] < 0:
        raise ValueError("fft_amplitude_work: the nodes must be consecutive bins")
    work = _AmplitudeWork(red, X, chans, q, M, jbins, q_c, q_h, eps, want_sub, shifts,
                          block_bytes)
    if dirs.shape[0]:
        work.run(dirs)
    return work.out


def _channel_reads(jbins, shifts, M, J):
    """Per output channel (signal, where its J bins lie in a transform of
    length M/2, the odd samples' phase e^{2 pi i j/M} on its bins)."""
    half = M // 2
    reads = []
    for sig, sh in shifts:
        bins = jbins + int(sh)
        lo_b = int(bins[0]) % half
        sl = slice(lo_b, lo_b + J) if lo_b + J <= half else bins % half
        reads.append((sig, sl, np.exp(2j * np.pi * bins / M)))   # e^{2 pi i j/M}
    return reads


def _extents(dirs, X):
    """Middle and half-width of the path's extent along each direction (in
    row chunks: no N x Nt array)."""
    N, nt = dirs.shape[0], X.shape[0]
    lo = np.empty(N)
    hi = np.empty(N)
    rows = int(max(1, 4e6 // (8 * nt)))
    for a in range(0, N, rows):
        Pa = dirs[a:a + rows] @ X.T
        lo[a:a + rows], hi[a:a + rows] = Pa.min(axis=1), Pa.max(axis=1)
    return 0.5 * (lo + hi), 0.5 * (hi - lo)


class _AmplitudeWork:
    """The state of one :func:`fft_amplitude_work` call: the reductions
    ``out`` accumulated over blocks of directions of similar extent."""

    def __init__(self, red, X, chans, q, M, jbins, q_c, q_h, eps, want_sub, shifts,
                 block_bytes):
        S = chans.shape[1]
        self.red, self.X, self.q_c, self.q_h, self.eps = red, X, q_c, q_h, eps
        self.half, self.want_sub, self.block_bytes = M // 2, want_sub, block_bytes
        self.S = S
        if shifts is None:
            shifts = [(sig, 0) for sig in range(S)]
        self.reads = _channel_reads(jbins, shifts, M, q.size)
        self.C = len(self.reads)
        ncol = 2 * self.C if want_sub else self.C
        self.out = np.zeros((q.size, red.shape[1], ncol))
        self.dq = np.asarray(q, float) - q_c
        self.che = chans[0::2]
        self.cho = chans[1::2]
        # one term, even + odd
        self.row_bytes = 16.0 * 2 * max(self.half, (X.shape[0] + 1) // 2)

    def run(self, dirs):
        """Accumulate the reductions of every direction, in blocks of
        similar extent (which share the series' length K)."""
        N = dirs.shape[0]
        mid, ext = _extents(dirs, self.X)
        order = np.argsort(ext)                     # blocks of similar extent share K
        K_all = chebyshev_degree(self.q_h * float(ext.max()), self.eps)
        nb = int(max(1, min(N, self.block_bytes // (self.row_bytes * min(K_all, 8)))))
        for b0 in range(0, N, nb):
            sel = order[b0:b0 + nb]
            U = max(float(ext[sel].max()), 1e-300)
            self.block(dirs[sel] @ self.X.T - mid[sel, None], U, self.red[sel])

    def block(self, u, U, red_b):
        """One block of directions: u = n.x - mid (m, Nt) with |u| <= U,
        red_b their reduction weights."""
        m = u.shape[0]
        K = chebyshev_degree(self.q_h * U, self.eps)
        kc = int(max(1, min(K, self.block_bytes // (self.row_bytes * m))))
        w2e = np.repeat(2.0 / U * u[:, 0::2], 2, axis=1)   # 2 u/U, interleaved storage
        w2o = np.repeat(2.0 / U * u[:, 1::2], 2, axis=1)
        pre = np.exp(-1j * self.q_c * u)
        pe, po = pre[:, 0::2], pre[:, 1::2]
        del u, pre
        # coef[k, j] = eps_k (-i)^k J_k((q_j - q_c) U)
        coef = bessel_sequence(self.dq * U, K) * ((-1j) ** np.arange(K))[:, None]
        coef[1:] *= 2.0
        buf = np.empty((2, kc, m, self.half), complex)
        for sig in range(self.S):
            even = _ChebyshevSignals(w2e, pe * self.che[:, sig][None, :], self.half)
            odd = _ChebyshevSignals(w2o, po * self.cho[:, sig][None, :], self.half)
            acc = self._transform(sig, even, odd, coef, buf)
            self._reduce(sig, acc, red_b)

    def _transform(self, sig, even, odd, coef, buf):
        """Sum over the series of the transforms of one signal's even and
        odd samples, on each channel's bins: [(E, O)] per channel read."""
        K, kc, m = coef.shape[0], buf.shape[1], buf.shape[2]
        J = self.dq.size
        acc = [(np.zeros((m, J), complex), np.zeros((m, J), complex)) for _ in self.reads]
        for k0 in range(0, K, kc):
            k1 = min(K, k0 + kc)
            bv = buf[:, :k1 - k0]
            even.fill(bv[0])
            odd.fill(bv[1])
            F = sfft.ifft(bv, axis=-1, norm="forward", overwrite_x=True)
            for (s_c, sl, _), (Ec, Oc) in zip(self.reads, acc):
                if s_c == sig:
                    Ec += np.einsum("kbj,kj->bj", F[0][..., sl], coef[k0:k1])
                    Oc += np.einsum("kbj,kj->bj", F[1][..., sl], coef[k0:k1])
            del F
        return acc

    def _reduce(self, sig, acc, red_b):
        """|a|^2 of one signal's channels (full rule; twice the even part:
        the sub-rule) reduced over the block's directions."""
        C = self.C
        for c, ((s_c, _, odd_ph), (Ec, Oc)) in enumerate(zip(self.reads, acc)):
            if s_c != sig:
                continue
            full = Ec + Oc * odd_ph
            self.out[:, :, c] += (full.real ** 2 + full.imag ** 2).T @ red_b
            if self.want_sub:
                self.out[:, :, C + c] += 4.0 * (Ec.real ** 2 + Ec.imag ** 2).T @ red_b
