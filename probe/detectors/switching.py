"""Switching functions chi(t): how the probe-gas coupling is turned on and off.

The golden-rule probability of a finite transit depends on how the coupling
``kappa chi(t)`` is switched.  Each switching function here is a small class
with

* ``__call__(t)``: chi at the times ``t`` (float or array), values in [0, 1];
* ``support``: ``(t0, t1)`` outside which chi < 1e-16;
* ``extent(eps)``: ``(t0, t1)`` outside which chi < eps;
* ``bandwidth(eps)``: an angular frequency beyond which the Fourier transform
  ``|int chi(t) e^{-i f t} dt|`` is below ``eps * int chi dt`` (used to size
  the time step and the wavenumber cutoff of the transit engine);
* ``correlation_length(eps)``: a time lag beyond which the overlap
  ``int chi(t) chi(t + lag) dt`` is below ``eps * int chi^2 dt``;
* ``warnings``: list of messages about the choice (for example a hard cut).

All times are in seconds (any consistent unit works: nothing here depends on
the unit).  Invalid parameters raise :class:`probe.errors.InputError`.
"""
from __future__ import annotations

import math
from functools import lru_cache

import numpy as np

from probe.errors import InputError

#: chi is below this outside ``support``
SUPPORT_LEVEL = 1e-16

HARD_CUT_WARNING = (
    "switching: ramp = 0 is a hard cut; the sudden switch-on and switch-off add "
    "spurious broadband excitation (|chi(f)|^2 decays only as 1/f^2), which "
    "dominates the probability of weak or off-resonant processes")


def _number(key, value):
    try:
        v = float(value)
    except (TypeError, ValueError):
        raise InputError(key, f"must be a number, got {value!r}") from None
    if not math.isfinite(v):
        raise InputError(key, f"must be finite, got {v}")
    return v


# ---------------------------------------------------------------------------
# smooth step
# ---------------------------------------------------------------------------
def smooth_step(x):
    """C-infinity step psi(x): 0 for x <= 0, 1 for x >= 1 and

        psi(x) = e^{-1/x} / (e^{-1/x} + e^{-1/(1-x)})   on (0, 1),

    which satisfies psi(x) + psi(1 - x) = 1 (so int_0^1 psi = 1/2)."""
    x = np.asarray(x, dtype=float)
    out = np.where(x >= 1, 1.0, 0.0)
    inside = (x > 0) & (x < 1)
    if np.any(inside):
        xi = x[inside]
        # e^{-1/x}/(e^{-1/x}+e^{-1/(1-x)}) = 1/(1 + e^{1/x - 1/(1-x)})
        with np.errstate(over="ignore"):
            out[inside] = 1.0 / (1.0 + np.exp(1.0 / xi - 1.0 / (1.0 - xi)))
    return out


@lru_cache(maxsize=1)
def _step_spectrum_envelope():
    """(nu, env): a decreasing envelope of |int_0^1 psi'(x) e^{-i nu x} dx|,
    tabulated by FFT on 2^16 midpoints (psi' is smooth and vanishes to all
    orders at 0 and 1, so the midpoint sum is spectrally accurate)."""
    n = 2 ** 16
    x = (np.arange(n) + 0.5) / n
    psi = smooth_step(x)
    dpsi = psi * (1 - psi) * (1 / x**2 + 1 / (1 - x) ** 2)
    spec = np.abs(np.fft.rfft(dpsi)) / n
    nu = 2 * np.pi * np.arange(spec.size)
    env = np.maximum.accumulate(spec[::-1])[::-1]
    # below ~1e-16 the table is rounding noise: let the envelope keep falling
    floor = 1e-16
    tail = env <= floor
    if np.any(tail):
        first = int(np.argmax(tail))
        env[first:] = floor * np.exp(-(nu[first:] - nu[first]) / max(nu[first], 1.0))
    return nu, env


class Switching:
    """Common interface (see the module docstring)."""

    def __init__(self):
        self.warnings: list[str] = []

    def __call__(self, t):
        raise NotImplementedError

    @property
    def support(self):
        return self.extent(SUPPORT_LEVEL)

    def extent(self, eps):
        raise NotImplementedError

    def bandwidth(self, eps):
        raise NotImplementedError

    def correlation_length(self, eps):
        raise NotImplementedError

    @property
    def hard_cut(self):
        return False


class Gaussian(Switching):
    """chi(t) = exp(-(t - centre)^2 / (2 width^2)).

    Its transform is ``int chi e^{i a t} dt = sqrt(2 pi) width
    e^{-a^2 width^2 / 2}``; the support is ``centre +- 8.6 width``
    (exp(-8.6^2/2) = 8.7e-17)."""

    def __init__(self, width, centre=0.0):
        super().__init__()
        w = _number("trajectory.switching_width", width)
        if w <= 0:
            raise InputError("trajectory.switching_width", f"must be > 0, got {w}")
        self.width = w
        self.centre = _number("trajectory.switching_centre", centre)

    def __call__(self, t):
        t = np.asarray(t, dtype=float)
        return np.exp(-0.5 * ((t - self.centre) / self.width) ** 2)

    @property
    def support(self):
        return (self.centre - 8.6 * self.width, self.centre + 8.6 * self.width)

    def extent(self, eps):
        half = self.width * math.sqrt(2 * math.log(1 / eps))
        return (self.centre - half, self.centre + half)

    def bandwidth(self, eps):
        return math.sqrt(2 * math.log(1 / eps)) / self.width

    def correlation_length(self, eps):
        # int chi(t) chi(t+s) dt / int chi^2 = exp(-s^2 / (4 width^2))
        return 2 * self.width * math.sqrt(math.log(1 / eps))

    @property
    def integral(self):
        """int chi dt = sqrt(2 pi) width."""
        return math.sqrt(2 * math.pi) * self.width

    def __repr__(self):
        return f"Gaussian(width={self.width!r}, centre={self.centre!r})"


class Window(Switching):
    """chi = 1 on [start + ramp, stop - ramp], 0 outside [start, stop], with
    C-infinity ramps

        chi(t) = psi((t - start)/ramp)  on [start, start + ramp],
        chi(t) = psi((stop - t)/ramp)   on [stop - ramp, stop],

    psi the smooth step of :func:`smooth_step`.  ``ramp = 0`` is a hard cut
    (allowed, with a warning).  Requires ``stop > start`` and
    ``0 <= 2 ramp <= stop - start``."""

    def __init__(self, start, stop, ramp):
        super().__init__()
        a = _number("trajectory.start", start)
        b = _number("trajectory.stop", stop)
        if not b > a:
            raise InputError("trajectory.stop",
                             f"must be after start = {a:g}, got {b:g}")
        r = _number("trajectory.ramp", ramp)
        if r < 0:
            raise InputError("trajectory.ramp", f"must be >= 0, got {r:g}")
        if 2 * r > (b - a) * (1 + 1e-12):
            raise InputError(
                "trajectory.ramp",
                f"two ramps of {r:g} do not fit in the window of {b - a:g} "
                "(need 2 ramp <= stop - start)")
        self.start, self.stop, self.ramp = a, b, min(r, 0.5 * (b - a))
        if self.ramp == 0:
            self.warnings.append(HARD_CUT_WARNING)

    @property
    def hard_cut(self):
        return self.ramp == 0

    def __call__(self, t):
        t = np.asarray(t, dtype=float)
        if self.ramp == 0:
            return np.where((t >= self.start) & (t <= self.stop), 1.0, 0.0)
        up = smooth_step((t - self.start) / self.ramp)
        down = smooth_step((self.stop - t) / self.ramp)
        return up * down

    def extent(self, eps):
        if self.ramp == 0 or eps <= 0:
            return (self.start, self.stop)
        eps = min(eps, 0.5)
        from scipy.optimize import brentq   # here: scipy.optimize is slow to import
        x = brentq(lambda y: float(smooth_step(y)) - eps, 1e-12, 0.5, xtol=1e-14)
        return (self.start + x * self.ramp, self.stop - x * self.ramp)

    @property
    def support(self):
        return (self.start, self.stop)

    @property
    def integral(self):
        """int chi dt = stop - start - ramp (each ramp contributes ramp/2)."""
        return self.stop - self.start - self.ramp

    def bandwidth(self, eps):
        """Smallest f with 2 env(f ramp)/f <= eps * int chi, where env bounds
        the transform of psi': chi(f) = (1/(i f)) int chi' e^{-i f t} dt and
        chi' is the two ramp bumps.  Infinite for a hard cut."""
        if self.ramp == 0:
            return math.inf
        nu, env = _step_spectrum_envelope()
        f = nu[1:] / self.ramp
        ok = 2 * env[1:] / f <= eps * self.integral
        if not np.any(ok):
            return float(f[-1])
        # the envelope is decreasing, so once ok it stays ok
        i = int(np.argmax(ok))
        return float(f[i])

    def correlation_length(self, eps):
        return self.stop - self.start

    def __repr__(self):
        return f"Window(start={self.start!r}, stop={self.stop!r}, ramp={self.ramp!r})"


class PathSpan(Window):
    """The :class:`Window` over a trajectory's finite ``time_span`` with
    ``ramp`` (default 5 % of the span) at both ends."""

    DEFAULT_FRACTION = 0.05

    def __init__(self, trajectory, ramp=None):
        span = getattr(trajectory, "time_span", None)
        if span is None:
            raise InputError(
                "trajectory.switching",
                f"{type(trajectory).__name__} has no finite time span; use a "
                "Gaussian or Window switching")
        t0, t1 = (float(s) for s in span)
        if ramp is None:
            ramp = self.DEFAULT_FRACTION * (t1 - t0)
        super().__init__(t0, t1, ramp)

    def __repr__(self):
        return f"PathSpan(start={self.start!r}, stop={self.stop!r}, ramp={self.ramp!r})"


class Crossing(Window):
    """The coupling on while the probe crosses a region: a :class:`Window`
    whose ramps of length ``ramp`` are centred on the entry time ``t_in`` and
    the exit time ``t_out``, so that chi = 1/2 as the probe crosses the edge
    and ``int chi dt = t_out - t_in`` exactly (the ramp's smooth step is
    antisymmetric about its midpoint).  Needs ``0 <= ramp <= t_out - t_in``."""

    def __init__(self, t_in, t_out, ramp):
        a = _number("trajectory.start", t_in)
        b = _number("trajectory.stop", t_out)
        r = _number("trajectory.ramp", ramp)
        if not b > a:
            raise InputError("trajectory.switching",
                             f"the crossing takes no time (entry {a:g} s, exit {b:g} s)")
        if not 0 <= r <= (b - a):
            raise InputError("trajectory.ramp",
                             f"must be between 0 and the crossing time {b - a:.4g} s, "
                             f"got {r:.4g} s")
        super().__init__(a - 0.5 * r, b + 0.5 * r, r)
        self.entry, self.exit = a, b

    def __repr__(self):
        return f"Crossing(t_in={self.entry!r}, t_out={self.exit!r}, ramp={self.ramp!r})"
