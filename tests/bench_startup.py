"""Benchmark of the command line's start-up time (run by hand; not collected by pytest).

    python tests/bench_startup.py [--repeats 9] [--previous REV]

Wall time of three commands, each a fresh Python process, measured in one
run, the median of ``--repeats`` runs each after one untimed run (warm file
cache; the cache folder filled: unit registry, strings read, CODATA
constants, isotope masses; compiled bytecode written, as on a user's
machine, even where ``PYTHONDONTWRITEBYTECODE`` is set):

1. ``python -c pass`` (the interpreter alone: the floor);
2. ``probe --help``;
3. ``probe rates examples/box3d_supersonic.toml --json``.

Each command is timed for this tree and for the tree of the previous
release (``--previous``, default ``PREVIOUS``: the commit before the
start-up work), checked out by ``git worktree`` into a temporary folder
(nothing is installed: the commands run with ``PYTHONPATH`` set to the tree
and the tree as working directory), alternating the two trees run by run so
that a change of the machine's load falls on both.  The installed ``probe``
script of this tree is timed beside them, and the rates themselves
(``rates_from_config`` of the example in a warm process).  Beside the wall
time each row gives the CPU time (user + system) of the process, which a
busy machine inflates less.
"""
from __future__ import annotations

import argparse
import os
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]

#: the last commit before the start-up work (lazy imports, cached registry)
PREVIOUS = "62f9e593e42028f304a734b24047cca9bc2e6240"

EXAMPLE = "examples/box3d_supersonic.toml"
LAUNCH = "import sys; from probe.cli import main; sys.exit(main())"
COMMANDS = {
    "python -c pass": ["-c", "pass"],
    "probe --help": ["-c", LAUNCH, "--help"],
    f"probe rates {EXAMPLE} --json": ["-c", LAUNCH, "rates", EXAMPLE, "--json"],
}


def checkout(rev):
    """A worktree of ``rev`` in the temporary folder (made once, reused)."""
    sha = subprocess.run(["git", "-C", str(ROOT), "rev-parse", rev], check=True,
                         capture_output=True, text=True).stdout.strip()
    path = Path(tempfile.gettempdir()) / f"condensate-probe-startup-{sha[:12]}"
    if not (path / "probe" / "__init__.py").exists():
        subprocess.run(["git", "-C", str(ROOT), "worktree", "add", "--detach", str(path), sha],
                       check=True, capture_output=True)
    return path, sha


def run(argv, tree):
    """(wall seconds, CPU seconds: user + system) of one process running
    ``argv`` in ``tree``."""
    env = dict(os.environ, PYTHONPATH=str(tree))
    env.pop("PYTHONDONTWRITEBYTECODE", None)    # bytecode kept, as on a user's machine
    start = time.perf_counter()
    child = subprocess.Popen(argv, cwd=tree, env=env, stdout=subprocess.DEVNULL,
                             stderr=subprocess.PIPE)
    err = child.stderr.read()
    _, status, usage = os.wait4(child.pid, 0)
    child.returncode = os.waitstatus_to_exitcode(status)
    elapsed = time.perf_counter() - start
    if child.returncode != 0:
        raise SystemExit(f"{' '.join(argv)} in {tree} failed:\n{err.decode()}")
    return elapsed, usage.ru_utime + usage.ru_stime


def median_times(argv_of, trees, repeats):
    """{tree name: (median wall seconds, median CPU seconds)}: one untimed
    run each, then ``repeats`` rounds, each running every tree once."""
    for name, tree in trees.items():
        run(argv_of(name), tree)
    times = {name: [] for name in trees}
    for _ in range(repeats):
        for name, tree in trees.items():
            times[name].append(run(argv_of(name), tree))
    return {name: tuple(statistics.median(v) for v in zip(*values))
            for name, values in times.items()}


RATES_ALONE = """
import statistics, sys, time
from probe import rates_from_config
rates_from_config(sys.argv[1])
times = []
for _ in range(int(sys.argv[2])):
    start = time.perf_counter()
    rates_from_config(sys.argv[1])
    times.append(time.perf_counter() - start)
print(statistics.median(times))
"""


def rates_alone(repeats=30):
    """Median seconds of ``rates_from_config(example)`` in a warm process
    (reading the file, units, building the scenario, the engine)."""
    env = dict(os.environ, PYTHONPATH=str(ROOT))
    env.pop("PYTHONDONTWRITEBYTECODE", None)
    out = subprocess.run([sys.executable, "-c", RATES_ALONE, EXAMPLE, str(repeats)],
                         cwd=ROOT, env=env, check=True, capture_output=True, text=True)
    return float(out.stdout.strip())


def main():
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument("--repeats", type=int, default=9)
    parser.add_argument("--previous", default=PREVIOUS)
    args = parser.parse_args()
    previous, sha = checkout(args.previous)
    trees = {"now": ROOT, "previous": previous}
    script = Path(sys.executable).with_name("probe")
    print(f"{os.cpu_count()} cores; median of {args.repeats} runs each; previous release: "
          f"{sha[:12]} ({previous}); load average {os.getloadavg()[0]:.2f}")
    print("compiled bytecode kept between runs (PYTHONDONTWRITEBYTECODE unset in the "
          "children, as on a user's machine: the untimed first run writes it)")
    print(f"{'command':<50} {'now':>8} {'previous':>9} {'ratio':>6}   "
          f"{'CPU now':>8} {'previous':>9} {'ratio':>6}")
    for label, tail in COMMANDS.items():
        medians = median_times(lambda _name, tail=tail: [sys.executable, *tail],
                               trees, args.repeats)
        (wall, cpu), (wall0, cpu0) = medians["now"], medians["previous"]
        print(f"{label:<50} {wall:7.3f}s {wall0:8.3f}s {wall0 / wall:5.1f}x   "
              f"{cpu:7.3f}s {cpu0:8.3f}s {cpu0 / cpu:5.1f}x")
    if script.exists():
        wall, cpu = median_times(lambda _name: [str(script), "rates", EXAMPLE, "--json"],
                                 {"now": ROOT}, args.repeats)["now"]
        print(f"{'installed script: probe rates ... --json':<50} {wall:7.3f}s {'':>16}"
              f"{cpu:7.3f}s")
    print(f"{'the rates alone (rates_from_config, warm process)':<52} "
          f"{rates_alone() * 1e3:7.1f}ms")
    print(f"load average after: {os.getloadavg()[0]:.2f}")


if __name__ == "__main__":
    main()
