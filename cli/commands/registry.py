"""The registry of ``platewright`` subcommands: the entry point builds its parser from COMMANDS."""

from __future__ import annotations

from platewright.cli.commands.base import Command
from platewright.cli.commands.build import BuildCommand
from platewright.cli.commands.check import CheckCommand
from platewright.cli.commands.compare import CompareCommand
from platewright.cli.commands.coupon import CouponCommand
from platewright.cli.commands.lighten import LightenCommand
from platewright.cli.commands.machines import MachinesCommand
from platewright.cli.commands.nest import NestCommand
from platewright.cli.commands.reference import FieldsCommand, MaterialsCommand, StartersCommand
from platewright.cli.commands.sweep import SweepCommand

__all__ = ["COMMANDS"]

COMMANDS: list[Command] = [
    BuildCommand(), CheckCommand(), LightenCommand(), NestCommand(), CompareCommand(), SweepCommand(),
    CouponCommand(), MachinesCommand(), FieldsCommand(), StartersCommand(), MaterialsCommand(),
]

