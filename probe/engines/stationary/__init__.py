"""Stationary golden-rule rates for inertial and circular motion.

Kernels work in the gas's natural units (q = k xi, frequencies in c/xi,
speeds in c, lengths in xi) on plain numpy arrays; ``stationary_rates`` and
the ``*_rates`` functions convert SI inputs and outputs.

With ``A = (kappa/hbar)^2 n`` the rate of a transition with frequency change
``D`` (+Omega up, -Omega down) is

    Gamma = A int d^dk/(2pi)^d S |F|^2 [(1+n_k) 2pi delta(D + w_k - k.v)
                                       +   n_k  2pi delta(D - w_k + k.v)]

for inertial motion (Birrell and Davies 1982, ch. 3; the phonon field's
Wightman function along x = v t).  The delta functions restrict k to two
windows: ``W1 = {|w - Omega| <= k v}`` (down emission, up absorption) and
``W2 = {w + Omega <= k v}`` (up emission, the anomalous-Doppler process of
Ginzburg and Frolov, Sov. Phys. Usp. 30, 1073 (1987), and down absorption).
For a convex spectrum each window is one interval ``[a, b]``; in d = 1 the
rate is the sum over its edges.

For circular motion of radius R and angular frequency w_c the Jacobi-Anger
expansion turns the time integral into a sum over harmonics m of
``2 pi delta(D +- w_k - m w_c)``.

Modules: ``limits`` (the checked input range and numerical constants),
``gas`` (the dimensionless gas the kernels see), ``inertial`` and
``circular`` (the kernels; ``harmonics`` their Bessel sums), ``checks``
(input, threshold, error, work and output checks), ``si`` (the SI layer:
``inertial_rates``, ``circular_rates``) and ``registry``.

Engines by declaration
----------------------
``STATIONARY_ENGINES`` maps what a stationary trajectory declares
(``trajectory.stationary_kind``: "inertial", "circular") to a
:class:`StationaryEngine` with

- ``name``: the kind;
- ``arguments``: the engine arguments taken from
  ``trajectory.stationary_parameters()`` (("speed",), ("radius", "speed"));
- ``rates(condensate, probe, gap=None, rtol=1e-8, **arguments)``: a
  :class:`RateResult` (SI arrays broadcast with ``gap``);
- ``chunk``: points per task of a parameter sweep (512 inertial, 32 circular);
- ``has_threshold``: True where the up-transition threshold speed exists
  (straight motion);
- ``vectorised``: True when one call evaluates an array of points (inertial;
  the circular engine works point by point).

``engine_for(trajectory)`` returns the engine or raises
``InputError("trajectory.kind", ...)``; ``stationary_rates`` uses it.  A new
stationary trajectory kind gets its rates from one SI function and one entry
in ``STATIONARY_ENGINES``.
"""
from probe.engines.stationary.circular import circular_kernel, circular_work
from probe.engines.stationary.gas import KernelGas, kernel_gas
from probe.engines.stationary.inertial import inertial_kernel
from probe.engines.stationary.limits import (AT_THRESHOLD, GAP_RANGE, MAX_BESSEL_EVALUATIONS,
                                             MAX_RELATIVE_ERROR, MAX_SPEED_OVER_C,
                                             MIN_RADIUS_OVER_XI, NEAR_SOUND, STATIC_SPEED,
                                             STATIC_SPEED_3D)
from probe.engines.stationary.registry import (STATIONARY_ENGINES, StationaryEngine,
                                               engine_for, stationary_rates)
from probe.engines.stationary.si import circular_rates, inertial_rates

__all__ = ["AT_THRESHOLD", "GAP_RANGE", "MAX_BESSEL_EVALUATIONS", "MAX_RELATIVE_ERROR",
           "MAX_SPEED_OVER_C", "MIN_RADIUS_OVER_XI", "NEAR_SOUND", "STATIC_SPEED",
           "STATIC_SPEED_3D", "STATIONARY_ENGINES", "KernelGas", "StationaryEngine",
           "circular_kernel", "circular_rates", "circular_work", "engine_for",
           "inertial_kernel", "inertial_rates", "kernel_gas", "stationary_rates"]
