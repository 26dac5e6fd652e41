"""Base classes of the ``platewright`` subcommands: a command, and a command over a design file."""

from __future__ import annotations

import argparse
import dataclasses
from pathlib import Path

from platewright.geometry.build import bundled_example_path
from platewright.geometry.design import Design, load_design
from platewright.geometry.errors import DesignError, Problem
from platewright.geometry.machine_files import is_profile_path, resolve_machine
from platewright.geometry.machines import MachineProfile
from platewright.geometry.pipeline import BuildResult
from platewright.geometry.yamlsource import parse_yaml

from .outputs import check_output_target

__all__ = ["Command", "DesignCommand", "default_outdir", "machine_file_override"]

#: A bundled key that stands in for a profile file while the design is validated.
_PLACEHOLDER_MACHINE = "example_co2_60w"


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
        if machine and not is_profile_path(machine):
            overrides.append(f"machine={machine}")
            machine = None
        profile = machine_file_override(path, machine, overrides)
        if profile is None:
            design = load_design(path, overrides=overrides)
        else:
            # validate the design with a stand-in key, then put the profile file in its place
            design = load_design(path, overrides=[*overrides, f"machine={_PLACEHOLDER_MACHINE}"])
            design = dataclasses.replace(design, machine=profile, overrides=tuple(overrides))
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


def machine_file_override(design_path: Path, machine_arg: str | None,
                          overrides: list[str]) -> MachineProfile | None:
    """The machine profile FILE to use for a design, or None when a bundled key or an inline
    profile applies. In order: ``--machine PATH`` (relative to the working folder), the last
    ``--set machine=PATH`` (same), the design's ``machine: PATH`` (relative to the design file).
    DesignError (field and line) for a missing or bad profile file."""
    if machine_arg:
        return resolve_machine(machine_arg, None, "--machine")
    for text in reversed(overrides):
        key, _, value = text.partition("=")
        if key.strip() == "machine":
            value = value.strip()
            return resolve_machine(value, None, "--set machine") if is_profile_path(value) else None
    try:
        tree = parse_yaml(design_path.read_text(encoding="utf-8"), str(design_path))
    except (OSError, UnicodeDecodeError, DesignError):
        return None  # load_design reports it
    value = tree.data.get("machine") if isinstance(tree.data, dict) else None
    if isinstance(value, str) and is_profile_path(value):
        try:
            return resolve_machine(value, design_path.parent, "machine", tree.lines.line_of("machine"))
        except DesignError as exc:
            exc.source = exc.source or str(design_path)
            raise
    return None
