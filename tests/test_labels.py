"""Engraved labels stay on their part: inside the material, clear of every cut (issue 9, item 2).

The reference measurement here is independent of platewright's: the DXF's text style names a
TrueType file; the test opens that face with fontTools (a general-purpose font library) and adds
up the glyphs' advance widths and outline boxes itself. Conventions of a DXF TEXT (as drawn by
ezdxf): the height is the capital height (the flat top of 'H'), MIDDLE_CENTER anchors the middle
of the cap height and the centre of the advance width. Shapes are checked with shapely.
"""

from __future__ import annotations

import math
import os

import ezdxf
import matplotlib
import pytest
import shapely
from fontTools.ttLib import TTFont

from platewright.geometry.design.loader import load_design_text
from platewright.geometry.plate.pipeline import build_design
from platewright.geometry.shop.nesting import NestItem, SheetSize, nest_parts
from platewright.geometry.writers.dxf import write_plate_dxf
from platewright.geometry.writers.sheet import write_sheet_dxf
from platewright.geometry.writers.svg import plate_svg_string

MARGIN_MM = 1.0  # the margin the README promises between label ink and any cut edge


class Face:
    """A TrueType face read with fontTools: advance widths and glyph boxes in font units."""

    def __init__(self, path: str) -> None:
        self.font = TTFont(path)
        self.cmap = self.font.getBestCmap()
        self.glyf = self.font["glyf"]
        self.hmtx = self.font["hmtx"]
        self.cap = float(self.glyf["H"].yMax)  # cap height: the flat top of 'H'
        self.em = float(self.font["head"].unitsPerEm)

    def box(self, text: str, height: float) -> tuple[float, float, float, float]:
        """Ink box relative to the MIDDLE_CENTER anchor (mm), unrotated."""
        k = height / self.cap
        x = 0.0
        xs, ys = [], []
        for ch in text:
            name = self.cmap.get(ord(ch), ".notdef")
            g = self.glyf[name]
            if getattr(g, "numberOfContours", 0):
                xs += [x + g.xMin, x + g.xMax]
                ys += [g.yMin, g.yMax]
            x += self.hmtx[name][0]
        return (k * (min(xs) - x / 2), k * min(ys) - height / 2,
                k * (max(xs) - x / 2), k * max(ys) - height / 2)

    def polygon(self, text: str, at, height: float, rotation_deg: float) -> shapely.Polygon:
        x0, y0, x1, y1 = self.box(text, height)
        a = math.radians(rotation_deg)
        c, s = math.cos(a), math.sin(a)
        return shapely.Polygon([(at[0] + c * x - s * y, at[1] + s * x + c * y)
                                for x, y in ((x0, y0), (x1, y0), (x1, y1), (x0, y1))])


def face_of(doc) -> Face:
    """The face the DXF's label style names (matplotlib ships that TrueType file)."""
    font_file = doc.styles.get("PW_LABEL").dxf.font
    assert font_file == "DejaVuSans.ttf"
    return Face(os.path.join(matplotlib.get_data_path(), "fonts", "ttf", font_file))


def material_of(doc) -> shapely.Geometry:
    """As-cut material of a one-plate DXF: the outline path minus the hole paths (shapely),
    shrunk by half the kerf on both kinds of path: the part edge (kerf 0.2 in these designs)."""
    polys_out, polys_in = [], []
    for e in doc.modelspace():
        if e.dxf.layer not in ("PW_CUT_INNER", "PW_CUT_OUTER"):
            continue
        path = ezdxf.path.make_path(e)
        poly = shapely.Polygon([(v.x, v.y) for v in path.flattening(0.001)])
        (polys_out if e.dxf.layer == "PW_CUT_OUTER" else polys_in).append(poly)
    outer = shapely.union_all(polys_out).buffer(-0.1)
    holes = shapely.union_all(polys_in).buffer(0.1) if polys_in else shapely.Polygon()
    return outer.difference(holes)


def labels_of(doc):
    return [e for e in doc.modelspace().query("TEXT") if e.dxf.layer == "PW_ENGRAVE"]


def _design(plates: str) -> str:
    return ("name: label test\nmaterial: cast_acrylic\nthickness_mm: 3\nkerf_mm: 0.2\nplates:\n"
            + plates)


def _write(tmp_path, text: str):
    built = build_design(load_design_text(text))
    docs = []
    for b in built.plates:
        path = tmp_path / f"{b.plate.name}.dxf"
        write_plate_dxf(b.plate, list(b.cut), path)
        docs.append(ezdxf.readfile(path))
    return built, docs


def assert_labels_inside(doc) -> None:
    face = face_of(doc)
    room = material_of(doc).buffer(-MARGIN_MM + 0.01)
    for e in labels_of(doc):
        poly = face.polygon(e.dxf.text, e.dxf.align_point, e.dxf.height, e.dxf.rotation)
        assert room.covers(poly), (e.dxf.text, poly.bounds, room.bounds)


def test_default_label_on_a_40mm_plate_stays_inside_with_a_finding(tmp_path):
    text = _design("""\
  - name: tiny
    part_number: TT-001
    outline: {rounded_rect: {width_mm: 40, height_mm: 40, corner_radius_mm: 3}}
    features:
      - {id: m3, type: fastener, at_mm: [0, 8], screw: M3}
""")
    built, (doc,) = _write(tmp_path, text)
    (label,) = labels_of(doc)
    assert_labels_inside(doc)
    # the full default label (name, part number, material, kerf) measured in the named face is
    # far longer than the plate at 3 mm, so the label was shrunk and shortened, never dropped
    face = face_of(doc)
    full = "tiny  TT-001  cast_acrylic 3 mm  kerf 0.20 mm"
    x0, _, x1, _ = face.box(full, 3.0)
    assert x1 - x0 > 60.0
    assert "TT-001" in label.dxf.text and len(label.dxf.text) < len(full)
    assert 2.0 - 1e-9 <= label.dxf.height <= 3.0
    rules = [f for f in built.plates[0].findings if f.rule == "label"]
    assert rules and all(f.level == "warning" for f in rules)
    assert any("shortened" in f.message for f in rules)


def test_label_avoids_holes_along_the_lower_edge(tmp_path):
    # a 160 x 60 plate whose lower band holds a row of 8 mm holes where the default label would
    # go: the label moves to the upper edge (or shrinks) and stays clear of every hole
    text = _design("""\
  - name: rail
    part_number: RL-7
    outline: {rounded_rect: {width_mm: 160, height_mm: 60}}
    features:
      - {id: row, type: fastener_array, at_mm: [0, -20], screw: M8, rows: 1, cols: 7,
         pitch_mm: [20, 0]}
""")
    _, (doc,) = _write(tmp_path, text)
    (label,) = labels_of(doc)
    assert_labels_inside(doc)
    assert label.dxf.align_point[1] > 0.0  # it left the holed lower band


def test_design_text_too_long_anywhere_is_dropped_with_a_finding(tmp_path):
    text = _design("""\
  - name: tab
    outline: {rounded_rect: {width_mm: 30, height_mm: 12}}
    label: {at_mm: [0, 0], height_mm: 3, text: "THIS SIDE UP - FRONT LEFT BRACKET"}
""")
    built, (doc,) = _write(tmp_path, text)
    assert labels_of(doc) == []
    (f,) = [f for f in built.plates[0].findings if f.rule == "label"]
    assert f.level == "warning" and "not engraved" in f.message
    assert built.plates[0].plate.dropped_engravings[0].text == "THIS SIDE UP - FRONT LEFT BRACKET"


def test_label_that_fits_is_engraved_as_asked_without_findings(tmp_path):
    text = _design("""\
  - name: deck
    part_number: DK-1
    outline: {rounded_rect: {width_mm: 200, height_mm: 120, corner_radius_mm: 5}}
""")
    built, (doc,) = _write(tmp_path, text)
    (label,) = labels_of(doc)
    assert label.dxf.text == "deck  DK-1  cast_acrylic 3 mm  kerf 0.20 mm"
    assert label.dxf.height == pytest.approx(3.0)
    assert [f for f in built.plates[0].findings if f.rule == "label"] == []
    assert_labels_inside(doc)


def test_svg_text_matches_the_dxf_face_and_cap_height(tmp_path):
    text = _design("""\
  - name: deck
    outline: {rounded_rect: {width_mm: 200, height_mm: 120}}
    label: {at_mm: [10, -30], height_mm: 4, rotation_deg: 30}
""")
    built, (doc,) = _write(tmp_path, text)
    face = face_of(doc)
    b = built.plates[0]
    svg = plate_svg_string(b.plate, list(b.cut))
    line = next(ln for ln in svg.splitlines() if "<text" in ln)
    assert 'font-family="DejaVu Sans"' in line
    (label,) = labels_of(doc)
    h = label.dxf.height  # the DXF's cap height (the turned label may have been shrunk to fit)
    size = float(line.split('font-size="')[1].split('"')[0])
    # em size = cap height x units per em / cap height in font units
    assert size == pytest.approx(h * face.em / face.cap, rel=1e-5)
    # baseline half a cap height below the anchor (SVG y = -plate y), turned about the anchor
    assert float(line.split(' y="')[1].split('"')[0]) == pytest.approx(30.0 + h / 2, abs=1e-5)
    assert "rotate(-30 10 30)" in line


def test_labels_on_a_nest_sheet_stay_on_their_own_part(tmp_path):
    # small plates with long default labels, nested tightly: every label's ink box (measured in
    # the face the sheet DXF names) lies inside its own part's material, 1 mm clear of every cut,
    # so no label runs across a neighbour
    text = _design("""\
  - name: bracket
    part_number: BR-204
    quantity: 6
    outline: {rounded_rect: {width_mm: 45, height_mm: 30, corner_radius_mm: 3}}
    features:
      - {id: a, type: fastener, at_mm: [-14, 6], screw: M3}
      - {id: b, type: fastener, at_mm: [14, 6], screw: M3}
""")
    built = build_design(load_design_text(text))
    b = built.plates[0]
    result = nest_parts([NestItem("bracket", b.plate, b.cut, 6)],
                        {("cast_acrylic", 3.0): SheetSize(160.0, 120.0)}, spacing_mm=2.0,
                        margin_mm=3.0, rotations="90")
    sheet = result.sheets[0]
    assert any(p.rotation_deg for p in sheet.placements) or len(sheet.placements) > 1
    path = tmp_path / "sheet.dxf"
    write_sheet_dxf(sheet, path, {"bracket": b.plate})
    doc = ezdxf.readfile(path)
    face = face_of(doc)
    parts: dict[str, list] = {}
    for cc in sheet.cut:
        parts.setdefault(cc.feature_id.split("/")[0], []).append(cc)
    material = {}
    for tag, ccs in parts.items():
        outer = [shapely.Polygon(c.part_contour.to_points(0.001)) for c in ccs if c.layer == "outer"]
        holes = [shapely.Polygon(c.part_contour.to_points(0.001)) for c in ccs if c.layer == "inner"]
        material[tag] = shapely.union_all(outer).difference(shapely.union_all(holes))
    texts = labels_of(doc)
    assert len(texts) == len(sheet.placements)
    for e in texts:
        poly = face.polygon(e.dxf.text, e.dxf.align_point, e.dxf.height, e.dxf.rotation)
        owners = [t for t, m in material.items() if m.buffer(-MARGIN_MM + 0.01).covers(poly)]
        assert len(owners) == 1, e.dxf.text
        for t, m in material.items():
            if t not in owners:
                assert not m.intersects(poly)


def test_lightening_keeps_new_holes_off_the_label(tmp_path):
    from platewright.fea.lighten.design_region import design_region

    text = _design("""\
  - name: deck
    part_number: DK-1
    outline: {rounded_rect: {width_mm: 200, height_mm: 120, corner_radius_mm: 5}}
""")
    built, (doc,) = _write(tmp_path, text)
    (label,) = labels_of(doc)
    face = face_of(doc)
    ink = face.polygon(label.dxf.text, label.dxf.align_point, label.dxf.height, label.dxf.rotation)
    free = design_region(built.plates[0].plate).free
    # where new holes may go stays the label margin away from the label's ink
    assert shapely.distance(free, ink) >= MARGIN_MM - 0.01
