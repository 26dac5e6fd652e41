"""The human report: one self-contained HTML file that opens in any browser.

It shows each plate's drawing, the nominal-against-cut dimension table, mass properties, findings
and the safety notes. Values come from the report dictionary (report.json) and the built plates;
nothing is computed here.
"""

from __future__ import annotations

import html
from collections.abc import Sequence
from typing import Any

from platewright.cli.reports.safety import ESTIMATE_NOTE, SAFETY_NOTES

__all__ = ["render_report"]

REPORT_CSS = """
body{font-family:system-ui,sans-serif;margin:2rem auto;max-width:68rem;color:#1d232a;line-height:1.4}
h1{font-size:1.6rem;margin-bottom:.2rem} h2{margin-top:2.2rem;border-bottom:2px solid #c9d3dc}
table{border-collapse:collapse;margin:.6rem 0;font-size:.92rem}
td,th{border:1px solid #c9d3dc;padding:.25rem .55rem;text-align:right}
th{background:#eef2f5} td.l,th.l{text-align:left}
.caution{background:#fff6e0;border-left:6px solid #d98c00;padding:.6rem 1rem;margin:1rem 0}
.drawing{border:1px solid #c9d3dc;background:#fbfcfd;padding:.5rem;overflow:auto}
.drawing svg{max-width:100%;height:auto;max-height:32rem;display:block;margin:auto}
.drawing svg circle,.drawing svg path{vector-effect:non-scaling-stroke;stroke-width:1.5px}
.error{color:#a4161a;font-weight:600} .warning{color:#8a5a00} .ok{color:#1b6b3a}
.meta{color:#56616b;font-size:.9rem} img.plot{max-width:48%;border:1px solid #c9d3dc;margin:.3rem}
"""


def _e(x: object) -> str:
    return html.escape(str(x))


def _num(x: object, nd: int = 3) -> str:
    if x is None:
        return "-"
    if isinstance(x, float):
        return f"{x:.{nd}f}"
    return _e(x)


_TEXT_HEADERS = {"note", "message"}


def _table(headers: Sequence[str], rows: Sequence[Sequence[str]], left: int = 1) -> str:
    """An HTML table; the first ``left`` columns and any note/message column are left-aligned."""
    cls = ['l' if i < left or h in _TEXT_HEADERS else '' for i, h in enumerate(headers)]
    head = "".join(f'<th class="{c}">{_e(h)}</th>' for c, h in zip(cls, headers))
    body = "".join(
        "<tr>" + "".join(f'<td class="{c}">{v}</td>' for c, v in zip(cls, r)) + "</tr>"
        for r in rows
    )
    return f"<table><tr>{head}</tr>{body}</table>"


_DIM_FIELDS = (
    ("nominal_diameter_mm", "cut_diameter_mm", "finished_diameter_mm", "diameter"),
    ("nominal_width_mm", "cut_width_mm", "finished_width_mm", "width"),
    ("length_mm", "cut_length_mm", "", "length"),
    ("width_mm", "cut_width_mm", "", "width"),
    ("height_mm", "cut_height_mm", "", "height"),
)


def _dimension_rows(features: list[dict[str, Any]]) -> list[list[str]]:
    rows = []
    for f in features:
        for nominal_key, cut_key, finished_key, label in _DIM_FIELDS:
            if nominal_key in f and cut_key in f:
                rows.append([
                    _e(f["id"]), _e(f["kind"]), label, _num(f[nominal_key]),
                    _e(f.get("fit_class", "")), _num(f.get("fit_allowance_mm", 0.0)),
                    _num(f[finished_key]) if finished_key in f else "",
                    _num(f[cut_key]), _e(f.get("note", "")),
                ])
        if "travel_mm" in f:
            trim = ""
            if "trim_deg" in f:
                trim = f" ({_num(f['trim_deg'], 2)} deg over {_num(f['span_mm'], 1)} mm)"
            rows.append([_e(f["id"]), _e(f["kind"]), "trim travel", _num(f["travel_mm"]), "", "",
                         "", "", "travel" + trim])
    return rows


def _money(x: object, currency: str) -> str:
    return "-" if x is None else f"{x:.2f} {_e(currency)}".strip()


def _minutes(seconds: object) -> str:
    return "-" if seconds is None else f"{seconds / 60.0:.1f}"


def _cost_section(report: dict[str, Any]) -> str:
    """Cut time and cost table (per plate, quantity 1; the job with quantities and set-up)."""
    job = report.get("job", {}).get("cost")
    if job is None:
        return ""
    rows = []
    for p in report["plates"]:
        c = p.get("cost")
        if c is None:
            continue
        rows.append([_e(p["name"]), str(p["quantity"]), _num(c["cut_length_mm"], 0), str(c["pierces"]),
                     _minutes(c["total_time_s"]), _money(c["machine_cost"], c["currency"]),
                     _money(c["material_cost"], c["currency"])])
    rng = job.get("total_time_range_s")
    rows.append(["<strong>job</strong>", "", _num(job["cut_length_mm"], 0), str(job["pierces"]),
                 _minutes(job["total_time_s"]), _money(job["machine_cost"], job["currency"]),
                 _money(job["material_cost"], job["currency"])])
    band = f"{job['quote_band'] * 100:.0f}"
    quote = ""
    if rng is not None:
        quote = (f"<p>Job time about <strong>{_minutes(job['total_time_s'])} min</strong> "
                 f"(quote ±{band} %: {_minutes(rng[0])} to {_minutes(rng[1])} min), "
                 f"including set-up {_minutes(job['setup_time_s'])} min; total cost "
                 f"{_money(job['total_cost'], job['currency'])}.</p>")
    notes = "".join(f"<li>{_e(n)}</li>" for n in job.get("notes", []))
    notes_html = f'<ul class="meta">{notes}</ul>' if notes else ""
    return f"""
<h2>Cut time and cost (estimate)</h2>
<p class="meta">From the machine profile: cut length / cut speed + pierces × pierce time + rapid
travel / rapid speed (+ set-up once per job); machine cost at the hourly rate, material cost as the
plate's share of a stock sheet (no nesting waste). Per-plate rows are for one plate without set-up;
the job row counts quantities. Quote ±{band} % (common practice); measure your own speeds.</p>
{quote}
{_table(["plate", "qty", "cut mm, one", "pierces, one", "time min, one", "machine cost, one",
         "material cost, one"], rows)}
{notes_html}
"""


def _plate_section(p: dict[str, Any], svg_markup: str, extra_html: str) -> str:
    inertia = p["inertia_g_mm2"]
    mass_rows = [
        ["area", f"{p['area_mm2']:.1f} mm²"], ["mass", f"{p['mass_g']:.2f} g"],
        ["centroid", f"({p['centroid_mm'][0]:.3f}, {p['centroid_mm'][1]:.3f}) mm"],
        ["Ixx, Iyy, Izz about centroid",
         f"{inertia['Ixx']:.4g}, {inertia['Iyy']:.4g}, {inertia['Izz']:.4g} g·mm²"],
        ["Ixy about centroid", f"{inertia['Ixy']:.4g} g·mm²"],
        ["cut length, pierces", f"{p['cut_length_mm']:.1f} mm, {p['pierce_count']}"],
    ]
    findings = p["findings"]
    if findings:
        frows = [[f'<span class="{_e(f["level"])}">{_e(f["level"])}</span>', _e(f["rule"]),
                  _e(", ".join(f["features"])), _num(f["value"]), _num(f["limit"]), _e(f["message"])]
                 for f in findings]
        ftable = _table(["level", "rule", "features", "value", "limit", "message"], frows, left=3)
    else:
        ftable = '<p class="ok">No manufacturability findings.</p>'
    files = ", ".join(f'<a href="{_e(v)}">{_e(k.upper())}</a>' for k, v in p["files"].items())
    return f"""
<h2 id="plate-{_e(p['name'])}">Plate {_e(p['name'])}</h2>
<p class="meta">{_e(p['material'])}, {p['thickness_mm']:g} mm thick, kerf {p['kerf_mm']:g} mm,
quantity {p['quantity']}, part number {_e(p['part_number'] or '-')}. Files: {files}</p>
<div class="drawing">{svg_markup}</div>
<h3>Mass properties</h3>{_table(["quantity", "value"], mass_rows)}
<h3>Dimensions: nominal against cut path</h3>
<p class="meta">Finished is the size as it comes off the machine (nominal + fit allowance). The cut
path is where the cutter's centre runs: holes are cut smaller and the outline larger by the kerf,
after the fit allowance is applied.</p>
{_table(["feature", "kind", "dimension", "nominal mm", "fit", "allowance mm", "finished mm",
         "cut path mm", "note"],
        _dimension_rows(p["features"]), left=3)}
<h3>Manufacturability</h3>{ftable}
{extra_html}
"""


def render_report(report: dict[str, Any], svgs: dict[str, str],
                  extra: dict[str, str] | None = None) -> str:
    """HTML text of the report. ``svgs[plate name]`` is the plate drawing's SVG markup;
    ``extra[plate name]`` optional further HTML (analysis sections) placed after the plate."""
    extra = extra or {}
    d = report["design"]
    cautions = "".join(f"<li>{_e(s)}</li>" for s in SAFETY_NOTES)
    cautions += "".join(f"<li><strong>Material:</strong> {_e(s)}</li>"
                        for s in report.get("material_cautions", []))
    summary_rows = [[_e(p["name"]), _e(p["material"]), _num(p["thickness_mm"], 1), _num(p["kerf_mm"], 2),
                     _num(p["mass_g"], 2), str(p["quantity"]),
                     f"{p['bbox_mm'][2] - p['bbox_mm'][0]:.1f} × {p['bbox_mm'][3] - p['bbox_mm'][1]:.1f}",
                     str(sum(1 for f in p["findings"] if f["level"] == "error")),
                     str(sum(1 for f in p["findings"] if f["level"] == "warning"))]
                    for p in report["plates"]]
    sections = "".join(_plate_section(p, svgs.get(p["name"], ""), extra.get(p["name"], ""))
                       for p in report["plates"])
    return f"""<!DOCTYPE html>
<html lang="en"><head><meta charset="utf-8">
<title>{_e(d['name'])} - platewright report</title><style>{REPORT_CSS}</style></head>
<body>
<h1>{_e(d['name'])}</h1>
<p class="meta">Design file {_e(d['file'])} (sha256 {_e(d['sha256'][:16])}…),
platewright {_e(report['tool']['version'])}, machine {_e(report['machine']['name'])}.
All lengths in mm, masses in g.</p>
<div class="caution"><strong>Safety</strong><ul>{cautions}</ul><p>{_e(ESTIMATE_NOTE)}</p></div>
<h2>Summary</h2>
<p>Total mass of all plates (with quantities): <strong>{report['total_mass_g']:.2f} g</strong>.</p>
{_table(["plate", "material", "t mm", "kerf mm", "mass g", "qty", "size mm", "errors", "warnings"],
        summary_rows, left=2)}
{_cost_section(report)}
{sections}
</body></html>
"""
