"""Superconvergent patch recovery (SPR) of stresses and moments, and the recovery-based error.

Method: O. C. Zienkiewicz and J. Z. Zhu, "The superconvergent patch recovery and a posteriori
error estimates. Part 1: The recovery technique", Int. J. Numer. Meth. Eng. 33 (1992)
1331-1364. For every mesh vertex a complete polynomial (quadratic) is fitted by least squares
to the finite-element values at the sampling points (here the three points of the degree-2
Gauss rule) of the elements around it - the vertex's patch - and its value at the vertex is the
recovered value there. Patches of vertices on the boundary, where the one-ring of elements is
one-sided and too small for a quadratic, take the elements around the one-ring's vertices too
(the two-ring). Edge midpoints of six-node triangles take the mean of the two end vertices'
polynomials.

The difference between the recovered field and the element's own field is the Zienkiewicz-Zhu
error estimate (same authors, Int. J. Numer. Meth. Eng. 24 (1987) 337-357): here it is taken at
points (the peak of a field) and per element (the energy-like indicator used to decide where to
refine).

Units follow the field recovered: MPa for plane stresses, N mm/mm for plate moments; lengths mm.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import scipy.sparse as sp

__all__ = ["Recovery", "patch_recovery", "gauss_points_xy", "GAUSS_AREA_COORDS"]

#: Area coordinates of the three points of the degree-2 rule (Strang and Fix, table 4.1):
#: (3, 3), one row per point.
GAUSS_AREA_COORDS = np.array([[2 / 3, 1 / 6, 1 / 6], [1 / 6, 2 / 3, 1 / 6], [1 / 6, 1 / 6, 2 / 3]])

#: Samples a patch needs, at least, for the quadratic fit to be used (6 coefficients).
_MIN_SAMPLES = 12


@dataclass(frozen=True)
class Recovery:
    """A recovered field.

    nodal: (n, c) float recovered values at the mesh's nodes (vertices, and edge midpoints when
        ``midpoints`` was given). element_nodal: (m, k, c) float the elements' own values at
        their k nodes (the raw finite-element field, discontinuous between elements).
    """

    nodal: np.ndarray
    element_nodal: np.ndarray


def gauss_points_xy(nodes: np.ndarray, triangles: np.ndarray) -> np.ndarray:
    """Coordinates (m, 3, 2) float, mm, of the degree-2 Gauss points of every triangle."""
    p = np.asarray(nodes, dtype=float)[np.asarray(triangles)[:, :3]]  # (m, 3, 2)
    return np.einsum("qa,mad->mqd", GAUSS_AREA_COORDS, p)


def _monomials(d: np.ndarray) -> np.ndarray:
    """Complete quadratic basis (1, x, y, x^2, x y, y^2) at offsets (..., 2): (..., 6)."""
    x, y = d[..., 0], d[..., 1]
    return np.stack([np.ones_like(x), x, y, x * x, x * y, y * y], axis=-1)


def _patches(tri: np.ndarray, n_vertices: int, boundary: np.ndarray) -> sp.csr_matrix:
    """Vertex-by-element patch matrix (n_vertices, m): the one-ring of interior vertices and
    the two-ring of boundary vertices (and of any vertex whose one-ring is too small)."""
    m = tri.shape[0]
    inc = sp.csr_matrix((np.ones(3 * m), (tri.ravel(), np.repeat(np.arange(m), 3))),
                        shape=(n_vertices, m))
    ring1 = inc
    ring2 = ((inc @ inc.T) @ inc).tocsr()
    ring2.data[:] = 1.0
    samples = 3 * np.asarray(ring1.sum(axis=1)).ravel()
    wide = np.zeros(n_vertices, dtype=bool)
    wide[np.asarray(boundary, dtype=np.int64).ravel()] = True
    wide |= samples < _MIN_SAMPLES
    pick = sp.diags(wide.astype(float))
    keep = sp.diags((~wide).astype(float))
    out = (keep @ ring1 + pick @ ring2).tocsr()
    out.data[:] = 1.0
    return out


def patch_recovery(
    vertices_mm: np.ndarray,
    triangles: np.ndarray,
    sample_values: np.ndarray,
    element_nodal: np.ndarray,
    boundary_vertices: np.ndarray,
    midpoints: np.ndarray | None = None,
) -> Recovery:
    """SPR of a field sampled at the degree-2 Gauss points of every triangle.

    vertices_mm: (n, 2) float vertex coordinates. triangles: (m, 3) int vertex connectivity,
    counter-clockwise. sample_values: (m, 3, c) float the field at the Gauss points
    (GAUSS_AREA_COORDS order). element_nodal: (m, k, c) float the element's own values at its
    nodes (k = 3, or 6 with ``midpoints``), kept for the error estimate. boundary_vertices: (b,)
    int vertices on the boundary. midpoints: (m, 3) int node numbers of the edge midpoints 01,
    12, 20 (six-node triangles; their numbers follow the vertices) or None.
    Returns a Recovery with nodal values for n vertices (plus the midpoints).
    """
    xy = np.asarray(vertices_mm, dtype=float)
    tri = np.asarray(triangles, dtype=np.int64)
    vals = np.asarray(sample_values, dtype=float)
    n = xy.shape[0]
    c = vals.shape[2]
    patch = _patches(tri, n, boundary_vertices).tocoo()
    v, e = patch.row, patch.col
    # Patch length scale: square root of the mean area of its elements (keeps the fit well
    # conditioned whatever the element size).
    p = xy[tri]
    area = 0.5 * np.abs((p[:, 1, 0] - p[:, 0, 0]) * (p[:, 2, 1] - p[:, 0, 1])
                        - (p[:, 2, 0] - p[:, 0, 0]) * (p[:, 1, 1] - p[:, 0, 1]))
    count = np.bincount(v, minlength=n)
    scale = np.sqrt(np.bincount(v, weights=area[e], minlength=n) / np.maximum(count, 1))
    scale[scale <= 0.0] = 1.0
    gp = gauss_points_xy(xy, tri)  # (m, 3, 2)
    off = (gp[e] - xy[v][:, None, :]) / scale[v][:, None, None]  # (pairs, 3, 2)
    basis = _monomials(off)  # (pairs, 3, 6)
    mat = np.zeros((n, 6, 6))
    rhs = np.zeros((n, 6, c))
    np.add.at(mat, v, np.einsum("pqi,pqj->pij", basis, basis))
    np.add.at(rhs, v, np.einsum("pqi,pqc->pic", basis, vals[e]))
    # A whisper of ridge regularisation keeps degenerate patches (collinear samples) solvable.
    tr = np.einsum("nii->n", mat)
    mat += (1e-10 * np.maximum(tr, 1e-300))[:, None, None] * np.eye(6)[None]
    coef = np.linalg.solve(mat, rhs)  # (n, 6, c)
    nodal = coef[:, 0, :]
    if midpoints is not None:
        mids = np.asarray(midpoints, dtype=np.int64)
        ends = tri[:, [[0, 1], [1, 2], [2, 0]]]  # (m, 3, 2)
        total = int(mids.max()) + 1 if mids.size else n
        out = np.zeros((max(total, n), c))
        out[:n] = nodal
        mid_xy = 0.5 * (xy[ends[..., 0]] + xy[ends[..., 1]])  # (m, 3, 2)
        acc = np.zeros((m_total := out.shape[0], c))
        cnt = np.zeros(m_total)
        for k in range(2):
            vert = ends[..., k].ravel()
            d = (mid_xy.reshape(-1, 2) - xy[vert]) / scale[vert][:, None]
            val = np.einsum("pi,pic->pc", _monomials(d), coef[vert])
            np.add.at(acc, mids.ravel(), val)
            np.add.at(cnt, mids.ravel(), 1.0)
        has = cnt > 0
        out[has] = acc[has] / cnt[has, None]
        nodal = out
    return Recovery(nodal, np.asarray(element_nodal, dtype=float))
