"""``python -m orbitalrender`` runs the command line; Ctrl-C at any point exits quietly with 130."""

import signal

from .errors import quit_on_interrupt

signal.signal(signal.SIGINT, quit_on_interrupt)  # before anything heavy is imported

import sys  # noqa: E402

try:
    from .cli import main

    status = main()
except KeyboardInterrupt:  # one that escaped the command line's own handling: still one line, 130
    quit_on_interrupt()
sys.exit(status)
