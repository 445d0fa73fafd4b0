"""Stationary closed-form paths: uniform straight and uniform circular motion.

Both are defined for all times (``time_span`` is ``None``).  Their defining
parameters may be numpy arrays so that a caller can hand a whole parameter
grid to ``stationary_parameters()``; positions can only be evaluated when the
parameters are single numbers.
"""

from __future__ import annotations

import numpy as np

from ._errors import TrajectoryError
from .base import Trajectory, as_parameter, as_vector, unit_vector


def _plain(arr: np.ndarray):
    """A 0-d array as a Python float, anything else as an array copy."""
    return float(arr) if arr.ndim == 0 else arr.copy()


class Linear(Trajectory):
    """Uniform straight motion ``x(t) = start + speed * n * t``.

    ``n = direction / |direction|``; ``ndim = len(direction)`` (1 to 3) and
    ``start`` defaults to the origin.  ``v(t) = speed * n`` and ``a(t) = 0``.
    ``speed >= 0``; ``speed = 0`` is a probe at rest.  ``speed`` may be an
    array of speeds for ``stationary_parameters()``; evaluating positions
    then raises.
    """

    stationary = True
    stationary_kind = "inertial"

    def __init__(self, speed, direction=(1.0, 0.0, 0.0), start=None):
        self._speed = as_parameter("speed", speed, minimum=0.0)
        self.direction = unit_vector("direction", direction)
        self.ndim = self.direction.size
        if start is None:
            self.start = np.zeros(self.ndim)
        else:
            self.start = as_vector("start", start, sizes=(self.ndim,))

    @property
    def speed_value(self):
        """The speed parameter: a float, or an array on a parameter grid."""
        return _plain(self._speed)

    def _check_evaluable(self) -> None:
        if self._speed.ndim != 0:
            raise TrajectoryError(
                "speed", f"must be a scalar to evaluate positions, got an array of shape "
                f"{self._speed.shape} (arrays are only for stationary_parameters())")

    def _position(self, t):
        return self.start + float(self._speed) * t[:, None] * self.direction

    def _velocity(self, t):
        return np.broadcast_to(float(self._speed) * self.direction, (t.size, self.ndim))

    def _acceleration(self, t):
        return np.zeros((t.size, self.ndim))

    def _constant_speed(self):
        return self._speed

    def separation(self, lag):
        """|x(t + s) - x(t)| = v |s|."""
        self._check_evaluable()
        return float(self._speed) * np.abs(np.asarray(lag, float))

    def _scaled_line(self, radii):
        """Start and velocity in the coordinates x_i/R_i."""
        radii = np.asarray(radii, float)
        k = min(radii.size, self.ndim)
        x0 = np.zeros(radii.size)
        u = np.zeros(radii.size)
        x0[:k] = self.start[:k] / radii[:k]
        u[:k] = float(self._speed) * self.direction[:k] / radii[:k]
        return x0, u

    def times_within(self, radii, n=None):
        """Entry and exit times of the ellipsoid ``sum (x_i/R_i)^2 < 1``
        (roots of a quadratic in t), or ``None`` when the line misses it."""
        self._check_evaluable()
        x0, u = self._scaled_line(radii)
        a, b, c = float(u @ u), 2.0 * float(x0 @ u), float(x0 @ x0) - 1.0
        if a == 0:
            return (-np.inf, np.inf) if c < 0 else None
        disc = b * b - 4 * a * c
        if disc <= 0:
            return None
        root = np.sqrt(disc)
        # the numerically stable pair of roots
        q = -0.5 * (b + np.copysign(root, b))
        t1, t2 = q / a, (c / q if q != 0 else -q / a)
        return float(min(t1, t2)), float(max(t1, t2))

    def closest_approach(self, radii, n=None) -> float:
        """Smallest ``sqrt(sum (x_i/R_i)^2)`` along the line (closed form)."""
        self._check_evaluable()
        x0, u = self._scaled_line(radii)
        a = float(u @ u)
        if a == 0:
            return float(np.sqrt(x0 @ x0))
        t = -float(x0 @ u) / a
        return float(np.linalg.norm(x0 + u * t))

    def stationary_parameters(self) -> dict:
        """``{"speed": v}`` in m/s."""
        return {"speed": _plain(self._speed)}

    def __repr__(self) -> str:
        return (f"Linear(speed={self.speed_value!r}, direction={self.direction.tolist()}, "
                f"start={self.start.tolist()})")


def plane_basis(normal: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Orthonormal ``(e1, e2)`` spanning the plane perpendicular to unit ``normal``.

    ``e1`` is the projection onto the plane of the first coordinate axis among
    x, y, z that is least aligned with ``normal``; ``e2 = normal x e1``, so
    ``(e1, e2, normal)`` is right handed.  For ``normal = +z`` this gives
    ``e1 = x``, ``e2 = y``.
    """
    axis = np.eye(3)[int(np.argmin(np.abs(normal)))]
    e1 = axis - np.dot(axis, normal) * normal
    e1 /= np.linalg.norm(e1)
    e2 = np.cross(normal, e1)
    e2 /= np.linalg.norm(e2)
    return e1, e2


class Circular(Trajectory):
    """Uniform circular motion, counter-clockwise about ``normal``.

    ``x(t) = centre + R (cos(w t) e1 + sin(w t) e2)``, with ``(e1, e2)`` the
    basis of ``plane_basis(normal)`` (``e1 = x``, ``e2 = y`` for the default
    ``normal = +z``), so
    ``v(t) = R w (-sin(w t) e1 + cos(w t) e2)`` and ``a(t) = -w^2 (x - centre)``.
    Speed ``v = w R`` is constant and the acceleration is centripetal with
    magnitude ``v^2 / R``.

    Give exactly one of ``speed`` (m/s) and ``angular_frequency`` (rad/s);
    both must be > 0 and ``radius`` (m) must be > 0.  Reverse the sense of
    rotation by reversing ``normal``.  ``centre`` defaults to the origin in
    3-D; a 2-component ``centre`` gives planar motion (``ndim = 2``), allowed
    only with ``normal`` along +z or -z.  ``radius`` and ``speed`` (or
    ``angular_frequency``) may be arrays that broadcast together, for
    ``stationary_parameters()`` only.
    """

    stationary = True
    stationary_kind = "circular"

    def __init__(self, radius, speed=None, angular_frequency=None, centre=None,
                 normal=(0.0, 0.0, 1.0)):
        try:
            r = np.array(radius, dtype=float)
        except (TypeError, ValueError):
            raise TrajectoryError("radius", f"must be a number, got {radius!r}") from None
        if r.size and np.all(np.isfinite(r)) and np.any(r == 0):
            raise TrajectoryError(
                "radius", "must be > 0; a probe at rest is a linear trajectory with speed 0")
        r = as_parameter("radius", r, minimum=0.0, strict=True)
        if (speed is None) == (angular_frequency is None):
            raise TrajectoryError(
                "speed", "give exactly one of speed and angular_frequency "
                "(speed = angular_frequency * radius)")
        if speed is not None:
            v = as_parameter("speed", speed, minimum=0.0, strict=True)
            try:
                r, v = np.broadcast_arrays(r, v)
            except ValueError:
                raise TrajectoryError(
                    "speed", f"shape {v.shape} does not broadcast with radius shape "
                    f"{r.shape}") from None
            w = v / r
        else:
            w = as_parameter("angular_frequency", angular_frequency, minimum=0.0, strict=True)
            try:
                r, w = np.broadcast_arrays(r, w)
            except ValueError:
                raise TrajectoryError(
                    "angular_frequency", f"shape {w.shape} does not broadcast with radius "
                    f"shape {r.shape}") from None
            v = w * r
        if not (np.all(np.isfinite(v)) and np.all(np.isfinite(w)) and np.all(w > 0)):
            raise TrajectoryError("speed", "speed and angular frequency must be finite and > 0")
        self._radius, self._speed, self._omega = r.copy(), np.array(v), np.array(w)

        n = unit_vector("normal", normal, sizes=(3,))
        if centre is None:
            centre = np.zeros(3)
        self.centre = as_vector("centre", centre, sizes=(2, 3))
        self.ndim = self.centre.size
        if self.ndim == 2:
            if not np.all(np.abs(n[:2]) <= 1e-12):
                raise TrajectoryError(
                    "normal", f"planar motion (2-component centre) needs a normal along z, "
                    f"got {np.asarray(normal, dtype=float).tolist()}")
            n = np.array([0.0, 0.0, np.sign(n[2])])
        self.normal = n
        e1, e2 = plane_basis(n)
        self.e1, self.e2 = e1[: self.ndim], e2[: self.ndim]

    @property
    def radius(self):
        """Radius in m (float, or array on a parameter grid)."""
        return _plain(self._radius)

    @property
    def angular_frequency(self):
        """Angular frequency in rad/s (float, or array on a parameter grid)."""
        return _plain(self._omega)

    @property
    def speed_value(self):
        """Speed in m/s (float, or array on a parameter grid)."""
        return _plain(self._speed)

    @property
    def period(self):
        """Period ``2 pi / w`` in s (float, or array on a parameter grid)."""
        return _plain(2.0 * np.pi / self._omega)

    def _check_evaluable(self) -> None:
        if self._radius.ndim != 0:
            raise TrajectoryError(
                "radius", f"radius and speed must be scalars to evaluate positions, got "
                f"arrays of shape {self._radius.shape} (arrays are only for "
                "stationary_parameters())")

    def _phase(self, t):
        wt = float(self._omega) * t
        return np.cos(wt)[:, None], np.sin(wt)[:, None]

    def _position(self, t):
        c, s = self._phase(t)
        return self.centre + float(self._radius) * (c * self.e1 + s * self.e2)

    def _velocity(self, t):
        c, s = self._phase(t)
        return float(self._speed) * (-s * self.e1 + c * self.e2)

    def _acceleration(self, t):
        c, s = self._phase(t)
        return -float(self._speed * self._omega) * (c * self.e1 + s * self.e2)

    def sample_times(self, n: int = 4097) -> np.ndarray:
        """``n`` evenly spaced times over one period starting at t = 0."""
        self._check_evaluable()
        return np.linspace(0.0, float(self.period), int(n))

    def _constant_speed(self):
        return self._speed

    def separation(self, lag):
        """|x(t + s) - x(t)| = 2 R |sin(w s / 2)| (the chord)."""
        self._check_evaluable()
        return 2.0 * float(self._radius) * np.abs(
            np.sin(0.5 * float(self._omega) * np.asarray(lag, float)))

    def stationary_parameters(self) -> dict:
        """``{"speed": v, "radius": R, "angular_frequency": w}`` in SI units."""
        return {"speed": _plain(self._speed), "radius": _plain(self._radius),
                "angular_frequency": _plain(self._omega)}

    def __repr__(self) -> str:
        return (f"Circular(radius={self.radius!r}, speed={self.speed_value!r}, "
                f"centre={self.centre.tolist()}, normal={self.normal.tolist()})")
