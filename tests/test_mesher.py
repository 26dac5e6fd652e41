"""Tests of the triangle mesher (fea/mesh.py, fea/mesher.py, fea/sizing.py, fea/plate_input.py).

Each check names its basis: shapely and scipy as general-purpose reference libraries, closed-form
geometry worked here, Euler's formula, or common practice for mesh quality.
"""

from __future__ import annotations

import math
import sys
from pathlib import Path

import numpy as np
import pytest
import shapely
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from scipy.spatial import Delaunay
from shapely.geometry import Point, box

from platewright.fea.mesh.boundary import TaggedRing
from platewright.fea.mesh.mesher import mesh_polygon, mesh_rings
from platewright.fea.mesh.plate_input import plate_rings, sample_contour
from platewright.fea.mesh.sizing import bayer_matrix
from platewright.fea.mesh.triangles import Mesh, flip_to_delaunay, triangle_angles_deg
from platewright.geometry.plate.curves import circle

sys.path.insert(0, str(Path(__file__).parent))
from plate_factory import make_plate, rect_contour, round_hole, slot_feature  # noqa: E402

#: Minimum-angle target, degrees. Common practice for linear triangles; Ruppert's Delaunay
#: refinement (J. Algorithms 18, 1995) guarantees about 20.7 degrees, hence the usual 20.
MIN_ANGLE_DEG = 20.0


def _disc(cx: float, cy: float, r: float) -> shapely.Polygon:
    return Point(cx, cy).buffer(r, quad_segs=16)


def _rect_with_holes() -> shapely.Polygon:
    p = box(0.0, 0.0, 120.0, 80.0)
    for cx, cy, r in [(30, 40, 8), (70, 40, 3), (100, 20, 5), (100, 60, 1.5), (60, 12, 4)]:
        p = p.difference(_disc(cx, cy, r))
    return p


def _l_shape() -> shapely.Polygon:
    return shapely.Polygon([(0, 0), (100, 0), (100, 30), (30, 30), (30, 100), (0, 100)])


#: Two holes of radius 4 whose centres are 9.5 mm apart: a web of 9.5 - 2 * 4 = 1.5 mm.
WEB_X0, WEB_X1, WEB_R = 25.25, 34.75, 4.0


def _web_plate() -> shapely.Polygon:
    return box(0, 0, 60, 40).difference(_disc(WEB_X0, 20, WEB_R)).difference(
        _disc(WEB_X1, 20, WEB_R)
    )


@pytest.fixture(scope="module")
def rect_mesh() -> Mesh:
    return mesh_polygon(_rect_with_holes(), 5.0)


def _undirected_edges(tri: np.ndarray) -> np.ndarray:
    e = np.sort(np.vstack([tri[:, [0, 1]], tri[:, [1, 2]], tri[:, [2, 0]]]), axis=1)
    return np.unique(e, axis=0)


def _free_directed_edges(tri: np.ndarray) -> set[tuple[int, int]]:
    directed = {(int(a), int(b)) for t in tri for a, b in ((t[0], t[1]), (t[1], t[2]), (t[2], t[0]))}
    return {e for e in directed if (e[1], e[0]) not in directed}


def _check_valid(mesh: Mesh) -> None:
    """Structural checks worked independently of the mesher."""
    n = len(mesh.nodes)
    # Every node is used by a triangle.
    assert np.array_equal(np.unique(mesh.triangles), np.arange(n))
    # No duplicate nodes (distinct coordinates).
    assert len(np.unique(mesh.nodes, axis=0)) == n
    # Counter-clockwise, positive area (shoelace formula).
    p = mesh.nodes[mesh.triangles]
    cross = (p[:, 1, 0] - p[:, 0, 0]) * (p[:, 2, 1] - p[:, 0, 1]) - (
        p[:, 1, 1] - p[:, 0, 1]
    ) * (p[:, 2, 0] - p[:, 0, 0])
    assert np.all(cross > 0.0)
    # Every boundary edge is a free triangle edge exactly once and vice versa; a free edge of a
    # counter-clockwise triangle has its triangle (the domain) on its left.
    free = _free_directed_edges(mesh.triangles)
    bnd = [tuple(map(int, e)) for e in mesh.boundary_edges]
    assert len(bnd) == len(set(bnd))
    assert set(bnd) == free
    assert mesh.boundary_tags.shape == (len(bnd),)


# --- area and topology ------------------------------------------------------------------------


@pytest.mark.parametrize("make", [_rect_with_holes, _l_shape, _web_plate])
def test_area_equals_polygon_area(make) -> None:
    poly = make()
    mesh = mesh_polygon(poly, 5.0)
    _check_valid(mesh)
    # Reference: shapely polygon area. The mesh boundary is the input polygon itself (new
    # boundary points lie on the input segments), so only round-off separates the two.
    assert mesh.area_mm2() == pytest.approx(poly.area, rel=1e-10)


@pytest.mark.parametrize("make", [_rect_with_holes, _l_shape, _web_plate])
def test_euler_formula(make) -> None:
    poly = make()
    mesh = mesh_polygon(poly, 5.0)
    v = len(mesh.nodes)
    e = len(_undirected_edges(mesh.triangles))
    f = len(mesh.triangles)
    holes = len(poly.interiors)
    # Euler's formula for a planar graph, V - E + F = 2 with the outer face counted; each hole is
    # one more face that is not a triangle, so V - E + T = 1 - holes.
    assert v - e + f == 1 - holes


# --- boundary and tags ------------------------------------------------------------------------


def test_every_input_segment_is_covered_by_tagged_boundary_edges(rect_mesh: Mesh) -> None:
    poly = _rect_with_holes()
    rings = [("outline", poly.exterior)] + [(f"hole{i}", r) for i, r in enumerate(poly.interiors)]
    assert set(rect_mesh.tag_names) == {t for t, _ in rings}
    for tag, ring in rings:
        edges = rect_mesh.edges_of(tag)
        pts = np.asarray(ring.coords)
        a_all, b_all = pts[:-1], pts[1:]
        line = shapely.LineString(pts)
        ends = rect_mesh.nodes[edges]
        # Every edge end lies on its ring (shapely distance, reference library).
        assert shapely.distance(line, shapely.points(ends.reshape(-1, 2))).max() < 1e-9
        # Each input segment is covered exactly once: the edges lying on it add up to its length
        # (an edge lies on the segment when both its ends do).
        for a, b in zip(a_all, b_all, strict=True):
            seg = shapely.LineString([a, b])
            on = (shapely.distance(seg, shapely.points(ends[:, 0])) < 1e-9) & (
                shapely.distance(seg, shapely.points(ends[:, 1])) < 1e-9
            )
            total = np.hypot(*(ends[on, 1] - ends[on, 0]).T).sum()
            assert total == pytest.approx(np.hypot(*(b - a)), rel=1e-9)
        # Whole ring length matches too (shapely length).
        assert np.hypot(*(ends[:, 1] - ends[:, 0]).T).sum() == pytest.approx(line.length)


def test_boundary_edges_have_domain_on_left(rect_mesh: Mesh) -> None:
    poly = _rect_with_holes()
    a = rect_mesh.nodes[rect_mesh.boundary_edges[:, 0]]
    b = rect_mesh.nodes[rect_mesh.boundary_edges[:, 1]]
    mid = 0.5 * (a + b)
    d = b - a
    left = mid + 1e-4 * np.column_stack([-d[:, 1], d[:, 0]]) / np.hypot(*d.T)[:, None]
    right = mid - 1e-4 * np.column_stack([-d[:, 1], d[:, 0]]) / np.hypot(*d.T)[:, None]
    # Reference: shapely point-in-polygon. Just left of each edge is material, just right is not.
    assert shapely.contains_xy(poly, left[:, 0], left[:, 1]).all()
    assert not shapely.contains_xy(poly, right[:, 0], right[:, 1]).any()


def test_edges_of_and_nodes_of(rect_mesh: Mesh) -> None:
    e = rect_mesh.edges_of("hole1")
    nodes = rect_mesh.nodes_of("hole1")
    assert np.array_equal(nodes, np.unique(e))
    # hole1 is the circle of radius 3 about (70, 40): its nodes lie on the buffered polygon,
    # whose vertices are on the circle, so radii are between r cos(pi/64) and r.
    r = np.hypot(*(rect_mesh.nodes[nodes] - [70.0, 40.0]).T)
    assert r.max() <= 3.0 + 1e-9 and r.min() >= 3.0 * math.cos(math.pi / 64) - 1e-9
    # A closed ring has as many edges as nodes.
    assert len(e) == len(nodes)


def test_unknown_tag_lists_valid_tags(rect_mesh: Mesh) -> None:
    with pytest.raises(KeyError) as info:
        rect_mesh.edges_of("no_such_bore")
    text = str(info.value)
    for name in rect_mesh.tag_names:
        assert repr(name) in text
    with pytest.raises(KeyError):
        rect_mesh.nodes_of("no_such_bore")


# --- quality ----------------------------------------------------------------------------------


@pytest.mark.parametrize("make", [_rect_with_holes, _l_shape, _web_plate])
def test_min_angle(make) -> None:
    mesh = mesh_polygon(make(), 5.0)
    q = mesh.quality()
    # Target MIN_ANGLE_DEG (common practice, see above); angles recomputed here from the dot
    # product, independent of Mesh.quality.
    p = mesh.nodes[mesh.triangles]
    angles = []
    for i in range(3):
        u = p[:, (i + 1) % 3] - p[:, i]
        w = p[:, (i + 2) % 3] - p[:, i]
        cosang = np.einsum("ij,ij->i", u, w) / (np.hypot(*u.T) * np.hypot(*w.T))
        angles.append(np.degrees(np.arccos(np.clip(cosang, -1, 1))))
    own_min = np.min(angles)
    assert own_min >= MIN_ANGLE_DEG
    assert q.min_angle_deg == pytest.approx(own_min, abs=1e-9)
    assert q.count_below_20_deg == 0


def test_corner_angles_and_acute_tip() -> None:
    # A plate with a 15 degree tip: no triangle at the tip can have a smallest angle above 15
    # degrees (the triangle's angle there is at most the corner's), so the mesh reports it.
    tip = math.radians(15.0)
    poly = shapely.Polygon([(0, 0), (80, 0), (80, 80 * math.tan(tip))])
    mesh = mesh_polygon(poly, 4.0)
    _check_valid(mesh)
    corner = mesh.corner_angles_deg()
    at_tip = int(np.argmin(np.hypot(*mesh.nodes.T)))
    # Closed form: the polygon's vertex angles are 15, 90 and 75 degrees.
    assert corner[at_tip] == pytest.approx(15.0, abs=1e-9)
    assert mesh.quality().min_angle_deg <= 15.0 + 1e-9
    # Interior nodes are surrounded by a full turn, boundary nodes on straight edges by half.
    bnd = np.unique(mesh.boundary_edges)
    inner = np.setdiff1d(np.arange(len(mesh.nodes)), bnd)
    assert corner[inner] == pytest.approx(360.0)
    # Away from the tip (beyond 10 mm) the usual target holds.
    far = mesh.nodes[mesh.triangles].mean(axis=1)
    keep = np.hypot(*far.T) > 10.0
    assert triangle_angles_deg(mesh.nodes, mesh.triangles[keep]).min() >= MIN_ANGLE_DEG


@st.composite
def _layouts(draw):
    """A rectangle with up to 6 round holes kept 1 mm clear of each other and of the edges."""
    w = draw(st.floats(40.0, 160.0))
    h = draw(st.floats(30.0, 120.0))
    holes: list[shapely.Polygon] = []
    poly = box(0.0, 0.0, w, h)
    for _ in range(draw(st.integers(0, 6))):
        r = draw(st.floats(0.8, 10.0))
        x = draw(st.floats(0.0, 1.0))
        y = draw(st.floats(0.0, 1.0))
        segs = draw(st.integers(2, 16))
        cx = r + 1.0 + x * max(w - 2 * r - 2.0, 0.0)
        cy = r + 1.0 + y * max(h - 2 * r - 2.0, 0.0)
        d = Point(cx, cy).buffer(r, quad_segs=segs)
        if cx + r + 1.0 > w or cy + r + 1.0 > h or any(d.distance(o) < 1.0 for o in holes):
            continue
        holes.append(d)
        poly = poly.difference(d)
    return poly, draw(st.floats(1.0, 10.0))


@settings(max_examples=10, deadline=None, derandomize=True,
          suppress_health_check=[HealthCheck.too_slow])
@given(_layouts())
def test_random_layouts_valid_and_above_target(layout) -> None:
    poly, size = layout
    mesh = mesh_polygon(poly, size)
    _check_valid(mesh)
    # shapely area (reference) and the common-practice angle target: with holes at least 1 mm
    # apart and no input corner below 90 degrees the geometry allows it everywhere.
    assert mesh.area_mm2() == pytest.approx(poly.area, rel=1e-10)
    v, e, f = len(mesh.nodes), len(_undirected_edges(mesh.triangles)), len(mesh.triangles)
    assert v - e + f == 1 - len(poly.interiors)  # Euler's formula, as above
    assert mesh.quality().min_angle_deg >= MIN_ANGLE_DEG


def test_narrow_web_gets_two_elements_across() -> None:
    mesh = mesh_polygon(_web_plate(), 5.0)
    # The web between the holes is 1.5 mm wide at y = 20 (closed form: 9.5 - 2 * 4). A line
    # across it, just off the axis of symmetry, must cross at least two triangles.
    across = shapely.LineString([(WEB_X0 + WEB_R - 0.01, 20.013), (WEB_X1 - WEB_R + 0.01, 20.013)])
    tris = shapely.polygons(mesh.nodes[mesh.triangles])
    crossed = shapely.length(shapely.intersection(tris, across)) > 1e-6
    assert crossed.sum() >= 2
    # ... so at least one node sits inside the web, off both hole boundaries.
    bnodes = np.unique(mesh.boundary_edges)
    inner = np.setdiff1d(np.arange(len(mesh.nodes)), bnodes)
    x, y = mesh.nodes[inner].T
    assert np.any((np.abs(x - 30.0) < 0.75) & (np.abs(y - 20.0) < 0.75))


def test_narrow_web_between_straight_sided_holes() -> None:
    # Two 10 mm square holes 1.5 mm apart: their sides are long input segments, so only the
    # feature-size refinement can put elements across the web (closed form width 21.5-20 = 1.5).
    poly = box(0, 0, 60, 40).difference(box(10, 15, 20, 25)).difference(box(21.5, 15, 31.5, 25))
    mesh = mesh_polygon(poly, 5.0)
    _check_valid(mesh)
    assert mesh.quality().min_angle_deg >= MIN_ANGLE_DEG
    tris = shapely.polygons(mesh.nodes[mesh.triangles])
    for y in (16.013, 20.013, 24.013):
        across = shapely.LineString([(19.99, y), (21.51, y)])
        assert (shapely.length(shapely.intersection(tris, across)) > 1e-6).sum() >= 2


def test_boundary_recovery_when_refinement_is_off() -> None:
    # min_size_mm = size_mm turns the feature refinement off, so the 0.5 mm web between the two
    # rectangular holes keeps 5 mm boundary edges whose diametral circles hold nodes of the
    # other hole: segments go missing from the first Delaunay triangulation and must be
    # recovered by splitting. The mesh must still conform to every input segment.
    poly = box(0, 0, 60, 40).difference(box(10, 15, 20, 25)).difference(box(20.5, 12.5, 30.5, 27.5))
    mesh = mesh_polygon(poly, 5.0, min_size_mm=5.0)
    _check_valid(mesh)
    assert mesh.area_mm2() == pytest.approx(poly.area, rel=1e-10)  # shapely area, reference
    ends = mesh.nodes[mesh.boundary_edges]
    # Every boundary edge lies on the input boundary (shapely distance, reference library).
    assert shapely.distance(poly.boundary, shapely.points(ends.reshape(-1, 2))).max() < 1e-9
    # The edges cover the boundary length exactly once (shapely length).
    assert np.hypot(*(ends[:, 1] - ends[:, 0]).T).sum() == pytest.approx(poly.boundary.length)


def test_quality_measures_of_known_triangles() -> None:
    # Closed form: an equilateral triangle has all angles 60 deg and aspect ratio 1; the right
    # isosceles triangle with unit legs has 45/45/90 and longest^2 / (2 A) / (2 / sqrt 3) =
    # 2 / 1 * sqrt(3) / 2 = sqrt(3).
    eq = Mesh(np.array([[0, 0], [1, 0], [0.5, math.sqrt(3) / 2]]), np.array([[0, 1, 2]]),
              np.zeros((0, 2), int), np.zeros(0, int), ())
    q = eq.quality()
    assert q.min_angle_deg == pytest.approx(60.0)
    assert q.max_aspect_ratio == pytest.approx(1.0)
    ri = Mesh(np.array([[0, 0], [1, 0], [0, 1.0]]), np.array([[0, 1, 2]]),
              np.zeros((0, 2), int), np.zeros(0, int), ())
    q = ri.quality()
    assert q.min_angle_deg == pytest.approx(45.0)
    assert q.max_aspect_ratio == pytest.approx(math.sqrt(3.0))
    assert sorted(triangle_angles_deg(ri.nodes, ri.triangles)[0]) == pytest.approx([45, 45, 90])


# --- sizing -----------------------------------------------------------------------------------


def test_refined_near_small_hole() -> None:
    # A 3 mm square hole: its sides are 3 mm input segments, so refinement below that comes from
    # the feature size (half width 1.5 mm), not from the input sampling.
    poly = box(0, 0, 200, 100).difference(box(48.5, 48.5, 51.5, 51.5))
    mesh = mesh_polygon(poly, 10.0)
    lengths = mesh.edge_lengths_mm()
    centre = mesh.nodes[mesh.triangles].mean(axis=1)
    dist = np.hypot(centre[:, 0] - 50, centre[:, 1] - 50)
    near = lengths[dist < 3.0].mean()
    far = lengths[dist > 60.0].mean()
    # A 3 mm hole cannot be meshed with 10 mm elements: elements at the hole must be well below
    # the hole width, far away near the requested 10 mm.
    assert near < 1.5
    assert 7.0 < far < 13.0


def test_halving_size_quadruples_triangles() -> None:
    poly = box(0, 0, 100, 60).difference(_disc(50, 30, 15))
    n1 = len(mesh_polygon(poly, 4.0).triangles)
    n2 = len(mesh_polygon(poly, 2.0).triangles)
    # Triangle count ~ area / h^2 (dimensional analysis): halving h gives about 4x.
    assert 3.0 <= n2 / n1 <= 5.0


def test_uniform_node_density_matches_triangular_lattice() -> None:
    mesh = mesh_polygon(box(0, 0, 100, 100), 2.0)
    # Closed form: a lattice of equilateral triangles of side h has 2 / (sqrt(3) h^2) nodes per
    # unit area, so 10000 mm^2 at h = 2 mm holds about 2887 nodes (plus boundary effects).
    expected = 10000.0 * 2.0 / (math.sqrt(3.0) * 4.0)
    assert 0.9 * expected < len(mesh.nodes) < 1.15 * expected


def test_max_nodes_refuses_with_estimate() -> None:
    with pytest.raises(ValueError, match=r"about [\d,]+ nodes"):
        mesh_polygon(box(0, 0, 100, 100), 1.0, max_nodes=1000)
    # The same mesh is allowed when the limit is generous.
    mesh = mesh_polygon(box(0, 0, 100, 100), 5.0, max_nodes=10_000)
    assert len(mesh.nodes) < 10_000


def test_deterministic() -> None:
    m1 = mesh_polygon(_rect_with_holes(), 5.0)
    m2 = mesh_polygon(_rect_with_holes(), 5.0)
    for f in ("nodes", "triangles", "boundary_edges", "boundary_tags"):
        assert np.array_equal(getattr(m1, f), getattr(m2, f))
    assert m1.tag_names == m2.tag_names


def test_default_size_from_bbox_diagonal() -> None:
    mesh = mesh_polygon(box(0, 0, 300, 400))
    # Default size = diagonal / 40 = 500 / 40 = 12.5 mm; outline edges are that long or a little
    # shorter (each side cut into a whole number of pieces: 300 / 24 = 12.5, 400 / 32 = 12.5).
    lengths = np.hypot(*(mesh.nodes[mesh.boundary_edges[:, 1]]
                         - mesh.nodes[mesh.boundary_edges[:, 0]]).T)
    assert lengths == pytest.approx(12.5)


# --- input checks -----------------------------------------------------------------------------


def test_overlapping_holes_are_refused() -> None:
    rings = [
        TaggedRing(np.array([[0, 0], [50, 0], [50, 50], [0, 50.0]]), "outline", False),
        TaggedRing(np.asarray(_disc(20, 25, 6).exterior.coords)[:-1], "a", True),
        TaggedRing(np.asarray(_disc(28, 25, 6).exterior.coords)[:-1], "b", True),
    ]
    with pytest.raises(ValueError, match="merge"):
        mesh_rings(rings, 5.0)


def test_needs_exactly_one_outline() -> None:
    sq = np.array([[0, 0], [10, 0], [10, 10], [0, 10.0]])
    with pytest.raises(ValueError, match="exactly one outline"):
        mesh_rings([TaggedRing(sq, "a", False), TaggedRing(sq + 20, "b", False)], 2.0)


def test_ring_orientation_is_normalised() -> None:
    sq = np.array([[0, 0], [10, 0], [10, 10], [0, 10.0]])
    hole = np.asarray(_disc(5, 5, 2).exterior.coords)[:-1]
    m1 = mesh_rings([TaggedRing(sq, "o", False), TaggedRing(hole, "h", True)], 2.0)
    m2 = mesh_rings([TaggedRing(sq[::-1], "o", False), TaggedRing(hole[::-1], "h", True)], 2.0)
    _check_valid(m1)
    _check_valid(m2)
    assert m1.area_mm2() == pytest.approx(m2.area_mm2())


# --- edge flips -------------------------------------------------------------------------------


def test_flip_matches_scipy_delaunay() -> None:
    # A thin quadrilateral split along its long diagonal is not Delaunay; the flip must give the
    # same triangles as Qhull's Delaunay triangulation (scipy, reference library).
    pts = np.array([[0.0, 0.0], [1.0, -0.3], [2.0, 0.0], [1.0, 0.3]])
    tri = np.array([[0, 1, 2], [0, 2, 3]])
    out = flip_to_delaunay(pts, tri)
    ref = Delaunay(pts).simplices
    canon = {tuple(sorted(t)) for t in out.tolist()}
    assert canon == {tuple(sorted(t)) for t in ref.tolist()}


def test_bayer_matrix_is_a_permutation() -> None:
    # Bayer (1973): the 2^k matrix holds each threshold 0 .. 4^k - 1 once; M2 = [[0, 2], [3, 1]].
    assert bayer_matrix(1).tolist() == [[0, 2], [3, 1]]
    assert sorted(bayer_matrix(3).ravel().tolist()) == list(range(64))


# --- plate input ------------------------------------------------------------------------------


def test_arc_sampling_points_on_circle_and_sagitta() -> None:
    c = circle((10.0, 5.0), 6.0, ccw=False)
    pts = sample_contour(c, 4.0)
    r = np.hypot(pts[:, 0] - 10.0, pts[:, 1] - 5.0)
    assert r == pytest.approx(6.0, abs=1e-12)
    # Chord limit s = min(4, 0.5 * 6) = 3 mm, sagitta limit s / 50; sagitta of a chord c on a
    # circle of radius r is r - sqrt(r^2 - c^2 / 4) (closed form).
    chord = np.hypot(*(np.roll(pts, -1, axis=0) - pts).T)
    assert chord.max() <= 3.0 + 1e-12
    assert (6.0 - np.sqrt(36.0 - chord**2 / 4.0)).max() <= 3.0 / 50.0 + 1e-12


def test_plate_mesh_area_and_merged_tags() -> None:
    plate = make_plate(
        rect_contour(120.0, 80.0),
        (
            round_hole("left_bore", (-30.0, 0.0), 22.0),
            round_hole("m1", (20.0, 10.0), 3.2),
            round_hole("m2", (22.0, 10.0), 3.2),  # overlaps m1 (centres 2 mm apart, d 3.2)
            slot_feature("strap", (30.0, -20.0), 5.0, 30.0),
        ),
    )
    size = 5.0
    rings = plate_rings(plate, size)
    tags = [r.tag for r in rings]
    assert tags == ["outline", "left_bore", "m1+m2", "strap"]
    mesh = mesh_rings(rings, size)
    _check_valid(mesh)
    # Exact area, closed form: rectangle - bore - slot (rectangle 30 x 5 + circle d 5) - union of
    # two circles of radius 1.6 at distance 2: 2 pi r^2 - lens, lens = 2 r^2 acos(d / 2r) -
    # (d / 2) sqrt(4 r^2 - d^2).
    r, d = 1.6, 2.0
    lens = 2 * r * r * math.acos(d / (2 * r)) - (d / 2) * math.sqrt(4 * r * r - d * d)
    exact = 120 * 80 - math.pi * 11**2 - (30 * 5 + math.pi * 2.5**2) - (2 * math.pi * r * r - lens)
    # Chords lie inside each hole's circle, so the mesh has a little more material than exact,
    # by at most (perimeter x largest sagitta) per hole; sagitta <= s / 50 with s <= size.
    perim = 2 * math.pi * 11 + (2 * 30 + 2 * math.pi * 2.5) + 2 * 2 * math.pi * r
    assert 0.0 <= mesh.area_mm2() - exact <= perim * size / 50.0


def test_tangent_holes_are_merged() -> None:
    # Two d = 6 holes whose centres are exactly 6 mm apart touch at one point: they become one
    # ring tagged with both ids.
    plate = make_plate(
        rect_contour(80.0, 50.0),
        (round_hole("aft_pin", (-3.0, 0.0), 6.0), round_hole("fore_pin", (3.0, 0.0), 6.0)),
    )
    rings = plate_rings(plate, 4.0)
    assert [r.tag for r in rings] == ["outline", "aft_pin+fore_pin"]
    mesh = mesh_rings(rings, 4.0)
    _check_valid(mesh)
    assert mesh.tag_names == ("outline", "aft_pin+fore_pin")
    # Closed form: rectangle minus two circles of radius 3 (they share no area).
    exact = 80 * 50 - 2 * math.pi * 9
    assert abs(mesh.area_mm2() - exact) <= 2 * 2 * math.pi * 3 * 4.0 / 50.0


def test_hole_cutting_outline_notches_it() -> None:
    plate = make_plate(rect_contour(100.0, 60.0), (round_hole("edge_notch", (50.0, 0.0), 10.0),))
    rings = plate_rings(plate, 5.0)
    assert [r.tag for r in rings] == ["outline+edge_notch"]
    mesh = mesh_rings(rings, 5.0)
    _check_valid(mesh)
    # Closed form: half of the d = 10 circle lies inside the plate.
    exact = 100 * 60 - 0.5 * math.pi * 25
    assert 0.0 <= mesh.area_mm2() - exact <= math.pi * 5 * 5.0 / 50.0 + 1e-9
