"""Error types that tell a mistake in the user's input from a fault inside the tool, and Ctrl-C.

Nothing is imported here, so the command line can install :func:`quit_on_interrupt`
before anything else is loaded.
"""

from __future__ import annotations

__all__ = ["UserInputError", "INTERRUPTED_STATUS", "quit_on_interrupt"]

#: Exit status after Ctrl-C: 128 + SIGINT (2), as a shell reports a process that SIGINT ended.
INTERRUPTED_STATUS = 130


def quit_on_interrupt(signum=None, frame=None) -> None:
    """SIGINT handler for the command line while nothing is being written (start-up, parsing,
    after the work): one line on stderr and exit status 130 at once, without a traceback."""
    import os

    os.write(2, b"orbitalrender: interrupted\n")
    os._exit(INTERRUPTED_STATUS)


class UserInputError(ValueError):
    """The input (a STATE, an option, a file or a config value) cannot be used.

    The message is one line that says what was wrong and what was expected; the
    command line prints it and exits with status 2.
    """
