"""Engines: golden-rule rates and probabilities on plain SI floats and numpy
arrays.  ``stationary`` (inertial and circular motion, unending), ``transit``
(finite transits of any path), their numerical helpers (``quadrature``,
``bessel``, ``fft_kernel``), the result containers and the checks of the
model's regime of validity (``regime``)."""
