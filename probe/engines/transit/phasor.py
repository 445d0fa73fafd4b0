"""The phasor route: direct sums over time on wavenumber-uniform nodes.

For each band of q sharing a rule, e^{-i q n.x(t)} is advanced from one q
node to the next by one complex multiplication (two cos/sin pairs per
direction and time: the start and the step) and contracted with
chi w_t e^{i(D + w_q)t} by a real matrix product on the interleaved
(re, im) storage; directions are swept in cache-sized blocks over runs of
16 q nodes.  Work is split into chunks of directions and q that fit in
``max_memory`` and run on threads.  Each node's rule is sized at its own q
on a ladder of sizes, so a run of nodes with equal rules (a band) is served
by the rule of its largest node.  Cost: times x nodes x directions.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from probe.engines.transit.grids import RadialGrid, radial_phasor
from probe.engines.transit.route import AngularSums, Route
from probe.engines.transit.rules import ANGLE_SAMPLE, rule_spec, rule_specs

_QCHUNK = 64         # smallest q sub-range handed to one thread
_BLOCK_BYTES = 1.0e6  # e^{-i q n.x} and its step factor per direction block
_QBLOCK = 16          # q nodes per pass over the direction blocks
# seconds per (direction, node, time) and per (node, time) -- the contraction
# matrices of a node, whatever its rule -- with four channel columns (2
# threads; CPU time on the development machine under load, scaled so that the
# FFT and pair routes' constants measured beside them keep their values)
_COST_PHASOR = 4.5e-9
_COST_PHASOR_NODE = 1.1e-7


def _cis(x):
    """exp(-i x) for real x via cos and sin (faster than the complex exp)."""
    out = np.empty(x.shape, complex)
    np.cos(x, out=out.real)
    np.sin(x, out=out.imag)
    np.negative(out.imag, out=out.imag)
    return out


def _coefficient_matrices(cols, t, omega):
    """The contraction matrices of a run of nodes, (nb, 2 Nt, 2 nc):
    cols e^{i w t} as the real matrix acting on interleaved (re, im) rows,
    (zr + i zi)(cr + i ci) with rows (zr, zi) against columns (re, im)."""
    nb, nt, nc = omega.size, t.size, cols.shape[1]
    ph = omega[:, None] * t[None, :]
    C = np.empty(ph.shape, complex)
    np.cos(ph, out=C.real)
    np.sin(ph, out=C.imag)
    C = C[:, :, None] * cols[None, :, :]            # (nb, Nt, nc)
    M = np.empty((nb, nt, 2, nc, 2))
    M[:, :, 0, :, 0] = C.real
    M[:, :, 0, :, 1] = C.imag
    M[:, :, 1, :, 0] = -C.imag
    M[:, :, 1, :, 1] = C.real
    return M.reshape(nb, 2 * nt, 2 * nc)


def _amplitude_work(dirs, red, X, t, cols, q, h, omega):
    """Reductions R[i, r, c] = sum_j red[j, r] |a_c(q_i, n_j)|^2 with
    a_c(q, n) = sum_m cols[m, c] e^{i w(q) t_m} e^{-i q n.x_m}.

    The nodes are q_i = q_0 + i h: e^{-i q_0 n.x} and the step factor
    e^{-i h n.x} are evaluated once and each node multiplies by the step
    (phase error ~ i * 1e-16).  The directions are swept in blocks small
    enough that a block's e^{-i q n.x} and step factor stay in cache over a
    run of q nodes, and the contraction over time is a real matrix product
    on the interleaved (re, im) storage of e^{-i q n.x} (OpenBLAS's complex
    product with a handful of columns runs at a fraction of its real one)."""
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
        M = _coefficient_matrices(cols, t, omega[q0:q1])
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


def _split_band(rule, q, nt, workers, max_memory):
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
        for dc, qi in _split_band(rule, q, t.size, workers, max_memory):
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


@dataclass
class PhasorPlan:
    """The q-uniform grid, each node's angular tolerance ``eps_node``, its
    rule ``specs``, the ``bands`` (index arrays) of nodes sharing one and
    the ``angular`` factor on the degrees."""

    grid: RadialGrid
    eps_node: np.ndarray
    specs: list
    bands: list
    angular: float


class PhasorRoute(Route):
    """Direct sums on wavenumber-uniform nodes, per band of a shared rule."""

    name = "phasor"

    def plan(self, problem, sample, res):
        geom = sample.geom
        vg_max = float(problem.disp.group_velocity(res.q_max))
        grid = radial_phasor(problem.disp, res.q_max, vg_max * problem.corr + geom.D + 1e-300,
                             res.radial)
        eps_node = problem.node_tolerances(grid)
        nbins = sample.rules.n_bins
        specs = rule_specs(geom, grid.qn, res.angular, nbins, eps_node)
        starts = [0] + [i for i in range(1, len(specs)) if specs[i] != specs[i - 1]]
        bands = [np.arange(a, b) for a, b in zip(starts, starts[1:] + [len(specs)])]
        return PhasorPlan(grid, eps_node, specs, bands, res.angular)

    @staticmethod
    def _check_spec(geom, plan, band):
        """Rule of the 3D angular check of a band: 3/4 the degree."""
        return rule_spec(geom, float(plan.grid.qn[band[-1]]), 0.75 * plan.angular, False,
                         float(plan.eps_node[band].min()))

    def cost(self, problem, sample, plan):
        rules = sample.rules
        size = sum(rules.size(plan.specs[b[0]]) * b.size for b in plan.bands)
        nodes = plan.grid.qn.size
        if problem.d == 3:
            checked = [-(-b.size // ANGLE_SAMPLE) for b in plan.bands]
            size += sum(rules.size(self._check_spec(sample.geom, plan, b)) * n
                        for b, n in zip(plan.bands, checked))
            nodes += sum(checked)
        return ((_COST_PHASOR * size + _COST_PHASOR_NODE * nodes) * sample.time.size
                * (2 * problem.nD + 2) / 6)

    def integrals(self, problem, sample, plan, pool):
        grid, rules, cols, nD = plan.grid, sample.rules, sample.cols, problem.nD
        sums = AngularSums(problem, grid.qn.size, sample.time)
        tasks, meta, sizes = [], [], []
        for idx in plan.bands:
            spec = plan.specs[idx[0]]
            rule = rules.rule(spec, problem.spectrum)
            sizes.append(rule.size)
            tasks.append((rule, sums.reductions(rule), cols, grid.qn[idx], grid.h,
                          grid.omega[idx]))
            meta.append(("main", idx))
            if problem.d == 3:
                # angular check: a rule of 3/4 the degree on every 4th node
                sel = idx[::ANGLE_SAMPLE]
                cspec = self._check_spec(sample.geom, plan, idx)
                if sel.size and cspec != spec:
                    crule = rules.rule(cspec)
                    tasks.append((crule, np.ascontiguousarray(crule.weights[:, None]),
                                  np.ascontiguousarray(cols[:, :nD]), grid.qn[sel],
                                  ANGLE_SAMPLE * grid.h, grid.omega[sel]))
                    meta.append(("check", sel))
        results = _run_bands(tasks, sample.X, sample.time.t, pool, problem.workers,
                             problem.max_memory)
        for (kind, idx), R in zip(meta, results):
            if kind == "main":
                sums.store(idx, R)
        for (kind, sel), Rc in zip(meta, results):
            if kind == "check":
                sums.store_check(sel, Rc)
        sums.sub_rule_check()
        sums.n_bands = len(plan.bands)
        sums.max_directions = int(max(sizes)) if sizes else 0
        return sums
