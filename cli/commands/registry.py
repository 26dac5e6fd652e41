"""The subcommands of ``platewright``, each a small class registered in COMMANDS."""

from __future__ import annotations

import argparse
import shutil
from pathlib import Path

from platewright.cli.commands.base import AnalysisCommand, Command, DesignCommand
from platewright.cli.commands.compare import CompareCommand
from platewright.cli.commands.coupon import CouponCommand
from platewright.cli.commands.lighten import LightenCommand
from platewright.cli.commands.machines import MachinesCommand
from platewright.cli.commands.nest import NestCommand
from platewright.cli.commands.sweep import SweepCommand
from platewright.cli.outputs import staged_output
from platewright.cli.reports.build_folder import write_build
from platewright.cli.terminal import build_summary
from platewright.geometry.errors import DesignError, Problem
from platewright.geometry.plate.build import list_templates
from platewright.geometry.plate.pipeline import build_design

__all__ = ["COMMANDS"]


class BuildCommand(DesignCommand):
    name = "build"
    help = "build cut-ready files (DXF, SVG, STL, GLB) and the reports for every plate"

    def run(self, args: argparse.Namespace) -> int:
        _, design, outdir = self.load(args)
        result = build_design(design)
        self.refuse_on_rule_errors(result)
        with staged_output(outdir) as tmp:
            report = write_build(result, tmp)
        if not args.quiet:
            print(build_summary(report, str(outdir)))
        return 0


class CheckCommand(AnalysisCommand):
    name = "check"
    help = ("build, then estimate deflection, stress and safety factor of every plate under every "
            "load case (finite elements), against the design's limits")

    def add_arguments(self, parser: argparse.ArgumentParser) -> None:
        super().add_arguments(parser)
        parser.add_argument("--vtu", action="store_true",
                            help="also write mesh and fields as VTU files (fields/) for other viewers")

    def run(self, args: argparse.Namespace) -> int:
        from platewright.cli.reports.fea_section import fea_summary
        from platewright.fea.vtu import write_vtu

        done = self.analyse(args)
        with staged_output(done.outdir) as tmp:
            report = write_build(done.result, tmp, done.analyses)
            if args.vtu:
                (tmp / "fields").mkdir()
                for a in done.analyses:
                    for case in a.cases:
                        write_vtu(case, tmp / "fields" / f"{a.plate}__{case.name}.vtu")
        if not args.quiet:
            print(build_summary(report, str(done.outdir)))
            print(fea_summary(done.analyses))
        return 0 if all(a.passes for a in done.analyses) else 1


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
            print(f"{key:22s} E {m.youngs_modulus_mpa:8.0f} MPa  rho {m.density_kg_m3:6.0f} kg/m3  "
                  f"{m.strength_kind} {m.strength_mpa:5.0f} MPa  kerf {m.typical_kerf_mm:.2f} mm")
        return 0


COMMANDS: list[Command] = [
    BuildCommand(), CheckCommand(), LightenCommand(), NestCommand(), CompareCommand(), SweepCommand(),
    CouponCommand(), MachinesCommand(), FieldsCommand(), StartersCommand(), MaterialsCommand(),
]

