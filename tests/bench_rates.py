"""Benchmark of the stationary engine (run by hand, not collected by pytest):

    python tests/bench_rates.py

Prints, from one run on this machine:
  1. a 100 x 100 (speed, gap) grid, 3D inertial, T = 0: time of the vectorised
     engine, and the time per point of the straightforward loop (brentq for
     the window edges, scipy.integrate.quad for the integral, epsrel 1e-9) on
     a sample of the same points, with the ratio and the largest relative
     difference between the two;
  2. 2D circular motion with radii from 10 to 1000 healing lengths at several
     speeds: time per point (mean and worst);
  3. the peak resident memory of the process.
Single-threaded: set OMP_NUM_THREADS=1 etc. before numpy loads.
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
    t0 = time.perf_counter()
    r = inertial_rates(cond, probe, V * c, gap=G * w0, rtol=1e-8)
    t_grid = time.perf_counter() - t0
    rng = np.random.default_rng(0)
    idx = rng.choice(V.size, 400, replace=False)
    t0 = time.perf_counter()
    ref = [loop_point(V.flat[i], G.flat[i]) for i in idx]
    t_loop = (time.perf_counter() - t0) / idx.size
    dn = r.down_rate.ravel()[idx] / pref
    up = r.up_rate.ravel()[idx] / pref
    rd = np.array([a for a, _ in ref])
    ru = np.array([b for _, b in ref])
    diff = max(np.max(np.abs(dn / rd - 1)),
               np.max(np.abs(up[ru > 0] / ru[ru > 0] - 1)) if np.any(ru > 0) else 0.0)
    per_point = t_grid / V.size
    print("1. 3D inertial, T = 0, 10,000 (speed, gap) points")
    print(f"   vectorised engine: {t_grid:.3f} s for the grid ({per_point * 1e6:.1f} us per point)")
    print(f"   per-point brentq + quad loop: {t_loop * 1e6:.0f} us per point "
          f"(sample of {idx.size}); grid would take {t_loop * V.size:.1f} s")
    print(f"   speed-up per point: {t_loop / per_point:.0f}x; largest relative difference {diff:.1e}")

    # the same grid at T > 0 with a finite probe width (numerical quadrature)
    condT = Condensate(3, M_RB, 1e20, 5.3e-9, temperature=50e-9)
    sT = 0.3
    Tn = sc.k * 50e-9 / condT.energy_unit
    probeT = TwoLevelProbe(1.0, kappa, width=sT * condT.healing_length)
    t0 = time.perf_counter()
    rT = inertial_rates(condT, probeT, V * c, gap=G * w0, rtol=1e-8)
    t_gridT = time.perf_counter() - t0
    w = lambda q: q * math.sqrt(1 + q * q / 4)
    S = lambda q: q / math.sqrt(4 + q * q)

    def loopT(v, W):
        n = lambda q: 1 / math.expm1(w(q) / Tn)
        f = lambda q, wt: q * S(q) * math.exp(-(q * sT) ** 2) * wt(q) / (2 * math.pi * v)
        hi = v + math.sqrt(v * v + 2 * W) + 1
        qa = brentq(lambda q: w(q) + v * q - W, 0, W / v, xtol=1e-15)
        qb = brentq(lambda q: w(q) - v * q - W, 0, hi, xtol=1e-15)
        one = lambda q: 1.0
        I1p = quad(f, qa, qb, args=(one,), epsabs=0, epsrel=1e-9)[0]
        I1t = quad(f, qa, qb, args=(n,), epsabs=0, epsrel=1e-9)[0]
        return I1p + I1t, I1t

    sub = idx[V.flat[idx] < 0.95]   # subsonic points: one window, no up emission
    t0 = time.perf_counter()
    refT = np.array([loopT(V.flat[i], G.flat[i]) for i in sub])
    t_loopT = (time.perf_counter() - t0) / sub.size
    prefT = (kappa / sc.hbar) ** 2 * condT.density / condT.healing_length**3 / condT.frequency_unit
    dT = np.max(np.abs(rT.down_rate.ravel()[sub] / prefT / refT[:, 0] - 1))
    print("   same grid at T = 50 nK with probe width 0.3 xi (adaptive Gauss-Legendre):")
    print(f"   engine {t_gridT:.3f} s ({t_gridT / V.size * 1e6:.1f} us per point); loop "
          f"{t_loopT * 1e6:.0f} us per point on {sub.size} subsonic points; speed-up "
          f"{t_loopT / (t_gridT / V.size):.0f}x; largest relative difference {dT:.1e}")

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
