"""Entry point of the ``platewright`` command: registered subcommands over library functions.

Exit status: 0 done; 1 done but a limit or rule failed (the report says which); 2 refused (bad
input or a manufacturability error: nothing written).
"""

from __future__ import annotations

import argparse
import sys
from collections.abc import Sequence

from platewright.cli.commands.registry import COMMANDS
from platewright.geometry.errors import DesignError

__all__ = ["main", "make_parser"]


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


def main(argv: Sequence[str] | None = None) -> int:
    """Run the command line; returns the exit status."""
    parser = make_parser()
    args = parser.parse_args(argv)
    if getattr(args, "_command", None) is None:
        parser.print_help()
        return 2
    try:
        return int(args._command.run(args))
    except DesignError as exc:
        print("platewright: refused, nothing written:", file=sys.stderr)
        for problem in exc.problems:
            where = f"{exc.source}: " if exc.source else ""
            print(f"  {where}{problem}", file=sys.stderr)
        return 2
    except KeyboardInterrupt:
        print("platewright: interrupted, nothing written", file=sys.stderr)
        return 130


if __name__ == "__main__":
    sys.exit(main())
