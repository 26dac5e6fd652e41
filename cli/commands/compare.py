"""``platewright compare A B``: what changed between two designs or two output folders.

Each side is a design file (built now, and checked when it has load cases) or an output folder
holding a report.json. Writes compare.json, compare.html and overlays/PLATE.svg; exit 0.
"""

from __future__ import annotations

import argparse
import json
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from platewright.cli.commands.base import Command
from platewright.cli.outputs import staged_output, written_by_us
from platewright.cli.reports.build_folder import safe_name
from platewright.cli.reports.compare_page import compare_summary, overlay_svg, render_compare_html
from platewright.cli.reports.report_json import SCHEMA_VERSION, build_report, tool_version
from platewright.geometry.compare import compare_reports
from platewright.geometry.design.loader import load_design
from platewright.geometry.errors import DesignError, Problem
from platewright.geometry.plate.pipeline import build_design
from platewright.geometry.writers.svg import plate_svg_string

__all__ = ["CompareSide", "load_side", "CompareCommand"]


@dataclass(frozen=True)
class CompareSide:
    """One side of a comparison: its report document (report.json shape), its plate drawings
    (plate name -> SVG markup of the cut paths) and where it came from (``design`` | ``folder``)."""

    report: dict[str, Any]
    svgs: dict[str, str]
    source: str


def load_side(path: Path, overrides: list[str], check: bool | None, label: str) -> CompareSide:
    """Read an output folder (its report.json and plate SVGs) or build (and check) a design file.

    check: True runs the load cases (refused when there are none), False never, None when the
    design has load cases. ``label`` (A or B) names the side in error messages. Raises DesignError.
    """
    if path.is_dir():
        report_path = path / "report.json"
        try:
            report = json.loads(report_path.read_text(encoding="utf-8"))
        except (OSError, ValueError) as exc:
            raise DesignError(Problem(label, f"'{path}' holds no readable report.json ({exc})",
                                      hint="give a design file or a platewright output folder")
                              ) from exc
        if not isinstance(report, dict) or report.get("schema_version") != SCHEMA_VERSION:
            raise DesignError(Problem(label, f"'{report_path}' is not a schema_version "
                                      f"{SCHEMA_VERSION} platewright report"))
        svgs = {}
        for p in report.get("plates", []):
            rel = p.get("files", {}).get("svg")
            if rel and (path / rel).is_file():
                svgs[p["name"]] = (path / rel).read_text(encoding="utf-8")
        return CompareSide(report, svgs, "folder")
    if not path.is_file():
        raise DesignError(Problem(label, f"no such design file or output folder: '{path}'"))
    design = load_design(path, overrides=overrides)
    result = build_design(design)
    report = build_report(result, {})
    svgs = {b.plate.name: plate_svg_string(b.plate, list(b.cut)) for b in result.plates}
    run_check = bool(design.load_cases) if check is None else check
    if run_check:
        from platewright.fea.analysis import analyse_design
        from platewright.fea.loadcases.parse import parse_loads

        plates = [b.plate for b in result.plates]
        loads = parse_loads(design, plates)
        if not loads.cases:
            raise DesignError(Problem(f"{label}: load_cases", "--check given but the design has "
                                      "no load cases"), source=str(path))
        by_plate = {a.plate: a for a in analyse_design(design, plates, loads=loads)}
        for entry in report["plates"]:
            if entry["name"] in by_plate:
                entry["fea"] = by_plate[entry["name"]].to_report()
    return CompareSide(report, svgs, "design")


class CompareCommand(Command):
    name = "compare"
    help = ("list what changed between two designs or two output folders: features moved, "
            "resized, added or removed, mass, inertia and load-case results, with overlay drawings")

    def add_arguments(self, parser: argparse.ArgumentParser) -> None:
        parser.add_argument("a", type=Path, metavar="A", help="design file or output folder (side A)")
        parser.add_argument("b", type=Path, metavar="B", help="design file or output folder (side B)")
        parser.add_argument("-o", "--output", type=Path, metavar="OUTDIR",
                            help="output folder (default: platewright-out/compare-A-B)")
        parser.add_argument("--set-a", dest="set_a", action="append", default=[], metavar="PATH=VALUE",
                            help="override a field of design A before building (repeatable)")
        parser.add_argument("--set-b", dest="set_b", action="append", default=[], metavar="PATH=VALUE",
                            help="override a field of design B before building (repeatable)")
        group = parser.add_mutually_exclusive_group()
        group.add_argument("--check", dest="check", action="store_true", default=None,
                           help="run the load cases of design files (default: when they have some)")
        group.add_argument("--no-check", dest="check", action="store_false",
                           help="never run load cases")
        parser.add_argument("-q", "--quiet", action="store_true", help="no terminal summary")

    def run(self, args: argparse.Namespace) -> int:
        outdir = args.output if args.output is not None else (
            Path("platewright-out") / f"compare-{args.a.stem or 'a'}-{args.b.stem or 'b'}")
        outdir = outdir.absolute()
        if outdir.is_dir() and any(outdir.iterdir()) and not written_by_us(outdir, "compare.json"):
            raise DesignError(Problem("-o", f"'{outdir}' is not empty and holds no platewright "
                                      "compare.json, so it is not replaced",
                                      hint="choose a new or empty folder"))
        side_a = load_side(args.a, list(args.set_a), args.check, "A")
        side_b = load_side(args.b, list(args.set_b), args.check, "B")
        comparison = compare_reports(side_a.report, side_b.report)
        doc = {"schema_version": SCHEMA_VERSION, "kind": "comparison",
               "tool": {"name": "platewright", "version": tool_version()}, **comparison.to_report()}
        doc["a"]["source"], doc["b"]["source"] = side_a.source, side_b.source
        overlays: dict[str, str] = {}
        for p in comparison.plates:
            overlays[p.name] = overlay_svg(
                side_a.svgs.get(p.name), side_b.svgs.get(p.name),
                {f.id for f in p.features if f.change != "added"},
                {f.id for f in p.features if f.change != "removed"},
                title=f"{p.name}: A blue, B orange, changed features wide")
        for name in comparison.plates_added:
            if name in side_b.svgs:
                overlays[name] = overlay_svg(None, side_b.svgs[name], title=f"{name}: only in B")
        for name in comparison.plates_removed:
            if name in side_a.svgs:
                overlays[name] = overlay_svg(side_a.svgs[name], None, title=f"{name}: only in A")
        files = {name: f"overlays/{safe_name(name)}.svg" for name in overlays}
        doc["overlays"] = files
        with staged_output(outdir, index_file="compare.json", protect=[args.a, args.b]) as tmp:
            (tmp / "overlays").mkdir()
            for name, svg in overlays.items():
                (tmp / files[name]).write_text(svg, encoding="utf-8")
            (tmp / "compare.json").write_text(json.dumps(doc, indent=2), encoding="utf-8")
            (tmp / "compare.html").write_text(render_compare_html(doc, overlays), encoding="utf-8")
        if not args.quiet:
            print(compare_summary(doc, str(outdir)))
        return 0
