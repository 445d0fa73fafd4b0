"""The transit engine's entry point: pose the problem, run passes of
increasing resolution on the cheapest route until every error estimate is
within its share of rtol, and convert to SI.

If an error estimate exceeds its share of ``rtol`` (a quarter) that part is
refined (h or dt halved, angular degree x 1.4, q_max x 1.5) and the whole
sum recomputed, up to ``max_refinements`` times.  ``achieved_rtol`` is the
sum of the estimates relative to the result; each estimate is that of the
coarser sub-rule, so the reported (finer) values are usually far more
accurate than it says.
"""
from __future__ import annotations

from concurrent.futures import ThreadPoolExecutor

import numpy as np

from probe.detectors.switching import Switching
from probe.engines.transit.estimate import FLOOR, estimate
from probe.engines.transit.problem import HBAR, Resolution, TransitProblem
from probe.engines.transit.result import TransitResult
from probe.engines.transit.routes import METHODS, candidates, cheapest
from probe.engines.transit.threads import single_threaded_blas
from probe.errors import InputError, shown

_BREAKDOWN = 0.1      # probability above which first order is suspect
_SHARE = 0.24         # share of rtol each part of the error budget may take


def transit_probabilities(condensate, probe, trajectory, switching, rtol=1e-4,
                          spectrum=False, max_memory=500e6, workers=None,
                          max_refinements=4, spectrum_bins=None, method="auto"):
    """First-order transition probabilities of a probe carried along
    ``trajectory`` with the coupling switched by ``switching``.

    Parameters
    ----------
    condensate : :class:`probe.condensate.Condensate`
    probe : a probe model with one channel (``probe.channels()``): a
        gapped channel with a scalar gap (two-level probe) or an ungapped
        one (density probe)
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
    rtol = _checked_inputs(switching, rtol, method)
    channels = probe.channels()
    passes, notes = [], []
    for i, channel in enumerate(channels):
        # the spectrum is that of the first (main) channel
        problem = TransitProblem(condensate, probe, trajectory, switching, rtol, channel,
                                 spectrum=spectrum and i == 0, spectrum_bins=spectrum_bins,
                                 method=method, max_memory=max_memory, workers=workers)
        routes = candidates(problem)
        out, note = _converge(problem, routes, max_refinements,
                              channel.label if len(channels) > 1 else None)
        passes.append((problem, out))
        notes += note
    return _si_result(passes, notes)


def _checked_inputs(switching, rtol, method):
    """rtol as a float; InputError for a switching that is not one, an rtol
    outside [1e-10, 1) or an unknown method."""
    if not isinstance(switching, Switching):
        raise InputError("trajectory.switching",
                         f"must be a switching function, got {switching!r}")
    if isinstance(rtol, (bool, np.bool_)) or not isinstance(rtol, (int, float, np.integer,
                                                                     np.floating)):
        raise InputError("rtol", f"must be a number, got {shown(rtol)}")
    rtol = float(rtol)
    if not (1e-10 <= rtol < 1):
        raise InputError("rtol", f"must be in [1e-10, 1), got {rtol}")
    if method not in METHODS:
        raise InputError("method", f"must be one of {', '.join(METHODS)}, got {method!r}")
    return rtol


def _one_pass(problem, routes, res, pool):
    """A pass at resolution ``res`` on the cheapest of ``routes``: its
    estimate, the route and the sampled path."""
    sample = problem.sample(res)
    route, plan, _ = cheapest(problem, sample, res, routes)
    sums = route.integrals(problem, sample, plan, pool)
    return estimate(problem, route, plan, sums, sample.geom), route, sample


def _converge(problem, routes, max_refinements, label=None):
    """Passes from the starting resolution until every part of the error
    budget is within its share (_SHARE) of rtol, or max_refinements are
    spent (with a warning naming the channel ``label`` if given, unless the
    parts' sum, the achieved accuracy, meets rtol); returns the last
    :class:`~probe.engines.transit.estimate.PassResult` and the warnings.

    The starting time step puts the sub-rule (2 dt) at the sampling bound
    of the frequencies that matter at rtol; the q step puts the full rule
    (not its 2h sub-rule) at the conjugate-length bound, which is a worst
    case (every lag of the switching window weighted fully), so the
    sub-rule check usually accepts it and refines h only when needed."""
    res = Resolution(problem.q_max)
    warnings = []
    workers = problem.workers
    pool = ThreadPoolExecutor(max_workers=workers) if workers > 1 else None
    try:
        with single_threaded_blas():
            for attempt in range(max_refinements + 1):
                out, route, sample = _one_pass(problem, routes, res, pool)
                tol, errs = out.tolerances, out.errors
                bad = {k: any(errs[k][ch] > _SHARE * tol[ch] for ch in tol) for k in errs}
                if (route.angular_floor and bad["angular"] and len(routes) > 1
                        and attempt < max_refinements):
                    # its angular accuracy cannot be refined: the same pass
                    # on the other routes
                    routes = [r for r in routes if r is not route]
                    continue
                if route.time_ladder and bad["time"]:
                    # a time step tried below the sampling bound: the other
                    # estimates carry its aliasing, refine the step alone
                    bad = {k: k == "time" for k in bad}
                    if attempt < max_refinements and route.climb(problem, sample, res):
                        continue
                if not any(bad.values()):
                    break
                if attempt == max_refinements:
                    # a part over its share while the sum of the parts meets
                    # rtol has converged: only a total above rtol is reported
                    if out.achieved > problem.rtol:
                        where = "" if label is None else f" ({label} channel)"
                        warnings.append(
                            f"transit{where}: not converged to rtol = {problem.rtol:g} after "
                            f"{max_refinements} refinements (achieved {out.achieved:.2g})")
                    break
                res.refine(bad)
    finally:
        if pool is not None:
            pool.shutdown()
    return out, warnings


def _raw_channels(problem, vals, err_total):
    """The channel's SI results for ``probe.transit_results``."""
    if problem.channel.gapped:
        raw = {"up": (vals["up"], err_total["up"]), "down": (vals["down"], err_total["down"]),
               "up_emission": vals["up_emission"], "down_emission": vals["down_emission"]}
    else:
        raw = {"emission": (vals["emission"], err_total["emission"]),
               "absorption": vals["absorption"]}
    raw["energy"] = vals["energy"] * HBAR * problem.w0
    return raw


def _si_result(passes, notes):
    """The :class:`TransitResult` of the last pass of each channel, in SI
    units: the probe combines the channels' results into its outputs; grid,
    error budget and spectrum are those of the first (main) channel, the
    achieved accuracy the worst of all."""
    main, out = passes[0]
    cond, probe = main.condensate, main.probe
    raw, err_total = {}, {}
    for problem, p_out in passes:
        pref = problem.prefactor
        # every value is an integral of a non-negative integrand: a value
        # below zero is rounding of an (exponentially) small one, within its
        # error estimate; 0 is then closer to the truth
        vals = {k: max(v * pref, 0.0) for k, v in p_out.values.items()}
        errs = {ch: sum(p_out.errors[k][ch] for k in p_out.errors) * pref
                for ch in p_out.tolerances}
        raw[problem.channel.label] = _raw_channels(problem, vals, errs)
        err_total = {**errs, **err_total}
    res = TransitResult(model=probe.name, dimension=main.d, sound_speed=main.c,
                        healing_length=main.xi,
                        chemical_potential=cond.chemical_potential)
    if main.channel.gapped:
        res.gap = main.Om * main.w0
    values, probs = probe.transit_results(raw, {"switching_integral":
                                                main.switching.integral})
    for name, value in values.items():
        setattr(res, name, value)
    res.achieved_rtol = max(p_out.achieved for _, p_out in passes)
    pref = main.prefactor
    res.error_budget = {k: {ch: v * pref for ch, v in e.items()}
                        for k, e in out.errors.items()}
    res.grid = out.grid
    res.warnings = (main.warnings + notes + _probability_warnings(probs, err_total)
                    + probe.transit_warnings(values))
    if main.spectrum:
        res.spectrum = _spectrum_si(main, out.spectrum, pref)
    return res


def _probability_warnings(probs, err_total):
    """Checked probabilities (name -> value; a model may check none) too
    small for a relative accuracy, or too large for first order."""
    warnings = []
    scale = max(probs.values(), default=0.0)
    for name, p in probs.items():
        if p < FLOOR * scale:
            warnings.append(
                f"the {name} probability ({p:.3g}) is below {FLOOR:g} of the "
                f"largest channel; its accuracy is absolute (error "
                f"{err_total.get(name, 0.0):.2g}), not relative")
        if p > _BREAKDOWN:
            warnings.append(
                f"first order breaking down: the {name} probability is {p:.3g} "
                f"> {_BREAKDOWN}; the golden-rule result is not reliable")
    return warnings


def _spectrum_si(problem, sp, pref):
    """The emitted-phonon spectrum of :class:`TransitResult` (SI) from the
    pass's distributions on the nodes."""
    xi, disp, gapped = problem.xi, problem.disp, problem.channel.gapped
    energy_unit = HBAR * problem.w0
    q = sp["q"]
    vg = disp.group_velocity(q)
    spec = {"k": q / xi, "dk": sp["wq"] / xi, "energy": energy_unit * disp.omega(q)}
    main = "em_plus" if gapped else "em0"
    dn_dq = sp["dN_dq"][main] * pref
    spec["dN_dk"] = dn_dq * xi
    spec["dN_dE"] = dn_dq / (energy_unit * np.where(vg > 0, vg, np.inf))
    if gapped:
        spec["dN_dk_excited"] = sp["dN_dq"]["em_minus"] * pref * xi
    spec.update(_directions_si(problem.d, sp, pref, main, gapped))
    return spec


def _directions_si(d, sp, pref, main, gapped):
    """The spectrum over directions: 3D in cos theta, 2D in phi, 1D forward
    and backward."""
    dirs = sp["directions"]
    spec = {}
    if d in (2, 3):
        var = "cos_theta" if d == 3 else "phi"
        spec["axis"] = sp["axis"]
        spec[f"{var}_edges"] = sp["edges"]
        spec[var] = 0.5 * (sp["edges"][1:] + sp["edges"][:-1])
        spec[f"dN_d{var}"] = dirs[main] * pref
        if gapped:
            spec[f"dN_d{var}_excited"] = dirs["em_minus"] * pref
        return spec
    spec["dN_forward"] = float(dirs[main][0] * pref)
    spec["dN_backward"] = float(dirs[main][1] * pref)
    if gapped:
        spec["dN_forward_excited"] = float(dirs["em_minus"][0] * pref)
        spec["dN_backward_excited"] = float(dirs["em_minus"][1] * pref)
    return spec
