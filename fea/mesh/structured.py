"""Structured triangle meshes for tests and benchmarks, returned as fea.mesh.Mesh.

A grid of (nu + 1) x (nv + 1) points, produced by a map from the unit square, is split into two
triangles per cell. Boundary edges are found from the topology (edges used by one triangle),
oriented with the domain on the left, and tagged by the side of the unit square they come from
(or by a geometric rule for meshes glued from several patches). All lengths in mm.
"""

from __future__ import annotations

from collections.abc import Callable, Sequence

import numpy as np
from scipy.optimize import brentq

from platewright.fea.mesh.triangles import Mesh

__all__ = [
    "boundary_edges",
    "mapped_mesh",
    "rectangle_mesh",
    "cook_membrane_mesh",
    "elliptic_membrane_mesh",
    "plate_with_hole_quarter_mesh",
]

MapFunction = Callable[[np.ndarray, np.ndarray], tuple[np.ndarray, np.ndarray]]


def boundary_edges(triangles: np.ndarray) -> np.ndarray:
    """Edges used by exactly one triangle, (k, 2) int, in the triangle's (counter-clockwise)
    direction, so the domain lies on their left."""
    tri = np.asarray(triangles, dtype=np.int64)
    e = np.stack([tri[:, [0, 1]], tri[:, [1, 2]], tri[:, [2, 0]]], axis=1).reshape(-1, 2)
    n = int(tri.max()) + 1 if tri.size else 0
    keys = e.min(axis=1) * n + e.max(axis=1)
    _, inverse, counts = np.unique(keys, return_inverse=True, return_counts=True)
    return e[counts[inverse] == 1]


def _grid_triangles(nu: int, nv: int, pattern: str) -> np.ndarray:
    """Triangles of an (nu x nv)-cell grid with point index j * (nu + 1) + i, (2 nu nv, 3) int."""
    i, j = np.meshgrid(np.arange(nu), np.arange(nv), indexing="xy")
    i, j = i.ravel(), j.ravel()
    p00 = j * (nu + 1) + i
    p10, p01, p11 = p00 + 1, p00 + nu + 1, p00 + nu + 2
    if pattern == "right":
        flip = np.zeros(i.shape, dtype=bool)
    elif pattern == "left":
        flip = np.ones(i.shape, dtype=bool)
    elif pattern == "alternating":
        flip = (i + j) % 2 == 1
    else:
        raise ValueError(f"pattern must be 'right', 'left' or 'alternating', got {pattern!r}")
    t1 = np.where(flip[:, None], np.stack([p00, p10, p01], 1), np.stack([p00, p10, p11], 1))
    t2 = np.where(flip[:, None], np.stack([p10, p11, p01], 1), np.stack([p00, p11, p01], 1))
    return np.vstack([t1, t2])


def _orient_ccw(nodes: np.ndarray, tri: np.ndarray) -> np.ndarray:
    p = nodes[tri]
    d1, d2 = p[:, 1] - p[:, 0], p[:, 2] - p[:, 0]
    area2 = d1[:, 0] * d2[:, 1] - d1[:, 1] * d2[:, 0]
    tri = tri.copy()
    tri[area2 < 0] = tri[area2 < 0][:, [0, 2, 1]]
    return tri


def mapped_mesh(
    map_fn: MapFunction,
    nu: int,
    nv: int,
    tag_names: Sequence[str] = ("bottom", "right", "top", "left"),
    pattern: str = "alternating",
    u_points: np.ndarray | None = None,
    v_points: np.ndarray | None = None,
) -> Mesh:
    """Mesh of the image of the unit square under ``map_fn(u, v) -> (x, y)`` (mm).

    nu, nv: cells along u and v. tag_names: tags of the sides v = 0, u = 1, v = 1, u = 0.
    u_points, v_points: optional (nu + 1,) and (nv + 1,) increasing parameters in [0, 1] (for
    grading); default uniform. Triangles are made counter-clockwise whatever the map's sense.
    """
    if nu < 1 or nv < 1:
        raise ValueError("nu and nv must be at least 1")
    us = np.linspace(0.0, 1.0, nu + 1) if u_points is None else np.asarray(u_points, float)
    vs = np.linspace(0.0, 1.0, nv + 1) if v_points is None else np.asarray(v_points, float)
    uu, vv = np.meshgrid(us, vs, indexing="xy")
    x, y = map_fn(uu.ravel(), vv.ravel())
    nodes = np.column_stack([np.asarray(x, float), np.asarray(y, float)])
    tri = _orient_ccw(nodes, _grid_triangles(nu, nv, pattern))
    edges = boundary_edges(tri)
    ii = np.arange(nodes.shape[0]) % (nu + 1)
    jj = np.arange(nodes.shape[0]) // (nu + 1)
    sides = np.stack([jj == 0, ii == nu, jj == nv, ii == 0], axis=1)  # (n, 4)
    both = sides[edges[:, 0]] & sides[edges[:, 1]]  # (k, 4), one True per edge
    tags = np.argmax(both, axis=1)
    names = tuple(tag_names)
    if len(names) != 4:
        raise ValueError("tag_names must name the 4 sides (v=0, u=1, v=1, u=0)")
    # Sides sharing a name share one tag index.
    uniq = tuple(dict.fromkeys(names))
    remap = np.array([uniq.index(nm) for nm in names])
    return Mesh(nodes, tri, edges, remap[tags], uniq)


def rectangle_mesh(
    width_mm: float,
    height_mm: float,
    nx: int,
    ny: int,
    origin_mm: tuple[float, float] = (0.0, 0.0),
    pattern: str = "alternating",
) -> Mesh:
    """Rectangle [x0, x0 + width] x [y0, y0 + height] in nx x ny cells, two triangles each.

    Tags "bottom", "right", "top", "left".
    """
    x0, y0 = origin_mm

    def rect(u: np.ndarray, v: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        return x0 + width_mm * u, y0 + height_mm * v

    return mapped_mesh(rect, nx, ny, pattern=pattern)


def cook_membrane_mesh(n: int, pattern: str = "alternating") -> Mesh:
    """Cook's membrane: quadrilateral (0, 0), (48, 44), (48, 60), (0, 44) mm, n x n cells.

    Tags: "left" (clamped edge x = 0), "right" (loaded edge x = 48), "bottom", "top".
    """

    def cook(u: np.ndarray, v: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        x = 48.0 * u
        y_low = 44.0 * u
        y_high = 44.0 + 16.0 * u
        return x, y_low + v * (y_high - y_low)

    return mapped_mesh(cook, n, n, pattern=pattern)


def elliptic_membrane_mesh(
    n_around: int, n_across: int, grading_power: float = 1.0, pattern: str = "alternating"
) -> Mesh:
    """NAFEMS LE1 quarter elliptic membrane in mm: between x^2/2000^2 + y^2/1000^2 = 1 and
    x^2/3250^2 + y^2/2750^2 = 1, x, y >= 0.

    Points at the same ellipse parameter theta on both ellipses are joined by straight lines.
    grading_power p > 1 crowds cells toward the point (2000, 0): parameters (k / n)^p.
    Tags: "inner", "outer", "x_axis" (y = 0, from (2000, 0) to (3250, 0)), "y_axis" (x = 0).
    """

    def ring(u: np.ndarray, v: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        th = 0.5 * np.pi * u
        xi, yi = 2000.0 * np.cos(th), 1000.0 * np.sin(th)
        xo, yo = 3250.0 * np.cos(th), 2750.0 * np.sin(th)
        x = xi + v * (xo - xi)
        y = yi + v * (yo - yi)
        x = np.where(u == 1.0, 0.0, x)  # exact zeros on the symmetry line
        return x, y

    us = np.linspace(0.0, 1.0, n_around + 1) ** grading_power
    vs = np.linspace(0.0, 1.0, n_across + 1) ** grading_power
    names = ("inner", "y_axis", "outer", "x_axis")
    return mapped_mesh(ring, n_around, n_across, names, pattern, u_points=us, v_points=vs)


def _graded(n: int, first: float, total: float) -> np.ndarray:
    """n + 1 increasing points in [0, 1] whose first step is ``first / total`` (geometric)."""
    h = first / total
    if h * n >= 1.0:
        return np.linspace(0.0, 1.0, n + 1)
    q = brentq(lambda r: h * (r**n - 1.0) / (r - 1.0) - 1.0, 1.0 + 1e-12, 10.0)
    steps = h * q ** np.arange(n)
    pts = np.concatenate([[0.0], np.cumsum(steps)])
    return pts / pts[-1]


def plate_with_hole_quarter_mesh(
    radius_mm: float,
    half_width_mm: float,
    half_height_mm: float,
    n_around: int,
    n_radial: int,
    n_far: int = 0,
) -> Mesh:
    """Quarter of a plate [-W/2, W/2] x [-H/2, H/2] with a central hole of radius R, x, y >= 0.

    Near the hole, the square [0, W/2]^2 minus the hole is mapped from the arc (n_around cells,
    split at 45 degrees between the right side and the top of the square) outward, with radial
    cells graded geometrically so the first ring is about as deep as the arc cells are long.
    When H > W, the strip [0, W/2] x [W/2, H/2] above it is meshed with n_far rows (default:
    about square cells). Tags: "hole", "x_axis" (y = 0), "y_axis" (x = 0), "right" (x = W/2),
    "top" (y = H/2). Requires R < W/2 <= H/2 and an even n_around.
    """
    r, a, hh = float(radius_mm), float(half_width_mm), float(half_height_mm)
    if not 0.0 < r < a <= hh:
        raise ValueError("need 0 < radius < half width <= half height")
    if n_around % 2:
        raise ValueError("n_around must be even")
    half = n_around // 2
    first = r * 0.5 * np.pi / n_around
    vs = _graded(n_radial, first, a - r)

    def near(u: np.ndarray, v: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        th = 0.5 * np.pi * u
        xi, yi = r * np.cos(th), r * np.sin(th)
        lower = u <= 0.5
        # outer boundary: right side (a, 2 a u) for u <= 1/2, top side (a (2 - 2 u), a) after
        xo = np.where(lower, a, a * (2.0 - 2.0 * u))
        yo = np.where(lower, 2.0 * a * u, a)
        return xi + v * (xo - xi), yi + v * (yo - yi)

    near_mesh = mapped_mesh(near, 2 * half, n_radial, ("hole", "outer", "outer", "outer"),
                            v_points=vs)
    nodes, tri = near_mesh.nodes, near_mesh.triangles
    if hh > a:
        if n_far <= 0:
            n_far = max(1, int(np.ceil((hh - a) / (a / half))))
        far = rectangle_mesh(a, hh - a, half, n_far, origin_mm=(0.0, a))
        # glue: far bottom row x = a (1 - i / half) ... match by coordinates
        all_nodes = np.vstack([nodes, far.nodes])
        key = np.round(all_nodes / (a * 1e-9)).astype(np.int64)
        _, first_idx, inverse = np.unique(key, axis=0, return_index=True, return_inverse=True)
        inverse = inverse.ravel()
        order = np.argsort(first_idx)
        rank = np.empty_like(order)
        rank[order] = np.arange(order.size)
        new_index = rank[inverse]
        nodes = all_nodes[first_idx[order]]
        tri = new_index[np.vstack([tri, far.triangles + near_mesh.nodes.shape[0]])]
    edges = boundary_edges(tri)
    mid = 0.5 * (nodes[edges[:, 0]] + nodes[edges[:, 1]])
    tol = 1e-9 * a
    names = ("hole", "x_axis", "y_axis", "right", "top")
    tags = np.zeros(len(edges), dtype=np.int64)
    tags[np.abs(mid[:, 1]) < tol] = 1
    tags[np.abs(mid[:, 0]) < tol] = 2
    tags[np.abs(mid[:, 0] - a) < tol] = 3
    tags[np.abs(mid[:, 1] - hh) < tol] = 4
    return Mesh(nodes, tri, edges, tags, names)
