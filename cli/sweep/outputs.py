"""What a sweep writes: sweep.csv (one row per combination), the mass-against-deflection plot, the
HTML page and the terminal table. Values come from the sweep rows; nothing is computed here
beyond picking the largest deflection of a row for the plot.

Units: masses g, deflections mm, as in the column names.
"""

from __future__ import annotations

import base64
import csv
import html
import io
from collections.abc import Sequence
from typing import Any

from matplotlib.backends.backend_agg import FigureCanvasAgg
from matplotlib.figure import Figure

from platewright.cli.reports.safety import ESTIMATE_NOTE
from platewright.cli.terminal import format_table

__all__ = ["csv_columns", "sweep_csv", "sweep_plot_png", "render_sweep_html", "sweep_summary"]


def _plates(rows: Sequence[dict[str, Any]]) -> list[str]:
    seen: dict[str, None] = {}
    for r in rows:
        for name in r.get("plates", {}):
            seen.setdefault(name, None)
    return list(seen)


def _cases(rows: Sequence[dict[str, Any]]) -> list[str]:
    seen: dict[str, None] = {}
    for r in rows:
        for name in r.get("cases", {}):
            seen.setdefault(name, None)
    return list(seen)


def _lightened(rows: Sequence[dict[str, Any]]) -> list[str]:
    seen: dict[str, None] = {}
    for r in rows:
        for name in r.get("lightened_mass_g", {}):
            seen.setdefault(name, None)
    return list(seen)


def csv_columns(paths: Sequence[str], rows: Sequence[dict[str, Any]]) -> list[str]:
    """Column names of sweep.csv: the varied paths, status, total_mass_g, ``mass_g:PLATE`` per
    plate, per case ``max_deflection_mm:PLATE/CASE``, ``limit_mm:...``, ``safety_factor:...``,
    ``passes:...``, ``lightened_mass_g:PLATE``, ``lightened_saved_fraction:PLATE`` and
    ``lightened_max_deflection_mm:PLATE/CASE`` when lightening ran, notes and error."""
    cols = [*paths, "status", "total_mass_g"]
    cols += [f"mass_g:{p}" for p in _plates(rows)]
    for c in _cases(rows):
        cols += [f"max_deflection_mm:{c}", f"limit_mm:{c}", f"safety_factor:{c}", f"passes:{c}"]
    cols += [f"lightened_mass_g:{p}" for p in _lightened(rows)]
    cols += [f"lightened_saved_fraction:{p}" for p in _lightened(rows)]
    cols += [f"lightened_max_deflection_mm:{c}" for c in _lightened_cases(rows)]
    return [*cols, "notes", "error"]


def _lightened_cases(rows: Sequence[dict[str, Any]]) -> list[str]:
    seen: dict[str, None] = {}
    for r in rows:
        for plate, lt in r.get("lightening", {}).items():
            for case in lt.get("max_deflection_mm", {}):
                seen.setdefault(f"{plate}/{case}", None)
    return list(seen)


def _lightened_value(r: dict[str, Any], key: str, name: str) -> Any:
    if key == "max_deflection_mm":
        plate, _, case = name.partition("/")
        return r.get("lightening", {}).get(plate, {}).get(key, {}).get(case)
    return r.get("lightening", {}).get(name, {}).get(key)


def _cell(v: Any, spec: str) -> str:
    if v is None:
        return ""
    if isinstance(v, bool):
        return "true" if v else "false"
    if isinstance(v, float):
        return format(v, spec)
    return str(v)


def sweep_csv(paths: Sequence[str], rows: Sequence[dict[str, Any]]) -> str:
    """The CSV text: a header row (csv_columns) then one line per row, in the rows' order.
    Masses with 6 decimals (g), deflections, limits and safety factors with 6 significant
    digits; empty cells where a value does not apply."""
    buf = io.StringIO()
    writer = csv.writer(buf, lineterminator="\n")
    writer.writerow(csv_columns(paths, rows))
    plates, cases, light = _plates(rows), _cases(rows), _lightened(rows)
    for r in rows:
        line = [_cell(float(r["values"][p]), ".10g") for p in paths]
        line += [r["status"], _cell(r.get("total_mass_g"), ".6f")]
        line += [_cell(r.get("plates", {}).get(p), ".6f") for p in plates]
        for c in cases:
            v = r.get("cases", {}).get(c, {})
            line += [_cell(v.get("max_deflection_mm"), ".6g"), _cell(v.get("limit_mm"), ".6g"),
                     _cell(v.get("safety_factor"), ".6g"), _cell(v.get("passes"), "")]
        line += [_cell(r.get("lightened_mass_g", {}).get(p), ".6f") for p in light]
        line += [_cell(_lightened_value(r, "mass_saved_fraction", p), ".6f") for p in light]
        line += [_cell(_lightened_value(r, "max_deflection_mm", c), ".6g")
                 for c in _lightened_cases(rows)]
        line += ["; ".join(r.get("notes", [])), r.get("error", "")]
        writer.writerow(line)
    return buf.getvalue()


def _max_deflection(r: dict[str, Any]) -> float | None:
    values = [v["max_deflection_mm"] for v in r.get("cases", {}).values()
              if v.get("max_deflection_mm") is not None]
    return max(values) if values else None


def sweep_plot_png(paths: Sequence[str], rows: Sequence[dict[str, Any]], *, dpi: int = 110) -> bytes:
    """PNG bytes: total mass (g) against the largest deflection of any case (mm) when the rows
    were checked, else against the first varied field; combinations that meet every limit are
    marked with filled green circles, the others with grey crosses. Refused rows are left out."""
    light = [r for r in rows if r.get("lightening")]
    fig = Figure(figsize=(12.0 if light else 7.0, 4.6), dpi=dpi)
    FigureCanvasAgg(fig)
    ax = fig.add_subplot(1, 2 if light else 1, 1)
    if light:
        _lightened_axes(fig.add_subplot(1, 2, 2), paths, light)
    built = [r for r in rows if r["status"] in ("pass", "fail") and r.get("total_mass_g") is not None]
    checked = any(r.get("cases") for r in built)
    for status, style in (("pass", dict(marker="o", color="#1b9e3a", label="meets every limit")),
                          ("fail", dict(marker="x", color="#7a7a7a", label="misses a limit"))):
        sel = [r for r in built if r["status"] == status]
        if checked:
            sel = [r for r in sel if _max_deflection(r) is not None]
            xs = [_max_deflection(r) for r in sel]
        else:
            xs = [float(r["values"][paths[0]]) for r in sel]
        if sel:
            ax.scatter(xs, [r["total_mass_g"] for r in sel], s=36, **style)
    ax.set_xlabel("largest deflection of any load case (mm)" if checked else paths[0])
    ax.set_ylabel("total mass (g)")
    ax.grid(True, alpha=0.3)
    title = "Sweep: mass against deflection" if checked else "Sweep: mass"
    ax.set_title(title + (" (finite-element estimates)" if checked else ""), fontsize=10)
    if built:
        ax.legend(loc="best", fontsize=8)
    fig.tight_layout()
    out = io.BytesIO()
    fig.savefig(out, format="png")
    return out.getvalue()


def _lightened_axes(ax: Any, paths: Sequence[str], rows: Sequence[dict[str, Any]]) -> None:
    """The mass-stiffness curve after lightening: each plate's mass (g) against its largest
    deflection after lightening (mm), one point per combination labelled with the first varied
    field's value; verified suggestions filled, others hollow."""
    plates = _lightened(rows)
    for k, plate in enumerate(plates):
        pts = []
        for r in rows:
            lt = r.get("lightening", {}).get(plate)
            if not lt or not lt.get("max_deflection_mm"):
                continue
            pts.append((max(lt["max_deflection_mm"].values()), lt["mass_after_g"],
                        float(r["values"][paths[0]]), lt.get("verified", False)))
        pts.sort()
        if not pts:
            continue
        color = f"C{k % 10}"
        ax.plot([p[0] for p in pts], [p[1] for p in pts], "-", color=color, alpha=0.5,
                label=f"{plate} after lightening")
        for x, y, v, ok in pts:
            ax.plot([x], [y], "o", color=color, mfc=color if ok else "none")
            ax.annotate(f"{v:g}", (x, y), textcoords="offset points", xytext=(4, 4), fontsize=7)
    ax.set_xlabel("largest deflection after lightening (mm)")
    ax.set_ylabel("plate mass after lightening (g)")
    ax.set_title(f"Mass-stiffness curve (labels: {paths[0]})", fontsize=10)
    ax.grid(True, alpha=0.3)
    ax.legend(loc="best", fontsize=8)


def render_sweep_html(manifest: dict[str, Any], paths: Sequence[str], rows: Sequence[dict[str, Any]],
                      plot_png: bytes) -> str:
    """HTML text of the sweep page: what was varied, the plot (embedded) and the rows."""
    e = html.escape
    cols = csv_columns(paths, rows)
    lines = sweep_csv(paths, rows).splitlines()[1:]
    body = "".join("<tr>" + "".join(f"<td>{e(c)}</td>" for c in next(csv.reader([ln]))) + "</tr>"
                   for ln in lines)
    head = "".join(f"<th>{e(c)}</th>" for c in cols)
    vary = "".join(f"<li>{e(v['path'])}: {v['start']:g} to {v['stop']:g} step {v['step']:g} "
                   f"({len(v['values'])} values)</li>" for v in manifest["vary"])
    data = base64.b64encode(plot_png).decode("ascii")
    counts = {s: sum(1 for r in rows if r["status"] == s) for s in ("pass", "fail", "refused", "error")}
    return f"""<!DOCTYPE html>
<html lang="en"><head><meta charset="utf-8"><title>Sweep - platewright</title><style>
body{{font-family:system-ui,sans-serif;margin:2rem auto;max-width:72rem;color:#1d232a}}
table{{border-collapse:collapse;font-size:.85rem}} td,th{{border:1px solid #c9d3dc;padding:.2rem .45rem}}
th{{background:#eef2f5}} .meta{{color:#56616b;font-size:.9rem}} img{{max-width:100%}}
</style></head><body>
<h1>Sweep of {e(manifest['design']['name'])}</h1>
<p class="meta">Design file {e(manifest['design']['file'])}; {len(rows)} combinations:
{counts['pass']} meet every limit, {counts['fail']} miss one, {counts['refused']} refused,
{counts['error']} failed. Masses in g, deflections in mm.</p>
<ul>{vary}</ul>
<img alt="mass against deflection" src="data:image/png;base64,{data}">
<p class="meta">{e(ESTIMATE_NOTE)}</p>
<table><tr>{head}</tr>{body}</table>
</body></html>
"""


def sweep_summary(paths: Sequence[str], rows: Sequence[dict[str, Any]], outdir: str,
                  computed: int, reused: int, limit: int = 25) -> str:
    """Terminal table of the first ``limit`` rows, the counts and the lightest passing row."""
    table_rows = []
    for r in rows[:limit]:
        d = _max_deflection(r)
        table_rows.append([*(f"{float(r['values'][p]):g}" for p in paths), r["status"],
                           "-" if r.get("total_mass_g") is None else f"{r['total_mass_g']:.2f}",
                           "-" if d is None else f"{d:.4g}", (r.get("error") or "")[:60]])
    out = [format_table([*paths, "status", "mass g", "max defl mm", "error"], table_rows)]
    if len(rows) > limit:
        out.append(f"... {len(rows) - limit} more rows in sweep.csv")
    passing = [r for r in rows if r["status"] == "pass"]
    if passing:
        best = min(passing, key=lambda r: r["total_mass_g"])
        out.append("lightest combination meeting every limit: " + ", ".join(
            f"{p}={float(best['values'][p]):g}" for p in paths) + f" ({best['total_mass_g']:.2f} g)")
    out.append(f"{len(rows)} combinations: {computed} computed now, {reused} from earlier results")
    out.append(f"written to {outdir} (sweep.csv, sweep.html, plots/, results/)")
    return "\n".join(out)
