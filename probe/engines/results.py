"""Result containers returned by the engines."""
from __future__ import annotations

import math
from dataclasses import dataclass, field, fields

import numpy as np


def _jsonable(x):
    if x is None:
        return None
    if isinstance(x, (list, tuple)):
        return [_jsonable(v) for v in x]
    if isinstance(x, np.ndarray):
        if x.ndim == 0:
            return _jsonable(x.item())
        return [_jsonable(v) for v in x.tolist()]
    if isinstance(x, (np.floating, float)):
        x = float(x)
        if math.isnan(x):
            return None
        if math.isinf(x):
            return "inf" if x > 0 else "-inf"
        return x
    if isinstance(x, (np.integer,)):
        return int(x)
    return x


@dataclass
class RateResult:
    """Stationary golden-rule rates, SI units, arrays shaped like the
    broadcast inputs (or floats for scalar inputs).

    For the two-level model: ``up_rate``, ``down_rate`` (1/s) with absolute
    error estimates, ``effective_temperature`` (K; hbar Omega / (k_B
    ln(down/up))), ``excited_population`` (steady state up/(up + down)) and,
    for inertial motion, ``up_threshold_speed`` (m/s).  For the density
    model: ``emission_rate`` and ``absorption_rate`` of phonons (1/s),
    ``power`` (W, net energy given to the gas), and for inertial motion the
    ``drag_force`` (N, along -v); on a circle ``drag_force`` is the tangential
    force power/v.
    """

    kind: str
    model: str
    sound_speed: float
    healing_length: float
    chemical_potential: float
    speed: object = None
    radius: object = None
    gap: object = None
    up_rate: object = None
    down_rate: object = None
    up_rate_error: object = None
    down_rate_error: object = None
    effective_temperature: object = None
    excited_population: object = None
    up_threshold_speed: object = None
    emission_rate: object = None
    emission_rate_error: object = None
    absorption_rate: object = None
    drag_force: object = None
    power: object = None
    harmonics: object = None
    warnings: list = field(default_factory=list)

    def to_dict(self):
        """Every field, and every other registered output quantity the result
        holds (those of models whose outputs have no field here), JSON-safe."""
        out = {f.name: _jsonable(getattr(self, f.name)) for f in fields(self)}
        out.update(extra_outputs(self, out))
        return out

    def _repr_html_(self):
        """A table in a notebook (``probe.notebook``)."""
        from probe.notebook import result_html
        return result_html(self, "Stationary rates")


def extra_outputs(result, known):
    """The registered output quantities set on ``result`` beyond ``known``."""
    from probe.quantities import QUANTITIES
    return {name: _jsonable(value) for name, value in vars(result).items()
            if name in QUANTITIES and name not in known}
