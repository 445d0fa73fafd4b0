"""What a new user reads: the statements of ``probe compare``, warnings about
keys that a scenario does not use, the units of printed numbers, the hints of
error messages for common slips, the warning on rate x time for a straight
crossing, and the labels and notes of the tables.

Each check compares a printed sentence with something computed apart from
it: the comparison's own table, the value given in the file, the closed
relation between the quantities (up probability = emitted + absorbed phonons
for a ground-state start, first order), or a finite transit computed by the
transit engine.
"""
import json
import os
import re
from pathlib import Path

import numpy as np
import pytest
from click.testing import CliRunner

from probe.cli import cli

ROOT = Path(__file__).resolve().parents[1]
EXAMPLES = ROOT / "examples"


def run(args, folder=None):
    old = os.getcwd()
    if folder is not None:
        os.chdir(folder)
    try:
        return CliRunner().invoke(cli, [str(a) for a in args])
    finally:
        os.chdir(old)


# ---------------------------------------------------------------------------
# 6. probe compare: the largest difference is the largest absolute difference
# ---------------------------------------------------------------------------
def test_compare_reports_the_largest_absolute_difference():
    """The statement's 'largest difference' is the largest |a - b| of the
    comparison's own table (not the first point where the ratio is
    infinite), and the points where one model vanishes are stated apart."""
    from probe.design.compare import compare

    cmp = compare(str(EXAMPLES / "box3d_supersonic.toml"),
                  vary=[("trajectory.speed", "0.5 c_s", "3 c_s", 41)], models=["dispersion"])
    a, b = cmp.column("up_rate:configured"), cmp.column("up_rate:phonon")
    speed = cmp.column("trajectory.speed") / cmp.column("sound_speed")
    i = int(np.argmax(np.abs(a - b)))
    text = next(s for s in cmp.statements if "up_rate differs" in s)
    m = re.search(r"largest difference ([0-9.e+-]+) 1/s at trajectory.speed = ([0-9.]+) c_s",
                  text)
    assert m, text
    assert float(m.group(1)) == pytest.approx(abs(a[i] - b[i]), rel=1e-3)
    assert float(m.group(2)) == pytest.approx(speed[i], abs=1e-3)
    # the first point where the configured rate is 0 and the phonon one is not
    # (1.0625 c_s) is not called the largest difference
    first_only = int(np.nonzero((a == 0) & (b > 0))[0][0])
    assert first_only != i
    assert any("nonzero at" in s and "where the configured model's vanishes" in s
               for s in cmp.statements)
    # the ratio is quoted only where both are nonzero
    both = (a > 0) & (b > 0)
    j = int(np.argmax(np.where(both, np.maximum(a / np.where(both, b, 1),
                                                b / np.where(both, a, 1)), -1)))
    m = re.search(r"largest ratio is phonon/configured = ([0-9.e+-]+)", text)
    assert m and float(m.group(1)) == pytest.approx(b[j] / a[j], rel=1e-2)
