"""Straight-motion rates of many uniform gases at once: the local-density
picture of a trapped cloud, where each sample of a path sees the uniform gas
at its own density.

The gases differ in density only (same dimension, dispersion, mass,
scattering length and temperature), so in each gas's natural units the
rate depends on ``v/c``, ``Omega xi/c``, ``s/xi`` (and ``k_B T/mu``): one
kernel call evaluates every sample of a cold gas (the kernels broadcast
these), and a warm gas costs one kernel call per sample.  The SI conversion
``A xi^-d/(c/xi)`` and the probe model's combination are then applied per
sample, so that a detector whose gap and couplings follow the local density
(a dressed impurity) is handled as it is by ``inertial_rates``.
"""
from __future__ import annotations

import numpy as np
from probe import constants as sc

from probe.detectors.base import RateContext
from probe.engines.stationary.checks import threshold_checks
from probe.engines.stationary.gas import KernelGas
from probe.engines.stationary.inertial import inertial_kernel
from probe.engines.stationary.si import _GAPLESS, _GAPPED, _si_channel

KB = sc.k


def _dimensionless(gases, probes, speeds, label):
    """v/c, W = Omega/(c/xi), s/xi and the channel of every sample."""
    chans = [next(ch for ch in p.channels() if ch.label == label) for p in probes]
    v = np.array([s / g.sound_speed for s, g in zip(speeds, gases)])
    W = np.array([float(ch.detuning) / g.frequency_unit for ch, g in zip(chans, gases)])
    s = np.array([p.width / g.healing_length for p, g in zip(probes, gases)])
    return v, W, s, chans


def _kernel(template, v, W, s, gases, gapped, rtol):
    """The inertial kernel for all samples: one call at T = 0, one per sample
    in a warm gas (the dimensionless temperature differs per sample)."""
    disp, d = template.dispersion, template.dimension
    if template.temperature == 0:
        return inertial_kernel(KernelGas(disp, d, s, 0.0), v, W, s, rtol=rtol,
                               energy=not gapped)
    keys = _GAPPED if gapped else _GAPLESS
    out = {k: (np.zeros(v.size), np.zeros(v.size)) for k in keys}
    for i, g in enumerate(gases):
        one = inertial_kernel(KernelGas(disp, d, s[i], KB * g.temperature / g.energy_unit),
                              v[i:i + 1], W[i:i + 1], s[i:i + 1], rtol=rtol,
                              energy=not gapped)
        for k in keys:
            out[k][0][i], out[k][1][i] = one[k][0][0], one[k][1][0]
    return out


def local_inertial_rates(gases, probes, speeds, rtol=1e-8):
    """Rates of straight motion for samples ``i`` with uniform gas
    ``gases[i]`` (differing in density only), probe model ``probes[i]`` (same
    model, parameters may differ) and speed ``speeds[i]`` (m/s, within the
    engine's range).  Returns a list of dicts (output name -> float), one
    per sample, with the probe model's ``rate_outputs`` and its ``gap``."""
    template = gases[0]
    labels = [(ch.label, ch.gapped) for ch in probes[0].channels()]
    raw = [{} for _ in gases]
    for label, gapped in labels:
        v, W, s, chans = _dimensionless(gases, probes, speeds, label)
        threshold_checks(template, gapped, v, W)
        out = _kernel(template, v, W, s, gases, gapped, rtol)
        keys = _GAPPED if gapped else _GAPLESS
        for i, (g, ch) in enumerate(zip(gases, chans)):
            one = {k: (out[k][0][i:i + 1], out[k][1][i:i + 1]) for k in keys}
            raw[i][label] = _si_channel(g, ch, one)
    return [_combine(g, p, speed, r) for g, p, speed, r in zip(gases, probes, speeds, raw)]


def _combine(gas, probe, speed, raw):
    detunings = {ch.label: np.array([float(ch.detuning)]) for ch in probe.channels()}
    ctx = RateContext("inertial", gas, np.array([float(speed)]), detunings,
                      up_cannot_vanish=gas.temperature > 0)
    values = {name: float(np.asarray(v).ravel()[0])
              for name, v in probe.rate_results(raw, ctx).items()}
    gapped = [d[0] for d in detunings.values() if d[0] > 0]
    if gapped:
        values["gap"] = gapped[0]
    return values
