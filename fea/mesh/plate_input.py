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
from collections.abc import Callable

import numpy as np
import shapely

from platewright.fea.mesh.boundary import TaggedRing
from platewright.fea.mesh.sizing import FEATURE_FRACTION
from platewright.geometry.model import Plate
from platewright.geometry.plate.curves import Contour, segment_arc
from platewright.geometry.plate.cutpaths import part_contours

__all__ = ["SizeAt", "sample_contour", "plate_rings"]

#: Local element size: points (k, 2) mm -> sizes (k,) mm.
SizeAt = Callable[[np.ndarray], np.ndarray]

#: Sagitta allowed on an arc chord, as a fraction of the chord's size limit.
CHORD_FRACTION = 1.0 / 50.0
#: Points closer than this fraction of the element size to the previous point are dropped.
_MIN_GAP_FRACTION = 1e-3


def _arc_step_rad(size_mm: float | np.ndarray, r: float) -> np.ndarray:
    """Largest angle step (rad) on an arc of radius r for chords no longer than
    ``s = min(size, FEATURE_FRACTION * r)`` with a sagitta of at most ``s / 50``."""
    s = np.minimum(np.asarray(size_mm, dtype=float), FEATURE_FRACTION * r)
    tol = CHORD_FRACTION * s
    step_len = 2.0 * np.arcsin(np.minimum(1.0, s / (2.0 * r)))
    step_tol = 2.0 * np.arccos(np.maximum(-1.0, 1.0 - tol / r))
    return np.minimum(step_len, step_tol)


def sample_contour(contour: Contour, size_mm: float,
                   size_at: SizeAt | None = None) -> np.ndarray:
    """Points of a contour for meshing: (n, 2) float, mm, open ring, in the contour's direction.

    Straight segments give their start vertex only (the mesher subdivides them). An arc of
    radius r gets chords no longer than ``s = min(size_mm, FEATURE_FRACTION * r)`` and with a
    sagitta of at most ``s / 50``; every point lies exactly on the arc. ``size_at`` (points
    (k, 2) mm -> sizes (k,) mm) lowers ``size_mm`` locally: where the mesh is refined the arc
    is sampled finer too (the angle steps follow the local size), so the polygon that stands
    for the arc has no corner coarser than the elements beside it.
    """
    out: list[np.ndarray] = []
    for p0, p1, b in contour.segments():
        out.append(np.asarray(p0, dtype=float)[None, :])
        if b == 0.0:
            continue
        arc = segment_arc(np.asarray(p0, dtype=float), np.asarray(p1, dtype=float), b)
        r = arc.radius
        sweep = abs(arc.sweep_rad)
        if size_at is None:
            n = max(2, int(math.ceil(sweep / float(_arc_step_rad(size_mm, r)) - 1e-9)))
            frac = np.arange(1, n) / n
        else:
            # Equidistribute the angle in units of the local step (as the mesher does along
            # straight segments): a fine probe of the arc, then n points at equal shares.
            probe = max(64, int(math.ceil(sweep / float(_arc_step_rad(
                float(np.min(size_at(_arc_points(arc, np.linspace(0, 1, 65))))), r)) * 4)))
            u = np.linspace(0.0, 1.0, probe + 1)
            h = np.minimum(size_mm, size_at(_arc_points(arc, u)))
            dens = sweep / _arc_step_rad(h, r)  # steps per unit of u
            g = np.concatenate([[0.0], np.cumsum(0.5 * (dens[1:] + dens[:-1]) * np.diff(u))])
            n = max(2, int(math.ceil(g[-1] - 1e-9)))
            frac = np.interp(g[-1] * np.arange(1, n) / n, g, u)
        out.append(_arc_points(arc, frac))
    return np.vstack(out)


def _arc_points(arc, frac: np.ndarray) -> np.ndarray:
    """Points (k, 2) mm at fractions ``frac`` (k,) of an arc's sweep."""
    t = arc.start_rad + arc.sweep_rad * np.asarray(frac, dtype=float)
    return np.column_stack([arc.center[0] + arc.radius * np.cos(t),
                            arc.center[1] + arc.radius * np.sin(t)])


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


def plate_rings(plate: Plate, size_mm: float, size_at: SizeAt | None = None
                ) -> list[TaggedRing]:
    """Tagged rings of the plate's as-cut material, outline first, for :func:`mesh_rings`.

    ``size_mm``: the element size the mesh will use, mm (sets the arc sampling); ``size_at``:
    optional local sizes (see :func:`sample_contour`). Raises ValueError when the material is
    not one connected piece with one outline.
    """
    if not size_mm > 0.0:
        raise ValueError(f"size_mm must be positive, got {size_mm!r}")
    gap = _MIN_GAP_FRACTION * size_mm
    outer: list[tuple[str, np.ndarray]] = []
    holes: list[tuple[str, np.ndarray]] = []
    for fid, contour in part_contours(plate):
        pts = _drop_close(sample_contour(contour, size_mm, size_at), gap)
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
