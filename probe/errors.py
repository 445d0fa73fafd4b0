"""Error types shared by the library, the configuration reader and the CLI.

A message quotes the value it refuses; a quoted text longer than
``MAX_QUOTED`` characters (a 100 MB species string, say) is shortened to its
first characters and "...", so that every message stays one readable line.
"""
import re

#: longest quoted text kept whole in a message
MAX_QUOTED = 80

# a quoted run ('...' or "...") longer than MAX_QUOTED, quotes included; the
# quotes stand apart from words (an apostrophe, as in "transit's", opens none)
_LONG_QUOTE = re.compile(r"(?<!\w)'[^'\n]{%d,}'(?!\w)|(?<!\w)\"[^\"\n]{%d,}\"(?!\w)"
                         % (MAX_QUOTED - 1, MAX_QUOTED - 1))


def shown(value, limit=MAX_QUOTED):
    """``repr(value)`` for a message, shortened to ``limit`` characters
    (ending in "..." and, for a string, its closing quote)."""
    text = repr(value)
    if len(text) <= limit:
        return text
    quote = text[-1] if text[:1] in "'\"" and text[-1:] == text[:1] else ""
    return text[:limit - 3 - len(quote)] + "..." + quote


def _capped(message):
    """``message`` with every quoted run longer than MAX_QUOTED shortened."""
    message = str(message)
    if len(message) <= MAX_QUOTED:
        return message
    return _LONG_QUOTE.sub(lambda m: m.group(0)[:MAX_QUOTED - 4] + "..." + m.group(0)[-1],
                           message)


class InputError(ValueError):
    """Bad input: names the offending key, the value given and what is allowed.

    The CLI turns this into a one-line message on stderr and exit status 2.
    """

    def __init__(self, key: str, message: str):
        self.key = key
        self.message = _capped(message)
        super().__init__(f"{key}: {self.message}")


class ModelError(ValueError):
    """The requested quantity does not exist in the model (for example a
    divergent rate); carries a key naming the input that causes it."""

    def __init__(self, key: str, message: str):
        self.key = key
        self.message = _capped(message)
        super().__init__(f"{key}: {self.message}")
