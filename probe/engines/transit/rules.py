"""Angular rules over the directions of the wave vector.

1D: the two directions +-.  2D: the periodic trapezoid rule in the angle
(its every-other-point sub-rule is the angular check).  3D: Lebedev rules
(``scipy.integrate.lebedev_rule``) or, for elongated paths or when the
direction spectrum is asked for, a Gauss-Legendre (cos theta) x trapezoid
(phi) product rule about the path's principal axis (or the spectrum axis).

The angular degree needed at q is about q D (D the path diameter: the
harmonic content of e^{-i q n.dx}).  The Bessel tail past l = qD falls like
an Airy function, so the degree is qD + z (qD/2)^(1/3) + 4 with z the depth
at the node's own tolerance (0.1 rtol scaled by the node's weight
q^(d-1) S |F|^2 against the largest one: |a|^2 <= (int chi)^2 everywhere,
so a node of small weight needs less relative accuracy).  A rule is named
by a hashable *spec*; :class:`RuleBook` builds each one once per pass.  In
3D the angular check is a rule of 3/4 the degree on every
``ANGLE_SAMPLE``-th radial node.
"""
from __future__ import annotations

import math
from functools import lru_cache

import numpy as np
from scipy.integrate import lebedev_rule
from scipy.special import roots_legendre

LEBEDEV_ORDERS = (3, 5, 7, 9, 11, 13, 15, 17, 19, 21, 23, 25, 27, 29, 31, 35,
                  41, 47, 53, 59, 65, 71, 77, 83, 89, 95, 101, 107, 113, 119,
                  125, 131)
ANGLE_SAMPLE = 4     # 3D angular check on every 4th q node


class Rule:
    """Directions (N, d), weights (N,) summing to the measure of the unit
    sphere (1D: 2, 2D: 2 pi, 3D: 4 pi), optional sub-rule weights (2D) and
    optional spectrum bin matrix (N, nbins)."""

    def __init__(self, dirs, weights, sub=None, bins=None, key=None):
        self.dirs = np.ascontiguousarray(dirs, dtype=float)
        self.weights = np.asarray(weights, float)
        self.sub = sub
        self.bins = bins
        self.key = key

    @property
    def size(self):
        return self.weights.size


def _frame(axis):
    axis = np.asarray(axis, float)
    axis = axis / np.linalg.norm(axis)
    ref = np.eye(3)[int(np.argmin(np.abs(axis)))]
    e1 = ref - np.dot(ref, axis) * axis
    e1 /= np.linalg.norm(e1)
    e2 = np.cross(axis, e1)
    return e1, e2, axis


@lru_cache(maxsize=256)
def _lebedev(order):
    x, w = lebedev_rule(order)
    return np.ascontiguousarray(x.T), np.asarray(w)


def _interval_overlap(a0, a1, b0, b1):
    return np.clip(np.minimum(a1[:, None], b1[None, :])
                   - np.maximum(a0[:, None], b0[None, :]), 0, None)


def _rule_1d():
    return Rule(np.array([[1.0], [-1.0]]), np.array([1.0, 1.0]),
                bins=np.eye(2), key=("1d",))


def _rule_2d(n, axis_angle, edges):
    """Periodic trapezoid with n (even) points; sub-rule: every other point."""
    j = np.arange(n)
    rel = 2 * np.pi * j / n
    rel = np.where(rel >= np.pi, rel - 2 * np.pi, rel)
    ang = axis_angle + rel
    dirs = np.stack([np.cos(ang), np.sin(ang)], axis=1)
    w = np.full(n, 2 * np.pi / n)
    sub = np.where(j % 2 == 0, 2 * w, 0.0)
    bins = None
    if edges is not None:
        h = np.pi / n
        width = np.diff(edges)
        ov = np.zeros((n, edges.size - 1))
        for shift in (-2 * np.pi, 0.0, 2 * np.pi):
            ov += _interval_overlap(rel - h + shift, rel + h + shift,
                                    edges[:-1], edges[1:])
        bins = ov / width[None, :]
    return Rule(dirs, w, sub=sub, bins=bins, key=("2d", n))


@lru_cache(maxsize=256)
def _gauss_legendre(n):
    return roots_legendre(n)


def _rule_product(nu, nphi, axis, edges):
    """Gauss-Legendre in u = cos(theta) about ``axis`` x trapezoid in phi."""
    u, wu = _gauss_legendre(nu)
    e1, e2, e3 = _frame(axis)
    phi = 2 * np.pi * np.arange(nphi) / nphi
    s = np.sqrt(1 - u * u)
    dirs = (u[:, None, None] * e3
            + s[:, None, None] * (np.cos(phi)[None, :, None] * e1
                                  + np.sin(phi)[None, :, None] * e2))
    dirs = dirs.reshape(-1, 3)
    w = (wu[:, None] * np.full(nphi, 2 * np.pi / nphi)[None, :]).reshape(-1)
    bins = None
    if edges is not None:
        cells = np.concatenate([[-1.0], -1.0 + np.cumsum(wu)])
        cells[-1] = 1.0
        ov = _interval_overlap(cells[:-1], cells[1:], edges[:-1], edges[1:])
        per_u = ov / np.diff(cells)[:, None] * wu[:, None] / np.diff(edges)[None, :]
        # each (u, phi) node carries the phi weight 2 pi/nphi
        bins = np.repeat(per_u, nphi, axis=0) * (2 * np.pi / nphi)
    return Rule(dirs, w, bins=bins, key=("prod", nu, nphi, tuple(np.round(axis, 12))))


def _ladder(n):
    """Round n up to the geometric ladder ceil(8 * 1.15^k) (fewer bands)."""
    if n <= 8:
        return max(1, int(n))
    k = math.ceil(math.log(n / 8) / math.log(1.15) - 1e-9)
    return int(math.ceil(8 * 1.15 ** k))


def airy_depth(eps):
    """z with exp(-(4/3) z^(3/2)) = eps: how far (in units of the Airy scale)
    past a turning point the squared Bessel tail |J_{x + z (x/2)^(1/3)}(x)|^2
    (and the squared spectrum of a chirped phase past its band edge) has
    fallen to eps."""
    return (0.75 * math.log(1.0 / min(max(eps, 1e-300), 0.5))) ** (2.0 / 3.0)


def _degree(x, factor, eps):
    """Angular degree for harmonic content x = q D at relative accuracy eps:
    the Bessel functions j_l(x) fall like an Airy tail past l = x, so
    degrees beyond x + z(eps) (x/2)^(1/3) carry less than eps."""
    return int(math.ceil(factor * (x + airy_depth(eps) * np.cbrt(0.5 * x)) + 4))


def rule_spec(geom, q, factor, spectrum, eps):
    """Hashable description of the angular rule needed up to wavenumber q.
    With a direction spectrum of ``spectrum`` bins (0 or False: none) the
    rule also resolves the bins (cells no wider than a bin)."""
    if geom.d == 1:
        return ("1d",)
    return _spec_from_degrees(geom, *_degrees(geom, q, factor, spectrum, eps), spectrum)


def _degrees(geom, q, factor, spectrum, eps):
    """(degree over the path's diameter, degree about the rule's axis or
    None for a path on the axis)."""
    L = _degree(q * geom.D, factor, eps)
    if geom.d != 3:
        return L, None
    dperp = geom.Dperp_spec if spectrum else geom.Dperp
    xp = q * dperp
    return L, (None if xp < 1e-9 else _degree(xp, factor, eps))


def _spec_from_degrees(geom, L, Lp, spectrum):
    d = geom.d
    if d == 1:
        return ("1d",)
    nbins = spectrum if spectrum else 0
    if d == 2:
        n = _ladder(max(L + 1, 2 * nbins))
        n += n % 2
        return ("2d", max(n, 4))
    nu = _ladder(max((L + 2) // 2 + 1, int(math.ceil(1.6 * nbins))))
    nphi = 1 if Lp is None else _ladder(Lp - 2)
    if spectrum:
        return ("prod", nu, nphi, True)
    order = next((o for o in LEBEDEV_ORDERS if o >= L), None)
    if order is not None and _lebedev(order)[1].size <= nu * nphi:
        return ("leb", order)
    return ("prod", nu, nphi, False)


def _degree_array(x, factor, eps):
    """:func:`_degree` of arrays x and eps: the same integers (a value
    within 1e-9 of a whole number, where the last bits of the logarithm
    could decide its ceiling, is recomputed by :func:`_degree`)."""
    eps = np.broadcast_to(np.asarray(eps, float), x.shape)
    z = (0.75 * np.log(1.0 / np.minimum(np.maximum(eps, 1e-300), 0.5))) ** (2.0 / 3.0)
    f = factor * (x + z * np.cbrt(0.5 * x)) + 4
    out = np.ceil(f).astype(int)
    for i in np.nonzero(np.abs(f - np.rint(f)) < 1e-9 * np.maximum(1.0, np.abs(f)))[0]:
        out[i] = _degree(float(x[i]), factor, float(eps[i]))
    return out


def _node_degrees(geom, qn, factor, spectrum, eps_node):
    """:func:`_degrees` of every node: (L, Lp) arrays, Lp -1 where None."""
    qn = np.asarray(qn, float)
    L = _degree_array(qn * geom.D, factor, eps_node)
    Lp = np.full(qn.size, -1)
    if geom.d == 3:
        xp = qn * (geom.Dperp_spec if spectrum else geom.Dperp)
        on = xp >= 1e-9
        Lp[on] = _degree_array(xp[on], factor, np.broadcast_to(eps_node, qn.shape)[on])
    return L, Lp


def rule_specs(geom, qn, factor, spectrum, eps_node):
    """:func:`rule_spec` of every node (nodes q, tolerances eps_node), the
    degrees computed over arrays."""
    if geom.d == 1:
        return [("1d",)] * len(qn)
    L, Lp = _node_degrees(geom, qn, factor, spectrum, eps_node)
    memo, specs = {}, []
    for a, b in zip(L.tolist(), Lp.tolist()):
        if (a, b) not in memo:
            memo[(a, b)] = _spec_from_degrees(geom, a, None if b < 0 else b, spectrum)
        specs.append(memo[(a, b)])
    return specs


def cover_spec(geom, qn, eps_node, factor, spectrum):
    """One rule that meets every node's angular degree (the FFT route's)."""
    if geom.d == 1:
        return ("1d",)
    L, Lp = _node_degrees(geom, qn, factor, spectrum, eps_node)
    top = int(Lp.max()) if Lp.size else -1
    return _spec_from_degrees(geom, int(L.max()) if L.size else 0,
                              None if top < 0 else top, spectrum)


def _make_rule(spec, geom, edges):
    kind = spec[0]
    if kind == "1d":
        return _rule_1d()
    if kind == "2d":
        ang = math.atan2(geom.spec_axis[1], geom.spec_axis[0])
        return _rule_2d(spec[1], ang, edges)
    if kind == "leb":
        x, w = _lebedev(spec[1])
        return Rule(x, w, key=spec)
    _, nu, nphi, spec_axis = spec
    spec_axis = bool(spec_axis)
    axis = geom.spec_axis if spec_axis else geom.principal
    r = _rule_product(nu, nphi, axis, edges if spec_axis else None)
    r.key = spec
    return r


class RuleBook:
    """The rules of one pass, each built once: a path geometry (the axes
    and diameters of :class:`probe.engines.transit.geometry.Geometry`) and
    the direction-spectrum bin edges (None without a spectrum)."""

    def __init__(self, geom, edges):
        self.geom = geom
        self.edges = edges
        self._built = {}

    @property
    def n_bins(self):
        """Number of direction bins the rules must resolve (0: none)."""
        return 0 if self.edges is None else self.edges.size - 1

    def size(self, spec):
        """The number of directions of the rule of ``spec``, without
        building it (a route's cost model asks for many it may not use)."""
        kind = spec[0]
        if kind == "1d":
            return 2
        if kind == "2d":
            return spec[1]
        if kind == "leb":
            return _lebedev(spec[1])[1].size
        return spec[1] * spec[2]

    def rule(self, spec, with_bins=False):
        """The rule of ``spec``, with the spectrum bin matrix if asked."""
        key = (spec, with_bins)
        if key not in self._built:
            self._built[key] = _make_rule(spec, self.geom, self.edges if with_bins else None)
        return self._built[key]
