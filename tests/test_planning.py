"""Planning under uncertainty: the sampling of uncertain inputs, elasticities
and the number of shots, against their definitions and scipy.stats."""
from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import stats

from probe.design.shots import check_readout, measured, shots_needed, shots_sentence
from probe.design.uncertainty import (LEVELS, UncertainInput, check_samples, dominant_input,
                                      draw_inputs, elasticity, quantiles)
from probe.errors import InputError


def test_log_normal_inputs_have_the_nominal_median_and_the_stated_spread():
    """sigma_ln = sqrt(ln(1 + u^2)) gives a log-normal whose relative
    standard deviation is u (the moments of the log-normal distribution),
    with its median at the nominal value."""
    u = UncertainInput("condensate.density", 6e19, relative=0.2)
    x = draw_inputs([u], 400_000, seed=3)["condensate.density"]
    assert np.median(x) == pytest.approx(6e19, rel=3e-3)
    assert np.std(x) / np.mean(x) == pytest.approx(0.2, rel=1e-2)
    assert np.all(x > 0)


def test_signed_inputs_are_normal():
    u = UncertainInput("probe.coupling_length", -2e-9, absolute=1e-10, positive=False)
    x = draw_inputs([u], 200_000, seed=1)["probe.coupling_length"]
    assert np.mean(x) == pytest.approx(-2e-9, rel=2e-3)
    assert np.std(x) == pytest.approx(1e-10, rel=1e-2)


def test_the_same_seed_gives_the_same_numbers():
    u = [UncertainInput("a", 1.0, relative=0.1), UncertainInput("b", 2.0, relative=0.3)]
    one, two = draw_inputs(u, 50, seed=7), draw_inputs(u, 50, seed=7)
    for k in one:
        np.testing.assert_array_equal(one[k], two[k])


def test_quantiles_are_the_stated_levels_and_contain_the_median():
    # values at the normal quantiles of an even grid of probabilities: their
    # quantile at level L is the normal quantile of 0.0005 + 0.999 L
    q = quantiles(stats.norm.ppf(np.linspace(0.0005, 0.9995, 20001)))
    np.testing.assert_allclose(q, stats.norm.ppf(0.0005 + 0.999 * np.array(LEVELS)),
                               atol=1e-3)


def test_elasticities_are_exact_for_power_laws():
    """Gamma ~ kappa^2 ~ a^2 (3D, golden rule): elasticity 2; a rate ~ n^(1/2)
    elasticity 0.5."""
    inputs = [UncertainInput("probe.coupling_length", 3e-9, relative=0.05),
              UncertainInput("condensate.density", 6e19, relative=0.1)]

    def evaluate(changed):
        a = changed.get("probe.coupling_length", 3e-9)
        n = changed.get("condensate.density", 6e19)
        return {"up_rate": 7.0 * (a / 3e-9) ** 2 * (n / 6e19) ** 0.5}
    e = elasticity(evaluate, inputs, ["up_rate"])["up_rate"]
    assert e["probe.coupling_length"] == pytest.approx(2.0, rel=1e-7)
    assert e["condensate.density"] == pytest.approx(0.5, rel=1e-7)
    assert dominant_input(e, inputs) == "probe.coupling_length"


def test_small_uncertainties_match_linear_propagation():
    """For a small relative uncertainty u the 16-84 % band of Y = X^k has the
    half-width k u Y (linear propagation), within the sampling error."""
    u = UncertainInput("x", 5.0, relative=0.01)
    x = draw_inputs([u], 100_000, seed=2)["x"]
    q = quantiles(x ** 3)
    half = 0.5 * (q[3] - q[1])
    assert half == pytest.approx(3 * 0.01 * 125.0, rel=0.02)


@pytest.mark.parametrize("samples", [9, 1_000_001, 20.5, True])
def test_samples_out_of_range_are_refused(samples):
    with pytest.raises(InputError, match="uncertainty.samples"):
        check_samples(samples)


@pytest.mark.parametrize("bad", [0.0, -0.1, float("nan")])
def test_uncertainties_must_be_positive(bad):
    with pytest.raises(InputError, match="uncertainty.condensate.density"):
        UncertainInput("condensate.density", 6e19, relative=bad)


# --- shots -----------------------------------------------------------------
@pytest.mark.parametrize("ps, pr, z", [(0.12, 0.05, 3.0), (0.5, 0.45, 2.0),
                                       (0.031, 0.03, stats.norm.ppf(0.975))])
def test_shots_needed_is_the_smallest_n_that_reaches_z(ps, pr, z):
    """Two-proportion z-test (NIST/SEMATECH e-Handbook, 7.3.3) with the
    unpooled standard error: at N shots each the statistic
    |p_s - p_r| / sqrt((p_s(1-p_s) + p_r(1-p_r))/N) reaches z, at N - 1 it
    does not."""
    n = shots_needed(ps, pr, z)

    def statistic(m):
        return abs(ps - pr) / math.sqrt((ps * (1 - ps) + pr * (1 - pr)) / m)
    assert statistic(n) >= z > statistic(n - 1)


def test_readout_errors_map_probabilities():
    """p = e0 + (1 - e0 - e1) P: P = 0 reads e0, P = 1 reads 1 - e1."""
    np.testing.assert_allclose(measured([0.0, 1.0, 0.3], 0.02, 0.1),
                               [0.02, 0.9, 0.02 + 0.88 * 0.3])


def test_equal_signal_and_reference_need_infinitely_many_shots():
    assert shots_needed(0.1, 0.1) == math.inf
    assert "no number of repetitions" in shots_sentence(math.inf, 3)


@pytest.mark.parametrize("e0, e1, z, key", [(-0.1, 0.0, 3, "readout.false_excited"),
                                            (0.0, 1.0, 3, "readout.missed_excited"),
                                            (0.6, 0.5, 3, "readout.missed_excited"),
                                            (0.0, 0.0, 0, "readout.significance")])
def test_bad_readout_is_refused(e0, e1, z, key):
    with pytest.raises(InputError, match=key.replace(".", r"\.")):
        check_readout(e0, e1, z)
