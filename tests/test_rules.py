"""Manufacturability rules on hand-built plates; every expected value is worked out here by hand.

Limits tested (REFERENCE.md, common practice): web >= t (or the material's min_web_mm),
hole-to-edge >= max(1.5 t, d), features >= t and >= 1 mm, holes wider than 2 x kerf.
"""

from __future__ import annotations

import math
import time

import pytest
from plate_factory import (
    make_plate,
    rect_contour,
    round_hole,
    slot_feature,
)

from platewright.geometry.model import Feature
from platewright.geometry.plate.curves import circle
from platewright.geometry.plate.rules import RULE_NAMES, check_plate, has_errors

T = 3.0  # sheet thickness, mm
KERF = 0.2  # mm, typical CO2 kerf in 3 mm acrylic (REFERENCE.md, common practice)


def _only(findings, rule):
    hits = [f for f in findings if f.rule == rule]
    assert len(hits) == 1, findings
    return hits[0]


def test_clean_plate_has_no_findings():
    # 120 x 80 plate, four ISO 273 medium M3 clearance holes (3.4 mm) 10 mm in from each edge:
    # edge distance 10 - 1.7 = 8.3 >= max(1.5 t, d) = 4.5 (common practice); hole pitch 100 / 60
    # mm; a 22 mm bore (608 bearing outside diameter, ISO 15) in the middle.
    holes = tuple(
        round_hole(f"m3_{i}", (sx * 50.0, sy * 30.0), 3.4)
        for i, (sx, sy) in enumerate([(-1, -1), (1, -1), (1, 1), (-1, 1)])
    )
    bore = round_hole("bore", (0.0, 0.0), 22.0, fit_allowance_mm=-0.1, kind="bore")
    plate = make_plate(rect_contour(120.0, 80.0), (*holes, bore), thickness_mm=T, kerf_mm=KERF)
    findings = check_plate(plate, bed_mm=(600.0, 400.0))
    assert findings == []
    assert not has_errors(findings)


def test_web_between_two_holes_is_centre_distance_minus_radii():
    # as-cut radii: (8 + 0.2) / 2 and 6 / 2; centre distance 9 mm:
    # web = 9 - 4.1 - 3 = 1.9 mm (closed form), below t = 3 (warning) and above
    # max(0.5 t, kerf) = 1.5 (no error).
    a = round_hole("a", (0.0, 0.0), 8.0, fit_allowance_mm=0.2)
    b = round_hole("b", (9.0, 0.0), 6.0)
    plate = make_plate(rect_contour(100.0, 60.0), (a, b), thickness_mm=T, kerf_mm=KERF)
    web = _only(check_plate(plate), "web")
    assert web.level == "warning"
    assert set(web.features) == {"a", "b"}
    assert web.value == pytest.approx(9.0 - 4.1 - 3.0, abs=1e-9)
    assert web.limit == pytest.approx(T)
    assert "mm" in web.message


def test_web_below_half_minimum_is_an_error_and_touching_is_an_error():
    # web = 5.2 - 2 - 2 = 1.2 mm < max(0.5 * 3, 0.2) = 1.5 -> error
    thin = make_plate(
        rect_contour(100.0, 60.0),
        (round_hole("a", (0.0, 0.0), 4.0), round_hole("b", (5.2, 0.0), 4.0)),
    )
    f = _only(check_plate(thin), "web")
    assert f.level == "error"
    assert f.value == pytest.approx(1.2, abs=1e-9)
    # tangent circles: centre distance = r1 + r2, web 0 -> error, not an overlap
    touch = make_plate(
        rect_contour(100.0, 60.0),
        (round_hole("a", (0.0, 0.0), 4.0), round_hole("b", (4.0, 0.0), 4.0)),
    )
    f = _only(check_plate(touch), "web")
    assert f.level == "error"
    assert f.value == pytest.approx(0.0, abs=1e-9)


def test_material_min_web_replaces_thickness():
    # min_web 5 mm: web 9 - 2 - 2 = 5.0 passes, web 8.5 - 4 = 4.5 warns with limit 5
    ok = make_plate(
        rect_contour(100.0, 60.0),
        (round_hole("a", (0.0, 0.0), 4.0), round_hole("b", (9.0, 0.0), 4.0)),
        min_web_mm=5.0,
    )
    assert [f for f in check_plate(ok) if f.rule == "web"] == []
    warn = make_plate(
        rect_contour(100.0, 60.0),
        (round_hole("a", (0.0, 0.0), 4.0), round_hole("b", (8.5, 0.0), 4.0)),
        min_web_mm=5.0,
    )
    f = _only(check_plate(warn), "web")
    assert (f.level, f.limit) == ("warning", 5.0)
    assert f.value == pytest.approx(4.5, abs=1e-9)


def test_two_contours_of_one_feature_are_checked_against_each_other():
    pair = Feature(
        "pattern", "mount_hole", (0.0, 0.0),
        (circle((-3.0, 0.0), 1.7, ccw=False), circle((3.0, 0.0), 1.7, ccw=False)),
    )
    plate = make_plate(rect_contour(100.0, 60.0), (pair,))
    f = _only(check_plate(plate), "web")
    assert f.features == ("pattern",)
    assert f.value == pytest.approx(6.0 - 3.4, abs=1e-9)  # centre distance - 2 r


def test_slot_to_outline_web_uses_straight_edges():
    # stadium slot, width 4, axis along x, its upper straight edge at y = 30 - 2: web to the top
    # edge of the 60 mm high outline = 2 mm (straight lines, exact in the polygon view).
    s = slot_feature("s", (0.0, 30.0 - 2.0 - 2.0), 4.0, 20.0)
    plate = make_plate(rect_contour(100.0, 60.0), (s,))
    f = _only(check_plate(plate), "web")
    assert set(f.features) == {"s", "outline"}
    assert f.level == "warning"
    assert f.value == pytest.approx(2.0, abs=1e-6)


def test_hole_near_edge():
    # d = 4 mm, centre 4 mm from the right edge: edge distance 4 - 2 = 2 mm
    # < max(1.5 t, d) = 4.5 mm (common practice, sheet metal) -> warning
    plate = make_plate(rect_contour(100.0, 60.0), (round_hole("h", (50.0 - 4.0, 0.0), 4.0),))
    f = _only(check_plate(plate), "edge_distance")
    assert f.level == "warning"
    assert set(f.features) == {"h", "outline"}
    assert f.value == pytest.approx(2.0, abs=1e-6)
    assert f.limit == pytest.approx(4.5)
    # 2 + 4.5 + 0.1 mm from the edge: clean
    far = make_plate(rect_contour(100.0, 60.0), (round_hole("h", (50.0 - 6.6, 0.0), 4.0),))
    assert check_plate(far) == []


def test_overlap_is_an_error_with_the_lens_area():
    # two circles r = R = 3, centres 4 apart: lens area (circle-circle intersection, e.g.
    # Weisstein, MathWorld "Circle-Circle Intersection"):
    # A = 2 r^2 acos(d / 2r) - (d / 2) sqrt(4 r^2 - d^2)
    r, d = 3.0, 4.0
    lens = 2 * r * r * math.acos(d / (2 * r)) - (d / 2) * math.sqrt(4 * r * r - d * d)
    plate = make_plate(
        rect_contour(100.0, 60.0),
        (round_hole("a", (0.0, 0.0), 2 * r), round_hole("b", (d, 0.0), 2 * r)),
    )
    findings = check_plate(plate)
    f = _only(findings, "feature_overlap")
    assert f.level == "error" and set(f.features) == {"a", "b"}
    # the polygon view puts chords of sagitta <= 5 um (CHORD_TOL_MM) on the arcs, so the area
    # may fall short by at most (arc length of the lens) x 5 um, never more
    arcs = 2 * (2 * r * math.acos(d / (2 * r)))
    assert lens - arcs * 0.005 <= f.value <= lens + 1e-9
    assert [g for g in findings if g.rule == "web"] == []  # reported once, as an overlap
    assert has_errors(findings)


def test_feature_outside_outline():
    # r = 3 circle centred 1 mm inside the right edge reaches 3 - 1 = 2 mm outside
    plate = make_plate(rect_contour(100.0, 60.0), (round_hole("h", (49.0, 0.0), 6.0),))
    f = _only(check_plate(plate), "feature_outside")
    assert f.level == "error" and f.features == ("h",)
    assert f.value == pytest.approx(2.0, abs=1e-6)


def test_bed_size_either_orientation():
    plate = make_plate(rect_contour(300.0, 200.0))
    assert check_plate(plate, bed_mm=(300.0, 200.0)) == []
    assert check_plate(plate, bed_mm=(250.0, 400.0)) == []  # fits turned by 90 degrees
    f = _only(check_plate(plate, bed_mm=(250.0, 250.0)), "bed_size")
    assert f.level == "error"
    assert (f.value, f.limit) == (300.0, 250.0)
    assert check_plate(plate) == []  # no bed given: not checked


def test_tiny_and_small_holes():
    plate = make_plate(
        rect_contour(100.0, 60.0),
        (round_hole("tiny", (-20.0, 0.0), 0.8), round_hole("small", (20.0, 0.0), 2.0)),
    )
    found = {f.features[0]: f for f in check_plate(plate) if f.rule == "feature_size"}
    # 0.8 mm < 1 mm (common practice: details below 1 mm are fragile) -> error
    assert found["tiny"].level == "error" and found["tiny"].limit == 1.0
    assert found["tiny"].value == pytest.approx(0.8, abs=1e-12)
    # 2 mm < t = 3 mm (common practice: hole >= thickness) -> warning
    assert found["small"].level == "warning" and found["small"].limit == T
    # kerf 0.6 mm (waterjet-like, REFERENCE.md range): 1.1 mm < 2 x kerf = 1.2 mm -> error
    wide_kerf = make_plate(
        rect_contour(100.0, 60.0), (round_hole("h", (0.0, 0.0), 1.1),), kerf_mm=0.6
    )
    f = _only(check_plate(wide_kerf), "feature_size")
    assert f.level == "error" and f.limit == pytest.approx(1.2)


def test_narrow_slot_width():
    # slot width 2 mm < t = 3 mm -> warning; the width is the inscribed circle diameter, exact
    # for the straight sides up to the shapely tolerance of 5 um
    plate = make_plate(rect_contour(100.0, 60.0), (slot_feature("s", (0.0, 0.0), 2.0, 10.0, 30.0),))
    f = _only(check_plate(plate), "feature_size")
    assert f.level == "warning"
    assert f.value == pytest.approx(2.0, abs=0.011)


def test_unreachable_slot_travel():
    # 100 mm wide plate, slot width 6 along x centred at 0, travel 90 asked. A bore of 6 mm
    # with a 3 mm (= t) edge margin can sit with its centre at |x| <= 50 - 3 - 3 = 44, so the
    # reachable travel centred on the slot is 2 x 44 = 88 mm.
    slot = slot_feature("s", (0.0, 0.0), 6.0, 90.0, travel_mm=90.0)
    f = _only(check_plate(make_plate(rect_contour(100.0, 60.0), (slot,))), "slot_travel")
    assert f.level == "error" and f.features == ("s",)
    assert f.value == pytest.approx(88.0, abs=0.01)
    assert f.limit == 90.0
    # a slot 30 degrees off the x axis, centred at (20, 0), travel 20: along the axis the
    # centre may move until x = 44 (distance 24 / cos 30) or |y| = 30 - 6 = 24 (24 / sin 30),
    # and 20 mm to the left is far from every edge: reachable 2 x min(...) > 20 -> no finding
    ok = slot_feature("s", (20.0, 0.0), 6.0, 20.0, angle_deg=30.0, travel_mm=20.0)
    plate = make_plate(rect_contour(100.0, 60.0), (ok,))
    assert [g for g in check_plate(plate) if g.rule == "slot_travel"] == []
    # same slot, travel 60: reachable = 2 x 24 / cos 30 = 55.43 mm
    far = slot_feature("s", (20.0, 0.0), 6.0, 20.0, angle_deg=30.0, travel_mm=60.0)
    f = _only(check_plate(make_plate(rect_contour(100.0, 60.0), (far,))), "slot_travel")
    assert f.value == pytest.approx(2 * 24.0 / math.cos(math.radians(30.0)), abs=0.02)


def test_500_hole_grid_counts_and_speed():
    # 25 x 20 grid of 3 mm holes at 5.5 mm pitch: web = 5.5 - 3 = 2.5 mm < t (warning) between
    # row and column neighbours, diagonal web 5.5 sqrt(2) - 3 = 4.78 mm is fine.
    # Expected pairs: rows (cols - 1) + cols (rows - 1) = 20 * 24 + 25 * 19 = 955.
    cols, rows, p = 25, 20, 5.5
    holes = tuple(
        round_hole(f"h{i}_{j}", ((i - (cols - 1) / 2) * p, (j - (rows - 1) / 2) * p), 3.0)
        for i in range(cols) for j in range(rows)
    )
    plate = make_plate(rect_contour(cols * p + 20.0, rows * p + 20.0), holes)
    start = time.perf_counter()
    findings = check_plate(plate)
    elapsed = time.perf_counter() - start
    webs = [f for f in findings if f.rule == "web"]
    assert len(webs) == 20 * 24 + 25 * 19
    assert all(f.level == "warning" and f.value == pytest.approx(2.5, abs=1e-9) for f in webs)
    assert len(findings) == len(webs)
    assert elapsed < 10.0  # generous: shared CI machine; measured well under this


def test_rule_names_are_reported_names():
    plate = make_plate(rect_contour(100.0, 60.0), (round_hole("h", (49.0, 0.0), 0.5),))
    assert {f.rule for f in check_plate(plate, bed_mm=(10.0, 10.0))} <= set(RULE_NAMES)
