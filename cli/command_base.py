"""Base classes of the ``platewright`` subcommands: a command, and a command over a design file."""

from __future__ import annotations

import argparse
from pathlib import Path

from platewright.geometry.build import bundled_example_path
from platewright.geometry.design import Design, load_design
from platewright.geometry.errors import DesignError, Problem
from platewright.geometry.pipeline import BuildResult

from .outputs import check_output_target

__all__ = ["Command", "DesignCommand", "default_outdir"]


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
        parser.add_argument("--machine", metavar="KEY",
                            help="machine profile key (same as --set machine=KEY)")
        parser.add_argument("-q", "--quiet", action="store_true", help="no terminal summary")

    def load(self, args: argparse.Namespace) -> tuple[Path, Design, Path]:
        """Resolve the design path, load and validate it (with overrides) and check the output."""
        path = args.design if args.design is not None else bundled_example_path()
        if not path.exists():
            raise DesignError(Problem("DESIGN", f"no such design file: '{path}'",
                                      hint="give a YAML design file, or none for the bundled example"))
        overrides = list(args.overrides)
        if args.machine:
            overrides.append(f"machine={args.machine}")
        design = load_design(path, overrides=overrides)
        outdir = args.output if args.output is not None else default_outdir(path)
        check_output_target(outdir.absolute())
        return path, design, outdir

    @staticmethod
    def refuse_on_rule_errors(result: BuildResult) -> None:
        """Manufacturability errors stop the build (exit 2) with a readable list."""
        problems = [Problem(f"plates.{name}", f"{f.rule}: {f.message}",
                            hint="features: " + ", ".join(f.features) if f.features else "")
                    for name, f in result.errors]
        if problems:
            raise DesignError(problems, source=str(result.design.source_path))
