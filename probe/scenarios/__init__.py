"""Scenarios: the edge where units live.  ``units`` parses strings with
units into SI floats; ``config`` reads a TOML scenario, validates it and
builds the gas, the detector and the trajectory; ``transit`` adds the keys
of finite transits (waypoints, switching)."""
