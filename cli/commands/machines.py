"""``platewright machines``: list the bundled machine profiles, show one, or print the field
reference of profile files."""

from __future__ import annotations

import argparse

import yaml

from platewright.cli.commands.base import Command
from platewright.geometry.shop.machine_files import (
    describe_machine_profile,
    profile_to_mapping,
    resolve_machine,
)
from platewright.geometry.shop.machines import load_machines

__all__ = ["MachinesCommand"]


class MachinesCommand(Command):
    """List the bundled profiles; ``--show KEY|FILE`` prints one; ``--fields`` the reference."""

    name = "machines"
    help = ("list the bundled machine profiles (example values: measure your own), show one, or "
            "print the profile file reference")

    def add_arguments(self, parser: argparse.ArgumentParser) -> None:
        parser.add_argument("--show", metavar="KEY|FILE",
                            help="print one profile (a bundled key or a profile file) as YAML")
        parser.add_argument("--fields", action="store_true",
                            help="print every profile field with its unit and default (markdown)")

    def run(self, args: argparse.Namespace) -> int:
        if args.fields:
            print(describe_machine_profile(), end="")
            return 0
        if args.show:
            profile = resolve_machine(args.show, None, "--show")
            print(f"# {profile.key}")
            print(yaml.safe_dump(profile_to_mapping(profile), sort_keys=False,
                                 default_flow_style=None, allow_unicode=True, width=100), end="")
            return 0
        for key, m in sorted(load_machines().items()):
            bed = "-" if m.bed_mm is None else f"{m.bed_mm[0]:g} x {m.bed_mm[1]:g} mm"
            kerf = "-" if m.kerf_mm is None else f"{m.kerf_mm:g} mm"
            print(f"{key:22s} {m.name}  ({m.kind or '-'}, bed {bed}, kerf {kerf})  {m.notes}")
        print("show one: platewright machines --show KEY; your own: --machine PATH.yaml")
        return 0
