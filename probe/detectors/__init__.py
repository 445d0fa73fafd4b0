"""Detectors: how the probe couples to the gas (probe models, registered in
``PROBE_MODELS``) and how its coupling is switched on and off in time
(``switching``)."""
from probe.detectors.models import (PROBE_MODELS, DensityProbe, ProbeModel, TwoLevelProbe,
                                    coupling_from_scattering_length)

__all__ = ["PROBE_MODELS", "DensityProbe", "ProbeModel", "TwoLevelProbe",
           "coupling_from_scattering_length"]
