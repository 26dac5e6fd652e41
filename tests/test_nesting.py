"""Sheet nesting, checked with shapely as the independent geometry reference.

Parts are hand-built (tests/plate_factory.py: rectangles and circles written from their
definitions, cut paths worked by hand), so no expected value comes from the code under test.
"""

from __future__ import annotations

import argparse
import dataclasses
import json
import math
from pathlib import Path

import ezdxf
import numpy as np
import pytest
import shapely
import yaml
from plate_factory import hand_cut_paths, make_plate, rect_contour, round_hole

from platewright.cli.commands.nest import NestCommand
from platewright.geometry.errors import DesignError
from platewright.geometry.model import CutContour
from platewright.geometry.plate.build import bundled_example_path
from platewright.geometry.plate.curves import Contour
from platewright.geometry.shop.nesting import NestItem, SheetSize, nest_parts
from platewright.geometry.writers.dxf import entity_feature_ids
from platewright.geometry.writers.sheet import sheet_svg_string, write_sheet_dxf

#: Geometric slack of the checks (mm): polygon chords (0.005 mm sagitta) plus rounding.
TOL_MM = 0.02


def ring(c: Contour) -> shapely.Polygon:
    """Shapely polygon of a contour from its own points (fine chords), the reference view."""
    return shapely.Polygon(c.to_points(0.001))


def part_polygons(sheet) -> dict[str, shapely.Geometry]:
    """Per placed copy: area inside its outline cut path minus its inner cut paths (sheet frame)."""
    out: dict[str, shapely.Geometry] = {}
    inner: dict[str, list] = {}
    for cc in sheet.cut:
        tag = cc.feature_id.split("/")[0]
        if cc.layer == "outer":
            out[tag] = ring(cc.path)
        else:
            inner.setdefault(tag, []).append(ring(cc.path))
    return {t: shapely.difference(p, shapely.union_all(inner.get(t, []))) for t, p in out.items()}


def holed_plate(name: str, w: float, h: float, hole_d: float | None):
    holes = () if hole_d is None else (round_hole("h1", (0.0, 0.0), hole_d),)
    return make_plate(rect_contour(w, h), holes, name=name)


def item(plate, qty: int) -> NestItem:
    return NestItem(plate.name, plate, tuple(hand_cut_paths(plate)), qty)


def frame_item(qty: int = 1) -> NestItem:
    """A 300 x 200 mm frame with a 200 x 120 mm rectangular window (cut paths = part edges)."""
    outline = rect_contour(300.0, 200.0)
    window = rect_contour(200.0, 120.0, ccw=False)
    plate = make_plate(outline, name="frame")
    cut = (CutContour("window", "inner", 0, window, window),
           CutContour("outline", "outer", 1, outline, outline))
    return NestItem("frame", plate, cut, qty)


def mixed_items() -> list[NestItem]:
    # invented part list of the demo scenario's test-track buggy
    return [item(holed_plate("deck", 180, 120, 40), 2), item(holed_plate("bracket", 60, 40, 8), 6),
            item(holed_plate("strip", 150, 25, None), 4), item(holed_plate("pad", 30, 30, 6), 8)]


def check_sheets(result, spacing: float, margin: float) -> None:
    for sheet in result.sheets:
        w, h = sheet.size.width_mm, sheet.size.height_mm
        polys = part_polygons(sheet)
        tags = list(polys)
        # on the sheet inside the margin (shapely covers on a box)
        inside = shapely.box(margin - TOL_MM, margin - TOL_MM, w - margin + TOL_MM, h - margin + TOL_MM)
        for t in tags:
            assert inside.covers(polys[t]), t
        for i in range(len(tags)):
            for j in range(i + 1, len(tags)):
                a, b = polys[tags[i]], polys[tags[j]]
                # never overlap: shrink both by the tolerance, then no common area (shapely)
                assert a.buffer(-TOL_MM).intersection(b.buffer(-TOL_MM)).area == 0.0
                # spacing between cut paths, including a part and the hole it sits in
                assert shapely.distance(a, b) >= spacing - TOL_MM, (tags[i], tags[j])


def test_parts_never_overlap_and_keep_spacing_and_margin():
    items = mixed_items()
    sheets = {("test_acrylic", 3.0): SheetSize(400.0, 300.0)}
    result = nest_parts(items, sheets, spacing_mm=4.0, margin_mm=6.0)
    check_sheets(result, 4.0, 6.0)
    placed = sorted(p.tag for s in result.sheets for p in s.placements)
    expected = sorted(f"{it.label}#{c}" for it in items for c in range(1, it.quantity + 1))
    assert placed == expected  # every copy exactly once


def test_utilisation_is_parts_area_over_sheet_area():
    result = nest_parts(mixed_items(), {("test_acrylic", 3.0): SheetSize(400.0, 300.0)})
    for sheet in result.sheets:
        # as-cut part area: part_contour outline minus part_contour holes, shapely areas
        outer = [ring(c.part_contour) for c in sheet.cut if c.layer == "outer"]
        holes = [ring(c.part_contour) for c in sheet.cut if c.layer == "inner"]
        area = sum(p.area for p in outer) - sum(p.area for p in holes)
        assert sheet.utilisation == pytest.approx(area / (400.0 * 300.0), rel=1e-4)


def test_small_part_goes_inside_the_cut_out_when_that_is_the_only_way():
    # sheet 320 x 220, margin 5: 310 x 210 usable; the 300 x 200 frame leaves 10 mm outside it,
    # so the 80 x 60 block fits on this one sheet only inside the 200 x 120 window
    block = make_plate(rect_contour(80.0, 60.0), name="block")
    blk = NestItem("block", block, (CutContour("outline", "outer", 0, rect_contour(80.0, 60.0),
                                               rect_contour(80.0, 60.0)),), 1)
    result = nest_parts([frame_item(), blk], {("test_acrylic", 3.0): SheetSize(320.0, 220.0)},
                        spacing_mm=3.0, margin_mm=5.0)
    assert len(result.sheets) == 1
    sheet = result.sheets[0]
    check_sheets(result, 3.0, 5.0)
    window = next(c for c in sheet.cut if c.feature_id == "frame#1/window")
    polys = part_polygons(sheet)
    assert ring(window.path).contains(polys["block#1"])  # shapely: inside the window
    by_tag = {p.tag: p for p in sheet.placements}
    assert by_tag["block#1"].inside == "frame#1"
    seq = [c.feature_id for c in sheet.cut]
    # the block is cut completely before the window that holds it and the frame outline
    assert seq.index("block#1/outline") < seq.index("frame#1/window") < seq.index("frame#1/outline")


def nfdh_sheets(sizes: list[tuple[float, float]], sheet_w: float, sheet_h: float) -> int:
    """Shelf packing of rectangles (w, h), heights decreasing, next-fit shelves and next-fit
    sheets (NFDH, Coffman, Garey, Johnson and Tarjan 1980, SIAM J. Comput. 9(4)). Written here
    independently; sizes already include the spacing, the sheet the matching allowance."""
    sheets = 0
    x = shelf_h = y = 0.0
    for w, h in sorted(sizes, key=lambda s: -s[1]):
        if sheets and x + w <= sheet_w + 1e-9:
            x += w
            continue
        # new shelf
        if sheets and y + shelf_h + h <= sheet_h + 1e-9:
            y += shelf_h
        else:
            sheets += 1
            y = 0.0
        shelf_h, x = h, w
        assert w <= sheet_w and h <= sheet_h
    return sheets


@pytest.mark.parametrize("seed", [1, 2, 3])
def test_sheet_count_no_worse_than_shelf_packing(seed):
    rng = np.random.default_rng(seed)
    spacing, margin, w_sheet, h_sheet = 3.0, 5.0, 400.0, 300.0
    items = []  # 30 to 40 random rectangles: the shelf packing needs 4 or 5 sheets
    for k in range(10):
        w, h = float(rng.uniform(30, 200)), float(rng.uniform(20, 120))
        items.append(item(holed_plate(f"p{k}", w, h, None), int(rng.integers(2, 6))))
    # bounding boxes of the outline cut paths (kerf 0.2 mm: part + 0.2 mm), each grown by the
    # spacing; the usable area grows by one spacing (n parts in a row need n - 1 gaps)
    sizes = []
    for it in items:
        x0, y0, x1, y1 = next(c for c in it.cut if c.layer == "outer").path.bbox()
        sizes += [(x1 - x0 + spacing, y1 - y0 + spacing)] * it.quantity
    shelf = nfdh_sheets(sizes, w_sheet - 2 * margin + spacing, h_sheet - 2 * margin + spacing)
    result = nest_parts(items, {("test_acrylic", 3.0): SheetSize(w_sheet, h_sheet)},
                        spacing_mm=spacing, margin_mm=margin, rotations="none")
    assert len(result.sheets) <= shelf
    check_sheets(result, spacing, margin)


def test_deterministic():
    sheets = {("test_acrylic", 3.0): SheetSize(400.0, 300.0)}
    a = nest_parts(mixed_items(), sheets)
    b = nest_parts(mixed_items(), sheets)
    assert [s.placements for s in a.sheets] == [s.placements for s in b.sheets]


def test_free_rotation_fits_a_part_only_diagonally():
    # a 300 x 20 mm bar on a 260 x 260 sheet, margin 5 (250 usable): at angle t its bounding box
    # is 300 cos t + 20 sin t wide (closed form); at 45 deg that is 226.3 mm, at 0 or 90 it is 300
    bar = NestItem("bar", make_plate(rect_contour(300.0, 20.0), name="bar"),
                   (CutContour("outline", "outer", 0, rect_contour(300.0, 20.0),
                               rect_contour(300.0, 20.0)),), 1)
    sheets = {("test_acrylic", 3.0): SheetSize(260.0, 260.0)}
    with pytest.raises(DesignError):
        nest_parts([bar], sheets, rotations="90")
    result = nest_parts([bar], sheets, rotations="free", spacing_mm=2.0)
    rot = result.sheets[0].placements[0].rotation_deg
    t = math.radians(rot)
    assert 300 * abs(math.cos(t)) + 20 * abs(math.sin(t)) <= 250.0
    check_sheets(result, 2.0, 5.0)


def test_grain_note_when_a_wood_like_part_turns():
    # a 200 x 20 strip on a 100 x 250 sheet (margin 5: 90 x 240 usable) fits only turned 90 deg;
    # with a face grain (orthotropic material) the result says so, and 0/180 only refuses it
    plate = make_plate(rect_contour(200.0, 20.0), name="rail")
    wood = dataclasses.replace(plate, material=dataclasses.replace(
        plate.material, key="test_ply", orthotropic={"E1_mpa": 9000.0, "E2_mpa": 6000.0}))
    it = item(wood, 1)
    sheets = {("test_ply", 3.0): SheetSize(100.0, 250.0)}
    result = nest_parts([it], sheets)
    assert result.sheets[0].placements[0].rotation_deg in (90.0, 270.0)
    assert any("rail" in n and "grain" in n for n in result.notes)
    with pytest.raises(DesignError):
        nest_parts([it], sheets, rotations="180")


def test_part_larger_than_sheet_and_bad_settings_are_refused():
    sheets = {("test_acrylic", 3.0): SheetSize(100.0, 100.0)}
    with pytest.raises(DesignError, match="does not fit"):
        nest_parts([item(holed_plate("big", 120, 50, None), 1)], sheets)
    with pytest.raises(DesignError, match="spacing"):
        nest_parts([item(holed_plate("small", 20, 20, None), 1)], sheets, spacing_mm=-1.0)
    with pytest.raises(DesignError, match="no stock sheet"):
        nest_parts([item(holed_plate("small", 20, 20, None), 1)], {})


def test_sheet_dxf_reads_back_with_layers_closed_entities_and_order(tmp_path):
    result = nest_parts([frame_item(), item(holed_plate("puck", 50, 40, 10), 3)],
                        {("test_acrylic", 3.0): SheetSize(320.0, 220.0)})
    sheet = result.sheets[0]
    path = tmp_path / "sheet.dxf"
    write_sheet_dxf(sheet, path)
    doc = ezdxf.readfile(path)  # ezdxf as the reference reader
    assert doc.header["$INSUNITS"] == 4  # DXF reference: 4 = millimetres
    # a sheet with a part in another's cut-out has numbered cut layers (README, nest page):
    # PW_CUT1_* for the nested parts, PW_CUT2_* for the frame holding them
    assert {"PW_CUT1_INNER", "PW_CUT1_OUTER", "PW_CUT2_INNER", "PW_CUT2_OUTER", "PW_NOTES"} <= {
        layer.dxf.name for layer in doc.layers}
    cuts = [e for e in doc.modelspace() if e.dxf.layer.startswith("PW_CUT")]
    assert len(cuts) == len(sheet.cut)
    seq = []
    for e in cuts:
        assert e.dxftype() == "CIRCLE" or (e.dxftype() == "LWPOLYLINE" and e.closed)
        (fid,) = entity_feature_ids(e)
        seq.append((fid, e.dxf.layer))
    # per part: every inner contour before its outline
    for tag in {f.split("/")[0] for f, _ in seq}:
        mine = [layer.endswith("_OUTER") for f, layer in seq if f.startswith(tag + "/")]
        assert mine[-1] and not any(mine[:-1])
    # parts sitting in the frame's window come before the window
    ids = [f for f, _ in seq]
    for p in sheet.placements:
        if p.inside == "frame#1":
            assert ids.index(f"{p.tag}/outline") < ids.index("frame#1/window")
    assert any(p.inside == "frame#1" for p in sheet.placements)
    svg = sheet_svg_string(sheet)
    assert svg.count('_OUTER"') == sum(1 for c in sheet.cut if c.layer == "outer")


def run_nest(argv: list[str]) -> int:
    parser = argparse.ArgumentParser()
    cmd = NestCommand()
    cmd.add_arguments(parser)
    try:
        return cmd.run(parser.parse_args(argv))
    except DesignError:
        return 2


def test_cli_writes_sheets_json_and_html(tmp_path):
    out = tmp_path / "nest"
    design = str(bundled_example_path())
    assert run_nest([design, "--sets", "3", "--sheet", "400x300", "-o", str(out), "-q"]) == 0
    report = json.loads((out / "nest.json").read_text(encoding="utf-8"))
    assert report["tool"]["name"] == "platewright" and report["kind"] == "nest"
    # the bundled design file itself says how many of each plate (read with PyYAML)
    raw = yaml.safe_load(Path(design).read_text(encoding="utf-8"))
    wanted = {p["name"]: 3 * p.get("quantity", 1) for p in raw["plates"]}
    placed: dict[str, int] = {}
    for s in report["sheets"]:
        for p in s["placements"]:
            placed[p["plate"]] = placed.get(p["plate"], 0) + 1
    assert placed == wanted
    for s in report["sheets"]:
        assert (out / s["files"]["dxf"]).exists() and (out / s["files"]["svg"]).exists()
        assert s["utilisation"] == pytest.approx(s["parts_area_mm2"] / (400.0 * 300.0), rel=1e-4)
    assert "<svg" in (out / "nest.html").read_text(encoding="utf-8")


@pytest.mark.parametrize("argv", [["--qty", "nosuch=2"], ["--sheet", "600by400"],
                                  ["--sheet", "0x400"], ["--sheet", "50x50"]])
def test_cli_bad_input_exits_2_and_writes_nothing(tmp_path, argv):
    out = tmp_path / "nest"
    assert run_nest([str(bundled_example_path()), *argv, "-o", str(out), "-q"]) == 2
    assert not out.exists()
    assert list(Path(tmp_path).iterdir()) == []


def test_cli_two_designs_keep_materials_apart_and_qty_overrides(tmp_path):
    out = tmp_path / "nest"
    rails = Path(bundled_example_path()).parent / "side_rails.yaml"
    argv = [str(bundled_example_path()), str(rails), "--qty", "rail_left=3", "-o", str(out), "-q"]
    assert run_nest(argv) == 0
    report = json.loads((out / "nest.json").read_text(encoding="utf-8"))
    # the design files say which material each plate is of (read with PyYAML)
    material = {}
    for f in (bundled_example_path(), rails):
        raw = yaml.safe_load(Path(f).read_text(encoding="utf-8"))
        for p in raw["plates"]:
            material[p["name"]] = (p.get("material", raw["material"]),
                                   float(p.get("thickness_mm", raw["thickness_mm"])))
    counts: dict[str, int] = {}
    for s in report["sheets"]:
        for p in s["placements"]:
            assert material[p["plate"]] == (s["material"], s["thickness_mm"])
            counts[p["plate"]] = counts.get(p["plate"], 0) + 1
    assert counts["rail_left"] == 3
