"""Conforming Delaunay triangle mesher for plates with holes.

Method (a conforming Delaunay mesher with distmesh smoothing):

1. every input ring is kept as a chain of boundary edges, each input segment cut into pieces of
   the local size (new points lie ON the segment) - see :mod:`.sizing` for the size field, which
   is refined near holes, narrow webs and short input segments and graded into the interior;
2. interior nodes come from nested, dithered triangular lattices that follow the size field
   (:func:`.sizing.graded_lattice`), dropped outside the region and near the boundary;
3. Delaunay triangulation (Qhull via scipy.spatial.Delaunay) of all nodes; triangles whose
   centroid lies outside the region are removed;
4. boundary recovery: a boundary segment missing from the triangulation has the interior nodes
   that encroach on it (inside its diametral circle) removed, or else is split at its midpoint,
   and the nodes are triangulated again (segment splitting as in conforming Delaunay
   triangulation; J. R. Shewchuk, "Delaunay refinement algorithms for triangular mesh
   generation", Computational Geometry 22 (2002), section 2);
5. smoothing by the truss-force iteration of P.-O. Persson and G. Strang, "A simple mesh
   generator in MATLAB", SIAM Review 46 (2004) 329-345, with boundary nodes fixed; instead of a
   full re-triangulation the connectivity is made Delaunay again by Lawson edge flips whenever
   nodes have moved far (boundary edges are never flipped, so the mesh stays conforming);
6. a short optimisation-based clean-up of the interior corners of triangles still below 20
   degrees (moves accepted only when the worst angle around the node improves).
   Steps 5 and 6 are :func:`.smoothing.smooth_interior`.

Where the geometry itself forbids 20 degrees (an input corner sharper than that, an input
segment or web far below ``min_size_mm``) the mesh is still valid and conforming; the corner
angles are available from :meth:`.mesh.Mesh.corner_angles_deg`.

All lengths in mm. Vectorised numpy: loops are over rings, levels or iterations only.
"""

from __future__ import annotations

import math
from collections.abc import Sequence

import numpy as np
import shapely
from scipy.spatial import Delaunay, cKDTree

from platewright.fea.mesh.boundary import (
    Region,
    TaggedRing,
    default_size_mm,
    dense_boundary,
    discretize_boundary,
    region_of,
)
from platewright.fea.mesh.sizing import SizeField, boundary_size_field, graded_lattice
from platewright.fea.mesh.smoothing import smooth_interior
from platewright.fea.mesh.triangles import Mesh, triangle_areas_mm2

__all__ = ["mesh_polygon", "mesh_rings"]

#: Interior lattice nodes closer to the boundary than this many local sizes are dropped.
_BOUNDARY_GAP = 0.55
_RECOVERY_ROUNDS = 30
#: Default smallest size as a fraction of the element size.
_DEFAULT_MIN_FRACTION = 1.0 / 50.0


def _isin_int(a: np.ndarray, b: np.ndarray) -> np.ndarray:
    """Boolean mask: which entries of int array ``a`` occur in int array ``b``."""
    s = np.sort(b)
    if len(s) == 0:
        return np.zeros(len(a), dtype=bool)
    pos = np.minimum(np.searchsorted(s, a), len(s) - 1)
    return s[pos] == a


def _edge_keys(tri: np.ndarray, n: int) -> np.ndarray:
    e = np.vstack([tri[:, [0, 1]], tri[:, [1, 2]], tri[:, [2, 0]]])
    e.sort(axis=1)
    return e[:, 0] * n + e[:, 1]


def _delaunay(nodes: np.ndarray) -> np.ndarray:
    tri = Delaunay(nodes, qhull_options="Qbb Qc Qz Q12")
    if len(tri.coplanar):
        raise RuntimeError(
            f"{len(tri.coplanar)} nodes coincide within round-off; the input has near-duplicate "
            "points"
        )
    return tri.simplices.astype(np.int64)


def _split_slivers(nodes: np.ndarray, tri: np.ndarray) -> np.ndarray:
    """Replace each zero-area triangle (three collinear nodes, e.g. a node placed on a hull edge
    between two others) and its neighbour across the long edge by two triangles that use the
    middle node, so that node gets proper triangles and the short edges exist."""
    p = nodes[tri]
    cross = ((p[:, 1, 0] - p[:, 0, 0]) * (p[:, 2, 1] - p[:, 0, 1])
             - (p[:, 2, 0] - p[:, 0, 0]) * (p[:, 1, 1] - p[:, 0, 1]))
    sq = np.stack([((p[:, (k + 1) % 3] - p[:, (k + 2) % 3]) ** 2).sum(axis=1)
                   for k in range(3)], axis=1)  # squared length of the edge opposite corner k
    flat = np.flatnonzero(np.abs(cross) <= 1e-10 * sq.max(axis=1))
    if flat.size == 0:
        return tri
    tri = tri.copy()
    drop: list[int] = []
    for t in flat:
        k = int(np.argmax(sq[t]))
        m, a, b = tri[t, k], tri[t, (k + 1) % 3], tri[t, (k + 2) % 3]
        other = np.flatnonzero((tri == a).any(axis=1) & (tri == b).any(axis=1))
        other = [o for o in other if o != t and o not in drop]
        if not other:
            continue
        o = other[0]
        x = [v for v in tri[o] if v != a and v != b][0]
        new = []
        for u, v in ((a, m), (m, b)):
            c = np.array([u, v, x])
            q = nodes[c]
            if (q[1, 0] - q[0, 0]) * (q[2, 1] - q[0, 1]) - (q[2, 0] - q[0, 0]) * (q[1, 1] - q[0, 1]) < 0:
                c = c[[0, 2, 1]]
            new.append(c)
        tri[o] = new[0]
        tri[t] = new[1]
        drop.append(o)
    return tri


def _inside_triangles(nodes: np.ndarray, tri: np.ndarray, poly: shapely.Polygon) -> np.ndarray:
    c = nodes[tri].mean(axis=1)
    t = tri[shapely.contains_xy(poly, c[:, 0], c[:, 1])]
    # A zero-area triangle of three collinear boundary nodes has its centroid on the boundary
    # and may pass the test: it is not part of the region.
    p = nodes[t]
    longest = np.max([((p[:, k] - p[:, (k + 1) % 3]) ** 2).sum(axis=1) for k in range(3)],
                     axis=0) if len(t) else np.zeros(0)
    t = t[np.abs(triangle_areas_mm2(nodes, t)) > 1e-12 * longest]
    neg = triangle_areas_mm2(nodes, t) < 0.0
    t[neg] = t[neg][:, [0, 2, 1]]
    return t


def _missing_segments(tri_all: np.ndarray, segs: np.ndarray, n: int) -> np.ndarray:
    s = np.sort(segs, axis=1)
    return ~_isin_int(s[:, 0] * n + s[:, 1], _edge_keys(tri_all, n))


class _Work:
    """Mutable working state: boundary nodes (fixed), interior nodes and boundary segments."""

    def __init__(self, bnodes: np.ndarray, segs: np.ndarray, tags: np.ndarray,
                 inner: np.ndarray) -> None:
        self.bnodes = bnodes
        self.segs = segs
        self.tags = tags
        self.inner = inner

    @property
    def nodes(self) -> np.ndarray:
        return np.vstack([self.bnodes, self.inner])

    def recover(self) -> np.ndarray:
        """Make every boundary segment a Delaunay edge; returns all Delaunay triangles."""
        for _ in range(_RECOVERY_ROUNDS):
            nodes = self.nodes
            tri_all = _split_slivers(nodes, _delaunay(nodes))
            missing = _missing_segments(tri_all, self.segs, len(nodes))
            if not missing.any():
                return tri_all
            ms = self.segs[missing]
            a, b = nodes[ms[:, 0]], nodes[ms[:, 1]]
            centre = 0.5 * (a + b)
            radius = 0.5 * np.hypot(*(b - a).T)
            drop = np.zeros(len(self.inner), dtype=bool)
            split = np.ones(len(ms), dtype=bool)
            if len(self.inner):
                tree = cKDTree(self.inner)
                hits = tree.query_ball_point(centre, radius * (1.0 + 1e-9))
                for s, h in enumerate(hits):
                    if h:
                        drop[h] = True
                        split[s] = False
            self.inner = self.inner[~drop]
            if split.any():
                self._split(np.flatnonzero(missing)[split])
        raise RuntimeError(
            f"boundary recovery did not converge after {_RECOVERY_ROUNDS} rounds; "
            "the input may have near-coincident rings or very sharp corners"
        )

    def _split(self, which: np.ndarray) -> None:
        nb = len(self.bnodes)
        s = self.segs[which]
        mid = 0.5 * (self.bnodes[s[:, 0]] + self.bnodes[s[:, 1]])
        new = nb + np.arange(len(which))
        self.bnodes = np.vstack([self.bnodes, mid])
        second = np.column_stack([new, s[:, 1]])
        self.segs = self.segs.copy()
        self.segs[which, 1] = new
        self.segs = np.vstack([self.segs, second])
        self.tags = np.concatenate([self.tags, self.tags[which]])


def _recover_and_smooth(work: _Work, reg: Region, field: SizeField) -> np.ndarray:
    """Boundary recovery, then smoothing of the interior nodes; returns the inside triangles.

    Recovery may split boundary segments and drop interior nodes; the smoothed interior nodes
    are written back to ``work.inner``.
    """
    tri_all = work.recover()
    tri = _inside_triangles(work.nodes, tri_all, reg.polygon)
    nb = len(work.bnodes)
    if len(work.inner) == 0:
        return tri
    p, tri = smooth_interior(work.nodes, tri, nb, dense_boundary(work.bnodes, work.segs),
                             reg.polygon, field)
    work.inner = p[nb:]
    return tri


def _interior_nodes(
    reg: Region, field: SizeField, bnodes: np.ndarray, segs: np.ndarray,
    fixed: np.ndarray | None = None,
) -> np.ndarray:
    """Lattice nodes inside the region, kept clear of the boundary: (p, 2) float, mm."""
    bbox = tuple(float(v) for v in reg.polygon.bounds)
    pts = graded_lattice(
        bbox,
        lambda xy: field(xy, cap_mm=2.0 * field.max_size_mm),
        field.max_size_mm,
        field.min_size_mm,
        field.grading,
    )
    inside = shapely.contains_xy(reg.polygon, pts[:, 0], pts[:, 1])
    pts = pts[inside]
    if len(pts) == 0:
        return pts
    h = field(pts)
    seg_len = np.hypot(*(bnodes[segs[:, 1]] - bnodes[segs[:, 0]]).T)
    per_edge = 4
    tree = cKDTree(dense_boundary(bnodes, segs, per_edge))
    db, idx = tree.query(pts)
    near_len = seg_len[idx // per_edge]
    keep = db >= _BOUNDARY_GAP * np.maximum(h, near_len)
    if fixed is not None and len(fixed):
        dp, _ = cKDTree(fixed).query(pts)
        keep &= dp >= _BOUNDARY_GAP * h
    return pts[keep]


def _points_onto_rings(
    rings: Sequence[TaggedRing], points: np.ndarray, field: SizeField, polygon: shapely.Polygon
) -> tuple[list[TaggedRing], np.ndarray]:
    """Make every point (p, 2) mm a mesh node, or the nearest boundary node.

    A point outside ``polygon`` (the region) or within a quarter of the local size of the
    boundary goes onto the boundary: its projection on the nearest ring segment becomes a ring
    vertex (kept as a boundary node by the mesher), or that segment's nearer end is used when
    the projection lies within 0.15 of the segment's length of it (no sliver). The other points
    are returned as fixed interior nodes (q, 2). The caller can measure how far each moved.
    """
    out = [TaggedRing(np.asarray(r.points_mm, dtype=float).reshape(-1, 2), r.tag, r.is_hole)
           for r in rings]
    pts = np.asarray(points, dtype=float).reshape(-1, 2)
    if len(pts):
        scale = 1e-9 * max(1.0, float(np.abs(pts).max()))
        pts = pts[np.unique(np.round(pts / scale).astype(np.int64), axis=0,
                            return_index=True)[1]]
    inner: list[np.ndarray] = []
    for p in pts:
        best = (math.inf, -1, -1, 0.0)
        for k, r in enumerate(out):
            a = r.points_mm
            d = np.roll(a, -1, axis=0) - a
            t = np.clip(np.einsum("ij,ij->i", p - a, d) / np.einsum("ij,ij->i", d, d), 0.0, 1.0)
            dist = np.hypot(*(a + t[:, None] * d - p).T)
            j = int(np.argmin(dist))
            if dist[j] < best[0]:
                best = (float(dist[j]), k, j, float(t[j]))
        dist, k, j, t = best
        h = float(field(p[None, :])[0])
        if bool(shapely.contains_xy(polygon, p[0], p[1])) and dist >= 0.25 * h:
            inner.append(p)
            continue
        if t < 0.15 or t > 0.85:
            continue  # the segment's end, already a boundary node
        a = out[k].points_mm
        q = a[j] + t * (a[(j + 1) % len(a)] - a[j])
        out[k] = TaggedRing(np.insert(a, j + 1, q, axis=0), out[k].tag, out[k].is_hole)
    return out, np.array(inner, dtype=float).reshape(-1, 2)


def _estimate_nodes(reg: Region, field: SizeField, boundary_nodes: int) -> float:
    """Expected node count: boundary nodes + integral of 2 / (sqrt(3) h^2) over the region."""
    x0, y0, x1, y1 = reg.polygon.bounds
    cells = 200
    dx = (x1 - x0) / cells
    dy = (y1 - y0) / cells
    gx, gy = np.meshgrid(x0 + dx * (np.arange(cells) + 0.5), y0 + dy * (np.arange(cells) + 0.5))
    inside = shapely.contains_xy(reg.polygon, gx.ravel(), gy.ravel())
    h = field(np.column_stack([gx.ravel()[inside], gy.ravel()[inside]]))
    return float(boundary_nodes + np.sum(2.0 / (math.sqrt(3.0) * h * h)) * dx * dy)


def _free_edges(tri: np.ndarray, n: int) -> np.ndarray:
    """Directed triangle edges whose reverse is not a triangle edge: (k, 2) int."""
    e = np.vstack([tri[:, [0, 1]], tri[:, [1, 2]], tri[:, [2, 0]]])
    fwd = e[:, 0] * n + e[:, 1]
    rev = e[:, 1] * n + e[:, 0]
    return e[~_isin_int(fwd, rev)]


def _finish(work: _Work, tri: np.ndarray, tag_names: tuple[str, ...]) -> Mesh:
    nodes = work.nodes
    used = np.zeros(len(nodes), dtype=bool)
    used[tri.ravel()] = True
    if not used[: len(work.bnodes)].all():
        raise RuntimeError("a boundary node is in no triangle; the mesh does not conform")
    new_index = np.cumsum(used) - 1
    nodes = nodes[used]
    tri = new_index[tri]
    segs = new_index[work.segs]
    n = len(nodes)
    free = _free_edges(tri, n)
    free_keys = np.sort(free[:, 0] * n + free[:, 1])
    seg_keys = np.sort(segs[:, 0] * n + segs[:, 1])
    if len(free_keys) != len(seg_keys) or not np.array_equal(free_keys, seg_keys):
        raise RuntimeError(
            "mesh boundary does not match the input rings "
            f"({len(free_keys)} free edges, {len(seg_keys)} boundary segments)"
        )
    if np.any(triangle_areas_mm2(nodes, tri) <= 0.0):
        raise RuntimeError("mesh has a triangle of zero area")
    tags = work.tags.astype(np.int64)
    for arr in (nodes, tri, segs, tags):
        arr.setflags(write=False)
    return Mesh(nodes, tri, segs, tags, tag_names)


def mesh_rings(
    rings: Sequence[TaggedRing],
    size_mm: float | None = None,
    *,
    min_size_mm: float | None = None,
    grading: float = 0.3,
    max_nodes: int | None = None,
    fixed_points_mm: np.ndarray | None = None,
    size_points: np.ndarray | None = None,
) -> Mesh:
    """Triangle mesh of the region bounded by ``rings`` (one outline, any number of holes).

    ``size_mm``: largest element edge length, mm (default: bounding-box diagonal / 40).
    ``min_size_mm``: smallest size the feature-size refinement may ask for, mm (default
    ``size_mm / 50``; input segments shorter than it still set the size next to them).
    ``grading``: how fast sizes may grow away from small features, mm per
    mm. ``max_nodes``: refuse (ValueError, with the estimate) when more nodes are expected.

    Every input segment is kept as one or more boundary edges tagged with its ring's tag; the
    domain lies to the left of each boundary edge. Raises ValueError for rings that do not
    bound a valid region (holes outside the outline, touching or overlapping rings).
    """
    reg = region_of(rings)
    h0 = default_size_mm(rings) if size_mm is None else float(size_mm)
    if not (h0 > 0.0 and math.isfinite(h0)):
        raise ValueError(f"size_mm must be a positive number, got {size_mm!r}")
    hmin = h0 * _DEFAULT_MIN_FRACTION if min_size_mm is None else float(min_size_mm)
    if not (0.0 < hmin <= h0):
        raise ValueError(f"min_size_mm must be in (0, size_mm], got {min_size_mm!r}")
    if not grading > 0.0:
        raise ValueError(f"grading must be positive, got {grading!r}")
    field = boundary_size_field(reg.seg_a, reg.seg_b, h0, hmin, grading)
    extra = np.zeros((0, 3)) if size_points is None else \
        np.asarray(size_points, dtype=float).reshape(-1, 3)
    fixed = np.zeros((0, 2))
    if fixed_points_mm is not None and len(fixed_points_mm):
        # A point a little off the boundary gets elements small enough to stay where it is.
        fp = np.asarray(fixed_points_mm, dtype=float).reshape(-1, 2)
        gap = shapely.distance(reg.polygon.boundary, shapely.points(fp))
        near = (gap > hmin / 3.5) & (gap < 0.25 * field(fp))
        extra = np.vstack([extra, np.column_stack([fp[near], 3.5 * gap[near]])])
        probe = field.with_points(extra[:, :2], extra[:, 2]) if len(extra) else field
        rings, fixed = _points_onto_rings(rings, fp, probe, reg.polygon)
        reg = region_of(rings)
        field = boundary_size_field(reg.seg_a, reg.seg_b, h0, hmin, grading)
    if len(extra):
        field = field.with_points(extra[:, :2], extra[:, 2])
    bnodes, segs, tags = discretize_boundary(reg, field)
    if max_nodes is not None:
        estimate = _estimate_nodes(reg, field, len(bnodes))
        if estimate > max_nodes:
            raise ValueError(
                f"mesh would have about {estimate:,.0f} nodes, more than max_nodes={max_nodes:,}; "
                "use a larger size_mm or min_size_mm, or raise max_nodes"
            )
    inner = _interior_nodes(reg, field, bnodes, segs, fixed)
    work = _Work(np.vstack([bnodes, fixed]), segs, tags, inner)
    tri = _recover_and_smooth(work, reg, field)
    return _finish(work, tri, reg.tag_names)


def mesh_polygon(
    polygon: shapely.Polygon,
    size_mm: float | None = None,
    tags: Sequence[str] | None = None,
    **kw: object,
) -> Mesh:
    """Mesh a shapely Polygon (mm): exterior tagged ``"outline"``, interiors ``"hole0"``, ...

    ``tags`` (optional) names the exterior then each interior in order. Other keyword arguments
    go to :func:`mesh_rings`.
    """
    if not isinstance(polygon, shapely.Polygon) or polygon.is_empty:
        raise ValueError("mesh_polygon needs a non-empty shapely Polygon")
    rings_xy = [np.asarray(polygon.exterior.coords)[:-1]]
    rings_xy += [np.asarray(r.coords)[:-1] for r in polygon.interiors]
    names = ["outline"] + [f"hole{i}" for i in range(len(rings_xy) - 1)]
    if tags is not None:
        names = list(tags)
        if len(names) != len(rings_xy):
            raise ValueError(f"tags has {len(names)} names for {len(rings_xy)} rings")
    rings = [TaggedRing(p, t, i > 0) for i, (p, t) in enumerate(zip(rings_xy, names))]
    return mesh_rings(rings, size_mm, **kw)  # type: ignore[arg-type]
