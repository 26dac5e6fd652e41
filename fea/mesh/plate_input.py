"""A plate's as-cut material as tagged boundary rings for the mesher.

The rings come from the AS-CUT part contours (nominal geometry with the fit allowance applied,
before kerf: :func:`platewright.geometry.plate.cutpaths.part_contours`). Arcs are sampled with points
exactly on the arcs, chords no longer than the local element size and a sagitta of at most 1/50
of it. Holes that touch or overlap each other are merged into one ring tagged with their ids
joined by ``"+"``; holes that touch or cut the outline notch it, and the outline ring is then
tagged with the outline id and theirs, joined the same way.

All lengths in mm.
"""

from __future__ import annotations

import math

import numpy as np
import shapely

from platewright.fea.mesh.boundary import TaggedRing
from platewright.fea.mesh.sizing import FEATURE_FRACTION
from platewright.geometry.model import Plate
from platewright.geometry.plate.curves import Contour, segment_arc
from platewright.geometry.plate.cutpaths import part_contours

__all__ = ["sample_contour", "plate_rings"]

#: Sagitta allowed on an arc chord, as a fraction of the chord's size limit.
CHORD_FRACTION = 1.0 / 50.0
#: Points closer than this fraction of the element size to the previous point are dropped.
_MIN_GAP_FRACTION = 1e-3


def sample_contour(contour: Contour, size_mm: float) -> np.ndarray:
    """Points of a contour for meshing: (n, 2) float, mm, open ring, in the contour's direction.

    Straight segments give their start vertex only (the mesher subdivides them). An arc of
    radius r gets chords no longer than ``s = min(size_mm, FEATURE_FRACTION * r)`` and with a
    sagitta of at most ``s / 50``; every point lies exactly on the arc.
    """
    out: list[np.ndarray] = []
    for p0, p1, b in contour.segments():
        out.append(np.asarray(p0, dtype=float)[None, :])
        if b == 0.0:
            continue
        arc = segment_arc(np.asarray(p0, dtype=float), np.asarray(p1, dtype=float), b)
        r = arc.radius
        s = min(size_mm, FEATURE_FRACTION * r)
        tol = CHORD_FRACTION * s
        step_len = 2.0 * math.asin(min(1.0, s / (2.0 * r)))
        step_tol = 2.0 * math.acos(max(-1.0, 1.0 - tol / r))
        n = max(2, int(math.ceil(abs(arc.sweep_rad) / min(step_len, step_tol) - 1e-9)))
        t = arc.start_rad + arc.sweep_rad * np.arange(1, n) / n
        out.append(np.column_stack([arc.center[0] + r * np.cos(t), arc.center[1] + r * np.sin(t)]))
    return np.vstack(out)


def _drop_close(points: np.ndarray, gap_mm: float) -> np.ndarray:
    """Remove ring points closer than ``gap_mm`` to the previous point (and a repeated end)."""
    p = np.asarray(points, dtype=float)
    if len(p) > 1 and np.hypot(*(p[0] - p[-1])) <= gap_mm:
        p = p[:-1]
    keep = np.ones(len(p), dtype=bool)
    keep[1:] = np.hypot(*np.diff(p, axis=0).T) > gap_mm
    return p[keep]


def _groups(polys: list[shapely.Polygon]) -> list[list[int]]:
    """Connected groups of polygons that touch or overlap (indices, input order)."""
    n = len(polys)
    label = list(range(n))

    def find(i: int) -> int:
        while label[i] != i:
            label[i] = label[label[i]]
            i = label[i]
        return i

    if n:
        tree = shapely.STRtree(polys)
        left, right = tree.query(polys, predicate="intersects")
        for i, j in zip(left.tolist(), right.tolist(), strict=True):
            ri, rj = find(i), find(j)
            if ri != rj:
                label[max(ri, rj)] = min(ri, rj)
    out: dict[int, list[int]] = {}
    for i in range(n):
        out.setdefault(find(i), []).append(i)
    return list(out.values())


def _merge(polys: list[shapely.Polygon], gap_mm: float) -> shapely.Polygon:
    """Union of touching/overlapping polygons as one Polygon (point contacts fused by gap_mm)."""
    u = shapely.union_all(polys)
    if not isinstance(u, shapely.Polygon):
        u = shapely.union_all([p.buffer(gap_mm, quad_segs=1) for p in polys])
    if not isinstance(u, shapely.Polygon):
        raise ValueError("touching holes could not be merged into one region")
    return u


def plate_rings(plate: Plate, size_mm: float) -> list[TaggedRing]:
    """Tagged rings of the plate's as-cut material, outline first, for :func:`mesh_rings`.

    ``size_mm``: the element size the mesh will use, mm (sets the arc sampling). Raises
    ValueError when the material is not one connected piece with one outline.
    """
    if not size_mm > 0.0:
        raise ValueError(f"size_mm must be positive, got {size_mm!r}")
    gap = _MIN_GAP_FRACTION * size_mm
    outer: list[tuple[str, np.ndarray]] = []
    holes: list[tuple[str, np.ndarray]] = []
    for fid, contour in part_contours(plate):
        pts = _drop_close(sample_contour(contour, size_mm), gap)
        (outer if contour.is_ccw() else holes).append((fid, pts))
    if len(outer) != 1:
        raise ValueError(
            f"plate {plate.name!r} has {len(outer)} outer contours; the mesher needs exactly one"
        )
    out_id, out_pts = outer[0]
    outline = shapely.Polygon(out_pts)
    if not outline.is_valid:
        raise ValueError(f"outline of {plate.name!r} is not a simple loop")
    hole_polys = [shapely.Polygon(p) for _, p in holes]
    out_tags = [out_id]
    hole_rings: list[TaggedRing] = []
    cut_outline = outline
    for group in _groups(hole_polys):
        ids = "+".join(dict.fromkeys(holes[i][0] for i in group))
        if len(group) == 1:
            poly, pts = hole_polys[group[0]], holes[group[0]][1]
        else:
            poly = _merge([hole_polys[i] for i in group], gap)
            pts = None
        if list(poly.interiors):
            raise ValueError(f"holes {ids} enclose a loose piece of {plate.name!r}")
        if outline.contains_properly(poly):
            if pts is None:
                pts = _drop_close(np.asarray(poly.exterior.coords), gap)
            hole_rings.append(TaggedRing(pts, ids, True))
        elif outline.intersects(poly):
            cut_outline = cut_outline.difference(poly)
            out_tags.append(ids)
        # A hole wholly outside the outline removes nothing.
    if not isinstance(cut_outline, shapely.Polygon) or cut_outline.is_empty:
        raise ValueError(f"the holes cut plate {plate.name!r} into separate pieces")
    if list(cut_outline.interiors):
        raise ValueError(
            f"a hole touches the outline of {plate.name!r} from inside (a web of zero width)"
        )
    ring = _drop_close(np.asarray(cut_outline.exterior.coords), gap)
    return [TaggedRing(ring, "+".join(out_tags), False), *hole_rings]
