"""The ``probe`` command group; each command module registers itself on it.

The group imports a command's module only when that command runs (or its
``--help`` is asked for): ``probe --help`` lists every command from the
static table ``COMMANDS``, so that it needs neither numpy nor the engines.
A new command is one entry in ``COMMANDS`` beside its module;
``tests/test_startup.py`` checks the table against the commands themselves.
"""
from __future__ import annotations

from importlib import import_module

import click

from probe.cli.usage import OneLineUsage

#: command -> (module that defines it, the first paragraph of its help, from
#: which ``probe --help`` takes the line it prints)
COMMANDS = {
    "compare": ("probe.cli.design",
                "Evaluate the same grid for several detector-response models and "
                "state where they differ."),
    "passage": ("probe.cli.passage",
                "The passage through a cloud (a harmonic trap, or the box of "
                "condensate.size): local-density rates along the path and the rate "
                "equation of the populations."),
    "rates": ("probe.cli.rates",
              "Stationary up/down (or emission) rates for each scenario file CONFIG."),
    "solve": ("probe.cli.design",
              "Find the value of KEY at which a result reaches a target (scan for a "
              "bracket, then Brent's method)."),
    "sweep": ("probe.cli.design",
              "Rates (probabilities for a switched transit) on a 1D or 2D grid over "
              "numeric configuration keys, written to a CSV whose header names every "
              "column with its unit."),
    "threshold": ("probe.cli.design",
                  "Up-transition threshold speed of straight motion versus the gap, "
                  "with the sound speed."),
    "transit": ("probe.cli.transit",
                "First-order transition probabilities of finite transits: a spline "
                "path through waypoints, or a linear or circular path with a "
                "switching function."),
}


class LazyGroup(OneLineUsage, click.Group):
    """A click group whose commands are imported on demand from ``COMMANDS``
    (the module registers its commands on the group when imported)."""

    def list_commands(self, ctx):
        return sorted(set(self.commands) | set(COMMANDS))

    def get_command(self, ctx, cmd_name):
        if cmd_name not in self.commands and cmd_name in COMMANDS:
            import_module(COMMANDS[cmd_name][0])
        return self.commands.get(cmd_name)

    def format_commands(self, ctx, formatter):
        """The list of commands, as click prints it, with the help of the
        commands not imported yet read from ``COMMANDS``."""
        names = self.list_commands(ctx)
        if not names:
            return
        limit = formatter.width - 6 - max(len(name) for name in names)
        rows = []
        for name in names:
            command = self.commands.get(name)
            if command is None:      # not imported: a command built from its help alone
                command = click.Command(name, help=COMMANDS[name][1])
            if not command.hidden:
                rows.append((name, command.get_short_help_str(limit)))
        with formatter.section("Commands"):
            formatter.write_dl(rows)


def _print_version(ctx, _param, value):
    if not value or ctx.resilient_parsing:
        return
    from probe import __version__
    click.echo(f"probe, version {__version__}")
    ctx.exit()


# ---------------------------------------------------------------------------
@click.group(cls=LazyGroup, context_settings={"help_option_names": ["-h", "--help"]})
@click.option("--version", is_flag=True, expose_value=False, is_eager=True,
              callback=_print_version, help="Show the version and exit.")
def cli():
    """Golden-rule transition rates of a probe moving through a
    Bose-Einstein condensate."""


def main(argv=None):
    """Console entry point of ``probe``."""
    return cli.main(args=argv, prog_name="probe")
