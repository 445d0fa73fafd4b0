"""Interpolating spline through timed waypoints."""

from __future__ import annotations

import math

import numpy as np
from scipy.interpolate import make_interp_spline

from ._errors import TrajectoryError
from .base import Trajectory, as_scalar

#: Names of the position columns, in order, used in error keys.
AXES = ("x", "y", "z")

#: Largest |coefficient| (SI) of the position, velocity and acceleration
#: splines.  Every value of a B-spline lies within the range of its
#: coefficients, so below this bound the squares summed in speeds and
#: norms (at most 3 of them) stay far inside double precision.
MAX_COEFFICIENT = 1e150


class Spline(Trajectory):
    """Interpolating B-spline of order ``k`` through waypoints ``(t_i, x_i)``.

    ``x(t) = sum_j c_j B_{j,k}(t)`` with the coefficients fixed by
    ``x(t_i) = x_i`` (``scipy.interpolate.make_interp_spline``, default
    not-a-knot end conditions); ``v`` and ``a`` are the first and second
    derivatives of the same spline.  For ``order = 1`` (straight segments
    between waypoints) the acceleration is reported as zero between
    waypoints; the impulses at the waypoints are not represented.

    ``times`` (s) must be 1-D, finite and strictly increasing; ``positions``
    (m) have shape ``(N,)`` or ``(N, ndim)`` with ``ndim`` 1 to 3 and
    ``N >= order + 1``.  ``order`` is an integer 1 to 5 (default 3, cubic).

    ``time_span = (times[0], times[-1])``.  Outside it the probe is held at
    the first or last waypoint: the position is that point and velocity and
    acceleration are zero.

    With ``max_speed`` (m/s) given, the speed along the spline is scanned
    and ``warnings`` lists where it exceeds that limit (interpolating splines
    can overshoot between waypoints); otherwise ``warnings`` is empty.

    Waypoints through which the spline cannot be formed in double precision
    (a singular collocation matrix, or a position, velocity or acceleration
    coefficient beyond ``MAX_COEFFICIENT`` in SI units) raise
    ``TrajectoryError``; no floating-point warning escapes the construction.
    """

    stationary = False
    stationary_kind = None

    def __init__(self, times, positions, order=3, max_speed=None):
        self.order = self._check_order(order)
        self.times = self._check_times(times)
        self.waypoints = self._check_positions(positions, self.times.size)
        self.ndim = self.waypoints.shape[1]
        needed = self.order + 1
        if self.times.size < needed:
            raise TrajectoryError(
                "waypoints", f"an order-{self.order} spline needs at least {needed} "
                f"waypoints, got {self.times.size}")
        self.times.setflags(write=False)
        self.waypoints.setflags(write=False)
        self._spline, self._d1, self._d2 = self._build(self.times, self.waypoints, self.order)
        self.speed_limit = None
        self.warnings: list[str] = []
        if max_speed is not None:
            self.speed_limit = as_scalar("max_speed", max_speed, minimum=0.0, strict=True)
            self.warnings = self.check_speed_limit(self.speed_limit)

    # -- input checks ----------------------------------------------------------

    @staticmethod
    def _check_order(order) -> int:
        if isinstance(order, bool) or not isinstance(order, (int, np.integer)) \
                or not 1 <= int(order) <= 5:
            raise TrajectoryError("order", f"must be an integer from 1 to 5, got {order!r}")
        return int(order)

    @staticmethod
    def _check_times(times) -> np.ndarray:
        try:
            t = np.array(times, dtype=float)
        except (TypeError, ValueError):
            raise TrajectoryError("waypoints.t", "times must be numbers") from None
        if t.ndim != 1:
            raise TrajectoryError("waypoints.t", f"times must be 1-D, got shape {t.shape}")
        bad = np.flatnonzero(~np.isfinite(t))
        if bad.size:
            i = int(bad[0])
            raise TrajectoryError("waypoints.t", f"times must be finite; t[{i}] = {t[i]}")
        # compared, not subtracted: a difference of two finite times can overflow
        step = np.flatnonzero(t[1:] <= t[:-1])
        if step.size:
            i = int(step[0]) + 1
            raise TrajectoryError(
                "waypoints.t", f"times must be strictly increasing; t[{i}]={t[i]:.12g} "
                f"is not after t[{i - 1}]={t[i - 1]:.12g}")
        if t.size and not math.isfinite(float(t[-1]) - float(t[0])):
            raise TrajectoryError(
                "waypoints.t", f"the duration t[-1] - t[0] from {t[0]:.6g} s to "
                f"{t[-1]:.6g} s is beyond double precision (about 1.8e308 s)")
        return t

    @staticmethod
    def _check_positions(positions, n: int) -> np.ndarray:
        try:
            x = np.array(positions, dtype=float)
        except (TypeError, ValueError):
            raise TrajectoryError("waypoints", "positions must be numbers") from None
        if x.ndim == 1:
            x = x[:, None]
        if x.ndim != 2 or x.shape[0] != n or not 1 <= x.shape[1] <= 3:
            raise TrajectoryError(
                "waypoints", f"positions must have shape ({n},) or ({n}, ndim) with ndim "
                f"1 to 3, got {np.shape(positions)}")
        bad = np.argwhere(~np.isfinite(x))
        if bad.size:
            i, j = (int(k) for k in bad[0])
            axis = AXES[j]
            raise TrajectoryError(
                f"waypoints.{axis}", f"positions must be finite; {axis}[{i}] = {x[i, j]}")
        return x

    @staticmethod
    def _build(times, positions, order):
        """The interpolating spline and its first and second derivatives
        (``None`` for order 1), with every coefficient finite and within
        ``MAX_COEFFICIENT``.

        The solve and the differentiation (differences of coefficients
        divided by knot spacings) run with floating-point warnings off; a
        result that overflowed or cannot be formed is reported here as an
        input error instead."""
        with np.errstate(over="ignore", invalid="ignore", divide="ignore"):
            try:
                spline = make_interp_spline(times, positions, k=order)
            except (np.linalg.LinAlgError, ValueError):
                steps = times[1:] - times[:-1]
                raise TrajectoryError(
                    "waypoints.t", f"no order-{order} spline through these waypoints can be "
                    f"formed in double precision (its collocation matrix is singular): "
                    f"the time steps range from {steps.min():.3g} s to {steps.max():.3g} s "
                    f"between t = {times[0]:.6g} s and {times[-1]:.6g} s; space the "
                    f"waypoint times more evenly") from None
            d1 = spline.derivative(1)
            d2 = spline.derivative(2) if order >= 2 else None
        for part, what, unit in ((spline, "position", "m"), (d1, "velocity", "m/s"),
                                 (d2, "acceleration", "m/s^2")):
            if part is None:
                continue
            c = np.abs(part.c)
            if not np.all(c <= MAX_COEFFICIENT):      # also catches inf and nan
                largest = float(np.max(np.where(np.isnan(c), np.inf, c)))
                size = (f"about {largest:.3g} {unit}" if math.isfinite(largest)
                        else "values that overflow double precision")
                raise TrajectoryError(
                    "waypoints", f"the {what} along the order-{order} spline through these "
                    f"waypoints reaches {size}, beyond {MAX_COEFFICIENT:g} {unit}, where its "
                    f"speeds and norms can no longer be formed in double precision; the "
                    f"waypoints move by up to {_largest_step(positions):.3g} m between times "
                    f"as close as {float(np.min(times[1:] - times[:-1])):.3g} s")
        return spline, d1, d2

    # -- evaluation --------------------------------------------------------------

    @property
    def time_span(self) -> tuple[float, float]:
        return float(self.times[0]), float(self.times[-1])

    def _position(self, t):
        return self._spline(t)

    def _velocity(self, t):
        return self._d1(t)

    def _acceleration(self, t):
        if self._d2 is None:
            return np.zeros((t.size, self.ndim))
        return self._d2(t)

    def __repr__(self) -> str:
        t0, t1 = self.time_span
        return (f"Spline({self.times.size} waypoints, order={self.order}, ndim={self.ndim}, "
                f"t=[{t0:.6g}, {t1:.6g}] s)")


def _largest_step(positions: np.ndarray) -> float:
    """Largest |change| of one coordinate between neighbouring waypoints
    (inf if it overflows), without floating-point warnings."""
    with np.errstate(over="ignore", invalid="ignore"):
        step = np.abs(positions[1:] - positions[:-1])
    return float(np.max(step)) if step.size else 0.0
