"""The fast Bessel routine against mpmath at 25 digits (independent route)
and against its own symmetry J_{-m} = (-1)^m J_m."""
import mpmath as mp
import numpy as np

from probe.engines.bessel import _debye, jv_error, jv_int


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


def test_debye_near_the_turning_point_against_mpmath():
    """Orders 1e3 and 5e3 at 80-280 above and below the turning point, where
    Debye's expansions need 11 to 18 corrections to reach 1e-16 (with ten
    they fell back to scipy there): each value within its bound ``jv_error``
    of mpmath.besselj at 30 digits (independent route)."""
    cases = [(1000, d) for d in (90, 120, 160, -88, -120, -150)] + \
        [(5000, d) for d in (150, 200, 270, -145, -200, -260)]
    nu = np.array([float(n) for n, _ in cases])
    x = np.array([n + d + 0.37 for n, d in cases])
    r = np.sqrt(np.abs((x - nu) * (x + nu)))
    out, use = np.empty(nu.size), np.zeros(nu.size, dtype=bool)
    _debye(nu, x, r, out, use)
    assert use.all()
    with mp.workdps(30):
        for n, xi, got in zip(nu, x, out):
            ref = float(mp.besselj(int(n), mp.mpf(float(xi)), maxprec=20000))
            err = float(jv_error(np.array([n]), np.array([xi]), np.array([got]))[0])
            assert abs(got - ref) <= err, (n, xi, got, ref, err)


def test_route_near_the_turning_point_depends_on_the_group_alone():
    """Values near the turning point (where Debye's corrections stay above
    1e-16) come from the transition expansion only in a group with at least
    TRANSITION_BATCH of them, else from scipy's jv; a group's values are the
    same bits alone or beside other groups (a sweep's point gives the same
    digits in any company), and both routes agree with each other to the
    error bound."""
    from scipy.special import jv

    from probe.engines.bessel import TRANSITION_BATCH, jv_bounded
    from probe.engines.bessel_transition import transition_jv
    rng = np.random.default_rng(7)
    nu_big = np.round(rng.uniform(2e3, 3e4, TRANSITION_BATCH + 40))
    x_big = nu_big + rng.uniform(-6, 6, nu_big.size) * np.cbrt(nu_big)
    nu_few = np.round(rng.uniform(2e3, 3e4, 30))
    x_few = nu_few + rng.uniform(-6, 6, nu_few.size) * np.cbrt(nu_few)
    big = jv_bounded(nu_big, x_big, np.zeros(nu_big.size, dtype=int))
    few = jv_bounded(nu_few, x_few, np.zeros(nu_few.size, dtype=int))
    both = jv_bounded(np.concatenate([nu_few, nu_big]), np.concatenate([x_few, x_big]),
                      np.repeat([0, 1], [nu_few.size, nu_big.size]))
    for alone, n0, n1 in ((few, 0, nu_few.size), (big, nu_few.size, None)):
        for a, b in zip(alone, both):
            assert np.array_equal(a, b[n0:n1])
    val, good = transition_jv(nu_big, x_big)
    assert good.all()
    assert np.array_equal(big[0], val)                  # the transition route
    assert np.array_equal(few[0], jv(nu_few, x_few))    # scipy's
    ref = jv(nu_big, x_big)
    assert np.all(np.abs(big[0] - ref) <= big[1] + jv_error(nu_big, x_big, ref))
