"""The registry of amplitude routes and the choice among them.

``ROUTES`` lists the routes in the order ``method`` names them; ``"auto"``
takes, at every pass, the cheapest by the routes' cost models among those
that apply (all compute the same sums to rtol).  A new route subclasses
:class:`probe.engines.transit.route.Route` and is added here.
"""
from __future__ import annotations

from probe.engines.transit.fft import FFTRoute
from probe.engines.transit.lag import LagRoute
from probe.engines.transit.pairs import PairRoute
from probe.engines.transit.phasor import PhasorRoute
from probe.errors import InputError

ROUTES = (PhasorRoute(), FFTRoute(), LagRoute(), PairRoute())
METHODS = ("auto",) + tuple(route.name for route in ROUTES)


def candidates(problem):
    """The routes ``problem.method`` allows: every route that applies for
    ``"auto"``, else the named one (an InputError if it does not apply)."""
    if problem.method == "auto":
        return [route for route in ROUTES if route.applies(problem)]
    route = next(route for route in ROUTES if route.name == problem.method)
    if not route.applies(problem):
        raise InputError("method", route.refusal)
    return [route]


def cheapest(problem, sample, res, routes):
    """(route, plan, cost) of the cheapest route for a pass at resolution
    ``res``; on equal cost the first in ``routes``."""
    best = None
    for route in routes:
        plan = route.plan(problem, sample, res)
        cost = route.cost(problem, sample, plan)
        if best is None or cost < best[2]:
            best = (route, plan, cost)
    return best
