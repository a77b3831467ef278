"""``python -m orbitalrender`` runs the command line; Ctrl-C at any point exits quietly with 130."""

import signal

from .errors import quit_on_interrupt

signal.signal(signal.SIGINT, quit_on_interrupt)  # before anything heavy is imported

import sys  # noqa: E402

from .cli import main  # noqa: E402

sys.exit(main())
