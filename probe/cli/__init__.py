"""The command line: ``probe rates | transit | passage | sweep | compare | threshold | solve``.

``app`` holds the click group; each command module registers its commands on
it when imported; ``common`` holds what every command shares (the one-line
refusal with exit status 2, number formatting, atomic writes).
"""
from probe.cli.app import cli, main
from probe.cli import rates as _rates  # noqa: F401  (registers ``rates``)
from probe.cli import transit as _transit  # noqa: F401  (registers ``transit``)
from probe.cli import design as _design  # noqa: F401  (sweep, compare, threshold, solve)
from probe.cli import passage as _passage  # noqa: F401  (registers ``passage``)
from probe.cli.common import EXIT_INPUT, ProbeError, write_atomic

__all__ = ["cli", "main", "EXIT_INPUT", "ProbeError", "write_atomic"]
