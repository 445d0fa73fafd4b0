"""Usage errors of the command line as one-line refusals.

Every usage error (a missing option or argument, a value of the wrong
type, an unknown option or command, an option without its value) ends,
like every other refusal, with one line ``error: <option>: <message>`` and
exit status 2 instead of click's usage block.  ``OneLineUsage`` is mixed
into the ``probe`` group (``probe.cli.app``)."""
from __future__ import annotations

import click
from click import exceptions as cx

_NO_SUCH_COMMAND = getattr(cx, "NoSuchCommand", ())


def _first_long(opts):
    longs = [o for o in opts if o.startswith("--")]
    return longs[0] if longs else opts[0]


def _param_key(param):
    """The name a refusal gives a parameter: its long option, or its
    argument's metavar (``CONFIG``)."""
    if isinstance(param, click.Option):
        return _first_long(param.opts)
    metavar = param.metavar or param.name.upper()
    return metavar.split()[0]


def _sentence(text):
    text = (text or "").strip().rstrip(".").replace(". Did you mean", "; did you mean")
    return text[:1].lower() + text[1:]


def _help_hint(exc, command=None):
    """Where to read more: ``probe [COMMAND] --help`` (named ``probe``
    whatever name the group was run under)."""
    ctx = getattr(exc, "ctx", None)
    words = ctx.command_path.split()[1:] if ctx is not None else \
        ([command] if command else [])
    return f"see '{' '.join(['probe', *words])} --help'"


def _nearest_command(exc):
    """'; did you mean ...?' for a mistyped command, from every command of
    the group (imported or not)."""
    from difflib import get_close_matches

    ctx, name = getattr(exc, "ctx", None), getattr(exc, "command_name", None)
    if ctx is None or not name:
        return ""
    near = get_close_matches(name, ctx.command.list_commands(ctx))
    return f"; did you mean {', '.join(repr(n) for n in near)}?" if near else ""


def usage_line(exc, command=None):
    """``(key, message)`` of a click usage error (``command``: the
    subcommand being parsed, when the error does not say)."""
    hint = _help_hint(exc, command)
    if isinstance(exc, cx.MissingParameter) and exc.param is not None:
        key = _param_key(exc.param)
        if isinstance(exc.param, click.Option):
            metavar = exc.param.metavar or exc.param.make_metavar(exc.ctx)
            return key, f"missing; give {key} {metavar} ({hint})"
        return key, f"missing; give {exc.param.metavar or key} ({hint})"
    if isinstance(exc, cx.NoSuchOption):
        near = sorted(exc.possibilities or ())
        guess = f"; did you mean {', '.join(near)}?" if near else ""
        return exc.option_name, f"no such option{guess} ({hint})"
    if isinstance(exc, cx.BadOptionUsage):
        text = exc.message.replace(f"Option '{exc.option_name}' ", "")
        return exc.option_name, f"{_sentence(text)} ({hint})"
    if isinstance(exc, cx.BadParameter) and exc.param is not None:
        return _param_key(exc.param), f"{_sentence(exc.message)} ({hint})"
    if isinstance(exc, _NO_SUCH_COMMAND) or "No such command" in exc.message:
        return "COMMAND", f"{_sentence(exc.message)}{_nearest_command(exc)} " \
                          "(see 'probe --help')"
    return "arguments", f"{_sentence(exc.format_message())} ({hint})"


def _one_line(exc, command=None):
    """A click usage error as the one-line refusal (exit status 2)."""
    from probe.cli.common import refusal

    return refusal(*usage_line(exc, command))


class OneLineUsage:
    """Mixed into a click group: its usage errors, and those of its
    commands, become one-line refusals (``probe`` alone still prints the
    help)."""

    def make_context(self, info_name, args, parent=None, **extra):
        try:
            return super().make_context(info_name, args, parent=parent, **extra)
        except cx.NoArgsIsHelpError:
            raise
        except cx.UsageError as exc:
            raise _one_line(exc) from None

    def invoke(self, ctx):
        try:
            return super().invoke(ctx)
        except cx.NoArgsIsHelpError:
            raise
        except cx.UsageError as exc:
            raise _one_line(exc, ctx.invoked_subcommand) from None
