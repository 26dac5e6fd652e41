"""Unit checks of the DKT plate-bending element, its rigid modes and the plate supports.

Also holds the structured test meshes (square and disk) used by test_bending_verification.py.
Units: mm, N, MPa throughout.
"""

from __future__ import annotations

import numpy as np
import pytest
from scipy.spatial import Delaunay
from scipy.spatial.transform import Rotation

from platewright.fea.assembly import assemble_matrix, assemble_vector, element_dofs
from platewright.fea.elements.bending import (
    bending_rigidity,
    dkt_moments,
    dkt_pressure_load,
    dkt_stiffness,
    isotropic_bending_matrix,
    material_bending_matrix,
    nodal_load_vector,
    orthotropic_bending_matrix,
    surface_stresses,
    von_mises_plane,
)
from platewright.fea.elements.bending_rigid import BENDING_MODE_NAMES, bending_rigid_modes
from platewright.fea.loadcases.supports import (
    clamped,
    combine_supports,
    elastic_ring_support,
    point_supports,
    simply_supported,
)
from platewright.fea.mesh.triangles import Mesh
from platewright.fea.solve import UnderSupportedError, solve_system
from platewright.geometry.model import Material

E_MPA, NU, T_MM = 1000.0, 0.3, 1.0


# ---------------------------------------------------------------- structured test meshes


def square_mesh(side_mm: float, n: int, *, crossed: bool = True) -> Mesh:
    """Square [-a/2, a/2]^2 split into n x n cells of two triangles each.

    crossed=True alternates the diagonal from cell to cell (a mesh symmetric about both axes);
    False gives all diagonals the same way. Edges tagged "bottom", "right", "top", "left".
    """
    xs = np.linspace(-side_mm / 2, side_mm / 2, n + 1)
    gx, gy = np.meshgrid(xs, xs, indexing="xy")
    nodes = np.column_stack([gx.ravel(), gy.ravel()])
    i, j = np.meshgrid(np.arange(n), np.arange(n), indexing="xy")
    i, j = i.ravel(), j.ravel()
    a0, a1 = j * (n + 1) + i, j * (n + 1) + i + 1
    a2, a3 = a1 + n + 1, a0 + n + 1
    alt = crossed & ((i + j) % 2 == 1)
    t1 = np.where(alt[:, None], np.column_stack([a0, a1, a3]), np.column_stack([a0, a1, a2]))
    t2 = np.where(alt[:, None], np.column_stack([a1, a2, a3]), np.column_stack([a0, a2, a3]))
    tris = np.vstack([t1, t2])
    k = np.arange(n)
    bottom = np.column_stack([k, k + 1])
    right = np.column_stack([k * (n + 1) + n, (k + 1) * (n + 1) + n])
    top = np.column_stack([n * (n + 1) + k + 1, n * (n + 1) + k])
    left = np.column_stack([(k + 1) * (n + 1), k * (n + 1)])
    edges = np.vstack([bottom, right, top, left])
    tags = np.repeat(np.arange(4), n)
    return Mesh(nodes, tris, edges, tags, ("bottom", "right", "top", "left"))


def all_edges(mesh: Mesh) -> Mesh:
    """The same mesh with every boundary edge tagged "outline"."""
    k = mesh.boundary_edges.shape[0]
    return Mesh(mesh.nodes, mesh.triangles, mesh.boundary_edges, np.zeros(k, int), ("outline",))


def disk_mesh(radius_mm: float, rings: int) -> Mesh:
    """Disk of ``rings`` concentric rings (ring k has 6 k nodes), Delaunay-triangulated.

    The rim (tag "rim") is the inscribed polygon with 6 * rings sides.
    """
    pts = [np.zeros((1, 2))]
    for k in range(1, rings + 1):
        th = 2.0 * np.pi * np.arange(6 * k) / (6 * k)
        pts.append(radius_mm * k / rings * np.column_stack([np.cos(th), np.sin(th)]))
    nodes = np.vstack(pts)
    tris = Delaunay(nodes).simplices.copy()
    p = nodes[tris]
    d1, d2 = p[:, 1] - p[:, 0], p[:, 2] - p[:, 0]
    cw = d1[:, 0] * d2[:, 1] - d1[:, 1] * d2[:, 0] < 0
    tris[cw] = tris[cw][:, [0, 2, 1]]
    rim = np.arange(nodes.shape[0] - 6 * rings, nodes.shape[0])
    edges = np.column_stack([rim, np.roll(rim, -1)])
    return Mesh(nodes, tris, edges, np.zeros(len(edges), int), ("rim",))


def assemble_plate(mesh: Mesh, d_matrix: np.ndarray, pressure_mpa: float = 0.0):
    """Global stiffness (CSR) and pressure load vector of a DKT model of ``mesh``."""
    dofs = element_dofs(mesh.triangles, 3)
    n = 3 * mesh.n_nodes
    k = assemble_matrix(dkt_stiffness(mesh.nodes, mesh.triangles, d_matrix), dofs, n)
    f = assemble_vector(dkt_pressure_load(mesh.nodes, mesh.triangles, pressure_mpa), dofs, n)
    return k, f


def quadratic_field(nodes: np.ndarray, a: float, b: float, c: float) -> np.ndarray:
    """Nodal dofs of w = a x^2/2 + b y^2/2 + c x y with theta_x = dw/dy, theta_y = -dw/dx."""
    x, y = nodes[:, 0], nodes[:, 1]
    w = 0.5 * a * x * x + 0.5 * b * y * y + c * x * y
    return np.column_stack([w, b * y + c * x, -(a * x + c * y)]).ravel()


def triangle_area(tri: np.ndarray) -> float:
    """Area of a triangle (3, 2) by the shoelace formula, mm^2."""
    (x0, y0), (x1, y1), (x2, y2) = tri
    return 0.5 * abs((x1 - x0) * (y2 - y0) - (x2 - x0) * (y1 - y0))


# ---------------------------------------------------------------- constitutive and element

TRIANGLES = [
    np.array([[0.0, 0.0], [3.0, 0.0], [0.0, 4.0]]),
    np.array([[1.0, 2.0], [11.0, 3.0], [4.0, 9.0]]),
    np.array([[-5.0, -1.0], [7.0, -2.5], [6.5, 0.8]]),  # long and thin
]


def test_bending_rigidity_closed_form():
    # D = E t^3 / (12 (1 - nu^2)) (Timoshenko & Woinowsky-Krieger, Theory of Plates and Shells,
    # ch. 1): 6061-T6, E = 68900 MPa, nu = 0.33, t = 2 mm -> 68900 * 8 / (12 * 0.8911).
    assert bending_rigidity(68900.0, 0.33, 2.0) == pytest.approx(68900 * 8 / 10.6932, rel=1e-12)
    db = isotropic_bending_matrix(68900.0, 0.33, 2.0)
    d = 68900 * 8 / 10.6932
    np.testing.assert_allclose(db, d * np.array([[1, 0.33, 0], [0.33, 1, 0], [0, 0, 0.335]]))


def test_orthotropic_matrix_reduces_and_rotates():
    # Isotropic constants (G = E / (2 (1 + nu))) must give the isotropic D (closed form above).
    g = E_MPA / (2 * (1 + NU))
    np.testing.assert_allclose(
        orthotropic_bending_matrix(E_MPA, E_MPA, NU, g, 2.0, angle_rad=0.7),
        isotropic_bending_matrix(E_MPA, NU, 2.0),
        rtol=1e-12,
        atol=1e-9,
    )
    # Rotated stiffness, explicit form (Jones, Mechanics of Composite Materials, eq. 2.84,
    # from memory): Q11' = Q11 c^4 + 2 (Q12 + 2 Q66) s^2 c^2 + Q22 s^4,
    # Q16' = (Q11 - Q12 - 2 Q66) c^3 s + (Q12 - Q22 + 2 Q66) c s^3.
    e1, e2, nu12, g12, t = 9000.0, 4000.0, 0.25, 600.0, 3.0
    den = 1 - nu12 * nu12 * e2 / e1
    q11, q22, q12, q66 = e1 / den, e2 / den, nu12 * e2 / den, g12
    th = np.radians(30.0)
    c, s = np.cos(th), np.sin(th)
    d = orthotropic_bending_matrix(e1, e2, nu12, g12, t, angle_rad=th) * 12 / t**3
    assert d[0, 0] == pytest.approx(q11 * c**4 + 2 * (q12 + 2 * q66) * s * s * c * c + q22 * s**4)
    q16 = (q11 - q12 - 2 * q66) * c**3 * s + (q12 - q22 + 2 * q66) * c * s**3
    assert d[0, 2] == pytest.approx(q16)


def test_refused_material_is_not_analysed():
    # Chlorine-bearing plastics must never be laser-cut (REFERENCE.md, "Never laser-cut").
    pvc = Material(
        key="pvc_test", name="PVC (test)", youngs_modulus_mpa=3000.0, poisson_ratio=0.38,
        density_kg_m3=1400.0, strength_mpa=50.0, strength_kind="tensile", typical_kerf_mm=0.2,
        fit_allowance_mm={}, min_web_mm=None, laser_safe=False,
        refusal_reason="releases chlorine and hydrogen chloride when cut",
    )  # fmt: skip
    with pytest.raises(ValueError, match="chlorine"):
        material_bending_matrix(pvc, 3.0)


@pytest.mark.parametrize("tri", TRIANGLES)
def test_element_has_exactly_three_rigid_modes(tri):
    # A free Kirchhoff plate element must not resist w = 1 and the two rigid rotations, and
    # must resist everything else (Batoz, Bathe and Ho 1980, rank 6 for 9 dofs).
    ke = dkt_stiffness(tri, np.array([[0, 1, 2]]), isotropic_bending_matrix(E_MPA, NU, T_MM))[0]
    np.testing.assert_allclose(ke, ke.T, atol=1e-12 * np.abs(ke).max())
    ev = np.linalg.eigvalsh(ke)
    assert np.all(np.abs(ev[:3]) < 1e-10 * ev[-1])
    assert ev[3] > 1e-6 * ev[-1]
    r = bending_rigid_modes(tri)
    assert np.abs(ke @ r).max() < 1e-10 * np.abs(ke).max() * np.abs(r).max()


@pytest.mark.parametrize("tri", TRIANGLES)
def test_element_constant_curvature_is_exact(tri):
    # For w = a x^2/2 + b y^2/2 + c xy the Kirchhoff curvatures are (-a, -b, -2c) everywhere
    # and M = D (-a - nu b, -b - nu a, -(1 - nu) c) (Timoshenko & W-K, ch. 4).
    a, b, c = 0.3, -0.7, 0.45
    u = quadratic_field(tri, a, b, c)
    d = bending_rigidity(E_MPA, NU, T_MM)
    pts = np.array([[1 / 3, 1 / 3, 1 / 3], [1, 0, 0], [0.2, 0.5, 0.3], [0, 0.5, 0.5]])
    db = isotropic_bending_matrix(E_MPA, NU, T_MM)
    m = dkt_moments(tri, np.array([[0, 1, 2]]), db, u, area_coords=pts)[0]
    expected = d * np.array([-a - NU * b, -b - NU * a, -(1 - NU) * c])
    np.testing.assert_allclose(m, np.broadcast_to(expected, m.shape), rtol=1e-11, atol=1e-11)
    # Energy: u^T K u = A kappa^T D kappa for a constant curvature state.
    ke = dkt_stiffness(tri, np.array([[0, 1, 2]]), db)[0]
    area = triangle_area(tri)
    kappa = np.array([-a, -b, -2 * c])
    assert u @ ke @ u == pytest.approx(area * kappa @ db @ kappa, rel=1e-11)


@pytest.mark.parametrize("tri", TRIANGLES)
def test_pressure_load_is_work_equivalent_for_quadratics(tri):
    # f . u must equal the integral of q w over the triangle for any quadratic w; the edge-
    # midpoint rule (weights A/3) integrates quadratics exactly (Strang & Fix, An Analysis of the
    # Finite Element Method, sec. 4.3).
    q = 0.02
    fe = dkt_pressure_load(tri, np.array([[0, 1, 2]]), q)[0]
    area = triangle_area(tri)
    assert fe[0::3].sum() == pytest.approx(q * area, rel=1e-14)
    mid = 0.5 * (tri + np.roll(tri, -1, axis=0))
    for a, b, c in [(1.0, 0.0, 0.0), (0.0, 1.0, 0.0), (0.0, 0.0, 1.0), (0.3, -0.2, 0.9)]:
        x, y = mid[:, 0], mid[:, 1]
        exact = q * area / 3 * np.sum(0.5 * a * x * x + 0.5 * b * y * y + c * x * y)
        assert fe @ quadratic_field(tri, a, b, c) == pytest.approx(exact, rel=1e-12)
    for w_lin in ([1.0, 0.0, 0.0], [0.0, 1.0, 0.0], [0.0, 0.0, 1.0]):
        # Linear w = c0 + c1 x + c2 y: integral = q A w(centroid).
        c0, c1, c2 = w_lin
        u = np.column_stack([c0 + c1 * tri[:, 0] + c2 * tri[:, 1], np.full(3, c2), np.full(3, -c1)])
        cen = tri.mean(axis=0)
        assert fe @ u.ravel() == pytest.approx(q * area * (c0 + c1 * cen[0] + c2 * cen[1]))


def test_rotation_dofs_follow_the_right_hand_rule():
    # A small rotation about +x (right-hand rule, scipy's Rotation as the reference) lifts the
    # point (x, y, 0) to z = alpha y, and about +y to z = -alpha x; the rigid modes must match.
    xy = np.array([[2.0, 3.0], [-1.0, 5.0], [4.0, -2.0]])
    modes = bending_rigid_modes(xy, center_mm=(0.0, 0.0)).reshape(3, 3, 3)
    alpha = 1e-7
    pts = np.column_stack([xy, np.zeros(3)])
    for col, axis in ((1, [1, 0, 0]), (2, [0, 1, 0])):
        rot = Rotation.from_rotvec(alpha * np.array(axis, float))
        lift = rot.apply(pts)[:, 2] / alpha
        np.testing.assert_allclose(modes[:, 0, col], lift, rtol=1e-6)
        rotvec = rot.as_rotvec() / alpha
        np.testing.assert_allclose(modes[:, 1:, col], np.broadcast_to(rotvec[:2], (3, 2)))
    assert BENDING_MODE_NAMES == ("translation along z", "rotation about x", "rotation about y")


def test_stress_recovery_formulas():
    # Beam-theory surface stress sigma = M c / I = 6 M / t^2 per unit width (Roark, beams);
    # von Mises of uniaxial sigma is |sigma|, of pure shear tau is sqrt(3) tau (Hill, Plasticity).
    s = surface_stresses(np.array([[10.0, 0.0, 0.0], [0.0, 0.0, 4.0]]), 2.0)
    np.testing.assert_allclose(s, [[15.0, 0.0, 0.0], [0.0, 0.0, 6.0]])
    np.testing.assert_allclose(von_mises_plane(s), [15.0, 6.0 * np.sqrt(3.0)])
    # Equal biaxial stress: von Mises = sigma.
    assert von_mises_plane(np.array([5.0, 5.0, 0.0])) == pytest.approx(5.0)


def test_nodal_moment_loads_are_conjugate_to_rotations():
    # A moment Mx (N mm) does work Mx * theta_x; in a rigid rotation about x by 1 rad the load
    # vector of force Fz at (x, y) does work Fz * y (statics: moment of a force about x = y Fz).
    xy = np.array([[0.0, 0.0], [10.0, 0.0], [0.0, 20.0]])
    f = nodal_load_vector(3, [1, 2, 2], force_z_n=[2.0, 3.0, 1.0], moment_x_nmm=[0, 5.0, 0])
    r = bending_rigid_modes(xy, center_mm=(0.0, 0.0))
    np.testing.assert_allclose(r.T @ f, [6.0, 4.0 * 20.0 + 5.0, -2.0 * 10.0])


# ---------------------------------------------------------------- patch test on a distorted mesh


def distorted_square(n: int = 6) -> Mesh:
    mesh = square_mesh(60.0, n)
    nodes = mesh.nodes.copy()
    inner = np.all(np.abs(nodes) < 29.0, axis=1)
    rng = np.random.default_rng(12345)
    nodes[inner] += rng.uniform(-3.0, 3.0, size=(inner.sum(), 2))
    return Mesh(nodes, mesh.triangles, mesh.boundary_edges, mesh.boundary_tags, mesh.tag_names)


@pytest.mark.parametrize("abc", [(1.0, 0.0, 0.0), (0.0, 1.0, 0.0), (0.0, 0.0, 1.0), (0.4, -1, 0.3)])
def test_patch_test_constant_curvature(abc):
    # Patch test (Irons; Batoz, Bathe and Ho 1980 report the DKT passes it): boundary dofs set
    # from w = a x^2/2 + b y^2/2 + c xy, no load inside -> interior dofs and all moments exact.
    mesh = distorted_square()
    assert mesh.quality().min_angle_deg > 10.0  # distorted, but valid
    db = isotropic_bending_matrix(E_MPA, NU, T_MM)
    k, _ = assemble_plate(mesh, db)
    exact = quadratic_field(mesh.nodes, *abc) * 1e-3
    bnd = np.unique(mesh.boundary_edges)
    fixed = (3 * bnd[:, None] + np.arange(3)).ravel()
    sol = solve_system(
        k, np.zeros(k.shape[0]), fixed, exact[fixed],
        rigid_modes=bending_rigid_modes(mesh.nodes), mode_names=BENDING_MODE_NAMES,
    )  # fmt: skip
    np.testing.assert_allclose(sol.u, exact, rtol=0, atol=1e-12 * np.abs(exact).max())
    a, b, c = (1e-3 * v for v in abc)
    d = bending_rigidity(E_MPA, NU, T_MM)
    expected = d * np.array([-a - NU * b, -b - NU * a, -(1 - NU) * c])
    m = dkt_moments(mesh.nodes, mesh.triangles, db, sol.u, area_coords=np.eye(3))
    np.testing.assert_allclose(m.reshape(-1, 3), np.broadcast_to(expected, (m.size // 3, 3)),
                               rtol=0, atol=1e-9 * d * 1e-3)  # fmt: skip


def test_free_plate_has_exactly_three_zero_eigenvalues():
    # Assembled free plate: null space of dimension 3 spanned by the rigid modes.
    mesh = distorted_square(4)
    k, _ = assemble_plate(mesh, isotropic_bending_matrix(E_MPA, NU, T_MM))
    ev, vec = np.linalg.eigh(k.toarray())
    assert np.all(np.abs(ev[:3]) < 1e-10 * ev[-1])
    assert ev[3] > 1e-8 * ev[-1]
    r = bending_rigid_modes(mesh.nodes)
    # Each null vector lies in the span of the rigid modes.
    coef, *_ = np.linalg.lstsq(r, vec[:, :3], rcond=None)
    np.testing.assert_allclose(r @ coef, vec[:, :3], atol=1e-8)


# ---------------------------------------------------------------- supports


def test_support_dof_sets():
    mesh = square_mesh(10.0, 2)  # 3 x 3 nodes, node 4 in the middle
    ss = simply_supported(mesh, "bottom")
    np.testing.assert_array_equal(ss.fixed_dofs, [0, 3, 6])
    hard = simply_supported(mesh, "bottom", hard=True)  # along x: dw/dx = -theta_y = 0
    np.testing.assert_array_equal(hard.fixed_dofs, [0, 2, 3, 5, 6, 8])
    hard_l = simply_supported(mesh, "left", hard=True)  # along y: dw/dy = theta_x = 0
    np.testing.assert_array_equal(hard_l.fixed_dofs, [0, 1, 9, 10, 18, 19])
    cl = clamped(mesh, "right")
    np.testing.assert_array_equal(cl.fixed_dofs, [6, 7, 8, 15, 16, 17, 24, 25, 26])
    both = combine_supports([hard, hard_l])
    assert set(both.fixed_dofs) == set(hard.fixed_dofs) | set(hard_l.fixed_dofs)
    pt = point_supports(mesh, [[0.2, -0.1]], max_distance_mm=1.0)
    np.testing.assert_array_equal(pt.fixed_dofs, [12])
    with pytest.raises(ValueError, match="no mesh node"):
        point_supports(mesh, [[2.5, 0.0]], max_distance_mm=1.0)
    with pytest.raises(KeyError, match="valid tags"):
        clamped(mesh, "nowhere")


def test_under_supported_plate_is_refused_by_name():
    mesh = square_mesh(10.0, 2)
    k, f = assemble_plate(mesh, isotropic_bending_matrix(E_MPA, NU, T_MM), 1e-3)
    one = point_supports(mesh, [[0.0, 0.0]])
    with pytest.raises(UnderSupportedError) as err:
        solve_system(k, f, one.fixed_dofs, rigid_modes=bending_rigid_modes(mesh.nodes),
                     mode_names=BENDING_MODE_NAMES)  # fmt: skip
    assert set(err.value.free_motions) == {"rotation about x", "rotation about y"}
    # Two supports on the x axis leave the rotation about x free.
    two = point_supports(mesh, [[-5.0, 0.0], [5.0, 0.0]])
    with pytest.raises(UnderSupportedError) as err:
        solve_system(k, f, two.fixed_dofs, rigid_modes=bending_rigid_modes(mesh.nodes),
                     mode_names=BENDING_MODE_NAMES)  # fmt: skip
    assert err.value.free_motions == ("rotation about x",)


def test_three_point_supports_share_load_by_statics():
    # A plate on three point supports is statically determinate: the reactions follow from
    # sum Fz = 0 and sum of moments about x and y = 0 (statics, solved here by hand in numpy).
    mesh = square_mesh(40.0, 8)
    pts = np.array([[-20.0, -20.0], [20.0, -20.0], [0.0, 20.0]])
    sup = point_supports(mesh, pts, max_distance_mm=1e-9)
    p_n, at = 7.0, np.array([5.0, 5.0])
    load_node = int(np.argmin(np.hypot(*(mesh.nodes - at).T)))
    f = nodal_load_vector(mesh.n_nodes, [load_node], force_z_n=-p_n)
    k, _ = assemble_plate(mesh, isotropic_bending_matrix(E_MPA, NU, T_MM))
    sol = solve_system(k, f, sup.fixed_dofs, rigid_modes=bending_rigid_modes(mesh.nodes),
                       mode_names=BENDING_MODE_NAMES)  # fmt: skip
    statics = np.vstack([np.ones(3), pts[:, 0], pts[:, 1]])
    expected = np.linalg.solve(statics, p_n * np.array([1.0, at[0], at[1]]))
    np.testing.assert_allclose(sol.reactions[sup.fixed_dofs], expected, rtol=1e-10)
    assert sol.equilibrium_residual < 1e-10


def test_elastic_ring_support_carries_the_load():
    # Disk on a ring spring at its rim only: the springs carry the whole load. The rim is a
    # regular polygon, so every rim node gets k / n_rim and force balance gives
    # mean(w_rim) = -P / k (Hooke's law for springs in parallel).
    mesh = disk_mesh(20.0, 4)
    k_ring = 500.0
    sup = elastic_ring_support(mesh, "rim", k_ring, rotational_stiffness_nmm_per_rad=100.0)
    assert sup.spring_matrix.diagonal()[0::3].sum() == pytest.approx(k_ring)
    assert sup.spring_matrix.diagonal()[1::3].sum() == pytest.approx(100.0)
    p_n = 3.0
    f = nodal_load_vector(mesh.n_nodes, [0], force_z_n=-p_n)
    k, _ = assemble_plate(mesh, isotropic_bending_matrix(E_MPA, NU, T_MM))
    sol = solve_system(k, f, sup.fixed_dofs, rigid_modes=bending_rigid_modes(mesh.nodes),
                       mode_names=BENDING_MODE_NAMES, spring_matrix=sup.spring_matrix)  # fmt: skip
    rim = mesh.nodes_of("rim")
    assert sol.u[3 * rim].mean() == pytest.approx(-p_n / k_ring, rel=1e-9)
    assert np.all(sol.u[3 * rim] < 0)
    assert sol.reactions[0::3].sum() == pytest.approx(p_n, rel=1e-12)
