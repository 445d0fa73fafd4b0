"""The ``probe`` command group; each command module registers itself on it."""
from __future__ import annotations

import click

from probe import __version__


# ---------------------------------------------------------------------------
@click.group(context_settings={"help_option_names": ["-h", "--help"]})
@click.version_option(__version__, "--version", prog_name="probe")
def cli():
    """Golden-rule transition rates of a probe moving through a
    Bose-Einstein condensate."""


def main(argv=None):
    """Console entry point of ``probe``."""
    return cli.main(args=argv, prog_name="probe")
