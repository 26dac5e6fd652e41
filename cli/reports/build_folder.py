"""Write a finished build into a (staged) output folder: per-plate cut files, report.json and HTML."""

from __future__ import annotations

import json
import re
from collections.abc import Sequence
from pathlib import Path
from typing import Any

from platewright.cli.reports.fea_section import fea_html, write_plots
from platewright.cli.reports.report_html import render_report
from platewright.cli.reports.report_json import build_report
from platewright.fea.results import PlateAnalysis
from platewright.geometry.plate.pipeline import BuildResult
from platewright.geometry.writers.dxf import write_plate_dxf
from platewright.geometry.writers.solid import write_plate_glb, write_plate_stl
from platewright.geometry.writers.svg import plate_svg_string

__all__ = ["safe_name", "write_build"]


def safe_name(name: str) -> str:
    """A file-name-safe version of a plate name."""
    return re.sub(r"[^A-Za-z0-9._-]+", "_", name).strip("_") or "plate"


def write_build(result: BuildResult, folder: Path,
                analyses: Sequence[PlateAnalysis] = ()) -> dict[str, Any]:
    """Write every plate's DXF, SVG, STL and GLB under ``folder/plates`` plus report.json and
    report.html in ``folder``; with ``analyses`` (from fea) also the ``fea`` section of each
    analysed plate and its contour plots under ``folder/plots``. Returns the report dictionary."""
    plates_dir = folder / "plates"
    plates_dir.mkdir(parents=True, exist_ok=True)
    files: dict[str, dict[str, str]] = {}
    svgs: dict[str, str] = {}
    for built in result.plates:
        stem = safe_name(built.plate.name)
        rel = {k: f"plates/{stem}.{k}" for k in ("dxf", "svg", "stl", "glb")}
        write_plate_dxf(built.plate, list(built.cut), folder / rel["dxf"])
        svg = plate_svg_string(built.plate, list(built.cut))
        (folder / rel["svg"]).write_text(svg, encoding="utf-8")
        write_plate_stl(built.plate, folder / rel["stl"])
        write_plate_glb(built.plate, folder / rel["glb"])
        files[built.plate.name] = rel
        svgs[built.plate.name] = svg
    report = build_report(result, files)
    extra_html: dict[str, str] = {}
    by_plate = {a.plate: a for a in analyses}
    for entry in report["plates"]:
        analysis = by_plate.get(entry["name"])
        if analysis is None:
            continue
        entry["fea"] = analysis.to_report()
        plots = write_plots(analysis, folder, safe_name(analysis.plate))
        for case in entry["fea"]["load_cases"]:
            case["plots"] = plots.get(case["name"], {})
        extra_html[entry["name"]] = fea_html(analysis, entry["fea"], folder, plots)
    (folder / "report.json").write_text(json.dumps(report, indent=2), encoding="utf-8")
    (folder / "report.html").write_text(render_report(report, svgs, extra_html), encoding="utf-8")
    return report
