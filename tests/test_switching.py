"""Tests of the switching functions chi(t)."""
from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import integrate

from probe.errors import InputError
from probe.detectors.switching import (HARD_CUT_WARNING, Gaussian, PathSpan, Window,
                             smooth_step)
from trajectories import Linear, Spline


def _key(exc_info):
    return exc_info.value.key


# --- Gaussian ---------------------------------------------------------------
def test_gaussian_values_support_and_transform():
    g = Gaussian(2.0, centre=1.0)
    # definition exp(-(t-c)^2/(2 w^2)), evaluated by hand at t = c + w
    assert g(1.0 + 2.0) == pytest.approx(math.exp(-0.5), rel=1e-15)
    lo, hi = g.support
    assert (lo, hi) == pytest.approx((1.0 - 8.6 * 2.0, 1.0 + 8.6 * 2.0))
    # at the support edge chi = exp(-8.6^2/2) = 8.7e-17 < 1e-16 (hand evaluation)
    assert g(hi) < 1e-16 and g(lo) < 1e-16
    assert g(hi - 0.5) > 1e-16
    # Fourier transform closed form sqrt(2 pi) w e^{-a^2 w^2/2}, checked by quad
    a = 0.7
    val = integrate.quad(lambda t: g(t) * math.cos(a * (t - 1.0)), lo, hi,
                         epsabs=0, epsrel=1e-13, limit=200)[0]
    assert val == pytest.approx(math.sqrt(2 * math.pi) * 2.0 * math.exp(-(a * 2.0) ** 2 / 2),
                                rel=1e-11)
    # the bandwidth is where that closed form falls to eps of its peak
    eps = 1e-6
    f = g.bandwidth(eps)
    assert math.exp(-(f * 2.0) ** 2 / 2) == pytest.approx(eps, rel=1e-12)
    assert g.warnings == []


def test_gaussian_validation():
    for bad in (0.0, -1.0, float("nan"), "x"):
        with pytest.raises(InputError) as e:
            Gaussian(bad)
        assert _key(e) == "trajectory.switching_width"


# --- Window -----------------------------------------------------------------
def test_smooth_step_is_a_symmetric_step():
    x = np.linspace(-0.5, 1.5, 2001)
    p = smooth_step(x)
    assert np.all(p[x <= 0] == 0) and np.all(p[x >= 1] == 1)
    assert np.all(np.diff(p) >= 0)
    # psi(x) + psi(1-x) = 1 follows from the definition (limit that must hold)
    np.testing.assert_allclose(smooth_step(x) + smooth_step(1 - x), 1.0, atol=1e-15)


def test_window_smoothness_plateau_and_integral():
    w = Window(0.0, 10.0, 2.0)
    assert w(np.array([-1.0, 0.0, 10.0, 11.0])).tolist() == [0, 0, 0, 0]
    np.testing.assert_array_equal(w(np.linspace(2.0, 8.0, 7)), 1.0)
    assert w.warnings == []
    # smoothness: for a C^k function the k-th divided difference Delta^k y/h^k
    # tends to the k-th derivative as h -> 0, so halving h leaves its size
    # unchanged; a jump or kink at a join makes it grow like 1/h (shown by the
    # hard cut as a control)
    def growth(fun, t0, k):
        sizes = []
        for h in (2e-3, 1e-3):
            t = t0 + h * np.arange(-40, 41)
            sizes.append(np.max(np.abs(np.diff(fun(t), n=k))) / h ** k)
        return sizes[1] / sizes[0]

    for t0 in (0.0, 2.0, 8.0, 10.0, 0.3):
        for k in range(1, 5):
            assert growth(w, t0, k) < 1.2, (t0, k)
    assert growth(Window(0.0, 10.0, 0.0), 0.0, 1) > 1.8
    # int chi dt = stop - start - ramp because int_0^1 psi = 1/2 (symmetry)
    val = integrate.quad(w, 0, 10, points=[2, 8], epsabs=0, epsrel=1e-12, limit=200)[0]
    assert val == pytest.approx(w.integral, rel=1e-10)


def test_window_bandwidth_bounds_the_transform():
    w = Window(0.0, 20.0, 4.0)
    eps = 1e-4
    f = w.bandwidth(eps)
    assert 0 < f < 100
    # the transform computed independently (quad with cosine weight) must be
    # below eps * int chi beyond the bandwidth
    for ff in (f, 1.3 * f, 2 * f):
        re = integrate.quad(w, 0, 20, weight="cos", wvar=ff, limit=400)[0]
        im = integrate.quad(w, 0, 20, weight="sin", wvar=ff, limit=400)[0]
        assert math.hypot(re, im) <= eps * w.integral


def test_hard_cut_warns_and_is_allowed():
    w = Window(0.0, 5.0, 0.0)
    assert w.hard_cut
    assert HARD_CUT_WARNING in w.warnings
    assert "spurious broadband excitation" in w.warnings[0]
    assert w(2.5) == 1.0 and w(5.1) == 0.0
    assert math.isinf(w.bandwidth(1e-3))


def test_window_validation_keys():
    with pytest.raises(InputError) as e:
        Window(1.0, 1.0, 0.0)
    assert _key(e) == "trajectory.stop"
    with pytest.raises(InputError) as e:
        Window(2.0, 1.0, 0.0)
    assert _key(e) == "trajectory.stop"
    with pytest.raises(InputError) as e:
        Window(0.0, 1.0, -0.1)
    assert _key(e) == "trajectory.ramp"
    with pytest.raises(InputError) as e:
        Window(0.0, 1.0, 0.6)
    assert _key(e) == "trajectory.ramp"
    with pytest.raises(InputError) as e:
        Window("a", 1.0, 0.1)
    assert _key(e) == "trajectory.start"
    Window(0.0, 1.0, 0.5)      # 2 ramp = stop - start is allowed


def test_window_extent():
    w = Window(0.0, 10.0, 2.0)
    lo, hi = w.extent(1e-6)
    assert 0 < lo < 2 and 8 < hi < 10
    assert w(lo) == pytest.approx(1e-6, rel=1e-6)
    assert w.support == (0.0, 10.0)


# --- PathSpan -----------------------------------------------------------------
def test_pathspan_uses_the_time_span():
    t = np.linspace(1.0, 3.0, 9)
    path = Spline(t, np.stack([t, 0 * t], axis=1))
    p = PathSpan(path)
    assert (p.start, p.stop) == (1.0, 3.0)
    assert p.ramp == pytest.approx(0.05 * 2.0)
    assert PathSpan(path, ramp=0.5).ramp == 0.5
    with pytest.raises(InputError) as e:
        PathSpan(path, ramp=1.5)
    assert _key(e) == "trajectory.ramp"
    with pytest.raises(InputError) as e:
        PathSpan(Linear(1.0))
    assert _key(e) == "trajectory.switching"
    assert PathSpan(path, ramp=0.0).warnings == [HARD_CUT_WARNING]
