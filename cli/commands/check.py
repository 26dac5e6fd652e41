"""``platewright check``: build, then estimate deflection, stress and safety factor under every load case."""

from __future__ import annotations

import argparse

from platewright.cli.commands.base import AnalysisCommand
from platewright.cli.outputs import staged_output
from platewright.cli.reports.build_folder import write_build
from platewright.cli.terminal import build_summary

__all__ = ["CheckCommand"]


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
        with staged_output(done.outdir, protect=[f.path for f in done.design.inputs]) as tmp:
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
