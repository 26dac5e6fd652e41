"""Discrete Kirchhoff triangle (DKT) for thin plates in bending, after Batoz, Bathe and Ho,
"A study of three-node triangular plate bending elements", Int. J. Numer. Meth. Eng. 15 (1980)
1771-1812.

Degrees of freedom, three per node, node-major (dof ``3 * node + k``):

- ``k = 0``: w, deflection along +z (mm), z up out of the plate's plane;
- ``k = 1``: theta_x, rotation about the +x axis, right-hand rule (radians); theta_x = dw/dy;
- ``k = 2``: theta_y, rotation about the +y axis, right-hand rule (radians); theta_y = -dw/dx.

Inside the element the slopes (dw/dx, dw/dy) are quadratic over six points (corners and edge
midpoints). The Kirchhoff conditions tie them to the nine nodal values: at the corners the slopes
are the nodal ones; at each edge midpoint the slope along the edge is that of the cubic deflection
through the edge's end values, and the slope across the edge is the mean of the end values.

Moments per unit width (N mm/mm), Kirchhoff sign convention with z up:
``Mx = -D (w,xx + nu w,yy)``, ``My = -D (w,yy + nu w,xx)``, ``Mxy = -D (1 - nu) w,xy``, i.e.
``M = D_b kappa`` with curvatures ``kappa = (-w,xx, -w,yy, -2 w,xy)``. The bending stress varies
linearly through the thickness, ``sigma(z) = 12 M z / t^3``; on the top face (z = +t/2) it is
``6 M / t^2`` and on the bottom face the negative of that (same von Mises value).

The stiffness is integrated with the 3-point interior rule (degree 2), which is exact for the DKT
because its curvatures are linear inside the element and D_b is constant per element.
Measured on structured meshes (tests/test_bending_verification.py): centre deflections converge
from above (slightly too flexible) at order ~2 in the mesh size.
"""

from __future__ import annotations

import numpy as np

from platewright.fea.assembly import element_dofs
from platewright.fea.elements.constitutive import material_plane_stress, orthotropic_plane_stress
from platewright.geometry.model import Material

__all__ = [
    "DOFS_PER_NODE",
    "bending_rigidity",
    "isotropic_bending_matrix",
    "orthotropic_bending_matrix",
    "material_bending_matrix",
    "dkt_stiffness",
    "dkt_pressure_load",
    "nodal_load_vector",
    "dkt_moments",
    "nodal_moments",
    "surface_stresses",
    "von_mises_plane",
]

#: w, theta_x, theta_y at every node.
DOFS_PER_NODE = 3

# 3-point degree-2 rule on the triangle: area coordinates and weights (fractions of the area).
_GAUSS_L = np.array([[2 / 3, 1 / 6, 1 / 6], [1 / 6, 2 / 3, 1 / 6], [1 / 6, 1 / 6, 2 / 3]])
_GAUSS_W = np.array([1 / 3, 1 / 3, 1 / 3])
# Maps nodal rotations (theta_x, theta_y) to slopes (dw/dx, dw/dy) = (-theta_y, theta_x).
_ROT_TO_SLOPE = np.array([[0.0, -1.0], [1.0, 0.0]])
# Elements handled per vectorised block (bounds the memory of the intermediate arrays).
_CHUNK = 100_000


def bending_rigidity(youngs_modulus_mpa: float, poisson_ratio: float, thickness_mm: float) -> float:
    """Flexural rigidity D = E t^3 / (12 (1 - nu^2)) of an isotropic plate, N mm."""
    if thickness_mm <= 0 or youngs_modulus_mpa <= 0:
        raise ValueError("modulus and thickness must be positive")
    if not -1.0 < poisson_ratio < 0.5:
        raise ValueError(f"Poisson's ratio must lie in (-1, 0.5), got {poisson_ratio}")
    return youngs_modulus_mpa * thickness_mm**3 / (12.0 * (1.0 - poisson_ratio**2))


def isotropic_bending_matrix(
    youngs_modulus_mpa: float, poisson_ratio: float, thickness_mm: float
) -> np.ndarray:
    """Bending matrix D_b (3, 3) float, N mm: (kx, ky, 2 kxy) (1/mm) to (Mx, My, Mxy) (N mm/mm)."""
    d = bending_rigidity(youngs_modulus_mpa, poisson_ratio, thickness_mm)
    nu = poisson_ratio
    return d * np.array([[1.0, nu, 0.0], [nu, 1.0, 0.0], [0.0, 0.0, 0.5 * (1.0 - nu)]])


def orthotropic_bending_matrix(
    e1_mpa: float,
    e2_mpa: float,
    nu12: float,
    g12_mpa: float,
    thickness_mm: float,
    angle_rad: float = 0.0,
) -> np.ndarray:
    """Bending matrix D_b = t^3 / 12 * Q (3, 3) float, N mm, of a homogeneous orthotropic sheet.

    E1 along material axis 1 (e.g. face grain), which lies at ``angle_rad`` (radians,
    counter-clockwise) from +x. Q is the plane-stress matrix of ``fea.constitutive``; shear
    terms use engineering strain (2 kxy).
    """
    if thickness_mm <= 0:
        raise ValueError("thickness must be positive")
    q = orthotropic_plane_stress(e1_mpa, e2_mpa, nu12, g12_mpa, angle_rad)
    return thickness_mm**3 / 12.0 * q


def material_bending_matrix(
    material: Material, thickness_mm: float, grain_angle_rad: float | None = None
) -> np.ndarray:
    """Bending matrix (3, 3) float, N mm, of a library material at ``thickness_mm`` (mm).

    Orthotropic when the material has orthotropic data and a grain angle (radians) is given,
    otherwise isotropic from E and nu (see ``fea.constitutive.material_plane_stress``). Refuses
    materials that must not be laser-cut (ValueError naming the reason).
    """
    if thickness_mm <= 0:
        raise ValueError("thickness must be positive")
    return thickness_mm**3 / 12.0 * material_plane_stress(material, grain_angle_rad)


def _geometry(nodes: np.ndarray, triangles: np.ndarray):
    """Per-element b, c coefficients (m, 3), twice the area (m,), and the slope map (m, 2, 6, 9)."""
    p = nodes[triangles]  # (m, 3, 2)
    x, y = p[..., 0], p[..., 1]
    nxt, prv = [1, 2, 0], [2, 0, 1]
    b = y[:, nxt] - y[:, prv]  # dL_i/dx * 2A
    c = x[:, prv] - x[:, nxt]  # dL_i/dy * 2A
    two_a = b[:, 0] * c[:, 1] - b[:, 1] * c[:, 0]
    if np.any(two_a <= 0):
        raise ValueError("every triangle must be counter-clockwise with positive area")
    m = p.shape[0]
    t = np.zeros((m, 2, 6, 9))
    for a in range(3):
        t[:, 0, a, 3 * a + 2] = -1.0  # dw/dx = -theta_y
        t[:, 1, a, 3 * a + 1] = 1.0  # dw/dy = theta_x
    eye = np.eye(2)
    for e in range(3):
        i, j = e, (e + 1) % 3
        d = p[:, j] - p[:, i]  # (m, 2)
        length = np.hypot(d[:, 0], d[:, 1])
        s = d / length[:, None]
        # midpoint slope = 3/(2l) (w_j - w_i) s + (I/2 - 3/4 s s^T)(g_i + g_j)
        t[:, :, 3 + e, 3 * i] = -1.5 * s / length[:, None]
        t[:, :, 3 + e, 3 * j] = 1.5 * s / length[:, None]
        proj = 0.5 * eye - 0.75 * s[:, :, None] * s[:, None, :]  # (m, 2, 2)
        pr = proj @ _ROT_TO_SLOPE
        t[:, :, 3 + e, 3 * i + 1 : 3 * i + 3] = pr
        t[:, :, 3 + e, 3 * j + 1 : 3 * j + 3] = pr
    return b, c, two_a, t


def _shape_derivatives(area_coords: np.ndarray, b: np.ndarray, c: np.ndarray, two_a: np.ndarray):
    """x and y derivatives (m, 6) of the six quadratic shape functions at one point (3,)."""
    lam = area_coords
    dn_dl = np.zeros((6, 3))
    for a in range(3):
        dn_dl[a, a] = 4.0 * lam[a] - 1.0
    for e in range(3):
        i, j = e, (e + 1) % 3
        dn_dl[3 + e, i] = 4.0 * lam[j]
        dn_dl[3 + e, j] = 4.0 * lam[i]
    dndx = (b @ dn_dl.T) / two_a[:, None]
    dndy = (c @ dn_dl.T) / two_a[:, None]
    return dndx, dndy


def _b_matrix(area_coords: np.ndarray, b, c, two_a, t) -> np.ndarray:
    """Curvature-displacement matrix (m, 3, 9) at one point given by area coordinates (3,)."""
    dndx, dndy = _shape_derivatives(area_coords, b, c, two_a)
    gx_x = np.einsum("ma,mak->mk", dndx, t[:, 0])
    gy_y = np.einsum("ma,mak->mk", dndy, t[:, 1])
    gx_y = np.einsum("ma,mak->mk", dndy, t[:, 0])
    gy_x = np.einsum("ma,mak->mk", dndx, t[:, 1])
    return -np.stack([gx_x, gy_y, gx_y + gy_x], axis=1)


def _d_per_element(d_matrix: np.ndarray, m: int) -> np.ndarray:
    d = np.asarray(d_matrix, dtype=float)
    if d.shape == (3, 3):
        return np.broadcast_to(d, (m, 3, 3))
    if d.shape == (m, 3, 3):
        return d
    raise ValueError(f"d_matrix must be (3, 3) or ({m}, 3, 3), got {d.shape}")


def dkt_stiffness(nodes: np.ndarray, triangles: np.ndarray, d_matrix: np.ndarray) -> np.ndarray:
    """DKT element stiffness matrices (m, 9, 9) float: N/mm between w dofs, N/rad between w and
    rotations, N mm/rad between rotations.

    nodes: (n, 2) float, mm. triangles: (m, 3) int, counter-clockwise. d_matrix: (3, 3) or
    (m, 3, 3) float bending matrix D_b, N mm (see isotropic_bending_matrix). Element dofs are
    (w, theta_x, theta_y) of corner 0, 1, 2, matching ``fea.assembly.element_dofs(triangles, 3)``.
    """
    nodes = np.asarray(nodes, dtype=float)
    triangles = np.asarray(triangles, dtype=np.int64)
    m = triangles.shape[0]
    d_all = _d_per_element(d_matrix, m)
    ke = np.empty((m, 9, 9))
    for start in range(0, m, _CHUNK):
        sl = slice(start, min(start + _CHUNK, m))
        b, c, two_a, t = _geometry(nodes, triangles[sl])
        d = d_all[sl]
        acc = np.zeros((two_a.shape[0], 9, 9))
        for lam, wq in zip(_GAUSS_L, _GAUSS_W, strict=True):
            bm = _b_matrix(lam, b, c, two_a, t)
            acc += wq * np.einsum("mik,mij,mjl->mkl", bm, d, bm, optimize=True)
        ke[sl] = acc * (0.5 * two_a)[:, None, None]
    return ke


def dkt_pressure_load(
    nodes: np.ndarray, triangles: np.ndarray, pressure_mpa: float | np.ndarray
) -> np.ndarray:
    """Consistent element loads (m, 9) float (N, N mm) for a uniform pressure per element.

    pressure_mpa: scalar or (m,) float, N/mm^2, positive along +z. The DKT leaves w undefined
    inside the element; the work-equivalent load uses the reduced cubic Hermite deflection
    (corner values and slopes, centroid value eliminated so that quadratics are exact), giving
    q A / 3 on each w and, on the slopes of corner i, q A (centroid - x_i) / 8.
    """
    nodes = np.asarray(nodes, dtype=float)
    p = nodes[np.asarray(triangles, dtype=np.int64)]
    m = p.shape[0]
    q = np.broadcast_to(np.asarray(pressure_mpa, dtype=float), (m,))
    d1, d2 = p[:, 1] - p[:, 0], p[:, 2] - p[:, 0]
    area = 0.5 * (d1[:, 0] * d2[:, 1] - d1[:, 1] * d2[:, 0])
    qa = q * area
    arm = p.mean(axis=1, keepdims=True) - p  # (m, 3, 2) centroid - corner
    fe = np.empty((m, 3, 3))
    fe[:, :, 0] = qa[:, None] / 3.0
    fe[:, :, 1] = qa[:, None] * arm[..., 1] / 8.0  # conjugate to dw/dy = theta_x
    fe[:, :, 2] = -qa[:, None] * arm[..., 0] / 8.0  # conjugate to -dw/dx = theta_y
    return fe.reshape(m, 9)


def nodal_load_vector(
    n_nodes: int,
    node_ids: np.ndarray,
    force_z_n: np.ndarray | float = 0.0,
    moment_x_nmm: np.ndarray | float = 0.0,
    moment_y_nmm: np.ndarray | float = 0.0,
) -> np.ndarray:
    """Global load vector (3 n_nodes,) float of point forces (N, +z) and moments (N mm).

    node_ids: (p,) int; each load argument is a scalar or (p,) float. Moments follow the
    right-hand rule about +x and +y (work-conjugate to theta_x and theta_y). Repeated nodes add.
    """
    ids = np.atleast_1d(np.asarray(node_ids, dtype=np.int64))
    if ids.size and (ids.min() < 0 or ids.max() >= n_nodes):
        raise ValueError(f"node ids must lie in [0, {n_nodes})")
    f = np.zeros(DOFS_PER_NODE * n_nodes)
    for k, val in enumerate((force_z_n, moment_x_nmm, moment_y_nmm)):
        np.add.at(f, DOFS_PER_NODE * ids + k, np.broadcast_to(np.asarray(val, float), ids.shape))
    return f


def dkt_moments(
    nodes: np.ndarray,
    triangles: np.ndarray,
    d_matrix: np.ndarray,
    u: np.ndarray,
    area_coords: np.ndarray | None = None,
) -> np.ndarray:
    """Moments (Mx, My, Mxy) per unit width, N mm/mm, in every element at given points.

    u: (3 n,) float global dofs. area_coords: (p, 3) float points in area coordinates of each
    element (default: the centroid only). Returns (m, p, 3) float.
    """
    nodes = np.asarray(nodes, dtype=float)
    triangles = np.asarray(triangles, dtype=np.int64)
    pts = np.full((1, 3), 1.0 / 3.0) if area_coords is None else np.atleast_2d(area_coords)
    m = triangles.shape[0]
    d_all = _d_per_element(d_matrix, m)
    dofs = element_dofs(triangles, DOFS_PER_NODE)
    ue = np.asarray(u, dtype=float)[dofs]
    out = np.empty((m, pts.shape[0], 3))
    for start in range(0, m, _CHUNK):
        sl = slice(start, min(start + _CHUNK, m))
        b, c, two_a, t = _geometry(nodes, triangles[sl])
        for k, lam in enumerate(pts):
            kappa = np.einsum("mik,mk->mi", _b_matrix(lam, b, c, two_a, t), ue[sl])
            out[sl, k] = np.einsum("mij,mj->mi", d_all[sl], kappa)
    return out


def nodal_moments(
    nodes: np.ndarray, triangles: np.ndarray, d_matrix: np.ndarray, u: np.ndarray
) -> np.ndarray:
    """Moments at the nodes (n, 3) float, N mm/mm: corner values averaged over the elements
    meeting at each node, weighted by element area."""
    nodes = np.asarray(nodes, dtype=float)
    triangles = np.asarray(triangles, dtype=np.int64)
    corner = dkt_moments(nodes, triangles, d_matrix, u, area_coords=np.eye(3))  # (m, 3, 3)
    p = nodes[triangles]
    d1, d2 = p[:, 1] - p[:, 0], p[:, 2] - p[:, 0]
    area = 0.5 * np.abs(d1[:, 0] * d2[:, 1] - d1[:, 1] * d2[:, 0])
    n = nodes.shape[0]
    weight = np.bincount(triangles.ravel(), weights=np.repeat(area, 3), minlength=n)
    out = np.zeros((n, 3))
    for k in range(3):
        vals = (corner[:, :, k] * area[:, None]).ravel()
        out[:, k] = np.bincount(triangles.ravel(), weights=vals, minlength=n)
    used = weight > 0
    out[used] /= weight[used, None]
    return out


def surface_stresses(moments_nmm_per_mm: np.ndarray, thickness_mm: float) -> np.ndarray:
    """Bending stresses (sigma_x, sigma_y, tau_xy) on the top face (z = +t/2), MPa.

    moments_nmm_per_mm: (..., 3) float (Mx, My, Mxy), N mm/mm. sigma = 6 M / t^2; the bottom face
    carries the negative. Returns (..., 3) float.
    """
    if thickness_mm <= 0:
        raise ValueError("thickness must be positive")
    return 6.0 * np.asarray(moments_nmm_per_mm, dtype=float) / thickness_mm**2


def von_mises_plane(stresses_mpa: np.ndarray) -> np.ndarray:
    """Von Mises stress (...,) float, MPa, of plane stress states (..., 3) (sx, sy, txy)."""
    s = np.asarray(stresses_mpa, dtype=float)
    sx, sy, txy = s[..., 0], s[..., 1], s[..., 2]
    return np.sqrt(sx * sx - sx * sy + sy * sy + 3.0 * txy * txy)
