"""Element densities -> cuttable lightening holes (exact contours of lines and arcs).

Steps, all lengths in mm:

1. element densities (m,) become node values by area-weighted averaging;
2. the void (node value below ``threshold``) is traced per triangle on the linear interpolant
   (marching triangles: each triangle contributes the part where the interpolant is below the
   threshold, a triangle or a quadrilateral), and the pieces are united (shapely);
3. manufacturing rules by morphology: the void is clipped to the design region grown by half a
   web and eroded by half the minimum web into cores at least one web apart; each core grows
   back into its void by half a web except within 1.5 webs of another core (so two holes stay
   a web apart and a hole far from others keeps its whole void), the result is clipped to the
   design region, opened with the corner radius (every convex corner
   of a hole becomes an arc of at least that radius, and no part is narrower than two radii),
   and holes narrower than ``min_hole_mm`` are dropped; a hole round an island of material gets
   four bridges one web wide (the island must stay attached); holes still closer than a web (a
   neck that erosion split) drop the smaller one;
4. each hole's boundary is written as a clockwise :class:`~platewright.geometry.plate.curves.Contour`
   of lines and arcs fitted greedily within ``chord_tol_mm`` of the traced shape, with no
   segment shorter than ``MIN_SEGMENT_MM * 100``.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Sequence

import numpy as np
import shapely
from scipy.spatial import cKDTree
from shapely.affinity import scale
from shapely.geometry.polygon import orient

from platewright.fea.lighten.design_region import DesignRegion
from platewright.geometry.model import Feature
from platewright.geometry.plate.curves import Contour
from platewright.geometry.tolerances import MIN_SEGMENT_MM

__all__ = [
    "LIGHTENING_KIND",
    "MIN_HOLE_SEGMENT_MM",
    "nodal_densities",
    "void_polygon",
    "enforce_rules",
    "fit_contour",
    "holes_from_density",
    "hole_features",
    "mirror_lines",
    "symmetrised",
    "level_thresholds",
]

#: Feature kind of every lightening hole.
LIGHTENING_KIND = "lightening"
#: Shortest segment written in a lightening hole, mm.
MIN_HOLE_SEGMENT_MM = MIN_SEGMENT_MM * 100.0
#: Arc segments per quarter circle used by the shapely buffers of the morphology.
_QUAD_SEGS = 16
#: Round-off allowed on a web made exactly one web wide (a bridge), mm.
_WEB_TOL_MM = 1e-3
#: Precision grid of the void overlay, mm.
_GRID_MM = 1e-5


def nodal_densities(nodes: np.ndarray, triangles: np.ndarray, densities: np.ndarray) -> np.ndarray:
    """Area-weighted mean of the element densities round each node.

    nodes: (n, 2) float mm; triangles: (m, 3) int; densities: (m,) float. Returns (n,) float.
    """
    p = nodes[triangles]
    area = 0.5 * np.abs((p[:, 1, 0] - p[:, 0, 0]) * (p[:, 2, 1] - p[:, 0, 1])
                        - (p[:, 2, 0] - p[:, 0, 0]) * (p[:, 1, 1] - p[:, 0, 1]))
    num = np.zeros(len(nodes))
    den = np.zeros(len(nodes))
    for k in range(3):
        np.add.at(num, triangles[:, k], area * densities)
        np.add.at(den, triangles[:, k], area)
    return num / np.maximum(den, 1e-300)


def void_polygon(nodes: np.ndarray, triangles: np.ndarray, values: np.ndarray,
                 threshold: float) -> shapely.Geometry:
    """Where the linear interpolant of the node ``values`` (n,) is below ``threshold`` (mm).

    nodes: (n, 2) float mm; triangles: (m, 3) int. Returns a shapely (Multi)Polygon, maybe empty.
    """
    v = values[triangles]
    below = v < threshold
    full = below.all(axis=1)
    part = below.any(axis=1) & ~full
    pieces = [shapely.polygons(nodes[triangles[full]])] if full.any() else []
    cut = []
    for t in np.flatnonzero(part):
        tri = triangles[t]
        ring = []
        for a in range(3):
            i, j = tri[a], tri[(a + 1) % 3]
            vi, vj = values[i], values[j]
            if vi < threshold:
                ring.append(nodes[i])
            if (vi < threshold) != (vj < threshold):
                # the same point for both triangles of an edge: always from its lower node
                a0, a1 = (i, j) if i < j else (j, i)
                s = (threshold - values[a0]) / (values[a1] - values[a0])
                ring.append(nodes[a0] + s * (nodes[a1] - nodes[a0]))
        if len(ring) >= 3:
            cut.append(shapely.Polygon(ring))
    if cut:
        pieces.append(np.array(cut, dtype=object))
    if not pieces:
        return shapely.Polygon()
    geoms = np.concatenate([np.atleast_1d(p) for p in pieces])
    geoms = geoms[shapely.area(geoms) > 1e-9]
    # Pieces share exact edges and edge points; should the overlay still fail on round-off,
    # they are grown by a hair and united on a precision grid.
    try:
        return shapely.union_all(geoms)
    except shapely.errors.GEOSException:
        return shapely.union_all(shapely.buffer(geoms, _GRID_MM, quad_segs=1), grid_size=_GRID_MM)


def _polygons(geom: shapely.Geometry) -> list[shapely.Polygon]:
    if geom.is_empty:
        return []
    if isinstance(geom, shapely.Polygon):
        return [geom]
    return [g for g in getattr(geom, "geoms", []) if isinstance(g, shapely.Polygon) and not g.is_empty]


def enforce_rules(void: shapely.Geometry, region: DesignRegion,
                  mirrors: Sequence[tuple[float, float, float, float]] = ()) -> list[shapely.Polygon]:
    """Turn a traced void into holes that keep the rules (see the module text), mm.

    mirrors: mirror lines of a symmetric problem as (x factor, y factor, x0, y0): (1, -1, x0,
    y0) mirrors about the line y = y0, (-1, 1, x0, y0) about x = x0; the void is cut to its
    mirror images, so the holes are symmetric too. Returns polygons without interiors (a hole
    round an island would cut a piece free), sorted by centroid (x, then y).
    """
    s = region.settings
    web, r = float(s.min_web_mm), float(s.corner_radius_mm)
    for fx, fy, x0, y0 in mirrors:
        void = shapely.intersection(void, scale(void, xfact=fx, yfact=fy, origin=(x0, y0)))
    # Clip to the region grown by half a web and erode by half a web: the cores of the holes,
    # each at least one web from the others; a void touching the region's edge keeps reaching
    # it (the keep-outs already hold the web to every other contour).
    v = shapely.intersection(void, region.free.buffer(web / 2.0, quad_segs=_QUAD_SEGS))
    cores = _polygons(v.buffer(-web / 2.0, quad_segs=_QUAD_SEGS))
    v = shapely.intersection(_regrown(cores, v, web), region.free)
    v = v.buffer(-r, quad_segs=_QUAD_SEGS).buffer(r, quad_segs=_QUAD_SEGS)
    holes = []
    for p in _bridged(_polygons(v), web, r):
        if p.buffer(-0.499 * float(s.min_hole_mm)).is_empty:
            continue
        holes.append(p)
    # A neck split by the erosion can leave two pieces closer than a web: keep the larger.
    holes.sort(key=lambda p: -p.area)
    kept: list[shapely.Polygon] = []
    for p in holes:
        if all(p.distance(q) >= web - _WEB_TOL_MM for q in kept):
            kept.append(p)
    kept.sort(key=lambda p: (round(p.centroid.x, 6), round(p.centroid.y, 6)))
    return kept


def _regrown(cores: list[shapely.Polygon], void: shapely.Geometry, web: float) -> shapely.Geometry:
    """Each core grown back by half a web inside the void, less what lies within 1.5 webs of
    another core: a point of hole i is then at least 1.5 w from core j, whose own hole reaches
    at most w / 2 from it, so holes stay one web apart; holes far from each other get their
    whole void back."""
    if len(cores) <= 1:
        return shapely.intersection(shapely.union_all([c.buffer(web / 2.0, quad_segs=_QUAD_SEGS)
                                                       for c in cores]), void) if cores else \
            shapely.Polygon()
    grown = [shapely.intersection(c.buffer(web / 2.0, quad_segs=_QUAD_SEGS), void) for c in cores]
    tree = shapely.STRtree(cores)
    out = []
    for i, g in enumerate(grown):
        near = [j for j in tree.query(g, predicate="dwithin", distance=1.5 * web) if j != i]
        if near:
            g = shapely.difference(g, shapely.union_all(
                [cores[j].buffer(1.5 * web, quad_segs=_QUAD_SEGS) for j in near]))
        out.append(g)
    return shapely.union_all(out)


def _bridged(polys: list[shapely.Polygon], web: float, radius: float) -> list[shapely.Polygon]:
    """Holes without islands: a hole that surrounds material (an island: a feature's ring, a
    footprint) would cut it free, so four bridges one web wide are kept from every island to
    the hole's rim (along x and y through the island's centroid), and the corners they make
    are rounded again by an opening with ``radius``. Pieces still round an island are dropped.
    """
    out: list[shapely.Polygon] = []
    work = list(polys)
    for _ in range(3):
        nxt: list[shapely.Polygon] = []
        for p in work:
            if not p.interiors:
                out.append(p)
                continue
            x0, y0, x1, y1 = p.bounds
            strips = []
            for ring in p.interiors:
                c = shapely.Polygon(ring).centroid
                strips.append(shapely.box(x0 - 1.0, c.y - web / 2.0, x1 + 1.0, c.y + web / 2.0))
                strips.append(shapely.box(c.x - web / 2.0, y0 - 1.0, c.x + web / 2.0, y1 + 1.0))
            cut = shapely.difference(p, shapely.union_all(strips))
            cut = cut.buffer(-radius, quad_segs=_QUAD_SEGS).buffer(radius, quad_segs=_QUAD_SEGS)
            nxt.extend(_polygons(cut))
        work = nxt
        if not work:
            break
    return out


def _circle_through(a: np.ndarray, b: np.ndarray, c: np.ndarray) -> tuple[np.ndarray, float] | None:
    d = 2.0 * (a[0] * (b[1] - c[1]) + b[0] * (c[1] - a[1]) + c[0] * (a[1] - b[1]))
    if abs(d) < 1e-12:
        return None
    a2, b2, c2 = a @ a, b @ b, c @ c
    ux = (a2 * (b[1] - c[1]) + b2 * (c[1] - a[1]) + c2 * (a[1] - b[1])) / d
    uy = (a2 * (c[0] - b[0]) + b2 * (a[0] - c[0]) + c2 * (b[0] - a[0])) / d
    centre = np.array([ux, uy])
    return centre, float(np.hypot(*(a - centre)))


def _line_fits(pts: np.ndarray, tol: float) -> bool:
    a, b = pts[0], pts[-1]
    d = b - a
    length = math.hypot(d[0], d[1])
    if length < MIN_HOLE_SEGMENT_MM:
        return False
    rel = pts[1:-1] - a
    dist = np.abs(rel[:, 0] * d[1] - rel[:, 1] * d[0]) / length
    along = (rel @ d) / length
    return bool(np.all(dist <= tol) and np.all(along >= -tol) and np.all(along <= length + tol))


def _arc_bulge(pts: np.ndarray, tol: float) -> float | None:
    """Bulge of an arc from pts[0] to pts[-1] within ``tol`` of every point, or None."""
    mid = pts[len(pts) // 2]
    circ = _circle_through(pts[0], mid, pts[-1])
    if circ is None:
        return None
    centre, radius = circ
    off = np.abs(np.hypot(*(pts - centre).T) - radius)
    if radius > 1e4 or np.any(off > tol):
        return None
    # Between two neighbouring points the arc bows away from the straight edge of the traced
    # shape by its sagitta: with the points' own distance it must stay within the tolerance.
    half = 0.5 * np.hypot(*np.diff(pts, axis=0).T)
    if np.any(radius - np.sqrt(np.maximum(radius**2 - half**2, 0.0)) > tol - off.max()):
        return None
    ang = np.unwrap(np.arctan2(pts[:, 1] - centre[1], pts[:, 0] - centre[0]))
    step = np.diff(ang)
    if not (np.all(step > 0) or np.all(step < 0)):
        return None
    sweep = float(ang[-1] - ang[0])
    if abs(sweep) > math.pi or abs(sweep) < 1e-6:
        return None
    return math.tan(sweep / 4.0)


def fit_contour(ring: np.ndarray, tol_mm: float, ccw: bool = False) -> Contour:
    """Lines and arcs within ``tol_mm`` of the closed polyline ``ring`` ((k, 2) float mm, open).

    Greedy: from each vertex the longest run of points that one line, else one arc (sweep at most
    half a turn), fits within the tolerance. Returns the contour oriented counter-clockwise when
    ``ccw`` else clockwise (a hole). Points closer than MIN_HOLE_SEGMENT_MM are merged first.
    """
    p = np.asarray(ring, dtype=float)
    keep = [0]
    for i in range(1, len(p)):
        if np.hypot(*(p[i] - p[keep[-1]])) >= MIN_HOLE_SEGMENT_MM:
            keep.append(i)
    p = p[keep]
    if len(p) > 1 and np.hypot(*(p[-1] - p[0])) < MIN_HOLE_SEGMENT_MM:
        p = p[:-1]
    # start at the sharpest corner so the loop does not begin in the middle of an arc
    prev, nxt = np.roll(p, 1, axis=0) - p, np.roll(p, -1, axis=0) - p
    cosang = np.einsum("ij,ij->i", prev, nxt) / np.maximum(
        np.hypot(*prev.T) * np.hypot(*nxt.T), 1e-300)
    start = int(np.argmax(cosang))
    p = np.roll(p, -start, axis=0)
    closed = np.vstack([p, p[:1]])
    n = len(p)
    verts: list[np.ndarray] = []
    bulges: list[float] = []
    i = 0
    while i < n:
        best_j, best_b = i + 1, 0.0
        j = i + 2
        while j <= n:
            seg = closed[i:j + 1]
            if _line_fits(seg, tol_mm):
                best_j, best_b = j, 0.0
            else:
                b = _arc_bulge(seg, tol_mm) if len(seg) >= 4 else None
                if b is None:
                    break
                best_j, best_b = j, b
            j += 1
        verts.append(closed[i])
        bulges.append(best_b)
        i = best_j
    contour = Contour(np.array(verts), np.array(bulges)) if len(verts) >= 3 or all(
        b != 0 for b in bulges) and len(verts) == 2 else Contour(p)
    return contour.oriented(ccw)


def hole_features(polygons: Sequence[shapely.Polygon], tol_mm: float,
                  start_index: int = 1) -> tuple[Feature, ...]:
    """Lightening Features (kind ``lightening``, ids ``lighten1``, ...) from hole polygons (mm)."""
    out = []
    for k, poly in enumerate(polygons):
        ring = np.asarray(orient(poly, -1.0).exterior.coords)[:-1]
        contour = fit_contour(ring, tol_mm, ccw=False)
        c = poly.centroid
        out.append(Feature(id=f"lighten{start_index + k}", kind=LIGHTENING_KIND,
                           center_mm=(float(c.x), float(c.y)), contours=(contour,),
                           dims={"area_mm2": float(-contour.signed_area())},
                           note="lightening hole (finite-element estimate: confirm by test)"))
    return tuple(out)


def holes_from_density(
    nodes: np.ndarray,
    triangles: np.ndarray,
    densities: np.ndarray,
    region: DesignRegion,
    threshold: float,
    mirrors: Sequence[tuple[float, float, float, float]] = (),
) -> list[shapely.Polygon]:
    """Hole polygons (mm) where the element ``densities`` (m,) fall below ``threshold``.

    nodes: (n, 2) float mm; triangles: (m, 3) int. The holes keep the rules of
    ``region.settings`` (see the module text); ``mirrors`` as in :func:`enforce_rules`. Turn
    them into Features with :func:`hole_features`.
    """
    values = nodal_densities(nodes, triangles, np.asarray(densities, dtype=float))
    void = void_polygon(nodes, triangles, values, float(threshold))
    return enforce_rules(void, region, mirrors)


def mirror_lines(region: DesignRegion, nodes: np.ndarray, tris: np.ndarray, dens: np.ndarray
             ) -> list[tuple[float, float, float, float]]:
    """Mirror lines (x factor, y factor, x0, y0) through the plate's bounding-box centre about
    which the design region is symmetric (to 0.5 % of its area) and the optimised density
    nearly so (mean difference to the mirrored element below 0.05): the problem is symmetric
    and only the mesh is not."""
    x0, y0, x1, y1 = region.material.bounds
    cx, cy = 0.5 * (x0 + x1), 0.5 * (y0 + y1)
    cent = nodes[tris].mean(axis=1)
    tree = cKDTree(cent)
    out = []
    for fx, fy in ((1.0, -1.0), (-1.0, 1.0)):
        mirrored = scale(region.free, xfact=fx, yfact=fy, origin=(cx, cy))
        if region.free.symmetric_difference(mirrored).area > 0.005 * region.free.area:
            continue
        other = tree.query(np.column_stack([cx + fx * (cent[:, 0] - cx), cy + fy * (cent[:, 1] - cy)]))[1]
        if float(np.mean(np.abs(dens - dens[other]))) < 0.05:
            out.append((fx, fy, cx, cy))
    return out


def symmetrised(dens: np.ndarray, nodes: np.ndarray, tris: np.ndarray,
                 mirrors: Sequence[tuple[float, float, float, float]]) -> np.ndarray:
    """Densities averaged with those of the mirrored elements (nearest centroid), (m,) float."""
    cent = nodes[tris].mean(axis=1)
    tree = cKDTree(cent)
    d = np.asarray(dens, dtype=float)
    for fx, fy, cx, cy in mirrors:
        other = tree.query(np.column_stack([cx + fx * (cent[:, 0] - cx), cy + fy * (cent[:, 1] - cy)]))[1]
        d = 0.5 * (d + d[other])
    return d


def level_thresholds(nodes: np.ndarray, tris: np.ndarray, dens: np.ndarray,
               region: DesignRegion) -> Callable[[float], float]:
    """Search level (share of the design region's area, by density rank) -> density threshold.

    Level q gives the threshold below which the q lightest-density share of the design
    region's element area lies; 0 gives 0 (no holes), 1 gives just above the largest density.
    """
    p = nodes[tris]
    cent = p.mean(axis=1)
    area = 0.5 * np.abs((p[:, 1, 0] - p[:, 0, 0]) * (p[:, 2, 1] - p[:, 0, 1])
                        - (p[:, 2, 0] - p[:, 0, 0]) * (p[:, 1, 1] - p[:, 0, 1]))
    free = shapely.contains_xy(region.free, cent[:, 0], cent[:, 1])
    if not free.any():
        return lambda q: 0.0
    d, a = dens[free], area[free]
    order = np.argsort(d, kind="stable")
    d, cum = d[order], np.cumsum(a[order]) / a.sum()

    def threshold(q: float) -> float:
        if q <= 0.0:
            return 0.0
        if q >= 1.0:
            return float(d[-1]) + 1e-9
        return float(d[min(int(np.searchsorted(cum, q)), len(d) - 1)]) + 1e-12

    return threshold
