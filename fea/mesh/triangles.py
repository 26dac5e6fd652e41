"""The linear triangle mesh type shared by the mesher and the finite-element code, and its quality.

Units: mm for coordinates, degrees for reported angles.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

__all__ = [
    "Mesh",
    "MeshQuality",
    "triangle_angles_deg",
    "triangle_areas_mm2",
    "flip_to_delaunay",
]


@dataclass(frozen=True)
class MeshQuality:
    """Shape measures of a triangle mesh.

    ``min_angle_deg``: smallest interior angle over all triangles, degrees. ``mean_angle_deg``:
    mean over triangles of each triangle's smallest angle, degrees (60 for an all-equilateral mesh;
    the mean of all angles would always be 60). ``max_aspect_ratio``: largest ratio of longest
    edge to shortest altitude, divided by that of an equilateral triangle (2/sqrt(3)), so 1.0 is
    equilateral. ``count_below_20_deg``:
    number of triangles whose smallest angle is below 20 degrees.
    """

    min_angle_deg: float
    mean_angle_deg: float
    max_aspect_ratio: float
    count_below_20_deg: int


def triangle_areas_mm2(nodes: np.ndarray, triangles: np.ndarray) -> np.ndarray:
    """Signed areas of triangles, mm^2; positive for counter-clockwise.

    ``nodes``: (n, 2) float, mm; ``triangles``: (m, 3) int. Returns (m,) float.
    """
    p = nodes[triangles]
    d1 = p[:, 1] - p[:, 0]
    d2 = p[:, 2] - p[:, 0]
    return 0.5 * (d1[:, 0] * d2[:, 1] - d1[:, 1] * d2[:, 0])


def triangle_angles_deg(nodes: np.ndarray, triangles: np.ndarray) -> np.ndarray:
    """Interior angles of triangles, degrees.

    ``nodes``: (n, 2) float, mm; ``triangles``: (m, 3) int. Returns (m, 3) float; column i is the
    angle at vertex ``triangles[:, i]``.
    """
    p = nodes[triangles]
    # Edge opposite vertex i joins the other two vertices.
    a = np.linalg.norm(p[:, 2] - p[:, 1], axis=1)
    b = np.linalg.norm(p[:, 0] - p[:, 2], axis=1)
    c = np.linalg.norm(p[:, 1] - p[:, 0], axis=1)
    # Law of cosines, clipped against round-off.
    with np.errstate(invalid="ignore", divide="ignore"):
        ca = np.clip((b * b + c * c - a * a) / (2.0 * b * c), -1.0, 1.0)
        cb = np.clip((a * a + c * c - b * b) / (2.0 * a * c), -1.0, 1.0)
    ang_a = np.arccos(ca)
    ang_b = np.arccos(cb)
    ang_c = np.pi - ang_a - ang_b
    return np.degrees(np.column_stack([ang_a, ang_b, ang_c]))


def _incircle(a: np.ndarray, b: np.ndarray, c: np.ndarray, d: np.ndarray) -> np.ndarray:
    """Positive when d lies inside the circle through counter-clockwise a, b, c: (m,) float.

    Scaled by the fourth power of the largest distance to d, so the value is dimensionless.
    """
    ad, bd, cd = a - d, b - d, c - d
    la = np.einsum("ij,ij->i", ad, ad)
    lb = np.einsum("ij,ij->i", bd, bd)
    lc = np.einsum("ij,ij->i", cd, cd)
    det = (
        la * (bd[:, 0] * cd[:, 1] - bd[:, 1] * cd[:, 0])
        - lb * (ad[:, 0] * cd[:, 1] - ad[:, 1] * cd[:, 0])
        + lc * (ad[:, 0] * bd[:, 1] - ad[:, 1] * bd[:, 0])
    )
    scale = np.maximum(np.maximum(la, lb), lc)
    return det / (scale * scale)


def flip_to_delaunay(
    nodes: np.ndarray, triangles: np.ndarray, max_rounds: int = 200
) -> np.ndarray:
    """Flip interior edges until every one is locally Delaunay (Lawson's flip algorithm).

    ``nodes``: (n, 2) float, mm; ``triangles``: (m, 3) int, counter-clockwise, all of positive
    area. Edges with one triangle (the boundary) are never flipped, so the boundary is kept.
    Each round flips, at once, a set of non-Delaunay edges that share no triangle (each chosen
    edge is the most violating one of both its triangles). Reference: C. L. Lawson, "Software
    for C1 surface interpolation", in Mathematical Software III (1977); an interior edge that
    fails the in-circle test always bounds a convex quadrilateral, so the flip is valid.
    Returns the new (m, 3) int counter-clockwise triangles.
    """
    tri = np.array(triangles, dtype=np.int64)
    m = len(tri)
    n = int(nodes.shape[0])
    for _ in range(max_rounds):
        # Half-edge j of triangle f runs tri[f, j] -> tri[f, j + 1]; opposite vertex tri[f, j + 2].
        start = tri.ravel()
        end = tri[:, [1, 2, 0]].ravel()
        opp = tri[:, [2, 0, 1]].ravel()
        key = np.minimum(start, end) * n + np.maximum(start, end)
        order = np.argsort(key)
        ks = key[order]
        pair = np.flatnonzero(ks[1:] == ks[:-1])
        h1 = order[pair]
        h2 = order[pair + 1]
        a, b, c, d = start[h1], end[h1], opp[h1], opp[h2]
        score = _incircle(nodes[a], nodes[b], nodes[c], nodes[d])
        cand = score > 1e-9
        if not cand.any():
            return tri
        h1, h2, a, b, c, d, score = (v[cand] for v in (h1, h2, a, b, c, d, score))
        f1, f2 = h1 // 3, h2 // 3
        # Unique priorities: the score, ties broken by position.
        prio = np.empty(len(score), dtype=np.int64)
        prio[np.argsort(score)] = np.arange(len(score))
        best = np.full(m, -1, dtype=np.int64)
        np.maximum.at(best, f1, prio)
        np.maximum.at(best, f2, prio)
        go = (best[f1] == prio) & (best[f2] == prio)
        f1, f2, a, b, c, d = f1[go], f2[go], a[go], b[go], c[go], d[go]
        # Quadrilateral a, d, b, c is convex and counter-clockwise; new diagonal c-d.
        tri[f1] = np.column_stack([a, d, c])
        tri[f2] = np.column_stack([d, b, c])
    raise RuntimeError(f"edge flipping did not finish in {max_rounds} rounds")


@dataclass(frozen=True)
class Mesh:
    """Linear triangle mesh, mm.

    nodes: (n, 2) float; triangles: (m, 3) int, counter-clockwise;
    boundary_edges: (k, 2) int node pairs, oriented with the domain on the left;
    boundary_tags: (k,) int, index into tag_names; tag_names: tuple[str, ...] (feature ids such as
    "outline", "left_bore").
    """

    nodes: np.ndarray
    triangles: np.ndarray
    boundary_edges: np.ndarray
    boundary_tags: np.ndarray
    tag_names: tuple[str, ...]

    @property
    def n_nodes(self) -> int:
        """Number of nodes."""
        return int(self.nodes.shape[0])

    @property
    def n_triangles(self) -> int:
        """Number of triangles."""
        return int(self.triangles.shape[0])

    def _tag_index(self, tag: str) -> int:
        try:
            return self.tag_names.index(tag)
        except ValueError:
            valid = ", ".join(repr(t) for t in self.tag_names)
            raise KeyError(f"no boundary tag {tag!r} in this mesh; valid tags: {valid}") from None

    def edges_of(self, tag: str) -> np.ndarray:
        """Boundary edges on one feature: (j, 2) int node pairs, domain on the left.

        Raises KeyError, listing the valid tag names, for an unknown tag.
        """
        i = self._tag_index(tag)
        return self.boundary_edges[self.boundary_tags == i]

    def nodes_of(self, tag: str) -> np.ndarray:
        """Unique node indices on one feature's boundary: (j,) int, sorted.

        Raises KeyError, listing the valid tag names, for an unknown tag.
        """
        return np.unique(self.edges_of(tag))

    def areas_mm2(self) -> np.ndarray:
        """Triangle areas, mm^2: (m,) float (positive, as triangles are counter-clockwise)."""
        return triangle_areas_mm2(self.nodes, self.triangles)

    def area_mm2(self) -> float:
        """Total mesh area, mm^2."""
        return float(self.areas_mm2().sum())

    def edge_lengths_mm(self) -> np.ndarray:
        """Lengths of the three edges of every triangle, mm: (m, 3) float.

        Column i is the edge from vertex i to vertex (i + 1) % 3.
        """
        p = self.nodes[self.triangles]
        return np.linalg.norm(np.roll(p, -1, axis=1) - p, axis=2)

    def corner_angles_deg(self) -> np.ndarray:
        """Interior angle of the region at every node, degrees: (n,) float.

        The sum of the triangle angles at the node: 360 inside, 180 on a straight stretch of
        boundary, less at a convex corner. A triangle at a corner of angle a cannot have its
        smallest angle above a, so this tells where the geometry limits the mesh quality.
        """
        ang = triangle_angles_deg(self.nodes, self.triangles)
        return np.bincount(self.triangles.ravel(), ang.ravel(), minlength=self.n_nodes)

    def quality(self) -> MeshQuality:
        """Angle and aspect-ratio measures of the mesh (see MeshQuality)."""
        if self.n_triangles == 0:
            return MeshQuality(0.0, 0.0, float("inf"), 0)
        ang = triangle_angles_deg(self.nodes, self.triangles)
        tri_min = ang.min(axis=1)
        lengths = self.edge_lengths_mm()
        area = np.abs(self.areas_mm2())
        longest = lengths.max(axis=1)
        # Shortest altitude = 2 area / longest edge; equilateral longest/altitude = 2/sqrt(3).
        with np.errstate(divide="ignore"):
            ratio = longest * longest / (2.0 * area) / (2.0 / np.sqrt(3.0))
        return MeshQuality(
            min_angle_deg=float(tri_min.min()),
            mean_angle_deg=float(tri_min.mean()),
            max_aspect_ratio=float(ratio.max()),
            count_below_20_deg=int(np.count_nonzero(tri_min < 20.0)),
        )
