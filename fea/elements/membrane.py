"""Plane-stress triangles: linear T3 (3 nodes) and quadratic T6 (6 nodes), fully vectorised.

Dofs are ``2 * node + component`` (u_x, u_y). Elements are straight-sided (affine geometry); the
T6 midpoints are the edge midpoints (node order: vertices, then edges 01, 12, 20; see
fea.quadratic). Units: mm, N, MPa; thickness in mm, so stiffness is N/mm and loads N.

Quadrature. T3: one point (centroid), exact since B is constant. T6: the 3-point rule at
(1/6, 1/6), (2/3, 1/6), (1/6, 2/3) with weights 1/6 (degree 2; Strang and Fix, An Analysis of
the Finite Element Method, table 4.1), exact for the stiffness of a straight-sided T6 (B is
linear, so B^T D B is quadratic) and for the consistent load of a constant body force. Edge loads
use Gauss-Legendre points along each edge.
"""

from __future__ import annotations

from collections.abc import Callable

import numpy as np

from platewright.fea.assembly import assemble_matrix, assemble_vector, element_dofs

__all__ = [
    "shape_functions",
    "gauss_points",
    "stiffness_matrices",
    "assemble_stiffness",
    "body_force_vector",
    "edge_load_vector",
    "element_strains",
    "element_stresses",
    "nodal_stresses",
    "von_mises",
    "NODE_POINTS",
]

#: Reference coordinates (xi, eta) of the element nodes: (k, 2) float for k = 3 and k = 6.
NODE_POINTS: dict[int, np.ndarray] = {
    3: np.array([[0.0, 0.0], [1.0, 0.0], [0.0, 1.0]]),
    6: np.array(
        [[0.0, 0.0], [1.0, 0.0], [0.0, 1.0], [0.5, 0.0], [0.5, 0.5], [0.0, 0.5]]
    ),
}

LineLoad = np.ndarray | Callable[[np.ndarray, np.ndarray], np.ndarray]


def gauss_points(nodes_per_element: int) -> tuple[np.ndarray, np.ndarray]:
    """Triangle quadrature on the reference triangle (area 1/2): ((q, 2) points, (q,) weights).

    3 nodes: centroid rule; 6 nodes: 3-point interior rule of degree 2.
    """
    if nodes_per_element == 3:
        return np.array([[1.0 / 3.0, 1.0 / 3.0]]), np.array([0.5])
    if nodes_per_element == 6:
        a, b = 1.0 / 6.0, 2.0 / 3.0
        return np.array([[a, a], [b, a], [a, b]]), np.full(3, 1.0 / 6.0)
    raise ValueError(f"elements must have 3 or 6 nodes, got {nodes_per_element}")


def shape_functions(nodes_per_element: int, points: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Lagrange shape functions on the reference triangle.

    points: (p, 2) float reference coordinates (xi, eta).
    Returns N (p, k) float and dN/d(xi, eta) (p, k, 2) float, k = nodes_per_element (3 or 6).
    """
    pts = np.atleast_2d(np.asarray(points, dtype=float))
    xi, eta = pts[:, 0], pts[:, 1]
    lam = np.stack([1.0 - xi - eta, xi, eta], axis=1)  # (p, 3) barycentric
    dlam = np.array([[-1.0, -1.0], [1.0, 0.0], [0.0, 1.0]])  # (3, 2)
    p = pts.shape[0]
    if nodes_per_element == 3:
        return lam, np.broadcast_to(dlam, (p, 3, 2)).copy()
    if nodes_per_element != 6:
        raise ValueError(f"elements must have 3 or 6 nodes, got {nodes_per_element}")
    n = np.empty((p, 6))
    dn = np.empty((p, 6, 2))
    n[:, :3] = lam * (2.0 * lam - 1.0)
    dn[:, :3] = (4.0 * lam - 1.0)[:, :, None] * dlam[None]
    for j, (a, b) in enumerate(((0, 1), (1, 2), (2, 0))):
        n[:, 3 + j] = 4.0 * lam[:, a] * lam[:, b]
        dn[:, 3 + j] = 4.0 * (lam[:, a, None] * dlam[b] + lam[:, b, None] * dlam[a])
    return n, dn


def _geometry(nodes: np.ndarray, conn: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Affine map of each element: inverse Jacobian (m, 2, 2) and det J (m,) (= 2 x area)."""
    p = np.asarray(nodes, dtype=float)[np.asarray(conn)[:, :3]]  # (m, 3, 2)
    jac = np.stack([p[:, 1] - p[:, 0], p[:, 2] - p[:, 0]], axis=2)  # J[:, i, j] = dx_i/dxi_j
    det = jac[:, 0, 0] * jac[:, 1, 1] - jac[:, 0, 1] * jac[:, 1, 0]
    if np.any(det <= 0.0):
        bad = int(np.count_nonzero(det <= 0.0))
        raise ValueError(f"{bad} element(s) are degenerate or clockwise (det J <= 0)")
    inv = np.empty_like(jac)
    inv[:, 0, 0] = jac[:, 1, 1] / det
    inv[:, 1, 1] = jac[:, 0, 0] / det
    inv[:, 0, 1] = -jac[:, 0, 1] / det
    inv[:, 1, 0] = -jac[:, 1, 0] / det
    return inv, det


#: Voigt selection S[i, c, l]: strain component i collects du_c/dx_l (engineering shear).
_VOIGT = np.zeros((3, 2, 2))
_VOIGT[0, 0, 0] = _VOIGT[1, 1, 1] = _VOIGT[2, 0, 1] = _VOIGT[2, 1, 0] = 1.0


def _gradients(nodes: np.ndarray, conn: np.ndarray, points: np.ndarray):
    """Shape-function gradients dN/dx (m, p, k, 2) at reference points, and det J (m,)."""
    k = conn.shape[1]
    inv, det = _geometry(nodes, conn)
    _, dn_ref = shape_functions(k, points)  # (p, k, 2)
    # dN/dx_j = sum_i dN/dxi_i * dxi_i/dx_j ; inv[e, i, j] = dxi_i / dx_j
    grad = dn_ref[None, :, :, 0, None] * inv[:, None, None, 0, :]
    grad += dn_ref[None, :, :, 1, None] * inv[:, None, None, 1, :]
    return grad, det


def _per_element(value: float | np.ndarray, m: int, name: str) -> np.ndarray:
    arr = np.asarray(value, dtype=float)
    if arr.ndim == 0:
        return np.full(m, float(arr))
    if arr.shape != (m,):
        raise ValueError(f"{name} must be a scalar or ({m},), got {arr.shape}")
    return arr


def stiffness_matrices(
    nodes: np.ndarray, conn: np.ndarray, d_mpa: np.ndarray, thickness_mm: float | np.ndarray
) -> np.ndarray:
    """Element stiffness matrices, (m, 2k, 2k) float N/mm.

    nodes: (n, 2) float mm; conn: (m, k) int with k = 3 (T3) or 6 (T6);
    d_mpa: (3, 3) or (m, 3, 3) float plane-stress matrix (MPa); thickness_mm: scalar or (m,).
    K_e = t sum_q w_q det J B_q^T D B_q.
    """
    conn = np.asarray(conn)
    m, k = conn.shape
    t = _per_element(thickness_mm, m, "thickness_mm")
    d = np.asarray(d_mpa, dtype=float)
    out = np.empty((m, 2 * k, 2 * k))
    # blocks of elements keep the temporaries small (fresh large arrays cost page faults:
    # measured 1.5x slower in one piece at 1M unknowns); not a loop over elements
    for s0 in range(0, m, _BLOCK):
        s1 = min(m, s0 + _BLOCK)
        dd = d if d.ndim == 2 else d[s0:s1]
        _stiffness_block(nodes, conn[s0:s1], dd, t[s0:s1], out[s0:s1])
    return out


#: Elements per block in stiffness_matrices.
_BLOCK = 8192


def _stiffness_block(nodes, conn, d, t, out) -> None:
    """Element matrices of one block of elements into ``out`` (b, 2k, 2k)."""
    m, k = conn.shape
    pts, w = gauss_points(k)
    grad, det = _gradients(nodes, conn, pts)  # (m, q, k, 2)
    ws = (t * det)[:, None] * w[None, :]  # (m, q)
    # H[e, (a l), (b n)] = sum_q w_q t det J dN_a/dx_l dN_b/dx_n: one batched (2k x q)(q x 2k)
    # product per element, laid out like the element matrix (node-major, component-minor).
    g = grad.reshape(m, pts.shape[0], 2 * k)
    h = np.matmul((g * ws[:, :, None]).transpose(0, 2, 1), g).reshape(m, k, 2, k, 2)
    if d.ndim == 2:
        e4 = np.einsum("icl,ij,jdn->cldn", _VOIGT, d, _VOIGT)
    else:
        e4 = np.einsum("icl,eij,jdn->cldne", _VOIGT, d, _VOIGT)
    # K[e, a c, b d] = sum_{l n} H[e, a l, b n] E[c l d n], E = D in tensor form (S picks the
    # Voigt rows); written on strided views of the same layout.
    o5 = out.reshape(m, k, 2, k, 2)
    o5[...] = 0.0
    tmp = np.empty((m, k, k))
    for c in range(2):
        for dd in range(2):
            view = o5[:, :, c, :, dd]
            for ll in range(2):
                for n in range(2):
                    coef = e4[c, ll, dd, n]
                    if d.ndim == 2:
                        if coef == 0.0:
                            continue
                        np.multiply(h[:, :, ll, :, n], coef, out=tmp)
                    else:
                        np.multiply(h[:, :, ll, :, n], coef[:, None, None], out=tmp)
                    view += tmp


def assemble_stiffness(
    nodes: np.ndarray, conn: np.ndarray, d_mpa: np.ndarray, thickness_mm: float | np.ndarray
):
    """Global stiffness, (2n, 2n) CSR N/mm, of T3 or T6 elements (see stiffness_matrices)."""
    ke = stiffness_matrices(nodes, conn, d_mpa, thickness_mm)
    n_dofs = 2 * np.asarray(nodes).shape[0]
    return assemble_matrix(ke, element_dofs(conn, 2), n_dofs)


def body_force_vector(
    nodes: np.ndarray,
    conn: np.ndarray,
    body_force_n_mm3: np.ndarray,
    thickness_mm: float | np.ndarray,
) -> np.ndarray:
    """Consistent nodal loads of a body force (e.g. weight density x g), (2n,) float N.

    body_force_n_mm3: (2,) or (m, 2) float force per unit volume, N/mm^3, constant per element.
    """
    conn = np.asarray(conn)
    m, k = conn.shape
    pts, w = gauss_points(k)
    shp, _ = shape_functions(k, pts)  # (q, k)
    _, det = _geometry(nodes, conn)
    t = _per_element(thickness_mm, m, "thickness_mm")
    bf = np.broadcast_to(np.asarray(body_force_n_mm3, dtype=float), (m, 2))
    weights = (w[:, None] * shp).sum(axis=0)  # (k,) integral of N over the reference triangle
    fe = (t * det)[:, None, None] * weights[None, :, None] * bf[:, None, :]  # (m, k, 2)
    return assemble_vector(fe.reshape(m, 2 * k), element_dofs(conn, 2), 2 * len(nodes))


def edge_load_vector(
    nodes: np.ndarray,
    edges: np.ndarray,
    line_load_n_mm: LineLoad,
    n_dofs: int | None = None,
    n_gauss: int = 4,
) -> np.ndarray:
    """Consistent nodal loads of a distributed line load on boundary edges, (2n,) float N.

    nodes: (n, 2) float mm. edges: (k, 2) int (linear edges) or (k, 3) int (start, end, midpoint
    node of a quadratic edge, as QuadraticMesh.edge_nodes_of gives), domain on the left.
    line_load_n_mm: force per unit edge length over the whole thickness, N/mm (a stress
    traction in MPa times the thickness): a (2,) or (k, 2) array, constant on each edge, or a function
    ``q(points (p, 2) mm, outward_normals (p, 2)) -> (p, 2) N/mm`` evaluated at Gauss points.
    n_gauss: Gauss-Legendre points per edge (4: exact for a cubic load on a quadratic edge).
    """
    p = np.asarray(nodes, dtype=float)
    e = np.asarray(edges, dtype=np.int64)
    if n_dofs is None:
        n_dofs = 2 * p.shape[0]
    if e.size == 0:
        return np.zeros(n_dofs)
    s, ws = np.polynomial.legendre.leggauss(n_gauss)
    s = 0.5 * (s + 1.0)
    ws = 0.5 * ws  # rule on [0, 1]
    if e.shape[1] == 2:
        shp = np.stack([1.0 - s, s], axis=1)  # (g, 2)
    elif e.shape[1] == 3:
        shp = np.stack([(1 - s) * (1 - 2 * s), s * (2 * s - 1), 4 * s * (1 - s)], axis=1)
    else:
        raise ValueError(f"edges must be (k, 2) or (k, 3), got {e.shape}")
    a, b = p[e[:, 0]], p[e[:, 1]]
    tang = b - a
    length = np.linalg.norm(tang, axis=1)  # (k,)
    normal = np.stack([tang[:, 1], -tang[:, 0]], axis=1) / length[:, None]  # outward
    if callable(line_load_n_mm):
        x = a[:, None, :] + s[None, :, None] * tang[:, None, :]  # (k, g, 2)
        nrm = np.broadcast_to(normal[:, None, :], x.shape)
        q = np.asarray(line_load_n_mm(x.reshape(-1, 2), nrm.reshape(-1, 2)), dtype=float)
        q = q.reshape(x.shape)
    else:
        q0 = np.broadcast_to(np.asarray(line_load_n_mm, dtype=float), (len(e), 2))
        q = np.broadcast_to(q0[:, None, :], (len(e), s.size, 2))
    # f[e, a, c] = L_e sum_g w_g N_a(s_g) q[e, g, c]
    fe = np.einsum("e,g,ga,egc->eac", length, ws, shp, q)
    dofs = (2 * e[:, :, None] + np.arange(2)[None, None, :]).reshape(len(e), -1)
    return assemble_vector(fe.reshape(len(e), -1), dofs, n_dofs)


def element_strains(
    nodes: np.ndarray, conn: np.ndarray, u: np.ndarray, points: np.ndarray | None = None
) -> np.ndarray:
    """Strains (eps_xx, eps_yy, gamma_xy) at reference points of every element, (m, p, 3) float.

    u: (2n,) float displacements, mm. points: (p, 2) reference coordinates; default the element
    nodes (NODE_POINTS), so row j is the strain at local node j.
    """
    conn = np.asarray(conn)
    k = conn.shape[1]
    pts = NODE_POINTS[k] if points is None else np.asarray(points, dtype=float)
    grad, _ = _gradients(nodes, conn, pts)  # (m, p, k, 2)
    ue = np.asarray(u, dtype=float).reshape(-1, 2)[conn]  # (m, k, 2)
    # displacement gradient G[e, p, c, j] = du_c/dx_j = sum_k u[e, k, c] dN_k/dx_j
    g = np.matmul(ue.transpose(0, 2, 1)[:, None], grad)  # (m, p, 2, 2)
    return np.stack([g[..., 0, 0], g[..., 1, 1], g[..., 0, 1] + g[..., 1, 0]], axis=-1)


def element_stresses(
    nodes: np.ndarray,
    conn: np.ndarray,
    u: np.ndarray,
    d_mpa: np.ndarray,
    points: np.ndarray | None = None,
) -> np.ndarray:
    """Stresses (sigma_xx, sigma_yy, tau_xy) in MPa at reference points, (m, p, 3) float.

    Default points: the element nodes. Pass ``gauss_points(k)[0]`` for the Gauss points.
    d_mpa: (3, 3) or (m, 3, 3) float.
    """
    eps = element_strains(nodes, conn, u, points)
    d = np.asarray(d_mpa, dtype=float)
    if d.ndim == 2:
        return np.einsum("ij,epj->epi", d, eps)
    return np.einsum("eij,epj->epi", d, eps)


def nodal_stresses(
    nodes: np.ndarray, conn: np.ndarray, u: np.ndarray, d_mpa: np.ndarray
) -> np.ndarray:
    """Area-weighted average at each node of the element nodal stresses, (n, 3) float MPa."""
    conn = np.asarray(conn)
    sig = element_stresses(nodes, conn, u, d_mpa)  # (m, k, 3)
    _, det = _geometry(nodes, conn)
    n = np.asarray(nodes).shape[0]
    w = np.broadcast_to(det[:, None], conn.shape).ravel()
    idx = conn.ravel()
    total = np.bincount(idx, weights=w, minlength=n)
    out = np.empty((n, 3))
    for c in range(3):  # three stress components, not elements
        acc = np.bincount(idx, weights=w * sig[:, :, c].ravel(), minlength=n)
        out[:, c] = np.divide(acc, total, out=np.zeros(n), where=total > 0)
    return out


def von_mises(stress_mpa: np.ndarray) -> np.ndarray:
    """Plane-stress von Mises stress, (...) float MPa, from (..., 3) (sxx, syy, txy) in MPa.

    sigma_vm = sqrt(sxx^2 - sxx syy + syy^2 + 3 txy^2).
    """
    s = np.asarray(stress_mpa, dtype=float)
    sx, sy, txy = s[..., 0], s[..., 1], s[..., 2]
    return np.sqrt(np.maximum(sx * sx - sx * sy + sy * sy + 3.0 * txy * txy, 0.0))
