"""The human side of ``platewright compare``: overlay drawings, the HTML page and the terminal text.

The overlay puts the two plates' cut-path SVGs (as written by geometry.svg_writer, 1:1 in mm with
``data-feature`` on every cut element) into one drawing: side A in blue, side B in orange, changed
features drawn with a wide stroke. Values come from the comparison; nothing is computed here.
"""

from __future__ import annotations

import html
import xml.etree.ElementTree as ET
from collections.abc import Iterable, Sequence
from typing import Any

from platewright.cli.reports.safety import ESTIMATE_NOTE, SAFETY_NOTES
from platewright.cli.terminal import format_table

__all__ = ["COLOUR_A", "COLOUR_B", "overlay_svg", "render_compare_html", "compare_summary"]

#: Stroke colour of side A and side B in the overlays (platewright's choice).
COLOUR_A = "#1f5fbf"
COLOUR_B = "#d9480f"
_SVG_NS = "http://www.w3.org/2000/svg"
_CUT_LAYERS = ("PW_CUT_INNER", "PW_CUT_OUTER")


def _viewbox(root: ET.Element) -> tuple[float, float, float, float]:
    x, y, w, h = (float(v) for v in root.get("viewBox", "0 0 0 0").split())
    return x, y, x + w, y + h


def _side_group(svg_text: str, side: str, colour: str, changed: set[str]
                ) -> tuple[ET.Element, tuple[float, float, float, float]]:
    """The cut layers of one plate SVG as a ``<g>`` recoloured for ``side``, and its view box."""
    root = ET.fromstring(svg_text)
    group = ET.Element(f"{{{_SVG_NS}}}g", {"id": f"side-{side}", "fill": "none", "stroke": colour})
    for layer in root.iter(f"{{{_SVG_NS}}}g"):
        if layer.get("id") not in _CUT_LAYERS:
            continue
        new = ET.SubElement(group, f"{{{_SVG_NS}}}g", {"id": f"{side}-{layer.get('id')}"})
        for elem in layer:
            copy = ET.SubElement(new, elem.tag, dict(elem.attrib))
            copy.set("stroke", colour)
            copy.set("fill", "none")
            copy.set("vector-effect", "non-scaling-stroke")
            fid = elem.get("data-feature", "")
            if fid in changed:
                copy.set("stroke-width", "3.5")
                copy.set("stroke-opacity", "0.85")
                copy.set("class", "changed")
            else:
                copy.set("stroke-width", "1.2")
    return group, _viewbox(root)


def overlay_svg(svg_a: str | None, svg_b: str | None, changed_a: Iterable[str] = (),
                changed_b: Iterable[str] = (), title: str = "") -> str:
    """One SVG drawing (str) with plate A's cut paths in COLOUR_A and plate B's in COLOUR_B, in
    the shared plate frame (mm; the view box covers both). Elements whose feature id is in
    ``changed_a`` / ``changed_b`` get a wide stroke and ``class="changed"``. A side given as None
    (plate only on the other side) is left out. Raises ValueError when both are None."""
    groups = []
    boxes = []
    for side, text, colour, changed in (("a", svg_a, COLOUR_A, set(changed_a)),
                                        ("b", svg_b, COLOUR_B, set(changed_b))):
        if text is None:
            continue
        g, box = _side_group(text, side, colour, changed)
        groups.append(g)
        boxes.append(box)
    if not groups:
        raise ValueError("overlay_svg needs at least one side")
    x0 = min(b[0] for b in boxes)
    y0 = min(b[1] for b in boxes)
    x1 = max(b[2] for b in boxes)
    y1 = max(b[3] for b in boxes)
    w, h = x1 - x0, y1 - y0
    ET.register_namespace("", _SVG_NS)
    root = ET.Element(f"{{{_SVG_NS}}}svg", {
        "version": "1.1", "width": f"{w:.6g}mm", "height": f"{h:.6g}mm",
        "viewBox": f"{x0:.6g} {y0:.6g} {w:.6g} {h:.6g}"})
    if title:
        ET.SubElement(root, f"{{{_SVG_NS}}}title").text = title
    root.extend(groups)
    return ET.tostring(root, encoding="unicode") + "\n"


def _e(x: object) -> str:
    return html.escape(str(x))


def _f(x: Any, spec: str = ".3f") -> str:
    return "-" if x is None else format(x, spec)


def _signed(x: Any, spec: str = "+.3f") -> str:
    return "-" if x is None else format(x, spec)


def _table(headers: Sequence[str], rows: Sequence[Sequence[str]]) -> str:
    head = "".join(f"<th>{_e(h)}</th>" for h in headers)
    body = "".join("<tr>" + "".join(f"<td>{c}</td>" for c in r) + "</tr>" for r in rows)
    return f"<table><tr>{head}</tr>{body}</table>"


def _feature_rows(plate: dict[str, Any]) -> list[list[str]]:
    rows = []
    for f in plate["features_moved"]:
        a, b = f["center_a_mm"], f["center_b_mm"]
        rows.append([_e(f["id"]), _e(f["kind"]), "moved",
                     f"({a[0]:.3f}, {a[1]:.3f}) → ({b[0]:.3f}, {b[1]:.3f}) mm, "
                     f"{f['distance_mm']:.3f} mm"])
    for f in plate["features_resized"]:
        parts = [f"{s['size']}: nominal {_f(s['nominal_a_mm'])} → {_f(s['nominal_b_mm'])} mm, "
                 f"cut path {_f(s['cut_a_mm'])} → {_f(s['cut_b_mm'])} mm" for s in f["sizes"]]
        rows.append([_e(f["id"]), _e(f["kind"]), "resized", _e("; ".join(parts))])
    for f in plate["features_rotated"]:
        rows.append([_e(f["id"]), _e(f["kind"]), "rotated",
                     f"{f['angle_a_deg']:.3f} → {f['angle_b_deg']:.3f} deg"])
    for f in plate["features_removed"]:
        c = f["center_a_mm"]
        rows.append([_e(f["id"]), _e(f["kind"]), "removed", f"was at ({c[0]:.3f}, {c[1]:.3f}) mm"])
    for f in plate["features_added"]:
        c = f["center_b_mm"]
        rows.append([_e(f["id"]), _e(f["kind"]), "added", f"at ({c[0]:.3f}, {c[1]:.3f}) mm"])
    return rows


def _case_rows(plate: dict[str, Any]) -> list[list[str]]:
    rows = []
    for c in plate["load_cases"]:
        d, s, p = c["max_deflection_mm"], c["safety_factor"], c["passes"]

        def verdict(x: bool | None) -> str:
            return "-" if x is None else ('<span class="ok">passes</span>' if x
                                          else '<span class="error">FAILS</span>')

        rows.append([_e(c["name"]), _f(d["a"], ".4g"), _f(d["b"], ".4g"), _signed(d["delta"], "+.3g"),
                     _f(s["a"], ".4g"), _f(s["b"], ".4g"), _signed(s["delta"], "+.3g"),
                     f"{verdict(p['a'])} → {verdict(p['b'])}"])
    return rows


_CSS = """
body{font-family:system-ui,sans-serif;margin:2rem auto;max-width:68rem;color:#1d232a;line-height:1.4}
h2{margin-top:2rem;border-bottom:2px solid #c9d3dc} table{border-collapse:collapse;margin:.6rem 0}
td,th{border:1px solid #c9d3dc;padding:.25rem .55rem;text-align:left;font-size:.92rem}
th{background:#eef2f5} .meta{color:#56616b;font-size:.9rem}
.drawing{border:1px solid #c9d3dc;background:#fbfcfd;padding:.5rem}
.drawing svg{max-width:100%;height:auto;max-height:32rem;display:block;margin:auto}
.key-a{color:#1f5fbf;font-weight:600} .key-b{color:#d9480f;font-weight:600}
.ok{color:#1b6b3a} .error{color:#a4161a;font-weight:600}
.caution{background:#fff6e0;border-left:6px solid #d98c00;padding:.6rem 1rem;margin:1rem 0}
"""


def render_compare_html(doc: dict[str, Any], overlays: dict[str, str]) -> str:
    """HTML text of the comparison page. ``doc``: compare.json content; ``overlays[plate name]``:
    overlay SVG markup (every plate of either side)."""
    a, b = doc["a"], doc["b"]
    t = doc["total_mass_g"]
    rows = [[_e(p["name"]), "both", _f(p["mass_g"]["a"], ".2f"), _f(p["mass_g"]["b"], ".2f"),
             _signed(p["mass_g"]["delta"], "+.2f"),
             _signed(p["inertia_g_mm2"]["Izz"]["delta"], "+.4g"),
             str(sum(len(p[k]) for k in ("features_moved", "features_resized", "features_rotated",
                                         "features_removed", "features_added")))]
            for p in doc["plates"]]
    rows += [[_e(n), "B only", "-", "", "", "", ""] for n in doc["plates_added"]]
    rows += [[_e(n), "A only", "", "-", "", "", ""] for n in doc["plates_removed"]]
    sections = []
    for p in doc["plates"]:
        props = "".join(f"<li>{_e(k)}: {_e(v['a'])} → {_e(v['b'])}</li>"
                        for k, v in p["properties"].items())
        feats = _feature_rows(p)
        ftable = (_table(["feature", "kind", "change", "detail"], feats) if feats
                  else "<p>No feature changed.</p>")
        inertia = _table(["", "A g·mm²", "B g·mm²", "B − A"],
                         [[k, _f(v["a"], ".5g"), _f(v["b"], ".5g"), _signed(v["delta"], "+.4g")]
                          for k, v in p["inertia_g_mm2"].items()])
        cases = ""
        if p["load_cases"]:
            cases = ("<h3>Stiffness and strength (estimates)</h3>"
                     + _table(["case", "deflection A mm", "deflection B mm", "B − A",
                               "SF A", "SF B", "B − A", "verdict A → B"], _case_rows(p))
                     + f"<p class='meta'>{_e(ESTIMATE_NOTE)}</p>")
        sections.append(
            f"<h2>Plate {_e(p['name'])}</h2>"
            f"<div class='drawing'>{overlays.get(p['name'], '')}</div>"
            f"<p class='meta'><span class='key-a'>A</span> {_e(a['name'])}, "
            f"<span class='key-b'>B</span> {_e(b['name'])}; changed features drawn wide.</p>"
            + (f"<ul>{props}</ul>" if props else "")
            + f"<p>Mass {_f(p['mass_g']['a'], '.2f')} g → {_f(p['mass_g']['b'], '.2f')} g "
              f"({_signed(p['mass_g']['delta'], '+.2f')} g); centroid moved "
              f"{p['centroid_mm']['moved_mm']:.3f} mm.</p>"
            + ftable + "<h3>Mass moments of inertia about the centroid</h3>" + inertia + cases)
    for n in doc["plates_added"] + doc["plates_removed"]:
        side = "B" if n in doc["plates_added"] else "A"
        sections.append(f"<h2>Plate {_e(n)} (only in {side})</h2>"
                        f"<div class='drawing'>{overlays.get(n, '')}</div>")
    cautions = "".join(f"<li>{_e(s)}</li>" for s in SAFETY_NOTES)
    return f"""<!DOCTYPE html>
<html lang="en"><head><meta charset="utf-8"><title>Comparison - platewright</title>
<style>{_CSS}</style></head><body>
<h1>Comparison</h1>
<p><span class="key-a">A</span>: {_e(a['name'])} ({_e(a['file'])})<br>
<span class="key-b">B</span>: {_e(b['name'])} ({_e(b['file'])})</p>
<p class="meta">All lengths in mm, masses in g; changes are B minus A.</p>
<p>Total mass {_f(t['a'], '.2f')} g → {_f(t['b'], '.2f')} g
(<strong>{_signed(t['delta'], '+.2f')} g</strong>).</p>
{_table(["plate", "on", "mass A g", "mass B g", "B − A g", "ΔIzz g·mm²", "changed features"], rows)}
{''.join(sections)}
<div class="caution"><strong>Safety</strong><ul>{cautions}</ul></div>
</body></html>
"""


def compare_summary(doc: dict[str, Any], outdir: str) -> str:
    """Terminal text of a comparison: one row per plate, then each changed feature."""
    t = doc["total_mass_g"]
    lines = [f"A: {doc['a']['name']}  B: {doc['b']['name']}",
             f"total mass {t['a']:.2f} g -> {t['b']:.2f} g ({t['delta']:+.2f} g)"]
    rows = [[p["name"], f"{p['mass_g']['a']:.2f}", f"{p['mass_g']['b']:.2f}",
             f"{p['mass_g']['delta']:+.2f}", str(len(p["features_moved"])),
             str(len(p["features_resized"])), str(len(p["features_removed"])),
             str(len(p["features_added"]))] for p in doc["plates"]]
    lines.append(format_table(["plate", "mass A g", "mass B g", "delta g", "moved", "resized",
                               "removed", "added"], rows))
    lines += [f"  plate added: {n}" for n in doc["plates_added"]]
    lines += [f"  plate removed: {n}" for n in doc["plates_removed"]]
    for p in doc["plates"]:
        for k, v in p["properties"].items():
            lines.append(f"  {p['name']}: {k} {v['a']} -> {v['b']}")
        for f in p["features_moved"]:
            lines.append(f"  {p['name']}: moved {f['id']} by {f['distance_mm']:.3f} mm")
        for f in p["features_resized"]:
            for s in f["sizes"]:
                lines.append(f"  {p['name']}: resized {f['id']} {s['size']} nominal "
                             f"{_f(s['nominal_a_mm'])} -> {_f(s['nominal_b_mm'])} mm, cut "
                             f"{_f(s['cut_a_mm'])} -> {_f(s['cut_b_mm'])} mm")
        for f in p["features_rotated"]:
            lines.append(f"  {p['name']}: rotated {f['id']} {f['angle_a_deg']:.3f} -> "
                         f"{f['angle_b_deg']:.3f} deg")
        lines += [f"  {p['name']}: removed {f['id']}" for f in p["features_removed"]]
        lines += [f"  {p['name']}: added {f['id']}" for f in p["features_added"]]
        for c in p["load_cases"]:
            d, s = c["max_deflection_mm"], c["safety_factor"]
            lines.append(f"  {p['name']}/{c['name']}: deflection {_f(d['a'], '.4g')} -> "
                         f"{_f(d['b'], '.4g')} mm, safety factor {_f(s['a'], '.4g')} -> "
                         f"{_f(s['b'], '.4g')}")
    lines.append(f"written to {outdir} (compare.html, compare.json, overlays/)")
    return "\n".join(lines)
