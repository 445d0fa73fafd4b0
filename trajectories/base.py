"""Abstract trajectory: array shaping, speeds, limits and input checks.

Conventions shared by every trajectory:

* Positions are in metres, velocities in m/s, accelerations in m/s^2 and
  times in seconds.
* ``position(t)``, ``velocity(t)`` and ``acceleration(t)`` accept a float or
  an array of any shape and return an array of shape ``np.shape(t) + (ndim,)``.
* A trajectory with a finite ``time_span`` ``(t_start, t_stop)`` is held at
  its end points outside that span: before ``t_start`` the position is the
  start point, after ``t_stop`` it is the end point, and velocity and
  acceleration are zero there.  Subclasses only ever see times inside the
  span.
"""

from __future__ import annotations

import abc
import math
from typing import Callable

import numpy as np

from ._errors import TrajectoryError

#: Number of samples used when a trajectory's speed is scanned over its span.
DEFAULT_SAMPLES = 4097


# ----------------------------------------------------------------------------
# Input checks shared by the subclasses
# ----------------------------------------------------------------------------

def as_scalar(key: str, value, *, minimum: float | None = None,
              strict: bool = False) -> float:
    """Return ``value`` as a finite float, optionally bounded from below."""
    arr = as_parameter(key, value, minimum=minimum, strict=strict)
    if arr.ndim != 0:
        raise TrajectoryError(key, f"must be a single number, got shape {arr.shape}")
    return float(arr)


def as_parameter(key: str, value, *, minimum: float | None = None,
                 strict: bool = False) -> np.ndarray:
    """Return ``value`` as a float array (0-d for scalars) with checks.

    Every element must be finite; with ``minimum`` given, every element must
    be ``>= minimum`` (``> minimum`` when ``strict``).
    """
    try:
        arr = np.array(value, dtype=float)
    except (TypeError, ValueError):
        raise TrajectoryError(key, f"must be a number, got {value!r}") from None
    if arr.size == 0:
        raise TrajectoryError(key, "must not be empty")
    if not np.all(np.isfinite(arr)):
        raise TrajectoryError(key, f"must be finite, got {_short(arr)}")
    if minimum is not None:
        bad = arr <= minimum if strict else arr < minimum
        if np.any(bad):
            relation = ">" if strict else ">="
            worst = arr[bad].flat[0] if arr.ndim else float(arr)
            raise TrajectoryError(key, f"must be {relation} {minimum:g}, got {worst:g}")
    return arr


def as_vector(key: str, value, *, sizes=(1, 2, 3), nonzero: bool = False) -> np.ndarray:
    """Return ``value`` as a finite 1-D float vector whose length is in ``sizes``."""
    try:
        vec = np.array(value, dtype=float)
    except (TypeError, ValueError):
        raise TrajectoryError(key, f"must be a vector of numbers, got {value!r}") from None
    if vec.ndim != 1 or vec.size not in sizes:
        allowed = " or ".join(str(s) for s in sizes)
        raise TrajectoryError(key, f"must have {allowed} components, got shape {vec.shape}")
    if not np.all(np.isfinite(vec)):
        raise TrajectoryError(key, f"components must be finite, got {_short(vec)}")
    if nonzero and not np.any(vec):
        raise TrajectoryError(key, "must be a nonzero vector")
    return vec


def unit_vector(key: str, value, *, sizes=(1, 2, 3)) -> np.ndarray:
    """Return ``value`` normalised to unit length (it must be nonzero)."""
    vec = as_vector(key, value, sizes=sizes, nonzero=True)
    scale = np.max(np.abs(vec))          # guard against overflow in the norm
    vec = vec / scale
    return vec / np.linalg.norm(vec)


def _short(arr: np.ndarray) -> str:
    text = np.array2string(np.asarray(arr), threshold=6, precision=6)
    return text if len(text) < 80 else text[:77] + "..."


# ----------------------------------------------------------------------------
# Base class
# ----------------------------------------------------------------------------

class Trajectory(abc.ABC):
    """A prescribed path ``x(t)`` of the probe in 1, 2 or 3 dimensions.

    Subclasses set ``ndim`` and implement ``_position``, ``_velocity`` and
    ``_acceleration`` for a 1-D array of times inside ``time_span`` (or any
    times when ``time_span`` is ``None``), returning shape ``(n, ndim)``.
    The public methods add the shaping, finiteness checks and end-point
    holding described in the module docstring.
    """

    #: True when the golden-rule rate along the path does not depend on
    #: time: uniform straight motion or uniform circular motion.
    stationary: bool = False
    #: "inertial", "circular" or None.
    stationary_kind: str | None = None

    ndim: int

    # -- to be provided by subclasses --------------------------------------

    @abc.abstractmethod
    def _position(self, t: np.ndarray) -> np.ndarray:
        """Positions at the 1-D times ``t`` (all inside the span), shape (n, ndim)."""

    @abc.abstractmethod
    def _velocity(self, t: np.ndarray) -> np.ndarray:
        """Velocities at the 1-D times ``t`` (all inside the span), shape (n, ndim)."""

    @abc.abstractmethod
    def _acceleration(self, t: np.ndarray) -> np.ndarray:
        """Accelerations at the 1-D times ``t`` (all inside the span), shape (n, ndim)."""

    @property
    def time_span(self) -> tuple[float, float] | None:
        """``(t_start, t_stop)`` in s, or ``None`` for a path defined for all times."""
        return None

    def _check_evaluable(self) -> None:
        """Raise if the trajectory's parameters do not allow evaluating positions.

        Stationary trajectories built on a parameter grid override this.
        """

    # -- public evaluation ---------------------------------------------------

    def position(self, t) -> np.ndarray:
        """Position ``x(t)`` in m, shape ``np.shape(t) + (ndim,)``."""
        return self._evaluate(t, self._position, hold_ends=True)

    def velocity(self, t) -> np.ndarray:
        """Velocity ``dx/dt`` in m/s, shape ``np.shape(t) + (ndim,)``."""
        return self._evaluate(t, self._velocity, hold_ends=False)

    def acceleration(self, t) -> np.ndarray:
        """Acceleration ``d^2x/dt^2`` in m/s^2, shape ``np.shape(t) + (ndim,)``."""
        return self._evaluate(t, self._acceleration, hold_ends=False)

    def speed(self, t) -> np.ndarray:
        """Speed ``|v(t)|`` in m/s, shape ``np.shape(t)``."""
        return np.linalg.norm(self.velocity(t), axis=-1)

    def _evaluate(self, t, func: Callable[[np.ndarray], np.ndarray],
                  hold_ends: bool) -> np.ndarray:
        self._check_evaluable()
        try:
            times = np.asarray(t, dtype=float)
        except (TypeError, ValueError):
            raise TrajectoryError("t", f"times must be numbers, got {t!r}") from None
        if not np.all(np.isfinite(times)):
            raise TrajectoryError("t", "times must be finite")
        flat = times.reshape(-1)
        out = np.zeros((flat.size, self.ndim))
        span = self.time_span
        if span is None:
            if flat.size:
                out[:] = func(flat)
        else:
            t0, t1 = span
            before, after = flat < t0, flat > t1
            inside = ~(before | after)
            if np.any(inside):
                out[inside] = func(flat[inside])
            if hold_ends:
                if np.any(before):
                    out[before] = self._position(np.array([t0]))[0]
                if np.any(after):
                    out[after] = self._position(np.array([t1]))[0]
        return out.reshape(times.shape + (self.ndim,))

    # -- stationary motion ---------------------------------------------------

    def stationary_parameters(self) -> dict:
        """Parameters fixing a time-independent rate; only for stationary paths."""
        raise TrajectoryError(
            "kind",
            f"{type(self).__name__} is not a stationary trajectory (the rate along it "
            "depends on time); only Linear and Circular have stationary parameters")

    def separation(self, lag):
        """Distance |x(t + lag) - x(t)| (m) for an array of lags (s) when it
        is the same at every time t (a capability of stationary paths, whose
        two-point functions then depend on the lag alone); ``None`` for a
        path where it depends on t."""
        return None

    # -- regions -------------------------------------------------------------

    def times_within(self, radii, n: int = DEFAULT_SAMPLES):
        """``(t_in, t_out)``: the first entry into and the last exit from the
        ellipsoid ``sum_i (x_i/R_i)^2 < 1`` centred at the origin (semi-axes
        ``radii`` along the first ``len(radii)`` coordinates), or ``None``
        when the path never enters it.  Sampled over ``time_span`` at ``n``
        points and refined by root finding; paths defined for all times
        override this."""
        times = self.sample_times(n)
        inside = self._ellipsoid_measure(times, radii) < 1.0
        if not np.any(inside):
            return None
        idx = np.flatnonzero(inside)
        t_in = self._edge_time(times, idx[0] - 1, idx[0], radii) if idx[0] > 0 else times[0]
        last = idx[-1]
        t_out = (self._edge_time(times, last, last + 1, radii)
                 if last < times.size - 1 else times[-1])
        return float(t_in), float(t_out)

    def closest_approach(self, radii, n: int = DEFAULT_SAMPLES) -> float:
        """Smallest ``sqrt(sum_i (x_i/R_i)^2)`` along the path (1 is the
        ellipsoid's surface), sampled over ``time_span``."""
        return float(np.sqrt(np.min(self._ellipsoid_measure(self.sample_times(n), radii))))

    def _ellipsoid_measure(self, times, radii):
        radii = np.asarray(radii, float)
        x = self.position(times)
        k = min(radii.size, self.ndim)
        return np.sum((x[..., :k] / radii[:k]) ** 2, axis=-1)

    def _edge_time(self, times, i, j, radii):
        from scipy.optimize import brentq   # here: scipy.optimize is slow to import
        f = lambda s: float(self._ellipsoid_measure(np.array([s]), radii)[0]) - 1.0  # noqa: E731
        return brentq(f, times[i], times[j], xtol=1e-15 * max(1.0, abs(times[j])))

    # -- speed scans and limits ---------------------------------------------

    def sample_times(self, n: int = DEFAULT_SAMPLES) -> np.ndarray:
        """``n`` evenly spaced times covering ``time_span``."""
        span = self.time_span
        if span is None:
            raise TrajectoryError(
                "t_grid", f"{type(self).__name__} has no finite time span; give a time grid")
        return np.linspace(span[0], span[1], int(n))

    def _constant_speed(self) -> np.ndarray | None:
        """The speed if it does not depend on time (an array on a parameter grid).

        ``None`` (the default) means the speed has to be scanned over time.
        """
        return None

    def _scan(self, t_grid=None):
        """Return ``(v_max, t_at_max, times, speeds)`` over a time grid.

        Without a grid the span is sampled at ``DEFAULT_SAMPLES`` points and the
        maximum is refined between the neighbours of the best sample.
        """
        refine = t_grid is None
        if refine:
            times = self.sample_times()
        else:
            try:
                times = np.asarray(t_grid, dtype=float).reshape(-1)
            except (TypeError, ValueError):
                raise TrajectoryError("t_grid", "must be an array of times") from None
            if times.size == 0 or not np.all(np.isfinite(times)):
                raise TrajectoryError("t_grid", "must be a non-empty array of finite times")
        speeds = self.speed(times)
        i = int(np.argmax(speeds))
        vmax, t_at = float(speeds[i]), float(times[i])
        if refine and times.size >= 3:
            lo, hi = times[max(i - 1, 0)], times[min(i + 1, times.size - 1)]
            if hi > lo:
                from scipy.optimize import minimize_scalar
                res = minimize_scalar(lambda s: -float(self.speed(s)), bounds=(lo, hi),
                                      method="bounded",
                                      options={"xatol": (hi - lo) * 1e-9})
                if res.success and -res.fun > vmax:
                    vmax, t_at = float(-res.fun), float(res.x)
        return vmax, t_at, times, speeds

    def max_speed(self, t_grid=None) -> float:
        """Largest speed in m/s over ``time_span`` (or over the given times).

        Without ``t_grid`` the span is sampled at 4097 points and the best
        sample refined by a bounded 1-D maximisation.  For a path of constant
        speed this is that speed (the largest one on a parameter grid).
        """
        constant = self._constant_speed()
        if constant is not None:
            return float(np.max(constant))
        return self._scan(t_grid)[0]

    def check_speed_limit(self, limit, t_grid=None) -> list[str]:
        """Warnings (empty list if none) where the speed exceeds ``limit`` in m/s.

        Each warning states the largest speed and the time at which it occurs,
        and, for a scanned path, the first and last sampled times above the limit.
        """
        limit = as_scalar("speed_limit", limit, minimum=0.0, strict=True)
        name = type(self).__name__
        constant = self._constant_speed()
        if constant is not None:
            over = constant > limit
            if not np.any(over):
                return []
            vmax = float(np.max(constant))
            text = (f"{name}: speed {vmax:.6g} m/s exceeds the limit of {limit:.6g} m/s "
                    "at all times")
            if constant.ndim:
                text += f" (for {int(np.count_nonzero(over))} of {constant.size} grid points)"
            return [text]
        vmax, t_at, times, speeds = self._scan(t_grid)
        if not vmax > limit:
            return []
        text = (f"{name}: speed reaches {vmax:.6g} m/s at t = {t_at:.6g} s, "
                f"above the limit of {limit:.6g} m/s")
        over = np.flatnonzero(speeds > limit)
        if over.size:
            first, last = float(times[over[0]]), float(times[over[-1]])
            if last > first:
                text += f" (exceeded between t = {first:.6g} s and t = {last:.6g} s)"
        return [text]


def finite_span(key: str, t_start, t_stop) -> tuple[float, float]:
    """Validate a finite time span with ``t_start < t_stop``."""
    t0 = as_scalar(key, t_start)
    t1 = as_scalar(key, t_stop)
    if not t1 > t0:
        raise TrajectoryError(key, f"t_stop = {t1:g} s must be after t_start = {t0:g} s")
    if not math.isfinite(t1 - t0):
        raise TrajectoryError(key, "duration must be finite")
    return t0, t1
