"""Supports of a plate in bending on tagged mesh edges and nodes.

Dofs per node are (w, theta_x, theta_y) as in ``fea.bending`` (dof ``3 * node + k``). Every
function returns a PlateSupports: prescribed dofs with their values, and an optional sparse spring
matrix (elastic supports), ready for ``fea.solve.solve_system``. Combine several with
``combine_supports``.

- simply supported: w = 0 at the nodes of the edge. With ``hard=True`` the slope along each
  incident edge parallel to the x or y axis is also fixed (the rotation about that edge's normal),
  so a corner of a rectangle gets both rotations fixed. Curved or inclined edges stay "soft"
  (rotations free): fixing both rotations at nodes of a polygon that stands for a curve would turn
  the support into a clamp.
- clamped: w = 0 and both rotations = 0 at every node of the edge, straight or curved.
- point supports: w = 0 (optionally rotations too) at the nodes nearest to given points.
- elastic ring support at a bore: vertical springs (N/mm) on the bore's nodes, shared by tributary
  edge length, plus optional rotational springs (N mm/rad) - e.g. a standoff or a bolted boss.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
import scipy.sparse as sp

__all__ = [
    "PlateSupports",
    "simply_supported",
    "clamped",
    "point_supports",
    "elastic_ring_support",
    "combine_supports",
]

_W, _TX, _TY = 0, 1, 2


@dataclass(frozen=True)
class PlateSupports:
    """Prescribed dofs and elastic supports of a plate.

    fixed_dofs: (f,) int sorted unique dof numbers; fixed_values: (f,) float (mm or radians);
    spring_matrix: (3 n, 3 n) sparse CSR, N/mm on w and N mm/rad on rotations, or None.
    n_dofs: 3 * number of nodes.
    """

    fixed_dofs: np.ndarray
    fixed_values: np.ndarray
    spring_matrix: sp.csr_matrix | None
    n_dofs: int


def _fixed(n_dofs: int, dofs: np.ndarray, values: np.ndarray | None = None) -> PlateSupports:
    dofs = np.asarray(dofs, dtype=np.int64).ravel()
    vals = np.zeros(dofs.shape) if values is None else np.asarray(values, float).ravel()
    uniq, first = np.unique(dofs, return_index=True)
    return PlateSupports(uniq, vals[first], None, n_dofs)


def _edges(mesh, tag: str) -> np.ndarray:
    edges = np.asarray(mesh.edges_of(tag), dtype=np.int64)
    if edges.size == 0:
        raise ValueError(f"boundary tag {tag!r} has no edges in this mesh")
    return edges


def simply_supported(mesh, tag: str, *, hard: bool = False) -> PlateSupports:
    """Simple support (w = 0) on the boundary edges tagged ``tag`` of a ``fea.mesh.Mesh``.

    hard: also fix the slope along each incident tagged edge that is parallel to the x axis
    (theta_y = 0) or the y axis (theta_x = 0); other edges leave the rotations free.
    Raises KeyError for an unknown tag, ValueError for a tag without edges.
    """
    edges = _edges(mesh, tag)
    n_dofs = 3 * int(mesh.nodes.shape[0])
    dofs = [3 * np.unique(edges) + _W]
    if hard:
        d = mesh.nodes[edges[:, 1]] - mesh.nodes[edges[:, 0]]
        length = np.hypot(d[:, 0], d[:, 1])
        tol = 1e-9 * length
        along_x = np.abs(d[:, 1]) <= tol  # dw/dx = -theta_y = 0
        along_y = np.abs(d[:, 0]) <= tol  # dw/dy = theta_x = 0
        dofs.append(3 * edges[along_x].ravel() + _TY)
        dofs.append(3 * edges[along_y].ravel() + _TX)
    return _fixed(n_dofs, np.concatenate(dofs))


def clamped(mesh, tag: str) -> PlateSupports:
    """Clamped edge: w = theta_x = theta_y = 0 at every node of the edges tagged ``tag``."""
    nodes = np.unique(_edges(mesh, tag))
    n_dofs = 3 * int(mesh.nodes.shape[0])
    return _fixed(n_dofs, (3 * nodes[:, None] + np.arange(3)).ravel())


def point_supports(
    mesh,
    points_mm: np.ndarray,
    *,
    fix_rotations: bool = False,
    max_distance_mm: float | None = None,
) -> PlateSupports:
    """Point supports (w = 0, and both rotations with ``fix_rotations``) at the nodes nearest to
    ``points_mm`` (p, 2) float, mm. Raises ValueError when a node lies farther than
    ``max_distance_mm`` from its point."""
    pts = np.atleast_2d(np.asarray(points_mm, dtype=float))
    xy = np.asarray(mesh.nodes, dtype=float)
    dist2 = ((pts[:, None, :] - xy[None, :, :]) ** 2).sum(axis=2)
    nearest = dist2.argmin(axis=1)
    gap = np.sqrt(dist2[np.arange(pts.shape[0]), nearest])
    if max_distance_mm is not None and np.any(gap > max_distance_mm):
        worst = int(gap.argmax())
        raise ValueError(
            f"no mesh node within {max_distance_mm} mm of support point {pts[worst].tolist()} "
            f"(nearest is {gap[worst]:.3g} mm away)"
        )
    comps = np.arange(3) if fix_rotations else np.array([_W])
    return _fixed(3 * xy.shape[0], (3 * nearest[:, None] + comps).ravel())


def elastic_ring_support(
    mesh,
    tag: str,
    stiffness_n_per_mm: float,
    *,
    rotational_stiffness_nmm_per_rad: float = 0.0,
) -> PlateSupports:
    """Elastic support around a bore: springs on the nodes of the edges tagged ``tag``.

    stiffness_n_per_mm: total vertical stiffness of the support (N/mm), shared between the nodes
    in proportion to their tributary edge length. rotational_stiffness_nmm_per_rad: total
    stiffness against rotation about x and about y (N mm/rad), shared the same way. The ring's
    own resistance to tilting comes from the spread of the vertical springs around the bore.
    """
    if stiffness_n_per_mm < 0 or rotational_stiffness_nmm_per_rad < 0:
        raise ValueError("spring stiffnesses must not be negative")
    edges = _edges(mesh, tag)
    n = int(mesh.nodes.shape[0])
    d = mesh.nodes[edges[:, 1]] - mesh.nodes[edges[:, 0]]
    half = 0.5 * np.hypot(d[:, 0], d[:, 1])
    share = np.bincount(edges.ravel(), weights=np.repeat(half, 2), minlength=n)
    share /= share.sum()
    nodes = np.flatnonzero(share)
    rows = np.concatenate([3 * nodes + _W, 3 * nodes + _TX, 3 * nodes + _TY])
    vals = np.concatenate(
        [
            stiffness_n_per_mm * share[nodes],
            rotational_stiffness_nmm_per_rad * share[nodes],
            rotational_stiffness_nmm_per_rad * share[nodes],
        ]
    )
    keep = vals != 0.0
    s = sp.csr_matrix((vals[keep], (rows[keep], rows[keep])), shape=(3 * n, 3 * n))
    return PlateSupports(np.zeros(0, np.int64), np.zeros(0), s, 3 * n)


def combine_supports(supports: Sequence[PlateSupports]) -> PlateSupports:
    """Union of several supports on the same mesh: fixed dofs merged, spring matrices added.

    Raises ValueError when the supports belong to different meshes or fix one dof to two values.
    """
    if not supports:
        raise ValueError("no supports to combine")
    n_dofs = supports[0].n_dofs
    if any(s.n_dofs != n_dofs for s in supports):
        raise ValueError("supports belong to meshes with different numbers of dofs")
    dofs = np.concatenate([s.fixed_dofs for s in supports])
    vals = np.concatenate([s.fixed_values for s in supports])
    uniq, first, inverse = np.unique(dofs, return_index=True, return_inverse=True)
    if not np.array_equal(vals, vals[first][inverse]):
        raise ValueError("one dof is prescribed two different values")
    springs = [s.spring_matrix for s in supports if s.spring_matrix is not None]
    spring = None
    if springs:
        spring = springs[0].copy()
        for extra in springs[1:]:
            spring = spring + extra
        spring = sp.csr_matrix(spring)
    return PlateSupports(uniq, vals[first], spring, n_dofs)
