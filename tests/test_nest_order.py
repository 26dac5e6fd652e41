"""Nest sheets: exact fits in a window, and layers and colours in cut order (issue 9, items 3
and 4). Parts are hand-built (tests/plate_factory.py); expected values are worked by hand.
"""

from __future__ import annotations

import ezdxf
import pytest
import shapely
from plate_factory import hand_cut_paths, make_plate, rect_contour, round_hole

from platewright.geometry.model import CutContour
from platewright.geometry.shop.nesting import NestItem, SheetSize, nest_parts
from platewright.geometry.writers.dxf import entity_feature_ids, write_plate_dxf
from platewright.geometry.writers.sheet import sheet_svg_string, write_sheet_dxf

SHEET = {("test_acrylic", 3.0): SheetSize(320.0, 220.0)}


def frame(window_w: float, window_h: float, name: str = "frame") -> NestItem:
    """A 300 x 200 mm frame with a centred rectangular window (cut paths = part edges)."""
    outline = rect_contour(300.0, 200.0)
    window = rect_contour(window_w, window_h, ccw=False)
    plate = make_plate(outline, name=name)
    return NestItem(name, plate, (CutContour("window", "inner", 0, window, window),
                                  CutContour("outline", "outer", 1, outline, outline)), 1)


def block(w: float, h: float, qty: int, name: str = "block") -> NestItem:
    c = rect_contour(w, h)
    return NestItem(name, make_plate(c, name=name), (CutContour("outline", "outer", 0, c, c),), qty)


@pytest.mark.parametrize("spacing", [3.0, 2.0, 0.0])
def test_window_sized_for_two_rows_of_three_takes_all_six(spacing):
    # the window holds two rows of three 60 x 40 blocks exactly at the spacing: 3 x 60 + 4 gaps
    # wide, 2 x 40 + 3 gaps high (by hand). On a 320 x 220 sheet with a 5 mm margin the 300 x 200
    # frame leaves no room outside it, so all six blocks must go in the window: one sheet.
    ww, wh = 3 * 60.0 + 4 * spacing, 2 * 40.0 + 3 * spacing
    result = nest_parts([frame(ww, wh), block(60.0, 40.0, 6)], SHEET, spacing_mm=spacing,
                        margin_mm=5.0)
    assert len(result.sheets) == 1
    sheet = result.sheets[0]
    assert sum(1 for p in sheet.placements if p.inside == "frame#1") == 6
    # spacing kept to within the polygon view's tolerance (2 x 0.005 mm chords, plus the round
    # joins' chords): shapely distances between the cut paths, the independent reference
    polys = {}
    for cc in sheet.cut:
        tag = cc.feature_id.split("/")[0]
        polys.setdefault(tag, []).append(shapely.Polygon(cc.path.to_points(0.001)))
    window = shapely.Polygon(next(c.path for c in sheet.cut if c.feature_id == "frame#1/window")
                             .to_points(0.001)).exterior
    blocks = [shapely.union_all(v) for t, v in polys.items() if t.startswith("block")]
    for i, a in enumerate(blocks):
        assert shapely.distance(a, window) >= spacing - 0.015
        for b in blocks[i + 1:]:
            assert shapely.distance(a, b) >= spacing - 0.015


def _nested_sheet():
    # a frame, two holed plates in its window, and a loose part: depths 0 and 1
    holed = make_plate(rect_contour(60.0, 40.0), (round_hole("h1", (0.0, 0.0), 10.0),),
                       name="puck")
    puck = NestItem("puck", holed, tuple(hand_cut_paths(holed)), 2)
    return nest_parts([frame(200.0, 120.0), puck], SHEET).sheets[0]


def test_sheet_layers_colours_and_entities_agree_with_the_cut_order(tmp_path):
    sheet = _nested_sheet()
    assert any(p.inside == "frame#1" for p in sheet.placements)
    path = tmp_path / "sheet.dxf"
    write_sheet_dxf(sheet, path)
    doc = ezdxf.readfile(path)  # ezdxf as the reference reader
    cut = [e for e in doc.modelspace() if entity_feature_ids(e)]
    seq = [(entity_feature_ids(e)[0], e.dxf.layer) for e in cut]
    layer_of = dict(seq)
    # the required order (README, nest page): a nested part's holes, then its outline, before
    # the cut-out that holds it, then the host's outline
    for p in sheet.placements:
        if p.inside:
            assert layer_of[f"{p.tag}/outline"] != layer_of[f"{p.inside}/window"]
    table = [layer.dxf.name for layer in doc.layers if layer.dxf.name.startswith("PW_CUT")]
    colour = {layer.dxf.name: layer.color for layer in doc.layers}
    used = list(dict.fromkeys(layer for _, layer in seq))
    # 1. layers in the layer table, 2. layer names sorted, 3. colour numbers: all in cut order
    assert [n for n in table if n in used] == used
    assert sorted(used) == used
    assert [colour[n] for n in used] == sorted(colour[n] for n in used)
    assert len({colour[n] for n in used}) == len(used)
    # a cutter that cuts layer by layer (in any of those orders) cuts every nested part fully
    # before the window that holds it, and every part's holes before its outline
    rank = {n: k for k, n in enumerate(used)}
    for p in sheet.placements:
        mine = [rank[layer] for f, layer in seq if f.startswith(p.tag + "/")]
        outline = rank[layer_of[f"{p.tag}/outline"]]
        assert all(r <= outline for r in mine)
        if p.inside:
            holder_window = rank[layer_of[f"{p.inside}/window"]]
            assert max(mine) < holder_window
    # the engraving layer comes before every cut layer in the table and by colour
    assert colour["PW_ENGRAVE"] < min(colour[n] for n in used)
    names = [layer.dxf.name for layer in doc.layers]
    assert names.index("PW_ENGRAVE") < min(names.index(n) for n in used)
    # the SVG carries the same layer names
    svg = sheet_svg_string(sheet)
    for n in used:
        assert f'class="{n}"' in svg


def test_plate_file_colours_rise_in_cut_order(tmp_path):
    plate = make_plate(rect_contour(100.0, 60.0), (round_hole("h", (0.0, 0.0), 10.0),))
    path = tmp_path / "p.dxf"
    write_plate_dxf(plate, hand_cut_paths(plate), path)
    doc = ezdxf.readfile(path)
    colour = {layer.dxf.name: layer.color for layer in doc.layers}
    # engrave, then inner cuts, then the outline (REFERENCE.md cut order)
    assert colour["PW_ENGRAVE"] < colour["PW_CUT_INNER"] < colour["PW_CUT_OUTER"]


def test_sheet_without_nesting_keeps_the_plate_layers(tmp_path):
    result = nest_parts([block(60.0, 40.0, 3)], SHEET)
    path = tmp_path / "s.dxf"
    write_sheet_dxf(result.sheets[0], path)
    doc = ezdxf.readfile(path)
    layers = {e.dxf.layer for e in doc.modelspace() if entity_feature_ids(e)}
    assert layers == {"PW_CUT_OUTER"}


_FRAME_DESIGN = """\
name: frame and pucks
material: cast_acrylic
thickness_mm: 3
kerf_mm: 0.2
plates:
  - name: frame
    label: false
    outline: {rounded_rect: {width_mm: 300, height_mm: 200}}
    features:
      - {id: window, type: cutout, at_mm: [0, 0], width_mm: 200, height_mm: 120}
  - name: puck
    label: false
    quantity: 4
    outline: {rounded_rect: {width_mm: 60, height_mm: 40, corner_radius_mm: 4}}
    features:
      - {id: h1, type: fastener, at_mm: [0, 0], screw: M4}
"""


def test_nest_page_and_index_state_the_cut_layers(tmp_path):
    import argparse
    import json

    from platewright.cli.commands.nest import NestCommand

    design = tmp_path / "frame.yaml"
    design.write_text(_FRAME_DESIGN, encoding="utf-8")
    out = tmp_path / "nest"
    cmd = NestCommand()
    parser = argparse.ArgumentParser()
    cmd.add_arguments(parser)
    assert cmd.run(parser.parse_args([str(design), "--sheet", "320x220", "-o", str(out),
                                      "-q"])) == 0
    report = json.loads((out / "nest.json").read_text(encoding="utf-8"))
    (sheet,) = report["sheets"]
    assert sum(1 for p in sheet["placements"] if p["inside"]) == 4
    layers = [c["layer"] for c in sheet["cut_layers"]]
    assert layers == ["PW_CUT1_INNER", "PW_CUT1_OUTER", "PW_CUT2_INNER", "PW_CUT2_OUTER"]
    doc = ezdxf.readfile(out / sheet["files"]["dxf"])
    assert [la.dxf.name for la in doc.layers if la.dxf.name.startswith("PW_CUT")] == layers
    assert [doc.layers.get(n).color for n in layers] == [c["aci"] for c in sheet["cut_layers"]]
    page = (out / "nest.html").read_text(encoding="utf-8")
    assert "Cut order" in page and "PW_CUT1_INNER" in page
    assert "before that cut-out" in page
    notes = " | ".join(e.dxf.text for e in doc.modelspace().query("TEXT")
                       if e.dxf.layer == "PW_NOTES")
    assert "cut order: PW_ENGRAVE, PW_CUT1_INNER, PW_CUT1_OUTER, PW_CUT2_INNER, PW_CUT2_OUTER" in notes
