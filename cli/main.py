"""Entry point of the ``platewright`` command: registered subcommands over library functions.

Exit status: 0 done; 1 done but a limit or rule failed (the report says which); 2 refused (bad
input or a manufacturability error: nothing written). At most :data:`MAX_PROBLEMS_SHOWN`
problems of a refusal are printed, then how many more there are. A reader that goes away
(``platewright fields | head -1``) ends the output quietly; the command still finishes.
"""

from __future__ import annotations

import argparse
import io
import os
import sys
from collections.abc import Sequence
from typing import TextIO

from platewright.cli.commands.registry import COMMANDS
from platewright.geometry.errors import DesignError

__all__ = ["main", "make_parser", "print_refusal", "MAX_PROBLEMS_SHOWN"]

#: Most problems of one refusal printed; the rest are counted ("... and N more").
MAX_PROBLEMS_SHOWN = 25


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
    sub = parser.add_subparsers(dest="command", metavar="COMMAND")
    for command in COMMANDS:
        p = sub.add_parser(command.name, help=command.help, description=command.help)
        command.add_arguments(p)
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
        return int(args._command.run(args))
    except DesignError as exc:
        print_refusal(exc)
        return 2
    except KeyboardInterrupt:
        print("platewright: interrupted, nothing written", file=sys.stderr)
        return 130


if __name__ == "__main__":
    sys.exit(main())
