"""Quadratic (P2) triangles from a linear mesh: one extra node at the midpoint of every edge.

Node order of a six-node triangle: the three vertices (counter-clockwise) and then the midpoints
of edges (v0, v1), (v1, v2), (v2, v0). Midpoints sit on the straight chord (straight-sided,
subparametric elements), so the element geometry stays affine.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from platewright.fea.mesh.triangles import Mesh

__all__ = ["QuadraticMesh", "quadratic_mesh"]


@dataclass(frozen=True)
class QuadraticMesh:
    """Six-node triangles built on a linear Mesh.

    nodes: (n2, 2) float, mm; the first ``n_vertices`` rows are the linear mesh's nodes, then one
        midpoint per unique edge.
    tri6: (m, 6) int connectivity (vertices, then midpoints of edges 01, 12, 20).
    boundary_midpoints: (k,) int midpoint node of each of the linear mesh's boundary edges, in
        the same order as ``mesh.boundary_edges``.
    n_vertices: number of linear (corner) nodes.
    mesh: the linear mesh the nodes were built on.
    """

    nodes: np.ndarray
    tri6: np.ndarray
    boundary_midpoints: np.ndarray
    n_vertices: int
    mesh: Mesh

    def edge_nodes_of(self, tag: str) -> np.ndarray:
        """Boundary edges on one tag as (j, 3) int: start, end and midpoint node."""
        self.mesh.edges_of(tag)  # raises KeyError listing the valid tags
        mask = self.mesh.boundary_tags == self.mesh.tag_names.index(tag)
        return np.column_stack(
            [self.mesh.boundary_edges[mask], self.boundary_midpoints[mask]]
        )

    def nodes_of(self, tag: str) -> np.ndarray:
        """Unique vertex and midpoint nodes on one tag's boundary: (j,) int, sorted."""
        return np.unique(self.edge_nodes_of(tag))


def quadratic_mesh(mesh: Mesh) -> QuadraticMesh:
    """Add edge-midpoint nodes to a linear mesh (vectorised, no loop over elements).

    Returns a QuadraticMesh. Raises ValueError when a boundary edge is not an edge of any
    triangle.
    """
    nodes = np.asarray(mesh.nodes, dtype=float)
    tri = np.asarray(mesh.triangles, dtype=np.int64)
    n = nodes.shape[0]
    m = tri.shape[0]
    # (m, 3, 2) local edges 01, 12, 20
    local = np.stack([tri[:, [0, 1]], tri[:, [1, 2]], tri[:, [2, 0]]], axis=1)
    lo = local.min(axis=2)
    hi = local.max(axis=2)
    keys = (lo * n + hi).ravel()
    uniq, inverse = np.unique(keys, return_inverse=True)
    edge_lo = uniq // n
    edge_hi = uniq % n
    mid = 0.5 * (nodes[edge_lo] + nodes[edge_hi])
    all_nodes = np.vstack([nodes, mid])
    tri6 = np.hstack([tri, n + inverse.reshape(m, 3)])

    be = np.asarray(mesh.boundary_edges, dtype=np.int64).reshape(-1, 2)
    bkeys = be.min(axis=1) * n + be.max(axis=1)
    pos = np.searchsorted(uniq, bkeys)
    pos = np.clip(pos, 0, max(uniq.size - 1, 0))
    if be.shape[0] and (uniq.size == 0 or np.any(uniq[pos] != bkeys)):
        raise ValueError("a boundary edge of the mesh is not an edge of any triangle")
    return QuadraticMesh(
        nodes=all_nodes,
        tri6=tri6,
        boundary_midpoints=n + pos,
        n_vertices=n,
        mesh=mesh,
    )
