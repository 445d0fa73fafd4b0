"""The command line: ``probe rates | transit | passage | sweep | compare | threshold | solve``.

``app`` holds the click group, which imports a command's module when the
command runs (``app.COMMANDS``: command -> module); each command module
registers its commands on it when imported; ``common`` holds what every
command shares (the one-line refusal with exit status 2, number formatting,
atomic writes), imported here on first use.
"""
from importlib import import_module

from probe.cli.app import cli, main

_LAZY = {"EXIT_INPUT": "probe.cli.common", "ProbeError": "probe.cli.common",
         "write_atomic": "probe.cli.common"}

__all__ = ["cli", "main", *_LAZY]


def __getattr__(name):
    if name in _LAZY:
        return getattr(import_module(_LAZY[name]), name)
    raise AttributeError(f"module {__name__!r} has no attribute {name!r}")
