"""The boundary of a region to mesh: tagged input rings, cleaned and oriented, the region
polygon, and the boundary cut into nodes and segments that follow the size field.

A :class:`TaggedRing` is one closed ring of points (mm) with the feature id its edges carry;
:func:`region_of` orients and checks the rings (one outline counter-clockwise, holes clockwise) and
:func:`discretize_boundary` cuts every input segment into pieces of the local size, with the new
points on the segment. Used by :mod:`platewright.fea.mesh.mesher`.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
import shapely

from platewright.fea.mesh.sizing import SizeField

__all__ = [
    "Region", "TaggedRing", "clean_ring", "default_size_mm", "dense_boundary", "discretize_boundary",
    "region_of", "signed_area",
]

#: Default element size as a fraction of the bounding-box diagonal.
_DEFAULT_DIAGONAL_FRACTION = 1.0 / 40.0


@dataclass(frozen=True)
class TaggedRing:
    """One closed boundary ring of the region to mesh.

    ``points_mm``: (n, 2) float, open ring (first point not repeated), points on the true curve;
    either orientation (the mesher orients outlines counter-clockwise and holes clockwise).
    ``tag``: feature id given to every boundary edge on this ring. ``is_hole``: True for a hole.
    """

    points_mm: np.ndarray
    tag: str
    is_hole: bool


def default_size_mm(rings: Sequence[TaggedRing]) -> float:
    """Default element size: the bounding-box diagonal of all rings / 40, mm."""
    pts = np.vstack([np.asarray(r.points_mm, dtype=float).reshape(-1, 2) for r in rings])
    span = pts.max(axis=0) - pts.min(axis=0)
    return float(np.hypot(*span) * _DEFAULT_DIAGONAL_FRACTION)


def signed_area(p: np.ndarray) -> float:
    q = np.roll(p, -1, axis=0)
    return 0.5 * float(np.sum(p[:, 0] * q[:, 1] - q[:, 0] * p[:, 1]))


def clean_ring(ring: TaggedRing, index: int) -> np.ndarray:
    p = np.asarray(ring.points_mm, dtype=float).reshape(-1, 2)
    if not np.all(np.isfinite(p)):
        raise ValueError(f"ring {index} ({ring.tag!r}) has non-finite points")
    scale = max(1.0, float(np.abs(p).max()))
    step = np.hypot(*(np.roll(p, -1, axis=0) - p).T)
    p = p[step > 1e-12 * scale]
    if len(p) < 3:
        raise ValueError(f"ring {index} ({ring.tag!r}) needs at least 3 distinct points")
    want_ccw = not ring.is_hole
    if (signed_area(p) > 0.0) != want_ccw:
        p = p[::-1]
    return p


@dataclass(frozen=True)
class Region:
    """Oriented rings, their segments and the region polygon (prepared for point tests)."""

    rings: list[np.ndarray]
    ring_tag: np.ndarray
    tag_names: tuple[str, ...]
    polygon: shapely.Polygon
    seg_a: np.ndarray
    seg_b: np.ndarray
    seg_tag: np.ndarray


def region_of(rings: Sequence[TaggedRing]) -> Region:
    if not rings:
        raise ValueError("no rings to mesh")
    cleaned = [clean_ring(r, i) for i, r in enumerate(rings)]
    outer = [i for i, r in enumerate(rings) if not r.is_hole]
    if len(outer) != 1:
        raise ValueError(f"need exactly one outline ring (is_hole=False), got {len(outer)}")
    names: list[str] = []
    for r in rings:
        if r.tag not in names:
            names.append(r.tag)
    ring_tag = np.array([names.index(r.tag) for r in rings], dtype=np.int64)
    holes = [cleaned[i] for i, r in enumerate(rings) if r.is_hole]
    poly = shapely.Polygon(cleaned[outer[0]], holes)
    if not poly.is_valid:
        raise ValueError(
            "rings do not bound a valid region (holes must lie inside the outline and must not "
            f"touch or overlap each other; merge them first): {shapely.is_valid_reason(poly)}"
        )
    shapely.prepare(poly)
    seg_a = np.vstack(cleaned)
    seg_b = np.vstack([np.roll(p, -1, axis=0) for p in cleaned])
    seg_tag = np.repeat(ring_tag, [len(p) for p in cleaned])
    return Region(cleaned, ring_tag, tuple(names), poly, seg_a, seg_b, seg_tag)


def discretize_boundary(
    reg: Region, field: SizeField
) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Boundary nodes (b, 2) and segments (k, 2) int (domain on the left) with tags (k,) int.

    Each input segment is cut into ``round(integral ds / h)`` pieces (at least 1) with ends
    equidistributed in ``integral ds / h``; new points lie on the segment.
    """
    a, b = reg.seg_a, reg.seg_b
    d = b - a
    length = np.hypot(d[:, 0], d[:, 1])
    mid = 0.5 * (a + b)
    hmin = np.minimum(np.minimum(field(a), field(b)), field(mid))
    nf = np.clip(np.ceil(4.0 * length / hmin), 1, 100000).astype(np.int64)
    # Samples t = 0, 1/nf, ..., 1 on every segment (its own end included).
    seg = np.repeat(np.arange(len(a)), nf + 1)
    first = np.cumsum(nf + 1) - (nf + 1)
    t = (np.arange(len(seg)) - np.repeat(first, nf + 1)) / nf[seg]
    inv_h = 1.0 / field(a[seg] + t[:, None] * d[seg])
    piece = 0.5 * (inv_h[:-1] + inv_h[1:]) * np.diff(t) * length[seg[:-1]]
    piece[(first + nf)[:-1]] = 0.0  # no contribution from one segment's end to the next start
    g = np.concatenate([[0.0], np.cumsum(piece)])
    u = seg + t
    g_start = g[first]
    total = g[first + nf] - g_start
    n = np.maximum(1, np.rint(total).astype(np.int64))
    # Points of segment i: its start vertex, then k = 1 .. n_i - 1 equidistributed points.
    owner = np.repeat(np.arange(len(a)), n)
    kfirst = np.cumsum(n) - n
    k = np.arange(len(owner)) - np.repeat(kfirst, n)
    target = g_start[owner] + total[owner] * k / n[owner]
    uu = np.interp(target, g, u)
    tt = np.where(k == 0, 0.0, np.clip(uu - owner, 0.0, 1.0))
    nodes = a[owner] + tt[:, None] * d[owner]
    # Consecutive nodes within each ring form the boundary segments.
    counts = np.bincount(np.repeat(np.arange(len(reg.rings)), [len(p) for p in reg.rings]),
                         weights=n, minlength=len(reg.rings)).astype(np.int64)
    start = np.cumsum(counts) - counts
    idx = np.arange(len(nodes))
    ring_of = np.repeat(np.arange(len(reg.rings)), counts)
    nxt = idx + 1
    last = start + counts - 1
    nxt[last] = start
    segs = np.column_stack([idx, nxt])
    return nodes, segs, reg.ring_tag[ring_of]


def dense_boundary(nodes: np.ndarray, segs: np.ndarray, per_edge: int = 4) -> np.ndarray:
    """Points along the boundary segments: (k * per_edge, 2) float, mm."""
    a = nodes[segs[:, 0]]
    d = nodes[segs[:, 1]] - a
    t = (np.arange(per_edge) + 0.5) / per_edge
    return (a[:, None, :] + t[None, :, None] * d[:, None, :]).reshape(-1, 2)
