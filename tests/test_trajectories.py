"""Tests of the trajectories package against closed-form kinematics."""

from __future__ import annotations

import contextlib
import sys
from pathlib import Path

import numpy as np
import pytest

# Make the repository importable when pytest is run without an installed package.
_ROOT = str(Path(__file__).resolve().parents[1])
if _ROOT not in sys.path:
    sys.path.insert(0, _ROOT)

from trajectories import (  # noqa: E402
    Circular,
    Linear,
    Piecewise,
    Spline,
    Trajectory,
    TrajectoryError,
    load_waypoints_csv,
)


@contextlib.contextmanager
def raises_key(key):
    """Expect a TrajectoryError whose key is ``key``; yields the pytest ExceptionInfo."""
    with pytest.raises(TrajectoryError) as info:
        yield info
    assert info.value.key == key, str(info.value)


# ----------------------------------------------------------------------------
# TrajectoryError
# ----------------------------------------------------------------------------

def test_error_attributes_and_str():
    err = TrajectoryError("speed", "must be >= 0")
    assert isinstance(err, ValueError)
    assert err.key == "speed"
    assert err.message == "must be >= 0"
    assert str(err) == "speed: must be >= 0"


# ----------------------------------------------------------------------------
# Linear
# ----------------------------------------------------------------------------

def test_linear_closed_form():
    v, d, x0 = 2.5e-3, np.array([0.0, 3.0, 4.0]), np.array([1e-6, -2e-6, 0.5e-6])
    traj = Linear(v, direction=d, start=x0)
    n = d / 5.0
    t = np.linspace(-1.0, 3.0, 7)
    np.testing.assert_allclose(traj.position(t), x0 + v * t[:, None] * n, rtol=0, atol=1e-18)
    np.testing.assert_allclose(traj.velocity(t), np.tile(v * n, (7, 1)), rtol=1e-15)
    np.testing.assert_array_equal(traj.acceleration(t), np.zeros((7, 3)))
    np.testing.assert_allclose(traj.speed(t), v, rtol=1e-15)
    assert traj.stationary and traj.stationary_kind == "inertial"
    assert traj.time_span is None
    assert traj.stationary_parameters() == {"speed": v}
    assert isinstance(traj.stationary_parameters()["speed"], float)
    assert isinstance(traj, Trajectory)


def test_linear_shapes_and_dimensions():
    traj = Linear(1.0)
    assert traj.ndim == 3
    assert traj.position(0.5).shape == (3,)
    assert traj.position(np.zeros((2, 4))).shape == (2, 4, 3)
    assert traj.speed(np.zeros((2, 4))).shape == (2, 4)
    assert traj.position(np.array([])).shape == (0, 3)
    flat = Linear(2.0, direction=(-1.0, 1.0))
    assert flat.ndim == 2
    np.testing.assert_allclose(flat.position(1.0), [-np.sqrt(2), np.sqrt(2)], rtol=1e-15)
    line = Linear(3.0, direction=(-2.0,), start=(1.0,))
    np.testing.assert_allclose(line.position([0.0, 1.0]), [[1.0], [-2.0]])


def test_linear_at_rest_is_allowed():
    traj = Linear(0.0, start=(1.0, 2.0, 3.0))
    np.testing.assert_array_equal(traj.position([0.0, 10.0]), [[1, 2, 3], [1, 2, 3]])
    assert traj.max_speed() == 0.0


def test_linear_speed_grid():
    speeds = np.linspace(0.0, 1e-3, 5)
    traj = Linear(speeds)
    params = traj.stationary_parameters()
    np.testing.assert_array_equal(params["speed"], speeds)
    assert traj.max_speed() == pytest.approx(1e-3)
    with raises_key("speed") as info:
        traj.position(0.0)
    assert "scalar" in info.value.message


@pytest.mark.parametrize("kwargs, key", [
    ({"speed": -1.0}, "speed"),
    ({"speed": np.nan}, "speed"),
    ({"speed": [1.0, -0.5]}, "speed"),
    ({"speed": "fast"}, "speed"),
    ({"speed": 1.0, "direction": (0.0, 0.0, 0.0)}, "direction"),
    ({"speed": 1.0, "direction": (np.inf, 0.0, 0.0)}, "direction"),
    ({"speed": 1.0, "direction": (1.0, 0.0, 0.0, 0.0)}, "direction"),
    ({"speed": 1.0, "start": (0.0, 0.0)}, "start"),
])
def test_linear_invalid(kwargs, key):
    with raises_key(key):
        Linear(**kwargs)


def test_nonfinite_time_rejected():
    with raises_key("t"):
        Linear(1.0).position([0.0, np.nan])


# ----------------------------------------------------------------------------
# Circular
# ----------------------------------------------------------------------------

R, V = 3e-6, 1.2e-3          # 3 um radius, 1.2 mm/s


def _circle(**kwargs):
    return Circular(R, speed=V, centre=(1e-6, -2e-6, 0.5e-6), **kwargs)


def test_circular_invariants():
    traj = _circle()
    w = V / R
    t = np.linspace(0.0, 4 * np.pi / w, 101)
    rel = traj.position(t) - traj.centre
    np.testing.assert_allclose(np.linalg.norm(rel, axis=-1), R, rtol=1e-13)
    np.testing.assert_allclose(traj.speed(t), V, rtol=1e-13)
    acc = traj.acceleration(t)
    np.testing.assert_allclose(np.linalg.norm(acc, axis=-1), V**2 / R, rtol=1e-13)
    # centripetal: a = -w^2 (x - centre)
    np.testing.assert_allclose(acc, -(w**2) * rel, rtol=0, atol=1e-12 * V**2 / R)
    # velocity perpendicular to the radius
    np.testing.assert_allclose(np.sum(rel * traj.velocity(t), axis=-1), 0.0, atol=1e-14 * R * V)
    params = traj.stationary_parameters()
    assert params["speed"] == pytest.approx(V, rel=1e-15)
    assert params["radius"] == pytest.approx(R, rel=1e-15)
    assert params["angular_frequency"] == pytest.approx(w, rel=1e-15)
    assert traj.stationary and traj.stationary_kind == "circular"
    assert traj.time_span is None


def test_circular_period():
    traj = Circular(2.0, angular_frequency=0.7)
    period = 2 * np.pi / 0.7
    assert traj.period == pytest.approx(period, rel=1e-15)
    assert traj.stationary_parameters()["speed"] == pytest.approx(1.4, rel=1e-15)
    t = np.linspace(0.0, period, 17)
    np.testing.assert_allclose(traj.position(t + period), traj.position(t), atol=1e-12)
    np.testing.assert_allclose(traj.position(period / 2), [-2.0, 0.0, 0.0], atol=1e-12)


def test_circular_derivatives_match_finite_differences():
    traj = _circle(normal=(1.0, -2.0, 0.5))
    w = V / R
    t = np.linspace(0.0, 2 * np.pi / w, 13)
    h = 1e-4 / w
    dx = (traj.position(t + h) - traj.position(t - h)) / (2 * h)
    dv = (traj.velocity(t + h) - traj.velocity(t - h)) / (2 * h)
    # central differences are second order: error ~ (w h)^2 / 6 ~ 2e-9 relative
    np.testing.assert_allclose(dx, traj.velocity(t), rtol=0, atol=1e-7 * V)
    np.testing.assert_allclose(dv, traj.acceleration(t), rtol=0, atol=1e-7 * V**2 / R)


def test_circular_counter_clockwise_about_z():
    traj = Circular(1.0, speed=2.0)
    np.testing.assert_allclose(traj.position(0.0), [1.0, 0.0, 0.0])
    np.testing.assert_allclose(traj.velocity(0.0), [0.0, 2.0, 0.0], atol=1e-15)
    quarter = traj.period / 4
    np.testing.assert_allclose(traj.position(quarter), [0.0, 1.0, 0.0], atol=1e-15)
    reverse = Circular(1.0, speed=2.0, normal=(0.0, 0.0, -1.0))
    np.testing.assert_allclose(reverse.velocity(0.0), [0.0, -2.0, 0.0], atol=1e-15)


@pytest.mark.parametrize("normal", [(1.0, 0.0, 0.0), (0.0, 1.0, 0.0), (1.0, 1.0, 1.0),
                                    (0.3, -0.2, -0.9)])
def test_circular_stays_in_plane_perpendicular_to_normal(normal):
    traj = _circle(normal=normal)
    n = np.asarray(normal) / np.linalg.norm(normal)
    t = np.linspace(0.0, traj.period, 50)
    rel = traj.position(t) - traj.centre
    np.testing.assert_allclose(rel @ n, 0.0, atol=1e-15 * R)
    np.testing.assert_allclose(traj.velocity(t) @ n, 0.0, atol=1e-15 * V)
    np.testing.assert_allclose(np.linalg.norm(rel, axis=-1), R, rtol=1e-13)
    # rotation sense: (x - c) x v along +normal with magnitude R v
    ang = np.cross(rel, traj.velocity(t))
    np.testing.assert_allclose(ang, np.outer(np.full(t.size, R * V), n), rtol=0,
                               atol=1e-12 * R * V)


def test_circular_planar():
    traj = Circular(0.5, angular_frequency=2.0, centre=(1.0, 1.0))
    assert traj.ndim == 2
    assert traj.position(np.zeros(4)).shape == (4, 2)
    np.testing.assert_allclose(traj.position(0.0), [1.5, 1.0])
    np.testing.assert_allclose(traj.velocity(0.0), [0.0, 1.0], atol=1e-15)
    with raises_key("normal"):
        Circular(0.5, angular_frequency=2.0, centre=(1.0, 1.0), normal=(1.0, 0.0, 0.0))


def test_circular_parameter_grid():
    radii = np.array([1e-6, 2e-6, 4e-6])
    speeds = np.array([[1e-4], [2e-4]])
    traj = Circular(radii, speed=speeds)
    params = traj.stationary_parameters()
    assert params["speed"].shape == params["radius"].shape == (2, 3)
    np.testing.assert_allclose(params["angular_frequency"], speeds / radii, rtol=1e-15)
    assert traj.max_speed() == pytest.approx(2e-4)
    with raises_key("radius"):
        traj.position(0.0)
    with raises_key("speed"):
        Circular(radii, speed=np.ones(2))


def test_circular_invalid():
    with raises_key("radius") as info:
        Circular(0.0, speed=1.0)
    assert "linear trajectory with speed 0" in info.value.message
    with raises_key("radius"):
        Circular(-1.0, speed=1.0)
    with raises_key("speed"):
        Circular(1.0)
    with raises_key("speed"):
        Circular(1.0, speed=1.0, angular_frequency=1.0)
    with raises_key("speed"):
        Circular(1.0, speed=0.0)
    with raises_key("angular_frequency"):
        Circular(1.0, angular_frequency=-1.0)
    with raises_key("normal"):
        Circular(1.0, speed=1.0, normal=(0.0, 0.0, 0.0))
    with raises_key("centre"):
        Circular(1.0, speed=1.0, centre=(0.0,))


# ----------------------------------------------------------------------------
# Spline
# ----------------------------------------------------------------------------

@pytest.mark.parametrize("order", [1, 2, 3, 4, 5])
def test_spline_reproduces_uniform_motion(order):
    line = Linear(1.5, direction=(1.0, 2.0, -2.0), start=(0.1, 0.2, 0.3))
    times = np.sort(np.random.default_rng(1).uniform(0.0, 2.0, 9))
    spline = Spline(times, line.position(times), order=order)
    t = np.linspace(times[0], times[-1], 301)
    np.testing.assert_allclose(spline.position(t), line.position(t), rtol=0, atol=1e-10)
    np.testing.assert_allclose(spline.velocity(t), line.velocity(t), rtol=0, atol=1e-10)
    np.testing.assert_allclose(spline.acceleration(t), 0.0, rtol=0, atol=1e-10)
    assert spline.time_span == (times[0], times[-1])
    assert not spline.stationary and spline.stationary_kind is None


def test_spline_holds_end_points_outside_span():
    times = np.array([0.0, 1.0, 2.0, 3.0])
    pos = np.array([[0.0, 0.0], [1.0, 1.0], [2.0, 4.0], [3.0, 9.0]])
    spline = Spline(times, pos)
    np.testing.assert_allclose(spline.position([-5.0, 0.0, 3.0, 7.0]),
                               [[0, 0], [0, 0], [3, 9], [3, 9]], atol=1e-14)
    np.testing.assert_array_equal(spline.velocity([-5.0, 7.0]), np.zeros((2, 2)))
    np.testing.assert_array_equal(spline.acceleration([-5.0, 7.0]), np.zeros((2, 2)))
    # inside: the cubic interpolant of y = x^2 (with x = t) is exact
    np.testing.assert_allclose(spline.velocity(1.5), [1.0, 3.0], atol=1e-12)
    np.testing.assert_allclose(spline.acceleration(2.5), [0.0, 2.0], atol=1e-12)


def test_spline_one_dimensional_positions():
    spline = Spline([0.0, 1.0], [2.0, 4.0], order=1)
    assert spline.ndim == 1
    np.testing.assert_allclose(spline.position(0.25), [2.5])
    np.testing.assert_allclose(spline.velocity(0.25), [2.0])
    np.testing.assert_array_equal(spline.acceleration(0.25), [0.0])


def _circle_spline_errors(n):
    """Errors of a cubic spline through n+1 samples of one turn of a circle."""
    radius, w = 2.0, 3.0
    period = 2 * np.pi / w
    circle = Circular(radius, angular_frequency=w, centre=(0.0, 0.0))
    times = np.linspace(0.0, period, n + 1)
    spline = Spline(times, circle.position(times))
    dense = np.linspace(0.0, period, 2001)
    pos_err = np.max(np.linalg.norm(spline.position(dense) - circle.position(dense), axis=1))
    vel_err = np.max(np.linalg.norm(spline.velocity(dense) - circle.velocity(dense), axis=1))
    mid = times[(times > period / 4) & (times < 3 * period / 4)]
    knot_err = np.max(np.linalg.norm(spline.velocity(mid) - circle.velocity(mid), axis=1))
    return pos_err, vel_err, knot_err


def test_spline_converges_to_circle():
    errs = np.array([_circle_spline_errors(n) for n in (32, 64, 128)])
    ratios = errs[:-1] / errs[1:]
    pos_ratio, vel_ratio, knot_ratio = ratios.T
    # position: O(h^4) everywhere
    assert np.all((pos_ratio > 10) & (pos_ratio < 20)), pos_ratio
    # velocity at waypoints away from the ends: O(h^4) (superconvergence)
    assert np.all((knot_ratio > 10) & (knot_ratio < 20)), knot_ratio
    # velocity in the maximum norm over the span: O(h^3)
    assert np.all((vel_ratio > 6) & (vel_ratio < 10)), vel_ratio
    assert errs[-1, 2] < 1e-6


def test_spline_speed_limit_warnings():
    times = np.array([0.0, 1.0, 2.0, 3.0, 4.0])
    pos = np.array([0.0, 1.0, 1.0, 1.0, 5.0])  # overshoot between waypoints
    quiet = Spline(times, pos, max_speed=100.0)
    assert quiet.warnings == []
    loud = Spline(times, pos, max_speed=1.0)
    assert len(loud.warnings) == 1
    vmax = loud.max_speed()
    # cross-check the refined maximum against a very dense scan
    dense = np.linspace(0.0, 4.0, 400001)
    assert vmax == pytest.approx(np.max(loud.speed(dense)), rel=1e-9)
    assert f"{vmax:.6g} m/s" in loud.warnings[0]
    assert Spline(times, pos).warnings == []
    with raises_key("max_speed"):
        Spline(times, pos, max_speed=-1.0)


@pytest.mark.parametrize("times, positions, order, key, text", [
    ([0.0, 1.0, 1.0, 2.0], [0, 1, 2, 3], 3, "waypoints.t", "t[2]=1 is not after t[1]=1"),
    ([0.0, 2.0, 1.0, 3.0], [0, 1, 2, 3], 3, "waypoints.t", "strictly increasing"),
    ([0.0, np.nan, 2.0, 3.0], [0, 1, 2, 3], 3, "waypoints.t", "t[1]"),
    ([0.0, 1.0, 2.0, np.inf], [0, 1, 2, 3], 3, "waypoints.t", "t[3]"),
    ([0.0, 1.0, 2.0, 3.0], [[0, 0], [1, 1], [2, np.nan], [3, 3]], 3, "waypoints.y", "y[2]"),
    ([0.0, 1.0, 2.0], [0, 1, 2], 3, "waypoints", "at least 4"),
    ([0.0, 1.0, 2.0, 3.0, 4.0], [0, 1, 2, 3, 4], 5, "waypoints", "at least 6"),
    ([0.0, 1.0, 2.0, 3.0], [0, 1, 2], 3, "waypoints", "shape"),
    ([0.0, 1.0, 2.0, 3.0], np.zeros((4, 4)), 3, "waypoints", "shape"),
    ([[0.0, 1.0], [2.0, 3.0]], [0, 1, 2, 3], 3, "waypoints.t", "1-D"),
    ([0.0, 1.0, 2.0, 3.0], [0, 1, 2, 3], 6, "order", "1 to 5"),
    ([0.0, 1.0, 2.0, 3.0], [0, 1, 2, 3], 2.5, "order", "1 to 5"),
])
def test_spline_invalid(times, positions, order, key, text):
    with raises_key(key) as info:
        Spline(times, positions, order=order)
    assert text in info.value.message


@pytest.mark.parametrize("times, positions, order, key, fragment", [
    ([0.0, 1.0, 2.0, 3.0], [0, 1e308, 2, 3], 3, "waypoints", "overflow double precision"),
    ([0.0, 1.0, 2.0, 3.0], [0, 1e308, 2, 3], 1, "waypoints", "beyond 1e+150 m"),
    ([0.0, 1.0, 2.0, 3.0], [0, 1e300, -1e300, 3], 3, "waypoints", "position"),
    ([0.0, 1e-300, 1.0, 2.0], [0, 1, 2, 3], 1, "waypoints", "velocity"),
    ([0.0, 1.0, 2.0, 1e308], [0, 1, 2, 3], 3, "waypoints.t", "collocation matrix is singular"),
    ([-1e308, 0.0, 1.0, 1e308], [0, 1, 2, 3], 3, "waypoints.t", "beyond double precision"),
])
def test_spline_out_of_double_range_raises_without_warnings(times, positions, order, key,
                                                            fragment):
    import warnings

    with warnings.catch_warnings():
        warnings.simplefilter("error")
        with raises_key(key) as info:
            Spline(times, positions, order=order, max_speed=1.0)
    assert fragment in info.value.message


# ----------------------------------------------------------------------------
# CSV waypoints
# ----------------------------------------------------------------------------

def _write(tmp_path, text, name="path.csv"):
    path = tmp_path / name
    path.write_text(text, encoding="utf-8")
    return path


def test_csv_units_converted(tmp_path):
    path = _write(tmp_path, "# a straight move at 2 um/ms = 2 mm/s along x\n"
                            "\n"
                            "t [ms], x [um], y [um]\n"
                            "0, 0, 5\n"
                            "1, 2, 5\n"
                            "# halfway\n"
                            "2.5, 5, 5\n"
                            "4, 8, 5\n")
    spline = load_waypoints_csv(path)
    assert isinstance(spline, Spline) and spline.ndim == 2
    np.testing.assert_allclose(spline.times, [0.0, 1e-3, 2.5e-3, 4e-3], rtol=1e-15)
    np.testing.assert_allclose(spline.waypoints[:, 0], [0.0, 2e-6, 5e-6, 8e-6], rtol=1e-15)
    np.testing.assert_allclose(spline.waypoints[:, 1], 5e-6, rtol=1e-15)
    t = np.linspace(0.0, 4e-3, 9)
    np.testing.assert_allclose(spline.velocity(t), np.tile([2e-3, 0.0], (9, 1)),
                               rtol=0, atol=1e-12)
    assert spline.time_span == pytest.approx((0.0, 4e-3))


def test_csv_three_dimensions_other_units(tmp_path):
    path = _write(tmp_path, "x [\u00b5m], y [nm], z [mm], t [min]\n"
                            "1, 0, 0, 0\n"
                            "2, 1, 0, 1\n"
                            "3, 2, 1, 2\n"
                            "4, 3, 1, 3\n")
    spline = load_waypoints_csv(path, order=1)
    assert spline.ndim == 3 and spline.order == 1
    np.testing.assert_allclose(spline.times, [0.0, 60.0, 120.0, 180.0])
    np.testing.assert_allclose(spline.waypoints[2], [3e-6, 2e-9, 1e-3], rtol=1e-15)


def test_csv_time_units(tmp_path):
    for unit, scale in [("s", 1.0), ("ms", 1e-3), ("us", 1e-6), ("ns", 1e-9)]:
        path = _write(tmp_path, f"t [{unit}], x [m]\n0, 0\n1, 1\n", name=f"{unit}.csv")
        assert load_waypoints_csv(path, order=1).time_span == (0.0, scale)


def test_csv_speed_limit(tmp_path):
    path = _write(tmp_path, "t [ms], x [um]\n0, 0\n1, 10\n2, 20\n3, 30\n")
    assert load_waypoints_csv(path, max_speed=0.02).warnings == []
    warned = load_waypoints_csv(path, max_speed=5e-3)
    assert len(warned.warnings) == 1 and "0.01 m/s" in warned.warnings[0]


@pytest.mark.parametrize("text, key, fragment", [
    ("", "waypoints.file", "no header"),
    ("# only a comment\n\n", "waypoints.file", "no header"),
    ("0, 1, 2\n1, 2, 3\n", "waypoints.file", "no header"),
    ("t [s], x [m]\n", "waypoints.file", "no data"),
    ("t [s], w [m]\n0, 0\n", "waypoints.columns", "unknown column 'w'"),
    ("t [s], x [m], x [m]\n0, 0, 0\n", "waypoints.columns", "repeated"),
    ("x [m], y [m]\n0, 0\n", "waypoints.columns", "time column"),
    ("t [s]\n0\n", "waypoints.columns", "position columns"),
    ("t [s], x [m], z [m]\n0, 0, 0\n", "waypoints.columns", "position columns"),
    ("t [s], x [furlong]\n0, 0\n", "waypoints.x", "allowed units: m, mm, um"),
    ("t [fortnight], x [m]\n0, 0\n", "waypoints.t", "allowed units: s, ms, us"),
    ("t [s], x\n0, 0\n", "waypoints.x", "unit in square brackets"),
    ("t [s], x [m], y [m]\n0, 0, 0\n1, 1, abc\n", "waypoints.y", "line 3"),
    ("# c\nt [s], x [m]\n0, 0\n\n1\n", "waypoints.file", "line 5"),
    ("t [s], x [m]\n0, 0\n1, 1, 1\n", "waypoints.file", "line 3"),
    ("t [s], x [m]\n0, 0\n1, nan\n", "waypoints.x", "not finite"),
    ("t [min], x [m]\n0, 0\n1e308, 1\n", "waypoints.t", "line 3: 1e+308 min is beyond double"),
    ("t [s], x [m]\n0, 0\n1, 1\n1, 2\n2, 3\n", "waypoints.t", "line 4"),
])
def test_csv_errors(tmp_path, text, key, fragment):
    path = _write(tmp_path, text)
    with raises_key(key) as info:
        load_waypoints_csv(path)
    assert fragment in info.value.message


def test_csv_missing_file(tmp_path):
    with raises_key("waypoints.file") as info:
        load_waypoints_csv(tmp_path / "nope.csv")
    assert "nope.csv" in info.value.message


def test_csv_too_few_rows_for_order(tmp_path):
    path = _write(tmp_path, "t [s], x [m]\n0, 0\n1, 1\n")
    with raises_key("waypoints"):
        load_waypoints_csv(path, order=3)


# ----------------------------------------------------------------------------
# Piecewise
# ----------------------------------------------------------------------------

def test_accelerate_cruise_decelerate():
    d, v, ta = 20e-6, 2e-3, 3e-3           # 20 um at 2 mm/s, 3 ms ramps
    direction = np.array([0.0, 3.0, 4.0])
    n = direction / 5.0
    x0 = np.array([1e-6, 0.0, -1e-6])
    path = Piecewise.accelerate_cruise_decelerate(d, v, ta, direction=direction, start=x0)
    t0, t1 = path.time_span
    total = d / v + ta
    assert t0 == 0.0 and t1 == pytest.approx(total, rel=1e-14)
    assert len(path.segments) == 3
    np.testing.assert_allclose(path.position(t1), x0 + d * n, rtol=0, atol=1e-18)
    np.testing.assert_allclose(path.position(t0), x0, rtol=0, atol=1e-18)
    assert path.speed(t0) == 0.0
    assert path.speed(t1) == pytest.approx(0.0, abs=1e-15)
    assert path.max_speed() == pytest.approx(v, rel=1e-12)
    a = v / ta
    # closed forms on each phase
    t_ramp = np.linspace(0.0, ta, 11)
    np.testing.assert_allclose(path.position(t_ramp), x0 + np.outer(0.5 * a * t_ramp**2, n),
                               rtol=0, atol=1e-18)
    t_cruise = np.linspace(ta, t1 - ta, 11)
    np.testing.assert_allclose(path.speed(t_cruise), v, rtol=1e-12)
    np.testing.assert_allclose(path.acceleration(t_cruise[1:-1]), 0.0, atol=1e-15)
    tau = np.linspace(0.0, ta, 11)
    np.testing.assert_allclose(path.position(t1 - tau),
                               x0 + np.outer(d - 0.5 * a * tau**2, n), rtol=0, atol=1e-18)
    np.testing.assert_allclose(path.acceleration(t1 - ta / 2), -a * n, rtol=1e-12)
    # continuity of position and velocity at the joints
    joints = path.boundaries[1:-1]
    np.testing.assert_allclose(joints, [ta, t1 - ta], rtol=1e-14)
    for i, tb in enumerate(joints):
        before, after = path.segments[i], path.segments[i + 1]
        np.testing.assert_allclose(before.position(tb), after.position(tb), rtol=0,
                                   atol=1e-12 * d)
        np.testing.assert_allclose(before.velocity(tb), v * n, rtol=1e-12)
        np.testing.assert_allclose(after.velocity(tb), v * n, rtol=1e-12)
        eps = 1e-9 * total
        jump = np.linalg.norm(path.position(tb + eps) - path.position(tb - eps))
        assert jump <= 2 * v * eps * (1 + 1e-6)
    np.testing.assert_allclose(path.position(ta), x0 + 0.5 * v * ta * n, rtol=0, atol=1e-18)
    # held at rest outside the span
    np.testing.assert_allclose(path.position([-1.0, t1 + 1.0]), [x0, x0 + d * n], atol=1e-18)
    np.testing.assert_array_equal(path.velocity([-1.0, t1 + 1.0]), np.zeros((2, 3)))
    assert not path.stationary and path.stationary_kind is None
    with raises_key("kind"):
        path.stationary_parameters()


def test_accelerate_decelerate_without_cruise():
    path = Piecewise.accelerate_cruise_decelerate(1.0, 2.0, 0.5, direction=(1.0,))
    assert len(path.segments) == 2
    assert path.time_span == (0.0, 1.0)
    np.testing.assert_allclose(path.position(1.0), [1.0])
    assert path.max_speed() == pytest.approx(2.0, rel=1e-12)


def test_accelerate_cruise_decelerate_invalid():
    with raises_key("distance") as info:
        Piecewise.accelerate_cruise_decelerate(1e-6, 1e-3, 2e-3)
    assert "too short" in info.value.message
    with raises_key("cruise_speed"):
        Piecewise.accelerate_cruise_decelerate(1.0, 0.0, 1.0)
    with raises_key("accel_time"):
        Piecewise.accelerate_cruise_decelerate(1.0, 1.0, -1.0)
    with raises_key("distance"):
        Piecewise.accelerate_cruise_decelerate(-1.0, 1.0, 1.0)


def _line_spline(t0, t1, x0, v):
    times = np.linspace(t0, t1, 5)
    return Spline(times, np.outer(x0 + v * (times - t0), [1.0, 0.0]) + [0.0, 1.0])


def test_piecewise_of_splines():
    first = _line_spline(0.0, 1.0, 0.0, 1.0)       # x: 0 -> 1
    second = _line_spline(1.0, 3.0, 1.0, -0.5)     # x: 1 -> 0
    path = Piecewise([first, second])
    assert path.time_span == (0.0, 3.0)
    np.testing.assert_allclose(path.position([0.5, 1.0, 2.0, 3.0])[:, 0], [0.5, 1.0, 0.5, 0.0],
                               atol=1e-12)
    np.testing.assert_allclose(path.velocity([0.5, 2.0])[:, 0], [1.0, -0.5], atol=1e-12)
    np.testing.assert_allclose(path.boundaries, [0.0, 1.0, 3.0])
    assert path.max_speed() == pytest.approx(1.0, rel=1e-9)


def test_piecewise_invalid():
    first = _line_spline(0.0, 1.0, 0.0, 1.0)
    with raises_key("segments"):
        Piecewise([])
    with raises_key("segments") as info:
        Piecewise([first, _line_spline(1.1, 2.0, 1.0, 1.0)])
    assert "starts at" in info.value.message
    with raises_key("segments") as info:
        Piecewise([first, _line_spline(1.0, 2.0, 1.001, 1.0)])
    assert "jumps" in info.value.message
    with raises_key("segments"):
        Piecewise([first, Linear(1.0, direction=(1.0, 0.0))])
    with raises_key("segments"):
        Piecewise([first, Spline([1.0, 2.0], [[1.0, 1.0, 0.0], [2.0, 1.0, 0.0]], order=1)])
    with raises_key("segments"):
        Piecewise([first, "not a trajectory"])
    # joins within tolerance are accepted
    Piecewise([first, _line_spline(1.0 + 1e-14, 2.0, 1.0 + 1e-11, 1.0)])


# ----------------------------------------------------------------------------
# Speed limits
# ----------------------------------------------------------------------------

def test_speed_limit_stationary():
    assert Linear(1e-3).check_speed_limit(2e-3) == []
    warnings = Linear(3e-3).check_speed_limit(2e-3)
    assert len(warnings) == 1 and "0.003 m/s" in warnings[0] and "all times" in warnings[0]
    assert Circular(1e-6, speed=1e-3).check_speed_limit(1e-2) == []
    assert len(Circular(1e-6, speed=1e-3).check_speed_limit(1e-4)) == 1
    grid = Linear(np.array([1.0, 2.0, 3.0])).check_speed_limit(1.5)
    assert len(grid) == 1 and "2 of 3" in grid[0]


def test_speed_limit_reports_time_of_maximum():
    path = Piecewise.accelerate_cruise_decelerate(10.0, 2.0, 1.0)   # cruise on [1, 5] s
    assert path.check_speed_limit(2.5) == []
    (warning,) = path.check_speed_limit(1.0)
    assert "2 m/s" in warning and "limit of 1 m/s" in warning
    t_at = float(warning.split("at t = ")[1].split(" s")[0])
    assert 1.0 <= t_at <= 5.0
    # exceeded while v > 1 m/s: from t = 0.5 s to t = 5.5 s
    assert "between t = 0.50" in warning and "t = 5.49" in warning


def test_max_speed_on_given_grid():
    path = Piecewise.accelerate_cruise_decelerate(10.0, 2.0, 1.0)
    assert path.max_speed(t_grid=[0.0, 0.25]) == pytest.approx(0.5)
    with raises_key("t_grid"):
        Linear(1.0).sample_times()
    with raises_key("speed_limit"):
        path.check_speed_limit(0.0)


def test_separation_of_stationary_paths_depends_on_the_lag_alone():
    """Linear: |x(t + s) - x(t)| = v |s|; circular: the chord 2 R |sin(w s/2)|;
    both checked against positions at several t (the capability the lag
    route of the transit engine relies on); a spline has none."""
    from trajectories import Circular, Linear, Spline

    rng = np.random.default_rng(5)
    s = np.linspace(-3.0, 3.0, 13)
    paths = [Linear(2.5, (0.6, 0.0, 0.8), start=(1.0, -2.0, 0.5)),
             Circular(1.7, speed=3.1, centre=(0.3, 0.2, -1.0), normal=(1.0, 1.0, 1.0))]
    for path in paths:
        sep = path.separation(s)
        for t in rng.uniform(-5, 5, 4):
            d = np.linalg.norm(path.position(t + s) - path.position(np.full(s.shape, t)),
                               axis=-1)
            np.testing.assert_allclose(sep, d, rtol=1e-12, atol=1e-12)
    spline = Spline(np.linspace(0, 1, 6), np.stack([np.linspace(0, 1, 6) ** 2] * 2, axis=1))
    assert spline.separation(s) is None
