"""Entry point of the ``platewright`` command."""

from __future__ import annotations

import sys


def main(argv: list[str] | None = None) -> int:
    """Run the command line; returns the exit status."""
    return 0


if __name__ == "__main__":
    sys.exit(main())
