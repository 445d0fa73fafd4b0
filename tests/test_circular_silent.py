"""The bound on a whole subsonic up family of circular harmonics, which lets
the sums skip a family whose every term is below the smallest double.

On the resonant shell of harmonic m (w_k = m w_c - W) the Bessel argument
is z m with z = v q/(omega(q) + W) <= v/v_th, the threshold speed being the
least (omega + W)/q; Kapteyn's inequality |J_m(m z)| <= rho(z)^m (Watson,
*Theory of Bessel Functions*, sec. 8.7) then bounds every term.  Checked
here: the bound is above the family's sum computed term by term (by the
engine, and once by mpmath at 30 digits), a skipped family gives what the
full sum gives, and the spectra's declared ``weight_increasing`` holds.
"""
from __future__ import annotations

import math

import mpmath as mp
import numpy as np
import pytest

from probe.engines.stationary import circular as circ
from probe.engines.stationary.gas import KernelGas
from probe.gas.dispersion import DISPERSIONS


def _gas(d, disp="bogoliubov"):
    return KernelGas(DISPERSIONS[disp](), d, 0.0, 0.0)


def _log10_bound(gas, R, v, W):
    hs = circ._HarmonicSums(gas, np.array([float(R)]), np.array([float(v)]),
                            np.array([float(W)]), 0.0, 1e-10, False, 10**7, math.inf)
    pts = np.array([0])
    mlo = circ.first_harmonic(hs.W, hs.wc, -1)
    ok, log_bound = hs.silent_bound(pts, mlo, hs._edge(-1, pts))
    return bool(ok[0]), float(log_bound[0]) / math.log(10)


@pytest.mark.parametrize("d", [2, 3])
@pytest.mark.parametrize("R, v, W", [(30, 0.5, 0.3), (100, 0.5, 0.3), (300, 0.9, 0.3),
                                     (1000, 0.9, 0.05), (200, 1.2, 0.3)])
def test_bound_is_above_the_summed_family(d, R, v, W):
    gas = _gas(d)
    up = circ.circular_kernel(gas, R, v, W, 0.0, rtol=1e-10)["up"][0]
    ok, log10_bound = _log10_bound(gas, R, v, W)
    assert ok and up > 0
    assert math.log10(up) < log10_bound


def test_bound_against_mpmath_family_sum():
    """2D, R = 30 xi, v = 0.5 c, gap 0.3 c/xi: the up family summed term by
    term in mpmath (30 digits, harmonics up to 400, beyond which the terms
    are below 1e-100 of the sum) lies below the bound and agrees with the
    engine."""
    mp.mp.dps = 30
    R, v, W = 30, mp.mpf("0.5"), mp.mpf("0.3")
    wc = v / R
    total = mp.mpf(0)
    for m in range(int(mp.floor(W / wc)) + 1, 401):
        w = m * wc - W
        q = mp.sqrt(2 * w * w / (mp.sqrt(1 + w * w) + 1))          # Bogoliubov q(w)
        weight = q * q / (2 + q * q)                                  # q S / v_g
        total += weight * mp.besselj(m, q * R) ** 2
    gas = _gas(2)
    up = circ.circular_kernel(gas, 30, 0.5, 0.3, 0.0, rtol=1e-10)["up"][0]
    assert abs(up / float(total) - 1) < 1e-9
    assert float(mp.log10(total)) < _log10_bound(gas, 30, 0.5, 0.3)[1]


@pytest.mark.parametrize("d", [2, 3])
def test_a_skipped_family_gives_what_the_full_sum_gives(d, monkeypatch):
    """Far below the threshold (v = 0.2 c, gap 1 c/xi, R = 50 xi) the bound
    is below 1e-300 and the family is not summed: the rates are those of the
    full sum (the up rate 0, the down rate to the bit), with fewer harmonics."""
    gas = _gas(d)
    assert _log10_bound(gas, 50, 0.2, 1.0)[1] < -300
    skipped = circ.circular_kernel(gas, 50, 0.2, 1.0, 0.0, rtol=1e-10)
    monkeypatch.setattr(circ._HarmonicSums, "silent_bound",
                        lambda self, pts, mlo, edge: (np.zeros(pts.size, dtype=bool),
                                                      np.zeros(pts.size)))
    full = circ.circular_kernel(gas, 50, 0.2, 1.0, 0.0, rtol=1e-10)
    assert skipped["down"] == full["down"]
    assert skipped["up"][0] == full["up"][0] == 0.0
    assert 0 < skipped["up"][1] < 1e-300
    assert skipped["harmonics"] < full["harmonics"]


@pytest.mark.parametrize("name", sorted(DISPERSIONS))
def test_declared_weight_increasing_holds(name):
    disp = DISPERSIONS[name]()
    if not disp.weight_increasing:
        pytest.skip("not declared")
    q = np.geomspace(1e-6, 1e4, 20001)
    S, vg = disp.structure_factor(q), disp.group_velocity(q)
    w3 = disp.omega(q) ** 3
    for weight in (q * S / vg, q * q * S / vg):
        assert np.all(np.diff(weight) >= -1e-15 * weight[1:])
        # growing no faster than omega^3: weight / omega^3 does not increase
        ratio = weight / w3
        assert np.all(np.diff(ratio) <= 1e-15 * ratio[:-1])


def test_phonon_up_family_ends_and_matches_mpmath():
    """Phonon spectrum (omega = q, S = q/2, v_g = 1), 2D point probe, R = 5
    xi, v = 0.5 c, gap 0.5 c/xi: the shells' q R/m grow towards v without a
    turning point, so only the bound by v/v_th (v_th = 1) ends the sum (it
    was refused after 2e6 harmonics).  Against the family summed in mpmath
    (30 digits, harmonics up to 600: beyond them the terms are below 1e-60
    of the sum): sum_m (q^2/2) J_m(q R)^2 with q = m v/R - W."""
    mp.mp.dps = 30
    R, v, W = 5, mp.mpf("0.5"), mp.mpf("0.5")
    total = mp.mpf(0)
    for m in range(int(mp.floor(W * R / v)) + 1, 601):
        q = m * v / R - W
        total += q * q / 2 * mp.besselj(m, q * R) ** 2
    out = circ.circular_kernel(_gas(2, "phonon"), 5, 0.5, 0.5, 0.0, rtol=1e-10)
    up, err = out["up"]
    assert abs(up - float(total)) <= err
    assert err <= 1e-10 * up
    assert out["harmonics"] < 2000
