"""Thresholds of the regime-of-validity checks.  They are conventional rules
of thumb, not sharp boundaries; the comments say where each comes from."""
from __future__ import annotations

# First order in the coupling needs the transition rates to be slow on the
# scale of the probe's own oscillation: Gamma << Omega.  A ratio of 0.1 is
# the usual practical cut-off for "<<".
RATE_OVER_GAP_LIMIT = 0.1
# Diluteness of the 3D gas: Bogoliubov theory is an expansion in
# sqrt(n a^3); n a^3 < 1e-3 is common practice (the Lee-Huang-Yang
# correction is then a few per cent).
GAS_PARAMETER_3D_LIMIT = 1e-3
# Weak coupling in 2D: the dimensionless coupling g_2 m / hbar^2 << 1;
# 0.1 is common practice.
GAS_PARAMETER_2D_LIMIT = 0.1
# Weak coupling in 1D: Bogoliubov theory of the Lieb-Liniger gas needs
# gamma << 1; 0.1 is common practice.
GAS_PARAMETER_1D_LIMIT = 0.1
# 3D thermal depletion: the T = 0 Bogoliubov ground state is a fair
# description only well below the ideal-gas T_c; 0.5 T_c (condensate
# fraction 1 - 0.5^1.5 ~ 65 %) is a common-practice limit.
TEMPERATURE_OVER_TC_LIMIT = 0.5
# The phonon (linear) dispersion w = c k differs from Bogoliubov's
# w = c k sqrt(1 + (k xi)^2/4) by (k xi)^2/8: about 1 % at k xi = 0.3.
PHONON_KXI_LIMIT = 0.3
# A probe much wider than the healing length is far from the point-probe
# picture (informational).
WIDTH_OVER_XI_LIMIT = 10.0
# Speeds far above sound: the probe excites free-particle-like quasi
# particles at k xi >> 1 and the uniform-gas, weak-coupling picture of the
# probe (no depletion or heating of the gas around it) becomes doubtful.
SPEED_OVER_C_LIMIT = 10.0
# First order for a finite transit needs the transition probability << 1;
# 0.1 is the same common-practice cut-off as for Gamma/Omega.
PROBABILITY_LIMIT = 0.1
# Rate x time estimates a straight crossing of duration t when t is long
# against the inverse gap and against the time a phonon takes to leave the
# probe, max(width, xi)/c_s: the switching's bandwidth ~1/t is then narrow
# against the scales on which the probe's response changes.  Measured with
# the transit engine for the box crossing of examples/transits (crossing
# switching, ramps 5 % of t): at Omega t = 38 and 52, and t c/max(s, xi) =
# 80, the probabilities agree with rate x time to 0.4 % and 1.5 %; at
# Omega t = 11.5 the down probability is 15 % off and at t c/max(s, xi) = 5
# they differ by a factor 100.  20 keeps the error to a few per cent.
MIN_CROSSING_PHASE = 20.0
MIN_CROSSING_OVER_LEAVE = 20.0
# The effective temperature is reported only where |ln(down/up)| exceeds 4
# times its error (probe.detectors.two_level.effective_temperature).
TEFF_ERROR_FACTOR = 4.0
