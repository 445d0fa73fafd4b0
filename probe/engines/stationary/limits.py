"""Numerical constants of the stationary engine: the range of inputs it is
checked over (in the gas's units; outside it a ModelError says so), the
switches between its routes and the floors of its error estimates."""
from __future__ import annotations

import numpy as np

#: |F|^2 = exp(-q^2 s^2) is below exp(-CUT) beyond q = sqrt(CUT)/s
CUT = 80.0
#: relative floor of every error estimate: rounding in roots, nodes and sums
ROUNDING = 1e-13
#: absolute floor of every error estimate in the gas's units (A xi^-d xi/c):
#: a product of factors that passes through the subnormal range (below
#: 2.2e-308) keeps only a few digits, so a value this small has none
TINY = 1e-300
EPS = float(np.finfo(float).eps)

# --- range of the inputs (in the gas's units) the engine is checked over in
# tests/test_robustness.py; outside it a ModelError says so ------------------
#: largest speed, in units of the sound speed c
MAX_SPEED_OVER_C = 1e6
#: gap Omega in units of c/xi: below, the two-level probe is the density probe
#: (up and down rates agree to 1e-12); above, the resonant k xi exceeds 1e6
GAP_RANGE = (1e-12, 1e12)
#: smallest circle radius, in healing lengths (the circle is then a point)
MIN_RADIUS_OVER_XI = 1e-9
#: below this speed (units of c) straight motion is treated as static: the
#: windows shrink onto the resonance shell and their edges, computed one by
#: one, lose digits as eps/v (3D) or collapse (1D, 2D, v < eps), while the
#: static value differs by O(v^2).  In 3D the switch is made per point, up to
#: STATIC_SPEED_3D, wherever the static value's error bound is the smaller.
STATIC_SPEED = 1e-8
STATIC_SPEED_3D = 1e-4
#: |v - v_th| / v_th below this is "at" a threshold speed (rounding of v and
#: of v_th): in 1D the rate diverges there, in 2D it jumps
AT_THRESHOLD = 1e-13
#: the relative accuracies (rtol) the engine accepts: its rounding floor is
#: ROUNDING; a tolerance above 0.1 is no longer a tolerance
RTOL_RANGE = (1e-13, 0.1)
#: a rate whose estimated relative error exceeds this is not returned
MAX_RELATIVE_ERROR = 1e-3
#: 2D gapless probe: below v = c (1 + NEAR_SOUND) the window factor is formed
#: from the phase velocity's divided difference (see inertial.window_integrals)
NEAR_SOUND = 1e-2
#: circular sums: largest predicted number of Bessel-function evaluations
#: (about 30 s on one core of the development machine, ~0.4 us each); the
#: running sum stops at twice this whatever the prediction said
MAX_BESSEL_EVALUATIONS = 7.5e7
#: seconds per Bessel-function evaluation in a large 3D sum (measured on the
#: development machine; only used to put a time on the refusal message)
SECONDS_PER_BESSEL = 4e-7
#: the smallest rtol of the circular sums (their Bessel functions, bessel.py, and
#: spherical averages, harmonics.py, are accurate to ~1e-14 for arguments below 1e3)
BESSEL_ACCURACY = 1e-12
#: the circular kernel sums at most this many harmonics per point
MAX_HARMONICS = 2_000_000
