"""Benchmark of the stationary engine (run by hand, not collected by pytest):

    python tests/bench_rates.py

Prints, from one run on this machine:
  1. a 100 x 100 (speed, gap) grid, 3D inertial, T = 0, point probe: time of
     the vectorised engine, and the time per point of the straightforward
     loop (brentq for the window edges, scipy.integrate.quad for the
     integral, epsrel 1e-9) on a sample of the same points, with the ratio
     and the largest relative difference between the two; then the same grid
     at T > 0 with a probe width 0.3 xi in 1D, 2D and 3D (k_B T = 0.20, 0.51,
     1.35 m c^2: 50 nK in the three 87Rb gases), against a loop computing the
     same up and down rates (brentq edges; 1D edge sums; 2D quad in the angle
     theta of q = a + (b - a) sin^2(theta/2), which removes the inverse
     square roots at the edges; 3D quad in q), with ratios per point and the
     largest relative difference over the sample;
  2. 2D circular motion with radii from 10 to 1000 healing lengths at several
     speeds: time per point (mean and worst);
  3. the peak resident memory of the process.
Single-threaded: set OMP_NUM_THREADS=1 etc. before numpy loads.  Times are
CPU times of this process (time.process_time), the engine's the median of
three runs of the grid.
"""
import os

for _v in ("OMP_NUM_THREADS", "OPENBLAS_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ.setdefault(_v, "1")

import math  # noqa: E402
import resource  # noqa: E402
import time  # noqa: E402

import numpy as np  # noqa: E402
from scipy import constants as sc  # noqa: E402
from scipy.integrate import quad  # noqa: E402
from scipy.optimize import brentq  # noqa: E402

from probe.gas.condensate import Condensate  # noqa: E402
from probe.engines.stationary import circular_rates, inertial_rates  # noqa: E402
from probe.detectors import TwoLevelProbe  # noqa: E402

from conftest import RB87_MASS as M_RB  # noqa: E402


def loop_point(v, W):
    """Straightforward per-point route in the gas's units: edges by brentq,
    integral of q S / (2 pi v) by quad."""
    w = lambda q: q * math.sqrt(1 + q * q / 4)
    S = lambda q: q / math.sqrt(4 + q * q)
    f = lambda q: q * S(q) / (2 * math.pi * v)
    hi = v + math.sqrt(v * v + 2 * W) + 1
    qa = brentq(lambda q: w(q) + v * q - W, 0, W / v + 1e-300 if v > 0 else hi, xtol=1e-15)
    qb = brentq(lambda q: w(q) - v * q - W, 0, hi, xtol=1e-15)
    down = quad(f, qa, qb, epsabs=0, epsrel=1e-9)[0]
    up = 0.0
    if v > 1:
        g = lambda q: w(q) - v * q + W
        # minimum of g at the group-velocity match
        u = 0.5 * (v * v - 4 + math.sqrt(v**4 + 8 * v * v))
        qs = math.sqrt(max(u, 0))
        if g(qs) < 0:
            qc = brentq(g, 0, qs, xtol=1e-15)
            qd = brentq(g, qs, hi, xtol=1e-15)
            up = quad(f, qc, qd, epsabs=0, epsrel=1e-9)[0]
    return down, up


#: CPU time of this process: on a shared machine wall time counts other
#: processes' work on both sides of a ratio unevenly
CLOCK = time.process_time


def _timed(call, repeat=3):
    """The result of ``call`` and the median CPU time of ``repeat`` runs."""
    times = []
    for _ in range(repeat):
        t0 = CLOCK()
        out = call()
        times.append(CLOCK() - t0)
    return out, float(np.median(times))


def _w(q):
    return q * math.sqrt(1 + 0.25 * q * q)


def _S(q):
    return q / math.sqrt(4 + q * q)


def _vg(q):
    return (1 + 0.5 * q * q) / math.sqrt(1 + 0.25 * q * q)


def _edges(v, W):
    """(a, b) of |w - W| <= q v and (c, d) of w + W <= q v (or None), by brentq."""
    hi = v + math.sqrt(v * v + 2 * W) + 1
    kw = dict(xtol=1e-300, rtol=1e-15)
    a = brentq(lambda q: _w(q) + v * q - W, 0, W / v, **kw)
    b = brentq(lambda q: _w(q) - v * q - W, 0, hi, **kw)
    up = None
    if v > 1:
        qs = math.sqrt(max(0.5 * (v * v - 4 + math.sqrt(v ** 4 + 8 * v * v)), 0.0))
        g = lambda q: _w(q) - v * q + W
        if qs > 0 and g(qs) < 0:
            up = (brentq(g, 0, qs, **kw), brentq(g, qs, hi, **kw))
    return (a, b), up


def _window(d, v, Wx, a, b, weight):
    """One window's integral of the loop (Wx = -W: X = w - W; +W: X = w + W)."""
    if d == 1:
        lower = _vg(a) + v if Wx < 0 else abs(_vg(a) - v)
        return _S(a) * weight(a) / lower + _S(b) * weight(b) / abs(_vg(b) - v)
    if d == 3:
        return quad(lambda q: q * _S(q) * weight(q), a, b, epsabs=0, epsrel=1e-9,
                    limit=200)[0] / (2 * math.pi * v)

    def h(th):
        da = (b - a) * math.sin(0.5 * th) ** 2
        db = (b - a) * math.cos(0.5 * th) ** 2
        q = a + da
        X = _w(q) + Wx
        return q * _S(q) * weight(q) * math.sqrt(abs(da * db / ((q * v - X) * (q * v + X))))
    return quad(h, 0, math.pi, epsabs=0, epsrel=1e-9, limit=200)[0] / math.pi


def loop_warm(d, v, W, s, T):
    """(down, up) of the per-point loop at T > 0 with width s (gas units)."""
    form = lambda q: math.exp(-(q * s) ** 2)
    thermal = lambda q: form(q) / math.expm1(_w(q) / T)
    (a, b), up = _edges(v, W)
    parts = {"1p": _window(d, v, -W, a, b, form), "1t": _window(d, v, -W, a, b, thermal)}
    if up:
        parts["2p"] = _window(d, v, W, up[0], up[1], form)
        parts["2t"] = _window(d, v, W, up[0], up[1], thermal)
    g = lambda k: parts.get(k, 0.0)
    return g("1p") + g("1t") + g("2t"), g("2p") + g("2t") + g("1t")


def warm_row(d, V, G, sample):
    """Engine against the loop at T = 50 nK, width 0.3 xi, in d dimensions."""
    if d == 3:
        cond = Condensate(3, M_RB, 1e20, 5.3e-9, temperature=50e-9)
    else:
        cond = Condensate(d, M_RB, {1: 1e8, 2: 1e14}[d], 5.3e-9,
                          transverse_frequency=2 * math.pi * 5e3, temperature=50e-9)
    c, w0, xi = cond.sound_speed, cond.frequency_unit, cond.healing_length
    s, kappa = 0.3, {1: 1e-32, 2: 1e-42, 3: 1e-50}[d]
    T = sc.k * 50e-9 / cond.energy_unit
    probe = TwoLevelProbe(1.0, kappa, width=s * xi)
    pref = (kappa / sc.hbar) ** 2 * cond.density / xi ** d / w0
    inertial_rates(cond, probe, V[:2] * c, gap=G[:2] * w0)  # warm-up
    r, t_grid = _timed(lambda: inertial_rates(cond, probe, V * c, gap=G * w0, rtol=1e-8))
    t_grid /= V.size
    t0 = CLOCK()
    ref = np.array([loop_warm(d, V.flat[i], G.flat[i], s, T) for i in sample])
    t_loop = (CLOCK() - t0) / sample.size
    got = np.stack([r.down_rate.ravel()[sample], r.up_rate.ravel()[sample]], axis=1) / pref
    diff = np.max(np.abs(got / ref - 1)[ref > 0])
    print(f"   {d}D, k_B T = {T:.2f} m c^2: engine {t_grid * 1e6:.1f} us per point, loop "
          f"{t_loop * 1e6:.0f} us per point ({sample.size} points): speed-up "
          f"{t_loop / t_grid:.0f}x; largest relative difference {diff:.1e}")


def main():
    cond = Condensate(3, M_RB, 1e20, 5.3e-9)
    c, w0 = cond.sound_speed, cond.frequency_unit
    kappa = 1e-50
    pref = (kappa / sc.hbar) ** 2 * cond.density / cond.healing_length**3 / w0
    vs = np.linspace(0.05, 4.0, 100)
    Ws = np.geomspace(1e-3, 10.0, 100)
    V, G = np.meshgrid(vs, Ws, indexing="ij")
    probe = TwoLevelProbe(1.0, kappa)
    inertial_rates(cond, probe, V[:2] * c, gap=G[:2] * w0)  # warm-up
    r, t_grid = _timed(lambda: inertial_rates(cond, probe, V * c, gap=G * w0, rtol=1e-8))
    rng = np.random.default_rng(0)
    idx = rng.choice(V.size, 400, replace=False)
    t0 = CLOCK()
    ref = [loop_point(V.flat[i], G.flat[i]) for i in idx]
    t_loop = (CLOCK() - t0) / idx.size
    dn = r.down_rate.ravel()[idx] / pref
    up = r.up_rate.ravel()[idx] / pref
    rd = np.array([a for a, _ in ref])
    ru = np.array([b for _, b in ref])
    diff = max(np.max(np.abs(dn / rd - 1)),
               np.max(np.abs(up[ru > 0] / ru[ru > 0] - 1)) if np.any(ru > 0) else 0.0)
    per_point = t_grid / V.size
    print("1. 3D inertial, T = 0, point probe, 10,000 (speed, gap) points")
    print(f"   vectorised engine: {t_grid:.3f} s for the grid ({per_point * 1e6:.1f} us per point)")
    print(f"   per-point brentq + quad loop: {t_loop * 1e6:.0f} us per point "
          f"(sample of {idx.size}); grid would take {t_loop * V.size:.1f} s")
    print(f"   speed-up per point: {t_loop / per_point:.0f}x; largest relative difference {diff:.1e}")

    # the same grid at T > 0 with a probe width, 1D, 2D and 3D
    print("   the same grid at T = 50 nK with probe width 0.3 xi, up and down rates:")
    for d in (1, 2, 3):
        warm_row(d, V, G, idx[:120])
    cond2 = Condensate(2, M_RB, 1e14, 5.3e-9, transverse_frequency=2 * math.pi * 5e3)
    probe2 = TwoLevelProbe(0.3 * cond2.frequency_unit, 1e-40)
    radii = np.geomspace(10, 1000, 9)
    speeds = [0.5, 0.9, 1.5, 2.5]
    times = []
    circular_rates(cond2, probe2, 10 * cond2.healing_length, 0.5 * cond2.sound_speed)
    for R in radii:
        for v in speeds:
            t0 = time.perf_counter()
            circular_rates(cond2, probe2, R * cond2.healing_length, v * cond2.sound_speed)
            times.append(time.perf_counter() - t0)
    times = np.array(times) * 1e3
    print("2. 2D circular, R = 10 ... 1000 xi (9 radii), v = 0.5, 0.9, 1.5, 2.5 c, rtol 1e-8")
    print(f"   per point: mean {times.mean():.2f} ms, median {np.median(times):.2f} ms, "
          f"worst {times.max():.2f} ms")
    peak = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024
    print(f"3. peak resident memory of this process: {peak:.0f} MB")


if __name__ == "__main__":
    main()
