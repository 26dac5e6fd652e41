"""Plate assembly from design files: regenerating with changed references, outlines, labels,
source lines, and the starter designs' edge distances and webs.

Expected values are worked by hand in each test from the design text; geometric checks use
shapely (a general-purpose geometry library) on polylines built from the contours.
"""

from __future__ import annotations

import math

import pytest
from shapely.geometry import Polygon

from platewright.geometry.design.loader import load_design, load_design_text
from platewright.geometry.plate.build import build_plates, list_templates

STARTERS = {p.stem: p for p in list_templates()}
CHORD_MM = 0.002  # polyline tolerance for the shapely checks below


def _centres(plates):
    return {(p.name, f.id): f.center_mm for p in plates for f in p.features}


@pytest.mark.parametrize("stem, new_wb", [("four_wheel_deck", 181.0), ("side_rails", 140.0)])
def test_changed_wheelbase_moves_exactly_the_features_tied_to_it(stem, new_wb):
    path = STARTERS[stem]
    before = load_design(path)
    old_wb = before.references["wheelbase_mm"]
    a = build_plates(before)
    b = build_plates(load_design(path, [f"references.wheelbase_mm={new_wb}"]))
    ca, cb = _centres(a), _centres(b)
    assert ca.keys() == cb.keys()
    # In both files the rear axle is at -wheelbase/2 and the front axle at +wheelbase/2, and
    # the bumper is placed from the front axle: so rear features move by -dw/2 in x, front and
    # bumper features by +dw/2, nothing moves in y, everything else stays (worked by hand).
    dw = new_wb - old_wb
    tied = {k for k, f in ((( p.name, f.id), f) for p in a for f in p.features)
            if "wheelbase_mm" in f.refs}
    expected_tied = {k for k in ca if "rear" in k[1] or "front" in k[1] or "bumper" in k[1]}
    assert tied == expected_tied and tied
    for key in ca:
        (xa, ya), (xb, yb) = ca[key], cb[key]
        if key in tied:
            sign = -1.0 if "rear" in key[1] else 1.0
            assert xb - xa == pytest.approx(sign * dw / 2, abs=1e-9), key
        else:
            assert xb == pytest.approx(xa, abs=1e-12), key
        assert yb == pytest.approx(ya, abs=1e-12), key


def test_around_outline_grows_with_the_wheelbase():
    path = STARTERS["four_wheel_deck"]
    d = load_design(path)
    wb, track = d.references["wheelbase_mm"], d.references["track_mm"]
    margin = d.references["corner_margin_mm"]
    x0, y0, x1, y1 = build_plates(d)[0].outline.contours[0].bbox()
    # the file asks for a rectangle around x = +-wb/2, y = +-track/2 plus the margin
    assert (x1 - x0, y1 - y0) == pytest.approx((wb + 2 * margin, track + 2 * margin))
    x0, _, x1, _ = build_plates(load_design(path, ["references.wheelbase_mm=200"]))[0] \
        .outline.contours[0].bbox()
    assert x1 - x0 == pytest.approx(200 + 2 * margin)


def test_trim_slots_follow_span_and_angle():
    d = load_design(STARTERS["side_rails"])
    rail = build_plates(d)[0]
    slot = rail.feature("trim_front")
    span, trim = d.references["track_mm"], d.references["trim_deg"]
    # travel = span * tan(trim); for 150 mm and 2 degrees: 150 * 0.0349208 = 5.238 mm
    assert slot.dims["travel_mm"] == pytest.approx(span * math.tan(math.radians(trim)))
    assert slot.dims["travel_mm"] == pytest.approx(5.2381, abs=1e-4)
    assert slot.dims["length_mm"] == pytest.approx(d.references["axle_mm"] + 5.2381, abs=1e-4)


def test_features_carry_their_source_path_line_and_refs():
    text = STARTERS["two_wheel_base"].read_text(encoding="utf-8")
    plate = build_plates(load_design(STARTERS["two_wheel_base"]))[0]
    lines = text.splitlines()
    for f in plate.features:
        base_id = f.id.split(".")[0]
        want = next(i + 1 for i, t in enumerate(lines) if f"{{id: {base_id}," in t)
        assert f.source_line == want, f.id
        assert f.source_path.startswith("plates[0].features[")
    assert plate.feature("caster.hole1").refs == ("caster_x_mm", "deck_length_mm")
    assert plate.feature("board.hole1").refs == ("board_x_mm",)


def test_default_label_names_plate_part_material_and_kerf():
    text = """\
name: label test
material: cast_acrylic
thickness_mm: 3
kerf_mm: 0.17
plates:
  - name: deck
    part_number: QX-7
    outline: {rounded_rect: {width_mm: 120, height_mm: 80}}
"""
    plate = build_plates(load_design_text(text))[0]
    (label,) = plate.engravings
    for part in ("deck", "QX-7", "cast_acrylic", "0.17"):
        assert part in label.text
    assert Polygon(plate.outline.contours[0].to_points(CHORD_MM)).contains(
        Polygon([(label.position_mm[0] - 1, label.position_mm[1] - 1),
                 (label.position_mm[0] + 1, label.position_mm[1] - 1),
                 (label.position_mm[0], label.position_mm[1] + 1)]))
    off = build_plates(load_design_text(text, overrides=["plates.deck.label=false"]))[0]
    assert off.engravings == ()
    moved = build_plates(load_design_text(
        text, overrides=["plates.deck.label={at_mm: [10, 5], height_mm: 5, text: hello}"]))[0]
    assert moved.engravings[0].position_mm == (10.0, 5.0)
    assert moved.engravings[0].text == "hello" and moved.engravings[0].height_mm == 5.0


def test_plate_overrides_material_thickness_and_quantity():
    text = """\
name: mix
material: cast_acrylic
thickness_mm: 3
plates:
  - name: a
    outline: {polygon: {points_mm: [[0, 0], [100, 0], [100, 60], [0, 60]], corner_radii_mm: 5}}
  - name: b
    material: birch_plywood
    thickness_mm: 6
    quantity: 4
    outline: {around: {x_mm: [-20, 20], y_mm: [0], margin_mm: 10}}
"""
    a, b = build_plates(load_design_text(text))
    assert a.material.key == "cast_acrylic" and a.thickness_mm == 3.0 and a.quantity == 1
    assert b.material.key == "birch_plywood" and b.thickness_mm == 6.0 and b.quantity == 4
    # polygon with 4 fillets of r = 5: area = 100 * 60 - (4 - pi) r^2 (closed form)
    assert a.outline.contours[0].signed_area() == pytest.approx(6000 - (4 - math.pi) * 25)
    # around: x from -30 to 30, y from -10 to 10
    assert b.outline.contours[0].bbox() == pytest.approx((-30, -10, 30, 10))


@pytest.mark.parametrize("stem", sorted(STARTERS))
def test_starter_designs_have_sensible_edge_distances_and_webs(stem):
    # common practice (REFERENCE.md, laser minimum features): hole to edge >= max(1.5 t, d),
    # web between features >= t. Measured here with shapely on the nominal geometry.
    for plate in build_plates(load_design(STARTERS[stem])):
        t = plate.thickness_mm
        outline = Polygon(plate.outline.contours[0].to_points(CHORD_MM))
        holes = []
        for f in plate.features:
            poly = Polygon(f.contours[0].to_points(CHORD_MM))
            x0, y0, x1, y1 = poly.bounds
            d = min(x1 - x0, y1 - y0)  # the feature's smaller size
            edge = outline.exterior.distance(poly)
            assert edge >= max(1.5 * t, d) - 1e-6, (plate.name, f.id, edge)
            holes.append((f.id, poly))
        for i, (ida, pa) in enumerate(holes):
            for idb, pb in holes[i + 1:]:
                assert pa.distance(pb) >= t - 1e-6, (plate.name, ida, idb)


def test_every_feature_type_builds_where_the_file_puts_it():
    text = """\
name: all types
material: cast_acrylic
thickness_mm: 3
plates:
  - name: p
    outline: {rounded_rect: {width_mm: 300, height_mm: 200, corner_radius_mm: 10}}
    features:
      - {id: h, type: hole, at_mm: [-120, 80], diameter_mm: 5, fit_allowance_mm: 0.1}
      - {id: b, type: bore, at_mm: [-80, 60], diameter_mm: 22, fit: press}
      - {id: sb, type: slotted_bore, at_mm: [-20, 60], diameter_mm: 8, fit: slide,
         travel_mm: 6, direction_deg: 90}
      - {id: s, type: slot, at_mm: [40, 70], length_mm: 30, width_mm: 5, angle_deg: 0}
      - {id: c, type: cutout, at_mm: [100, 60], width_mm: 30, height_mm: 12}
      - {id: f, type: fastener, at_mm: [-120, -80], screw: M4, series: fine}
      - {id: g, type: fastener_array, at_mm: [-60, -60], screw: M3, rows: 1, cols: 2,
         pitch_mm: [20, 0], centered: false}
      - {id: m, type: motor_mount, at_mm: [60, -40], motor: nema17}
      - {id: k, type: custom_mount, at_mm: [-10, -40], angle_deg: 90, pilot_diameter_mm: 10,
         holes: [{at_mm: [15, 0], diameter_mm: 3}]}
"""
    plate = build_plates(load_design_text(text))[0]
    assert plate.feature("h").dims["nominal_diameter_mm"] == 5.0
    assert plate.feature("h").fit_allowance_mm == 0.1
    assert plate.feature("b").kind == "bore" and plate.feature("b").fit_class == "press"
    assert plate.feature("sb").dims["length_mm"] == pytest.approx(8 + 6)  # width + travel
    # ISO 273 fine series, M4: 4.3 mm (REFERENCE.md table)
    assert plate.feature("f").dims["nominal_diameter_mm"] == pytest.approx(4.3)
    # not centred: the first hole at at_mm, the next one pitch_x further along x
    assert plate.feature("g.hole1").center_mm == pytest.approx((-60, -60))
    assert plate.feature("g.hole2").center_mm == pytest.approx((-40, -60))
    # NEMA 17 holes on a 31.0 mm square (NEMA ICS 16, REFERENCE.md): +-15.5 mm from the shaft
    mount = [f for f in plate.features if f.id.startswith("m.") and f.kind == "mount_hole"]
    assert sorted((round(f.center_mm[0] - 60, 6), round(f.center_mm[1] + 40, 6))
                  for f in mount) == [(-15.5, -15.5), (-15.5, 15.5), (15.5, -15.5), (15.5, 15.5)]
    # custom hole (15, 0) turned 90 degrees counter-clockwise: (0, 15) from the centre
    hole = next(f for f in plate.features if f.id.startswith("k.") and f.kind == "mount_hole")
    assert hole.center_mm == pytest.approx((-10, -25))
    assert any(f.id.startswith("k.") and f.kind == "pilot" for f in plate.features)
    for f in plate.features:
        assert f.source_path.startswith("plates[0].features[") and f.source_line is not None
