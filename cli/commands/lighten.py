"""The ``lighten`` command: verified lightening holes for every plate with load cases.

Writes the normal build output (as ``check`` does, with the ``fea`` section of the plates as
designed) plus, per lightened plate, ``plates/<name>_lightened.dxf/.svg/.stl/.glb`` (same layers
and cut order as every plate: inner contours first, then the outline), the ``lightening``
section of report.json and a before/after section in report.html (drawings, deflection
contours, per-case table). With ``--style both`` the two styles are compared; the one saving
more mass is written as ``<name>_lightened.*``, each also as ``<name>_lightened_<style>.*``.
"""

from __future__ import annotations

import argparse
import html
import json
from pathlib import Path
from typing import Any

from platewright.cli.commands.base import AnalysisCommand
from platewright.cli.outputs import staged_output
from platewright.cli.reports.build_folder import safe_name, write_build
from platewright.cli.reports.fea_section import fea_html, plot_figure_html
from platewright.cli.reports.report_html import render_report
from platewright.cli.terminal import build_summary, format_table
from platewright.geometry.plate.cutpaths import cut_paths
from platewright.geometry.writers.dxf import write_plate_dxf
from platewright.geometry.writers.solid import write_plate_glb, write_plate_stl
from platewright.geometry.writers.svg import plate_svg_string

__all__ = ["LightenCommand", "write_lightened", "lightening_html"]

_KINDS = ("dxf", "svg", "stl", "glb")


def _fmt(x: Any, spec: str = ".3g") -> str:
    return "-" if x is None else format(x, spec)


def write_lightened(res: Any, folder: Path, stem: str) -> tuple[dict[str, str], str]:
    """Write the lightened plate of ``res`` (fea.lightening_results.LighteningResult) as
    ``plates/<stem>.dxf/.svg/.stl/.glb`` under ``folder``; returns (kind -> relative path, SVG)."""
    plate = res.lightened
    cut = cut_paths(plate)
    rel = {k: f"plates/{stem}.{k}" for k in _KINDS}
    write_plate_dxf(plate, cut, folder / rel["dxf"])
    svg = plate_svg_string(plate, cut)
    (folder / rel["svg"]).write_text(svg, encoding="utf-8")
    write_plate_stl(plate, folder / rel["stl"])
    write_plate_glb(plate, folder / rel["glb"])
    return rel, svg


def _png(folder: Path, rel: str, data: bytes, legend_html: str) -> str:
    (folder / rel).parent.mkdir(parents=True, exist_ok=True)
    (folder / rel).write_bytes(data)
    return plot_figure_html(data, rel, legend_html)


def lightening_html(results: list[Any], reports: list[dict[str, Any]], svgs: list[str],
                    folder: Path, stem: str) -> str:
    """Before/after HTML of one plate's lightening results (one per style); deflection plots
    are written to ``folder/plots`` and embedded."""
    from platewright.fea.plots import plot_field, plot_legend_html
    from platewright.fea.results import ESTIMATE_NOTE

    parts = ["<h3>Lightening</h3>"]
    if len(results) > 1:
        rows = "".join(
            f"<tr><td class='l'>{html.escape(r['style'])}"
            f"{' (' + html.escape(r['pattern_shape']) + ')' if r['pattern_shape'] else ''}</td>"
            f"<td>{r['holes']}</td><td>{_fmt(r['mass_after_g'], '.1f')}</td>"
            f"<td>{100 * r['mass_saved_fraction']:.1f} %</td><td>{_fmt(r['added_cut_length_mm'], '.0f')}</td>"
            f"<td>{r['added_pierces']}</td><td>{r['iterations']['verified_candidates']}</td></tr>"
            for r in reports)
        parts.append("<table><tr><th class='l'>style</th><th>holes</th><th>mass after g</th>"
                     "<th>saved</th><th>added cut mm</th><th>added pierces</th>"
                     f"<th>candidates checked</th></tr>{rows}</table>")
    for res, rep, svg in zip(results, reports, svgs):
        title = rep["style"] + (f" ({rep['pattern_shape']})" if rep["pattern_shape"] else "")
        parts.append(f"<h4>{html.escape(title)}: {rep['holes']} holes, mass "
                     f"{rep['mass_before_g']:.1f} g → {rep['mass_after_g']:.1f} g "
                     f"({100 * rep['mass_saved_fraction']:.1f} % saved)</h4>")
        rows = "".join(
            f"<tr><td class='l'>{html.escape(c['name'])}</td><td>{_fmt(c['deflection_before_mm'])}</td>"
            f"<td>{_fmt(c['deflection_after_mm'])}</td><td>{_fmt(c['limit_mm'])}</td>"
            f"<td>{_fmt(c['safety_factor_before'])}</td><td>{_fmt(c['safety_factor_after'])}</td>"
            f"<td>{'passes' if c['passes_after'] else 'FAILS'}</td></tr>" for c in rep["cases"])
        parts.append("<table><tr><th class='l'>case</th><th>deflection before mm</th>"
                     "<th>deflection after mm</th><th>limit mm</th><th>safety factor before</th>"
                     f"<th>safety factor after</th><th>verdict</th></tr>{rows}</table>")
        parts.append(f"<p class='meta'>Added cut length {_fmt(rep['added_cut_length_mm'], '.0f')} mm, "
                     f"added pierces {rep['added_pierces']}; every suggestion was re-meshed and "
                     f"re-solved on the real holed geometry. {html.escape(ESTIMATE_NOTE)}.</p>")
        notes = "".join(f"<li>{html.escape(n)}</li>" for n in rep["notes"])
        if notes:
            parts.append(f"<ul>{notes}</ul>")
        parts.append(f'<div class="drawing">{svg}</div>')
        tag = f"{stem}_lightened_{res.style}"
        for before, after in zip(res.before.cases, res.after.cases):
            if before.fields is None or after.fields is None or not res.holes:
                continue
            for when, case in (("before", before), ("after", after)):
                legend = (f"<div class='meta'>{when} lightening</div>"
                          + plot_legend_html(case, "deflection"))
                parts.append(_png(folder, f"plots/{tag}__{case.name}__deflection_{when}.png",
                                  plot_field(case, "deflection"), legend))
    return "".join(parts)


class LightenCommand(AnalysisCommand):
    name = "lighten"
    help = ("propose lightening holes for every plate with load cases, verified by a "
            "finite-element check of the holed plate, and write the lightened cut files")
    verb = "lighten for"

    def add_arguments(self, parser: argparse.ArgumentParser) -> None:
        super().add_arguments(parser)
        parser.add_argument("--style", choices=["organic", "pattern", "both"],
                            help="organic holes, a regular pattern, or both compared (default: the "
                                 "design's lightening.style, else organic)")
        parser.add_argument("--pattern-shape", choices=["round", "triangle", "slot"],
                            help="hole shape of the pattern style (default: the design's, else round)")

    def run(self, args: argparse.Namespace) -> int:
        from platewright.fea.lighten.design_region import lightening_section
        from platewright.fea.lighten.pipeline import lighten_design

        done = self.analyse(args)
        design, outdir, result, analyses = done.design, done.outdir, done.result, done.analyses
        plates = [b.plate for b in result.plates]
        raw = lightening_section(design) or {}
        style = args.style or raw.get("style") or "organic"
        styles = ["organic", "pattern"] if style == "both" else [style]
        overrides = {"pattern_shape": args.pattern_shape} if args.pattern_shape else None
        results = lighten_design(design, plates, styles=styles, overrides=overrides,
                                 size_mm=args.mesh_size_mm, method=args.solver,
                                 progress=self.progress(args),
                                 analyses=analyses)
        with staged_output(outdir, protect=[f.path for f in design.inputs]) as tmp:
            report = write_build(result, tmp, analyses)
            self._add_lightening(report, results, analyses, tmp, [b for b in result.plates])
        if not args.quiet:
            print(build_summary(report, str(outdir)))
            print(_summary(report))
        ok = all(a.passes for a in analyses) and all(r.verified for r in results)
        return 0 if ok else 1

    @staticmethod
    def _add_lightening(report: dict[str, Any], results: list[Any], analyses: list[Any],
                        folder: Path, built: list[Any]) -> None:
        by_plate: dict[str, list[Any]] = {}
        for r in results:
            by_plate.setdefault(r.plate.name, []).append(r)
        svgs = {b.plate.name: plate_svg_string(b.plate, list(b.cut)) for b in built}
        analysis = {a.plate: a for a in analyses}
        extra: dict[str, str] = {}
        for entry in report["plates"]:
            name = entry["name"]
            html_parts = []
            if name in analysis and "fea" in entry:
                plots = {c["name"]: c.get("plots", {}) for c in entry["fea"]["load_cases"]}
                html_parts.append(fea_html(analysis[name], entry["fea"], folder, plots))
            mine = by_plate.get(name, [])
            if mine:
                stem = safe_name(name)
                best = max(mine, key=lambda r: r.mass_saved_g)
                reports, drawings = [], []
                for r in mine:
                    own = f"{stem}_lightened" + (f"_{r.style}" if len(mine) > 1 else "")
                    files, svg = write_lightened(r, folder, own)
                    reports.append(r.to_report(files))
                    drawings.append(svg)
                main = reports[mine.index(best)]
                if len(mine) > 1:  # the one saving more is also <name>_lightened.*
                    main = {**main, "files": write_lightened(best, folder, f"{stem}_lightened")[0],
                            "compared": [{k: rp[k] for k in ("style", "pattern_shape", "holes",
                                                             "mass_after_g", "mass_saved_fraction",
                                                             "verified", "files")}
                                         for rp in reports]}
                entry["lightening"] = main
                html_parts.append(lightening_html(mine, reports, drawings, folder, stem))
            extra[name] = "".join(html_parts)
        (folder / "report.json").write_text(json.dumps(report, indent=2), encoding="utf-8")
        (folder / "report.html").write_text(render_report(report, svgs, extra), encoding="utf-8")


def _summary(report: dict[str, Any]) -> str:
    rows = []
    for p in report["plates"]:
        lt = p.get("lightening")
        if lt is None:
            continue
        worst = [c for c in lt["cases"] if c["limit_mm"] is not None]
        rows.append([p["name"], lt["style"], str(lt["holes"]), f"{lt['mass_before_g']:.1f}",
                     f"{lt['mass_after_g']:.1f}", f"{100 * lt['mass_saved_fraction']:.1f}%",
                     "; ".join(f"{c['name']} {c['deflection_after_mm']:.3g}/{c['limit_mm']:.3g}"
                               for c in worst) or "-"])
    if not rows:
        return "no plate was lightened"
    return ("lightening (finite-element estimates: confirm by test)\n"
            + format_table(["plate", "style", "holes", "mass before g", "mass after g", "saved",
                            "deflection after / limit mm"], rows))
