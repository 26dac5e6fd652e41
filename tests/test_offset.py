"""Exact contour offsets, checked against closed-form areas and against shapely's buffer
(shapely is a general-purpose reference library; its buffer is the Minkowski sum/difference
with a disc, i.e. the same offset computed by an independent polygon algorithm)."""

from __future__ import annotations

import math

import numpy as np
import pytest
import shapely
from geometry_cases import (
    circle,
    filleted_polygon,
    l_shape,
    rectangle,
    regular_polygon,
    rounded_rectangle,
    stadium,
)
from hypothesis import given, settings
from hypothesis import strategies as st

from platewright.geometry.plate.curves import Contour
from platewright.geometry.plate.offset import OffsetError, offset_contour
from platewright.geometry.plate.region import to_polygon

FINE_TOL_MM = 1e-4  # chord tolerance for polygon comparisons in this file
QUAD_SEGS = 256  # shapely buffer: segments per quarter circle of a round join


def _buffer_area_bound(result: Contour, d: float) -> float:
    """Area difference allowed between the exact offset and shapely's buffer of the chord
    polygon: each view lies within (chord tolerance + buffer sagitta) of the exact boundary, so
    the areas differ by at most that distance times the boundary length (strip bound), doubled
    for margin. Sagitta of a chord over angle a on radius d: d (1 - cos(a / 2))."""
    sag = abs(d) * (1 - math.cos(math.pi / (4 * QUAD_SEGS)))
    return 2.0 * (2 * FINE_TOL_MM + sag) * result.length() + 1e-9


def _hausdorff(a: Contour, b: shapely.Polygon) -> float:
    return shapely.hausdorff_distance(to_polygon(a, FINE_TOL_MM).exterior, b.exterior, densify=0.5)


# --- closed-form cases -------------------------------------------------------------------------


@pytest.mark.parametrize("d", [0.1, 1.0, 2.5])
def test_rectangle_outward_area_has_round_corners(d: float) -> None:
    w, h = 10.0, 5.0
    out = offset_contour(rectangle(w, h), d)
    # Closed form (Steiner formula for a convex polygon): the offset adds a strip d along each
    # side and a quarter disc of radius d at each corner: (w+2d)(h+2d) - (4 - pi) d^2.
    assert out.signed_area() == pytest.approx((w + 2 * d) * (h + 2 * d) - (4 - math.pi) * d**2,
                                              rel=1e-12)
    assert out.is_ccw()
    # four straight sides and four corner arcs of radius d (quarter turns: bulge tan(pi/8))
    assert sorted(np.round(out.bulges, 12)) == [0.0] * 4 + [round(math.tan(math.pi / 8), 12)] * 4


@pytest.mark.parametrize("d", [0.1, 1.0, 2.4])
def test_rectangular_hole_inward_keeps_sharp_corners(d: float) -> None:
    w, h = 10.0, 5.0
    hole = rectangle(w, h).reversed()
    out = offset_contour(hole, d)
    # Closed form: the inward parallel of a rectangle is the rectangle (w-2d) x (h-2d) with
    # sharp corners (the trimmed sides meet at the corners); clockwise, so the area is negative.
    assert out.signed_area() == pytest.approx(-(w - 2 * d) * (h - 2 * d), rel=1e-12)
    assert np.all(out.bulges == 0.0) and len(out) == 4
    assert np.allclose(np.sort(np.abs(out.vertices[:, 0])), [w / 2 - d] * 4)


@pytest.mark.parametrize("ccw", [True, False])
@pytest.mark.parametrize("d", [-1.5, 0.3, 1.2])
def test_circle_radius_changes_and_stays_two_half_arcs(ccw: bool, d: float) -> None:
    c = circle((3.0, -2.0), 2.0, ccw=ccw)
    out = offset_contour(c, d)
    assert out.is_circle
    centre, r = out.circle_center_radius()
    # moving right of travel: outward for a ccw circle (r + d), toward the centre for cw (r - d)
    assert r == pytest.approx(2.0 + d if ccw else 2.0 - d, abs=1e-12)
    assert centre == pytest.approx((3.0, -2.0), abs=1e-12)
    assert out.is_ccw() == ccw


def test_l_shape_concave_corner() -> None:
    d = 1.0
    out = offset_contour(l_shape(), d)
    # Closed form, area 64, perimeter 40: strips d along every side, a quarter disc at each of
    # the five convex corners, minus the d x d square counted twice at the concave corner.
    assert out.signed_area() == pytest.approx(64 + 40 * d + 5 * math.pi / 4 * d**2 - d**2,
                                              rel=1e-12)
    # the concave corner (4, 4) moves diagonally into the notch and stays sharp
    assert np.min(np.hypot(*(out.vertices - [4 + d, 4 + d]).T)) < 1e-12
    inner = offset_contour(l_shape(), -d)
    # inward: strips removed, the five d x d corner squares counted twice added back, a quarter
    # disc removed at the concave corner (which becomes round).
    assert inner.signed_area() == pytest.approx(64 - 40 * d + 5 * d**2 - math.pi / 4 * d**2,
                                                rel=1e-12)


@pytest.mark.parametrize("d", [0.2, -0.7])
def test_stadium_slot_width_changes_by_2d(d: float) -> None:
    length, width = 12.0, 4.0
    hole = stadium(length, width).reversed()
    out = offset_contour(hole, -d)  # a hole moved LEFT by d grows by d on each side
    w2 = width + 2 * d
    xmin, ymin, xmax, ymax = out.bbox()  # exact bounding box of the arcs (curves.py)
    # closed form: same centre distance, width w + 2d, end radius (w + 2d)/2
    assert ymax - ymin == pytest.approx(w2, abs=1e-9)
    assert xmax - xmin == pytest.approx(length + w2, abs=1e-9)
    assert -out.signed_area() == pytest.approx(length * w2 + math.pi * (w2 / 2) ** 2, rel=1e-12)


def test_zero_distance_returns_same_contour() -> None:
    c = rounded_rectangle(8, 6, 1)
    assert offset_contour(c, 0.0) is c


def test_collapsing_hole_is_refused() -> None:
    # a 1 mm hole cannot carry a path 0.6 mm inside its edge (radius 0.5 - 0.6 < 0)
    with pytest.raises(OffsetError):
        offset_contour(circle((0, 0), 0.5, ccw=False), 0.6)
    # a 4 mm wide rectangular hole offset 2.1 mm toward its middle has no interior left
    with pytest.raises(OffsetError):
        offset_contour(rectangle(10, 4).reversed(), 2.1)
    # a slot 2 mm wide cannot take a 1.2 mm inward offset
    with pytest.raises(OffsetError):
        offset_contour(stadium(6, 2).reversed(), 1.2)
    assert issubclass(OffsetError, ValueError)


def test_narrow_notch_that_closes_is_refused() -> None:
    # U-shaped outline with a 1 mm wide notch: grown 0.6 mm, the notch walls would cross.
    u = Contour([[0, 0], [10, 0], [10, 10], [5.5, 10], [5.5, 2], [4.5, 2], [4.5, 10], [0, 10]])
    with pytest.raises(OffsetError):
        offset_contour(u, 0.6)
    # 0.4 mm still leaves a 0.2 mm notch: fine, and the notch bottom gets a round of radius 0.4
    # only on the outside (convex) corners; compare against shapely's buffer.
    out = offset_contour(u, 0.4)
    ref = to_polygon(u, FINE_TOL_MM).buffer(0.4, quad_segs=QUAD_SEGS, join_style="round")
    assert abs(to_polygon(out, FINE_TOL_MM).area - ref.area) < _buffer_area_bound(out, 0.4)


# --- round trips -------------------------------------------------------------------------------


@pytest.mark.parametrize(
    "shape",
    [
        circle((1, 2), 3.0),
        stadium(10, 3),
        rounded_rectangle(20, 12, 2.0),
        filleted_polygon(regular_polygon(5, 10.0, 0.3), [1.5, 2.0, 1.2, 3.0, 1.8]),
    ],
    ids=["circle", "slot", "rounded_rect", "filleted_pentagon"],
)
@pytest.mark.parametrize("hole", [False, True])
def test_round_trip_restores_smooth_shapes_exactly(shape: Contour, hole: bool) -> None:
    c = shape.reversed() if hole else shape
    d = 1.0  # smaller than every fillet and end radius: no corner is lost either way
    back = offset_contour(offset_contour(c, d), -d)
    # same vertices and bulges up to a cyclic shift of the start point
    assert len(back) == len(c)
    k = int(np.argmin(np.hypot(*(back.vertices - c.vertices[0]).T)))
    v = np.roll(back.vertices, -k, axis=0)
    b = np.roll(back.bulges, -k)
    assert np.max(np.abs(v - c.vertices)) < 1e-9
    assert np.max(np.abs(b - c.bulges)) < 1e-9


def test_round_trip_of_sharp_rectangle() -> None:
    rect = rectangle(10, 6)
    back = offset_contour(offset_contour(rect, 1.5), -1.5)
    # The closing (grow then shrink) of a convex shape is the shape itself (mathematical
    # morphology); compared with shapely's Hausdorff distance.
    assert _hausdorff(back, to_polygon(rect)) < 1e-9
    # the opposite order (shrink then grow) rounds the corners to radius 1.5: compare with
    # shapely's opening of the same rectangle.
    opened = offset_contour(offset_contour(rect, -1.5), 1.5)
    ref = shapely.box(-5, -3, 5, 3).buffer(-1.5, join_style="mitre").buffer(
        1.5, quad_segs=QUAD_SEGS
    )
    assert _hausdorff(opened, ref) < 2 * FINE_TOL_MM


# --- property-based checks against shapely -----------------------------------------------------

_d = st.floats(0.05, 3.0)
_sign = st.sampled_from([1.0, -1.0])


def _check_against_buffer(c: Contour, d: float) -> None:
    out = offset_contour(c, d)
    poly = to_polygon(out, FINE_TOL_MM)
    assert shapely.is_valid(poly)
    assert out.is_ccw() == c.is_ccw()
    base = to_polygon(c, FINE_TOL_MM)
    # growing the material of an outline (ccw, d > 0) or shrinking a hole's material (cw, d < 0)
    # both enlarge the enclosed region; otherwise the region shrinks.
    grow = d if c.is_ccw() else -d
    # Definition of the offset of a convex region: every boundary point lies at distance |d|
    # from the original boundary (outside it when growing, inside when shrinking). shapely's
    # point-to-polygon distance is exact for the chord polygon, which lies within the chord
    # tolerance of the exact curve.
    pts = shapely.points(out.to_points(FINE_TOL_MM))
    dist = shapely.distance(pts, base.exterior)
    assert np.max(np.abs(dist - abs(d))) <= 2 * FINE_TOL_MM + 1e-9
    assert np.all(shapely.contains(base, pts) == (grow < 0))
    if grow > 0:
        # shapely's round buffer of the chord polygon (a dilation: GEOS keeps every convex
        # vertex of the input, so it is accurate to the buffer's own sagitta)
        ref = base.buffer(grow, quad_segs=QUAD_SEGS, join_style="round")
        assert abs(poly.area - ref.area) <= _buffer_area_bound(out, d)
    back = offset_contour(out, -d)
    # grow-then-shrink of a convex region is the region itself (closing); shrink-then-grow is
    # the opening, i.e. the eroded region dilated again, here dilated by shapely.
    expect = base if grow > 0 else poly.buffer(-grow, quad_segs=QUAD_SEGS, join_style="round")
    assert _hausdorff(back, expect) < 4 * FINE_TOL_MM + abs(d) * 1e-4


@settings(max_examples=30, deadline=None)
@given(w=st.floats(4, 60), h=st.floats(4, 60), rf=st.one_of(st.just(0.0), st.floats(0.02, 0.45)),
       d=_d, s=_sign, hole=st.booleans())
def test_random_rounded_rectangles(w, h, rf, d, s, hole) -> None:
    c = rounded_rectangle(w, h, rf * min(w, h))
    c = c.reversed() if hole else c
    d = min(d, 0.45 * min(w, h))  # keep the shrinking side from collapsing
    _check_against_buffer(c, s * d)


@settings(max_examples=20, deadline=None)
@given(r=st.floats(1.0, 30.0), x=st.floats(-50, 50), y=st.floats(-50, 50), d=_d, s=_sign,
       hole=st.booleans())
def test_random_circles(r, x, y, d, s, hole) -> None:
    c = circle((x, y), r, ccw=not hole)
    d = min(d, 0.9 * r)
    _check_against_buffer(c, s * d)


@settings(max_examples=30, deadline=None)
@given(
    n=st.integers(3, 8),
    jitter=st.lists(st.floats(-0.25, 0.25), min_size=8, max_size=8),
    radii=st.lists(st.one_of(st.just(0.0), st.floats(0.05, 2.0)), min_size=8, max_size=8),
    d=st.floats(0.05, 1.5),
    s=_sign,
    hole=st.booleans(),
)
def test_random_convex_filleted_polygons(n, jitter, radii, d, s, hole) -> None:
    # vertices on a circle of radius 20 at jittered angles: always convex, sides >= ~8 mm, so
    # fillets of radius <= 2 mm fit in every corner.
    ang = 2 * math.pi * (np.arange(n) + np.array(jitter[:n])) / n
    pts = np.column_stack([20 * np.cos(ang), 20 * np.sin(ang)])
    c = filleted_polygon(pts, radii[:n])
    c = c.reversed() if hole else c
    _check_against_buffer(c, s * d)


def test_step_shorter_than_offset() -> None:
    # A 0.05 mm step in the top edge, grown by 0.2 mm: the step's own offset is eaten by the
    # concave join and the corner round about (10, 10.05) meets the lower top edge's offset
    # y = 10.2 at x = 10 + sqrt(0.2^2 - 0.15^2) (circle-line intersection, worked by hand).
    c = Contour([[0, 0], [20, 0], [20, 10], [10, 10], [10, 10.05], [0, 10.05]])
    out = offset_contour(c, 0.2)
    hit = np.array([10 + math.sqrt(0.2**2 - 0.15**2), 10.2])
    assert np.min(np.hypot(*(out.vertices - hit).T)) < 1e-12
    base = to_polygon(c, FINE_TOL_MM)
    pts = shapely.points(out.to_points(FINE_TOL_MM))
    # definition of a dilation: boundary points at distance 0.2 from the original
    assert np.max(np.abs(shapely.distance(pts, base) - 0.2)) < 1e-9
    ref = base.buffer(0.2, quad_segs=QUAD_SEGS, join_style="round")  # shapely reference
    assert abs(to_polygon(out, FINE_TOL_MM).area - ref.area) < _buffer_area_bound(out, 0.2)


def test_fillet_smaller_than_offset_becomes_sharp() -> None:
    # A rounded-rectangle hole (fillet 0.3 mm) offset 0.5 mm toward its centre: the inward
    # parallel of the hole region is the (w - 2d) x (h - 2d) rectangle with SHARP corners,
    # because every point of it is >= 0.5 mm from the edge (closed form, worked by hand:
    # the corner point is (0.5 - 0.3) sqrt(2) + 0.3 = 0.58 mm from the fillet).
    w, h, d = 10.0, 6.0, 0.5
    out = offset_contour(rounded_rectangle(w, h, 0.3).reversed(), d)
    assert len(out) == 4 and np.all(out.bulges == 0.0)
    assert out.signed_area() == pytest.approx(-(w - 2 * d) * (h - 2 * d), rel=1e-12)


@pytest.mark.parametrize("d", [0.4, -0.4, 1.5, -1.5])
def test_l_shaped_hole_against_definition(d: float) -> None:
    # Holes of a non-convex shape, both ways. Every boundary point of an exact offset lies at
    # distance |d| from the original boundary (definition of the parallel curve; shapely's
    # point-polygon distance is exact on the chord polygon). Areas in closed form as in
    # test_l_shape_concave_corner with the roles of convex and concave corners exchanged for
    # the hole: growing the hole region by g = -d rounds its five convex corners.
    hole = l_shape().reversed()
    out = offset_contour(hole, d)
    base = to_polygon(hole, FINE_TOL_MM)
    pts = shapely.points(out.to_points(FINE_TOL_MM))
    assert np.max(np.abs(shapely.distance(pts, base.exterior) - abs(d))) < 2 * FINE_TOL_MM
    g = -d
    if g > 0:
        area = 64 + 40 * g + 5 * math.pi / 4 * g**2 - g**2
    else:
        area = 64 + 40 * g + 5 * g**2 - math.pi / 4 * g**2
    assert -out.signed_area() == pytest.approx(area, rel=1e-12)
