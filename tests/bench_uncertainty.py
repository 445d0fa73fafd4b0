"""Benchmark of planning under uncertainty (run by hand; not collected by pytest).

    python tests/bench_uncertainty.py

1. 1,000 Monte Carlo samples of a stationary 3D scenario (the straight
   crossing of examples/box3d_supersonic.toml with its density, coupling
   length and gap uncertain): every sample's gas and probe built in SI and
   evaluated in one engine call, against one engine call per sample (each
   sample's scenario built from its file values, as for any other path),
   measured in the same run; the two must give the same numbers.
2. ``probe sweep`` of 100 speeds with 200 samples per point, against the
   cost of one call per sample (20,000 calls: estimated from the per-sample
   cost measured in part 1).
3. The transit example with ``[uncertainty]`` and ``[readout]``
   (examples/transits/cross3d_planning.toml): one transit per sample and one
   with the probe at rest.

Times are wall-clock seconds on one core (the sweep runs in this process).
"""
from __future__ import annotations

import os
import sys
import tempfile
import time
from pathlib import Path

import numpy as np
from click.testing import CliRunner

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))

from probe.cli import cli                                              # noqa: E402
from probe.design.planning import plan_rates, plan_transit, planning_spec  # noqa: E402
from probe.design import sampling                                      # noqa: E402
from probe.scenarios.config import load_config                         # noqa: E402

UNCERTAIN = """
[uncertainty]
"condensate.density" = "10 %"
"probe.coupling_length" = "0.3 nm"
"probe.gap" = "5 %"
samples = {samples}
seed = 0
"""


def scenario_file(folder, samples):
    path = Path(folder) / "box3d_uncertain.toml"
    text = (ROOT / "examples" / "box3d_supersonic.toml").read_text()
    path.write_text(text + UNCERTAIN.format(samples=samples))
    return path


def timed(f, repeat=1):
    best = np.inf
    for _ in range(repeat):
        t0 = time.perf_counter()
        out = f()
        best = min(best, time.perf_counter() - t0)
    return best, out


def part_stationary(folder):
    sc = load_config(scenario_file(folder, 1000))
    spec = planning_spec(sc)
    result = sc.rates()
    t_fast, fast = timed(lambda: plan_rates(sc, result, spec), repeat=3)
    real = sampling.many_gases_apply
    sampling.many_gases_apply = lambda scenario, keys: False     # one call per sample
    try:
        t_slow, slow = timed(lambda: plan_rates(sc, result, spec))
    finally:
        sampling.many_gases_apply = real
    diff = max(abs(a / b - 1) for m in fast.names
               for a, b in zip(fast.quantiles[m], slow.quantiles[m]) if b)
    print("1. 1,000 samples, 3D straight motion, T = 0 (density, coupling length, gap)")
    print(f"   SI samples in one engine call : {t_fast:.3f} s")
    print(f"   one engine call per sample    : {t_slow:.3f} s "
          f"({1e3 * t_slow / 1000:.2f} ms per sample)")
    print(f"   ratio                         : {t_slow / t_fast:.1f}x; quantiles agree to "
          f"{diff:.1e}")
    return t_slow / 1000


def part_sweep(folder, per_call):
    path = scenario_file(folder, 200)
    out = Path(folder) / "bands.csv"
    args = ["sweep", str(path), "--vary", "trajectory.speed=0.5c_s:3c_s:100",
            "--out", str(out)]
    t, res = timed(lambda: CliRunner().invoke(cli, args))
    assert res.exit_code == 0, res.output
    estimate = 100 * (200 + 6) * per_call
    print("2. probe sweep: 100 speeds x 200 samples (+ 6 points of the elasticities)")
    print(f"   sweep with bands              : {t:.2f} s")
    print(f"   one call per sample (estimate): {estimate:.0f} s "
          f"({estimate / t:.0f}x)")


def part_transit():
    sc = load_config(ROOT / "examples" / "transits" / "cross3d_planning.toml")
    spec = planning_spec(sc)
    t0, result = timed(lambda: sc.transit())
    t, plan = timed(lambda: plan_transit(sc, result, spec))
    n = spec.samples + 2 * len(spec.inputs)
    print(f"3. transit with [uncertainty] and [readout] ({spec.samples} samples)")
    print(f"   nominal transit               : {t0:.3f} s")
    print(f"   planning                      : {t:.2f} s ({1e3 * t / n:.0f} ms per sample: "
          "a transit and one at rest)")
    print(f"   shots needed                  : {plan.nominal['shots_needed']:,.0f}")


if __name__ == "__main__":
    os.environ.setdefault("OMP_NUM_THREADS", "1")
    with tempfile.TemporaryDirectory() as folder:
        per_call = part_stationary(folder)
        part_sweep(folder, per_call)
    part_transit()
