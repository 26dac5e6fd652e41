"""Entry point of the ``platewright`` command: registered subcommands over library functions.

Exit status: 0 done; 1 done but a limit or rule failed (the report says which); 2 refused (bad
input or a manufacturability error: nothing written); 3 crashed (an unexpected error, or the
system refused to read or write a file; nothing written; the traceback with ``--debug``);
128 + N ended by signal N (130 Ctrl-C, 143 SIGTERM; no partial output left).
At most :data:`MAX_PROBLEMS_SHOWN` problems of a refusal are printed, then how many more there
are. A reader that goes away (``platewright fields | head -1``) ends the output quietly; the
command still finishes.
"""

from __future__ import annotations

import argparse
import io
import os
import sys
import traceback
from collections.abc import Sequence
from pathlib import Path
from typing import TextIO

from platewright.cli.commands.registry import COMMANDS
from platewright.cli.interrupts import exit_status, signals_as_exceptions
from platewright.geometry.errors import DesignError

__all__ = ["main", "make_parser", "print_refusal", "EXIT_CRASH", "MAX_PROBLEMS_SHOWN"]

#: Most problems of one refusal printed; the rest are counted ("... and N more").
MAX_PROBLEMS_SHOWN = 25

#: exit status of a run that ended in an unexpected error
EXIT_CRASH = 3
_DEBUG_HELP = "on an unexpected error, print the full traceback (for a bug report)"


def _inputs(args: argparse.Namespace) -> str:
    """The files a run was reading, for messages ("the bundled example" when none was given)."""
    names: list[str] = []
    for attr in ("design", "designs", "a", "b", "measured"):
        value = getattr(args, attr, None)
        for v in value if isinstance(value, list) else [value]:
            if isinstance(v, (str, Path)):
                names.append(f"'{v}'")
    if not names and hasattr(args, "design"):
        names.append("the bundled example design")
    return ", ".join(names)


def _crashed(args: argparse.Namespace, exc: Exception) -> int:
    """Report an unexpected error in two lines (the traceback first with --debug)."""
    debug = getattr(args, "debug", False)
    if debug:
        traceback.print_exc(file=sys.stderr)
    where = f"'platewright {args.command}'" + (f" on {_inputs(args)}" if _inputs(args) else "")
    if isinstance(exc, OSError):  # the system's refusal (disk full, no permission): not a bug
        print(f"platewright: {where} stopped: {exc}; nothing written", file=sys.stderr)
        return EXIT_CRASH
    print(f"platewright: internal error in {where}: {type(exc).__name__}: {exc}\n"
          "  nothing written. This is a bug in platewright: please report it with the design "
          "file and the command line" + ("" if debug else " (run again with --debug to add the "
                                             "traceback)"), file=sys.stderr)
    return EXIT_CRASH


class _QuietPipe(io.TextIOBase):
    """Standard output that drops what it cannot write once the reader has gone (broken pipe)."""

    def __init__(self, inner: TextIO) -> None:
        self.inner = inner
        self.broken = False

    def writable(self) -> bool:
        return True

    def write(self, text: str) -> int:
        if not self.broken:
            try:
                self.inner.write(text)
            except BrokenPipeError:
                self._gone()
        return len(text)

    def flush(self) -> None:
        if not self.broken:
            try:
                self.inner.flush()
            except BrokenPipeError:
                self._gone()

    def _gone(self) -> None:
        self.broken = True
        try:  # Python flushes stdout at exit: point the descriptor at nothing first
            fd = self.inner.fileno()
            null = os.open(os.devnull, os.O_WRONLY)
            os.dup2(null, fd)
            os.close(null)
        except (AttributeError, OSError, ValueError, io.UnsupportedOperation):
            pass


def make_parser() -> argparse.ArgumentParser:
    """The argument parser with every registered subcommand."""
    parser = argparse.ArgumentParser(
        prog="platewright",
        description="Cut-ready, checked chassis plates from a YAML design file.",
    )
    parser.add_argument("--debug", action="store_true", help=_DEBUG_HELP)
    sub = parser.add_subparsers(dest="command", metavar="COMMAND")
    for command in COMMANDS:
        p = sub.add_parser(command.name, help=command.help, description=command.help)
        command.add_arguments(p)
        # also accepted after the command; SUPPRESS keeps the top-level value when absent
        p.add_argument("--debug", action="store_true", default=argparse.SUPPRESS, help=_DEBUG_HELP)
        p.set_defaults(_command=command)
    return parser


def print_refusal(exc: DesignError, stream: TextIO | None = None) -> None:
    """Print a refusal: at most MAX_PROBLEMS_SHOWN problems, each with its file, then a count."""
    stream = sys.stderr if stream is None else stream
    print("platewright: refused, nothing written:", file=stream)
    for problem in exc.problems[:MAX_PROBLEMS_SHOWN]:
        where = exc.where(problem)
        print(f"  {where + ': ' if where else ''}{problem}", file=stream)
    more = len(exc.problems) - MAX_PROBLEMS_SHOWN
    if more > 0:
        print(f"  ... and {more} more problem{'s' if more > 1 else ''} (fix the ones above "
              "and run again)", file=stream)


def main(argv: Sequence[str] | None = None) -> int:
    """Run the command line; returns the exit status."""
    real_stdout = sys.stdout
    sys.stdout = _QuietPipe(real_stdout)
    try:
        return _main(argv)
    finally:
        sys.stdout = real_stdout


def _main(argv: Sequence[str] | None) -> int:
    parser = make_parser()
    args = parser.parse_args(argv)
    if getattr(args, "_command", None) is None:
        parser.print_help()
        return 2
    try:
        with signals_as_exceptions():
            return int(args._command.run(args))
    except DesignError as exc:
        print_refusal(exc)
        return 2
    except KeyboardInterrupt as exc:  # Ctrl-C, SIGTERM, SIGHUP
        print("platewright: interrupted; no partial output left (an output folder holds the "
              "earlier output or the whole new one)", file=sys.stderr)
        return exit_status(exc)
    except Exception as exc:
        return _crashed(args, exc)


if __name__ == "__main__":
    sys.exit(main())
