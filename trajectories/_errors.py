"""The single exception type raised by the trajectories package."""

from __future__ import annotations


class TrajectoryError(ValueError):
    """Invalid trajectory input or an impossible request.

    ``key`` names the offending parameter (``"speed"``, ``"radius"``,
    ``"waypoints.t"`` ...) so that callers can point at the right entry of a
    configuration; ``message`` says what is wrong with it.
    """

    def __init__(self, key: str, message: str):
        self.key = str(key)
        self.message = str(message)
        super().__init__(f"{self.key}: {self.message}")

    def __str__(self) -> str:
        return f"{self.key}: {self.message}"

    def __reduce__(self):
        return (type(self), (self.key, self.message))
