"""First-order transition probabilities of a finite transit.

For any trajectory ``x(t)`` and switching ``chi(t)`` the golden-rule
(first-order) probabilities are, with ``A = (kappa/hbar)^2 n``,

    P(D) = A int d^dk/(2pi)^d S(k) |F(k)|^2 [ (1 + n_k) |a(D, k)|^2
                                             +      n_k  |a(-D, k)|^2 ],
    a(D, k) = int dt chi(t) exp(i (D + w_k) t - i k.x(t)),

``D = +Omega`` for ground -> excited ("up") and ``D = -Omega`` for excited ->
ground ("down").  The first term emits the phonon ``k`` and its integrand is
the emitted-phonon distribution; the second absorbs a thermal phonon (the
absorption amplitude ``int chi e^{i(D - w)t + i k.x}`` is the complex
conjugate of ``a(-D, k)``, so two time integrals per ``k`` give all four
terms).  The structureless density probe has ``D = 0``.

Emitted phonons
---------------
To first order every emission event emits exactly one phonon, so the
expected number of emitted phonons is the emission term:

* two-level probe: ``emitted_phonons`` is the emission term of ``P_up``
  (the probe starts in its ground state; the phonon is emitted while the
  probe is excited: switching- or motion-induced emission), and
  ``emitted_phonons_excited`` the emission term of ``P_down`` (the probe
  starts excited);
* density probe: ``emitted_phonons`` is ``A int S|F|^2 (1+n)|a(0, k)|^2``
  and ``absorbed_phonons`` the thermal absorption term.

Numerical method (natural units of the gas: q = k xi, t in xi/c)
----------------------------------------------------------------
* Time: a uniform grid over the switching support with the trapezoid rule.
  chi is smooth and vanishes at both ends (or is below 1e-16 there), so by
  the Poisson summation formula the trapezoid error is the integrand's
  spectrum at multiples of the sampling frequency 2 pi/dt: once 2 pi/dt
  clears the highest local frequency ``|D| + w(q_max) + q_max |v|_max``
  plus the switching bandwidth, the error is spectrally small.  The step is
  chosen so that even the every-other-point sub-rule (step 2 dt) satisfies
  this; the difference of the two sums is the time-step error estimate.
  The fine step thus has 2 (1 + bandwidth/f) >= 2 points per period of the
  highest frequency f, and acceleration adds a margin z sqrt(q |a|) to f
  (curved paths spread the spectrum beyond the instantaneous frequency, with
  an Airy-like tail; z is the depth of that tail at 0.1 rtol, 3.6 at
  rtol = 1e-3, 4.8 at 1e-6).
  Positions are evaluated once on the grid and reused for every k.
* |k|: a uniform grid q_i = i h on [0, q_max] with fourth-order end
  weights at q = 0 (3/8, 7/6, 23/24, 1, ...).  |a|^2 depends on q through
  e^{i(w(q) s - q n.dx)} with |w'(q) s - n.dx| below the conjugate length
  ``L = v_g(q_max) T_c + D`` (T_c the correlation length of chi, D the path
  diameter).  That bound weights every lag of the switching fully, a worst
  case, so the first pass puts the full rule (not its sub-rule) at it,
  h = 2 pi/L; the difference with the every-other-point sub-rule (2h) is
  the radial error estimate, and h is halved when it exceeds its share.
  ``q_max`` is where the form factor or the detuning (off-resonance beyond
  the switching bandwidth) makes the integrand negligible; the share of the
  last 5 % of the grid is checked.
* Directions: 1D the two directions +-; 2D the periodic trapezoid rule in
  the angle (its every-other-point sub-rule is the angular check); 3D
  Lebedev rules (``scipy.integrate.lebedev_rule``) or, for elongated paths
  or when the direction spectrum is asked for, a Gauss-Legendre (cos theta)
  x trapezoid (phi) product rule about the path's principal axis (or the
  spectrum axis).  The angular degree needed at q is about q D (the
  harmonic content of e^{-i q n.dx}): the Bessel tail past l = qD falls
  like an Airy function, so the degree is qD + z (qD/2)^(1/3) + 4 with z
  the depth at the node's own tolerance -- 0.1 rtol scaled by the node's
  weight q^(d-1) S |F|^2 against the largest one (|a|^2 <= (int chi)^2
  everywhere, so a node of small weight needs less relative accuracy).
  It is chosen per band of q and checked against a rule of 3/4 the degree
  on every fourth q node.
* Amplitudes: for each band of q sharing a rule, e^{-i q n.x(t)} is advanced
  from one q node to the next by one complex multiplication (two cos/sin
  pairs per direction and time: the start and the step) and contracted with
  chi w_t e^{i(D + w_q)t} by a real matrix product on the interleaved
  (re, im) storage; directions are swept in cache-sized blocks over runs of
  16 q nodes.  Work is split into chunks of directions and q that fit in
  ``max_memory`` and run on threads.
* FFT route (``method="fft"``, or chosen by ``"auto"`` when its cost
  model says it is cheaper -- typically long transits of paths of bounded
  size, where the direct sums cost (times x nodes x directions) and the
  FFTs (directions x K x M log M)): the radial nodes are uniform in
  frequency, w_j = j dw with dw = 2 pi/(M dt), and the first pass puts the
  sub-rule (2 dw) at the conjugate length T_c + D/min(v_g) in w, the rule in
  w carrying the Jacobian 1/v_g; every direction's amplitudes on all nodes
  come from K length-M FFTs of b_m e^{-i q_c u_m} T_k(u_m/U) (the
  Jacobi-Anger series of e^{-i (q - q_c) u}, see
  :mod:`probe.amplitudes_fft`), with the even and odd time samples
  transformed apart so that the time sub-rule comes free.  For a two-level
  probe dw divides 2 Omega, so both detunings read one set of transforms
  (the time step is adjusted to the grid and the window extended by under
  one step; not for a hard cut).  One angular rule, the cover of every
  node's, serves all nodes; the 3D angular check is the cover at 3/4 the
  degree on every 4th node (a transform of length M/4 of the folded time
  series gives exactly those frequencies).  Both routes compute the same sums and are checked
  against each other and the closed forms in the tests.  When the
  amplitude is resonant at k -> 0 (|D| T_c < 10: the density probe, or a
  gap inside the switching bandwidth) the integrand has a peak of width
  1/T_c at the start of the frequency grid, which its end-corrected rule
  resolves only after several refinements; the cost model counts them.
* Lag route (``method="lag"``, and ``"auto"`` whenever it applies): for a
  path whose separations |x(t + s) - x(t)| depend on the lag s alone (the
  trajectory's ``separation`` capability: linear, circular) and no
  direction spectrum, the angular integral is exact --
  int dOmega |a|^2 = |S^{d-1}| sum_m c_m e^{i(D + w)s_m} j_d(q r(s_m)) with
  c_m the switching's autocorrelation on the time grid (by FFT) and j_d the
  isotropic average of e^{-i k.dx} (sin x/x, J_0, cos) -- the same double
  trapezoid sum regrouped by lag, at cost nodes x lags.
* If an error estimate exceeds its share of ``rtol`` that part is refined
  (h or dt halved, angular degree x 1.4, q_max x 1.5) and the whole sum
  recomputed, up to ``max_refinements`` times.  ``achieved_rtol`` is the
  sum of the estimates relative to the result; each estimate is that of the
  coarser sub-rule, so the reported (finer) values are usually far more
  accurate than it says.
"""
from __future__ import annotations

import math
import os
from concurrent.futures import ThreadPoolExecutor
from dataclasses import dataclass, field, fields
from functools import lru_cache

import numpy as np
from scipy import constants as sc
from scipy.integrate import lebedev_rule
from scipy.optimize import brentq
from scipy.special import roots_legendre

from probe.engines.fft_kernel import chebyshev_degree, fft_amplitude_work, fft_length
from probe.errors import InputError, ModelError
from probe.engines.results import _jsonable
from probe.detectors.switching import Switching

HBAR = sc.hbar
KB = sc.k

_LEBEDEV_ORDERS = (3, 5, 7, 9, 11, 13, 15, 17, 19, 21, 23, 25, 27, 29, 31, 35,
                   41, 47, 53, 59, 65, 71, 77, 83, 89, 95, 101, 107, 113, 119,
                   125, 131)
_QCHUNK = 64         # smallest q sub-range handed to one thread
_ANGLE_SAMPLE = 4     # 3D angular check on every 4th q node
_BREAKDOWN = 0.1      # probability above which first order is suspect
_FLOOR = 1e-9         # relative floor for exponentially small channels
_BLOCK_BYTES = 1.0e6  # e^{-i q n.x} and its step factor per direction block
_QBLOCK = 16          # q nodes per pass over the direction blocks
# cost model of the two amplitude routes (seconds per unit of work, 2 threads
# on the development machine; only their ratios matter): phasor route per
# (direction, node, time) with four channel columns; FFT route per
# M log2 M of one transform, per time sample of one signal, per Bessel step
_COST_PHASOR = 3.0e-9
_COST_FFT = 1.0e-9
_COST_SIGNAL = 4.0e-9
_COST_BESSEL = 1.5e-9
_METHODS = ("auto", "phasor", "fft", "lag")
_COST_LAG = 2.5e-8   # per (node, lag): a cos/sin pair, a Bessel-type kernel
_ENDPOINT_RESONANCE = 10.0   # |D| T_c below which a(k -> 0) is resonant


@dataclass
class TransitResult:
    """First-order probabilities of one transit, SI units.

    Two-level probe: ``up_probability`` (ground -> excited),
    ``down_probability`` (excited -> ground), their ``_error`` estimates,
    ``emitted_phonons`` (expected number of phonons emitted when the probe
    starts in the ground state: the emission term of ``up_probability``) and
    ``emitted_phonons_excited`` (starting excited: the emission term of
    ``down_probability``).  Density probe: ``emitted_phonons`` (emission
    term of P with D = 0) and ``absorbed_phonons``.  ``emitted_energy`` (J)
    is the expected energy carried by the emitted phonons of the
    ``emitted_phonons`` channel.

    ``spectrum`` (when requested) is a dict: ``k`` (1/m) and ``energy``
    (J, hbar w_k) on the radial nodes, ``dk`` (1/m) their quadrature
    weights (``sum(dN_dk * dk)`` is the total), ``dN_dk`` (m) and ``dN_dE``
    (1/J) of the ``emitted_phonons`` channel (``dN_dk_excited`` for the
    excited start of a two-level probe); over directions, 3D:
    ``cos_theta`` bin centres, ``cos_theta_edges`` and ``dN_dcos_theta``
    with theta the polar angle from ``axis`` (the mean-velocity direction,
    or z when the path has no net velocity); 2D: ``phi``, ``phi_edges``,
    ``dN_dphi`` with phi the angle from ``axis`` (mean-velocity direction
    or x), counter-clockwise; 1D: ``dN_forward`` (along +x) and
    ``dN_backward``.  Direction densities are averages over each bin.
    """

    model: str
    dimension: int
    sound_speed: float
    healing_length: float
    chemical_potential: float
    gap: object = None
    up_probability: object = None
    down_probability: object = None
    up_probability_error: object = None
    down_probability_error: object = None
    emitted_phonons: object = None
    emitted_phonons_error: object = None
    emitted_phonons_excited: object = None
    absorbed_phonons: object = None
    emitted_energy: object = None
    achieved_rtol: float = None
    error_budget: dict = None
    grid: dict = None
    spectrum: dict = None
    warnings: list = field(default_factory=list)

    def to_dict(self):
        out = {}
        for f in fields(self):
            v = getattr(self, f.name)
            if isinstance(v, dict):
                v = {k: _jsonable(x) for k, x in v.items()}
            else:
                v = _jsonable(v)
            out[f.name] = v
        return out


# ---------------------------------------------------------------------------
# angular rules
# ---------------------------------------------------------------------------
class _Rule:
    """Directions (N, d), weights (N,) summing to the measure of the unit
    sphere (1D: 2, 2D: 2 pi, 3D: 4 pi), optional sub-rule weights (2D) and
    optional spectrum bin matrix (N, nbins)."""

    def __init__(self, dirs, weights, sub=None, bins=None, key=None):
        self.dirs = np.ascontiguousarray(dirs, dtype=float)
        self.weights = np.asarray(weights, float)
        self.sub = sub
        self.bins = bins
        self.key = key

    @property
    def size(self):
        return self.weights.size


def _frame(axis):
    axis = np.asarray(axis, float)
    axis = axis / np.linalg.norm(axis)
    ref = np.eye(3)[int(np.argmin(np.abs(axis)))]
    e1 = ref - np.dot(ref, axis) * axis
    e1 /= np.linalg.norm(e1)
    e2 = np.cross(axis, e1)
    return e1, e2, axis


@lru_cache(maxsize=256)
def _lebedev(order):
    x, w = lebedev_rule(order)
    return np.ascontiguousarray(x.T), np.asarray(w)


def _interval_overlap(a0, a1, b0, b1):
    return np.clip(np.minimum(a1[:, None], b1[None, :])
                   - np.maximum(a0[:, None], b0[None, :]), 0, None)


def _rule_1d():
    return _Rule(np.array([[1.0], [-1.0]]), np.array([1.0, 1.0]),
                 bins=np.eye(2), key=("1d",))


def _rule_2d(n, axis_angle, edges):
    """Periodic trapezoid with n (even) points; sub-rule: every other point."""
    j = np.arange(n)
    rel = 2 * np.pi * j / n
    rel = np.where(rel >= np.pi, rel - 2 * np.pi, rel)
    ang = axis_angle + rel
    dirs = np.stack([np.cos(ang), np.sin(ang)], axis=1)
    w = np.full(n, 2 * np.pi / n)
    sub = np.where(j % 2 == 0, 2 * w, 0.0)
    bins = None
    if edges is not None:
        h = np.pi / n
        width = np.diff(edges)
        ov = np.zeros((n, edges.size - 1))
        for shift in (-2 * np.pi, 0.0, 2 * np.pi):
            ov += _interval_overlap(rel - h + shift, rel + h + shift,
                                    edges[:-1], edges[1:])
        bins = ov / width[None, :]
    return _Rule(dirs, w, sub=sub, bins=bins, key=("2d", n))


@lru_cache(maxsize=256)
def _gauss_legendre(n):
    return roots_legendre(n)


def _rule_product(nu, nphi, axis, edges):
    """Gauss-Legendre in u = cos(theta) about ``axis`` x trapezoid in phi."""
    u, wu = _gauss_legendre(nu)
    e1, e2, e3 = _frame(axis)
    phi = 2 * np.pi * np.arange(nphi) / nphi
    s = np.sqrt(1 - u * u)
    dirs = (u[:, None, None] * e3
            + s[:, None, None] * (np.cos(phi)[None, :, None] * e1
                                  + np.sin(phi)[None, :, None] * e2))
    dirs = dirs.reshape(-1, 3)
    w = (wu[:, None] * np.full(nphi, 2 * np.pi / nphi)[None, :]).reshape(-1)
    bins = None
    if edges is not None:
        cells = np.concatenate([[-1.0], -1.0 + np.cumsum(wu)])
        cells[-1] = 1.0
        ov = _interval_overlap(cells[:-1], cells[1:], edges[:-1], edges[1:])
        per_u = ov / np.diff(cells)[:, None] * wu[:, None] / np.diff(edges)[None, :]
        # each (u, phi) node carries the phi weight 2 pi/nphi
        bins = np.repeat(per_u, nphi, axis=0) * (2 * np.pi / nphi)
    return _Rule(dirs, w, bins=bins, key=("prod", nu, nphi, tuple(np.round(axis, 12))))


def _ladder(n):
    """Round n up to the geometric ladder ceil(8 * 1.15^k) (fewer bands)."""
    if n <= 8:
        return max(1, int(n))
    k = math.ceil(math.log(n / 8) / math.log(1.15) - 1e-9)
    return int(math.ceil(8 * 1.15 ** k))


def _airy_depth(eps):
    """z with exp(-(4/3) z^(3/2)) = eps: how far (in units of the Airy scale)
    past a turning point the squared Bessel tail |J_{x + z (x/2)^(1/3)}(x)|^2
    (and the squared spectrum of a chirped phase past its band edge) has
    fallen to eps."""
    return (0.75 * math.log(1.0 / min(max(eps, 1e-300), 0.5))) ** (2.0 / 3.0)


def _degree(x, factor, eps):
    """Angular degree for harmonic content x = q D at relative accuracy eps:
    the Bessel functions j_l(x) fall like an Airy tail past l = x, so
    degrees beyond x + z(eps) (x/2)^(1/3) carry less than eps."""
    return int(math.ceil(factor * (x + _airy_depth(eps) * np.cbrt(0.5 * x)) + 4))


class _Geometry:
    """What the angular rules need to know about the path."""

    def __init__(self, d, diameter, perp_diameter, principal, spec_axis):
        self.d = d
        self.D = diameter
        self.Dperp = perp_diameter
        self.principal = principal
        self.spec_axis = spec_axis


def _rule_spec(geom, q, factor, spectrum, eps):
    """Hashable description of the angular rule needed up to wavenumber q.
    With a direction spectrum of nbins bins the rule also resolves the bins
    (cells no wider than a bin)."""
    if geom.d == 1:
        return ("1d",)
    return _spec_from_degrees(geom, *_degrees(geom, q, factor, spectrum, eps), spectrum)


def _degrees(geom, q, factor, spectrum, eps):
    """(degree over the path's diameter, degree about the rule's axis or
    None for a path on the axis)."""
    L = _degree(q * geom.D, factor, eps)
    if geom.d != 3:
        return L, None
    dperp = geom.Dperp_spec if spectrum else geom.Dperp
    xp = q * dperp
    return L, (None if xp < 1e-9 else _degree(xp, factor, eps))


def _spec_from_degrees(geom, L, Lp, spectrum):
    d = geom.d
    if d == 1:
        return ("1d",)
    nbins = spectrum if spectrum else 0
    if d == 2:
        n = _ladder(max(L + 1, 2 * nbins))
        n += n % 2
        return ("2d", max(n, 4))
    nu = _ladder(max((L + 2) // 2 + 1, int(math.ceil(1.6 * nbins))))
    nphi = 1 if Lp is None else _ladder(Lp - 2)
    if spectrum:
        return ("prod", nu, nphi, True)
    order = next((o for o in _LEBEDEV_ORDERS if o >= L), None)
    if order is not None and _lebedev(order)[1].size <= nu * nphi:
        return ("leb", order)
    return ("prod", nu, nphi, False)


def _cover_spec(geom, qn, eps_node, factor, spectrum):
    """One rule that meets every node's angular degree (the FFT route's)."""
    if geom.d == 1:
        return ("1d",)
    L, Lp = 0, None
    for q, e in zip(qn, eps_node):
        a, b = _degrees(geom, float(q), factor, spectrum, float(e))
        L = max(L, a)
        if b is not None:
            Lp = b if Lp is None else max(Lp, b)
    return _spec_from_degrees(geom, L, Lp, spectrum)


def _make_rule(spec, geom, edges):
    kind = spec[0]
    if kind == "1d":
        return _rule_1d()
    if kind == "2d":
        ang = math.atan2(geom.spec_axis[1], geom.spec_axis[0])
        return _rule_2d(spec[1], ang, edges)
    if kind == "leb":
        x, w = _lebedev(spec[1])
        return _Rule(x, w, key=spec)
    _, nu, nphi, spec_axis = spec
    spec_axis = bool(spec_axis)
    axis = geom.spec_axis if spec_axis else geom.principal
    r = _rule_product(nu, nphi, axis, edges if spec_axis else None)
    r.key = spec
    return r


# ---------------------------------------------------------------------------
# amplitude kernel
# ---------------------------------------------------------------------------
def _cis(x):
    """exp(-i x) for real x via cos and sin (faster than the complex exp)."""
    out = np.empty(x.shape, complex)
    np.cos(x, out=out.real)
    np.sin(x, out=out.imag)
    np.negative(out.imag, out=out.imag)
    return out


def _amplitude_work(dirs, red, X, t, cols, q, h, omega):
    """Reductions R[i, r, c] = sum_j red[j, r] |a_c(q_i, n_j)|^2 with
    a_c(q, n) = sum_m cols[m, c] e^{i w(q) t_m} e^{-i q n.x_m}.

    The nodes are q_i = q_0 + i h: e^{-i q_0 n.x} and the step factor
    e^{-i h n.x} are evaluated once and each node multiplies by the step
    (phase error ~ i * 1e-16).  The directions are swept in blocks small enough that a block's
    e^{-i q n.x} and step factor stay in cache over a run of q nodes, and
    the contraction over time is a real matrix product on the interleaved
    (re, im) storage of e^{-i q n.x} (OpenBLAS's complex product with a
    handful of columns runs at a fraction of its real one)."""
    nJ, nt, nc = dirs.shape[0], t.size, cols.shape[1]
    P = dirs @ X.T                       # (nJ, Nt)
    Z = _cis(q[0] * P)
    Eh = _cis(h * P)
    del P
    Zv = Z.view(float)                   # (nJ, 2 Nt): re, im interleaved
    out = np.empty((q.size, red.shape[1], nc))
    blk = int(min(nJ, max(8, _BLOCK_BYTES // (32 * nt))))
    redT = np.ascontiguousarray(red.T)
    for q0 in range(0, q.size, _QBLOCK):
        q1 = min(q.size, q0 + _QBLOCK)
        nb = q1 - q0
        ph = omega[q0:q1, None] * t[None, :]
        C = np.empty(ph.shape, complex)
        np.cos(ph, out=C.real)
        np.sin(ph, out=C.imag)
        C = C[:, :, None] * cols[None, :, :]            # (nb, Nt, nc)
        # (zr + i zi)(cr + i ci): rows (zr, zi) against columns (re, im)
        M = np.empty((nb, nt, 2, nc, 2))
        M[:, :, 0, :, 0] = C.real
        M[:, :, 0, :, 1] = C.imag
        M[:, :, 1, :, 0] = -C.imag
        M[:, :, 1, :, 1] = C.real
        M = M.reshape(nb, 2 * nt, 2 * nc)
        del C
        A = np.empty((nb, nJ, 2 * nc))
        for b0 in range(0, nJ, blk):
            b1 = min(nJ, b0 + blk)
            zb = Z[b0:b1]
            zv = Zv[b0:b1]
            eb = Eh[b0:b1]
            for k in range(nb):
                if q0 + k:
                    zb *= eb
                np.matmul(zv, M[k], out=A[k, b0:b1])
        E = A[:, :, 0::2] ** 2 + A[:, :, 1::2] ** 2
        np.matmul(redT[None, :, :], E, out=out[q0:q1])
    return out


def _split_band(rule, red, cols, q, omega, nt, workers, max_memory):
    """Work items (directions slice, q indices) for one band: chunks of
    directions that fit in max_memory per thread -- at least one per thread
    when the rule is large enough (each chunk evaluates its own start and
    step factors, so splitting the directions shares that cost out while
    splitting q would repeat it) -- and q sub-ranges when the band still
    has fewer direction chunks than threads."""
    N = rule.size
    per_dir = nt * 64.0                  # P, Eh, Z and temporaries, bytes
    nJ = int(max(1, min(N, max_memory / max(1, workers) / per_dir)))
    if workers > 1 and N >= 16 * workers:
        nJ = min(nJ, -(-N // workers))
    dir_chunks = [slice(a, min(N, a + nJ)) for a in range(0, N, nJ)]
    nq_chunks = 1
    if len(dir_chunks) < workers and q.size >= 2 * _QCHUNK:
        nq_chunks = min(workers, q.size // _QCHUNK)
    qs = np.array_split(np.arange(q.size), nq_chunks)
    return [(dc, qi) for dc in dir_chunks for qi in qs]


def _run_bands(tasks, X, t, pool, workers, max_memory):
    """Run every band task (rule, reductions, columns, q nodes, step,
    omega) on the thread pool; returns one array R[i, r, c] per task."""
    items = []
    outs = []
    for k, (rule, red, cols, q, h, omega) in enumerate(tasks):
        outs.append(np.zeros((q.size, red.shape[1], cols.shape[1])))
        for dc, qi in _split_band(rule, red, cols, q, omega, t.size, workers, max_memory):
            items.append((k, dc, qi))
    # large items first so the threads finish together
    items.sort(key=lambda it: -(tasks[it[0]][0].dirs[it[1]].shape[0] * it[2].size))

    def job(item):
        k, dc, qi = item
        rule, red, cols, q, h, omega = tasks[k]
        return k, qi, _amplitude_work(rule.dirs[dc], red[dc], X, t, cols, q[qi], h,
                                      omega[qi])

    results = pool.map(job, items) if (pool is not None and len(items) > 1) \
        else map(job, items)
    for k, qi, r in results:
        outs[k][qi] += r
    return outs


# ---------------------------------------------------------------------------
# setup helpers
# ---------------------------------------------------------------------------
def _largest_root(g, start=1.0):
    """Largest positive root of an increasing-at-infinity convex g with
    g(0) < 0."""
    hi = start
    for _ in range(200):
        if g(hi) > 0:
            break
        hi *= 2
    else:
        return math.inf
    return brentq(g, 0.0, hi, xtol=1e-12, rtol=1e-12)


def _gregory(n, h):
    """Weights of the closed uniform rule on n+1 nodes from q = 0, fourth
    order at q = 0 (3/8, 7/6, 23/24, 1, ...); the far end is where the
    integrand is negligible."""
    w = np.ones(n + 1)
    m = min(3, n + 1)
    w[:m] = np.array([3 / 8, 7 / 6, 23 / 24])[:m]
    return w * h


def _positions(trajectory, t_si, d, xi, c):
    x = np.asarray(trajectory.position(t_si), float)
    v = np.asarray(trajectory.velocity(t_si), float)
    if x.ndim == 1:
        x = x[:, None]
        v = v[:, None]
    nd = x.shape[1]
    if nd > d:
        raise InputError(
            "trajectory",
            f"the path has {nd} components but the gas is {d}-dimensional")
    if nd < d:
        x = np.concatenate([x, np.zeros((x.shape[0], d - nd))], axis=1)
        v = np.concatenate([v, np.zeros((v.shape[0], d - nd))], axis=1)
    return x / xi, v / c


def _geometry(d, X, V, chi, mask, corr_length, vmax):
    """Path diameter (over where chi matters), principal axis, spectrum
    axis and the transverse diameters about them; X is centred."""
    Xs = X[mask] if np.any(mask) else X
    lo, hi = Xs.min(axis=0), Xs.max(axis=0)
    centre = 0.5 * (lo + hi)
    Y = Xs - centre
    R = float(np.sqrt((Y ** 2).sum(axis=1)).max()) if Y.size else 0.0
    D = min(2 * R, vmax * corr_length) if vmax > 0 else 2 * R
    # spectrum axis: chi-weighted mean velocity
    vbar = (chi[:, None] * V).sum(axis=0)
    vabs = (chi * np.sqrt((V ** 2).sum(axis=1))).sum()
    default = np.eye(d)[d - 1] if d == 3 else np.eye(d)[0]
    spec_axis = vbar / np.linalg.norm(vbar) if (
        vabs > 0 and np.linalg.norm(vbar) > 1e-6 * vabs) else default
    principal = spec_axis
    Dperp = Dperp_spec = D
    if d == 3:
        cov = (Y.T @ Y) / max(1, Y.shape[0])
        evals, evecs = np.linalg.eigh(cov)
        principal = evecs[:, -1] if evals[-1] > 0 else spec_axis

        def perp(axis):
            r = Y - np.outer(Y @ axis, axis)
            return min(D, 2 * float(np.sqrt((r ** 2).sum(axis=1)).max())) if r.size else 0.0

        Dperp = perp(principal)
        Dperp_spec = perp(spec_axis)
    g = _Geometry(d, D, Dperp, principal, spec_axis)
    g.Dperp_spec = Dperp_spec
    g.extent = 2 * R
    return g, centre


# ---------------------------------------------------------------------------
# BLAS threads
# ---------------------------------------------------------------------------
def _openblas_controls():
    """(get, set) pairs of every OpenBLAS loaded in this process (numpy's and
    scipy's wheels each ship one); empty where none can be found."""
    found = []
    try:
        with open("/proc/self/maps") as fh:
            paths = {line.split()[-1] for line in fh
                     if "openblas" in line.lower() and ".so" in line.split()[-1]}
    except OSError:
        return found
    import ctypes
    for path in sorted(paths):
        try:
            lib = ctypes.CDLL(path)
        except OSError:
            continue
        for prefix in ("scipy_", ""):
            for suffix in ("64_", ""):
                g = getattr(lib, f"{prefix}openblas_get_num_threads{suffix}", None)
                s = getattr(lib, f"{prefix}openblas_set_num_threads{suffix}", None)
                if g is not None and s is not None:
                    found.append((g, s))
                    break
            else:
                continue
            break
    return found


class _single_threaded_blas:
    """Run the block with one OpenBLAS thread per call (our own threads do
    the parallel work; OpenBLAS's threads on the thin matrix products of the
    kernel only contend with them and slow it down many times)."""

    def __enter__(self):
        self.saved = []
        try:
            for g, s in _openblas_controls():
                self.saved.append((s, int(g())))
                s(1)
        except Exception:       # pragma: no cover - unusual BLAS builds
            pass
        return self

    def __exit__(self, *exc):
        for s, n in self.saved:
            try:
                s(n)
            except Exception:   # pragma: no cover
                pass
        return False


# ---------------------------------------------------------------------------
# public entry point
# ---------------------------------------------------------------------------
def transit_probabilities(condensate, probe, trajectory, switching, rtol=1e-4,
                          spectrum=False, max_memory=500e6, workers=None,
                          max_refinements=4, spectrum_bins=None, method="auto"):
    """First-order transition probabilities of a probe carried along
    ``trajectory`` with the coupling switched by ``switching``.

    Parameters
    ----------
    condensate : :class:`probe.condensate.Condensate`
    probe : :class:`probe.probes.TwoLevelProbe` (scalar gap) or
        :class:`probe.probes.DensityProbe`
    trajectory : any ``trajectories.Trajectory`` (SI); a path with fewer
        components than the gas's dimension is padded with zeros.
    switching : a :mod:`probe.switching` function of time (s)
    rtol : target relative accuracy of the probabilities
    spectrum : also return the emitted-phonon distribution
    max_memory : bytes for the amplitude work arrays (approximate peak)
    workers : threads (default: the CPUs available to this process)
    max_refinements : refinement rounds before giving up (with a warning)
    spectrum_bins : number of direction bins (3D: 40 in cos theta; 2D: 72)
    method : amplitude route: ``"phasor"`` (direct sums, q-uniform nodes),
        ``"fft"`` (frequency-uniform nodes, one FFT per direction and
        Jacobi-Anger term), ``"lag"`` (linear and circular paths without a
        direction spectrum: exact angular average over lag sums) or
        ``"auto"`` (the cheapest by a cost model; all compute the same
        sums to rtol)

    Returns a :class:`TransitResult`.
    """
    if not isinstance(switching, Switching):
        raise InputError("trajectory.switching",
                         f"must be a switching function, got {switching!r}")
    try:
        rtol = float(rtol)
    except (TypeError, ValueError):
        raise InputError("rtol", f"must be a number, got {rtol!r}") from None
    if not (1e-10 <= rtol < 1):
        raise InputError("rtol", f"must be in [1e-10, 1), got {rtol}")
    if method not in _METHODS:
        raise InputError("method", f"must be one of {', '.join(_METHODS)}, got {method!r}")
    d = condensate.dimension
    disp = condensate.dispersion
    xi, c, w0 = condensate.healing_length, condensate.sound_speed, condensate.frequency_unit
    tu = 1.0 / w0                                   # time unit xi/c, s
    s = probe.width / xi
    Tdl = KB * condensate.temperature / condensate.energy_unit
    (channel,) = probe.channels()
    if channel.gapped:
        gap = np.asarray(channel.detuning, float)
        if gap.ndim:
            raise InputError(channel.key, "a transit needs a single gap, got an array")
        Om = float(gap) / w0
        Ds = (Om, -Om)
    else:
        Om = 0.0
        Ds = (0.0,)
    workers = workers or (len(os.sched_getaffinity(0)) if hasattr(os, "sched_getaffinity")
                          else (os.cpu_count() or 1))
    warnings = list(switching.warnings)
    warnings += list(getattr(trajectory, "warnings", []) or [])

    # --- switching scales (dimensionless) -------------------------------
    eps_t = max(1e-16, 1e-3 * rtol ** 2)
    t_lo, t_hi = (x / tu for x in switching.extent(eps_t))
    if switching.hard_cut:
        t_lo, t_hi = (x / tu for x in switching.support)
    # amplitude level of the switching spectrum treated as negligible: weak
    # channels (off-resonant, thermal) sit far below the resonant scale
    eps_a = 1e-3 * rtol
    bw = switching.bandwidth(eps_a) * tu
    corr = switching.correlation_length(1e-2 * rtol) / tu
    if not math.isfinite(bw):
        if s == 0:
            raise ModelError(
                "trajectory.ramp",
                "a hard-cut switching (ramp = 0) with a point probe (width 0) "
                "excites phonons of every wavenumber: the k-integral converges "
                "only algebraically; give the switching a ramp or the probe a width")
        bw = None

    # coarse look at the path for speeds
    t_probe = np.linspace(t_lo, t_hi, 4097)
    _, V0 = _positions(trajectory, t_probe * tu, d, xi, c)
    vmax = float(np.sqrt((V0 ** 2).sum(axis=1)).max()) * 1.01
    # acceleration broadens the local frequency by ~ sqrt(q |a|) (a chirp of
    # rate q a over its coherence time); included in the detuning cutoff and
    # the time step with the depth of its Airy-like tail at the tolerance
    A0 = np.asarray(trajectory.acceleration(t_probe * tu), float).reshape(t_probe.size, -1)
    amax = float(np.sqrt((A0 ** 2).sum(axis=1)).max()) * tu / c
    chirp = _airy_depth(0.1 * rtol)

    # --- wavenumber cutoff ------------------------------------------------
    q_form = math.sqrt(math.log(1.0 / (1e-1 * rtol))) / s if s > 0 else math.inf
    if bw is not None:
        W = abs(Om) + bw
        if disp.bounded_windows or vmax < 1:
            q_res = _largest_root(lambda q: float(disp.omega(q)) - vmax * q - W
                                  - chirp * math.sqrt(q * amax), start=max(1.0, W))
        else:
            q_res = math.inf
    else:
        q_res = math.inf
    q_max = min(q_form, q_res) * 1.05
    if not math.isfinite(q_max):
        raise ModelError(
            "condensate.dispersion",
            "the emitted wavenumbers are unbounded (phonon dispersion at or "
            "above the sound speed with a point probe): the probability "
            "diverges; give the probe a width or use 'bogoliubov'")
    if bw is None:
        bw = float(disp.omega(q_max)) + q_max * vmax

    # starting resolution: the time step puts the sub-rule (2 dt) at the
    # sampling bound of the frequencies that matter at rtol; the q step puts
    # the full rule (not its 2h sub-rule) at the conjugate-length bound, which
    # is a worst case (every lag of the switching window weighted fully), so
    # the sub-rule check usually accepts it and refines h only when needed
    fac_t, fac_q, ang_fac = 1.0, 0.5, 1.0
    history = []
    pool = ThreadPoolExecutor(max_workers=workers) if workers > 1 else None
    blas = _single_threaded_blas().__enter__()
    try:
        for attempt in range(max_refinements + 1):
            out = _evaluate(condensate, probe, trajectory, switching, d, disp, xi, c, tu,
                            s, Tdl, Om, Ds, t_lo, t_hi, bw, corr, vmax, amax, chirp, q_max,
                            fac_t, fac_q, ang_fac, rtol, spectrum, spectrum_bins,
                            pool, workers, max_memory, method)
            history.append(out["errors"])
            tol = out["tolerances"]
            errs = out["errors"]
            bad = {k: any(errs[k][ch] > 0.24 * tol[ch] for ch in tol) for k in errs}
            if not any(bad.values()):
                break
            if attempt == max_refinements:
                warnings.append(
                    f"transit: not converged to rtol = {rtol:g} after "
                    f"{max_refinements} refinements (achieved {out['achieved']:.2g})")
                break
            if bad["radial"]:
                fac_q *= 2
            if bad["time"]:
                fac_t *= 2
            if bad["angular"]:
                ang_fac *= 1.4
            if bad["cutoff"]:
                q_max *= 1.5
    finally:
        blas.__exit__(None, None, None)
        if pool is not None:
            pool.shutdown()

    # --- SI results -------------------------------------------------------
    A = (channel.coupling / HBAR) ** 2 * condensate.density
    pref = A * xi ** (-d) * tu ** 2
    vals = {k: v * pref for k, v in out["values"].items()}
    err_total = {ch: sum(out["errors"][k][ch] for k in out["errors"]) * pref
                 for ch in out["tolerances"]}
    res = TransitResult(model=probe.name, dimension=d, sound_speed=c,
                        healing_length=xi,
                        chemical_potential=condensate.chemical_potential)
    if channel.gapped:
        res.gap = Om * w0
        raw = {"up": (vals["up"], err_total["up"]), "down": (vals["down"], err_total["down"]),
               "up_emission": vals["up_emission"], "down_emission": vals["down_emission"]}
    else:
        raw = {"emission": (vals["emission"], err_total["emission"]),
               "absorption": vals["absorption"]}
    raw["energy"] = vals["energy"] * HBAR * w0
    values, probs = probe.transit_results({channel.label: raw})
    for name, value in values.items():
        setattr(res, name, value)
    res.achieved_rtol = out["achieved"]
    res.error_budget = {k: {ch: v * pref for ch, v in e.items()}
                        for k, e in out["errors"].items()}
    res.grid = out["grid"]
    scale = max(probs.values())
    for name, p in probs.items():
        if p < _FLOOR * scale:
            warnings.append(
                f"the {name} probability ({p:.3g}) is below {_FLOOR:g} of the "
                f"largest channel; its accuracy is absolute (error "
                f"{err_total.get(name, 0.0):.2g}), not relative")
        if p > _BREAKDOWN:
            warnings.append(
                f"first order breaking down: the {name} probability is {p:.3g} "
                f"> {_BREAKDOWN}; the golden-rule result is not reliable")
    res.warnings = warnings
    if spectrum:
        res.spectrum = _spectrum_si(out, pref, xi, c, w0, d, channel.gapped, disp)
    return res


def _spectrum_si(out, pref, xi, c, w0, d, gapped, disp):
    sp = out["spectrum"]
    q = sp["q"]
    vg = disp.group_velocity(q)
    spec = {"k": q / xi, "dk": sp["wq"] / xi, "energy": HBAR * w0 * disp.omega(q)}
    main = "em_plus" if gapped else "em0"
    dn_dq = sp["dN_dq"][main] * pref
    spec["dN_dk"] = dn_dq * xi
    spec["dN_dE"] = dn_dq / (HBAR * w0 * np.where(vg > 0, vg, np.inf))
    if gapped:
        spec["dN_dk_excited"] = sp["dN_dq"]["em_minus"] * pref * xi
    dirs = sp["directions"]
    if d == 3:
        spec["axis"] = sp["axis"]
        spec["cos_theta_edges"] = sp["edges"]
        spec["cos_theta"] = 0.5 * (sp["edges"][1:] + sp["edges"][:-1])
        spec["dN_dcos_theta"] = dirs[main] * pref
        if gapped:
            spec["dN_dcos_theta_excited"] = dirs["em_minus"] * pref
    elif d == 2:
        spec["axis"] = sp["axis"]
        spec["phi_edges"] = sp["edges"]
        spec["phi"] = 0.5 * (sp["edges"][1:] + sp["edges"][:-1])
        spec["dN_dphi"] = dirs[main] * pref
        if gapped:
            spec["dN_dphi_excited"] = dirs["em_minus"] * pref
    else:
        spec["dN_forward"] = float(dirs[main][0] * pref)
        spec["dN_backward"] = float(dirs[main][1] * pref)
        if gapped:
            spec["dN_forward_excited"] = float(dirs["em_minus"][0] * pref)
            spec["dN_backward_excited"] = float(dirs["em_minus"][1] * pref)
    return spec


# ---------------------------------------------------------------------------
# radial grids and the FFT route
# ---------------------------------------------------------------------------
def _radial_phasor(disp, q_max, Lconj, fac_q):
    """Uniform q grid: the full rule at the conjugate-length bound (fac_q =
    0.5), its every-other-node sub-rule the radial check."""
    h_target = math.pi / Lconj / fac_q
    nq = max(16, int(math.ceil(q_max / h_target)))
    nq += nq % 2
    h = q_max / nq
    qn = h * np.arange(nq + 1)
    qeval = qn.copy()
    qeval[0] = 1e-9 * h                 # S n and q^(d-1) at q -> 0
    wq = _gregory(nq, h)
    wq2 = np.zeros(nq + 1)
    wq2[::2] = _gregory(nq // 2, 2 * h)
    return {"qn": qn, "qeval": qeval, "wq": wq, "wq2": wq2, "omega": disp.omega(qn),
            "h": h}


def _radial_fft(disp, q_max, Lw, fac_q, dt, pair=None):
    """Grid uniform in frequency, w_j = j dw with dw = 2 pi/(M dt), so that a
    length-M FFT over the time grid gives every node: the conjugate length
    in w is Lw = T_c + D/min(v_g) (the phase w s - q(w) n.dx), and the
    first pass puts the sub-rule (2 dw) at it; the rule in w carries the
    Jacobian dq/dw = 1/v_g.  With ``pair`` (a frequency difference, 2 Omega)
    dw divides it exactly and the time step becomes 2 pi/(M dw) <= dt."""
    dw_target = 0.5 * math.pi / Lw / fac_q
    shift = 0
    # M a multiple of 2 _ANGLE_SAMPLE and the shift of _ANGLE_SAMPLE, so that
    # the angular check's transform of length M/_ANGLE_SAMPLE lands on
    # every _ANGLE_SAMPLE-th node
    a = _ANGLE_SAMPLE
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
    wq = _gregory(nw, dw) / vg
    wq2 = np.zeros(nw + 1)
    wq2[::2] = _gregory(nw // 2, 2 * dw) / vg[::2]
    return {"qn": qn, "qeval": qeval, "wq": wq, "wq2": wq2, "omega": om, "M": M,
            "dw": dw, "jbins": jb, "dt": dt, "shift": shift}


def _cheb_eps(rtol):
    """Truncation level of the Jacobi-Anger series (relative to sum |b|)."""
    return max(1e-14, 1e-4 * rtol)


def _lag_integrals(chi, wt, wt2, dt, Ds, sep, qn, omega, d, pool):
    """Angular integrals of |a|^2 on the nodes for a path whose separations
    depend on the lag alone, r(s) = |x(t + s) - x(t)|:

        int dOmega |a(D, q n)|^2 = |S^{d-1}| sum_m c_m e^{i (D + w) s_m} j_d(q r(s_m)),

    the double trapezoid sum over time pairs regrouped by lag s_m = m dt, with
    c_m = sum_i b_i b_{i+m} (b = chi w, computed by FFT; c_{-m} = c_m) and
    the angular average of e^{-i k.dx} over an isotropic gas, j_3 = sin x/x,
    j_2 = J_0(x), j_1 = cos x.  Columns: each D with the full time rule,
    then each D with its every-other-point sub-rule (weights wt2)."""
    from scipy import fft as sfft
    from scipy.special import j0

    n = chi.size
    nfft = sfft.next_fast_len(2 * n)

    def autocorr(b):
        B = sfft.rfft(b, nfft)
        return sfft.irfft(B * B.conj(), nfft)[:n]

    lag = dt * np.arange(n)
    mult = np.full(n, 2.0)
    mult[0] = 1.0
    cs = [autocorr(chi * wt), autocorr(chi * wt2)]
    coef = np.stack([mult * c * np.exp(1j * D * lag) for c in cs for D in Ds], axis=1)
    measure = {1: 2.0, 2: 2 * np.pi, 3: 4 * np.pi}[d]
    out = np.empty((qn.size, coef.shape[1]))
    rows = int(max(1, 4e5 // n))          # blocks of ~4e5 (node, lag) pairs

    def block(i0):
        i1 = min(qn.size, i0 + rows)
        x = np.outer(qn[i0:i1], sep)
        if d == 3:
            kern = np.sinc(x / np.pi)
        elif d == 2:
            kern = j0(x)
        else:
            kern = np.cos(x)
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


def _run_fft(runs, X, q_h, eps_c, pool, workers):
    """Every FFT-route run (name, rule, reductions, channel columns, with
    sub-rule, nodes, transform length, node bins, channel shifts) split
    into direction chunks over the thread pool; returns the summed
    R[j, r, c] per run name."""
    items = []
    for run in runs:
        n = run[1].size
        nchunks = max(1, min(n, 2 * workers if workers > 1 else 1))
        for sl in np.array_split(np.arange(n), nchunks):
            if sl.size:
                items.append((run, sl))
    items.sort(key=lambda it: -it[1].size * it[0][6])

    def job(it):
        (name, rule, red, chans, want_sub, qn, M, jbins, shifts), sl = it
        return name, fft_amplitude_work(rule.dirs[sl], red[sl], X, chans, qn, M, jbins,
                                        q_h, q_h, eps_c, want_sub, shifts=shifts)

    results = pool.map(job, items) if (pool is not None and len(items) > 1) \
        else map(job, items)
    outs = {}
    for name, R in results:
        outs[name] = outs[name] + R if name in outs else R
    return outs


def _evaluate(condensate, probe, trajectory, switching, d, disp, xi, c, tu, s, Tdl,
              Om, Ds, t_lo, t_hi, bw, corr, vmax, amax, chirp, q_max, fac_t, fac_q, ang_fac,
              rtol, spectrum, spectrum_bins, pool, workers, max_memory, method):
    """One pass at fixed resolution; returns values (dimensionless, units of
    A xi^-d (xi/c)^2), error estimates per part and channel, grids."""
    # --- time grid: 2 dt must clear the highest frequency plus bandwidth ---
    F = max(abs(Om) + float(disp.omega(q_max)) + q_max * vmax + bw
            + chirp * math.sqrt(q_max * amax), 1e-12)
    dt_target = math.pi / F / fac_t
    nt = max(8, int(math.ceil((t_hi - t_lo) / dt_target)))
    nt += nt % 2

    def time_grid(nt, dt=None):
        """Nodes, switching and trapezoid weights (full rule and its
        every-other-point sub-rule) of nt steps from t_lo, of step dt
        (default: ending at t_hi)."""
        dt = (t_hi - t_lo) / nt if dt is None else dt
        t = t_lo + dt * np.arange(nt + 1)
        chi = np.asarray(switching(t * tu), float)
        wt = np.full(t.size, dt)
        wt[0] = wt[-1] = 0.5 * dt
        wt2 = np.zeros(t.size)
        wt2[::2] = 2 * dt
        wt2[0] = wt2[-1] = dt
        return t, dt, chi, wt, wt2

    def columns(t, chi, wt, wt2):
        cols = [chi * wt * np.exp(1j * D * t) for D in Ds]
        cols += [chi * wt2 * np.exp(1j * D * t) for D in Ds]
        return np.ascontiguousarray(np.stack(cols, axis=1))

    t, dt, chi, wt, wt2 = time_grid(nt)
    X, V = _positions(trajectory, t * tu, d, xi, c)
    vmax_grid = float(np.sqrt((V ** 2).sum(axis=1)).max())
    mask = chi >= 1e-2 * rtol
    geom, centre = _geometry(d, X, V, chi, mask, corr, max(vmax, vmax_grid))
    X = np.ascontiguousarray(X - centre)
    cols = columns(t, chi, wt, wt2)
    nD = len(Ds)

    # --- spectrum bins ------------------------------------------------------
    edges = None
    if spectrum:
        if d == 3:
            nb = spectrum_bins or 40
            edges = np.linspace(-1, 1, nb + 1)
        elif d == 2:
            nb = spectrum_bins or 72
            edges = np.linspace(-np.pi, np.pi, nb + 1)
    nbins_req = (edges.size - 1) if (spectrum and edges is not None) else 0
    built = {}

    def rule_of(spec, with_bins):
        key = (spec, with_bins)
        if key not in built:
            built[key] = _make_rule(spec, geom, edges if with_bins else None)
        return built[key]

    # --- radial grids of the amplitude routes, and their costs ----------------
    vg_max = float(disp.group_velocity(q_max))
    grids = {}
    # a path whose separations depend on the lag alone (linear, circular)
    # lets the angular integral be done exactly: the lag route
    sep_fn = getattr(trajectory, "separation", None)
    lag_ok = (not spectrum and callable(sep_fn)
              and sep_fn(np.zeros(1)) is not None)
    if method == "lag" and not lag_ok:
        raise InputError("method", "the lag route needs a path whose separations "
                                   "|x(t + s) - x(t)| depend on the lag s alone (linear, "
                                   "circular) and no direction spectrum; use 'auto'")
    if method in ("auto", "lag") and lag_ok:
        grids["lag"] = _radial_phasor(disp, q_max, vg_max * corr + geom.D + 1e-300, fac_q)
    if method in ("auto", "phasor"):
        grids["phasor"] = _radial_phasor(disp, q_max, vg_max * corr + geom.D + 1e-300,
                                         fac_q)
    if method in ("auto", "fft"):
        vg_min = float(np.min(disp.group_velocity(np.linspace(0.0, q_max, 65))))
        # two detunings +-Omega share one set of transforms when 2 Omega is a
        # whole number of frequency steps; the time step is then set by the
        # grid (a little finer) and the window extended by under one step,
        # where the (smooth) switching has vanished -- not for a hard cut
        pair = 2 * abs(Om) if (len(Ds) == 2 and Om != 0 and not switching.hard_cut) else None
        grids["fft"] = _radial_fft(disp, q_max, corr + geom.D / vg_min + 1e-300, fac_q, dt,
                                   pair)
    for name, g in grids.items():
        if name == "lag":
            g["cost"] = _COST_LAG * g["qn"].size * t.size
            g["specs"] = None
            continue
        # relative accuracy each node's angular integral needs, from its
        # weight q^(d-1) S |F|^2 dq against the largest one (|a|^2 is bounded
        # by (int chi)^2 at every node); the angular check confirms it
        q_e = g["qeval"]
        wnode = q_e ** (d - 1) * disp.structure_factor(q_e) * np.exp(-(q_e * s) ** 2)
        if name == "fft":
            wnode = wnode / disp.group_velocity(g["qn"])        # dq per node
        g["eps_node"] = np.clip(0.1 * rtol * wnode.max() / np.maximum(wnode, 1e-300),
                                1e-16, 0.3)
        if name == "phasor":
            specs = [_rule_spec(geom, float(q), ang_fac, nbins_req, float(e))
                     for q, e in zip(g["qn"], g["eps_node"])]
            starts = [0] + [i for i in range(1, specs.__len__()) if specs[i] != specs[i - 1]]
            g["bands"] = [np.arange(a, b) for a, b in zip(starts, starts[1:] + [len(specs)])]
            g["specs"] = specs
            size = sum(rule_of(specs[b[0]], False).size * b.size for b in g["bands"])
            if d == 3:
                size += sum(rule_of(_rule_spec(geom, float(g["qn"][b[-1]]), 0.75 * ang_fac,
                                               False, float(g["eps_node"][b].min())),
                                    False).size * (-(-b.size // _ANGLE_SAMPLE))
                            for b in g["bands"])
            g["cost"] = _COST_PHASOR * size * t.size * (2 * nD + 2) / 6
        else:
            g["top_spec"] = _cover_spec(geom, g["qn"], g["eps_node"], ang_fac, nbins_req)
            g["check_spec"] = _cover_spec(geom, g["qn"], g["eps_node"], 0.75 * ang_fac, 0)
            K = chebyshev_degree(0.5 * q_max * 0.5 * geom.extent, _cheb_eps(rtol))
            nsig = 1 if g["shift"] else nD

            def per_dir(M):
                return (nsig * K * (_COST_FFT * M * math.log2(max(M, 4))
                                    + _COST_SIGNAL * t.size)
                        + _COST_BESSEL * t.size * (2 * K + 0.5 * q_max * geom.extent + 12))
            g["cost"] = rule_of(g["top_spec"], False).size * per_dir(g["M"])
            if d == 3 and g["check_spec"] != g["top_spec"]:
                g["cost"] += rule_of(g["check_spec"], False).size * per_dir(
                    g["M"] // _ANGLE_SAMPLE)
            if min(abs(D) for D in Ds) * corr < _ENDPOINT_RESONANCE:
                # the amplitude is resonant at k -> 0 (density probe, or a
                # gap inside the switching bandwidth): a peak of width 1/T_c
                # at the end of the frequency grid, which the end-corrected
                # rule resolves only with several refinements (measured)
                g["cost"] *= 4.0
            g["specs"] = None
    route = min(grids, key=lambda k: grids[k]["cost"])
    g = grids[route]
    qn, qeval, wq, wq2, omega, specs = (g[k] for k in ("qn", "qeval", "wq", "wq2", "omega",
                                                        "specs"))
    nq = qn.size - 1

    Ebar = np.zeros((nq + 1, cols.shape[1]))      # angular integrals
    Ebar_sub = np.zeros_like(Ebar) if d == 2 else None
    ang_err_nodes = np.zeros((nq + 1, cols.shape[1]))
    bins_acc = None
    if spectrum:
        nbins = 2 if d == 1 else edges.size - 1
        bins_acc = np.zeros((nq + 1, nbins, nD))

    def reductions(rule):
        reds = [rule.weights[:, None]]
        if d == 2:
            reds.append(rule.sub[:, None])
        if spectrum:
            reds.append(rule.bins)
        return np.ascontiguousarray(np.concatenate(reds, axis=1))

    def store(idx, R):
        Ebar[idx] = R[:, 0, :]
        col = 1
        if d == 2:
            Ebar_sub[idx] = R[:, 1, :]
            col = 2
        if spectrum:
            bins_acc[idx] = R[:, col:, :nD]

    if route == "phasor":
        # bands of q sharing an angular rule: each node's rule is sized at its
        # own q on a ladder of sizes, so a run of equal specs (a band) is
        # served by the rule of its largest node
        h = g["h"]
        bands = g["bands"]
        sizes = []
        tasks, meta = [], []
        for idx in bands:
            spec = specs[idx[0]]
            rule = rule_of(spec, spectrum)
            sizes.append(rule.size)
            tasks.append((rule, reductions(rule), cols, qn[idx], h, omega[idx]))
            meta.append(("main", idx))
            if d == 3:
                # angular check: a rule of 3/4 the degree on every 4th node
                sel = idx[::_ANGLE_SAMPLE]
                cspec = _rule_spec(geom, float(qn[idx[-1]]), 0.75 * ang_fac, False,
                                   float(g["eps_node"][idx].min()))
                if sel.size and cspec != spec:
                    crule = rule_of(cspec, False)
                    tasks.append((crule, np.ascontiguousarray(crule.weights[:, None]),
                                  np.ascontiguousarray(cols[:, :nD]), qn[sel],
                                  _ANGLE_SAMPLE * h, omega[sel]))
                    meta.append(("check", sel))
        results = _run_bands(tasks, X, t, pool, workers, max_memory)
        checks = []
        for (kind, idx), R in zip(meta, results):
            if kind == "check":
                checks.append((idx, R))
            else:
                store(idx, R)
        for sel, Rc in checks:
            ang_err_nodes[sel, :nD] = (Ebar[sel, :nD] - Rc[:, 0, :]) * _ANGLE_SAMPLE
        nb_bands = len(bands)
        max_dirs = int(max(sizes)) if sizes else 0
    elif route == "lag":
        # angular integral exact: int dOmega |a|^2 = measure x sum over lags
        # of the switching's autocorrelation times j_d(q r(s)) e^{i(D+w)s}
        sep = np.asarray(sep_fn(dt * np.arange(t.size) * tu), float) / xi
        Ebar[:] = _lag_integrals(chi, wt, wt2, dt, Ds, sep, qn, omega, d, pool)
        nb_bands = 0
        max_dirs = 0
    else:
        # one rule, that of the most demanding node, serves every node: a
        # direction's FFT yields all of them at once
        idx_all = np.arange(nq + 1)
        rule = rule_of(g["top_spec"], spectrum)
        eps_c = _cheb_eps(rtol)
        if g["shift"]:
            # commensurate grid: rebuild the time nodes at the grid's step
            nt_c = int(math.ceil((t_hi - t_lo) / g["dt"] * (1 - 1e-12)))
            nt_c += nt_c % 2
            t, dt, chi, wt, wt2 = time_grid(nt_c, g["dt"])
            X, _ = _positions(trajectory, t * tu, d, xi, c)
            X = np.ascontiguousarray(X - centre)
            cols = columns(t, chi, wt, wt2)
            Dlo = int(np.argmin(Ds))
            shifts = [(0, int(round((D - Ds[Dlo]) / g["dw"]))) for D in Ds]
            sig = cols[:, Dlo:Dlo + 1]
        else:
            shifts = None
            sig = cols[:, :nD]
        M = g["M"]
        runs = [("main", rule, reductions(rule), sig, True, qn, M, g["jbins"], shifts)]
        if d == 3:
            cspec = g["check_spec"]
            if cspec != g["top_spec"]:
                crule = rule_of(cspec, False)
                # on every 4th node: the transform of length M/4 (time
                # series folded) gives exactly those frequencies
                sel = slice(0, None, _ANGLE_SAMPLE)
                cshifts = None if shifts is None else \
                    [(sg, sh // _ANGLE_SAMPLE) for sg, sh in shifts]
                runs.append(("check", crule, np.ascontiguousarray(crule.weights[:, None]),
                             sig, False, qn[sel], M // _ANGLE_SAMPLE,
                             g["jbins"][sel] // _ANGLE_SAMPLE, cshifts))
        outs = _run_fft(runs, X, 0.5 * float(qn[-1]), eps_c, pool, workers)
        R = outs["main"]
        # columns: full per channel, then sub-rule per channel (as cols)
        store(idx_all, R)
        if "check" in outs:
            sel = slice(0, None, _ANGLE_SAMPLE)
            ang_err_nodes[sel, :nD] = (Ebar[sel, :nD] - outs["check"][:, 0, :]) * _ANGLE_SAMPLE
        nb_bands = 1
        max_dirs = rule.size
    if d == 2 and route != "lag":
        ang_err_nodes[:, :nD] = Ebar[:, :nD] - Ebar_sub[:, :nD]

    # --- assemble channels ----------------------------------------------------
    Sq = disp.structure_factor(qeval)
    ff = np.exp(-(qeval * s) ** 2)
    geo = qeval ** (d - 1) / (2 * np.pi) ** d
    base = geo * Sq * ff
    if Tdl > 0:
        with np.errstate(over="ignore", divide="ignore"):
            nth = 1.0 / np.expm1(disp.omega(qeval) / Tdl)
    else:
        nth = np.zeros_like(qeval)

    def channels(E):
        """Per-node integrands of each channel from angular integrals E
        (columns per D)."""
        if nD == 2:
            Ep, Em = E[:, 0], E[:, 1]
            return {"up": base * ((1 + nth) * Ep + nth * Em),
                    "down": base * ((1 + nth) * Em + nth * Ep),
                    "up_emission": base * (1 + nth) * Ep,
                    "down_emission": base * (1 + nth) * Em,
                    "energy": base * (1 + nth) * Ep * omega}
        E0 = E[:, 0]
        return {"emission": base * (1 + nth) * E0,
                "absorption": base * nth * E0,
                "energy": base * (1 + nth) * E0 * omega}

    fine = channels(Ebar[:, :nD])
    tcoarse = channels(Ebar[:, nD:])
    adiff = channels(ang_err_nodes[:, :nD])
    values = {k: float(wq @ v) for k, v in fine.items()}
    main = ("up", "down") if nD == 2 else ("emission",)
    errors = {"radial": {}, "time": {}, "angular": {}, "cutoff": {}}
    tail = slice(int(0.95 * nq), nq + 1)
    for ch in main:
        errors["radial"][ch] = abs(float(wq2 @ fine[ch]) - values[ch])
        errors["time"][ch] = abs(float(wq @ tcoarse[ch]) - values[ch])
        errors["angular"][ch] = abs(float(wq @ adiff[ch]))
        errors["cutoff"][ch] = abs(float(wq[tail] @ fine[ch][tail]))
    # a channel far below the largest one (e.g. an off-resonant, exponentially
    # small probability) is judged against a floor of FLOOR * the largest
    scale = max(abs(values[ch]) for ch in main)
    ref = {ch: max(abs(values[ch]), _FLOOR * scale, 1e-300) for ch in main}
    tolerances = {ch: rtol * ref[ch] for ch in main}
    achieved = max(sum(errors[k][ch] for k in errors) / ref[ch] for ch in main)
    out = {"values": values, "errors": errors, "tolerances": tolerances,
           "achieved": achieved,
           "grid": {"n_times": int(t.size), "time_step": dt * tu,
                    "n_wavenumbers": int(nq + 1), "k_max": float(qn[-1]) / xi,
                    "wavenumber_step": float(qn[-1] - qn[-2]) / xi, "n_bands": nb_bands,
                    "max_directions": max_dirs,
                    "path_diameter": geom.D * xi, "method": route}}
    out["costs"] = {k: v["cost"] for k, v in grids.items()}
    if route == "fft":
        out["grid"]["fft_length"] = int(g["M"])
        out["grid"]["frequency_step"] = float(g["dw"]) / tu
    if spectrum:
        emis = {}
        dirs_int = {}
        if nD == 2:
            emis["em_plus"] = base * (1 + nth) * Ebar[:, 0]
            emis["em_minus"] = base * (1 + nth) * Ebar[:, 1]
            for j, name in enumerate(("em_plus", "em_minus")):
                dirs_int[name] = wq @ ((base * (1 + nth))[:, None] * bins_acc[:, :, j])
        else:
            emis["em0"] = base * (1 + nth) * Ebar[:, 0]
            dirs_int["em0"] = wq @ ((base * (1 + nth))[:, None] * bins_acc[:, :, 0])
        out["spectrum"] = {"q": qn, "wq": wq, "dN_dq": emis, "directions": dirs_int,
                           "edges": edges,
                           "axis": geom.spec_axis}
    return out
