"""``platewright build``: cut-ready files (DXF, SVG, STL, GLB) and the reports for every plate."""

from __future__ import annotations

import argparse

from platewright.cli.commands.base import DesignCommand
from platewright.cli.outputs import staged_output
from platewright.cli.reports.build_folder import write_build
from platewright.cli.terminal import build_summary
from platewright.geometry.plate.pipeline import build_design

__all__ = ["BuildCommand"]


class BuildCommand(DesignCommand):
    name = "build"
    help = "build cut-ready files (DXF, SVG, STL, GLB) and the reports for every plate"

    def run(self, args: argparse.Namespace) -> int:
        _, design, outdir = self.load(args)
        result = build_design(design)
        self.refuse_on_rule_errors(result)
        with staged_output(outdir, protect=[f.path for f in design.inputs]) as tmp:
            report = write_build(result, tmp)
        if not args.quiet:
            print(build_summary(report, str(outdir)))
        return 0
