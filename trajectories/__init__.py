"""Prescribed probe paths: pure kinematics in SI units.

Every path is a ``Trajectory`` giving position, velocity and acceleration as
functions of time.  ``Linear`` and ``Circular`` are stationary (uniform
straight or circular motion, defined for all times); ``Spline`` interpolates
timed waypoints (see ``load_waypoints_csv``) and ``Piecewise`` joins finite
segments end to end.  Invalid input raises ``TrajectoryError``.

``Spline``, ``Piecewise`` and the waypoint readers are imported on first use
(splines need ``scipy.interpolate``, slow to import for a straight path).
"""
from importlib import import_module

from ._errors import TrajectoryError
from .analytic import Circular, Linear
from .base import Trajectory

_LAZY = {
    "Piecewise": ".piecewise",
    "Spline": ".spline",
    "WaypointTable": ".waypoints",
    "load_waypoints_csv": ".waypoints",
    "read_waypoints_csv": ".waypoints",
}

__all__ = [
    "Trajectory",
    "Linear",
    "Circular",
    "Spline",
    "Piecewise",
    "load_waypoints_csv",
    "read_waypoints_csv",
    "WaypointTable",
    "TrajectoryError",
]


def __getattr__(name):
    if name in _LAZY:
        value = getattr(import_module(_LAZY[name], __name__), name)
        globals()[name] = value
        return value
    if f".{name}" in _LAZY.values():        # the modules themselves
        return import_module(f".{name}", __name__)
    raise AttributeError(f"module {__name__!r} has no attribute {name!r}")
