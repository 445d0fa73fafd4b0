"""Prescribed probe paths: pure kinematics in SI units.

Every path is a ``Trajectory`` giving position, velocity and acceleration as
functions of time.  ``Linear`` and ``Circular`` are stationary (uniform
straight or circular motion, defined for all times); ``Spline`` interpolates
timed waypoints (see ``load_waypoints_csv``) and ``Piecewise`` joins finite
segments end to end.  Invalid input raises ``TrajectoryError``.
"""

from ._errors import TrajectoryError
from .analytic import Circular, Linear
from .base import Trajectory
from .piecewise import Piecewise
from .spline import Spline
from .waypoints import WaypointTable, load_waypoints_csv, read_waypoints_csv

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
