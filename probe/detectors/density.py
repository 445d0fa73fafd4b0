"""The structureless impurity: a probe without internal states (sigma_x -> 1,
Omega -> 0) that emits phonons above the sound speed and feels a drag force."""
from __future__ import annotations

import numpy as np

from probe.detectors.base import Channel, ProbeModel


class DensityProbe(ProbeModel):
    """Structureless impurity (sigma_x -> 1, Omega -> 0): emits phonons when
    it moves faster than sound (Landau criterion) and feels a drag force
    (Astrakharchik and Pitaevskii, PRA 70, 013608 (2004))."""

    name = "density"
    has_gap = False
    rate_outputs = ("emission_rate", "emission_rate_error", "absorption_rate",
                    "drag_force", "power")
    transit_outputs = ("emitted_phonons", "emitted_phonons_error", "absorbed_phonons",
                       "emitted_energy")
    unused_config_keys = {"gap": "a structureless impurity has no gap"}

    def channels(self, gap=None):
        return (Channel("density", 0.0, self.coupling),)

    def rate_results(self, raw, context):
        ch = raw["density"]
        em, em_err = ch["emission"]
        power = ch["power"][0]
        v = context.speed
        # net energy per unit time given to the gas (weight (1 + n) - n = 1,
        # hbar w_k per quantum); the drag force is power / v (on a circle, the
        # tangential force)
        with np.errstate(divide="ignore", invalid="ignore"):
            drag = np.where(v > 0, power / np.where(v > 0, v, 1.0), 0.0)
        return {"emission_rate": em, "emission_rate_error": em_err,
                "absorption_rate": ch["absorption"][0], "power": power, "drag_force": drag}

    def transit_results(self, raw, context=None):
        ch = raw["density"]
        em, em_err = ch["emission"]
        values = {"emitted_phonons": em, "emitted_phonons_error": em_err,
                  "absorbed_phonons": ch["absorption"], "emitted_energy": ch["energy"]}
        return values, {"emission (D = 0)": em}
