"""Plain-language checks of the validity of a rate calculation.

``regime_warnings(condensate, probe, result)`` lists, as sentences, every
place where the inputs or the result leave the regime in which the model
(first-order perturbation theory in a dilute, uniform, Bogoliubov gas with a
point-like probe) is trustworthy.  Each sentence names the quantity, its
value and the limit.  The thresholds (``limits``) are conventional rules of
thumb, not sharp boundaries; the comments say where each comes from.

The checks are small functions, each returning its sentences, run in a
fixed order: ``rates.RATE_CHECKS`` for a stationary result (the probe
model's own checks first, ``probe.regime_warnings(condensate, result)``,
then those of the gas, then the model's notes on its outputs,
``probe.rate_output_warnings(condensate, result)``), and
``path.PATH_CHECKS[trajectory.stationary_kind]`` for the path.  A new check
is one function and its place in the list.

For results on a parameter grid (arrays) a sentence says at how many of the
grid points a limit is passed and gives the worst case.
``path_warnings(condensate, probe, trajectory, result)`` checks the path
against the extent of the uniform gas (``Condensate.size``) and times a
straight transit through it (``transit_summary``).
"""
from probe.engines.regime.limits import (GAS_PARAMETER_1D_LIMIT, GAS_PARAMETER_2D_LIMIT,
                                         GAS_PARAMETER_3D_LIMIT, MIN_CROSSING_OVER_LEAVE,
                                         MIN_CROSSING_PHASE, PHONON_KXI_LIMIT, PROBABILITY_LIMIT,
                                         RATE_OVER_GAP_LIMIT, SPEED_OVER_C_LIMIT,
                                         TEFF_ERROR_FACTOR, TEMPERATURE_OVER_TC_LIMIT,
                                         WIDTH_OVER_XI_LIMIT)
from probe.engines.regime.path import PATH_CHECKS, path_warnings, transit_summary
from probe.engines.regime.rates import RATE_CHECKS, accuracy_warnings, regime_warnings

__all__ = ["GAS_PARAMETER_1D_LIMIT", "GAS_PARAMETER_2D_LIMIT", "GAS_PARAMETER_3D_LIMIT",
           "MIN_CROSSING_OVER_LEAVE", "MIN_CROSSING_PHASE", "PATH_CHECKS", "PHONON_KXI_LIMIT",
           "PROBABILITY_LIMIT",
           "RATE_CHECKS", "RATE_OVER_GAP_LIMIT", "SPEED_OVER_C_LIMIT", "TEFF_ERROR_FACTOR",
           "TEMPERATURE_OVER_TC_LIMIT", "WIDTH_OVER_XI_LIMIT", "accuracy_warnings",
           "path_warnings", "regime_warnings", "transit_summary"]
