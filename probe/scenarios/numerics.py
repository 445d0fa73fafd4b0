"""The ``[numerics]`` table: the accuracy requested of the stationary rates
(``rtol``) and of finite transits (``transit_rtol``), and the transit
engine's amplitude route (``transit_method``)."""
from __future__ import annotations

from probe.errors import InputError
from probe.scenarios.keys import Key, Part
from probe.scenarios.values import quantity

_S = "numerics"

#: allowed numerics.rtol: the inertial engine's error floor is 1e-13 (its
#: rounding floor, probe.engines.stationary ROUNDING); a tolerance above 0.1
#: is no longer a tolerance
RTOL_RANGE = (1e-13, 0.1)
#: allowed numerics.transit_rtol
TRANSIT_RTOL_RANGE = (1e-10, 0.1)
TRANSIT_METHODS = ("auto", "phasor", "fft", "lag", "pairs")

RTOL = Key(_S, "rtol", "1e-8", "relative accuracy of the stationary rates, between 1e-13 "
           "and 0.1 (refused for a spline, which has no rates)", kind="dimensionless",
           default=1e-8, label="relative tolerance", vary=15)
TRANSIT_RTOL = Key(_S, "transit_rtol", "1e-4", "relative accuracy of a finite transit, "
                   "between 1e-10 and 0.1", kind="dimensionless", default=1e-4, vary=21)
TRANSIT_METHOD = Key(_S, "transit_method", '"auto"', "how the transit's mode amplitudes "
                     "are computed: \"auto\" (the cheapest), \"phasor\" (direct sums), "
                     "\"fft\" (FFTs over time), \"lag\" (linear and circular paths: "
                     "exact angular average) or \"pairs\" (double time sum over pairs "
                     "of times: exact angular average); the same result",
                     choices=TRANSIT_METHODS, default="auto")

PASSAGE_SAMPLES = Key(_S, "passage_samples", "1000", "time samples of a passage "
                      "('probe passage'), at least 3", default=1000)

PARTS = (Part(_S, "", (RTOL, TRANSIT_RTOL, TRANSIT_METHOD, PASSAGE_SAMPLES)),)


def _number(body, key, example):
    """The dimensionless number ``key`` (a number, or a string read as one)."""
    value = body.get(key.name, key.default)
    if isinstance(value, bool) or not isinstance(value, (int, float, str)):
        raise InputError(key.dotted, f"must be a number such as {example}, got {value!r}")
    return quantity({key.name: value}, key)


def rtol(raw):
    """``numerics.rtol`` (default 1e-8), in ``RTOL_RANGE``."""
    value = _number(raw.get(_S, {}), RTOL, "1e-8")
    lo, hi = RTOL_RANGE
    if not lo <= value <= hi:
        raise InputError(RTOL.dotted,
                         f"must be between {lo:g} and {hi:g} (e.g. 1e-8), got {value!r}; "
                         f"the engine's rounding floor is about {lo:g}")
    return value


def transit_rtol(raw, trajectory=None):
    """``numerics.transit_rtol`` (default 1e-4), in ``TRANSIT_RTOL_RANGE``;
    ``numerics.rtol`` is refused for a path with no stationary rate."""
    body = raw.get(_S, {})
    if trajectory is not None and not getattr(trajectory, "stationary", False) \
            and RTOL.name in body:
        raise InputError(RTOL.dotted, "not used by a spline path (it has no "
                                      "stationary rate); the accuracy of a transit "
                                      "is numerics.transit_rtol (default 1e-4)")
    value = _number(body, TRANSIT_RTOL, "1e-4")
    lo, hi = TRANSIT_RTOL_RANGE
    if not lo <= value <= hi:
        raise InputError(TRANSIT_RTOL.dotted, f"must be between {lo:g} and {hi:g} "
                                              f"(e.g. 1e-4), got {value!r}")
    return value


def transit_notes(raw):
    """Warnings for a finite transit on ``[numerics]`` keys it does not use:
    ``rtol`` (the accuracy of stationary rates)."""
    body = raw.get(_S, {})
    if RTOL.name not in body:
        return []
    return [f"{RTOL.dotted} = {body[RTOL.name]!r} is not used by a finite transit: it is "
            "the accuracy of the stationary rates ('probe rates'); the transit's "
            f"accuracy is {TRANSIT_RTOL.dotted} (default {TRANSIT_RTOL.default:g})"]


def transit_method(raw):
    """``numerics.transit_method`` (default "auto"): the amplitude route of
    the transit engine (:func:`probe.engines.transit.transit_probabilities`)."""
    value = raw.get(_S, {}).get(TRANSIT_METHOD.name, TRANSIT_METHOD.default)
    if not isinstance(value, str) or value.strip().lower() not in TRANSIT_METHOD.choices:
        raise InputError(TRANSIT_METHOD.dotted,
                         f"must be one of {', '.join(repr(m) for m in TRANSIT_METHOD.choices)} "
                         f"(\"auto\" picks the cheaper), got {value!r}")
    return value.strip().lower()


def passage_samples(raw):
    """``numerics.passage_samples`` (default 1000): the time samples of a
    passage, a whole number >= 3."""
    value = raw.get(_S, {}).get(PASSAGE_SAMPLES.name, PASSAGE_SAMPLES.default)
    if isinstance(value, bool) or not isinstance(value, int) or value < 3:
        raise InputError(PASSAGE_SAMPLES.dotted, f"must be a whole number >= 3 "
                                                 f"(e.g. 1000), got {value!r}")
    return value
