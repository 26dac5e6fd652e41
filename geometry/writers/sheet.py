"""Cut files of one nested sheet: DXF (ezdxf, R2010, mm 1:1) and SVG (mm 1:1).

Same layers, colours, entity kinds and XDATA as the plate files (:mod:`.dxf_writer`,
:mod:`.svg_writer`): ``PW_ENGRAVE`` (labels, written first), ``PW_CUT_INNER``, ``PW_CUT_OUTER``
and the non-plotted ``PW_NOTES`` (sheet border and sheet notes; DXF only). Circles are CIRCLE
entities, every other path a closed LWPOLYLINE with bulges; feature ids ``label#copy/feature``
ride on each cut entity as XDATA ``PLATEWRIGHT``.

Cut order is the sheet's order (:func:`.nesting.sheet_cut_order`): part by part, inner contours
before the outline, parts sitting in another part's hole first. The DXF entities and the SVG
elements are written in exactly that order; in the SVG each cut element carries its layer name
as ``class`` (one ``<g id="PW_CUTS">`` holds them, as the order interleaves the two layers).

Sheet frame: origin at the sheet's lower-left corner, mm; the SVG flips y as the plate SVG does.
"""

from __future__ import annotations

import math
import os
from collections.abc import Mapping
from xml.sax.saxutils import escape, quoteattr

from ezdxf.enums import TextEntityAlignment

from platewright.geometry.model import Plate
from platewright.geometry.shop.nesting import NestedSheet
from platewright.geometry.writers.dxf import (
    LAYER_CUT_INNER,
    LAYER_CUT_OUTER,
    LAYER_ENGRAVE,
    LAYER_NOTES,
    NOTE_HEIGHT_MM,
    new_cut_document,
    polyline_vertices,
    save_cut_document,
    set_feature_ids,
)
from platewright.geometry.writers.svg import HAIRLINE_MM, LAYER_COLOURS, svg_num, svg_path_data

__all__ = ["write_sheet_dxf", "sheet_svg_string", "write_sheet_svg"]


def _layer(kind: str) -> str:
    return LAYER_CUT_INNER if kind == "inner" else LAYER_CUT_OUTER


def _engravings(sheet: NestedSheet, plates: Mapping[str, Plate]):
    """(text, (x, y) mm, height mm, rotation deg, id) of every placed part's labels."""
    for p in sheet.placements:
        plate = plates.get(p.label)
        if plate is None:
            continue
        a = math.radians(p.rotation_deg)
        for e in plate.engravings:
            x, y = e.position_mm
            xs = math.cos(a) * x - math.sin(a) * y + p.x_mm
            ys = math.sin(a) * x + math.cos(a) * y + p.y_mm
            yield e.text, (xs, ys), e.height_mm, e.rotation_deg + p.rotation_deg, f"{p.tag}/{e.id}"


def _notes(sheet: NestedSheet) -> list[str]:
    return [
        f"sheet {sheet.index}: {sheet.size.width_mm:g} x {sheet.size.height_mm:g} mm",
        f"material: {sheet.material}, thickness {sheet.thickness_mm:g} mm",
        f"parts: {len(sheet.placements)}, utilisation {100.0 * sheet.utilisation:.1f} %",
        "units: mm",
    ]


def write_sheet_dxf(sheet: NestedSheet, path: str | os.PathLike,
                    plates: Mapping[str, Plate] | None = None) -> None:
    """Write the sheet's cut paths (mm, sheet frame, in cut order) to a DXF R2010 file.

    plates: item label -> plate, for the engraved labels (none written when omitted).
    """
    doc = new_cut_document()
    msp = doc.modelspace()
    for text, pos, height, rot, _ in _engravings(sheet, plates or {}):
        msp.add_text(text, height=height, rotation=rot,
                     dxfattribs={"layer": LAYER_ENGRAVE}).set_placement(
            pos, align=TextEntityAlignment.MIDDLE_CENTER)
    for cc in sheet.cut:
        attribs = {"layer": _layer(cc.layer)}
        if cc.path.is_circle:
            center, r = cc.path.circle_center_radius()
            entity = msp.add_circle(center, r, dxfattribs=attribs)
        else:
            rows = polyline_vertices(cc.path)
            entity = msp.add_lwpolyline([tuple(r) for r in rows.tolist()], format="xyb",
                                        close=True, dxfattribs=attribs)
        set_feature_ids(entity, (cc.feature_id,))
    w, h = sheet.size.width_mm, sheet.size.height_mm
    msp.add_lwpolyline([(0, 0), (w, 0), (w, h), (0, h)], close=True,
                       dxfattribs={"layer": LAYER_NOTES})
    gap = 1.6 * NOTE_HEIGHT_MM
    lines = _notes(sheet)
    top = h + 2.0 * NOTE_HEIGHT_MM + gap * len(lines)
    for k, line in enumerate(lines):
        msp.add_text(line, height=NOTE_HEIGHT_MM, dxfattribs={"layer": LAYER_NOTES}
                     ).set_placement((0.0, top - gap * k), align=TextEntityAlignment.LEFT)
    save_cut_document(doc, path)


def sheet_svg_string(sheet: NestedSheet, plates: Mapping[str, Plate] | None = None) -> str:
    """The SVG markup (str) of the sheet, 1:1 mm; the viewBox is the sheet itself."""
    w, h = sheet.size.width_mm, sheet.size.height_mm
    out = [
        '<?xml version="1.0" encoding="UTF-8"?>',
        f'<svg xmlns="http://www.w3.org/2000/svg" version="1.1" width="{svg_num(w)}mm" '
        f'height="{svg_num(h)}mm" viewBox="0 {svg_num(-h)} {svg_num(w)} {svg_num(h)}">',
        f"<title>{escape('; '.join(_notes(sheet)))}</title>",
        f'<g id="{LAYER_ENGRAVE}" fill="{LAYER_COLOURS[LAYER_ENGRAVE]}" stroke="none">',
    ]
    for text, (x, y), height, rot, fid in _engravings(sheet, plates or {}):
        out.append(
            f'<text x="{svg_num(x)}" y="{svg_num(-y)}" font-size="{svg_num(height)}" text-anchor="middle" '
            f'dominant-baseline="central" transform="rotate({svg_num(-rot)} {svg_num(x)} {svg_num(-y)})" '
            f"data-feature={quoteattr(fid)}>{escape(text)}</text>")
    out.append("</g>")
    out.append(f'<g id="PW_CUTS" fill="none" stroke-width="{svg_num(HAIRLINE_MM)}">')
    for cc in sheet.cut:
        layer = _layer(cc.layer)
        common = f'class="{layer}" stroke="{LAYER_COLOURS[layer]}" data-feature={quoteattr(cc.feature_id)}'
        if cc.path.is_circle:
            (cx, cy), r = cc.path.circle_center_radius()
            out.append(f'<circle cx="{svg_num(cx)}" cy="{svg_num(-cy)}" r="{svg_num(r)}" {common}/>')
        else:
            out.append(f'<path d="{svg_path_data(cc.path)}" {common}/>')
    out.append("</g>")
    out.append("</svg>")
    return "\n".join(out) + "\n"


def write_sheet_svg(sheet: NestedSheet, path: str | os.PathLike,
                    plates: Mapping[str, Plate] | None = None) -> None:
    """Write :func:`sheet_svg_string` to ``path`` (UTF-8)."""
    with open(os.fspath(path), "w", encoding="utf-8") as fh:
        fh.write(sheet_svg_string(sheet, plates))
