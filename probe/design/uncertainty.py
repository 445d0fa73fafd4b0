"""Uncertain inputs: Monte Carlo bands and sensitivities of any result.

An uncertain input is a scenario key with a standard uncertainty, relative
(``"10 %"``) or absolute (a quantity with units).  Positive quantities are
drawn log-normal with the median at the nominal value and
``sigma_ln = sqrt(ln(1 + u^2))`` for a relative standard uncertainty ``u``
(the log-normal with that relative standard deviation); signed quantities
are drawn normal.  Results are summarised by the quantiles ``LEVELS`` (2.5,
16, 50, 84 and 97.5 %: the median and the 68 % and 95 % intervals).

The sensitivity of a result ``Y`` to an input ``X`` is the elasticity
``d ln Y / d ln X`` at the nominal point, by central differences in
``ln X`` (exact for power laws up to rounding: a rate scales as kappa^2, so
its elasticity to a coupling length in 3D is 2).
"""
from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from probe.errors import InputError

#: quantiles reported for every output
LEVELS = (0.025, 0.16, 0.5, 0.84, 0.975)
SAMPLES_RANGE = (10, 1_000_000)
#: relative step of the central differences in ln X
ELASTICITY_STEP = 1e-4


@dataclass(frozen=True)
class UncertainInput:
    """One uncertain scenario key: ``nominal`` value (SI), standard
    uncertainty either ``relative`` (a fraction) or ``absolute`` (SI), and
    whether the quantity is ``positive`` (log-normal) or signed (normal)."""

    key: str
    nominal: float
    relative: float | None = None
    absolute: float | None = None
    positive: bool = True

    def __post_init__(self):
        u = self.relative if self.relative is not None else self.absolute
        if u is None or not math.isfinite(u) or u <= 0:
            raise InputError(f"uncertainty.{self.key}",
                             f"must be a positive standard uncertainty, got {u!r}")
        if self.positive and not self.nominal > 0:
            raise InputError(f"uncertainty.{self.key}",
                             f"the nominal value {self.nominal!r} of a positive quantity "
                             "must be > 0 to carry a relative uncertainty")

    @property
    def relative_uncertainty(self):
        if self.relative is not None:
            return self.relative
        return self.absolute / abs(self.nominal) if self.nominal else math.inf

    def draw(self, rng, n):
        """``n`` samples."""
        if self.positive:
            sigma = math.sqrt(math.log1p(self.relative_uncertainty ** 2))
            return self.nominal * np.exp(sigma * rng.standard_normal(n))
        scale = self.absolute if self.absolute is not None else self.relative * abs(self.nominal)
        return self.nominal + scale * rng.standard_normal(n)


def check_samples(samples):
    lo, hi = SAMPLES_RANGE
    if isinstance(samples, bool) or not isinstance(samples, int) or not lo <= samples <= hi:
        raise InputError("uncertainty.samples",
                         f"must be a whole number between {lo} and {hi:,}, got {samples!r}")
    return samples


def draw_inputs(inputs, samples, seed=0):
    """{key: array of ``samples`` values}, reproducible for a given ``seed``."""
    rng = np.random.default_rng(seed)
    return {u.key: u.draw(rng, check_samples(samples)) for u in inputs}


def quantiles(values):
    """The quantiles ``LEVELS`` of the finite values (NaN if none)."""
    a = np.asarray(values, float)
    a = a[np.isfinite(a)]
    if a.size == 0:
        return [math.nan] * len(LEVELS)
    return [float(q) for q in np.quantile(a, LEVELS)]


def elasticity(evaluate, inputs, outputs, step=ELASTICITY_STEP):
    """{output: {key: d ln Y / d ln X}} by central differences of relative
    ``step`` in ln X: ``evaluate`` maps {key: value} (the changed inputs) to
    {output: value}.  For a negative Y or X the elasticity is that of |Y| to
    |X| (the same for a power law); NaN where Y is zero, not finite or changes
    sign, or the input is zero."""
    out = {name: {} for name in outputs}
    h = step
    for u in inputs:
        if u.nominal == 0:
            for name in outputs:
                out[name][u.key] = math.nan
            continue
        up = evaluate({u.key: u.nominal * math.exp(h)})
        down = evaluate({u.key: u.nominal * math.exp(-h)})
        for name in outputs:
            a, b = up.get(name), down.get(name)
            ok = (a is not None and b is not None and math.isfinite(a) and math.isfinite(b)
                  and a * b > 0)
            out[name][u.key] = (math.log(abs(a)) - math.log(abs(b))) / (2 * h) if ok \
                else math.nan
    return out


def dominant_input(sensitivity, inputs):
    """The key whose uncertainty moves ``Y`` most: largest
    |elasticity| x relative uncertainty."""
    best, size = None, -1.0
    rel = {u.key: u.relative_uncertainty for u in inputs}
    for key, e in sensitivity.items():
        if math.isfinite(e) and abs(e) * rel[key] > size:
            best, size = key, abs(e) * rel[key]
    return best
