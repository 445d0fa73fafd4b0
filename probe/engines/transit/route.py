"""What an amplitude route is: the interface every route implements, and
the angular integrals a route hands back."""
from __future__ import annotations

import numpy as np

from probe.engines.transit.rules import ANGLE_SAMPLE


class Route:
    """One way of computing the angular integrals of |a(D, q n)|^2 on the
    radial nodes of a pass.

    ``name`` is the value of ``method`` that forces the route; ``refusal``
    says why it cannot run where :meth:`applies` is false.  For each pass the
    driver asks every candidate route for a :meth:`plan` (its radial grid
    and rules) and its :meth:`cost`, and runs :meth:`integrals` of the
    cheapest; :meth:`grid_report` adds the route's own entries to the
    result's ``grid``; ``time_ladder`` says that its time steps start
    coarser than the pass's grid."""

    name = ""
    refusal = ""
    #: the route tries time steps coarser than the pass's grid and climbs
    #: (a miss of the time estimate then refines the time step alone)
    time_ladder = False
    #: the angular error is a floor that refinement cannot lower (a miss
    #: of it sends "auto" to the other routes)
    angular_floor = False

    def applies(self, problem):
        """Whether the route can compute this transit."""
        return True

    def plan(self, problem, sample, res):
        """The route's radial grid (as ``plan.grid``) and rules for a pass
        at resolution ``res`` on the sampled path ``sample``."""
        raise NotImplementedError

    def cost(self, problem, sample, plan):
        """Estimated run time of :meth:`integrals` (seconds on 2 threads of
        the development machine; only the ratios between routes matter)."""
        raise NotImplementedError

    def integrals(self, problem, sample, plan, pool):
        """The :class:`AngularSums` of the plan's nodes (``pool``: a thread
        pool or None)."""
        raise NotImplementedError

    def grid_report(self, problem, plan):
        """Entries of the result's ``grid`` particular to the route."""
        return {}

    def climb(self, problem, sample, res):
        """A ``time_ladder`` route's next, finer time step of its own after
        a miss of the time estimate (True), or False: refine the pass's."""
        return False


class AngularSums:
    """Angular integrals of |a|^2 on the radial nodes of a pass.

    ``E`` (nodes, 2 nD): per detuning with the full time rule, then per
    detuning with its every-other-point sub-rule; ``angular_error``
    (nodes, 2 nD, first nD columns used): the angular check's difference;
    ``bins`` (nodes, nbins, nD): the direction-spectrum bins (spectrum
    only); ``time``: the time grid the sums were taken on; ``n_bands`` and
    ``max_directions`` for the report.  Direction routes fill them from
    reductions R[i, r, c] over a rule's directions (:meth:`reductions`,
    :meth:`store`)."""

    def __init__(self, problem, n_nodes, time):
        self.d, self.nD, self.spectrum = problem.d, problem.nD, problem.spectrum
        self.E = np.zeros((n_nodes, 2 * self.nD))
        self.E_sub = np.zeros_like(self.E) if self.d == 2 else None
        self.angular_error = np.zeros((n_nodes, 2 * self.nD))
        self.bins = None
        if self.spectrum:
            nbins = 2 if self.d == 1 else problem.edges.size - 1
            self.bins = np.zeros((n_nodes, nbins, self.nD))
        self.time = time
        self.n_bands = 0
        self.max_directions = 0

    def reductions(self, rule):
        """Reduction weights of a rule's directions: the rule, (2D) its
        sub-rule, (spectrum) its bin matrix."""
        reds = [rule.weights[:, None]]
        if self.d == 2:
            reds.append(rule.sub[:, None])
        if self.spectrum:
            reds.append(rule.bins)
        return np.ascontiguousarray(np.concatenate(reds, axis=1))

    def store(self, idx, R):
        """Store the reductions R (from :meth:`reductions`) of nodes idx."""
        self.E[idx] = R[:, 0, :]
        col = 1
        if self.d == 2:
            self.E_sub[idx] = R[:, 1, :]
            col = 2
        if self.spectrum:
            self.bins[idx] = R[:, col:, :self.nD]

    def store_check(self, sel, Rc):
        """The 3D angular check on every ANGLE_SAMPLE-th node (sel): the
        difference to a coarser rule's integrals Rc, counted for the nodes
        it stands for."""
        nD = self.nD
        self.angular_error[sel, :nD] = (self.E[sel, :nD] - Rc[:, 0, :]) * ANGLE_SAMPLE

    def sub_rule_check(self):
        """The 2D angular check: the difference to the every-other-point
        sub-rule of the periodic trapezoid."""
        if self.d == 2:
            nD = self.nD
            self.angular_error[:, :nD] = self.E[:, :nD] - self.E_sub[:, :nD]
