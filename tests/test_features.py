"""Tests of the outline and feature builders against closed forms, hand work and shapely."""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import example, given, settings
from hypothesis import strategies as st
from shapely.geometry import Polygon

from platewright.geometry.library import get_material, get_motor
from platewright.geometry.plate.features import (
    bore,
    custom_mount,
    cutout,
    fastener_array,
    fastener_hole,
    motor_mount,
    round_hole,
    slot,
    slotted_bore,
)
from platewright.geometry.plate.outlines import polygon_outline, rounded_rect_outline

ACRYLIC = get_material("cast_acrylic")


def _unit(v):
    v = np.asarray(v, dtype=float)
    return v / np.hypot(*v)


def _rot(v, ang):
    c, s = math.cos(ang), math.sin(ang)
    return np.array([c * v[0] - s * v[1], s * v[0] + c * v[1]])


def _extent_along(contour, angle_deg):
    """Length of a contour measured along a direction, from a dense polyline (mm)."""
    pts = contour.to_points(1e-5)
    u = np.array([math.cos(math.radians(angle_deg)), math.sin(math.radians(angle_deg))])
    s = pts @ u
    return float(s.max() - s.min())


# ---------------------------------------------------------------------------------------------
# slotted bores


def test_slotted_bore_travel_from_trim_angle_by_hand() -> None:
    # worked by hand: tan(5 deg) = 0.0874887 (four-figure tables: 0.0875);
    # travel = span * tan(trim) = 120 * 0.0874887 = 10.4986 mm; length = 8 + 10.4986 = 18.4986
    f = slotted_bore("axle", (10.0, 5.0), 8.0, "slide", ACRYLIC, trim_deg=5.0, span_mm=120.0)
    assert f.kind == "slot"
    assert f.dims["travel_mm"] == pytest.approx(10.4986, abs=1e-4)
    assert f.dims["length_mm"] == pytest.approx(18.4986, abs=1e-4)
    assert f.dims["nominal_width_mm"] == pytest.approx(8.0)
    assert f.dims["trim_deg"] == 5.0 and f.dims["span_mm"] == 120.0
    # fit allowance from the material library (common practice slide fit for acrylic)
    assert f.fit_class == "slide"
    assert f.fit_allowance_mm == ACRYLIC.fit_allowance_mm["slide"]
    # measured on the contour: overall length along the slide direction = width + travel
    assert _extent_along(f.contours[0], 0.0) == pytest.approx(18.4986, abs=1e-4)
    assert _extent_along(f.contours[0], 90.0) == pytest.approx(8.0, abs=1e-4)


def test_slotted_bore_45_deg_and_direction() -> None:
    # by hand: tan(45 deg) = 1, so travel = span
    f = slotted_bore("a", (0.0, 0.0), 6.0, "press", ACRYLIC, trim_deg=45.0, span_mm=20.0,
                     direction_deg=30.0)
    assert f.dims["travel_mm"] == pytest.approx(20.0, abs=1e-12)
    # slot length = width + travel, measured along the slide direction
    assert _extent_along(f.contours[0], 30.0) == pytest.approx(26.0, abs=1e-4)
    assert _extent_along(f.contours[0], 120.0) == pytest.approx(6.0, abs=1e-4)
    # stadium area, closed form: pi r^2 + travel * width = pi 9 + 120
    assert abs(f.contours[0].signed_area()) == pytest.approx(math.pi * 9.0 + 120.0, rel=1e-12)
    # centred on the nominal position
    assert np.allclose(f.contours[0].vertices.mean(axis=0), (0.0, 0.0), atol=1e-12)


def test_slotted_bore_travel_form() -> None:
    f = slotted_bore("a", (1.0, 2.0), 5.0, "clearance", ACRYLIC, travel_mm=3.0)
    assert f.dims["length_mm"] == pytest.approx(8.0)  # width + travel
    assert "trim_deg" not in f.dims


@pytest.mark.parametrize("kw", [
    {"trim_deg": 0.0, "span_mm": 50.0},
    {"trim_deg": 45.5, "span_mm": 50.0},
    {"trim_deg": -3.0, "span_mm": 50.0},
    {"trim_deg": 3.0},
    {"trim_deg": 3.0, "span_mm": 50.0, "travel_mm": 2.0},
    {},
    {"travel_mm": -1.0},
])
def test_slotted_bore_rejects(kw) -> None:
    with pytest.raises(ValueError):
        slotted_bore("a", (0.0, 0.0), 8.0, "press", ACRYLIC, **kw)


def test_bore_unknown_fit_class_lists_valid() -> None:
    with pytest.raises(ValueError, match="press"):
        bore("b", (0.0, 0.0), 22.0, "tight", ACRYLIC)


def test_bore_takes_allowance_from_material() -> None:
    # REFERENCE.md bearing practice (common practice): acrylic press about -0.2 mm
    f = bore("b", (3.0, 4.0), 22.0, "press", ACRYLIC, note="608 bearing")
    assert f.kind == "bore"
    assert f.fit_allowance_mm == pytest.approx(-0.2)
    assert f.dims["fit_allowance_mm"] == pytest.approx(-0.2)
    assert f.dims["nominal_diameter_mm"] == 22.0
    # the contour stays NOMINAL: 608 outside diameter 22 mm (ISO 15)
    (c, r) = f.contours[0].circle_center_radius()
    assert 2 * r == pytest.approx(22.0) and c == pytest.approx((3.0, 4.0))


# ---------------------------------------------------------------------------------------------
# slots, cutouts, rounded rectangles


@pytest.mark.parametrize("w, h, r, ang", [(100.0, 60.0, 0.0, 0.0), (100.0, 60.0, 8.0, 0.0),
                                          (50.0, 20.0, 10.0, 33.0), (30.0, 30.0, 15.0, 0.0)])
def test_rounded_rect_area_closed_form(w, h, r, ang) -> None:
    # closed form: each corner loses a square r^2 and gains a quarter circle pi r^2 / 4
    f = rounded_rect_outline("o", (5.0, -7.0), w, h, r, ang)
    assert f.kind == "outline" and len(f.contours) == 1
    c = f.contours[0]
    assert c.signed_area() == pytest.approx(w * h - (4.0 - math.pi) * r * r, rel=1e-12)
    assert c.is_ccw()
    # perimeter, closed form: 2 (w + h) - 8 r + 2 pi r
    assert c.length() == pytest.approx(2 * (w + h) - 8 * r + 2 * math.pi * r, rel=1e-12)


def test_rounded_rect_rejects_big_radius() -> None:
    with pytest.raises(ValueError, match="corner_radius_mm"):
        rounded_rect_outline("o", (0.0, 0.0), 40.0, 20.0, 10.5)


def test_slot_length_is_overall() -> None:
    f = slot("s", (0.0, 0.0), 20.0, 4.0, angle_deg=90.0)
    assert _extent_along(f.contours[0], 90.0) == pytest.approx(20.0, abs=1e-4)
    assert _extent_along(f.contours[0], 0.0) == pytest.approx(4.0, abs=1e-4)
    # stadium area, closed form: pi (w/2)^2 + (L - w) w = 4 pi + 64
    assert abs(f.contours[0].signed_area()) == pytest.approx(4 * math.pi + 64.0, rel=1e-12)
    assert f.dims["nominal_width_mm"] == 4.0 and f.dims["length_mm"] == 20.0
    with pytest.raises(ValueError, match="width"):
        slot("s", (0.0, 0.0), 3.0, 4.0)


def test_cutout_area_and_orientation() -> None:
    f = cutout("c", (10.0, 10.0), 30.0, 12.0, 3.0, angle_deg=15.0)
    # closed form: w h - (4 - pi) r^2, negative for a clockwise hole
    assert f.contours[0].signed_area() == pytest.approx(-(360.0 - (4 - math.pi) * 9.0), rel=1e-12)


def test_holes_clockwise_outlines_ccw() -> None:
    holes = [
        round_hole("h", (0.0, 0.0), 3.0),
        bore("b", (0.0, 0.0), 8.0, "slide", ACRYLIC),
        slotted_bore("sb", (0.0, 0.0), 8.0, "slide", ACRYLIC, travel_mm=2.0),
        slot("s", (0.0, 0.0), 10.0, 3.0, 20.0),
        cutout("c", (0.0, 0.0), 10.0, 5.0, 1.0),
        fastener_hole("f", (0.0, 0.0), "M4"),
        *fastener_array("a", (0.0, 0.0), 2, 2, 10.0, 10.0, "M3"),
        *motor_mount("m", (0.0, 0.0), get_motor("nema17"), material=ACRYLIC),
        *motor_mount("g", (0.0, 0.0), get_motor("gearmotor_37mm"), strap=True),
        *custom_mount("cm", (0.0, 0.0), [(5.0, 0.0, 2.0)], pilot_diameter_mm=4.0,
                      material=ACRYLIC),
    ]
    for f in holes:
        for c in f.contours:
            assert not c.is_ccw(), f.id
    outlines = [rounded_rect_outline("o", (0.0, 0.0), 10.0, 5.0, 1.0),
                polygon_outline("p", [(0, 0), (0, 10), (10, 10), (10, 0)], 1.0)]  # cw input
    for f in outlines:
        assert f.contours[0].is_ccw()


def test_round_hole_area_and_validation() -> None:
    f = fastener_hole("f", (1.0, 1.0), "M5", "coarse")
    # ISO 273:1979 coarse M5 = 5.8 mm; circle area pi d^2 / 4
    assert f.dims["nominal_diameter_mm"] == pytest.approx(5.8)
    assert -f.contours[0].signed_area() == pytest.approx(math.pi * 5.8**2 / 4.0, rel=1e-12)
    for bad in (0.0, -1.0, float("nan"), float("inf")):
        with pytest.raises(ValueError, match="diameter_mm"):
            round_hole("h", (0.0, 0.0), bad)
    with pytest.raises(ValueError, match="M3"):
        fastener_hole("f", (0.0, 0.0), "M7")


# ---------------------------------------------------------------------------------------------
# arrays and mounts


def test_fastener_array_at_pitch() -> None:
    feats = fastener_array("so", (100.0, 50.0), 2, 3, 20.0, 15.0, "M3")
    assert [f.id for f in feats] == [f"so.hole{k}" for k in range(1, 7)]
    pts = np.array([f.center_mm for f in feats])
    # by hand: centred grid, columns at x = 80, 100, 120, rows at y = 42.5, 57.5
    expect = np.array([(x, y) for y in (42.5, 57.5) for x in (80.0, 100.0, 120.0)])
    assert np.allclose(pts, expect, atol=1e-12)
    # ISO 273:1979 medium M3 = 3.4 mm
    assert all(f.dims["nominal_diameter_mm"] == pytest.approx(3.4) for f in feats)


def test_fastener_array_rotated_keeps_pitch() -> None:
    feats = fastener_array("so", (0.0, 0.0), 2, 2, 30.0, 12.0, "M2.5", angle_deg=90.0,
                           centered=False)
    p = [np.array(f.center_mm) for f in feats]
    # first hole at the origin; rotating by 90 deg maps +x to +y and +y to -x
    assert np.allclose(p[0], (0.0, 0.0), atol=1e-12)
    assert np.allclose(p[1], (0.0, 30.0), atol=1e-12)
    assert np.allclose(p[2], (-12.0, 0.0), atol=1e-12)
    assert math.dist(p[0], p[3]) == pytest.approx(math.hypot(30.0, 12.0))
    with pytest.raises(ValueError, match="rows"):
        fastener_array("x", (0.0, 0.0), 0, 2, 1.0, 1.0, "M3")
    with pytest.raises(ValueError, match="pitch_x_mm"):
        fastener_array("x", (0.0, 0.0), 1, 2, 0.0, 1.0, "M3")


def test_motor_mount_strap_slots_and_caution() -> None:
    m = get_motor("gearmotor_25mm")
    feats = motor_mount("drive", (0.0, 0.0), m, angle_deg=90.0, strap=True)
    assert [f.kind for f in feats] == ["strap_slot", "strap_slot"]
    assert all("datasheet" in f.note for f in feats)
    assert math.dist(feats[0].center_mm, feats[1].center_mm) == pytest.approx(m.strap.spacing_mm)
    # motor axis along +y (90 deg): slots either side across it, i.e. at x = -+spacing/2
    assert feats[0].center_mm[1] == pytest.approx(0.0, abs=1e-12)
    with pytest.raises(ValueError, match="strap"):
        motor_mount("x", (0.0, 0.0), get_motor("nema17"), strap=True)
    # a strap mount replaces the face pattern: no pilot and no mounting holes
    assert not any(f.kind in ("pilot", "mount_hole") for f in feats)


def test_pilot_needs_a_material_and_a_known_fit_class() -> None:
    with pytest.raises(ValueError, match="material"):
        motor_mount("x", (0.0, 0.0), get_motor("nema17"))
    with pytest.raises(ValueError, match="pilot_fit"):
        motor_mount("x", (0.0, 0.0), get_motor("nema17"), material=ACRYLIC, pilot_fit="loose")


def test_custom_mount_rotation() -> None:
    feats = custom_mount("cm", (10.0, 0.0), [(5.0, 0.0, 2.0), (0.0, -5.0, 2.0)],
                         pilot_diameter_mm=6.0, angle_deg=90.0, material=ACRYLIC)
    assert [f.id for f in feats] == ["cm.pilot", "cm.hole1", "cm.hole2"]
    # by hand: rotating (5, 0) by 90 deg gives (0, 5); (0, -5) gives (5, 0)
    assert np.allclose(feats[1].center_mm, (10.0, 5.0), atol=1e-12)
    assert np.allclose(feats[2].center_mm, (15.0, 0.0), atol=1e-12)


# ---------------------------------------------------------------------------------------------
# polygon outlines with fillets


def _turns(pts):
    """Signed turning angle at each corner of a closed polygon ((n, 2) float), radians."""
    n = len(pts)
    out = []
    for i in range(n):
        a = _unit(pts[i] - pts[i - 1])
        b = _unit(pts[(i + 1) % n] - pts[i])
        out.append(math.atan2(a[0] * b[1] - a[1] * b[0], a @ b))
    return out


def _expected_filleted_area(pts, radii):
    """Shapely area of the sharp polygon with each corner cut analytically.

    A fillet of radius r at a corner turning by phi removes (convex) or adds (concave) the
    region between the two tangent lines and the arc: kite 2 * (r * r tan(phi/2) / 2) minus the
    sector r^2 phi / 2.
    """
    area = Polygon(pts).area
    for phi, r in zip(_turns(np.asarray(pts, dtype=float)), radii, strict=True):
        cut = r * r * math.tan(abs(phi) / 2.0) - r * r * abs(phi) / 2.0
        area += -cut if phi > 0 else cut
    return area


def _check_tangency(contour):
    """Each arc meets the neighbouring straight segments tangentially.

    Tangent of an arc with included angle theta at its start is the chord direction turned by
    -theta/2, at its end turned by +theta/2 (inscribed-angle theorem).
    """
    segs = list(contour.segments())
    n = len(segs)
    arcs = 0
    for i, (p0, p1, b) in enumerate(segs):
        if b == 0.0:
            continue
        arcs += 1
        theta = 4.0 * math.atan(b)
        chord = _unit(p1 - p0)
        t_start = _rot(chord, -theta / 2.0)
        t_end = _rot(chord, theta / 2.0)
        q0, q1, bp = segs[i - 1]
        r0, r1, bn = segs[(i + 1) % n]
        assert bp == 0.0 and bn == 0.0
        assert np.allclose(_unit(q1 - q0), t_start, atol=1e-9)
        assert np.allclose(_unit(r1 - r0), t_end, atol=1e-9)
    return arcs


L_SHAPE = [(0.0, 0.0), (120.0, 0.0), (120.0, 40.0), (50.0, 40.0), (50.0, 90.0), (0.0, 90.0)]


@pytest.mark.parametrize("radii", [5.0, [0.0, 10.0, 4.0, 6.0, 3.0, 12.0]])
def test_polygon_fillets_tangent_and_area(radii) -> None:
    f = polygon_outline("o", L_SHAPE, radii)
    c = f.contours[0]
    r = [radii] * 6 if np.ndim(radii) == 0 else radii
    assert _check_tangency(c) == sum(1 for x in r if x > 0)
    assert c.signed_area() == pytest.approx(_expected_filleted_area(L_SHAPE, r), rel=1e-12)


def test_polygon_concave_corner_arc_runs_clockwise() -> None:
    # corner 3 at (50, 40) of the L is concave: its fillet turns right (negative bulge)
    f = polygon_outline("o", L_SHAPE, [0.0, 0.0, 0.0, 6.0, 0.0, 0.0])
    b = [bb for _, _, bb in f.contours[0].segments() if bb != 0.0]
    assert len(b) == 1 and b[0] < 0
    # a quarter turn: bulge tan(-pi/8)
    assert b[0] == pytest.approx(-math.tan(math.pi / 8.0), rel=1e-12)


def test_polygon_radius_too_big_names_corner() -> None:
    # by hand: corner 1 (120, 0) turns 90 deg, setback = r = 45 > its 40 mm edge; edge 2-3 is
    # 70 mm long and setbacks 30 + 45 = 75 > 70, the larger radius (corner 3) is named
    with pytest.raises(ValueError, match="corner 1"):
        polygon_outline("o", L_SHAPE, [0.0, 45.0, 0.0, 0.0, 0.0, 0.0])
    with pytest.raises(ValueError, match="corner 3"):
        polygon_outline("o", L_SHAPE, [0.0, 0.0, 30.0, 45.0, 0.0, 0.0])


def test_polygon_self_intersection_rejected() -> None:
    with pytest.raises(ValueError, match="self-intersects"):
        polygon_outline("o", [(0, 0), (10, 10), (10, 0), (0, 10)])
    with pytest.raises(ValueError, match="radius"):
        polygon_outline("o", L_SHAPE, [-1.0, 0, 0, 0, 0, 0])
    with pytest.raises(ValueError, match="one per corner"):
        polygon_outline("o", L_SHAPE, [1.0, 2.0])


def test_polygon_clockwise_input_keeps_corner_numbers() -> None:
    cw = L_SHAPE[::-1]  # corner k of cw is corner 5 - k of L_SHAPE
    radii = [12.0, 3.0, 6.0, 4.0, 10.0, 0.0]
    f = polygon_outline("o", cw, radii)
    c = f.contours[0]
    assert c.is_ccw()
    assert c.signed_area() == pytest.approx(
        _expected_filleted_area(L_SHAPE, radii[::-1]), rel=1e-12
    )


@settings(max_examples=40, deadline=None)
@given(
    n=st.integers(3, 9),
    radius=st.floats(20.0, 80.0),
    frac=st.floats(0.0, 0.99),
    rot=st.floats(0.0, 6.28),
)
@example(n=3, radius=20.0, frac=1e-9, rot=0.0)  # a fillet far below MIN_SEGMENT_MM
@example(n=4, radius=30.0, frac=0.99, rot=0.3)
def test_regular_polygon_fillet_area_property(n, radius, frac, rot) -> None:
    # regular n-gon of circumradius R: side s = 2 R sin(pi/n), turn 2 pi / n at each corner;
    # the largest fillet that fits has setback s/2, i.e. r_max = (s/2) / tan(pi/n)
    ang = rot + 2 * math.pi * np.arange(n) / n
    pts = np.column_stack([radius * np.cos(ang), radius * np.sin(ang)])
    s = 2.0 * radius * math.sin(math.pi / n)
    r = frac * (s / 2.0) / math.tan(math.pi / n)
    c = polygon_outline("o", pts, r).contours[0]
    # closed form: n-gon area n R^2 sin(2 pi/n) / 2 minus n corner pieces r^2 (tan(pi/n) - pi/n)
    expect = n * radius**2 * math.sin(2 * math.pi / n) / 2.0 - n * r * r * (
        math.tan(math.pi / n) - math.pi / n
    )
    assert c.signed_area() == pytest.approx(expect, rel=1e-9)
    _check_tangency(c)
