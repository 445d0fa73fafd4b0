"""First-order transition probabilities of a finite transit.

For any trajectory ``x(t)`` and switching ``chi(t)`` the golden-rule
(first-order) probabilities are, with ``A = (kappa/hbar)^2 n``,

    P(D) = A int d^dk/(2pi)^d S(k) |F(k)|^2 [ (1 + n_k) |a(D, k)|^2
                                             +      n_k  |a(-D, k)|^2 ],
    a(D, k) = int dt chi(t) exp(i (D + w_k) t - i k.x(t)),

``D = +Omega`` for ground -> excited ("up") and ``D = -Omega`` for excited ->
ground ("down").  The first term emits the phonon ``k`` and its integrand is
the emitted-phonon distribution; the second absorbs a thermal phonon (the
absorption amplitude ``int chi e^{i(D - w)t + i k.x}`` is the complex
conjugate of ``a(-D, k)``, so two time integrals per ``k`` give all four
terms).  The structureless density probe has ``D = 0``.

Emitted phonons
---------------
To first order every emission event emits exactly one phonon, so the
expected number of emitted phonons is the emission term:

* two-level probe: ``emitted_phonons`` is the emission term of ``P_up``
  (the probe starts in its ground state; the phonon is emitted while the
  probe is excited: switching- or motion-induced emission), and
  ``emitted_phonons_excited`` the emission term of ``P_down`` (the probe
  starts excited);
* density probe: ``emitted_phonons`` is ``A int S|F|^2 (1+n)|a(0, k)|^2``
  and ``absorbed_phonons`` the thermal absorption term.

Structure (natural units of the gas inside: q = k xi, t in xi/c)
----------------------------------------------------------------
* :mod:`~probe.engines.transit.driver` -- :func:`transit_probabilities`:
  the refinement loop and the conversion to SI;
* :mod:`~probe.engines.transit.problem` -- :class:`TransitProblem`, the
  scales fixed once (switching, path speeds, wavenumber cutoff), the
  resolution of a pass and the path sampled on its time grid;
* :mod:`~probe.engines.transit.grids` -- time and radial grids and their
  sub-rules; :mod:`~probe.engines.transit.rules` -- angular rules;
  :mod:`~probe.engines.transit.geometry` -- the path's diameter and axes;
* :mod:`~probe.engines.transit.route` -- the route interface (``applies``,
  ``plan``, ``cost``, ``integrals``); the routes
  :mod:`~probe.engines.transit.phasor` (direct sums),
  :mod:`~probe.engines.transit.fft` (FFT over time) and
  :mod:`~probe.engines.transit.lag` (exact angular average over lag sums);
  :mod:`~probe.engines.transit.routes` -- the registry ``ROUTES`` and the
  choice of ``"auto"``;
* :mod:`~probe.engines.transit.estimate` -- a pass's values and error
  budget; :mod:`~probe.engines.transit.result` -- :class:`TransitResult`.
"""
from probe.engines.transit.driver import transit_probabilities
from probe.engines.transit.result import TransitResult

__all__ = ["transit_probabilities", "TransitResult"]
