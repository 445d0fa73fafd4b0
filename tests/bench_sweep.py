"""Benchmark of the sweep machinery (run by hand, not collected by pytest):

    python tests/bench_sweep.py [N] [--repeat K] [--cli]

A N x N (default 200 x 200) map of the circular engine over speed (0.2 to
2 c_s) and radius (2 to 50 um, log-spaced) for the quasi-2D 23Na gas of
examples/ring2d_circular.toml (healing length 1.14 um), written to a CSV
exactly as `probe sweep ... --out` does, once with one worker and once with
`--workers 2`, K times (default 1), the two alternating.  Every run is a
fresh Python process (as every `probe sweep` is: the workers, forked from
it on Linux, or from a fork server elsewhere, start inside the timing), which imports the package and
computes a small warm-up sweep with one worker before the timed one; with
--cli every run is the command `probe sweep ... --out FILE [--workers 2]`
itself, its imports and planning included (its processes sampled every
20 ms).

Per run it prints the wall time, how busy the machine's cores were
meanwhile (/proc/stat) and how much of that was this sweep (its processes'
CPU time, /proc/PID/stat, split into the sweep's own process, the helper
processes below it (a fork server, if any) and the workers) and how
much other programs (on a virtual machine, the time its host kept the
cores, steal, counts as theirs and is shown apart: the same work then
takes a varying CPU time), with the load average, and how long the
processes waited for a core (/proc/PID/schedstat).  At the end: the median wall
times and their ratio, and, since other programs on a shared machine slow
the 2-worker run most, two estimates of a quiet machine's ratio: from the
wall times less the time the sweep's own process waited for a core (it
runs from the start to the end), and from CPU time: the 1-worker run's CPU time
over half the 2-worker run's (both cores working for the sweep until it
ends: what a quiet machine gives when neither process waits for the other),
and over its busiest chain of processes (the sweep's process, or the fork
server and a worker after it: a quiet machine's wall time cannot be shorter).
The files of all runs must be byte-identical.  Single-threaded numerics:
OMP_NUM_THREADS etc. are set to 1 before numpy loads.
"""
import os

for _v in ("OMP_NUM_THREADS", "OPENBLAS_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ.setdefault(_v, "1")

import hashlib  # noqa: E402
import json  # noqa: E402
import statistics  # noqa: E402
import subprocess  # noqa: E402
import sys  # noqa: E402
import tempfile  # noqa: E402
import time  # noqa: E402
from pathlib import Path  # noqa: E402

RING = str(Path(__file__).resolve().parent.parent / "examples" / "ring2d_circular.toml")


def _busy():
    """(busy, stolen) CPU seconds of the whole machine so far, from
    /proc/stat (None elsewhere): busy counts all processes and the time a
    virtual machine's host kept its cores (steal), so that compared with
    the wall time it shows how much of the cores others took during a
    run; stolen is that host's share alone."""
    try:
        with open("/proc/stat") as fh:
            fields = [int(x) for x in fh.readline().split()[1:]]
    except (OSError, ValueError):
        return None
    idle = fields[3] + (fields[4] if len(fields) > 4 else 0)
    tick = os.sysconf("SC_CLK_TCK")
    return (sum(fields[:8]) - idle) / tick, (fields[7] if len(fields) > 7 else 0) / tick


def _since(b0):
    """(busy, stolen) seconds since ``b0`` (:func:`_busy`), or (None, None)."""
    b1 = _busy()
    return (None, None) if b0 is None or b1 is None else (b1[0] - b0[0], b1[1] - b0[1])


def _stat(pid):
    """(parent, CPU seconds of the process, seconds its main thread waited
    for a core, forkserver?) from /proc; None when it is gone."""
    try:
        with open(f"/proc/{pid}/stat") as fh:
            stat = fh.read()
        with open(f"/proc/{pid}/schedstat") as fh:
            wait = int(fh.read().split()[1]) * 1e-9
        with open(f"/proc/{pid}/cmdline", "rb") as fh:
            server = b"multiprocessing" in fh.read()   # a fork server, a resource tracker
    except (OSError, ValueError, IndexError):
        return None
    f = stat[stat.rindex(")") + 2:].split()
    return int(f[1]), (int(f[11]) + int(f[12])) / os.sysconf("SC_CLK_TCK"), wait, server


def _tree(root=None):
    """{pid: (kind, CPU seconds, seconds waiting for a core, lane)} of this
    process or ``root`` (kind 0, lane 0) and every process below it (kind 1:
    a fork server or resource tracker; 2: a worker, forked by this process
    or by the fork server; lane 1: all of them), from /proc; {} elsewhere."""
    try:
        names = [int(e) for e in os.listdir("/proc") if e.isdigit()]
    except OSError:
        return {}
    stats = {p: st for p in names if (st := _stat(p)) is not None}
    root = os.getpid() if root is None else root
    depth, frontier, level = {root: 0}, {root}, 0
    while frontier:
        level += 1
        frontier = {p for p, st in stats.items() if st[0] in frontier} - set(depth)
        depth.update((p, level) for p in frontier)
    return {p: (0 if d == 0 else (1 if stats[p][3] else 2), stats[p][1], stats[p][2],
                0 if d == 0 else 1)
            for p, d in depth.items() if p in stats}


class _Own:
    """The CPU seconds of this sweep's processes, and the time they waited
    for a core: sampled as its rows come in (a worker's last sample is
    taken after its last task).  /proc is scanned for new processes at most
    every 0.2 s (a scan takes milliseconds); the processes known are read
    at every sample."""

    def __init__(self, root=None):
        self.root = root
        self.start = _tree(root) if root is None else {}
        self.last = dict(self.start)
        self.scanned = time.perf_counter()

    def __call__(self, n=None):
        if time.perf_counter() - self.scanned > 0.2:
            self.last.update(_tree(self.root))
            self.scanned = time.perf_counter()
            return
        for p, v in list(self.last.items()):
            st = _stat(p)
            if st is not None:
                self.last[p] = (v[0], st[1], st[2], v[3])

    def _since(self, p, k):
        v = self.last[p]
        return v[k] - self.start[p][k] if p in self.start else v[k]

    def split(self):
        """CPU seconds of (this process, fork server and helpers, workers)
        since the start; the busiest worker's; the seconds each lane (this
        process; the fork server and the workers) waited for a core."""
        if self.root is None:
            self.last.update(_tree())
        out, waits = [0.0, 0.0, 0.0], [0.0, 0.0]
        for p, v in self.last.items():
            out[min(v[0], 2)] += self._since(p, 1)
            if v[3] is not None:
                waits[v[3]] += self._since(p, 2)
        worker = max((self._since(p, 1) for p, v in self.last.items() if v[0] >= 2),
                     default=0.0)
        return out, worker, waits


def _one(n, workers, out):
    """One timed run in this process (after a warm-up): a JSON line."""
    from probe.design.sweep import sweep

    sweep(RING, [("trajectory.speed", "0.5 c_s", "1 c_s", 2)])       # warm-up
    vary = [("trajectory.speed", "0.2 c_s", "2 c_s", n),
            ("trajectory.radius", "2 um", "50 um", n)]
    own = _Own()
    load, b0, t0 = os.getloadavg()[0], _busy(), time.perf_counter()
    res = sweep(RING, vary, log=("trajectory.radius",), out=out, workers=workers,
                progress=own)
    wall = time.perf_counter() - t0
    busy, stolen = _since(b0)
    split, worker, waits = own.split()
    harm = res.column("harmonics")
    print(json.dumps({"wall": wall, "busy": busy, "stolen": stolen, "split": split,
                      "worker": worker,
                      "waits": waits,
                      "load": [load, os.getloadavg()[0]],
                      "sha": hashlib.sha256(Path(out).read_bytes()).hexdigest(),
                      "harmonics": [float(harm.mean()), float(harm.max())]}))


def _run(n, workers, out, cli=False):
    if cli:
        return _run_cli(n, workers, out)
    done = subprocess.run([sys.executable, __file__, "--one", str(n), str(workers), str(out)],
                          capture_output=True, text=True, check=True)
    return json.loads(done.stdout.strip().splitlines()[-1])


def _run_cli(n, workers, out):
    """One run of the command `probe sweep` (a fresh process: its imports
    and planning in the timing), its processes sampled every 20 ms."""
    cmd = [sys.executable, "-c", "import sys; from probe.cli import main; sys.exit(main())",
           "sweep", RING, "--vary", f"trajectory.speed=0.2c_s:2c_s:{n}",
           "--vary", f"trajectory.radius=2um:50um:{n}", "--log", "trajectory.radius",
           "--out", str(out), "--workers", str(workers)]
    load, b0, t0 = os.getloadavg()[0], _busy(), time.perf_counter()
    proc = subprocess.Popen(cmd, stdout=subprocess.DEVNULL, stderr=subprocess.PIPE)
    own = _Own(proc.pid)
    while proc.poll() is None:
        own()
        time.sleep(0.02)
    wall = time.perf_counter() - t0
    busy, stolen = _since(b0)
    if proc.returncode != 0:
        raise SystemExit(proc.stderr.read().decode())
    split, worker, waits = own.split()
    return {"wall": wall, "busy": busy, "stolen": stolen, "split": split, "worker": worker,
            "waits": waits,
            "load": [load, os.getloadavg()[0]],
            "sha": hashlib.sha256(Path(out).read_bytes()).hexdigest(), "harmonics": None}


def _quiet(r):
    """The run's wall time less the time the sweep's own process waited for
    a core (/proc/PID/schedstat): an estimate of a quiet machine's wall time
    (its time computing, and waiting for the workers, is kept; being
    preempted by other programs is removed).  That process runs from the
    start to the end; under load, workers slowed more than it leave it more
    tasks, so the estimate errs on the long side."""
    return r["wall"] - r["waits"][0]


def _line(label, r, n):
    cores = os.cpu_count() or 1
    wall, own = r["wall"], sum(r["split"])
    text = (f"  {label}: {wall:6.2f} s wall ({wall / n**2 * 1e3:.2f} ms per point), "
            f"load {r['load'][0]:.2f} -> {r['load'][1]:.2f}; CPU of this sweep {own:.2f} s "
            f"(its process {r['split'][0]:.2f}, fork server {r['split'][1]:.2f}, "
            f"workers {r['split'][2]:.2f}); waited for a core {r['waits'][0]:.2f} s"
            + (f" (fork server and workers {r['waits'][1]:.2f} s)" if len(r["split"]) and
               sum(r["split"][1:]) > 0 else "") +
            f"; without the waits {_quiet(r):.2f} s")
    if r["busy"] is not None:
        others = max(0.0, r["busy"] - own)
        text += (f"; cores busy {100 * r['busy'] / (cores * wall):.0f} % of {cores}, "
                 f"other programs {others / wall:.2f} cores on average"
                 + (f" (of which the host's steal {r['stolen'] / wall:.2f})"
                    if r.get("stolen") else ""))
    return text


def _others(r):
    return None if r["busy"] is None else max(0.0, r["busy"] - sum(r["split"])) / r["wall"]


def _summary(ones, twos):
    med = statistics.median
    w1, w2 = med(r["wall"] for r in ones), med(r["wall"] for r in twos)
    q1, q2 = med(map(_quiet, ones)), med(map(_quiet, twos))
    c1 = med(sum(r["split"]) for r in ones)
    half = med(sum(r["split"]) / 2 for r in twos)
    chain = med(max(r["split"][0], r["split"][1] + r["worker"]) for r in twos)
    print(f"median wall: 1 worker {w1:.2f} s, 2 workers {w2:.2f} s: {w1 / w2:.2f}x")
    print(f"median wall less the waits for a core: 1 worker {q1:.2f} s, 2 workers "
          f"{q2:.2f} s: {q1 / q2:.2f}x")
    print(f"from CPU time: 1 worker {c1:.2f} s; 2 workers {2 * half:.2f} s in all, "
          f"{c1 / half:.2f}x with both cores working for the sweep to its end, "
          f"{c1 / chain:.2f}x by its busiest chain of processes ({chain:.2f} s)")
    others = [x for x in map(_others, ones + twos) if x is not None]
    if others:
        quiet = max(others) < 0.1
        steal = max((r.get("stolen") or 0.0) / r["wall"] for r in ones + twos)
        print(f"other programs kept {min(others):.2f} to {max(others):.2f} cores busy during "
              "the runs" + (f" (the host's steal up to {steal:.2f})" if steal else "") + ": "
              + ("a quiet machine" if quiet else
                 "a shared machine; the wall-clock ratio of a quiet one needs "
                 "all near 0 (the other ratios estimate it)"))


def main():
    args = sys.argv[1:]
    if args and args[0] == "--one":
        return _one(int(args[1]), int(args[2]), args[3])
    repeat, cli = 1, "--cli" in args
    args = [a for a in args if a != "--cli"]
    if "--repeat" in args:
        k = args.index("--repeat")
        repeat, args = int(args[k + 1]), args[:k] + args[k + 2:]
    n = int(args[0]) if args else 200
    print(f"{n} x {n} = {n * n} points, circular engine, 2D gas (ring2d_circular.toml), "
          f"speed 0.2..2 c_s, radius 2..50 um (log); {os.cpu_count()} CPUs; "
          f"load average before: {os.getloadavg()[0]:.2f}")
    ones, twos, shas = [], [], set()
    with tempfile.TemporaryDirectory() as tmp:
        for k in range(repeat):
            for workers in ((1, 2) if k % 2 == 0 else (2, 1)):
                r = _run(n, workers, Path(tmp) / f"w{workers}_{k}.csv", cli)
                (ones if workers == 1 else twos).append(r)
                shas.add(r["sha"])
                print(_line(f"{workers} worker{'s' if workers > 1 else ' '}", r, n),
                      flush=True)
    harm = ones[0]["harmonics"]
    print(f"files identical: {len(shas) == 1}" + ("" if harm is None else
          f"; harmonics per point {harm[0]:.0f} mean, {harm[1]:.0f} max"))
    _summary(ones, twos)
    if len(shas) != 1:
        raise SystemExit("the runs' files differ")


if __name__ == "__main__":
    main()
