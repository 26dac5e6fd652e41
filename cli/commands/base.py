"""Base classes of the ``platewright`` subcommands: a command, a command over a design file, and
one that also runs the design's load cases."""

from __future__ import annotations

import argparse
import dataclasses
import math
import sys
from collections.abc import Callable
from pathlib import Path
from typing import Any

from platewright.cli.outputs import check_output_target
from platewright.geometry.design.loader import Design, load_design
from platewright.geometry.errors import DesignError, Problem
from platewright.geometry.plate.build import bundled_example_path
from platewright.geometry.plate.pipeline import BuildResult, build_design

__all__ = ["Command", "DesignCommand", "AnalysisCommand", "Analysed", "default_outdir"]



def default_outdir(design_path: Path) -> Path:
    """Default output folder for a design: ``platewright-out/<design file stem>``."""
    return Path("platewright-out") / design_path.stem


class Command:
    """One subcommand: a name, a help line, its arguments and what it runs."""

    name = ""
    help = ""

    def add_arguments(self, parser: argparse.ArgumentParser) -> None:
        """Add this command's options to ``parser``."""

    def run(self, args: argparse.Namespace) -> int:
        """Run the command; returns the exit status."""
        raise NotImplementedError


class DesignCommand(Command):
    """Shared arguments of the commands that read a design file and write an output folder."""

    def add_arguments(self, parser: argparse.ArgumentParser) -> None:
        parser.add_argument("design", nargs="?", type=Path,
                            help="design file (YAML); default: the bundled example design")
        parser.add_argument("-o", "--output", type=Path, metavar="OUTDIR",
                            help="output folder (default: platewright-out/<design name>)")
        parser.add_argument("--set", dest="overrides", action="append", default=[],
                            metavar="PATH=VALUE",
                            help="override any design field, e.g. references.wheelbase_mm=180 "
                                 "(repeatable)")
        parser.add_argument("--machine", metavar="KEY|FILE",
                            help="bundled machine profile key (same as --set machine=KEY) or a "
                                 "profile file PATH.yaml (see `platewright machines`)")
        parser.add_argument("-q", "--quiet", action="store_true", help="no terminal summary")

    def load(self, args: argparse.Namespace) -> tuple[Path, Design, Path]:
        """Resolve the design path, load and validate it (with overrides) and check the output."""
        path = args.design if args.design is not None else bundled_example_path()
        if not path.exists():
            raise DesignError(Problem("DESIGN", f"no such design file: '{path}'",
                                      hint="give a YAML design file, or none for the bundled example"))
        overrides = list(args.overrides)
        machine = getattr(args, "machine", None)
        if machine:  # a bundled key or a profile file (relative to the working folder)
            overrides.append(f"machine={machine}")
        design = load_design(path, overrides=overrides)
        outdir = args.output if args.output is not None else default_outdir(path)
        check_output_target(outdir.absolute())
        return path, design, outdir

    @staticmethod
    def refuse_on_rule_errors(result: BuildResult) -> None:
        """Manufacturability errors stop the build (exit 2) with a readable list; each problem
        is on the first feature the finding names (its path and line; the outline for the
        bed size), else on the plate."""
        problems = []
        for built in result.plates:
            plate = built.plate
            by_id = {f.id: f for f in (plate.outline, *plate.features)}
            for f in built.findings:
                if f.level != "error":
                    continue
                named = [by_id[i] for i in f.features if i in by_id]
                inner = [g for g in named if g is not plate.outline]
                at = (inner or named or [None])[0]
                path = at.source_path if at is not None and at.source_path else plate.source_path
                line = (at.source_line if at is not None and at.source_path
                        else result.design.line_of(plate.source_path))
                hint = f"plate '{plate.name}'" + (", features: " + ", ".join(f.features)
                                                  if f.features else "")
                problems.append(Problem(path, f"{f.rule}: {f.message}", line, hint))
        if problems:
            raise DesignError(problems, source=str(result.design.source_path))


@dataclasses.dataclass(frozen=True)
class Analysed:
    """What an analysing command has before it writes: the design, the output folder, the build,
    the parsed load input and one PlateAnalysis per plate with load cases."""

    design: Design
    outdir: Path
    result: BuildResult
    loads: Any
    analyses: list[Any]


class AnalysisCommand(DesignCommand):
    """A design command that also runs the design's load cases (check, lighten)."""

    #: what the command does with load cases, for the "no load cases" message
    verb = "check"

    def add_arguments(self, parser: argparse.ArgumentParser) -> None:
        super().add_arguments(parser)
        parser.add_argument("--mesh-size-mm", type=float, metavar="MM",
                            help="element size for every case (default: each case's mesh_size_mm, "
                                 "else from the plate size)")
        parser.add_argument("--solver", choices=["auto", "direct", "amg"], default="auto",
                            help="linear solver (default auto: direct when small, multigrid when large)")

    def progress(self, args: argparse.Namespace) -> Callable[[str], None]:
        """A progress printer to standard error (silent with -q)."""

        def show(text: str) -> None:
            if not args.quiet and "optimiser iteration" not in text:
                print(f"  {text}", file=sys.stderr, flush=True)

        return show

    def analyse(self, args: argparse.Namespace) -> Analysed:
        """Load, build (refusing on rule errors), parse the load cases and solve every one."""
        from platewright.fea.analysis import analyse_design
        from platewright.fea.loadcases.parse import parse_loads

        if args.mesh_size_mm is not None and not 0 < args.mesh_size_mm < math.inf:
            raise DesignError(Problem("--mesh-size-mm", f"must be a number > 0, got "
                                      f"{args.mesh_size_mm}"))
        _, design, outdir = self.load(args)
        result = build_design(design)
        self.refuse_on_rule_errors(result)
        plates = [b.plate for b in result.plates]
        loads = parse_loads(design, plates)
        if not loads.cases:
            raise DesignError(Problem("load_cases", f"the design has no load cases to {self.verb}",
                                      hint="add load_cases (see `platewright fields`)"),
                              source=str(design.source_path))
        analyses = analyse_design(design, plates, size_mm=args.mesh_size_mm, method=args.solver,
                                  progress=self.progress(args), loads=loads)
        return Analysed(design, outdir, result, loads, analyses)
