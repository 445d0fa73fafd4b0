"""Design tools built on the engines: ``sweep`` (grids over any numeric key),
``compare`` (detector-response models side by side), ``solver`` (threshold
against gap, and the key value that meets a target) and ``plots``.

``probe.design.threshold_table`` and ``probe.design.solve`` are re-exported
from ``probe.design.solver``."""
from probe.design.solver import Solution, ThresholdTable, parse_target, solve, threshold_table

__all__ = ["Solution", "ThresholdTable", "parse_target", "solve", "threshold_table"]
