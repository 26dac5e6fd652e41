"""Reference commands that read the bundled data: ``fields``, ``starters`` and ``materials``."""

from __future__ import annotations

import argparse
import shutil
from pathlib import Path

from platewright.cli.commands.base import Command
from platewright.geometry.errors import DesignError, Problem
from platewright.geometry.plate.build import list_templates

__all__ = ["FieldsCommand", "MaterialsCommand", "StartersCommand"]


class FieldsCommand(Command):
    name = "fields"
    help = "print the design-file reference: every field with its unit, default and meaning"

    def run(self, args: argparse.Namespace) -> int:
        from platewright.fea.loadcases.parse import describe_load_cases
        from platewright.geometry.design.schema import describe_schema

        print(describe_schema())
        print()
        print(describe_load_cases())
        return 0


class StartersCommand(Command):
    name = "starters"
    help = "list the bundled starter designs, or copy one to start your own"

    def add_arguments(self, parser: argparse.ArgumentParser) -> None:
        parser.add_argument("--copy", nargs=2, metavar=("NAME", "DEST"),
                            help="copy starter NAME to the file DEST")

    def run(self, args: argparse.Namespace) -> int:
        starters = {p.stem: p for p in list_templates()}
        if args.copy:
            name, dest = args.copy
            if name not in starters:
                raise DesignError(Problem("--copy", f"no starter named '{name}'",
                                          hint="valid: " + ", ".join(sorted(starters))))
            dest_path = Path(dest)
            if dest_path.exists():
                raise DesignError(Problem("--copy", f"'{dest}' already exists", hint="pick a new file"))
            shutil.copyfile(starters[name], dest_path)
            print(f"copied {name} to {dest_path}")
            return 0
        for stem, path in sorted(starters.items()):
            first = path.read_text(encoding="utf-8").splitlines()[0].lstrip("# ").strip()
            print(f"{stem:24s} {first}")
        return 0


class MaterialsCommand(Command):
    name = "materials"
    help = "list the material library (refused materials are marked with the reason)"

    def run(self, args: argparse.Namespace) -> int:
        from platewright.geometry.library import load_materials

        for key, m in sorted(load_materials().items()):
            if not m.laser_safe:
                print(f"{key:22s} REFUSED: {m.refusal_reason}")
                continue
            print(f"{key:22s} E {m.youngs_modulus_mpa:8.0f} MPa  nu {m.poisson_ratio:4.2f}  "
                  f"rho {m.density_kg_m3:6.0f} kg/m3  {m.strength_kind} {m.strength_mpa:5.0f} MPa  "
                  f"kerf {m.typical_kerf_mm:.2f} mm")
        return 0
