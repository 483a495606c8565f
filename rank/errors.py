
__all__ = ["InputError"]
"""The one exception the command line turns into a one-line message and exit status 2."""


class InputError(ValueError):
    """Bad input from the user: the message says what is wrong and how to fix it."""
