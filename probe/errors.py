"""Error types shared by the library, the configuration reader and the CLI."""


class InputError(ValueError):
    """Bad input: names the offending key, the value given and what is allowed.

    The CLI turns this into a one-line message on stderr and exit status 2.
    """

    def __init__(self, key: str, message: str):
        self.key = key
        self.message = message
        super().__init__(f"{key}: {message}")


class ModelError(ValueError):
    """The requested quantity does not exist in the model (for example a
    divergent rate); carries a key naming the input that causes it."""

    def __init__(self, key: str, message: str):
        self.key = key
        self.message = message
        super().__init__(f"{key}: {message}")
