"""Cut files of one nested sheet: DXF (ezdxf, R2010, mm 1:1) and SVG (mm 1:1).

Same entity kinds, text style and XDATA as the plate files (:mod:`.dxf`, :mod:`.svg`):
``PW_ENGRAVE`` (labels, written first), the cut layers, and the non-plotted ``PW_NOTES`` (sheet
border and sheet notes; DXF only). Circles are CIRCLE entities, every other path a closed
LWPOLYLINE with bulges; feature ids ``label#copy/feature`` ride on each cut entity as XDATA
``PLATEWRIGHT``.

Cut order is the sheet's order (:func:`.nesting.sheet_cut_order`): part by part, inner contours
before the outline, parts sitting in another part's cut-out first. The DXF entities and the SVG
elements are written in exactly that order; in the SVG each cut element carries its layer name
as ``class`` (one ``<g id="PW_CUTS">`` holds them, as the order interleaves the layers).

Cut layers (:func:`sheet_cut_layers`) agree with that order too, for cutters that cut layer by
layer or colour by colour. A sheet where no part sits in another's cut-out uses the plate
files' ``PW_CUT_INNER`` and ``PW_CUT_OUTER``. A sheet with nested parts has one pair of layers
per nesting stage, deepest parts first: ``PW_CUT1_INNER``, ``PW_CUT1_OUTER`` (the parts nested
deepest), ``PW_CUT2_INNER``, ``PW_CUT2_OUTER`` (the parts holding them), ... up to the parts on
the open sheet. So every nested part, holes and outline, is cut before the cut-out that holds
it, whose scrap would otherwise drop with the part on it. The layer table lists the layers in
that order, their names sort in that order and their ACI colour numbers rise in that order
(all above the engraving layer's); the sheet notes list them.

Sheet frame: origin at the sheet's lower-left corner, mm; the SVG flips y as the plate SVG does.
The DXF header's drawing extents hold the sheet border, the cut paths and all text.
"""

from __future__ import annotations

import math
import os
from collections.abc import Mapping
from xml.sax.saxutils import escape, quoteattr

from ezdxf.colors import aci2rgb
from ezdxf.enums import TextEntityAlignment

from platewright.geometry.model import CutContour, Plate
from platewright.geometry.plate.lettering import LABEL_STYLE
from platewright.geometry.shop.nesting import NestedSheet
from platewright.geometry.writers.dxf import (
    LAYER_ENGRAVE,
    LAYER_NOTES,
    NOTE_HEIGHT_MM,
    PLATE_CUT_LAYERS,
    Extents,
    new_cut_document,
    polyline_vertices,
    save_cut_document,
    set_feature_ids,
    write_note_lines,
)
from platewright.geometry.writers.svg import HAIRLINE_MM, LAYER_COLOURS, svg_num, svg_path_data, svg_text

__all__ = ["write_sheet_dxf", "sheet_svg_string", "write_sheet_svg", "sheet_cut_layers"]

#: ACI colour of the first numbered cut layer and the step between them (rising in cut order;
#: 10, 30, 50, ... are hues around the ACI colour wheel, all above the engraving layer's 3).
_STAGE_ACI_FIRST = 10
_STAGE_ACI_STEP = 20


def _stage_name(stage: int, stages: int, kind: str) -> str:
    width = len(str(stages))
    return f"PW_CUT{stage:0{width}d}_{'INNER' if kind == 'inner' else 'OUTER'}"


def _layer_of(sheet: NestedSheet) -> dict[int, str]:
    """Cut layer name of every cut path of the sheet, by its index in ``sheet.cut``."""
    depths = sheet.depths()
    deepest = max(depths.values(), default=0)
    out: dict[int, str] = {}
    for k, cc in enumerate(sheet.cut):
        if deepest == 0:
            out[k] = PLATE_CUT_LAYERS[0][0] if cc.layer == "inner" else PLATE_CUT_LAYERS[1][0]
            continue
        depth = depths.get(cc.feature_id.split("/")[0], 0)
        out[k] = _stage_name(deepest + 1 - depth, deepest + 1, cc.layer)
    return out


def sheet_cut_layers(sheet: NestedSheet) -> list[tuple[str, int]]:
    """The sheet's cut layers in cut order, each with its ACI colour (see the module text).
    Only layers that hold a cut path are listed."""
    used = set(_layer_of(sheet).values())
    deepest = max(sheet.depths().values(), default=0)
    if deepest == 0:
        return [(n, c) for n, c in PLATE_CUT_LAYERS if n in used]
    stages = deepest + 1
    names = [_stage_name(k, stages, kind) for k in range(1, stages + 1) for kind in ("inner", "outer")]
    step = min(_STAGE_ACI_STEP, (255 - _STAGE_ACI_FIRST) // max(1, len(names) - 1))
    return [(n, _STAGE_ACI_FIRST + step * i) for i, n in enumerate(names) if n in used]


def _svg_colour(layer: str, aci: int) -> str:
    if layer in LAYER_COLOURS:
        return LAYER_COLOURS[layer]
    r, g, b = aci2rgb(aci)
    return f"#{r:02x}{g:02x}{b:02x}"


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
    layers = ", ".join(n for n, _ in sheet_cut_layers(sheet))
    return [
        f"sheet {sheet.index}: {sheet.size.width_mm:g} x {sheet.size.height_mm:g} mm",
        f"material: {sheet.material}, thickness {sheet.thickness_mm:g} mm",
        f"parts: {len(sheet.placements)}, utilisation {100.0 * sheet.utilisation:.1f} %",
        f"cut order: {LAYER_ENGRAVE}, {layers}",
        "units: mm",
    ]


def _add_cut(msp, cc: CutContour, layer: str):
    attribs = {"layer": layer}
    if cc.path.is_circle:
        center, r = cc.path.circle_center_radius()
        return msp.add_circle(center, r, dxfattribs=attribs)
    rows = polyline_vertices(cc.path)
    return msp.add_lwpolyline([tuple(r) for r in rows.tolist()], format="xyb", close=True,
                              dxfattribs=attribs)


def write_sheet_dxf(sheet: NestedSheet, path: str | os.PathLike,
                    plates: Mapping[str, Plate] | None = None) -> None:
    """Write the sheet's cut paths (mm, sheet frame, in cut order) to a DXF R2010 file.

    plates: item label -> plate, for the engraved labels (none written when omitted).
    """
    doc = new_cut_document(sheet_cut_layers(sheet))
    msp = doc.modelspace()
    ext = Extents()
    for text, pos, height, rot, _ in _engravings(sheet, plates or {}):
        msp.add_text(text, height=height, rotation=rot,
                     dxfattribs={"layer": LAYER_ENGRAVE, "style": LABEL_STYLE}).set_placement(
            pos, align=TextEntityAlignment.MIDDLE_CENTER)
        ext.add_text(text, pos, height, rot)
    layer_of = _layer_of(sheet)
    for k, cc in enumerate(sheet.cut):
        set_feature_ids(_add_cut(msp, cc, layer_of[k]), (cc.feature_id,))
        ext.add_contour(cc.path)
    w, h = sheet.size.width_mm, sheet.size.height_mm
    msp.add_lwpolyline([(0, 0), (w, 0), (w, h), (0, h)], close=True,
                       dxfattribs={"layer": LAYER_NOTES})
    ext.add(0.0, 0.0, w, h)
    lines = _notes(sheet)
    write_note_lines(msp, lines, 0.0, h + 2.0 * NOTE_HEIGHT_MM + 1.6 * NOTE_HEIGHT_MM * len(lines),
                     ext)
    ext.write(doc)
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
    for text, pos, height, rot, fid in _engravings(sheet, plates or {}):
        out.append(svg_text(text, pos, height, rot, fid))
    out.append("</g>")
    out.append(f'<g id="PW_CUTS" fill="none" stroke-width="{svg_num(HAIRLINE_MM)}">')
    layer_of = _layer_of(sheet)
    colour = {n: _svg_colour(n, aci) for n, aci in sheet_cut_layers(sheet)}
    for k, cc in enumerate(sheet.cut):
        layer = layer_of[k]
        common = f'class="{layer}" stroke="{colour[layer]}" data-feature={quoteattr(cc.feature_id)}'
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
