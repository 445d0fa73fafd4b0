"""Paths made of consecutive finite segments, and a uniform-acceleration segment."""

from __future__ import annotations

from typing import Sequence

import numpy as np

from ._errors import TrajectoryError
from .base import Trajectory, as_scalar, as_vector, finite_span, unit_vector

#: Relative tolerance on the meeting times of consecutive segments.
TIME_TOLERANCE = 1e-12
#: Tolerance on the position jump at a joint, relative to the path size.
POSITION_TOLERANCE = 1e-9
#: Samples per segment used to measure the path size.
_SIZE_SAMPLES = 257


class _QuadraticSegment(Trajectory):
    """Uniformly accelerated motion along a fixed direction over a finite span.

    ``x(t) = origin + n (v0 tau + a tau^2 / 2)``, ``tau = t - t_start``, for
    ``t_start <= t <= t_stop``; ``v(t) = n (v0 + a tau)`` and ``a(t) = n a``.
    ``n`` is the unit vector along ``direction``; ``v0`` (m/s) and ``a``
    (m/s^2) are signed components along it.  Outside the span the end
    points are held (base-class convention).
    """

    def __init__(self, t_start, t_stop, origin, direction, v0, a):
        self._t0, self._t1 = finite_span("time_span", t_start, t_stop)
        self.direction = unit_vector("direction", direction)
        self.ndim = self.direction.size
        self.origin = as_vector("origin", origin, sizes=(self.ndim,))
        self.v0 = as_scalar("v0", v0)
        self.a = as_scalar("a", a)

    @property
    def time_span(self) -> tuple[float, float]:
        return self._t0, self._t1

    def _position(self, t):
        tau = t - self._t0
        return self.origin + (self.v0 * tau + 0.5 * self.a * tau**2)[:, None] * self.direction

    def _velocity(self, t):
        tau = t - self._t0
        return (self.v0 + self.a * tau)[:, None] * self.direction

    def _acceleration(self, t):
        return np.broadcast_to(self.a * self.direction, (t.size, self.ndim))

    def __repr__(self) -> str:
        return (f"_QuadraticSegment(t=[{self._t0:.6g}, {self._t1:.6g}] s, v0={self.v0:.6g}, "
                f"a={self.a:.6g}, direction={self.direction.tolist()})")


class Piecewise(Trajectory):
    """Consecutive segments joined end to end in time.

    ``x(t) = x_i(t)`` for ``t_i <= t < t_{i+1}``, where segment ``i`` has the
    finite ``time_span`` ``(t_i, t_{i+1})``; the last segment also covers its
    end time.  Each segment must start when the previous one stops (within
    ``1e-12`` relative to the times involved) and where it stopped (within
    ``1e-9`` times the path size, the larger of the bounding-box diagonal
    and the largest coordinate magnitude).  Velocity and acceleration may
    jump at the joints.  Outside the overall span the end points are held.
    """

    stationary = False
    stationary_kind = None

    def __init__(self, segments: Sequence[Trajectory]):
        try:
            segs = tuple(segments)
        except TypeError:
            raise TrajectoryError("segments", "must be a sequence of trajectories") from None
        if not segs:
            raise TrajectoryError("segments", "at least one segment is required")
        for i, seg in enumerate(segs):
            if not isinstance(seg, Trajectory):
                raise TrajectoryError("segments", f"segment {i} is not a Trajectory: {seg!r}")
            if seg.time_span is None:
                raise TrajectoryError(
                    "segments", f"segment {i} ({type(seg).__name__}) has no finite time span")
            if seg.ndim != segs[0].ndim:
                raise TrajectoryError(
                    "segments", f"segment {i} has {seg.ndim} dimensions, segment 0 has "
                    f"{segs[0].ndim}")
        self.segments = segs
        self.ndim = segs[0].ndim
        spans = [seg.time_span for seg in segs]
        total = spans[-1][1] - spans[0][0]
        for i in range(1, len(segs)):
            stop, start = spans[i - 1][1], spans[i][0]
            scale = max(abs(stop), abs(start), abs(total))
            if abs(start - stop) > TIME_TOLERANCE * scale:
                raise TrajectoryError(
                    "segments", f"segment {i} starts at t = {start:.12g} s but segment "
                    f"{i - 1} stops at t = {stop:.12g} s")
        size = self._path_size()
        for i in range(1, len(segs)):
            end = segs[i - 1].position(spans[i - 1][1])
            begin = segs[i].position(spans[i][0])
            gap = float(np.linalg.norm(begin - end))
            if gap > POSITION_TOLERANCE * size:
                raise TrajectoryError(
                    "segments", f"position jumps by {gap:.3g} m between segment {i - 1} "
                    f"and segment {i} at t = {spans[i][0]:.12g} s")
        self._starts = np.array([span[0] for span in spans])
        self._span = (float(spans[0][0]), float(spans[-1][1]))

    def _path_size(self) -> float:
        points = np.concatenate([seg.position(seg.sample_times(_SIZE_SAMPLES))
                                 for seg in self.segments])
        diagonal = float(np.linalg.norm(points.max(axis=0) - points.min(axis=0)))
        return max(diagonal, float(np.max(np.abs(points))))

    @property
    def time_span(self) -> tuple[float, float]:
        return self._span

    @property
    def boundaries(self) -> np.ndarray:
        """Start times of all segments followed by the stop time of the last, in s."""
        return np.append(self._starts, self._span[1])

    def _dispatch(self, t, method: str) -> np.ndarray:
        index = np.searchsorted(self._starts[1:], t, side="right")
        out = np.empty((t.size, self.ndim))
        for i in np.unique(index):
            mask = index == i
            out[mask] = getattr(self.segments[i], method)(t[mask])
        return out

    def _position(self, t):
        return self._dispatch(t, "position")

    def _velocity(self, t):
        return self._dispatch(t, "velocity")

    def _acceleration(self, t):
        return self._dispatch(t, "acceleration")

    @classmethod
    def accelerate_cruise_decelerate(cls, distance, cruise_speed, accel_time,
                                     direction=(1.0, 0.0, 0.0), start=None) -> "Piecewise":
        """Straight move from rest to rest over ``distance`` (m), starting at t = 0.

        Constant acceleration ``a = cruise_speed / accel_time`` for
        ``accel_time`` (covering ``cruise_speed * accel_time / 2``), cruise at
        ``cruise_speed`` for ``T_c = distance / cruise_speed - accel_time``,
        then the mirror-image deceleration; total duration
        ``2 accel_time + T_c``.  Requires ``distance >= cruise_speed *
        accel_time``; at equality there is no cruise segment.
        """
        d = as_scalar("distance", distance, minimum=0.0, strict=True)
        v = as_scalar("cruise_speed", cruise_speed, minimum=0.0, strict=True)
        ta = as_scalar("accel_time", accel_time, minimum=0.0, strict=True)
        n = unit_vector("direction", direction)
        x0 = np.zeros(n.size) if start is None else as_vector("start", start, sizes=(n.size,))
        ramps = v * ta
        if d < ramps * (1.0 - 1e-12):
            raise TrajectoryError(
                "distance", f"{d:.6g} m is too short: accelerating to {v:.6g} m/s in "
                f"{ta:.6g} s and back to rest covers {ramps:.6g} m; lower cruise_speed or "
                "accel_time, or lengthen the move")
        a = v / ta
        cruise_time = max(d / v - ta, 0.0)
        ramp_distance = 0.5 * ramps
        segments = [_QuadraticSegment(0.0, ta, x0, n, 0.0, a)]
        t = ta
        if cruise_time > 1e-12 * ta:
            segments.append(_QuadraticSegment(t, t + cruise_time, x0 + ramp_distance * n,
                                              n, v, 0.0))
            t += cruise_time
        segments.append(_QuadraticSegment(t, t + ta, x0 + (d - ramp_distance) * n, n, v, -a))
        return cls(segments)

    def __repr__(self) -> str:
        t0, t1 = self._span
        return f"Piecewise({len(self.segments)} segments, t=[{t0:.6g}, {t1:.6g}] s)"
