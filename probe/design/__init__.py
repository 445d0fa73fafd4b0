"""Design tools built on the engines: ``sweep`` (grids over any numeric key),
``compare`` (detector-response models side by side), ``solver`` (threshold
against gap, and the key value that meets a target) and ``plots``.

``probe.design.threshold_table`` and ``probe.design.solve`` are re-exported
from ``probe.design.solver``."""
from importlib import import_module

__all__ = ["Solution", "ThresholdTable", "parse_target", "solve", "threshold_table"]


def __getattr__(name):
    # imported on first use: ``probe.design.planning`` (which every command
    # reads) must not pull in the solver, the sweeps and their libraries
    if name in __all__:
        return getattr(import_module("probe.design.solver"), name)
    raise AttributeError(f"module {__name__!r} has no attribute {name!r}")
