"""`probe solve --help` names every quantity a target may aim at (the
quantity registry's ``target`` flag), so a new user need not read the source."""
from click.testing import CliRunner

from probe.cli import cli
from probe.quantities import QUANTITIES


def test_solve_help_lists_the_target_quantities():
    text = " ".join(CliRunner().invoke(cli, ["solve", "--help"]).output.split())
    names = [q.name for q in QUANTITIES.values() if q.target]
    assert "up_rate" in names and "up_probability" in names
    for name in names:
        assert name in text, name
