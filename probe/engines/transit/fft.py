"""The FFT route: frequency-uniform nodes, one FFT over time per direction
and Jacobi-Anger term.

The radial nodes are uniform in frequency, w_j = j dw with
dw = 2 pi/(M dt), and the first pass puts the sub-rule (2 dw) at the
conjugate length T_c + D/min(v_g) in w, the rule in w carrying the Jacobian
1/v_g (:func:`probe.engines.transit.grids.radial_fft`).  Every direction's
amplitudes on all nodes come from K length-M FFTs of
b_m e^{-i q_c u_m} T_k(u_m/U) (the Jacobi-Anger series of e^{-i (q - q_c) u},
see :mod:`probe.engines.fft_kernel`), with the even and odd time samples
transformed apart so that the time sub-rule comes free.  For a two-level
probe dw divides 2 Omega, so both detunings read one set of transforms (the
time step is adjusted to the grid and the window extended by under one step;
not for a hard cut).  One angular rule, the cover of every node's, serves
all nodes; the 3D angular check is the cover at 3/4 the degree on every 4th
node (a transform of length M/4 of the folded time series gives exactly
those frequencies).

Cost: directions x K x M log M, against the direct sums' times x nodes x
directions -- cheaper for long transits of paths of bounded size.  When the
amplitude is resonant at k -> 0 (|D| T_c < 10: the density probe, or a gap
inside the switching bandwidth) the integrand has a peak of width 1/T_c at
the start of the frequency grid, which its end-corrected rule resolves only
after several refinements; the cost model counts them.
"""
from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from probe.engines.fft_kernel import chebyshev_degree, fft_amplitude_work
from probe.engines.transit.grids import RadialGrid, radial_fft
from probe.engines.transit.route import AngularSums, Route
from probe.engines.transit.rules import ANGLE_SAMPLE, cover_spec

# seconds (2 threads on the development machine; only the ratios to the
# other routes' constants matter): per M log2 M of one transform, per time
# sample of one signal, per Bessel step
_COST_FFT = 1.0e-9
_COST_SIGNAL = 4.0e-9
_COST_BESSEL = 1.5e-9
_ENDPOINT_RESONANCE = 10.0   # |D| T_c below which a(k -> 0) is resonant


def _cheb_eps(rtol):
    """Truncation level of the Jacobi-Anger series (relative to sum |b|)."""
    return max(1e-14, 1e-4 * rtol)


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


@dataclass
class FFTPlan:
    """The frequency-uniform grid, its nodes' angular tolerances, the cover
    rule ``top_spec`` of every node, the 3D check rule ``check_spec`` and
    the pass's wavenumber cutoff ``q_max``."""

    grid: RadialGrid
    eps_node: np.ndarray
    top_spec: tuple
    check_spec: tuple
    q_max: float


class FFTRoute(Route):
    """Frequency-uniform nodes, amplitudes by FFT over time."""

    name = "fft"

    def plan(self, problem, sample, res):
        disp, geom = problem.disp, sample.geom
        vg_min = float(np.min(disp.group_velocity(np.linspace(0.0, res.q_max, 65))))
        # two detunings +-Omega share one set of transforms when 2 Omega is a
        # whole number of frequency steps; the time step is then set by the
        # grid (a little finer) and the window extended by under one step,
        # where the (smooth) switching has vanished -- not for a hard cut
        Om = problem.Om
        pair = 2 * abs(Om) if (problem.nD == 2 and Om != 0
                               and not problem.switching.hard_cut) else None
        grid = radial_fft(disp, res.q_max, problem.corr + geom.D / vg_min + 1e-300,
                          res.radial, sample.time.dt, pair)
        eps_node = problem.node_tolerances(grid, per_frequency=True)
        top = cover_spec(geom, grid.qn, eps_node, res.angular, sample.rules.n_bins)
        check = cover_spec(geom, grid.qn, eps_node, 0.75 * res.angular, 0)
        return FFTPlan(grid, eps_node, top, check, res.q_max)

    def cost(self, problem, sample, plan):
        grid, geom, nt, q_max = plan.grid, sample.geom, sample.time.size, plan.q_max
        K = chebyshev_degree(0.5 * q_max * 0.5 * geom.extent, _cheb_eps(problem.rtol))
        nsig = 1 if grid.shift else problem.nD

        def per_dir(M):
            return (nsig * K * (_COST_FFT * M * math.log2(max(M, 4)) + _COST_SIGNAL * nt)
                    + _COST_BESSEL * nt * (2 * K + 0.5 * q_max * geom.extent + 12))
        cost = sample.rules.size(plan.top_spec) * per_dir(grid.M)
        if problem.d == 3 and plan.check_spec != plan.top_spec:
            cost += sample.rules.size(plan.check_spec) * per_dir(grid.M // ANGLE_SAMPLE)
        if min(abs(D) for D in problem.Ds) * problem.corr < _ENDPOINT_RESONANCE:
            # the amplitude is resonant at k -> 0 (density probe, or a gap
            # inside the switching bandwidth): a peak of width 1/T_c at the
            # end of the frequency grid, which the end-corrected rule
            # resolves only with several refinements (measured)
            cost *= 4.0
        return cost

    def _signals(self, problem, sample, grid):
        """(path sample, signals, channel shifts): on a commensurate grid the
        time nodes are rebuilt at the grid's step and both detunings read
        the transforms of the lower one, shifted by whole bins."""
        if not grid.shift:
            return sample, sample.cols[:, :problem.nD], None
        sample = problem.resample(sample, grid.dt)
        Ds = problem.Ds
        Dlo = int(np.argmin(Ds))
        shifts = [(0, int(round((D - Ds[Dlo]) / grid.dw))) for D in Ds]
        return sample, sample.cols[:, Dlo:Dlo + 1], shifts

    def integrals(self, problem, sample, plan, pool):
        # one rule, that of the most demanding node, serves every node: a
        # direction's FFT yields all of them at once
        grid = plan.grid
        rule = sample.rules.rule(plan.top_spec, problem.spectrum)
        sample, sig, shifts = self._signals(problem, sample, grid)
        sums = AngularSums(problem, grid.qn.size, sample.time)
        runs = [("main", rule, sums.reductions(rule), sig, True, grid.qn, grid.M, grid.jbins,
                 shifts)]
        sel = slice(0, None, ANGLE_SAMPLE)
        if problem.d == 3 and plan.check_spec != plan.top_spec:
            crule = sample.rules.rule(plan.check_spec)
            # on every 4th node: the transform of length M/4 (time series
            # folded) gives exactly those frequencies
            cshifts = None if shifts is None else \
                [(sg, sh // ANGLE_SAMPLE) for sg, sh in shifts]
            runs.append(("check", crule, np.ascontiguousarray(crule.weights[:, None]), sig,
                         False, grid.qn[sel], grid.M // ANGLE_SAMPLE,
                         grid.jbins[sel] // ANGLE_SAMPLE, cshifts))
        outs = _run_fft(runs, sample.X, 0.5 * float(grid.qn[-1]), _cheb_eps(problem.rtol),
                        pool, problem.workers)
        # columns: full per channel, then sub-rule per channel (as cols)
        sums.store(np.arange(grid.qn.size), outs["main"])
        if "check" in outs:
            sums.store_check(sel, outs["check"])
        sums.sub_rule_check()
        sums.n_bands = 1
        sums.max_directions = rule.size
        return sums

    def grid_report(self, problem, plan):
        return {"fft_length": int(plan.grid.M),
                "frequency_step": float(plan.grid.dw) / problem.tu}
