"""Planning under uncertainty through the command line: ``[uncertainty]``
bands and elasticities, ``[readout]`` probabilities and shots, in tables,
JSON and sweeps.

Sources of the checks:

- elasticities: golden-rule rates and first-order probabilities are
  proportional to kappa^2 (Fermi's golden rule; the transit amplitude is
  linear in the coupling), and kappa is proportional to the probe-boson
  scattering length in 3D (kappa = 2 pi hbar^2 a_pb / m_r), so
  d ln Y / d ln a_pb = 2 exactly;
- small uncertainties: linear propagation of uncertainty (JCGM 100:2008,
  "Guide to the expression of uncertainty in measurement", section 5.1):
  sigma(ln Y)^2 = sum_i (d ln Y / d ln X_i)^2 sigma(ln X_i)^2, against the
  Monte Carlo band within its sampling error (JCGM 101:2008, the Monte
  Carlo propagation of distributions);
- shots: the two-proportion z-test (NIST/SEMATECH e-Handbook of Statistical
  Methods, section 7.3.3), with the normal quantiles from scipy.stats.
"""
from __future__ import annotations

import json
import math
from pathlib import Path

import numpy as np
import pytest
from click.testing import CliRunner
from scipy import stats

from probe.cli import cli
from probe.design.uncertainty import LEVELS

ROOT = Path(__file__).resolve().parents[1]
BOX = (ROOT / "examples" / "box3d_supersonic.toml").read_text()
CROSS = (ROOT / "examples" / "cross3d_gaussian.toml").read_text()
RAMSEY = (ROOT / "examples" / "transits" / "ramsey3d_rest.toml").read_text()
DRAG = (ROOT / "examples" / "drag3d_density.toml").read_text()


def _write(tmp_path, text, name="s.toml"):
    path = tmp_path / name
    path.write_text(text)
    return str(path)


def _json(args):
    res = CliRunner().invoke(cli, args)
    assert res.exit_code == 0, res.output
    return json.loads(res.stdout)


def _table(entries, samples=400, seed=0):
    lines = ["", "[uncertainty]", *entries, f"samples = {samples}", f"seed = {seed}"]
    return "\n".join(lines) + "\n"


READOUT = "\n[readout]\nfalse_excited = 0.03\nmissed_excited = 0.1\n"


def test_elasticity_to_the_coupling_length_is_two(tmp_path):
    """Rates ~ kappa^2 ~ a_pb^2 in 3D: the elasticity is 2 to rounding."""
    path = _write(tmp_path, BOX + _table(['"probe.coupling_length" = "10 %"',
                                          '"condensate.density" = "5 %"'], samples=50))
    data = _json(["rates", path, "--json"])
    for name in ("up_rate", "down_rate"):
        e = data["sensitivity"][name]
        assert e["probe.coupling_length"] == pytest.approx(2.0, abs=1e-7)
        assert math.isfinite(e["condensate.density"])
    # the excited population and the threshold do not depend on kappa
    assert data["sensitivity"]["up_threshold_speed"]["probe.coupling_length"] == \
        pytest.approx(0.0, abs=1e-7)
    assert data["uncertainty"]["levels"] == list(LEVELS)
    assert data["inputs"]["uncertainty"]["inputs"]["probe.coupling_length"][
        "distribution"] == "normal"


def test_transit_probability_elasticity_to_the_coupling_length_is_two(tmp_path):
    """A first-order transit probability ~ kappa^2 as well."""
    path = _write(tmp_path, CROSS + _table(['"probe.coupling_length" = "10 %"'], samples=10))
    data = _json(["transit", path, "--json"])
    for name in ("up_probability", "down_probability"):
        assert data["sensitivity"][name]["probe.coupling_length"] == \
            pytest.approx(2.0, rel=1e-6)


def test_bands_of_a_power_law_are_the_quantiles_of_its_input(tmp_path):
    """With only the coupling length uncertain (normal, relative sd u) the
    rates are Y0 (1 + u Z)^2, Z standard normal: their quantile at level L
    is Y0 (1 + u Phi^-1(L))^2 (scipy.stats), to the Monte Carlo's sampling
    error (about 0.05 in Z at the 2.5 % level for 4,000 samples)."""
    u = 0.05
    path = _write(tmp_path, BOX + _table(['"probe.coupling_length" = "5 %"'], samples=4000))
    data = _json(["rates", path, "--json"])
    z = stats.norm.ppf(LEVELS)
    for name in ("up_rate", "down_rate"):
        expected = data[name] * (1 + u * z) ** 2
        np.testing.assert_allclose(data["uncertainty"][name], expected, rtol=0.015)
    # quantities that do not depend on kappa have no spread
    q = data["uncertainty"]["excited_population"]
    assert q[0] == pytest.approx(q[-1], rel=1e-9)


def test_small_uncertainties_agree_with_linear_propagation(tmp_path):
    """For 1 % inputs the 68 % band of ln Y has the half-width
    sqrt(sum (e_i u_i)^2) (linear propagation), within the Monte Carlo's
    sampling error: about 2 % of the half-width for 4,000 samples (the
    standard error of a quantile, sqrt(p (1 - p) / N) / pdf), checked to 8 %."""
    u = 0.01
    path = _write(tmp_path, BOX + _table(['"condensate.density" = "1 %"',
                                          '"probe.gap" = "1 %"',
                                          '"probe.coupling_length" = "1 %"'], samples=4000))
    data = _json(["rates", path, "--json"])
    for name in ("up_rate", "down_rate", "effective_temperature"):
        e = np.array(list(data["sensitivity"][name].values()))
        linear = math.sqrt(np.sum((e * u) ** 2))
        q = data["uncertainty"][name]
        half = 0.5 * (math.log(q[3]) - math.log(q[1]))
        assert half == pytest.approx(linear, rel=0.08), name


def test_the_same_seed_gives_the_same_numbers(tmp_path):
    entries = ['"condensate.density" = "10 %"', '"probe.width" = "0.05 um"']
    one = _json(["rates", _write(tmp_path, BOX + _table(entries, 200, 7), "a.toml"), "--json"])
    two = _json(["rates", _write(tmp_path, BOX + _table(entries, 200, 7), "b.toml"), "--json"])
    other = _json(["rates", _write(tmp_path, BOX + _table(entries, 200, 8), "c.toml"),
                   "--json"])
    assert one["uncertainty"] == two["uncertainty"]
    assert one["uncertainty"]["up_rate"] != other["uncertainty"]["up_rate"]


def test_bands_contain_the_nominal_value_and_are_ordered(tmp_path):
    path = _write(tmp_path, BOX + _table(['"condensate.density" = "15 %"',
                                          '"condensate.scattering_length" = "5 %"',
                                          '"probe.coupling_length" = "0.3 nm"']))
    data = _json(["rates", path, "--json"])
    for name in ("up_rate", "down_rate", "effective_temperature", "excited_population"):
        q = data["uncertainty"][name]
        assert q == sorted(q)
        assert q[0] <= data[name] <= q[-1]
        assert data["dominant_input"][name] in data["sensitivity"][name]


def test_the_table_reports_bands_dominant_input_and_elasticities(tmp_path):
    path = _write(tmp_path, BOX + _table(['"condensate.density" = "15 %"'], samples=50))
    res = CliRunner().invoke(cli, ["rates", path])
    assert res.exit_code == 0, res.output
    assert "Uncertainty (50 samples, seed 0" in res.stdout
    assert "68 % [" in res.stdout and "95 % [" in res.stdout
    assert "mostly from condensate.density" in res.stdout
    assert "Sensitivity (d ln Y / d ln X" in res.stdout


def test_samples_in_one_engine_call_equal_one_call_per_sample(tmp_path, monkeypatch):
    """The many-gases route (SI samples, one kernel call) against rebuilding
    every sample's scenario from its file values (one engine call each)."""
    from probe.design import sampling
    from probe.design.planning import plan_rates, planning_spec
    from probe.scenarios.config import load_config

    path = _write(tmp_path, BOX + _table(['"condensate.density" = "10 %"',
                                          '"condensate.temperature" = "5 nK"',
                                          '"probe.coupling_length" = "0.3 nm"',
                                          '"probe.gap" = "5 %"',
                                          '"trajectory.speed" = "5 %"'], samples=30))
    sc_ = load_config(path, ["condensate.temperature=10 nK"])
    spec = planning_spec(sc_)
    assert sampling.many_gases_apply(sc_, [u.key for u in spec.inputs])
    fast = plan_rates(sc_, sc_.rates(), spec)
    monkeypatch.setattr(sampling, "many_gases_apply", lambda scenario, keys: False)
    slow = plan_rates(sc_, sc_.rates(), spec)
    for name in fast.names:
        np.testing.assert_allclose(fast.quantiles[name], slow.quantiles[name], rtol=1e-9)


def test_a_speed_in_c_s_keeps_its_mach_number(tmp_path):
    """A speed written in c_s is the same multiple of every sample's sound
    speed, a speed in m/s is not: since c ~ n^(1/2) (Bogoliubov), the chain
    rule gives d ln G/d ln n at fixed speed = (at fixed Mach number)
    - (1/2) d ln G/d ln v."""
    in_cs = _json(["rates", _write(tmp_path, BOX + _table(['"condensate.density" = "10 %"'],
                                                         samples=20), "a.toml"), "--json"])
    fixed = BOX.replace('speed = "1.6 c_s"', f'speed = "{in_cs["speed"]!r} m/s"')
    in_si = _json(["rates", _write(tmp_path, fixed + _table(['"condensate.density" = "10 %"',
                                                            '"trajectory.speed" = "1 %"'],
                                                           samples=20), "b.toml"), "--json"])
    for name in ("up_rate", "down_rate"):
        e_cs = in_cs["sensitivity"][name]["condensate.density"]
        e_si = in_si["sensitivity"][name]["condensate.density"]
        e_v = in_si["sensitivity"][name]["trajectory.speed"]
        assert e_si == pytest.approx(e_cs - 0.5 * e_v, abs=1e-6)


def test_readout_probabilities_and_shots_follow_the_two_proportion_test(tmp_path):
    """p = e0 + (1 - e0 - e1) P for signal and reference; N is the smallest
    number of shots per setting at which |p_s - p_r| / sqrt((p_s q_s + p_r q_r)
    / N) reaches z (NIST/SEMATECH 7.3.3); z = 3 is the two-sided normal
    quantile of alpha = 2 (1 - Phi(3)) (scipy.stats)."""
    path = _write(tmp_path, CROSS + READOUT)
    data = _json(["transit", path, "--json"])
    e0, e1 = 0.03, 0.1
    ps = data["measured_probability"]
    assert ps == pytest.approx(e0 + (1 - e0 - e1) * data["up_probability"], rel=1e-12)
    pr = data["reference_probability"]
    assert e0 <= pr < ps
    # z = 3 standard errors: the two-sided level alpha = 2 (1 - Phi(3)); with N
    # shots per setting the difference reaches it, with N - 1 it does not
    alpha = 2 * stats.norm.sf(3.0)
    var = ps * (1 - ps) + pr * (1 - pr)
    n = data["shots_needed"]

    def p_value(shots):
        return 2 * stats.norm.sf(abs(ps - pr) / math.sqrt(var / shots))
    assert p_value(n) <= alpha * (1 + 1e-12)
    assert p_value(n - 1) > alpha
    assert data["inputs"]["readout"]["signal"] == "up_probability"


def test_reference_none_reads_a_zero_probability(tmp_path):
    path = _write(tmp_path, CROSS + READOUT + 'reference = "none"\nsignificance = 2\n')
    data = _json(["transit", path, "--json"])
    assert data["reference_probability"] == pytest.approx(0.03, rel=1e-12)
    ps, pr = data["measured_probability"], 0.03
    expected = math.ceil(2.0 ** 2 * (ps * (1 - ps) + pr * (1 - pr)) / (ps - pr) ** 2)
    assert data["shots_needed"] == expected


def test_the_table_says_the_shots_in_words(tmp_path):
    res = CliRunner().invoke(cli, ["transit", _write(tmp_path, CROSS + READOUT)])
    assert res.exit_code == 0, res.output
    line = next(w for w in res.stdout.splitlines() if w.strip().startswith("shots needed"))
    assert "repetitions of each setting" in line and "to see the effect at 3 sigma" in line


def test_a_ramsey_sequence_is_read_as_one_minus_contrast_over_two(tmp_path):
    path = _write(tmp_path, RAMSEY + READOUT + 'reference = "none"\n')
    data = _json(["transit", path, "--json"])
    assert data["inputs"]["readout"]["signal"] == "contrast"
    p = 0.5 * (1 - data["contrast"])
    assert data["measured_probability"] == pytest.approx(0.03 + 0.87 * p, rel=1e-12)


def test_shots_needed_carries_its_band(tmp_path):
    path = _write(tmp_path, CROSS + READOUT + _table(['"condensate.density" = "10 %"'],
                                                     samples=12))
    data = _json(["transit", path, "--json"])
    q = data["uncertainty"]["shots_needed"]
    assert len(q) == 5 and q == sorted(q)
    for name in ("measured_probability", "reference_probability", "up_probability"):
        assert name in data["uncertainty"] and name in data["sensitivity"]


def test_rates_say_the_readout_is_not_theirs(tmp_path):
    data = _json(["rates", _write(tmp_path, BOX + READOUT), "--json"])
    assert any("[readout] is not used here" in w for w in data["warnings"])
    assert "shots_needed" not in data


def test_solve_and_compare_work_on_the_nominal_scenario(tmp_path):
    plain = _write(tmp_path, BOX, "plain.toml")
    planned = _write(tmp_path, BOX + READOUT + _table(['"probe.gap" = "10 %"']), "p.toml")
    for args in (["solve", "--for", "trajectory.speed", "--target", "up_rate=10 1/s"],
                 ["compare", "--vary", "trajectory.speed=1c_s:2c_s:3"]):
        one = CliRunner().invoke(cli, [args[0], plain, *args[1:]])
        two = CliRunner().invoke(cli, [args[0], planned, *args[1:]])
        assert one.exit_code == two.exit_code == 0, two.output
        assert one.stdout.replace("plain.toml", "p.toml") == two.stdout


def test_set_reaches_the_uncertainty_entries(tmp_path):
    path = _write(tmp_path, BOX + _table(['"condensate.density" = "10 %"'], samples=20))
    data = _json(["rates", path, "--json", "--set", "uncertainty.probe.gap=5 %"])
    assert set(data["inputs"]["uncertainty"]["inputs"]) == {"condensate.density", "probe.gap"}


def test_a_sweep_writes_band_columns_that_order_and_contain_the_curve(tmp_path):
    from probe.design.sweep import read_sweep

    path = _write(tmp_path, BOX + _table(['"condensate.density" = "10 %"',
                                          '"probe.coupling_length" = "10 %"'], samples=40))
    out = tmp_path / "b.csv"
    plot = tmp_path / "b.png"
    res = CliRunner().invoke(cli, ["sweep", path, "--vary", "trajectory.speed=1c_s:3c_s:5",
                                   "--out", str(out), "--plot", str(plot)])
    assert res.exit_code == 0, res.output
    assert plot.stat().st_size > 0
    r = read_sweep(out)
    for name in ("up_rate", "down_rate"):
        cols = [r.column(f"{name}{s}") for s in ("_p2_5", "_p16", "_p50", "_p84", "_p97_5")]
        assert r.unit(f"{name}_p16") == "1/s"
        stacked = np.vstack(cols)
        assert np.all(np.diff(stacked, axis=0) >= 0)
        y = r.column(name)
        assert np.all((cols[0] <= y) & (y <= cols[-1]))


def test_a_transit_sweep_carries_the_readout_columns(tmp_path):
    from probe.design.sweep import read_sweep

    out = tmp_path / "t.csv"
    res = CliRunner().invoke(cli, ["sweep", _write(tmp_path, CROSS + READOUT), "--vary",
                                   "probe.gap=100Hz:200Hz:2", "--out", str(out)])
    assert res.exit_code == 0, res.output
    r = read_sweep(out)
    for name in ("measured_probability", "reference_probability", "shots_needed"):
        assert np.all(np.isfinite(r.column(name)))
    assert not any(c.endswith("_p16") for c in r.columns)
    # with [uncertainty] as well, the readout's outputs carry bands
    text = CROSS + READOUT + _table(['"condensate.density" = "10 %"'], samples=10)
    res = CliRunner().invoke(cli, ["sweep", _write(tmp_path, text, "u.toml"), "--vary",
                                   "probe.gap=150Hz:150Hz:1", "--out", str(out)])
    assert res.exit_code == 0, res.output
    r = read_sweep(out)
    for name in ("up_probability", "shots_needed"):
        lo, hi = r.column(f"{name}_p2_5"), r.column(f"{name}_p97_5")
        assert np.all(lo <= r.column(name)) and np.all(r.column(name) <= hi)


def test_a_passage_reads_against_zero(tmp_path):
    """A passage's signal is its excited probability; it has no setting at
    rest, so its reference must be "none"."""
    text = (ROOT / "examples" / "passages" / "push3d_trap.toml").read_text()
    text = text.replace("passage_samples = 1000", "passage_samples = 100")
    path = _write(tmp_path, text + READOUT + 'reference = "none"\n'
                  + _table(['"condensate.atom_number" = "10 %"'], samples=10))
    data = _json(["passage", path, "--json"])
    assert data["inputs"]["readout"]["signal"] == "excited_probability"
    assert data["measured_probability"] == pytest.approx(
        0.03 + 0.87 * data["excited_probability"], rel=1e-12)
    assert data["reference_probability"] == pytest.approx(0.03)
    q = data["uncertainty"]["excited_probability"]
    assert q[0] <= data["excited_probability"] <= q[-1]
    res = CliRunner().invoke(cli, ["passage", _write(tmp_path, text + READOUT, "r.toml")])
    assert res.exit_code == 2 and res.stderr.startswith("error: readout.reference:")


@pytest.mark.parametrize("text, key", [
    (BOX + _table(['"condensate.densty" = "10 %"']), "uncertainty.condensate.densty"),
    (BOX + _table(['"probe.model" = "10 %"']), "uncertainty.probe.model"),
    (BOX + _table(['"numerics.rtol" = "10 %"']), "uncertainty.numerics.rtol"),
    (BOX + _table(['"condensate.size" = "10 %"']), "uncertainty.condensate.size"),
    (BOX + _table(['"condensate.density" = "-10 %"']), "uncertainty.condensate.density"),
    (BOX + _table(['"condensate.density" = "0 m^-3"']), "uncertainty.condensate.density"),
    (BOX + _table(['"condensate.density" = "1 nm"']), "uncertainty.condensate.density"),
    (BOX + _table(['"condensate.temperature" = "5 nK"']), "uncertainty.condensate.temperature"),
    (BOX + _table(['"condensate.density" = "1 %"'], samples=5), "uncertainty.samples"),
    (BOX + _table([], samples=50), "uncertainty"),
    (CROSS + "\n[readout]\nfalse_excited = 1.2\n", "readout.false_excited"),
    (CROSS + "\n[readout]\nfalse_excited = 0.5\nmissed_excited = 0.5\n",
     "readout.missed_excited"),
    (DRAG + READOUT, "readout"),
])
def test_bad_planning_input_names_its_key_and_writes_nothing(tmp_path, text, key):
    path = _write(tmp_path, text)
    out = tmp_path / "x.csv"
    res = CliRunner().invoke(cli, ["sweep", path, "--vary", "trajectory.speed=1c_s:2c_s:2",
                                   "--out", str(out)])
    assert res.exit_code == 2
    assert res.stderr.startswith(f"error: {key}:") and res.stderr.count("\n") == 1
    assert not out.exists() and not Path(str(out) + ".partial").exists()


def test_a_signal_equal_to_its_reference_is_refused(tmp_path):
    at_rest = CROSS.replace('speed = "1.6 c_s"', 'speed = "0 m/s"')
    res = CliRunner().invoke(cli, ["transit", _write(tmp_path, at_rest + READOUT)])
    assert res.exit_code == 2 and res.stdout == ""
    assert res.stderr.startswith("error: readout.reference:")
    assert "no number of repetitions tells them apart" in res.stderr
