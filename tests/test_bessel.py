"""The fast Bessel routine against mpmath at 25 digits (independent route)
and against its own symmetry J_{-m} = (-1)^m J_m."""
import mpmath as mp
import numpy as np

from probe.engines.bessel import jv_int


def test_against_mpmath_all_regions():
    mp.mp.dps = 25
    rng = np.random.default_rng(7)
    m = rng.integers(0, 2500, 50).astype(float)
    x = np.abs(m * rng.uniform(0.2, 2.5, m.size) + rng.uniform(-40, 40, m.size)) + 0.5
    # small orders at large arguments (Hankel regime) and near the turning point
    m = np.r_[m, [0, 1, 5, 30, 200, 1000, 1000, 2500]]
    x = np.r_[x, [900.0, 1500.0, 60.0, 31.0, 205.0, 1130.0, 870.0, 2500.5]]
    got = jv_int(m, x)
    for mi, xi, gi in zip(m, x, got):
        ref = float(mp.besselj(int(mi), xi, maxprec=20000))
        # scale: the oscillation envelope above the turning point, the value below
        env = (2 / (np.pi * np.sqrt(max(xi * xi - mi * mi, 1.0)))) ** 0.5 if xi > mi else abs(ref)
        if env == 0:
            continue
        assert abs(gi - ref) <= 1e-9 * max(env, abs(ref)), (mi, xi, gi, ref)


def test_negative_orders():
    m = np.arange(0, 300.0)
    x = 1.3 * m + 2
    assert np.allclose(jv_int(-m, x), (-1.0) ** m * jv_int(m, x), rtol=0, atol=0)
