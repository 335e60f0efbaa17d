"""The ``kinetics`` command: the command group, its entry point and how a run ends.

``main(argv=None) -> int`` runs one command in-process and returns the exit
status: 0 on success, 2 for a user mistake (bad file, bad option, a wrong value of
any kind: every :class:`~kinetics.errors.KineticsError`), with one clear message on
stderr and no traceback (``--debug`` shows one).  The commands live one family per
module of this package; ``fit``, ``sweep`` and ``optimise`` are imported only when named (or listed
by ``--help``), so that ``solve`` and ``check`` start without them.
"""

from __future__ import annotations

import contextlib
import sys
from collections.abc import Callable
from types import FrameType
from typing import Any

import click

from kinetics._version import __version__
from kinetics.cli.check import check
from kinetics.cli.safety import safety
from kinetics.cli.solving import report, solve
from kinetics.collector import fewer_passes
from kinetics.errors import KineticsError

__all__ = [
    "BROKEN_PIPE",
    "STOP_SIGNALS",
    "PipeClosed",
    "Stopped",
    "cli",
    "main",
    "run",
    "split_debug",
]

#: Commands defined in their own modules, imported only when named or listed by
#: ``--help`` (``solve`` and ``check`` start without them): name -> (module, object).
_LAZY_COMMANDS = {
    "fit": ("kinetics.cli.fit", "fit"),
    "sweep": ("kinetics.cli.sweep", "sweep"),
    "optimise": ("kinetics.cli.optimise", "optimise"),
}


class PipeClosed(Exception):
    """stdout was closed by its reader before the output was complete (``| head``)."""


class _Group(click.Group):
    """Keeps commands in the order they are defined in ``--help``; loads some on demand."""

    def list_commands(self, ctx):
        return list(self.commands) + [n for n in _LAZY_COMMANDS if n not in self.commands]

    def get_command(self, ctx, cmd_name):
        if cmd_name in _LAZY_COMMANDS and cmd_name not in self.commands:
            import importlib

            module, name = _LAZY_COMMANDS[cmd_name]
            self.add_command(getattr(importlib.import_module(module), name), cmd_name)
        return super().get_command(ctx, cmd_name)

    def invoke(self, ctx):
        # click and rich would turn a closed pipe into exit status 1, the status of a bug
        try:
            return super().invoke(ctx)
        except BrokenPipeError as exc:
            raise PipeClosed() from exc
        except SystemExit as exc:
            if isinstance(exc.__context__, BrokenPipeError):  # rich's console
                raise PipeClosed() from exc
            raise


_HELP = """Check, solve exactly, analyse and export first-order reaction schemes.

\b
Examples:
  kinetics check networks/consecutive_intermediate.scheme
  kinetics solve networks/consecutive_intermediate.scheme --until 3h --out table.csv
"""


@click.group(cls=_Group, context_settings={"help_option_names": ["-h", "--help"]}, help=_HELP)
@click.version_option(__version__, "--version", prog_name="kinetics")
@click.option("--debug", is_flag=True, help="Show the Python traceback of an error.")
@click.pass_context
def cli(ctx, debug):
    """The ``kinetics`` command group (the help text is :data:`_HELP`); keeps ``--debug``."""
    ctx.obj = {"debug": debug}


for _command in (check, solve, report, safety):  # the order of --help
    cli.add_command(_command)


def split_debug(args: list[str]) -> tuple[list[str], bool]:
    """Accept ``--debug`` anywhere before ``--`` (it is a global flag)."""
    if "--" in args:
        cut = args.index("--")
        head, tail = args[:cut], args[cut:]
    else:
        head, tail = args, []
    debug = "--debug" in head
    head = [a for a in head if a != "--debug"]
    return (["--debug", *head, *tail] if debug else head + tail), debug


class Stopped(BaseException):
    """Raised in the main thread when the process gets SIGTERM or SIGHUP.

    A ``BaseException`` (like ``KeyboardInterrupt``), so that every cleanup that
    runs for an interrupt (temporary files, partial tables) runs for it too.
    """

    def __init__(self, name: str) -> None:
        super().__init__(name)
        self.name = name
        self.status, self.word = STOP_SIGNALS[name]


#: Signals turned into :class:`Stopped`, with the exit status (128 + the signal number,
#: as a shell reports a process killed by it) and the word said on stderr.
STOP_SIGNALS = {"SIGTERM": (143, "terminated"), "SIGHUP": (129, "hung up")}
#: Exit status when stdout is closed before the output is complete (``| head``):
#: 128 + SIGPIPE, what a shell reports for a program stopped by a closed pipe.
BROKEN_PIPE = 141


@contextlib.contextmanager
def _signals_stop_the_run():
    """While running, SIGTERM and SIGHUP raise :class:`Stopped`.

    Signals the parent made the process ignore (as ``nohup`` does for SIGHUP) stay ignored.
    """
    import signal
    import threading

    if threading.current_thread() is not threading.main_thread():
        yield
        return
    previous: dict[int, Callable[[int, FrameType | None], Any] | int | None] = {}

    def stop(signum, frame):
        for number in previous:  # one stop is enough: later ones must not cut the cleanup
            signal.signal(number, signal.SIG_IGN)
        raise Stopped(signal.Signals(signum).name)

    for name in STOP_SIGNALS:
        number = getattr(signal, name, None)
        if number is not None and signal.getsignal(number) is not signal.SIG_IGN:
            previous[number] = signal.signal(number, stop)
    try:
        yield
    finally:
        for number, handler in previous.items():
            signal.signal(number, handler)


def _silence_stdout() -> None:
    """Point stdout at the null device, so that flushing it at exit cannot fail again."""
    import os

    try:
        fd = sys.stdout.fileno()
    except (AttributeError, OSError, ValueError):
        return
    null = os.open(os.devnull, os.O_WRONLY)
    os.dup2(null, fd)
    os.close(null)


def _say(exc: BaseException, message: str) -> None:
    """The error's one line on stderr, then its notes (files written or not)."""
    click.echo(f"kinetics: {message}", err=True)
    for note in getattr(exc, "__notes__", ()):
        click.echo(f"kinetics: {note}", err=True)


#: Ways a run ends that are no error of the user's or of the program (never re-raised).
_ENDINGS = (
    click.exceptions.Exit,
    Stopped,
    click.exceptions.Abort,
    KeyboardInterrupt,
    click.exceptions.NoArgsIsHelpError,
    PipeClosed,
)


def main(argv: list[str] | None = None) -> int:
    """Run the command line with ``argv`` (default: ``sys.argv[1:]``); return the exit status.

    Exit status: 0 success, 2 a user mistake or a file that cannot be read or written
    (one sentence on stderr), 1 an internal error (a bug: one sentence, the traceback
    only with ``--debug``), 130 interrupted (Ctrl-C), 143 terminated (SIGTERM), 129 hung
    up (SIGHUP), 141 stdout closed early (``| head``, nothing said).  An interrupted or
    stopped run leaves no partial output file.
    """
    args, debug = split_debug(list(sys.argv[1:] if argv is None else argv))
    try:
        with _signals_stop_the_run(), fewer_passes():
            result = cli.main(args=args, prog_name="kinetics", standalone_mode=False)
    except _ENDINGS as exc:
        return _ended(exc)
    except Exception as exc:
        if debug and not isinstance(exc, BrokenPipeError):
            raise
        return _failed(exc)
    return result if isinstance(result, int) else 0


def _ended(exc: BaseException) -> int:
    """The exit status of a run ended by help, a signal, Ctrl-C or a closed pipe."""
    if isinstance(exc, click.exceptions.Exit):
        return exc.exit_code
    if isinstance(exc, Stopped):
        _say(exc, exc.word)
        return exc.status
    if isinstance(exc, click.exceptions.Abort | KeyboardInterrupt):
        _say(exc.__cause__ or exc, "interrupted")
        return 130
    if isinstance(exc, click.exceptions.NoArgsIsHelpError):
        click.echo(exc.format_message(), err=True)
        return 2
    _silence_stdout()  # PipeClosed
    return BROKEN_PIPE


def _failed(exc: Exception) -> int:
    """The exit status of a failed run, after its one sentence on stderr.

    2 for a mistake on the command line, in a file, or a file that cannot be read or
    written; 1 for an internal error (a bug); :data:`BROKEN_PIPE` when stdout was closed.
    """
    if isinstance(exc, click.ClickException):
        click.echo(f"kinetics: {exc.format_message()}", err=True)
        if isinstance(exc, click.UsageError) and exc.ctx is not None:
            click.echo(f"  (see: {exc.ctx.command_path} --help)", err=True)
        return 2
    if isinstance(exc, KineticsError):
        _say(exc, str(exc))
        return 2
    if isinstance(exc, BrokenPipeError):
        _silence_stdout()
        return BROKEN_PIPE
    if isinstance(exc, OSError):
        reason = exc.strerror or str(exc)
        if exc.filename:
            _say(exc, f"cannot access {exc.filename!r}: {reason}")
        else:
            _say(exc, f"a file operation failed ({reason}); --debug shows which one")
        return 2
    _say(
        exc,
        f"internal error ({type(exc).__name__}: {exc}); "
        "this is a bug, please report it with the output of --debug",
    )
    return 1


def run() -> None:  # pragma: no cover - console-script entry point
    """Console-script entry point."""
    sys.exit(main())
