"""One pass's values and error budget from the angular integrals.

Per radial node the channel integrands are q^(d-1)/(2 pi)^d S(q) |F(q)|^2
times, for the detunings D = +-Omega (columns E+, E-),

    up   = (1 + n) E+ + n E-,    down = (1 + n) E- + n E+,

with their emission terms (1 + n) E+- and the emitted energy (1 + n) E+ w;
for D = 0 the emission (1 + n) E0 and absorption n E0 terms.  The error
estimates, each that of a coarser sub-rule: ``radial`` (every other node),
``time`` (every other time), ``angular`` (the angular check) and ``cutoff``
(the share of the last 5 % of the radial grid).
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

FLOOR = 1e-9         # relative floor for exponentially small channels


@dataclass
class PassResult:
    """Values (dimensionless, units of A xi^-d (xi/c)^2) per channel, the
    error estimates per part and main channel, their tolerances, the
    achieved relative accuracy, the grid report and (spectrum) the
    emitted-phonon distributions on the nodes."""

    values: dict
    errors: dict
    tolerances: dict
    achieved: float
    grid: dict
    spectrum: dict = None


class _Integrands:
    """Node weights of a pass: base = q^(d-1)/(2 pi)^d S |F|^2 and the
    thermal occupation n(q)."""

    def __init__(self, problem, grid):
        disp, qeval = problem.disp, grid.qeval
        Sq = disp.structure_factor(qeval)
        ff = np.exp(-(qeval * problem.s) ** 2)
        geo = qeval ** (problem.d - 1) / (2 * np.pi) ** problem.d
        self.base = geo * Sq * ff
        if problem.Tdl > 0:
            with np.errstate(over="ignore", divide="ignore"):
                self.nth = 1.0 / np.expm1(disp.omega(qeval) / problem.Tdl)
        else:
            self.nth = np.zeros_like(qeval)
        self.omega = grid.omega
        self.nD = problem.nD

    def channels(self, E):
        """Per-node integrands of each channel from angular integrals E
        (columns per D)."""
        base, nth, omega = self.base, self.nth, self.omega
        if self.nD == 2:
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


def _error_budget(problem, grid, fine, tcoarse, adiff, values):
    """Error estimates per part and main channel, and their tolerances."""
    wq, wq2 = grid.wq, grid.wq2
    nq = grid.qn.size - 1
    main = ("up", "down") if problem.nD == 2 else ("emission",)
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
    ref = {ch: max(abs(values[ch]), FLOOR * scale, 1e-300) for ch in main}
    tolerances = {ch: problem.rtol * ref[ch] for ch in main}
    achieved = max(sum(errors[k][ch] for k in errors) / ref[ch] for ch in main)
    return errors, tolerances, achieved


def _grid_report(problem, route, plan, sums, geom):
    grid = plan.grid
    qn = grid.qn
    report = {"n_times": int(sums.time.size), "time_step": sums.time.dt * problem.tu,
              "n_wavenumbers": int(qn.size), "k_max": float(qn[-1]) / problem.xi,
              "wavenumber_step": float(qn[-1] - qn[-2]) / problem.xi,
              "n_bands": sums.n_bands, "max_directions": sums.max_directions,
              "path_diameter": geom.D * problem.xi, "method": route.name}
    report.update(route.grid_report(problem, plan))
    return report


def _spectrum(problem, grid, sums, nodes, geom):
    """Emitted-phonon distributions on the nodes (per detuning: em_plus,
    em_minus; or em0) and over the direction bins."""
    emitting = nodes.base * (1 + nodes.nth)
    names = ("em_plus", "em_minus") if problem.nD == 2 else ("em0",)
    emis, dirs_int = {}, {}
    for j, name in enumerate(names):
        emis[name] = emitting * sums.E[:, j]
    for j, name in enumerate(names):
        dirs_int[name] = grid.wq @ (emitting[:, None] * sums.bins[:, :, j])
    return {"q": grid.qn, "wq": grid.wq, "dN_dq": emis, "directions": dirs_int,
            "edges": problem.edges, "axis": geom.spec_axis}


def estimate(problem, route, plan, sums, geom):
    """The :class:`PassResult` of a pass: the route and its plan, the
    :class:`~probe.engines.transit.route.AngularSums` it computed and the
    path geometry of the pass."""
    grid, nD = plan.grid, problem.nD
    nodes = _Integrands(problem, grid)
    fine = nodes.channels(sums.E[:, :nD])
    tcoarse = nodes.channels(sums.E[:, nD:])
    adiff = nodes.channels(sums.angular_error[:, :nD])
    values = {k: float(grid.wq @ v) for k, v in fine.items()}
    errors, tolerances, achieved = _error_budget(problem, grid, fine, tcoarse, adiff, values)
    out = PassResult(values, errors, tolerances, achieved,
                     _grid_report(problem, route, plan, sums, geom))
    if problem.spectrum:
        out.spectrum = _spectrum(problem, grid, sums, nodes, geom)
    return out
