"""``python -m orbitalrender`` runs the command line; Ctrl-C at any point exits quietly with 130.

A SIGINT that the process inherits ignored (a job started in the background of a script,
``orbitalrender ... &``, which the shell shields from the terminal's Ctrl-C) stays ignored,
as for the installed ``orbitalrender`` command.
"""

import signal

from .errors import quit_on_interrupt

if signal.getsignal(signal.SIGINT) is not signal.SIG_IGN:
    signal.signal(signal.SIGINT, quit_on_interrupt)  # before anything heavy is imported

import sys  # noqa: E402

try:
    from .cli import main

    status = main()
except KeyboardInterrupt:  # one that escaped the command line's own handling: still one line, 130
    quit_on_interrupt()
sys.exit(status)
