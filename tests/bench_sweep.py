"""Benchmark of the sweep machinery (run by hand, not collected by pytest):

    python tests/bench_sweep.py [N]

A N x N (default 200 x 200) map of the circular engine over speed (0.2 to
2 c_s) and radius (2 to 50 um, log-spaced) for the quasi-2D 23Na gas of
examples/ring2d_circular.toml (healing length 1.14 um), written to a CSV
exactly as `probe sweep ... --out` does, once with one worker and once with
`--workers 2`.  Prints both wall times, the time per point, the ratio, how
busy the machine's cores were meanwhile (/proc/stat) and how much of that
was this sweep (its processes' CPU time, /proc/PID/stat) and how much other
programs, with the load average before and after, and checks that the two
files are byte-identical.  Single-threaded numerics:
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


def _tree():
    """{pid: CPU seconds} of this process and every process below it (the
    fork server and the workers), from /proc; {} elsewhere."""
    tick = os.sysconf("SC_CLK_TCK")
    parents, cpu = {}, {}
    try:
        names = [e for e in os.listdir("/proc") if e.isdigit()]
    except OSError:
        return {}
    for e in names:
        try:
            with open(f"/proc/{e}/stat") as fh:
                stat = fh.read()
        except OSError:
            continue
        f = stat[stat.rindex(")") + 2:].split()
        parents[int(e)] = int(f[1])
        cpu[int(e)] = (int(f[11]) + int(f[12])) / tick
    mine, frontier = {os.getpid()}, {os.getpid()}
    while frontier:
        frontier = {p for p, pp in parents.items() if pp in frontier} - mine
        mine |= frontier
    return {p: cpu[p] for p in mine if p in cpu}


class _Own:
    """The CPU seconds of this sweep's processes: sampled as its rows come
    in (a worker's last sample is taken after its last task)."""

    def __init__(self):
        self.start = _tree()
        self.last = dict(self.start)

    def __call__(self, n):
        self.last.update(_tree())

    def seconds(self):
        self.last.update(_tree())
        return sum(v - self.start.get(p, 0.0) for p, v in self.last.items())


def run(n, workers, out):
    vary = [("trajectory.speed", "0.2 c_s", "2 c_s", n),
            ("trajectory.radius", "2 um", "50 um", n)]
    own = _Own()
    b0, t0 = _busy(), time.perf_counter()
    res = sweep(RING, vary, log=("trajectory.radius",), out=out, workers=workers,
                progress=own)
    wall = time.perf_counter() - t0
    busy = None if b0 is None else _busy() - b0
    return wall, busy, own.seconds(), res


def _line(label, wall, busy, own, n):
    cores = os.cpu_count() or 1
    text = f"  {label}: {wall:7.2f} s wall  ({wall / n**2 * 1e3:.3f} ms per point)"
    if busy is not None:
        others = max(0.0, busy - own)
        text += (f"; cores busy {100 * busy / (cores * wall):.0f} % of {cores}: this sweep "
                 f"{own:.1f} s of CPU, other programs {others:.1f} s "
                 f"({others / wall:.2f} cores on average)")
    return text, (None if busy is None else max(0.0, busy - own) / wall)


def main():
    n = int(sys.argv[1]) if len(sys.argv) > 1 else 200
    print(f"load average before: {os.getloadavg()[0]:.2f} (other processes on the "
          "machine slow the 2-worker run most)")
    print(f"{n} x {n} = {n * n} points, circular engine, 2D gas "
          f"(ring2d_circular.toml), speed 0.2..2 c_s, radius 2..50 um (log); "
          f"{os.cpu_count()} CPUs")
    # imports and first calls outside the timings (the worker processes are
    # started inside the timing, as in every `probe sweep --workers 2`)
    sweep(RING, [("trajectory.speed", "0.5 c_s", "1 c_s", 2)])
    with tempfile.TemporaryDirectory() as tmp:
        one, busy1, own1, res1 = run(n, 1, Path(tmp) / "one.csv")
        text, others1 = _line("1 worker ", one, busy1, own1, n)
        print(text, flush=True)
        two, busy2, own2, res2 = run(n, 2, Path(tmp) / "two.csv")
        text, others2 = _line("2 workers", two, busy2, own2, n)
        print(text, flush=True)
        same = (Path(tmp) / "one.csv").read_bytes() == (Path(tmp) / "two.csv").read_bytes()
    print(f"  load average after: {os.getloadavg()[0]:.2f}")
    harm = res1.column("harmonics")
    print(f"  speed-up {one / two:.2f}x with 2 workers; files identical: {same}; harmonics "
          f"per point {harm.mean():.0f} mean, {harm.max():.0f} max")
    if others1 is not None:
        quiet = max(others1, others2) < 0.1
        print(f"  other programs kept {others1:.2f} and {others2:.2f} cores busy during "
              f"the two runs: " + ("a quiet machine" if quiet else
                                   "a shared machine; the ratio of a quiet one needs "
                                   "both near 0"))
    if not same:
        raise SystemExit("the two runs differ")


if __name__ == "__main__":
    main()
