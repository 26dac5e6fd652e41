"""Small wrong reports of issue 9, item 4: exact edge distances and webs, the strap field's
description, the DXF header's drawing extents. Every expected value is worked by hand here.
"""

from __future__ import annotations

import math

import ezdxf
import pytest
from plate_factory import make_plate, rect_contour, round_hole, rounded_rect_contour, slot_feature

from platewright.geometry.design.schema import describe_schema
from platewright.geometry.plate.cutpaths import cut_paths
from platewright.geometry.plate.rules import check_plate
from platewright.geometry.writers.dxf import write_plate_dxf

T = 3.0
KERF = 0.2  # mm, typical CO2 kerf in 3 mm acrylic (REFERENCE.md, common practice)


def _only(findings, rule):
    hits = [f for f in findings if f.rule == rule]
    assert len(hits) == 1, findings
    return hits[0]


def test_edge_distance_to_a_rounded_corner_is_exact():
    # 100 x 60 plate with 10 mm corner radii: the top-right corner arc has its centre at
    # (40, 20). A 3 mm hole on the corner's diagonal, 5.2 mm from that centre: the material
    # between hole and corner is 10 - 5.2 - 1.5 = 3.3 mm (by hand), below max(1.5 t, d) = 4.5.
    a = 5.2 / math.sqrt(2.0)
    hole = round_hole("h", (40.0 + a, 20.0 + a), 3.0)
    plate = make_plate(rounded_rect_contour(100.0, 60.0, 10.0), (hole,), thickness_mm=T,
                       kerf_mm=KERF)
    f = _only(check_plate(plate), "edge_distance")
    assert f.level == "warning"
    assert f.value == pytest.approx(3.3, abs=1e-9)
    assert "3.300 mm" in f.message


def test_web_between_slot_ends_facing_each_other_is_exact():
    # two 4 mm slots on the x axis, centre distances 10 mm, centred at x = -8 and x = +8.5:
    # the left slot's round end reaches x = -8 + 5 + 2 = -1, the right one's starts at
    # 8.5 - 5 - 2 = 1.5: web 2.5 mm (by hand), below t = 3 -> warning with the exact value
    a = slot_feature("a", (-8.0, 0.0), 4.0, 10.0)
    b = slot_feature("b", (8.5, 0.0), 4.0, 10.0)
    plate = make_plate(rect_contour(100.0, 60.0), (a, b), thickness_mm=T, kerf_mm=KERF)
    f = _only(check_plate(plate), "web")
    assert f.value == pytest.approx(2.5, abs=1e-9)


def test_web_between_a_slot_and_a_rounded_corner_is_exact():
    # a 4 mm slot along the corner's diagonal (45 degrees), its far end-centre 5 mm from the
    # corner centre (40, 20) of a 100 x 60 plate with 10 mm corner radii: the web is
    # 10 - 5 - 2 = 3.0 mm ... but the rule's minimum is t = 3, so move it 0.25 mm further out:
    # end-centre 5.25 mm from the corner centre, web 10 - 5.25 - 2 = 2.75 mm (by hand)
    u = 1.0 / math.sqrt(2.0)
    end = (40.0 + 5.25 * u, 20.0 + 5.25 * u)
    centre = (end[0] - 4.0 * u, end[1] - 4.0 * u)  # centre distance 8: ends 4 mm from the centre
    s = slot_feature("s", centre, 4.0, 8.0, angle_deg=45.0)
    plate = make_plate(rounded_rect_contour(100.0, 60.0, 10.0), (s,), thickness_mm=T,
                       kerf_mm=KERF)
    f = _only(check_plate(plate), "web")
    assert f.value == pytest.approx(2.75, abs=1e-9)


def test_strap_field_says_it_replaces_the_face_pattern():
    text = describe_schema()
    line = next(ln for ln in text.splitlines() if ln.startswith("| `strap`"))
    assert "also" not in line.lower()
    assert "instead" in line.lower()


def test_dxf_header_extents_cover_the_drawing(tmp_path):
    # 100 x 60 rectangle, one 10 mm hole, kerf 0.2: the outline path is the rectangle offset by
    # 0.1 mm, so the cut geometry spans x -50.1 .. 50.1 and y -30.1 .. 30.1 (by hand); the notes
    # are written above the part, left-aligned at the part's left edge x = -50
    plate = make_plate(rect_contour(100.0, 60.0), (round_hole("h", (0.0, 0.0), 10.0),),
                       thickness_mm=T, kerf_mm=KERF)
    path = tmp_path / "p.dxf"
    write_plate_dxf(plate, cut_paths(plate), path)
    doc = ezdxf.readfile(path)
    x0, y0, _ = doc.header["$EXTMIN"]
    x1, y1, _ = doc.header["$EXTMAX"]
    assert x0 == pytest.approx(-50.1, abs=1e-6)
    assert y0 == pytest.approx(-30.1, abs=1e-6)
    assert x1 == pytest.approx(50.1, abs=1e-6)  # the notes are shorter than the part is wide
    top_note = max(e.dxf.insert[1] for e in doc.modelspace().query("TEXT"))
    h = max(e.dxf.height for e in doc.modelspace().query("TEXT"))
    # the highest text reaches at least its cap height above its baseline, and not more than
    # 1.5 x (accents and ascenders are within that for any text face, common practice)
    assert top_note + h <= y1 <= top_note + 1.5 * h


_TRAPEZOID = """\
name: wedge
material: cast_acrylic
thickness_mm: 3
kerf_mm: 0.2
references:
  front_mm: 50
  rear_mm: 50
plates:
  - name: wedge
    label: false
    outline:
      polygon: {points_mm: [[-rear_mm, -30], [front_mm, -10], [front_mm, 10], [-rear_mm, 30]]}
"""


def _compare(tmp_path, a_set, b_set):
    from platewright.cli.commands.compare import load_side
    from platewright.geometry.compare import compare_reports

    path = tmp_path / "wedge.yaml"
    path.write_text(_TRAPEZOID, encoding="utf-8")
    a = load_side(path, a_set, False, "A")
    b = load_side(path, b_set, False, "B")
    return compare_reports(a.report, b.report).plate("wedge")


def test_compare_reports_a_symmetric_stretch_as_a_size_change(tmp_path):
    # both ends move out by 0.5 mm: the outline is 1 mm longer and centred where it was; its area
    # centroid moves (the wide end is at the rear), which is no move of the outline
    p = _compare(tmp_path, [], ["references.front_mm=50.5", "references.rear_mm=50.5"])
    assert p.ids("moved") == []
    (change,) = [f for f in p.features if f.change == "resized"]
    assert change.id == "outline"
    (size,) = change.sizes
    assert size["size"] == "width"
    assert (size["nominal_a_mm"], size["nominal_b_mm"]) == pytest.approx((100.0, 101.0))


def test_compare_reports_a_one_sided_stretch_as_size_and_shift(tmp_path):
    # only the front end moves out, by 2 mm: 2 mm longer, and the outline's box centre moves
    # 1 mm forward (by hand)
    p = _compare(tmp_path, [], ["references.front_mm=52"])
    assert p.ids("resized") == ["outline"]
    (moved,) = [f for f in p.features if f.change == "moved"]
    assert moved.distance_mm == pytest.approx(1.0, abs=1e-6)
