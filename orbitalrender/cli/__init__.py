"""Command line entry point: parses the subcommand and turns errors into exit statuses.

Exit status 0 on success, 2 for a mistake in the user's input (one line on
stderr), 1 for a fault inside the tool (a short message; ``--debug`` shows the
traceback) or when the system refuses, e.g. a full disk (one line), and 130
after Ctrl-C at any point (one line, no traceback).  A file that could not be
written completely is never left behind: outputs go through
:func:`orbitalrender.atomic.atomic_path`, and during the work Ctrl-C raises
KeyboardInterrupt so those files are cleaned up before the exit.

Building the parser loads no heavy library: the options come from the jobs'
definitions (:mod:`orbitalrender.jobs`), and each command imports what it uses
when it runs.
"""

from __future__ import annotations

import gc
import signal
import sys

from ..atomic import check_distinct_outputs, output_set
from ..errors import INTERRUPTED_STATUS, UserInputError, quit_on_interrupt

__all__ = ["main", "build_parser", "COMMANDS"]

#: Subcommand name -> module in this package that defines ``register(subparsers)``.
COMMANDS: dict[str, str] = {
    "describe": "describe",
    "section": "section",
    "radial": "radial",
    "figure": "figure",
    "mesh": "mesh",
    "cloud": "cloud",
    "gallery": "gallery",
}

_DASH_HINT = "a STATE that starts with '-' may also follow '--', e.g. -- -1*3dz2"


def _user_errors() -> tuple[type[BaseException], ...]:
    from ..lattice.memory import MemoryLimitError

    return (UserInputError, ValueError, MemoryLimitError, FileNotFoundError, PermissionError,
            IsADirectoryError, NotADirectoryError)


def build_parser():
    """The argparse parser of the whole command line (every subcommand registered)."""
    import argparse
    import importlib

    from .. import __version__

    class _Parser(argparse.ArgumentParser):
        def error(self, message: str):  # one line, exit status 2, as argparse does, with the program name
            if "STATE" in message:
                message += f" ({_DASH_HINT})"
            self.exit(2, f"{self.prog}: error: {message}\n")

    parser = _Parser(prog="orbitalrender",
                     description="Quantitative figures and printable meshes of hydrogen-like states.")
    parser.add_argument("--version", action="version", version=f"orbitalrender {__version__}")
    parser.add_argument("--debug", action="store_true", help="show the traceback of an internal fault")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND", parser_class=_Parser)
    sub.required = True
    for module in COMMANDS.values():
        importlib.import_module(f"{__name__}.{module}").register(sub)
    return parser


def _subparser(parser, name: str):
    import argparse

    for action in parser._actions:
        if isinstance(action, argparse._SubParsersAction):
            return action.choices.get(name)
    return None


def protect_leading_minus(parser, argv: list[str]) -> list[str]:
    """`argv` with each STATE that starts with '-' (``-1*3dz2``, ``-i*2pz``) kept a STATE.

    argparse takes any word that starts with '-' (other than a plain negative number)
    for an option.  Here a word that is not one of the command's options (nor a unique
    abbreviation of one) is marked as a positional (a leading space, which the STATE
    notation ignores), and the value of an option that takes one is joined to it
    (``--times -1,2`` -> ``--times=-1,2``).  Words after ``--`` are left alone.

    Examples
    --------
    >>> protect_leading_minus(build_parser(), ["radial", "1s", "-2s", "--fraction", "0.5"])
    ['radial', '1s', ' -2s', '--fraction', '0.5']
    >>> protect_leading_minus(build_parser(), ["figure", "--times", "-1,2", "1s+2s"])
    ['figure', '--times=-1,2', '1s+2s']
    """
    words = list(argv)
    start = next((i for i, w in enumerate(words) if not w.startswith("-")), None)
    sub = _subparser(parser, words[start]) if start is not None else None
    if sub is None:
        return words
    actions = {s: a for a in sub._actions for s in a.option_strings}
    out = words[:start + 1]
    rest = iter(words[start + 1:])
    for word in rest:
        if word == "--":
            out += [word, *rest]
            break
        if not word.startswith("-") or len(word) == 1:
            out.append(word)
            continue
        name = word.split("=", 1)[0]
        matches = [s for s in actions if s == name] or [s for s in actions
                                                         if name.startswith("--") and s.startswith(name)]
        if len(matches) != 1 and name.startswith("--"):
            out.append(word)  # unknown or ambiguous: argparse says so
            continue
        if not matches:
            out.append(" " + word)  # a STATE such as -1*3dz2
            continue
        action = actions[matches[0]]
        out.append(word)
        if "=" not in word and action.nargs is None and action.option_strings and _takes_value(action):
            value = next(rest, None)
            if value is None:
                break
            if value.startswith("-") and value != "-":
                out[-1] = f"{word}={value}"
            else:
                out.append(value)
    return out


def _takes_value(action) -> bool:
    import argparse

    return not isinstance(action, (argparse._StoreTrueAction, argparse._StoreFalseAction,
                                   argparse._HelpAction, argparse._VersionAction))


#: Set when SIGINT arrives during the work, so that an interrupt that a library turned into
#: another error (numba, for one, can) still ends the command as an interruption.
_interrupted = False


def _raise_interrupt(signum, frame):
    """SIGINT handler during the work: KeyboardInterrupt, so files in progress are removed."""
    global _interrupted
    _interrupted = True
    raise KeyboardInterrupt


def _keep_interrupt(unraisable) -> None:
    """``sys.unraisablehook`` during the work: a stop signal that Python could only report.

    SIGINT's handler raises KeyboardInterrupt (the gallery's SIGTERM handler its own
    exception, whose class names the signal in ``stop_signal``) in whatever Python code the
    main thread runs.  In a ctypes callback (numba's compiler cache calls one from llvmlite
    while it loads or saves a function) or a ``__del__`` that exception is printed as
    "Exception ignored" and dropped: the command would go on and exit 0.  The signal is
    sent again, by a helper thread, once the main thread has left this hook; other
    unraisable exceptions go to the default hook.
    """
    signum = _stop_signal(unraisable.exc_type)
    if signum is None:
        sys.__unraisablehook__(unraisable)
        return
    while True:
        try:
            _start_signalling_again(signum)
            return
        except BaseException as exc:  # the signal came again already, so it was dropped here too
            if _stop_signal(type(exc)) is None:
                raise


def _stop_signal(exc_type: type[BaseException]) -> int | None:
    """The signal whose handler raised an exception of `exc_type`, if it is a stop signal."""
    if issubclass(exc_type, KeyboardInterrupt):
        return signal.SIGINT
    return getattr(exc_type, "stop_signal", None)


def _start_signalling_again(signum: int) -> None:
    import threading

    threading.Thread(target=_signal_main_again, args=(threading.main_thread().ident, signum),
                     daemon=True).start()


#: How often the helper thread of :func:`_keep_interrupt` looks whether the main thread has
#: left the hook (s); the signal is sent again within about this time.
_RESEND_POLL_S = 0.005


def _signal_main_again(main_ident: int, signum: int) -> None:
    """Send `signum` again to the main thread as soon as it is out of the hook."""
    import time

    hook = _keep_interrupt.__code__
    while True:
        time.sleep(_RESEND_POLL_S)
        frame = sys._current_frames().get(main_ident)
        if frame is None:
            return  # the main thread has ended
        while frame is not None and frame.f_code is not hook:
            frame = frame.f_back
        if frame is None:
            signal.pthread_kill(main_ident, signum)  # to the main thread: also ends a sleep
            return


def _stop_interrupted() -> int:
    _on_sigint(quit_on_interrupt)
    print("orbitalrender: interrupted", file=sys.stderr)
    return INTERRUPTED_STATUS


def _on_sigint(handler):
    """Install `handler` for SIGINT; returns the previous one (None: left alone, because
    SIGINT is ignored, as the shell makes it for a job started in the background of a
    script, or this is not the main thread)."""
    try:
        if signal.getsignal(signal.SIGINT) is signal.SIG_IGN:
            return None
        return signal.signal(signal.SIGINT, handler)
    except ValueError:  # signals can only be set in the main thread
        return None


#: Collections of the middle generation between two full collections of the garbage
#: collector in a command-line process (CPython's default is 10).  Loading numba,
#: matplotlib and scipy makes some 150 000 objects that live as long as the process; at
#: the default a figure command walks them all three times (0.15 s, measured with
#: gc.callbacks).  At 100 a full collection waits for about 700 000 new objects
#: (700 x 10 x 100 with the default young thresholds), so a long gallery run still frees
#: its reference cycles.
_FULL_COLLECTION_EVERY = 100


def main(argv: list[str] | None = None) -> int:
    """Run the command line; returns the exit status.

    Ctrl-C exits with status 130 and one line.  Given no `argv` (a real process), the
    quiet Ctrl-C handler stays installed after the work; with `argv` (a caller in
    Python) the caller's handler is put back.

    A real process also runs full garbage collections less often (see
    :data:`_FULL_COLLECTION_EVERY`) and freezes the collector's objects when the work is
    done (``gc.freeze``): the interpreter's shutdown then skips its collections over
    every object the libraries made (numba's and matplotlib's types, some 150 000),
    which took 0.3 s of a figure command, longer than drawing it.  Nothing is
    lost: the process ends, and open files are flushed and closed as before.
    """
    if argv is None:
        young, middle, _ = gc.get_threshold()
        gc.set_threshold(young, middle, _FULL_COLLECTION_EVERY)
    previous = _on_sigint(quit_on_interrupt)
    try:
        return _main(sys.argv[1:] if argv is None else list(argv))
    finally:
        if argv is not None and previous is not None:
            _on_sigint(previous)
        if argv is None:
            gc.freeze()


#: Commands whose outputs are not one set (the gallery replaces each output's files as a set).
_SEPARATE_OUTPUTS = frozenset({"gallery"})


def _run(args) -> int:
    """The subcommand, with its outputs replaced together (the gallery: per output), and the
    tool's own warnings shown as one line each."""
    import warnings

    with warnings.catch_warnings():
        warnings.showwarning = _one_line_warning(args.command)
        if args.command in _SEPARATE_OUTPUTS:
            return _unless_interrupted(int(args.run(args) or 0))
        check_distinct_outputs([getattr(args, "out", None), getattr(args, "report", None)])
        with output_set():
            return _unless_interrupted(int(args.run(args) or 0))


def _unless_interrupted(status: int) -> int:
    """`status`, or KeyboardInterrupt if SIGINT came during the work but its exception was
    dropped where it was raised (see :func:`_keep_interrupt`): the outputs are not kept."""
    if _interrupted:
        raise KeyboardInterrupt
    return status


def _one_line_warning(command: str):
    """A warnings.showwarning that prints a warning as one line on stderr."""
    def show(message, category, filename, lineno, file=None, line=None) -> None:
        print(f"orbitalrender {command}: warning: {message}", file=sys.stderr)
    return show


def _main(argv: list[str]) -> int:
    import importlib
    import os

    global _interrupted
    _interrupted = False
    parser = build_parser()
    args = parser.parse_args(protect_leading_minus(parser, argv))
    user_errors = _user_errors()
    unraisable_hook = sys.unraisablehook
    try:
        for module in getattr(args, "preload", ()):  # Ctrl-C here still quits at once (see add_command)
            importlib.import_module(module)
        _on_sigint(_raise_interrupt)  # the work: files in progress get removed
        sys.unraisablehook = _keep_interrupt
        status = _run(args)
        sys.stdout.flush()  # inside the try, so a reader that went away is handled below
        return status
    except BrokenPipeError:
        # the reader of our output went away (``| head``): stop quietly, as a process that
        # a SIGPIPE ends would (status 128 + 13); further writes to stdout go nowhere
        os.dup2(os.open(os.devnull, os.O_WRONLY), sys.stdout.fileno())
        return 141
    except KeyboardInterrupt:
        return _stop_interrupted()
    except Exception as exc:  # noqa: BLE001 - the last line of defence of the command line
        if _interrupted:  # a library turned the interrupt into another error
            return _stop_interrupted()
        return _report(exc, args, user_errors)
    finally:
        _on_sigint(quit_on_interrupt)
        sys.unraisablehook = unraisable_hook


def _report(exc: Exception, args, user_errors) -> int:
    """Print the one line for `exc` (and its traceback with --debug); returns the exit status:
    2 for the user's input, 1 when the system refused (a full disk, a device error: not the
    input, not a bug) or for a fault inside the tool."""
    import traceback

    if isinstance(exc, user_errors):
        status, text = 2, f"error: {exc}"
    elif isinstance(exc, OSError):
        status, text = 1, f"error: {exc}"
    else:
        status, text = 1, (f"internal error: {type(exc).__name__}: {exc} "
                           "(run with --debug for the traceback)")
    print(f"orbitalrender {args.command}: {text}", file=sys.stderr)
    if args.debug:
        traceback.print_exception(exc)
    return status
