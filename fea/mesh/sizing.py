"""Element size field for the mesher: local feature size of the boundary, graded into the interior.

The target edge length at a point ``x`` (mm) is

    h(x) = clip( min_b ( h_b + grading * |x - b| ), min_size, max_size )

over boundary sample points ``b`` whose own size ``h_b`` is the smallest of

* ``max_size`` (the requested element size),
* ``FEATURE_FRACTION`` times the local feature size at ``b``: the radius of the largest disc
  tangent to the boundary at ``b`` whose far side touches a boundary part facing back (normals
  opposed by more than ``acos(-OPPOSED_NORMAL_COS)``); across the material that is half the
  width of a web, across a hole it is the hole radius (the medial-disc idea of
  Ruppert's local feature size; the tangent-disc radius through a point is
  ``|d|^2 / (2 |d . n|)``, as in the shrinking-ball method of Ma, Bae and Kim, The Visual
  Computer 28 (2012)),
* the length of the input segment ``b`` lies on (input segments are kept whole, so elements
  next to a short segment must be short too).

Sizes grow away from the boundary by at most ``grading`` mm per mm, the usual graded-size
(Lipschitz) field of Persson and Strang, SIAM Review 46 (2004), section 5.

The module also holds :func:`graded_lattice`, the size-graded interior point set that follows
the field (nested triangular lattices thinned by ordered dithering; see the comment above it).

All lengths in mm.
"""

from __future__ import annotations

import math
from collections.abc import Callable

import numpy as np
from scipy.spatial import cKDTree

__all__ = [
    "FEATURE_FRACTION",
    "OPPOSED_NORMAL_COS",
    "SizeField",
    "subdivide_segments",
    "local_feature_radius",
    "boundary_size_field",
    "estimate_node_count",
    "bayer_matrix",
    "graded_lattice",
]

#: Element size as a fraction of the local feature radius (half a web width, a hole radius).
#: 0.5 gives about 12 elements round a small hole and 4 rows across a narrow web.
FEATURE_FRACTION = 0.5
#: Two boundary pieces face each other when the cosine between their normals is below this.
OPPOSED_NORMAL_COS = -0.8


def subdivide_segments(
    a: np.ndarray, b: np.ndarray, max_len_mm: np.ndarray | float
) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Split straight segments into equal pieces no longer than ``max_len_mm``.

    ``a``, ``b``: (s, 2) float segment ends, mm; ``max_len_mm``: scalar or (s,) float.
    Returns piece starts (p, 2), piece ends (p, 2) and the source segment of each piece (p,) int,
    in order along each segment.
    """
    d = b - a
    length = np.hypot(d[:, 0], d[:, 1])
    n = np.maximum(1, np.ceil(length / np.asarray(max_len_mm, dtype=float) - 1e-9)).astype(np.int64)
    seg = np.repeat(np.arange(len(a)), n)
    first = np.cumsum(n) - n
    k = np.arange(len(seg)) - np.repeat(first, n)
    t0 = (k / n[seg])[:, None]
    t1 = ((k + 1) / n[seg])[:, None]
    return a[seg] + t0 * d[seg], a[seg] + t1 * d[seg], seg


def _left_normals(pa: np.ndarray, pb: np.ndarray) -> np.ndarray:
    d = pb - pa
    length = np.hypot(d[:, 0], d[:, 1])
    return np.column_stack([-d[:, 1], d[:, 0]]) / length[:, None]


def local_feature_radius(
    pa: np.ndarray, pb: np.ndarray, reach_mm: np.ndarray | float
) -> np.ndarray:
    """Radius of the largest tangent disc at each piece midpoint touching an opposed piece, mm.

    ``pa``, ``pb``: (p, 2) float piece ends, mm, oriented with the domain on the left; the disc
    may lie on either side (across material or across a hole). Only pieces within ``reach_mm``
    (scalar or (p,) float) of a midpoint are looked at; no opposed piece within reach gives inf.
    Returns (p,) float.
    """
    mid = 0.5 * (pa + pb)
    nrm = _left_normals(pa, pb)
    half = 0.5 * np.hypot(*(pb - pa).T)
    reach = np.broadcast_to(np.asarray(reach_mm, dtype=float), (len(mid),))
    tree = cKDTree(mid)
    # Every point of a piece is within half its length of its midpoint.
    hits = tree.query_ball_point(mid, reach + half.max(), return_sorted=False)
    counts = np.fromiter((len(h) for h in hits), dtype=np.int64, count=len(hits))
    out = np.full(len(mid), np.inf)
    if counts.sum() == 0:
        return out
    i = np.repeat(np.arange(len(mid)), counts)
    j = np.concatenate([np.asarray(h, dtype=np.int64) for h in hits if len(h)])
    keep = np.einsum("ij,ij->i", nrm[i], nrm[j]) < OPPOSED_NORMAL_COS
    i, j = i[keep], j[keep]
    # Closest point of piece j to midpoint i.
    e = pb[j] - pa[j]
    t = np.einsum("ij,ij->i", mid[i] - pa[j], e) / np.einsum("ij,ij->i", e, e)
    q = pa[j] + np.clip(t, 0.0, 1.0)[:, None] * e
    d = q - mid[i]
    dn = np.abs(np.einsum("ij,ij->i", d, nrm[i]))
    dd = np.einsum("ij,ij->i", d, d)
    ok = dn > 1e-12 * np.sqrt(dd) + 1e-300
    r = np.where(ok, dd / (2.0 * np.where(ok, dn, 1.0)), np.inf)
    np.minimum.at(out, i, r)
    return out


def _size_bands(sizes: np.ndarray, h_min: float) -> np.ndarray:
    return np.floor(np.log2(sizes / h_min)).astype(np.int64)


class SizeField:
    """Graded size field h(x), mm, from boundary samples (see the module docstring).

    ``points_mm``: (n, 2) float sample points; ``sizes_mm``: (n,) float their sizes, used as
    given below ``max_size_mm`` (the callers apply ``min_size_mm`` to the automatic refinement
    only, never to input segments the mesh must keep). Calling it on (m, 2) float points gives
    (m,) float sizes in [min_size_mm, max_size_mm], where ``min_size_mm`` becomes the smallest
    sample size when that is smaller.
    """

    #: Neighbours looked at per size band when evaluating; within a band sizes differ by < 2x.
    _K = 8

    def __init__(
        self,
        points_mm: np.ndarray,
        sizes_mm: np.ndarray,
        max_size_mm: float,
        min_size_mm: float,
        grading: float,
    ) -> None:
        if not (max_size_mm > 0 and 0 < min_size_mm <= max_size_mm and grading > 0):
            raise ValueError("need max_size_mm >= min_size_mm > 0 and grading > 0")
        sizes = np.minimum(np.asarray(sizes_mm, dtype=float), max_size_mm)
        if len(sizes) and not np.all(sizes > 0.0):
            raise ValueError("sample sizes must be positive")
        self.max_size_mm = float(max_size_mm)
        self.min_size_mm = float(min(min_size_mm, sizes.min())) if len(sizes) else min_size_mm
        self.grading = float(grading)
        pts = np.asarray(points_mm, dtype=float).reshape(-1, 2)
        small = sizes < self.max_size_mm * (1.0 - 1e-12)
        pts, sizes = pts[small], sizes[small]
        self._points, self._sizes = pts, sizes
        self._bands: list[tuple[cKDTree, np.ndarray, float]] = []  # tree, sizes, smallest
        if len(sizes):
            level = _size_bands(sizes, self.min_size_mm)
            for lev in np.unique(level):
                sel = level == lev
                s = sizes[sel]
                self._bands.append((cKDTree(pts[sel]), s, float(s.min())))

    def with_points(self, points_mm: np.ndarray, sizes_mm: np.ndarray) -> SizeField:
        """A field that also asks for ``sizes_mm`` (k,) float at ``points_mm`` (k, 2) float, mm
        (local refinement), graded the same way; sizes below ``min_size_mm`` lower it."""
        pts = np.vstack([self._points, np.asarray(points_mm, dtype=float).reshape(-1, 2)])
        sizes = np.concatenate([self._sizes, np.asarray(sizes_mm, dtype=float).ravel()])
        return SizeField(pts, sizes, self.max_size_mm, self.min_size_mm, self.grading)

    @property
    def is_uniform(self) -> bool:
        """True when no boundary sample asks for less than the maximum size."""
        return not self._bands

    def __call__(self, xy_mm: np.ndarray, cap_mm: float | None = None) -> np.ndarray:
        """Size at points: (m, 2) float mm -> (m,) float mm.

        ``cap_mm`` (default ``max_size_mm``) is the upper clip; a larger cap shows how far a point
        is from needing refinement (used by :func:`graded_lattice`).
        """
        cap = self.max_size_mm if cap_mm is None else float(cap_mm)
        xy = np.asarray(xy_mm, dtype=float).reshape(-1, 2)
        out = np.full(len(xy), cap)
        for tree, s, s_min in self._bands:
            reach = (cap - s_min) / self.grading
            k = min(self._K, len(s))
            d, idx = tree.query(xy, k=k, distance_upper_bound=reach)
            d = d.reshape(len(xy), k)
            idx = idx.reshape(len(xy), k)
            found = idx < len(s)
            val = np.where(found, s[np.minimum(idx, len(s) - 1)] + self.grading * d, np.inf)
            np.minimum(out, val.min(axis=1), out=out)
        return np.clip(out, self.min_size_mm, cap)


def _piece_sizes(
    pa: np.ndarray,
    pb: np.ndarray,
    seg_len: np.ndarray,
    reach: np.ndarray | float,
    h_max: float,
    h_min: float,
) -> tuple[np.ndarray, np.ndarray]:
    radius = local_feature_radius(pa, pb, reach)
    size = np.minimum(np.minimum(np.maximum(FEATURE_FRACTION * radius, h_min), seg_len), h_max)
    return size, radius


def boundary_size_field(
    a: np.ndarray,
    b: np.ndarray,
    max_size_mm: float,
    min_size_mm: float,
    grading: float,
) -> SizeField:
    """Size field for a region bounded by straight segments ``a[i] -> b[i]`` (mm).

    ``a``, ``b``: (s, 2) float, every ring closed and oriented with the domain on the left.
    ``min_size_mm`` bounds the feature-size refinement; an input segment shorter than it still
    sets the size next to it. Two passes: pieces of at most half the maximum size first, then
    each piece cut to half its first-pass local size and the feature radius found again within
    twice the first estimate.
    """
    h_max = float(max_size_mm)
    d = b - a
    seg_len = np.hypot(d[:, 0], d[:, 1])
    reach1 = 2.0 * h_max / FEATURE_FRACTION
    pa, pb, seg = subdivide_segments(a, b, 0.5 * h_max)
    size1, radius1 = _piece_sizes(pa, pb, seg_len[seg], reach1, h_max, min_size_mm)
    field1 = SizeField(0.5 * (pa + pb), size1, h_max, min_size_mm, grading)
    if field1.is_uniform:
        return field1
    h1 = field1(0.5 * (pa + pb))
    qa, qb, sub = subdivide_segments(pa, pb, 0.5 * h1)
    r1 = radius1[sub]
    reach2 = np.where(FEATURE_FRACTION * r1 < h_max, np.minimum(2.0 * r1, reach1), 0.0)
    size2, _ = _piece_sizes(qa, qb, seg_len[seg[sub]], reach2, h_max, min_size_mm)
    return SizeField(0.5 * (qa + qb), size2, h_max, min_size_mm, grading)


def estimate_node_count(
    field: SizeField, inside: np.ndarray, cell_area_mm2: float, boundary_nodes: int
) -> float:
    """Expected node count: boundary nodes plus the integral of 2 / (sqrt(3) h^2) over the region.

    (2 / (sqrt(3) h^2) is the node density of a lattice of equilateral triangles of side h.)
    ``inside``: (c, 2) float centres of equal cells of area ``cell_area_mm2`` inside the region.
    """
    h = field(inside)
    return float(boundary_nodes + np.sum(2.0 / (math.sqrt(3.0) * h * h)) * cell_area_mm2)


# --- Size-graded interior point sets ----------------------------------------------------------
#
# Nested triangular lattices thinned by ordered dithering. A triangular (equilateral) lattice of
# spacing s has node density 2 / (sqrt(3) s^2). Halving its spacing gives a lattice that contains
# it (the new nodes are the edge midpoints), so levels j = 0, 1, ... of spacing
# s_j = max_size / 2^j nest. Where the size field asks for h between s_{j+1} and s_j, all level-j
# nodes are kept and a fraction f = ((s_j / h)^2 - 1) / 3 of the new level-(j+1) nodes, so the
# node density follows 2 / (sqrt(3) h^2) continuously. Which new nodes are kept is decided by a
# threshold matrix (ordered dithering, B. E. Bayer, "An optimum method for two-level rendition of
# continuous-tone pictures", IEEE ICC 1973): deterministic and evenly spread. Only the lattice
# near regions that need level j+1 is built, so the cost follows the number of nodes kept.

#: The six lattice-neighbour directions in (i, k) lattice coordinates (basis a1 = (s, 0),
#: a2 = (s / 2, s sqrt(3) / 2)).
_DIRS = np.array([[1, 0], [-1, 0], [0, 1], [0, -1], [1, -1], [-1, 1]], dtype=np.int64)
_MAX_LEVELS = 24


def bayer_matrix(order: int) -> np.ndarray:
    """The 2^order x 2^order ordered-dither threshold matrix: (n, n) int, values 0 .. n^2 - 1."""
    m = np.zeros((1, 1), dtype=np.int64)
    for _ in range(order):
        m = np.block([[4 * m, 4 * m + 2], [4 * m + 3, 4 * m + 1]])
    return m


_BAYER8 = bayer_matrix(3)


def _xy(ik: np.ndarray, origin: np.ndarray, s_fine: float) -> np.ndarray:
    i = ik[:, 0].astype(float)
    k = ik[:, 1].astype(float)
    return np.column_stack(
        [origin[0] + (i + 0.5 * k) * s_fine, origin[1] + k * (s_fine * math.sqrt(3.0) / 2.0)]
    )


def _dither_threshold(ik: np.ndarray, half: int) -> np.ndarray:
    """Threshold in (0, 1) for new nodes of a level; ``ik`` are odd multiples of ``half``."""
    a = ik[:, 0] // half
    b = ik[:, 1] // half
    odd_a = (a % 2) == 1
    odd_b = (b % 2) == 1
    cls = np.where(odd_a & ~odd_b, 0, np.where(~odd_a & odd_b, 1, 2))
    v = _BAYER8[(a // 2) % 8, (b // 2) % 8]
    return (cls * 64 + v + 0.5) / 192.0


def graded_lattice(
    bbox_mm: tuple[float, float, float, float],
    size_fn: Callable[[np.ndarray], np.ndarray],
    max_size_mm: float,
    min_size_mm: float,
    grading: float = 0.3,
) -> np.ndarray:
    """Points covering ``bbox_mm`` (xmin, ymin, xmax, ymax) with spacing following ``size_fn``.

    ``size_fn``: (m, 2) float mm -> (m,) float mm, at least ``min_size_mm``; values above
    ``max_size_mm`` are allowed (they mean "no refinement near here" and save work).
    ``grading``: the largest growth rate of the size (mm per mm), which bounds how much the
    size can differ between a lattice node and the new nodes half a spacing away.
    Returns (p, 2) float, mm, covering the box grown by ``max_size_mm`` (callers clip to the
    region).
    """
    h0 = float(max_size_mm)
    levels = int(min(_MAX_LEVELS, max(0, math.ceil(math.log2(h0 / min_size_mm) - 1e-9))))
    step0 = 1 << levels
    s_fine = h0 / step0
    x0, y0, x1, y1 = bbox_mm
    origin = np.array([x0 - h0, y0 - h0])
    width = (x1 - x0) + 2.0 * h0
    height = (y1 - y0) + 2.0 * h0
    rows = np.arange(int(math.ceil(height / (h0 * math.sqrt(3.0) / 2.0))) + 1, dtype=np.int64)
    ncols = int(math.floor(width / h0)) + 2
    c = -(rows // 2)[:, None] + np.arange(ncols, dtype=np.int64)[None, :]
    ik = np.column_stack(
        [(c * step0).ravel(), np.repeat(rows * step0, ncols)]
    ).astype(np.int64)
    lam = np.log2(h0 / size_fn(_xy(ik, origin, s_fine)))
    # A new node half a spacing s from its parents has a size at most (1 + grading / 2) times
    # smaller than theirs, so parents more than that (in levels) from needing refinement spawn
    # none that would be kept.
    margin = math.log2(1.0 + grading) + 0.05
    kept = [ik]
    cur, cur_lam = ik, lam
    for j in range(levels):
        parents = cur[cur_lam > j - margin]
        if len(parents) == 0:
            break
        half = 1 << (levels - j - 1)
        cand = (parents[:, None, :] + half * _DIRS[None, :, :]).reshape(-1, 2)
        cand = cand[np.lexsort((cand[:, 1], cand[:, 0]))]
        cand = cand[np.concatenate([[True], np.any(cand[1:] != cand[:-1], axis=1)])]
        cand_lam = np.log2(h0 / size_fn(_xy(cand, origin, s_fine)))
        frac = np.clip((np.power(4.0, cand_lam - j) - 1.0) / 3.0, 0.0, 1.0)
        keep = _dither_threshold(cand, half) < frac
        kept.append(cand[keep])
        nxt = np.concatenate([cur, cand])
        nxt_lam = np.concatenate([cur_lam, cand_lam])
        sel = nxt_lam > (j + 1) - margin
        cur, cur_lam = nxt[sel], nxt_lam[sel]
    return _xy(np.concatenate(kept), origin, s_fine)
