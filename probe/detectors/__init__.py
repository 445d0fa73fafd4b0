"""Detectors: how the probe couples to the gas.

Each probe model is one module with one subclass of
:class:`probe.detectors.base.ProbeModel` and one entry in ``PROBE_MODELS``
(the scenario key ``probe.model``); ``switching`` holds the functions that
switch the coupling on and off in time.
"""
from probe.detectors.base import Channel, ProbeModel, RateContext, coupling_from_scattering_length
from probe.detectors.density import DensityProbe
from probe.detectors.dressed import DressedProbe
from probe.detectors.ramsey import RamseyProbe
from probe.detectors.two_level import TwoLevelProbe, effective_temperature

#: ``probe.model`` name -> class
PROBE_MODELS = {"two-level": TwoLevelProbe, "density": DensityProbe,
                "dressed": DressedProbe, "ramsey": RamseyProbe}

__all__ = ["PROBE_MODELS", "Channel", "DensityProbe", "DressedProbe", "ProbeModel",
           "RamseyProbe", "RateContext", "TwoLevelProbe", "coupling_from_scattering_length", "effective_temperature"]
