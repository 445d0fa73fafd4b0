"""Trapped clouds and passages from scenario files and the command line:
`probe passage` end to end on the bundled examples (table, JSON keys, the
per-sample CSV, the figure), a box crossing against its limits, trapped
gases in the other commands, sweeps over the new keys, and bad input."""
from __future__ import annotations

import json
import math
import os
from pathlib import Path

import numpy as np
import pytest
from click.testing import CliRunner

from probe.cli import cli
from probe.scenarios.config import load_config

ROOT = Path(__file__).resolve().parents[1]
PUSH = str(ROOT / "examples" / "passages" / "push3d_trap.toml")
DRESSED = str(ROOT / "examples" / "passages" / "dressed2d_trap.toml")
BOX = str(ROOT / "examples" / "transits" / "box3d_crossing.toml")

#: the JSON keys of a passage (a contract), and those of a trapped gas
PASSAGE_KEYS = {"excited_probability", "first_order_up_probability", "passage_duration",
                "max_mach", "warnings"}
RAMSEY_KEYS = {"decoherence_exponent", "contrast"}
TRAP_KEYS = {"chemical_potential", "peak_density", "thomas_fermi_radii", "atom_number"}


def run(*args):
    res = CliRunner().invoke(cli, [str(a) for a in args])
    return res


def run_json(*args):
    res = run(*args, "--json")
    assert res.exit_code == 0, res.output
    return json.loads(res.stdout)


# --- the command end to end ------------------------------------------------------
def test_push_through_a_trap_end_to_end(tmp_path):
    csv, png = tmp_path / "push.csv", tmp_path / "push.png"
    res = run("passage", PUSH, "--out", csv, "--plot", png)
    assert res.exit_code == 0, res.output
    for label in ("Thomas-Fermi radii", "peak density", "atom number", "excited probability",
                  "first-order up probability", "passage duration", "largest Mach number"):
        assert label in res.stdout
    lines = csv.read_text().splitlines()
    header = lines[0].split(",")
    assert header[:9] == ["time [s]", "x [m]", "y [m]", "z [m]", "density [m^-3]",
                          "sound_speed [m/s]", "mach [1]", "speed [m/s]", "gap [rad/s]"]
    for column in ("up_rate [1/s]", "down_rate [1/s]", "excited_population [1]"):
        assert column in header
    assert len(lines) == 1 + 1000            # numerics.passage_samples
    assert png.stat().st_size > 10_000


def test_push_json_keys_and_physics():
    out = run_json("passage", PUSH)
    assert PASSAGE_KEYS | TRAP_KEYS <= set(out)
    assert not RAMSEY_KEYS & set(out)
    assert len(out["thomas_fermi_radii"]) == 3
    assert out["atom_number"] == pytest.approx(2e5, rel=1e-12)
    # subsonic at the centre (0.9 c_s), supersonic towards the edge
    assert out["max_mach"] > 1
    # excited in the outer shell only; the rate equation lies below first order
    assert 0 < out["excited_probability"] < out["first_order_up_probability"] < 0.1
    radius = out["thomas_fermi_radii"][0]
    chord = 2 * math.sqrt(radius ** 2 - (2e-6) ** 2)
    speed = 0.9 * out["sound_speed"]
    assert out["passage_duration"] == pytest.approx(chord / speed, rel=1e-9)


def test_dressed_quasi_2d_passage(tmp_path):
    csv = tmp_path / "d.csv"
    out = run_json("passage", DRESSED, "--set", "numerics.passage_samples=200", "--out", csv)
    assert PASSAGE_KEYS | RAMSEY_KEYS | TRAP_KEYS <= set(out)
    assert len(out["thomas_fermi_radii"]) == 2
    header = csv.read_text().splitlines()[0].split(",")
    assert header[:3] == ["time [s]", "x [m]", "y [m]"] and "z [m]" not in header
    assert "density [m^-2]" in header and "dephasing_rate [1/s]" in header
    data = np.loadtxt(csv, delimiter=",", skiprows=1)
    assert data.shape[0] == 200
    # the dressed gap follows the local mean-field shift: it changes along the path
    gap = data[:, header.index("gap [rad/s]")]
    inside = data[:, header.index("density [m^-2]")] > 0
    assert np.ptp(gap[inside]) > 0.1 * gap[inside].max()


def test_a_ramsey_passage_reports_the_contrast():
    out = run_json("passage", DRESSED, "--set", "probe.model=ramsey",
                   "--unset", "probe.rabi_frequency", "--unset", "probe.detuning",
                   "--set", "numerics.passage_samples=100")
    assert RAMSEY_KEYS <= set(out)
    assert "excited_probability" not in out
    assert out["contrast"] == pytest.approx(math.exp(-out["decoherence_exponent"]), rel=1e-12)


# --- a box: crossing and passage against their limits -----------------------------
def test_box_passage_with_constant_rates_gives_the_closed_form():
    """Inside a box the rates are constant, so the rate equation gives
    p_ss (1 - exp(-(G_up + G_down) t)) with p_ss = G_up/(G_up + G_down) and
    t the crossing time chord / v (the closed form of dp/dt = G_up (1 - p)
    - G_down p, p(0) = 0)."""
    passage = run_json("passage", BOX)
    rates = run_json("rates", BOX)
    up, down = rates["up_rate"], rates["down_rate"]
    t = rates["transit"]["time"]                   # chord / v of the uniform region
    assert passage["passage_duration"] == pytest.approx(t, rel=1e-9)
    want = up / (up + down) * (1 - math.exp(-(up + down) * t))
    assert passage["excited_probability"] == pytest.approx(want, rel=1e-9)
    assert passage["first_order_up_probability"] == pytest.approx(up * t, rel=1e-9)
    assert passage["max_mach"] == pytest.approx(2.0, rel=1e-12)


def test_box_crossing_with_long_ramps_tends_to_rate_times_time():
    """Slow-switching (adiabatic) limit: with ramps long against the bath's
    correlation time (1/Omega, xi/c) the transit probability tends to
    Gamma int chi^2 dt, Gamma the stationary rate of `probe rates` (as for
    the Gaussian switching, P -> sqrt(pi) tau Gamma).  For the crossing,
    whose ramps are centred on the entry and exit, int chi dt is the
    crossing time t exactly and int chi^2 dt = t - 2 r int_0^1 psi(1 - psi),
    so P/Gamma -> t as the ramps shorten against t."""
    ramp = "5 ms"           # 1/Omega = 0.5 ms; the crossing takes 27 ms
    transit = run_json("transit", BOX, "--set", f"trajectory.ramp={ramp}")
    rates = run_json("rates", BOX)
    t_eff = transit["effective_duration"]
    assert transit["down_probability"] == pytest.approx(rates["down_rate"] * t_eff, rel=2e-3)
    assert transit["up_probability"] == pytest.approx(rates["up_rate"] * t_eff, rel=2e-2)
    t = rates["transit"]["time"]
    assert t - 5e-3 * 0.5 < t_eff < t        # int psi(1 - psi) < 1/4
    crossing = [w for w in transit["warnings"] if "leaves the box" in w]
    assert not crossing                       # on only inside the box


def test_a_transit_leaving_the_box_is_warned_about():
    out = run_json("transit", BOX, "--set", "trajectory.switching=gaussian",
                   "--set", "trajectory.switching_width=10 ms",
                   "--set", "trajectory.switching_centre=21.4 ms")
    assert any("leaves the box" in w for w in out["warnings"])


# --- trapped gases in the other commands -------------------------------------------
def test_rates_and_transit_of_a_trap_compute_at_the_centre():
    out = run_json("rates", PUSH)
    assert TRAP_KEYS <= set(out)
    assert out["inputs"]["condensate"]["density"] == pytest.approx(out["peak_density"])
    assert any("probe passage" in w and "centre" in w for w in out["warnings"])
    table = run("rates", PUSH).stdout
    assert "Thomas-Fermi radii" in table and "trap frequencies" in table
    transit = run_json("transit", PUSH, "--set", "trajectory.switching=gaussian",
                       "--set", "trajectory.switching_width=1 ms",
                       "--set", "numerics.transit_rtol=1e-3")
    assert TRAP_KEYS <= set(transit)
    assert any("probe passage" in w for w in transit["warnings"])


def test_a_circle_centred_in_an_isotropic_trap_sees_one_density():
    """On a circle about the centre of an isotropic trap the local density
    is constant: every sample has the circular rates of the uniform gas at
    that density (one engine call), and the rate equation with constant
    rates gives the closed form."""
    from probe.engines.stationary import circular_rates

    sets = ["trajectory.kind=circular", "trajectory.radius=4 um", "trajectory.speed=0.5 c_s",
            "trajectory.turns=2", "numerics.passage_samples=50"]
    args = [a for s in sets for a in ("--set", s)]
    args += ["--unset", "trajectory.direction", "--unset", "trajectory.start"]
    out = run_json("passage", PUSH, *args)
    assert not any("varies along the circle" in w for w in out["warnings"])
    scenario = load_config(PUSH, sets, removals=["trajectory.direction", "trajectory.start"])
    trap = scenario.trap
    gas = trap.local_gas(float(trap.density(np.array([4e-6, 0, 0]))))
    want = circular_rates(gas, scenario.probe, 4e-6, 0.5 * trap.centre.sound_speed)
    up, down = float(want.up_rate), float(want.down_rate)
    t = out["passage_duration"]
    assert t == pytest.approx(2 * 2 * math.pi * 4e-6 / (0.5 * trap.centre.sound_speed))
    assert out["excited_probability"] == pytest.approx(
        up / (up + down) * (1 - math.exp(-(up + down) * t)), rel=1e-6)


def test_sweep_over_the_atom_number_and_the_trap_frequency(tmp_path):
    out = tmp_path / "n.csv"
    res = run("sweep", PUSH, "--vary", "condensate.atom_number=5e4:2e5:2",
              "--vary", "condensate.trap_frequencies=40Hz:60Hz:2",
              "--set", "numerics.passage_samples=100", "--out", out)
    assert res.exit_code == 0, res.output
    header = out.read_text().splitlines()[0].split(",")
    for column in ("atom_number [1]", "excited_probability [1]", "passage_duration [s]",
                   "max_mach [1]", "first_order_up_probability [1]"):
        assert column in header
    data = np.genfromtxt(out, delimiter=",", skip_header=1, usecols=range(len(header) - 1))
    p = data[:, header.index("excited_probability [1]")]
    assert np.all(p > 0)
    # more atoms: a denser, larger cloud and a larger excitation
    assert p[2] > p[0] and p[3] > p[1]


def test_solve_for_the_atom_number():
    from probe.design.solver import solve

    sol = solve(PUSH, "condensate.atom_number", "excited_probability=0.01", bounds="5e4:4e5",
                overrides=["numerics.passage_samples=100"], scan_points=5)
    check = run_json("passage", PUSH, "--set", f"condensate.atom_number={sol.value!r}",
                     "--set", "numerics.passage_samples=100")
    assert check["excited_probability"] == pytest.approx(0.01, rel=1e-6)


def test_sweep_and_solve_over_the_impact_parameter(tmp_path):
    """trajectory.start[1], the y component of the start point, is the
    impact parameter of a path along x; the passage itself checks each
    point (the value of the component is the one the path starts from)."""
    from probe.design.solver import solve

    out = tmp_path / "b.csv"
    res = run("sweep", PUSH, "--vary", "trajectory.start[1]=0um:9um:4",
              "--set", "numerics.passage_samples=100", "--out", out)
    assert res.exit_code == 0, res.output
    header = out.read_text().splitlines()[0].split(",")
    assert header[1] == "trajectory.start[1] [m]"
    data = np.genfromtxt(out, delimiter=",", skip_header=1, usecols=range(len(header) - 1))
    np.testing.assert_allclose(data[:, 1], [0, 3e-6, 6e-6, 9e-6], atol=1e-18)
    for b, dur in zip(data[:, 1], data[:, header.index("passage_duration [s]")]):
        start = f'trajectory.start=["0 um", "{float(b)!r} m", "0 um"]'
        one = run_json("passage", PUSH, "--set", start, "--set", "numerics.passage_samples=100")
        assert one["passage_duration"] == pytest.approx(dur, rel=1e-9)
    sol = solve(PUSH, "trajectory.start[1]", "excited_probability=0.02", bounds="0um:9um",
                overrides=["numerics.passage_samples=100"], scan_points=5)
    assert 0 < sol.value < 9e-6


# --- bad input -------------------------------------------------------------------------
_BAD = [
    (["--set", "condensate.density=1e20 m^-3"], "condensate.atom_number", "not both"),
    (["--unset", "condensate.atom_number"], "condensate.atom_number", "not neither"),
    (["--set", 'condensate.trap_frequencies=["50 Hz", "50 Hz"]'],
     "condensate.trap_frequencies", "3 in a 3D gas"),
    (["--set", 'condensate.trap_frequencies=["50 Hz", "0 Hz", "50 Hz"]'],
     "condensate.trap_frequencies", "> 0"),
    (["--set", 'trajectory.start=["0 um", "15 um", "0 um"]'], "trajectory.start",
     "passes the centre at 1.546 Thomas-Fermi radii"),
    (["--unset", "trajectory.direction", "--unset", "trajectory.start",
      "--set", "trajectory.kind=circular", "--set", "trajectory.radius=3 um",
      "--set", "trajectory.turns=-1"], "trajectory.turns", "> 0"),
    (["--unset", "condensate.trap"], "condensate.trap_frequencies", 'trap = "harmonic"'),
]


@pytest.mark.parametrize("args, key, text", _BAD, ids=[b[1] + ":" + b[2] for b in _BAD])
def test_bad_input_exits_2_with_one_line_and_writes_nothing(args, key, text, tmp_path):
    csv, png = tmp_path / "p.csv", tmp_path / "p.png"
    res = run("passage", PUSH, *args, "--out", csv, "--plot", png)
    assert res.exit_code == 2, res.output
    lines = res.stderr.strip().splitlines()
    assert len(lines) == 1 and lines[0].startswith(f"error: {key}: "), lines
    assert text in lines[0]
    assert res.stdout == ""
    assert not os.listdir(tmp_path)
