"""The path in the gas's natural units and what the angular rules need to
know about it (diameter, axes)."""
from __future__ import annotations

import numpy as np

from probe.errors import InputError


def path_samples(trajectory, t_si, d, xi, c):
    """Positions (in xi) and velocities (in c) at the times ``t_si`` (s), as
    (n, d) arrays; a path with fewer components than the gas's dimension d
    is padded with zeros."""
    x = np.asarray(trajectory.position(t_si), float)
    v = np.asarray(trajectory.velocity(t_si), float)
    if x.ndim == 1:
        x = x[:, None]
        v = v[:, None]
    nd = x.shape[1]
    if nd > d:
        raise InputError(
            "trajectory",
            f"the path has {nd} components but the gas is {d}-dimensional")
    if nd < d:
        x = np.concatenate([x, np.zeros((x.shape[0], d - nd))], axis=1)
        v = np.concatenate([v, np.zeros((v.shape[0], d - nd))], axis=1)
    return x / xi, v / c


class Geometry:
    """What the angular rules need to know about the path: dimension ``d``,
    diameter ``D`` (over where the switching matters, at most the distance
    covered in a correlation length of the switching), ``extent`` (twice the
    largest distance from the centre), the ``principal`` axis (3D: of the
    positions' covariance; else the spectrum axis), the ``spec_axis`` (the
    switching-weighted mean velocity, or z (3D) / x without net velocity)
    and the transverse diameters ``Dperp`` and ``Dperp_spec`` about them."""

    def __init__(self, d, diameter, perp_diameter, principal, spec_axis,
                 perp_diameter_spec, extent):
        self.d = d
        self.D = diameter
        self.Dperp = perp_diameter
        self.principal = principal
        self.spec_axis = spec_axis
        self.Dperp_spec = perp_diameter_spec
        self.extent = extent

    @classmethod
    def of_path(cls, d, X, V, chi, mask, corr_length, vmax):
        """(geometry, centre) of the sampled path X (in xi) with velocities V
        (in c) and switching chi; ``mask`` selects where chi matters."""
        Xs = X[mask] if np.any(mask) else X
        lo, hi = Xs.min(axis=0), Xs.max(axis=0)
        centre = 0.5 * (lo + hi)
        Y = Xs - centre
        R = float(np.sqrt((Y ** 2).sum(axis=1)).max()) if Y.size else 0.0
        D = min(2 * R, vmax * corr_length) if vmax > 0 else 2 * R
        # spectrum axis: chi-weighted mean velocity
        vbar = (chi[:, None] * V).sum(axis=0)
        vabs = (chi * np.sqrt((V ** 2).sum(axis=1))).sum()
        default = np.eye(d)[d - 1] if d == 3 else np.eye(d)[0]
        spec_axis = vbar / np.linalg.norm(vbar) if (
            vabs > 0 and np.linalg.norm(vbar) > 1e-6 * vabs) else default
        principal = spec_axis
        Dperp = Dperp_spec = D
        if d == 3:
            cov = (Y.T @ Y) / max(1, Y.shape[0])
            evals, evecs = np.linalg.eigh(cov)
            principal = evecs[:, -1] if evals[-1] > 0 else spec_axis

            def perp(axis):
                r = Y - np.outer(Y @ axis, axis)
                return min(D, 2 * float(np.sqrt((r ** 2).sum(axis=1)).max())) if r.size else 0.0

            Dperp = perp(principal)
            Dperp_spec = perp(spec_axis)
        return cls(d, D, Dperp, principal, spec_axis, Dperp_spec, 2 * R), centre
