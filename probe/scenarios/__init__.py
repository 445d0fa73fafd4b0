"""Scenarios: the edge where units live.

``units`` parses strings with units into SI floats; ``config`` is the entry
(``load_config``, ``scenario_from_dict``, ``Scenario``); ``edits`` reads a
TOML file and applies ``--set``/``--unset``; ``keys`` declares what a key
is, and the builders declare theirs: ``gas`` (``[condensate]``),
``detector`` (``[probe]``, with the keys on the probe model classes),
``path`` (``[trajectory]`` kinds, with ``spline``), ``switching`` and
``numerics``; ``schema`` collects every declaration (``SCHEMA``,
``NUMERIC_KEYS``, plot labels, documentation tables); ``limits`` holds the
range of paths handled; ``transit`` runs and describes finite transits."""
