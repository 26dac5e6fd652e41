"""SVG drawing of one plate's cut paths, 1:1 in millimetres.

The root's ``width``/``height`` are in mm and the ``viewBox`` is in mm, so one user unit is one
millimetre. Plate coordinates have +y up; SVG has +y down, so every point is written as
``(x, -y)`` (text stays upright). Arcs are exact SVG ``A`` commands, full circles ``<circle>``.
One ``<g>`` per layer, with the same layer names as the DXF file as ids (``PW_ENGRAVE``,
``PW_CUT_INNER``, ``PW_CUT_OUTER``); strokes only, hairline width, no fill. Each cut element
carries ``data-feature`` with its feature id. Text is set in the face the DXF names (family
``DejaVu Sans``), its em size chosen so that its capitals are as high as the DXF text, on the same
baseline: the two files show the same label.
"""

from __future__ import annotations

import math
import os
from xml.sax.saxutils import escape, quoteattr

import numpy as np

from platewright.geometry.model import CutContour, Plate
from platewright.geometry.plate.curves import Contour
from platewright.geometry.plate.lettering import LABEL_FONT_FAMILY, em_per_cap
from platewright.geometry.writers.dxf import (
    LAYER_CUT_INNER,
    LAYER_CUT_OUTER,
    LAYER_ENGRAVE,
    polyline_vertices,
)

__all__ = ["plate_svg_string", "write_plate_svg", "svg_text", "HAIRLINE_MM", "MARGIN_MM"]

#: Stroke width of every path, mm (a hairline: lasers read thin strokes as vector cuts).
HAIRLINE_MM = 0.025
#: Empty border around the drawing, mm.
MARGIN_MM = 2.0
#: Stroke colours per layer (platewright's choice, the hues of the DXF layers' ACI colours).
LAYER_COLOURS = {LAYER_ENGRAVE: "#1a9641", LAYER_CUT_INNER: "#0033cc", LAYER_CUT_OUTER: "#cc00cc"}


def svg_num(x: float) -> str:
    """A coordinate in mm, 6 decimals, no trailing zeros, no negative zero."""
    s = f"{x:.6f}".rstrip("0").rstrip(".")
    return "0" if s in ("-0", "") else s


def svg_path_data(contour: Contour) -> str:
    """SVG path data of a closed contour with y flipped; arcs as ``A`` commands."""
    rows = polyline_vertices(contour)
    n = len(rows)
    parts = [f"M {svg_num(rows[0, 0])} {svg_num(-rows[0, 1])}"]
    for i in range(n):
        x0, y0, b = rows[i]
        x1, y1 = rows[(i + 1) % n, :2]
        if b == 0.0:
            parts.append(f"L {svg_num(x1)} {svg_num(-y1)}")
            continue
        theta = 4.0 * math.atan(b)
        chord = math.hypot(x1 - x0, y1 - y0)
        r = chord / (2.0 * abs(math.sin(theta / 2.0)))
        large = 1 if abs(theta) > math.pi else 0
        # a counter-clockwise arc (theta > 0) in +y-up coordinates turns the negative-angle way
        # once y is flipped, which is SVG sweep-flag 0
        sweep = 0 if theta > 0 else 1
        parts.append(f"A {svg_num(r)} {svg_num(r)} 0 {large} {sweep} {svg_num(x1)} {svg_num(-y1)}")
    parts.append("Z")
    return " ".join(parts)


def svg_text(text: str, position_mm: tuple[float, float], height_mm: float, rotation_deg: float,
             feature_id: str) -> str:
    """A ``<text>`` element drawn as the DXF TEXT is: cap height ``height_mm``, anchored at the
    middle of the cap height and the centre of the text, turned ``rotation_deg`` counter-clockwise
    (plate coordinates, mm; y flipped)."""
    x, y = position_mm
    base = -y + height_mm / 2.0  # the baseline lies half a cap height below the anchor
    # rotation is counter-clockwise in plate coordinates, clockwise-positive in SVG
    return (f'<text x="{svg_num(x)}" y="{svg_num(base)}" font-family="{LABEL_FONT_FAMILY}" '
            f'font-size="{svg_num(height_mm * em_per_cap())}" text-anchor="middle" '
            f'transform="rotate({svg_num(-rotation_deg)} {svg_num(x)} {svg_num(-y)})" '
            f"data-feature={quoteattr(feature_id)}>{escape(text)}</text>")


def _extent(plate: Plate, cut: list[CutContour]) -> tuple[float, float, float, float]:
    contours = [c.path for c in cut] or list(plate.outline.contours)
    boxes = np.array([c.bbox() for c in contours])
    return (float(boxes[:, 0].min()), float(boxes[:, 1].min()),
            float(boxes[:, 2].max()), float(boxes[:, 3].max()))


def plate_svg_string(plate: Plate, cut: list[CutContour]) -> str:
    """The SVG markup (str) of the plate's cut paths (mm), inner first, outer last."""
    x0, y0, x1, y1 = _extent(plate, cut)
    vx, vy = x0 - MARGIN_MM, -(y1 + MARGIN_MM)
    w, h = (x1 - x0) + 2 * MARGIN_MM, (y1 - y0) + 2 * MARGIN_MM
    out = [
        '<?xml version="1.0" encoding="UTF-8"?>',
        f'<svg xmlns="http://www.w3.org/2000/svg" version="1.1" width="{svg_num(w)}mm" '
        f'height="{svg_num(h)}mm" viewBox="{svg_num(vx)} {svg_num(vy)} {svg_num(w)} {svg_num(h)}">',
        f"<title>{escape(plate.name)} ({escape(plate.material.name)}, "
        f"{plate.thickness_mm:g} mm, kerf {plate.kerf_mm:g} mm, units mm)</title>",
    ]
    style = f'fill="none" stroke-width="{svg_num(HAIRLINE_MM)}"'
    out.append(f'<g id="{LAYER_ENGRAVE}" fill="{LAYER_COLOURS[LAYER_ENGRAVE]}" stroke="none">')
    for e in plate.engravings:
        out.append(svg_text(e.text, e.position_mm, e.height_mm, e.rotation_deg, e.id))
    out.append("</g>")
    ordered = sorted(cut, key=lambda c: (c.layer != "inner", c.order))
    for layer, which in ((LAYER_CUT_INNER, "inner"), (LAYER_CUT_OUTER, "outer")):
        out.append(f'<g id="{layer}" stroke="{LAYER_COLOURS[layer]}" {style}>')
        for cc in ordered:
            if (cc.layer == "inner") != (which == "inner"):
                continue
            fid = quoteattr(cc.feature_id)
            if cc.path.is_circle:
                (cx, cy), r = cc.path.circle_center_radius()
                out.append(
                    f'<circle cx="{svg_num(cx)}" cy="{svg_num(-cy)}" r="{svg_num(r)}" data-feature={fid}/>'
                )
            else:
                out.append(f'<path d="{svg_path_data(cc.path)}" data-feature={fid}/>')
        out.append("</g>")
    out.append("</svg>")
    return "\n".join(out) + "\n"


def write_plate_svg(plate: Plate, cut: list[CutContour], path: str | os.PathLike) -> None:
    """Write :func:`plate_svg_string` to ``path`` (UTF-8)."""
    with open(os.fspath(path), "w", encoding="utf-8") as fh:
        fh.write(plate_svg_string(plate, cut))
