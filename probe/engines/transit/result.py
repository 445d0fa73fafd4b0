"""The result container of a finite transit."""
from __future__ import annotations

from dataclasses import dataclass, field, fields

from probe.engines.results import _jsonable, extra_outputs


@dataclass
class TransitResult:
    """First-order probabilities of one transit, SI units.

    Two-level probe: ``up_probability`` (ground -> excited),
    ``down_probability`` (excited -> ground), their ``_error`` estimates,
    ``emitted_phonons`` (expected number of phonons emitted when the probe
    starts in the ground state: the emission term of ``up_probability``) and
    ``emitted_phonons_excited`` (starting excited: the emission term of
    ``down_probability``).  Density probe: ``emitted_phonons`` (emission
    term of P with D = 0) and ``absorbed_phonons``.  ``emitted_energy`` (J)
    is the expected energy carried by the emitted phonons of the
    ``emitted_phonons`` channel.

    ``spectrum`` (when requested) is a dict: ``k`` (1/m) and ``energy``
    (J, hbar w_k) on the radial nodes, ``dk`` (1/m) their quadrature
    weights (``sum(dN_dk * dk)`` is the total), ``dN_dk`` (m) and ``dN_dE``
    (1/J) of the ``emitted_phonons`` channel (``dN_dk_excited`` for the
    excited start of a two-level probe); over directions, 3D:
    ``cos_theta`` bin centres, ``cos_theta_edges`` and ``dN_dcos_theta``
    with theta the polar angle from ``axis`` (the mean-velocity direction,
    or z when the path has no net velocity); 2D: ``phi``, ``phi_edges``,
    ``dN_dphi`` with phi the angle from ``axis`` (mean-velocity direction
    or x), counter-clockwise; 1D: ``dN_forward`` (along +x) and
    ``dN_backward``.  Direction densities are averages over each bin.

    Outputs of other models (e.g. a Ramsey detector's ``contrast``) are set
    on the result by name, as the model's ``transit_results`` gives them.
    """

    model: str
    dimension: int
    sound_speed: float
    healing_length: float
    chemical_potential: float
    gap: object = None
    up_probability: object = None
    down_probability: object = None
    up_probability_error: object = None
    down_probability_error: object = None
    emitted_phonons: object = None
    emitted_phonons_error: object = None
    emitted_phonons_excited: object = None
    absorbed_phonons: object = None
    emitted_energy: object = None
    achieved_rtol: float = None
    error_budget: dict = None
    grid: dict = None
    spectrum: dict = None
    warnings: list = field(default_factory=list)

    def to_dict(self):
        """Every field, and every other registered output quantity the result
        holds (those of models whose outputs have no field here), JSON-safe."""
        out = {}
        for f in fields(self):
            v = getattr(self, f.name)
            if isinstance(v, dict):
                v = {k: _jsonable(x) for k, x in v.items()}
            else:
                v = _jsonable(v)
            out[f.name] = v
        out.update(extra_outputs(self, out))
        return out

    def _repr_html_(self):
        """A table in a notebook (``probe.notebook``)."""
        from probe.notebook import result_html
        return result_html(self, "Transit")
