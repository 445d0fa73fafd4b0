"""Golden outputs: the table and JSON of every bundled example and of every
command the README shows, recorded before a refactoring and checked after it.

The recorded files live in ``tests/golden/``.  Text must match exactly once
the numbers are taken out; the numbers must agree to a relative 1e-9 (error
estimates, whose last digits depend on summation order, to 1e-6).  Lines that
depend on the machine or the clock (library versions, creation time, the
command line, absolute paths) are normalised.

Regenerate after an *intended* change of output with

    python tests/test_golden.py

and review the diff of ``tests/golden/`` before committing it.
"""
from __future__ import annotations

import json
import math
import os
import re
import shlex
import sys
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1]
GOLDEN = ROOT / "tests" / "golden"

EXAMPLES = ["box3d_supersonic", "cross3d_gaussian", "drag3d_density",
            "guide1d_linear", "ring2d_circular"]
TRANSITS = ["transits/stir2d_spline", "transits/shake3d_loop", "cross3d_gaussian"]

# name -> (command line, files it writes that are recorded)
CASES = {}
for _name in EXAMPLES:
    CASES[f"rates_{_name}"] = (f"rates examples/{_name}.toml", [])
    CASES[f"rates_{_name}_json"] = (f"rates examples/{_name}.toml --json", [])
for _name in TRANSITS:
    _short = _name.split("/")[-1]
    CASES[f"transit_{_short}"] = (f"transit examples/{_name}.toml", [])
    CASES[f"transit_{_short}_json"] = (f"transit examples/{_name}.toml --json", [])
CASES["transit_stir2d_spectrum"] = (
    "transit examples/transits/stir2d_spline.toml --spectrum {out}/spec.csv",
    ["spec.csv", "spec.directions.csv"])
CASES["readme_sweep_speed"] = (
    "sweep examples/box3d_supersonic.toml --vary trajectory.speed=0.5c_s:3c_s:51 "
    "--out {out}/speed.csv", ["speed.csv", "speed.json"])
CASES["readme_sweep_map"] = (
    "sweep examples/ring2d_circular.toml --vary trajectory.speed=0.2c_s:2c_s:30 "
    "--vary trajectory.radius=2um:50um:30 --log trajectory.radius --out {out}/map.csv",
    ["map.csv", "map.json"])
CASES["readme_compare"] = (
    "compare examples/box3d_supersonic.toml --vary trajectory.speed=0.5c_s:3c_s:41 "
    "--out {out}/compare.csv", ["compare.csv"])
CASES["readme_threshold"] = ("threshold examples/box3d_supersonic.toml "
                             "--out {out}/threshold.csv", ["threshold.csv"])
CASES["readme_solve"] = (
    "solve examples/box3d_supersonic.toml --for trajectory.speed --target 'up_rate=10 1/s'", [])
CASES["sweep_transit_gap"] = (
    "sweep examples/cross3d_gaussian.toml --vary probe.gap=100Hz:400Hz:4 --out {out}/tg.csv",
    ["tg.csv"])
CASES["sweep_density_drag"] = (
    "sweep examples/drag3d_density.toml --vary trajectory.speed=0.5c_s:2c_s:7 --out {out}/dd.csv",
    ["dd.csv"])
CASES["compare_ring"] = (
    "compare examples/ring2d_circular.toml --vary trajectory.speed=0.4c_s:1.6c_s:7", [])

_VOLATILE_JSON = {"libraries", "platform", "created", "command", "version", "seconds"}
_NUMBER = re.compile(r"[-+]?(?:\d+\.\d*|\.\d+|\d+)(?:[eE][-+]?\d+)?")


def _scrub_json(obj):
    if isinstance(obj, dict):
        return {k: _scrub_json(v) for k, v in obj.items() if k not in _VOLATILE_JSON}
    if isinstance(obj, list):
        return [_scrub_json(v) for v in obj]
    return obj


def _normalise(text, out):
    text = text.replace(str(out), "<OUT>").replace(str(ROOT), "<ROOT>")
    try:
        data = json.loads(text)
    except ValueError:
        return "\n".join(line for line in text.splitlines()
                         if "elapsed" not in line and "took " not in line)
    return json.dumps(_scrub_json(data), indent=1, sort_keys=True)


def run_case(name, out):
    from click.testing import CliRunner
    from probe.cli import cli
    command, files = CASES[name]
    args = shlex.split(command.format(out=out))
    old = os.getcwd()
    os.chdir(ROOT)
    try:
        res = CliRunner().invoke(cli, args, catch_exceptions=False)
    finally:
        os.chdir(old)
    parts = [f"$ probe {command}", f"exit {res.exit_code}",
             _normalise(res.output, out)]
    for f in files:
        parts.append(f"--- {f}")
        parts.append(_normalise((Path(out) / f).read_text(encoding="utf-8"), out))
    return "\n".join(parts) + "\n"


def _split(text):
    nums = [float(m) for m in _NUMBER.findall(text)]
    return _NUMBER.sub("#", text), nums


def compare(expected, actual):
    """None if the outputs agree, else a description of the first difference."""
    e_lines, a_lines = expected.splitlines(), actual.splitlines()
    if len(e_lines) != len(a_lines):
        return f"{len(a_lines)} lines, recorded {len(e_lines)}"
    for i, (e, a) in enumerate(zip(e_lines, a_lines)):
        e_shape, e_nums = _split(e)
        a_shape, a_nums = _split(a)
        if e_shape != a_shape or len(e_nums) != len(a_nums):
            return f"line {i + 1}:\n  recorded {e!r}\n  now      {a!r}"
        rtol = 1e-6 if ("error" in e or "+/-" in e or "achieved" in e) else 1e-9
        for x, y in zip(e_nums, a_nums):
            if not math.isclose(x, y, rel_tol=rtol, abs_tol=1e-300):
                return f"line {i + 1}: {y!r} against recorded {x!r}:\n  {a}"
    return None


@pytest.mark.parametrize("name", sorted(CASES))
def test_golden_output(name, tmp_path):
    recorded = (GOLDEN / f"{name}.txt").read_text(encoding="utf-8")
    diff = compare(recorded, run_case(name, tmp_path))
    assert diff is None, f"{name}: {diff}"


if __name__ == "__main__":  # regenerate the recorded outputs
    import tempfile
    GOLDEN.mkdir(exist_ok=True)
    for name in sorted(CASES) if len(sys.argv) < 2 else sys.argv[1:]:
        with tempfile.TemporaryDirectory() as tmp:
            (GOLDEN / f"{name}.txt").write_text(run_case(name, tmp), encoding="utf-8")
        print("recorded", name)
