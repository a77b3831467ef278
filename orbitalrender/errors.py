"""Error types that tell a mistake in the user's input from a fault inside the tool."""

from __future__ import annotations

__all__ = ["UserInputError"]


class UserInputError(ValueError):
    """The input (a STATE, an option, a file or a config value) cannot be used.

    The message is one line that says what was wrong and what was expected; the
    command line prints it and exits with status 2.
    """
