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


def _share(text: str) -> float:
    """A budget share from the command line (>= 0, finite)."""
    try:
        v = float(text)
    except ValueError as exc:
        raise argparse.ArgumentTypeError(f"'{text}' is not a number (e.g. 0.1)") from exc
    if not (v >= 0.0 and v <= 10.0):
        raise argparse.ArgumentTypeError(f"{text} is not a share between 0 and 10 (e.g. 0.1)")
    return v


def _shares(text: str) -> tuple[float, ...]:
    return tuple(_share(t) for t in text.split(",") if t.strip())


def _pct(x: Any) -> str:
    return "-" if x is None else f"{100 * x:.1f} %"


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
        budget = rep.get("deflection_budget") is not None
        rows = "".join(
            f"<tr><td class='l'>{html.escape(c['name'])}</td><td>{_fmt(c['deflection_before_mm'])}</td>"
            f"<td>{_fmt(c['deflection_after_mm'])}</td><td>{_fmt(c['limit_mm'])}</td>"
            + (f"<td>{_pct(c.get('budget'))}</td><td>{_fmt(c.get('allowed_deflection_mm'))}</td>"
               f"<td>{_pct(c.get('budget_used'))}</td>" if budget else "")
            + f"<td>{_fmt(c['safety_factor_before'])}</td><td>{_fmt(c['safety_factor_after'])}</td>"
            f"<td>{'passes' if c['passes_after'] else 'FAILS'}</td></tr>" for c in rep["cases"])
        parts.append("<table><tr><th class='l'>case</th><th>deflection before mm</th>"
                     "<th>deflection after mm</th><th>limit mm</th>"
                     + ("<th>budget</th><th>allowed mm</th><th>budget used</th>" if budget else "")
                     + "<th>safety factor before</th>"
                     f"<th>safety factor after</th><th>verdict</th></tr>{rows}</table>")
        parts.append(_grey_html(rep))
        parts.append(_region_html(rep))
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


def _grey_html(rep: dict[str, Any]) -> str:
    """The price of manufacturability: the cut holes' saving next to the continuous optimum's,
    and the mass-stiffness chart when a budget curve was asked."""
    from platewright.cli.reports.budget_chart import budget_chart_svg

    grey = rep.get("grey_optimum") or {}
    if grey.get("mass_saved_fraction") is None:
        return ""
    text = ("<p>Continuous (grey) optimum in the same design region"
            + (f" at the same budget ({_pct(rep['deflection_budget'])})"
               if rep.get("deflection_budget") is not None else "")
            + f": {_pct(grey['mass_saved_fraction'])} of the mass saved; the cut holes save "
            f"{_pct(rep['mass_saved_fraction'])}"
            + (f", {_pct(grey['cut_share'])} of it" if grey.get("cut_share") is not None else "")
            + ". The grey optimum counts part-density material as part of the mass; it cannot "
            "be cut, it shows what the manufacturing rules cost.</p>")
    curve = [(c["budget"], c["mass_saved_fraction"]) for c in grey.get("curve", [])
             if c.get("mass_saved_fraction") is not None]
    if not curve:
        return text
    used = [c.get("deflection_after_mm", 0.0) / c["deflection_before_mm"] - 1.0
            for c in rep["cases"] if c.get("deflection_before_mm")]
    label = f"cut holes ({rep['style']}), at the growth they use"
    svg = budget_chart_svg(curve, [(label, max(used, default=0.0), rep["mass_saved_fraction"])])
    return text + f"<div class='drawing'>{svg}</div>"


def _region_html(rep: dict[str, Any]) -> str:
    """The design region and every keep-out with its rule and area (what limits the saving)."""
    region = rep.get("design_region") or {}
    kos = region.get("keep_outs") or []
    if not kos:
        return ""
    rows = "".join(
        f"<tr><td class='l'>{html.escape(k['name'])}</td><td class='l'>{html.escape(k['role'])}</td>"
        f"<td>{_fmt(k['ring_mm'])}</td><td>{_fmt(k['area_mm2'], '.0f')}</td>"
        f"<td class='l'>{html.escape(k['rule'])}</td></tr>" for k in kos)
    return (f"<p>Design region (where holes may go): {_fmt(region.get('area_mm2'), '.0f')} mm², "
            f"{_pct(region.get('fraction'))} of the plate. Keep-outs (areas inside the plate; "
            "they overlap where zones meet; override with lightening.keep_outs):</p>"
            "<table><tr><th class='l'>keep-out</th><th class='l'>role</th><th>ring mm</th>"
            f"<th>area mm²</th><th class='l'>rule</th></tr>{rows}</table>")


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
        parser.add_argument("--pattern-shape", choices=["round", "triangle", "slot", "grid"],
                            help="hole shape of the pattern style (default: the design's, else grid)")
        parser.add_argument("--budget", type=_share, metavar="SHARE",
                            help="stiffness budget: every load case may deflect at most (1 + SHARE) "
                                 "x the solid plate's, e.g. 0.1 (default: the design's "
                                 "lightening.deflection_budget, else only the cases' limits)")
        parser.add_argument("--budget-curve", type=_shares, metavar="S1,S2,...",
                            help="also plot the continuous optimum's saving at these budgets "
                                 "(one optimisation each), e.g. 0.02,0.05,0.1,0.2")

    def run(self, args: argparse.Namespace) -> int:
        from platewright.fea.lighten.design_region import lightening_section
        from platewright.fea.lighten.pipeline import lighten_design

        done = self.analyse(args)
        design, outdir, result, analyses = done.design, done.outdir, done.result, done.analyses
        plates = [b.plate for b in result.plates]
        raw = lightening_section(design) or {}
        style = args.style or raw.get("style") or "organic"
        styles = ["organic", "pattern"] if style == "both" else [style]
        overrides: dict[str, Any] = {}
        if args.pattern_shape:
            overrides["pattern_shape"] = args.pattern_shape
        if args.budget is not None:
            overrides["deflection_budget"] = args.budget
        if args.budget_curve:
            overrides["budget_curve"] = args.budget_curve
        results = lighten_design(design, plates, styles=styles, overrides=overrides or None,
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
    extra: list[str] = []
    for p in report["plates"]:
        lt = p.get("lightening")
        if lt is None:
            continue
        budget = lt.get("deflection_budget")
        cells = []
        for c in lt["cases"]:
            allowed = c.get("allowed_deflection_mm") if budget is not None else c["limit_mm"]
            if allowed is None:
                continue
            used = f" ({100 * c['budget_used']:.0f} % of budget)" \
                if c.get("budget_used") is not None else ""
            cells.append(f"{c['name']} {c['deflection_after_mm']:.3g}/{allowed:.3g}{used}")
        grey = (lt.get("grey_optimum") or {}).get("mass_saved_fraction")
        rows.append([p["name"], lt["style"], str(lt["holes"]), f"{lt['mass_before_g']:.1f}",
                     f"{lt['mass_after_g']:.1f}", f"{100 * lt['mass_saved_fraction']:.1f}%",
                     "-" if grey is None else f"{100 * grey:.1f}%", "; ".join(cells) or "-"])
        region = lt.get("design_region") or {}
        if region.get("keep_outs"):
            by_role: dict[str, list[float]] = {}
            for k in region["keep_outs"]:
                by_role.setdefault(k["role"], []).append(k["area_mm2"] or 0.0)
            extra.append(f"{p['name']}: design region {region['area_mm2']:.0f} mm2 "
                         f"({100 * region['fraction']:.0f} % of the plate); keep-outs "
                         + ", ".join(f"{role} {len(a)} x ({sum(a):.0f} mm2)"
                                     for role, a in by_role.items()))
        if budget is not None:
            extra.append(f"{p['name']}: stiffness budget +{100 * budget:g} % deflection on every "
                         "case, on top of each case's own limits")
    if not rows:
        return "no plate was lightened"
    return ("lightening (finite-element estimates: confirm by test)\n"
            + format_table(["plate", "style", "holes", "mass before g", "mass after g", "saved",
                            "grey optimum", "deflection after / allowed mm"], rows)
            + ("\n" + "\n".join(extra) if extra else ""))
