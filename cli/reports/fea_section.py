"""The stiffness-and-strength part of the reports: HTML section, plot files and terminal table.

Values come from fea result objects; nothing is computed here.
"""

from __future__ import annotations

import base64
import html
from pathlib import Path
from typing import Any

from platewright.cli.terminal import format_table
from platewright.fea.results import ESTIMATE_NOTE, PlateAnalysis

__all__ = ["write_plots", "plot_figure_html", "fea_html", "fea_summary"]


def _fmt(x: Any, spec: str = ".3g") -> str:
    return "-" if x is None else format(x, spec)


def _pm(value: Any, pct: Any, sign: str = "\u00b1") -> str:
    """A value with its estimated error in per cent: "1.23 +-0.4%" ("+-?" when none)."""
    if value is None:
        return "-"
    return f"{value:.3g} {sign}" + ("?" if pct is None else f"{pct:.2g}%")


def _singular_lines(c: dict[str, Any]) -> list[str]:
    """Plain-words lines on a case's singular points (report.json entry ``c``)."""
    pts = c.get("singular_points") or []
    if not pts:
        return []
    out = [f"design stress read outside {c['exclusion_radius_mm']:g} mm of {len(pts)} singular "
           "point(s); their values depend on the mesh and never set the safety factor:"]
    for p in pts:
        x, y = p["at_mm"]
        out.append(f"{p['kind']} at [{x:g}, {y:g}] mm: {_fmt(p['von_mises_mpa'])} MPa "
                   f"(mesh-dependent) - {p['note']}")
    return out


def _estimate_line(c: dict[str, Any], sign: str = "\u00b1") -> str:
    e = c.get("error_estimate")
    if not e:
        return ""
    state = "within" if e["converged"] else "NOT within"
    return (f"estimated discretisation error: deflection {sign}{_fmt(e['deflection_pct'], '.2g')}%, "
            f"design stress {sign}{_fmt(e['von_mises_pct'], '.2g')}% ({state} the "
            f"{e['target_pct']:g} % target after {e['passes']} mesh(es): {e['stop_reason']})")


def _material_line(c: dict[str, Any]) -> str:
    m = c.get("material_used")
    if not m:
        return ""
    text = (f"solved with {m['name']}: E {m['youngs_modulus_mpa']:g} MPa, Poisson's ratio "
            f"{m['poisson_ratio']:g}")
    if m.get("orthotropic"):
        o = m["orthotropic"]
        text += (f" (orthotropic: E1 {o['E1_mpa']:g}, E2 {o['E2_mpa']:g}, G12 {o['G12_mpa']:g} "
                 f"MPa, nu12 {o['nu12']:g}, grain at {o['grain_deg']:g} degrees)")
    return text


def write_plots(analysis: PlateAnalysis, folder: Path, stem: str) -> dict[str, dict[str, str]]:
    """Write deflection and von Mises PNGs of every case to ``folder/plots``; returns
    ``{case name: {plot name: relative path}}``."""
    from platewright.fea.plots import plot_case

    plots_dir = folder / "plots"
    plots_dir.mkdir(parents=True, exist_ok=True)
    out: dict[str, dict[str, str]] = {}
    for case in analysis.cases:
        if case.fields is None:
            continue
        rel: dict[str, str] = {}
        for name, png in plot_case(case).items():
            path = f"plots/{stem}__{case.name}__{name}.png"
            (folder / path).write_bytes(png)
            rel[name] = path
        out[case.name] = rel
    return out


def plot_figure_html(png: bytes, alt: str, legend_html: str) -> str:
    """A contour plot embedded as a data: URI with its legend (``fea.plots.plot_legend_html``)
    below it, as one figure taking about half the page width."""
    data = base64.b64encode(png).decode("ascii")
    return ('<figure class="plot-figure" style="display:inline-block;vertical-align:top;'
            'width:48%;margin:.3rem">'
            f'<img class="plot" alt="{html.escape(alt)}" style="max-width:100%;margin:0" '
            f'src="data:image/png;base64,{data}"><figcaption>{legend_html}</figcaption></figure>')


def fea_html(analysis: PlateAnalysis, report_fea: dict[str, Any], folder: Path,
             plots: dict[str, dict[str, str]]) -> str:
    """HTML section for one plate's load cases; plots are embedded so the report stands alone,
    each with its legend (title, colour bar, min/max, caution)."""
    from platewright.fea.plots import FIELDS, plot_legend_html

    rows = []
    for c in report_fea["load_cases"]:
        verdict = '<span class="ok">passes</span>' if c["passes"] else '<span class="error">FAILS</span>'
        limits = "; ".join(f"{html.escape(x['name'])} {_fmt(x['value'])} vs {_fmt(x['limit'])} {x['unit']}"
                           + ("" if x["passes"] else " (fails)") for x in c["limits"]) or "none set"
        rows.append(
            f"<tr><td class='l'>{html.escape(c['name'])}</td><td class='l'>{c['family']}</td>"
            f"<td>{_pm(c['max_deflection_mm'], (c.get('error_estimate') or {}).get('deflection_pct'))}</td>"
            f"<td>{_pm(c['max_von_mises_mpa'], (c.get('error_estimate') or {}).get('von_mises_pct'))}</td>"
            f"<td>{_fmt(c['safety_factor'])}</td><td class='l'>{limits}</td><td>{verdict}</td>"
            f"<td>{c['dofs']}</td><td>{_fmt(c['equilibrium_residual'], '.1e')}</td></tr>")
    table = ("<table><tr><th class='l'>case</th><th class='l'>family</th><th>max deflection mm "
             "(\u00b1 estimated error)</th><th>design von Mises MPa (\u00b1 estimated error)</th>"
             "<th>safety factor</th><th class='l'>limits</th><th>verdict</th>"
             "<th>unknowns</th><th>equilibrium residual</th></tr>" + "".join(rows) + "</table>")
    notes = []
    by_name = {c["name"]: c for c in report_fea["load_cases"]}
    for case in analysis.cases:
        rep = by_name.get(case.name, {})
        extra = [_estimate_line(rep), _material_line(rep), *_singular_lines(rep)]
        notes.extend(f"{case.name}: {n}" for n in extra if n)
        notes.extend(f"{case.name}: {n}" for n in case.notes)
        if case.collision is not None:
            col = case.collision
            notes.append(f"{case.name}: collision peak force {col.force_n:.1f} N "
                         f"(F = v sqrt(k m), vehicle mass {col.vehicle_mass_g:.0f} g), bumper travel "
                         f"{col.bumper_travel_mm:.2f} mm, peak deceleration {col.deceleration_g:.1f} "
                         "times gravity")
    note_html = "".join(f"<li>{html.escape(n)}</li>" for n in notes)
    cases = {c.name: c for c in analysis.cases}
    images = []
    for case_name, files in plots.items():
        for plot_name, rel in files.items():
            case = cases.get(case_name)
            legend = (plot_legend_html(case, plot_name) if case is not None
                      and case.fields is not None and plot_name in FIELDS else "")
            images.append(plot_figure_html((folder / rel).read_bytes(),
                                           f"{case_name} {plot_name}", legend))
    return (f"<h3>Stiffness and strength</h3>{table}"
            f"<p class='meta'>{html.escape(ESTIMATE_NOTE)}.</p>"
            + (f"<ul>{note_html}</ul>" if note_html else "") + "".join(images))


def fea_summary(analyses: list[PlateAnalysis]) -> str:
    """Terminal table: one row per plate and load case."""
    rows = []
    lines = []
    for a in analyses:
        for c in a.cases:
            rep = c.to_report()
            e = rep.get("error_estimate") or {}
            rows.append([f"{a.plate}/{c.name}", c.family,
                         _pm(c.max_deflection_mm, e.get("deflection_pct"), "+-"),
                         _fmt(c.limit_mm),
                         _pm(c.max_von_mises_mpa, e.get("von_mises_pct"), "+-"),
                         _fmt(c.safety_factor),
                         str(c.dofs), f"{c.equilibrium_residual:.1e}",
                         "pass" if c.passes else "FAIL"])
            if e and not e["converged"]:
                lines.append(f"{a.plate}/{c.name}: {_estimate_line(rep, '+-')}")
            pts = rep.get("singular_points") or []
            if pts:
                kinds = sorted({p["kind"] for p in pts})
                lines.append(f"{a.plate}/{c.name}: design stress read outside "
                             f"{rep['exclusion_radius_mm']:g} mm of {len(pts)} singular point(s) "
                             f"({', '.join(kinds)}); see the report")
    table = format_table(["plate/case", "family", "defl mm", "limit mm", "design vM MPa", "SF",
                          "unknowns", "residual", "verdict"], rows)
    extra = "".join(f"\n{line}" for line in lines)
    return (table + extra + "\n+-: estimated discretisation error."
            + f"\nEstimates: {ESTIMATE_NOTE}.")
