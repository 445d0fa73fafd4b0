"""Benchmark: a 3D spline transit of 2,000 waypoints at 1e-3 accuracy, and
solve / compare over the gap of a transit.

Run:  python tests/bench_transit.py [--durations=60,120,300,600,1200] [--confirm]
                                    [--part=routes|gaps] [--old-commit=SHA]
                                    [--full-direct-up-to=600] [--lag-stride=8]

Times ``probe.transit.transit_probabilities`` on 2 threads (its default
``method="auto"`` picks the amplitude route by its cost model), measures its
peak memory, and times a direct double time integral of the Wightman
function on the same path (the straightforward route)

    P(D) = sum_ij w_i w_j chi_i chi_j Re[e^{i D (t_i - t_j)} G(t_i - t_j, r_ij)],
    G(s, r) = int q^2 dq/(2 pi^2) S |F|^2 e^{i w s} sinc(q r)      (T = 0)

(the angular average of e^{-i k.(x - x')} over an isotropic gas is
sin(k r)/(k r)), evaluated lag by lag on its uniform time grid (one sine per
pair and q node, matrix-vector contractions, 2 threads).  Both are judged
against a converged reference from the other amplitude route (the direct
phasor sums on q-uniform nodes at rtol = 1e-5); the direct route is timed on
the cheapest grid of its refinement ladder that lands within 1e-3 of it, the
engine on its own rtol = 1e-3 run (error checks included).

Part ``routes``: the transit at the durations 60, 120, 300, 600 and 1200
xi/c (600 xi/c is about 90 ms for xi = 0.3 um, c = 2 mm/s), one row each:
the route ``auto`` takes, its time, the direct route's, their ratio.  The
direct ladder of a duration starts one rung below the grid that served the
previous one (its grid barely depends on the duration).  ``--confirm`` also
runs the next rung of the direct ladder, the first grid a user without the
reference could trust (it agrees with its predecessor).

Times are CPU seconds of the process (time.process_time: both threads of
either route, robust to other programs on a busy machine) and wall seconds
beside them, each the median of repeated runs where a run is short (the
engine: 5 runs under 2 s, else 3; the direct route's chosen grid: 3 runs
under 3 s); the verdict and the ratio use the CPU times.  The reference is
the pair route (angles averaged exactly, q-uniform nodes) when ``auto``
takes the FFT route, else the FFT route (directions summed).

Durations above ``--full-direct-up-to`` (default 600 xi/c, where one
direct run takes about a minute; 1200 xi/c takes eight times as long per
grid and the ladder several grids) are not searched: the direct route runs
on the grid that served the previous duration (the same time step, and q
nodes in proportion to the conjugate length, which its ladder scales with
the duration), and only every ``--lag-stride``-th lag (default 8) is
summed; its time is scaled by the pairs of times the full sum holds against
those summed (the work per lag is pairs x q nodes).  Such rows are marked
"est." and their direct deviation is not known.  At the last fully
searched duration the same estimate is printed beside the measured time,
as a check of the scaling.

Part ``gaps``: ``solve`` over the gap of examples/transits/stir2d_spline.toml
and ``compare`` over its gap, with this tree's code and with the code of
the commit before the pair route and the gap scan (``--old-commit``, checked
out in a temporary git worktree under /tmp and imported first on sys.path),
each in its own process, one after the other.

Not collected by pytest (no ``test_`` prefix).
"""
from __future__ import annotations

import os

os.environ.setdefault("OPENBLAS_NUM_THREADS", "2")
os.environ.setdefault("OMP_NUM_THREADS", "2")

import math  # noqa: E402
import statistics  # noqa: E402
import resource  # noqa: E402
import sys  # noqa: E402
import time  # noqa: E402
import tracemalloc  # noqa: E402
from concurrent.futures import ThreadPoolExecutor  # noqa: E402
from pathlib import Path  # noqa: E402

import numpy as np  # noqa: E402
from scipy import constants as sc  # noqa: E402

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

from probe.gas.condensate import Condensate  # noqa: E402
from probe.detectors import TwoLevelProbe  # noqa: E402
from probe.detectors.switching import PathSpan  # noqa: E402
from probe.engines.transit import transit_probabilities  # noqa: E402
from trajectories import Spline  # noqa: E402

HBAR = sc.hbar


def scenario(duration=120.0, n_waypoints=2000):
    """A probe stirred on a wobbling loop (radius 2 xi, 0.8 c in the plane,
    a vertical wobble at three times the loop frequency) for ``duration``
    xi/c, given as timed waypoints; gap 0.5 c/xi, width 0.7 xi, T = 0."""
    cond = Condensate(3, 23 * sc.atomic_mass, 1e20, 2.75e-9)
    xi, c, w0 = cond.healing_length, cond.sound_speed, cond.frequency_unit
    probe = TwoLevelProbe(0.5 * w0, 2e-51, 0.7 * xi)
    s = np.linspace(0.0, duration, n_waypoints)
    R, om = 2.0, 0.4
    pos = np.stack([R * np.cos(om * s), R * np.sin(om * s),
                    0.3 * np.sin(3 * om * s)], axis=1) * xi
    path = Spline(s / w0, pos)
    return cond, probe, path, PathSpan(path)


def direct_probability(cond, probe, path, switching, dt, q_max, n_panels, gl=16,
                       max_block=1e6, workers=2, lag_stride=1):
    """The direct route: P_up and P_down by the double time sum on a uniform
    grid of step dt (xi/c units) with the q integral of G by n_panels
    Gauss-Legendre panels of gl points on [0, q_max] (xi units), T = 0.

    On the uniform grid e^{i w (t_i - t_j)} depends only on the lag
    l = j - i, so for each lag the pair sum is contracted over i first,
    u_l(q) = sum_i a_i a_{i+l} sinc(q r_{i,i+l}), and then over q with
    weight(q) e^{-i w(q) l dt}: one sine per (pair, q node), no complex
    exponentials, and the contractions are matrix-vector products.  The
    lags are shared out over ``workers`` threads.  With ``lag_stride`` > 1
    only the lags 0, stride, 2 stride, ... are summed (a timing sample; the
    sums are then not the probabilities); the fourth value returned is the
    fraction of the pairs of times summed."""
    xi, w0 = cond.healing_length, cond.frequency_unit
    disp = cond.dispersion
    s = probe.width / xi
    Om = probe.gap / w0
    t0, t1 = (x * w0 for x in switching.support)
    n = int(math.ceil((t1 - t0) / dt))
    t = t0 + (t1 - t0) * np.arange(n + 1) / n
    h = (t1 - t0) / n
    w = np.full(t.size, h)
    w[0] = w[-1] = h / 2
    a = switching(t / w0) * w
    nz = np.nonzero(a)[0]
    lo, hi = nz[0], nz[-1] + 1          # chi vanishes only at the two ends
    a = a[lo:hi]
    X = path.position(t[lo:hi] / w0) / xi
    x0, wx = np.polynomial.legendre.leggauss(gl)
    edges = np.linspace(0.0, q_max, n_panels + 1)
    hq = np.diff(edges)
    q = (edges[:-1, None] + 0.5 * hq[:, None] * (x0[None, :] + 1)).ravel()
    wq = (0.5 * hq[:, None] * wx[None, :]).ravel()
    weight = wq * q ** 2 * disp.structure_factor(q) * np.exp(-(q * s) ** 2) / (2 * math.pi ** 2)
    om = disp.omega(q)
    N = a.size
    rows = int(max(1, max_block // q.size))

    chosen = np.arange(0, N, lag_stride)
    share = float((N - chosen).sum()) / (N * (N + 1) / 2)

    def lags(first):
        """Every workers-th of the chosen lags from the first-th: (P_up,
        P_down) partial sums."""
        up = down = 0.0
        for lag in chosen[first::workers].tolist():
            m = N - lag
            c = a[:m] * a[lag:]
            r = np.sqrt(((X[:m] - X[lag:]) ** 2).sum(axis=1))
            u = np.zeros(q.size)
            for i0 in range(0, m, rows):
                y = np.outer(r[i0:i0 + rows], q)
                S = np.sin(y)
                np.divide(S, y, out=S, where=y > 0)
                S[y <= 0] = 1.0
                u += c[i0:i0 + rows] @ S
            g = u @ (weight * np.exp(-1j * om * lag * h))     # sum_i a a G(-lag h, r)
            mult = 1.0 if lag == 0 else 2.0
            up += mult * float((np.exp(-1j * Om * lag * h) * g).real)
            down += mult * float((np.exp(1j * Om * lag * h) * g).real)
        return up, down

    with ThreadPoolExecutor(workers) as pool:           # numpy releases the GIL
        parts = list(pool.map(lags, range(workers)))
    up = sum(p[0] for p in parts)
    down = sum(p[1] for p in parts)
    A = (probe.coupling / HBAR) ** 2 * cond.density
    pref = A * xi ** -3 / w0 ** 2
    return up * pref, down * pref, N, share


def _deviation(run, ref):
    return max(abs(run[0] / ref[0] - 1), abs(run[1] / ref[1] - 1))


def _timed(fn):
    """(CPU seconds, wall seconds, value) of one call."""
    c0, t0 = time.process_time(), time.perf_counter()
    value = fn()
    return time.process_time() - c0, time.perf_counter() - t0, value


def _medians(fn, first, short, runs):
    """(CPU, wall) medians of ``first`` (a timed run already made) and, if
    its wall time is under ``short`` seconds, of further runs up to
    ``runs`` in all."""
    cpu, wall = [first[0]], [first[1]]
    while first[1] < short and len(cpu) < runs:
        c, w, _ = _timed(fn)
        cpu.append(c)
        wall.append(w)
    return statistics.median(cpu), statistics.median(wall)


def _engine(cond, probe, path, sw):
    """((CPU, wall) seconds, result) of the engine at rtol 1e-3 (after a
    warm-up; the median of 5 runs under 2 s, else of 3)."""
    def run():
        return transit_probabilities(cond, probe, path, sw, rtol=1e-3, workers=2)
    run()
    first = _timed(run)
    res = first[2]
    times = _medians(run, first, math.inf, 5 if first[1] < 2.0 else 3)
    tracemalloc.start()
    run()
    res.peak_memory = tracemalloc.get_traced_memory()[1]
    tracemalloc.stop()
    return times, res


class DirectGrid:
    """The direct route's grid: time step ``dt`` (xi/c) and ``panels`` of
    16 q nodes, and the conjugate length they were chosen for."""

    def __init__(self, dt, panels, conj):
        self.dt, self.panels, self.conj = dt, panels, conj

    def scaled(self, conj):
        """The same step and q nodes per conjugate length at ``conj``."""
        return DirectGrid(self.dt, int(math.ceil(self.panels * conj / self.conj)), conj)


def _conjugate(cond, q_max, duration):
    return float(cond.dispersion.group_velocity(q_max)) * duration + 10.0


def _direct_ladder(cond, probe, path, sw, g, ref, duration, start, confirm):
    """((CPU, wall) seconds, deviation, next start rung, DirectGrid) of the
    direct route on the cheapest grid of its ladder within 1e-3 of the
    reference; the search starts at rung ``start``; the chosen grid is
    timed again (median of 3) when a run takes under 3 s."""
    xi, w0 = cond.healing_length, cond.frequency_unit
    dt0 = 5 * g["time_step"] * w0
    q_max = g["k_max"] * xi
    Lconj = _conjugate(cond, q_max, duration)
    p0 = q_max * Lconj / 240.0
    cache = {}

    def grid(k_t, k_q):
        return dt0 / 1.25 ** k_t, int(math.ceil(p0 * 1.25 ** k_q))

    def run(k_t, k_q):
        key = (k_t, k_q)
        if key not in cache:
            dt, panels = grid(k_t, k_q)
            c, el, (up, down, N, _) = _timed(
                lambda: direct_probability(cond, probe, path, sw, dt, q_max, panels))
            dev = _deviation((up, down), ref)
            print(f"    direct: step {dt:.3f} xi/c ({N} times), {panels * 16} q nodes: "
                  f"{c:.2f} s CPU ({el:.2f} s wall), vs reference {dev:.1e}", flush=True)
            cache[key] = ((c, el), dev)
        return cache[key]

    k = start
    while True:
        _, dev = run(k, k)
        if dev < 1e-3:
            break
        k += 1
        if k > 14:
            raise RuntimeError("direct route not converging")
    best = (k, k)
    for step in ((-1, 0), (0, -1)):
        while True:
            cand = (best[0] + step[0], best[1] + step[1])
            if min(cand) < 0 or run(*cand)[1] >= 1e-3:
                break
            best = cand
    if confirm:
        run(k + 1, k + 1)
    (c, el), dev_direct = cache[best]
    dt, panels = grid(*best)
    times = _medians(lambda: direct_probability(cond, probe, path, sw, dt, q_max, panels),
                     (c, el), 3.0, 3)
    return times, dev_direct, max(0, min(best) - 1), DirectGrid(dt, panels, Lconj)


def _direct_estimate(cond, probe, path, sw, g, duration, prev, stride):
    """(CPU, wall) seconds of the direct route on the grid ``prev`` scaled
    to this duration, estimated from every ``stride``-th lag: the time of
    those lags over the share of the pairs of times they hold."""
    q_max = g["k_max"] * cond.healing_length
    grd = prev.scaled(_conjugate(cond, q_max, duration))
    c, el, (_, _, N, share) = _timed(lambda: direct_probability(
        cond, probe, path, sw, grd.dt, q_max, grd.panels, lag_stride=stride))
    print(f"    direct (estimate): step {grd.dt:.3f} xi/c ({N} times), {grd.panels * 16} q "
          f"nodes, every {stride}th lag ({share:.3f} of the pairs): {c:.2f} s CPU "
          f"({el:.2f} s wall) -> {c / share:.3g} s CPU ({el / share:.3g} s wall) for all",
          flush=True)
    return (c / share, el / share), grd


def _reference(cond, probe, path, sw, method):
    """The reference of a run of ``method``: the pair route at rtol 1e-5
    when the run took the FFT route, else the FFT route."""
    other = "pairs" if method == "fft" else "fft"
    tight = transit_probabilities(cond, probe, path, sw, rtol=1e-5, workers=2, method=other)
    return other, (tight.up_probability, tight.down_probability)


def _row(duration, full_up_to, stride, state, confirm):
    """One duration of the routes part: (duration, route, engine (CPU,
    wall), direct (CPU, wall), engine deviation, direct deviation or None,
    estimated)."""
    cond, probe, path, sw = scenario(duration)
    print(f"  duration {duration:g} xi/c", flush=True)
    t_engine, res = _engine(cond, probe, path, sw)
    g = res.grid
    other, ref = _reference(cond, probe, path, sw, g.get("method"))
    dev_engine = _deviation((res.up_probability, res.down_probability), ref)
    print(f"    auto ({g.get('method')}, {g['n_times']} times): {t_engine[0]:.3f} s CPU "
          f"({t_engine[1]:.3f} s wall), vs reference ({other}, rtol 1e-5) {dev_engine:.1e}, "
          f"reported {res.achieved_rtol:.1e}; peak traced memory "
          f"{res.peak_memory / 1e6:.0f} MB", flush=True)
    if duration > full_up_to and state.get("grid") is not None:
        t_direct, _ = _direct_estimate(cond, probe, path, sw, g, duration, state["grid"],
                                       stride)
        return (duration, g.get("method"), t_engine, t_direct, dev_engine, None, True)
    t_direct, dev_direct, state["start"], state["grid"] = _direct_ladder(
        cond, probe, path, sw, g, ref, duration, state.get("start", 0), confirm)
    if duration == full_up_to:
        est, _ = _direct_estimate(cond, probe, path, sw, g, duration, state["grid"], stride)
        print(f"    check of the estimate: {est[0]:.2f} s CPU estimated, {t_direct[0]:.2f} s "
              f"measured", flush=True)
    return (duration, g.get("method"), t_engine, t_direct, dev_engine, dev_direct, False)


def routes_part(durations, confirm, full_up_to=600.0, stride=8):
    print("transit: 3D Bogoliubov gas, two-level probe (gap 0.5 c/xi, width 0.7 xi), spline "
          "of 2,000 waypoints on a wobbling loop, PathSpan switching (5 % ramps), T = 0; "
          "rtol 1e-3; 2 threads")
    print(f"  load average at the start: {', '.join(f'{x:.2f}' for x in os.getloadavg())}")
    state, rows = {}, []
    for duration in durations:
        rows.append(_row(duration, full_up_to, stride, state, confirm))
    print(f"\n  load average at the end: {', '.join(f'{x:.2f}' for x in os.getloadavg())}")
    print("  times in CPU seconds (wall in brackets); ratio direct/auto of the CPU times "
          "(of the wall times)")
    print("  duration [xi/c]  auto route  auto [s]         direct [s]          direct/auto"
          "        auto dev.  direct dev.")
    for d, m, te, td, de, dd, est in rows:
        mark = " est." if est else "     "
        ddev = "   unknown" if dd is None else f"{dd:11.1e}"
        print(f"  {d:15g}  {m:>10}  {te[0]:6.3f} ({te[1]:6.3f})  {td[0]:8.2f} ({td[1]:8.2f})"
              f"{mark}  {td[0] / te[0]:7.1f}x ({td[1] / te[1]:6.1f}x)  {de:9.1e}  {ddev}")
    never_slower = all(r[3][0] >= r[2][0] for r in rows)
    at600 = [r[3][0] / r[2][0] for r in rows if r[0] == 600]
    print(f"  auto never slower than the direct double integral (CPU): "
          f"{'yes' if never_slower else 'NO'}"
          + (f"; at 600 xi/c {at600[0]:.0f}x (target >= 50x)" if at600 else ""))
    return rows


# --- solve and compare over the gap of a transit ----------------------------
ROOT = Path(__file__).resolve().parents[1]
#: the commit before the pair route and the gap scan
OLD_COMMIT = "49102d0"
EXAMPLE = "examples/transits/stir2d_spline.toml"
SOLVE = ("probe.gap", "up_probability=0.005")
COMPARE_VARY = [("probe.gap", "100 Hz", "1 kHz", 11)]

_JOB = r"""
import json, sys, time
sys.path.insert(0, {root!r})
import probe
from probe.design.solver import solve
from probe.design.compare import compare
t0 = time.perf_counter()
sol = solve({example!r}, {key!r}, {target!r})
t1 = time.perf_counter()
cmp = compare({example!r}, {vary!r})
t2 = time.perf_counter()
cols = {{v.name: {{c: v.result.column(c).tolist() for c in ("up_probability",
         "down_probability")}} for v in cmp.variants}}
print(json.dumps({{"module": probe.__file__, "solve_s": t1 - t0, "compare_s": t2 - t1,
                  "value": sol.value, "achieved": sol.achieved, "columns": cols}}))
"""


def _job(root):
    import json
    import subprocess

    code = _JOB.format(root=str(root), example=str(ROOT / EXAMPLE), key=SOLVE[0],
                       target=SOLVE[1], vary=COMPARE_VARY)
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True,
                         check=True, cwd=str(ROOT))
    return json.loads(out.stdout.strip().splitlines()[-1])


def gaps_part(old_commit):
    import shutil
    import subprocess
    import tempfile

    where = Path(tempfile.mkdtemp(prefix="bench_transit_old_", dir="/tmp"))
    tree = where / "tree"
    subprocess.run(["git", "-C", str(ROOT), "worktree", "add", "--detach", str(tree),
                    old_commit], check=True, capture_output=True)
    try:
        print(f"\nsolve {EXAMPLE} --for {SOLVE[0]} --target {SOLVE[1]!r} (101 scan points, "
              f"Brent's method) and compare --vary {COMPARE_VARY[0][0]}="
              f"{COMPARE_VARY[0][1]}:{COMPARE_VARY[0][2]}:{COMPARE_VARY[0][3]}", flush=True)
        new = _job(ROOT)
        print(f"  this tree ({new['module']}): solve {new['solve_s']:.1f} s, compare "
              f"{new['compare_s']:.1f} s", flush=True)
        old = _job(tree)
        print(f"  commit {old_commit} ({old['module']}): solve {old['solve_s']:.1f} s, "
              f"compare {old['compare_s']:.1f} s", flush=True)
    finally:
        subprocess.run(["git", "-C", str(ROOT), "worktree", "remove", "--force", str(tree)],
                       capture_output=True)
        shutil.rmtree(where, ignore_errors=True)
    dv = abs(new["value"] / old["value"] - 1)
    devs = [abs(a / b - 1) for name in old["columns"] for c in old["columns"][name]
            for a, b in zip(new["columns"][name][c], old["columns"][name][c]) if b]
    print(f"  solve: gap {new['value']:.9g} rad/s (old {old['value']:.9g}, relative "
          f"difference {dv:.1e}); {old['solve_s'] / new['solve_s']:.1f}x faster")
    print(f"  compare: largest relative difference of the probabilities {max(devs):.1e}; "
          f"{old['compare_s'] / new['compare_s']:.1f}x faster")


def main(argv):
    durations = [60.0, 120.0, 300.0, 600.0, 1200.0]
    parts = ("routes", "gaps")
    old_commit = OLD_COMMIT
    full_up_to, stride = 600.0, 8
    for arg in argv:
        if arg.startswith("--durations="):
            durations = [float(x) for x in arg.split("=", 1)[1].split(",")]
        elif arg.startswith("--part="):
            parts = (arg.split("=", 1)[1],)
        elif arg.startswith("--old-commit="):
            old_commit = arg.split("=", 1)[1]
        elif arg.startswith("--full-direct-up-to="):
            full_up_to = float(arg.split("=", 1)[1])
        elif arg.startswith("--lag-stride="):
            stride = int(arg.split("=", 1)[1])
    if "routes" in parts:
        routes_part(durations, "--confirm" in argv, full_up_to, stride)
    if "gaps" in parts:
        gaps_part(old_commit)
    rss = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024
    print(f"process max RSS {rss:.0f} MB")


if __name__ == "__main__":
    main(sys.argv[1:])
