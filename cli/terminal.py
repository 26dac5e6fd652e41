"""Plain-text tables for the terminal summary."""

from __future__ import annotations

from collections.abc import Sequence
from typing import Any

__all__ = ["format_table", "build_summary", "cost_lines"]


def format_table(headers: Sequence[str], rows: Sequence[Sequence[str]]) -> str:
    """A fixed-width table; first column left-aligned, the rest right-aligned."""
    cols = [list(map(str, c)) for c in zip(headers, *rows)]
    widths = [max(len(x) for x in c) for c in cols]

    def line(cells: Sequence[str]) -> str:
        out = []
        for i, (cell, w) in enumerate(zip(cells, widths)):
            out.append(str(cell).ljust(w) if i == 0 else str(cell).rjust(w))
        return "  ".join(out).rstrip()

    sep = "  ".join("-" * w for w in widths)
    return "\n".join([line(headers), sep, *(line(r) for r in rows)])


def build_summary(report: dict[str, Any], outdir: str) -> str:
    """Terminal summary of a build: one row per plate, totals, where the files went."""
    rows = []
    for p in report["plates"]:
        b = p["bbox_mm"]
        errors = sum(1 for f in p["findings"] if f["level"] == "error")
        warnings = sum(1 for f in p["findings"] if f["level"] == "warning")
        rows.append([p["name"], p["material"], f"{p['thickness_mm']:g}", f"{p['kerf_mm']:.2f}",
                     f"{b[2] - b[0]:.1f} x {b[3] - b[1]:.1f}", f"{p['mass_g']:.1f}",
                     str(p["quantity"]), f"{p['cut_length_mm']:.0f}", str(p["pierce_count"]),
                     f"{errors}/{warnings}"])
    table = format_table(["plate", "material", "t mm", "kerf mm", "size mm", "mass g", "qty",
                          "cut mm", "pierces", "err/warn"], rows)
    lines = [f"{report['design']['name']}: {len(rows)} plate(s), total {report['total_mass_g']:.1f} g",
             table]
    for p in report["plates"]:
        for f in p["findings"]:
            lines.append(f"  {f['level']}: {p['name']}: {f['rule']}: {f['message']}")
    lines.extend(f"  caution: {c}" for c in report.get("material_cautions", []))
    lines.extend(cost_lines(report))
    lines.append(f"written to {outdir} (report.html, report.json, plates/)")
    lines.append("Cut safely: fume extraction on, never unattended, no chlorine-bearing plastics.")
    return "\n".join(lines)


def cost_lines(report: dict[str, Any]) -> list[str]:
    """The job's cut time and cost estimate (+-20 % quote band) and its notes, as text lines."""
    job = report.get("job", {}).get("cost")
    if job is None:
        return []
    rng = job.get("total_time_range_s")
    if rng is None:
        text = "cut time: unknown"
    else:
        text = (f"cut time about {job['total_time_s'] / 60.0:.1f} min (quote "
                f"{rng[0] / 60.0:.1f}-{rng[1] / 60.0:.1f} min, +-{job['quote_band'] * 100:.0f} %)")
    cur = job.get("currency", "")
    for label, key in (("machine", "machine_cost"), ("material", "material_cost")):
        if job.get(key) is not None:
            text += f", {label} {job[key]:.2f} {cur}".rstrip()
    out = [f"estimate: {text}"]
    out.extend(f"  estimate note: {n}" for n in job.get("notes", []))
    return out
