"""Many gaps of one transit from one set of lag sums.

A gap changes only the detuning D of the amplitudes a(D, k); in the pair
route the lag sums U_l(q) do not depend on D at all
(:class:`~probe.engines.transit.pairs.LagSpectrum`), so the transits of a
probe at many gaps share them: the sums are computed once on the grid of
the most demanding channel (the largest wavenumber cutoff and highest
frequency), and each gap costs lags x nodes.  Every channel keeps its own
error budget on that grid; a channel that misses it refines the shared grid
(as the driver does for one transit) and only the channels still open are
evaluated again.  Where the lag sums would cost more than the transits one
at a time (long paths, many Chebyshev terms), or not fit in ``max_memory``,
:class:`GapScan` runs them one at a time.

Python use::

    scan = GapScan(condensate, trajectory, switching, rtol=1e-4)
    results = scan.results([probe_with_gap(g) for g in gaps], progress=callback)

``progress`` (optional) is called with the number of probes just finished,
as a sweep's progress callback is.
"""
from __future__ import annotations

from concurrent.futures import ThreadPoolExecutor

from probe.engines.transit.driver import (_SHARE, _checked_inputs, _si_result,
                                          transit_probabilities)
from probe.engines.transit.estimate import estimate
from probe.engines.transit.pairs import PairRoute
from probe.engines.transit.problem import Resolution, TransitProblem
from probe.engines.transit.routes import candidates, cheapest
from probe.engines.transit.threads import single_threaded_blas

_PAIRS = PairRoute()
#: bytes per (lag, node) of the lag sums kept for every gap (cos and sin
#: parts of the full rule and of the sub-rule's half as many lags)
_BYTES_PER_LAG_NODE = 8 * 2 * 1.5
#: seconds per (lag, node) of one probe's evaluation on shared lag sums
_COST_GAP = 8e-9


class _Shared:
    """The lag sums of one grid: the envelope problem they were posed on,
    its resolution, the route's plan and the :class:`LagSpectrum`."""

    def __init__(self, env, res, pool):
        self.env, self.res, self.pool = env, res, pool
        self.compute()

    def compute(self):
        env, res = self.env, self.res
        self.sample = env.sample(res)
        self.plan = _PAIRS.plan(env, self.sample, res)
        self.spectrum = _PAIRS.spectrum(env, self.plan.sample, self.plan, self.pool)

    def covers(self, problem):
        """Whether the grid serves ``problem`` (its cutoff and highest
        frequency are no larger than the envelope's)."""
        return (problem.q_max <= self.env.q_max * (1 + 1e-12)
                and problem.highest_frequency(problem.q_max)
                <= self.env.highest_frequency(self.env.q_max) * (1 + 1e-12))

    def evaluate(self, problem):
        """(PassResult, parts over their share) of ``problem`` on this grid."""
        sums = self.spectrum.sums(problem)
        out = estimate(problem, _PAIRS, self.plan, sums, self.plan.sample.geom)
        tol, errs = out.tolerances, out.errors
        bad = {k: any(errs[k][ch] > _SHARE * tol[ch] for ch in tol) for k in errs}
        return out, bad

    def refine(self, bad):
        """Refine the shared grid where some channel missed its share: a
        missed time estimate alone (its aliasing spoils the others) by the
        route's own time ladder, else the pass's time step; otherwise every
        part that missed."""
        if bad["time"]:
            if not _PAIRS.climb(self.env, self.sample, self.res):
                self.res.refine({k: k == "time" for k in bad})
        else:
            self.res.refine(bad)
        self.compute()


class GapScan:
    """Transits of probes that differ in their gaps (or any detuning) along
    one path, gas and switching, from shared lag sums; see the module
    docstring.  Arguments as for :func:`transit_probabilities`."""

    def __init__(self, condensate, trajectory, switching, rtol=1e-4, workers=None,
                 max_memory=500e6, max_refinements=4):
        self.rtol = _checked_inputs(switching, rtol, "auto")
        self.condensate, self.trajectory, self.switching = condensate, trajectory, switching
        self.workers, self.max_memory = workers, max_memory
        self.max_refinements = max_refinements
        self.shared = None
        self.one_at_a_time = None

    def _problems(self, probe):
        return [TransitProblem(self.condensate, probe, self.trajectory, self.switching,
                               self.rtol, ch, workers=self.workers,
                               max_memory=self.max_memory)
                for ch in probe.channels()]

    def _single(self, probe):
        return transit_probabilities(self.condensate, probe, self.trajectory,
                                     self.switching, rtol=self.rtol, workers=self.workers,
                                     max_memory=self.max_memory,
                                     max_refinements=self.max_refinements)

    def _worthwhile(self, env, n_probes):
        """Whether shared lag sums (and lags x nodes per probe) beat
        ``n_probes`` transits one at a time on the first pass's cost models,
        and fit in memory."""
        res = Resolution(env.q_max)
        sample = env.sample(res)
        plan = _PAIRS.plan(env, sample, res)
        lags_nodes = plan.rungs[-1] * plan.grid.qn.size
        shared_cost = _PAIRS.cost(env, sample, plan) + n_probes * _COST_GAP * lags_nodes
        env.route_cache.clear()
        if _BYTES_PER_LAG_NODE * lags_nodes > self.max_memory:
            return False
        _, _, single_cost = cheapest(env, sample, res, candidates(env))
        env.route_cache.clear()
        return shared_cost < 0.8 * n_probes * single_cost

    def results(self, probes, progress=None):
        """One :class:`TransitResult` per probe, in order (``progress``:
        called with the number of probes just finished)."""
        probes = list(probes)
        problems = [self._problems(p) for p in probes]
        flat = [pr for group in problems for pr in group]
        if not flat:
            return []
        covered = self.shared is not None and all(self.shared.covers(pr) for pr in flat)
        if not covered:
            env = max(flat, key=lambda pr: (pr.q_max, pr.highest_frequency(pr.q_max)))
            if not self._worthwhile(env, len(probes)):
                return self._one_by_one(probes, progress)
        workers = flat[0].workers
        pool = ThreadPoolExecutor(max_workers=workers) if workers > 1 else None
        try:
            with single_threaded_blas():
                if not covered:
                    self.shared = _Shared(env, Resolution(env.q_max), pool)
                self.shared.pool = pool
                outs, notes = self._converge(problems, progress)
        finally:
            if pool is not None:
                pool.shutdown()
            if self.shared is not None:
                self.shared.pool = None
        results = [None if i in self.singles else _si_result(list(zip(group, outs[i])),
                                                              notes[i])
                   for i, group in enumerate(problems)]
        for i in sorted(self.singles):
            results[i] = self._single(probes[i])
            if progress is not None:
                progress(1)
        return results

    def _one_by_one(self, probes, progress):
        out = []
        for p in probes:
            out.append(self._single(p))
            if progress is not None:
                progress(1)
        return out

    def _converge(self, problems, progress):
        """The last PassResult of every channel of every probe, and per
        probe the warnings of channels that did not converge."""
        shared = self.shared
        outs = [[None] * len(group) for group in problems]
        notes = [[] for _ in problems]
        open_ = {(i, j) for i, group in enumerate(problems) for j in range(len(group))}
        counted, self.singles = set(), set()
        for attempt in range(self.max_refinements + 1):
            bad_all = {}
            for i, j in sorted(open_):
                if i in self.singles:
                    continue
                out, bad = shared.evaluate(problems[i][j])
                outs[i][j] = out
                if bad["angular"]:
                    # below the pair sums' floor: this probe on its own
                    self.singles.add(i)
                    continue
                if not any(bad.values()):
                    open_.discard((i, j))
                for k, v in bad.items():
                    bad_all[k] = bad_all.get(k, False) or v
            open_ = {(i, j) for i, j in open_ if i not in self.singles}
            finished = {i for i in range(len(problems)) if i not in counted
                        and i not in self.singles
                        and not any((i, j) in open_ for j in range(len(problems[i])))}
            if finished and progress is not None:
                progress(len(finished))
            counted |= finished
            if not open_:
                break
            if attempt == self.max_refinements:
                self._not_converged(problems, open_, outs, notes)
                left = len(problems) - len(counted) - len(self.singles)
                if progress is not None and left > 0:
                    progress(left)
                break
            shared.refine(bad_all)
        return outs, notes

    def _not_converged(self, problems, open_, outs, notes):
        """Warnings of the channels still open after the last refinement
        whose achieved accuracy misses rtol."""
        for i, j in sorted(open_):
            problem, out = problems[i][j], outs[i][j]
            if out.achieved > problem.rtol:
                where = "" if len(problems[i]) == 1 else f" ({problem.channel.label} channel)"
                notes[i].append(
                    f"transit{where}: not converged to rtol = {problem.rtol:g} after "
                    f"{self.max_refinements} refinements (achieved {out.achieved:.2g})")
