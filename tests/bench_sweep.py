"""Benchmark of the sweep machinery (run by hand, not collected by pytest):

    python tests/bench_sweep.py [N]

A N x N (default 200 x 200) map of the circular engine over speed (0.2 to
2 c_s) and radius (2 to 50 um, log-spaced) for the quasi-2D 23Na gas of
examples/ring2d_circular.toml (healing length 1.14 um), written to a CSV
exactly as `probe sweep ... --out` does, once with one worker and once with
`--workers 2`.  Prints both wall times, the time per point, the ratio, how
busy the machine's cores were meanwhile (one worker alone keeps one core
busy, two keep two: more than that is other programs), and checks that the
two files are byte-identical.  Single-threaded numerics:
OMP_NUM_THREADS etc. are set to 1 before numpy loads.
"""
import os

for _v in ("OMP_NUM_THREADS", "OPENBLAS_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ.setdefault(_v, "1")

import sys  # noqa: E402
import tempfile  # noqa: E402
import time  # noqa: E402
from pathlib import Path  # noqa: E402

from probe.design.sweep import sweep  # noqa: E402

RING = str(Path(__file__).resolve().parent.parent / "examples" / "ring2d_circular.toml")


def _busy():
    """Busy CPU seconds of the whole machine so far (all processes, from
    /proc/stat; None elsewhere): compared with the wall time it shows how
    much of the cores other programs took during a run."""
    try:
        with open("/proc/stat") as fh:
            fields = [int(x) for x in fh.readline().split()[1:]]
    except (OSError, ValueError):
        return None
    idle = fields[3] + (fields[4] if len(fields) > 4 else 0)
    return (sum(fields[:8]) - idle) / os.sysconf("SC_CLK_TCK")


def run(n, workers, out):
    vary = [("trajectory.speed", "0.2 c_s", "2 c_s", n),
            ("trajectory.radius", "2 um", "50 um", n)]
    b0, t0 = _busy(), time.perf_counter()
    res = sweep(RING, vary, log=("trajectory.radius",), out=out, workers=workers)
    wall = time.perf_counter() - t0
    busy = None if b0 is None else _busy() - b0
    return wall, busy, res


def _line(label, wall, busy, n):
    text = f"  {label}: {wall:7.2f} s wall  ({wall / n**2 * 1e3:.3f} ms per point)"
    if busy is not None:
        text += f"; the machine's cores were busy {busy:.1f} s of {2 * wall:.1f} s"
    return text


def main():
    n = int(sys.argv[1]) if len(sys.argv) > 1 else 200
    print(f"load average before: {os.getloadavg()[0]:.2f} (other processes on the "
          "machine slow the 2-worker run most)")
    print(f"{n} x {n} = {n * n} points, circular engine, 2D gas "
          f"(ring2d_circular.toml), speed 0.2..2 c_s, radius 2..50 um (log); "
          f"{os.cpu_count()} CPUs")
    # imports and first calls outside the timings
    sweep(RING, [("trajectory.speed", "0.5 c_s", "1 c_s", 2)])
    with tempfile.TemporaryDirectory() as tmp:
        one, busy1, res1 = run(n, 1, Path(tmp) / "one.csv")
        print(_line("1 worker ", one, busy1, n), flush=True)
        two, busy2, res2 = run(n, 2, Path(tmp) / "two.csv")
        print(_line("2 workers", two, busy2, n), flush=True)
        same = (Path(tmp) / "one.csv").read_bytes() == (Path(tmp) / "two.csv").read_bytes()
    print(f"  load average after: {os.getloadavg()[0]:.2f}")
    harm = res1.column("harmonics")
    print(f"  speed-up {one / two:.2f}x; files identical: {same}; harmonics per point "
          f"{harm.mean():.0f} mean, {harm.max():.0f} max")
    if not same:
        raise SystemExit("the two runs differ")


if __name__ == "__main__":
    main()
