"""Benchmark of the circular sums, measured side by side in one run (CPU time
of each process, so that other work on the machine weighs less):

  1. 3D, one rate at R = 1e4 xi, v = 1.5 c, gap 0.3 c/xi (the kernel): this
     tree against the previous release's term-by-term spherical average
     (imported from a git worktree of that commit under /tmp, in its own
     process); both processes' peak resident memory and the largest numpy
     allocation (tracemalloc);
  2. 3D at R = 1e5 xi through circular_rates (not refused), time and memory;
  3. 2D per-point time at R = 1 and 10 xi (100 speeds 0.3 ... 2.5 c in one
     call) against a plain scipy harmonic sum of the same rates, and at
     R = 1e4 xi (v = 0.5, 0.9, 1.5, 2.5 c); at R = 1e4 and 1e5 xi the long runs
     summed by Poisson's formula against every harmonic summed.

Run: python tests/bench_circles.py [--previous=COMMIT] [--part=N] (default: the
commit before the O(1) spherical average, 49102d0; --part=3 runs part 3 alone,
--repeat=K repeats part 3 K times and prints each run and the medians).
"""
from __future__ import annotations

import json
import os
import subprocess
import sys
import textwrap
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
PREVIOUS = "49102d0"

KERNEL_3D = textwrap.dedent("""
    import json, resource, sys, time, tracemalloc
    sys.path.insert(0, sys.argv[1])
    from probe.gas.dispersion import DISPERSIONS
    from probe.engines.stationary.gas import KernelGas
    from probe.engines.stationary.circular import circular_kernel
    gas = KernelGas(DISPERSIONS["bogoliubov"](), 3, 0.0, 0.0)
    R, v, W = float(sys.argv[2]), float(sys.argv[3]), float(sys.argv[4])
    import scipy.special        # imported where first used: not part of the kernel's time
    tracemalloc.start()
    t = time.process_time()
    out = circular_kernel(gas, R, v, W, 0.0, rtol=1e-8)
    seconds = time.process_time() - t
    print(json.dumps({"seconds": seconds, "traced_mb": tracemalloc.get_traced_memory()[1] / 1e6,
                      "rss_mb": resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024,
                      "down": out["down"][0], "down_error": out["down"][1],
                      "up": out["up"][0], "harmonics": out["harmonics"]}))
""")

SI_3D = textwrap.dedent("""
    import json, resource, sys, time
    sys.path.insert(0, sys.argv[1]); sys.path.insert(0, sys.argv[1] + "/tests")
    from conftest import rb_gas
    from probe.detectors import TwoLevelProbe
    from probe.engines.stationary import circular_rates
    cond = rb_gas(3)
    probe = TwoLevelProbe(0.3 * cond.frequency_unit, 1e-50)
    t = time.process_time()
    r = circular_rates(cond, probe, float(sys.argv[2]) * cond.healing_length,
                       1.5 * cond.sound_speed)
    print(json.dumps({"seconds": time.process_time() - t, "harmonics": int(r.harmonics),
                      "rss_mb": resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024,
                      "relative_error": r.down_rate_error / r.down_rate}))
""")


def worktree(commit):
    """A detached worktree of ``commit`` under /tmp (made once)."""
    path = Path(f"/tmp/probe-bench-{commit}")
    if not (path / "probe").exists():
        subprocess.run(["git", "-C", str(ROOT), "worktree", "add", "--detach", str(path), commit],
                       check=True, capture_output=True)
    return path


def run(script, *args):
    proc = subprocess.run([sys.executable, "-c", script, *map(str, args)], capture_output=True,
                          text=True, cwd="/tmp", env={**os.environ, "PYTHONPATH": ""})
    if proc.returncode:
        raise SystemExit(proc.stderr)
    return json.loads(proc.stdout.strip().splitlines()[-1])


def plain_sum_2d(gas, R, v, W):
    """(down, up) of a 2D point probe at T = 0 by a plain vectorised scipy
    sum over harmonics, in blocks doubling until the last term is below
    1e-17 of the sum and k R < m: k S J_m(k R)^2 / v_g at w_k = +-W + m v/R."""
    import numpy as np
    from scipy.special import jv
    disp, wc, out = gas.disp, v / R, []
    for sign in (+1, -1):
        mlo = int(np.floor(-sign * W / wc)) + 1
        size = 64
        while True:
            m = np.arange(mlo, mlo + size, dtype=float)
            q = disp.inverse(sign * W + m * wc)
            terms = q * disp.structure_factor(q) / disp.group_velocity(q) * jv(m, q * R) ** 2
            total = terms.sum()
            past = q[-1] * R < m[-1] and terms[-1] <= 1e-17 * total
            if past and (total > 0 or size > max(4096, 8 * R * (v + 3))):
                break                   # (a family that underflows throughout gives 0)
            size *= 2
        out.append(total)
    return out


def two_d_rows():
    import time

    import numpy as np
    from scipy import constants as sc
    sys.path.insert(0, str(ROOT))
    sys.path.insert(0, str(ROOT / "tests"))
    from conftest import rb_gas
    from probe.detectors import TwoLevelProbe
    from probe.engines.stationary import circular_rates
    from probe.engines.stationary.gas import kernel_gas
    cond = rb_gas(2)
    c, xi, w0 = cond.sound_speed, cond.healing_length, cond.frequency_unit
    kappa = 1e-40
    probe = TwoLevelProbe(0.3 * w0, kappa)
    gas = kernel_gas(cond, probe)
    pref = (kappa / sc.hbar) ** 2 * cond.density / xi ** 2 / w0
    # warm: imports, tables and caches that a first call fills (scipy.special,
    # the transition expansion's table, quadrature rules), at other speeds
    circular_rates(cond, probe, 10 * xi, 0.5 * c)
    circular_rates(cond, probe, 1e4 * xi, np.array([0.7, 1.7]) * c)
    rows = []
    for R, speeds in ((1.0, np.linspace(0.3, 2.5, 100)), (10.0, np.linspace(0.3, 2.5, 100)),
                      (1e4, np.array([0.5, 0.9, 1.5, 2.5]))):
        t = time.process_time()
        r = circular_rates(cond, probe, R * xi, speeds * c)
        engine = (time.process_time() - t) / speeds.size
        t = time.process_time()
        plain = [plain_sum_2d(gas, R, v, 0.3) for v in speeds]
        scipy_time = (time.process_time() - t) / speeds.size
        diff = max(abs(r.down_rate[i] / (plain[i][0] * pref) - 1) for i in range(speeds.size))
        rows.append((R, engine, scipy_time, diff))
    return rows


def poisson_rows():
    """2D, gap 0.3 c/xi, v = 0.5, 0.9, 1.5, 2.5 c at R = 1e4 and 1e5 xi:
    circular_rates with the long runs summed by Poisson's formula (the
    default) against the same engine summing every harmonic (the switch
    ``circular.MIN_SPAN`` raised), per point, CPU time; the largest
    difference relative to the error bounds."""
    import time

    import numpy as np
    sys.path.insert(0, str(ROOT))
    sys.path.insert(0, str(ROOT / "tests"))
    from conftest import rb_gas
    from probe.detectors import TwoLevelProbe
    from probe.engines.stationary import circular, circular_rates
    cond = rb_gas(2)
    c, xi, w0 = cond.sound_speed, cond.healing_length, cond.frequency_unit
    probe = TwoLevelProbe(0.3 * w0, 1e-40)
    speeds = np.array([0.5, 0.9, 1.5, 2.5]) * c
    circular_rates(cond, probe, 1e4 * xi, np.array([0.7, 1.7]) * c)      # warm, as above
    span, rows = circular.MIN_SPAN, []
    for R in (1e4, 1e5):
        out = []
        for limit in (span, 10**12):
            circular.MIN_SPAN = limit
            t = time.process_time()
            r = circular_rates(cond, probe, R * xi, speeds)
            out.append(((time.process_time() - t) / speeds.size, r))
        circular.MIN_SPAN = span
        (fast, a), (slow, b) = out
        worst = max(float(np.max(np.abs(x.down_rate - y.down_rate)
                                 / (x.down_rate_error + y.down_rate_error)))
                    for x, y in ((a, b),))
        rows.append((R, fast, slow, worst))
    return rows


def option(name, default):
    return next((a.split("=", 1)[1] for a in sys.argv[1:] if a.startswith(f"--{name}=")),
                default)


def part_3d():
    commit = option("previous", PREVIOUS)
    old_tree = worktree(commit)
    print(f"previous release: {commit} (worktree {old_tree}); CPU seconds per process")
    new = run(KERNEL_3D, ROOT, 1e4, 1.5, 0.3)
    old = run(KERNEL_3D, old_tree, 1e4, 1.5, 0.3)
    print("1. 3D circle, R = 1e4 xi, v = 1.5 c, gap 0.3 c/xi, one rate (kernel, rtol 1e-8):")
    print(f"   this tree {new['seconds']:.3f} s, previous {old['seconds']:.2f} s: "
          f"{old['seconds'] / new['seconds']:.0f}x faster; {new['harmonics']} harmonics each")
    print(f"   peak resident memory {new['rss_mb']:.0f} MB vs {old['rss_mb']:.0f} MB; largest "
          f"numpy allocation {new['traced_mb']:.1f} MB vs {old['traced_mb']:.0f} MB")
    print(f"   down rates differ by {abs(new['down'] / old['down'] - 1):.1e} (relative); "
          f"this tree's error bound {new['down_error'] / new['down']:.1e}")
    big = run(SI_3D, ROOT, 1e5)
    print("2. 3D circle, R = 1e5 xi, v = 1.5 c through circular_rates (not refused): "
          f"{big['seconds']:.2f} s, {big['harmonics']} harmonics, peak resident memory "
          f"{big['rss_mb']:.0f} MB, relative error bound {big['relative_error']:.1e}")


def part_2d():
    print("3. 2D circle, gap 0.3 c/xi, per point (engine: circular_rates on all speeds at once; "
          "plain: vectorised scipy sum per point)")
    runs = []
    for _ in range(int(option("repeat", "1"))):
        runs.append(two_d_rows())
        for R, engine, plain, diff in runs[-1]:
            print(f"   R = {R:g} xi: engine {engine * 1e3:.2f} ms, plain scipy sum "
                  f"{plain * 1e3:.2f} ms (ratio plain/engine {plain / engine:.2f}); "
                  f"largest relative difference {diff:.1e}")
    if len(runs) > 1:
        import numpy as np
        print(f"   medians of {len(runs)} runs:")
        for i, row in enumerate(runs[0]):
            engine = float(np.median([run[i][1] for run in runs]))
            plain = float(np.median([run[i][2] for run in runs]))
            print(f"   R = {row[0]:g} xi: engine {engine * 1e3:.2f} ms, plain scipy sum "
                  f"{plain * 1e3:.2f} ms (ratio plain/engine {plain / engine:.2f})")
    print("   long runs by Poisson's summation formula against every harmonic summed "
          "(same engine), v = 0.5, 0.9, 1.5, 2.5 c:")
    for R, fast, slow, worst in poisson_rows():
        print(f"   R = {R:g} xi: {fast * 1e3:.2f} ms against {slow * 1e3:.2f} ms per point "
              f"({slow / fast:.2f}x); largest difference {worst:.1e} of the summed error bounds")
    print(f"   load average {' '.join(f'{x:.2f}' for x in os.getloadavg())}")


def main():
    part = option("part", "all")
    if part in ("all", "1", "2"):
        part_3d()
    if part in ("all", "3"):
        part_2d()


if __name__ == "__main__":
    main()
