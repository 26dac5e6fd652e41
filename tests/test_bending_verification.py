"""Verification of the DKT plate against published Kirchhoff-plate solutions.

Sources: Timoshenko and Woinowsky-Krieger, Theory of Plates and Shells, 2nd ed. (TWK), and
Roark's Formulas for Stress and Strain, Table 11.4; series and closed forms are worked here in
the test, independently of the code under test. Units: mm, N, MPa.

Observed behaviour (measured, stated so that a change shows): on these meshes the DKT centre
deflection converges from ABOVE (the discrete plate is slightly too flexible) at rate ~2.
"""

from __future__ import annotations

import numpy as np
import pytest
import shapely
from test_bending import all_edges, assemble_plate, disk_mesh, square_mesh

from platewright.fea.elements.bending import (
    bending_rigidity,
    isotropic_bending_matrix,
    nodal_load_vector,
    nodal_moments,
    orthotropic_bending_matrix,
)
from platewright.fea.elements.bending_rigid import BENDING_MODE_NAMES, bending_rigid_modes
from platewright.fea.loadcases.supports import clamped, simply_supported
from platewright.fea.mesh.mesher import mesh_polygon
from platewright.fea.solve import solve_system

E_MPA, NU, T_MM = 2000.0, 0.3, 2.0
SIDE_MM, Q_MPA, P_N = 100.0, 1e-3, 10.0
D_NMM = E_MPA * T_MM**3 / (12 * (1 - NU**2))  # TWK ch. 1, worked here
DB = isotropic_bending_matrix(E_MPA, NU, T_MM)
#: Default refinement of the square: 32 x 32 cells, 2048 triangles, 3267 dofs.
N_DEFAULT = 32


def _navier_ss_uniform(terms: int = 201) -> float:
    """Centre deflection coefficient w D / (q a^4) of the SS square under uniform load.

    Navier series (TWK ch. 5, Navier solution of the SS rectangle): w = 16 q / (pi^6 D) sum
    over odd m, n of sin(m pi/2) sin(n pi/2) / (m n (m^2/a^2 + n^2/b^2)^2), here a = b = 1.
    """
    k = np.arange(1, terms + 1, 2, dtype=float)
    m, n = np.meshgrid(k, k)
    sign = np.sin(m * np.pi / 2) * np.sin(n * np.pi / 2)
    return float(16 / np.pi**6 * np.sum(sign / (m * n * (m * m + n * n) ** 2)))


def _solve(mesh, support, f, k):
    return solve_system(
        k, f, support.fixed_dofs, support.fixed_values,
        rigid_modes=bending_rigid_modes(mesh.nodes), mode_names=BENDING_MODE_NAMES,
    )  # fmt: skip


def _centre(mesh) -> int:
    return int(np.argmin(np.hypot(mesh.nodes[:, 0], mesh.nodes[:, 1])))


@pytest.fixture(scope="module")
def square():
    mesh = all_edges(square_mesh(SIDE_MM, N_DEFAULT))
    k, f = assemble_plate(mesh, DB, Q_MPA)
    return mesh, k, f


def test_navier_series_matches_the_tabulated_coefficient():
    # TWK, SS rectangle under uniform load (Table 8, table number from memory), Roark
    # Table 11.4: alpha = 0.00406 for the SS square, uniform q.
    assert _navier_ss_uniform() == pytest.approx(0.00406, abs=5e-6)


@pytest.mark.parametrize("hard", [False, True])
def test_simply_supported_square_uniform_load(square, hard):
    # TWK / Roark Table 11.4, nu = 0.3: w_max = 0.00406 q a^4 / D; within 1%.
    # TWK (SS rectangle, uniform load, b/a = 1; nu = 0.3): Mx = My = 0.0479 q a^2 at the
    # centre; within 2%.
    mesh, k, f = square
    sol = _solve(mesh, simply_supported(mesh, "outline", hard=hard), f, k)
    c = _centre(mesh)
    w = sol.u[3 * c] * D_NMM / (Q_MPA * SIDE_MM**4)
    assert w == pytest.approx(0.00406, rel=0.01)
    assert w > _navier_ss_uniform()  # observed: converges from above
    m = nodal_moments(mesh.nodes, mesh.triangles, DB, sol.u)[c] / (Q_MPA * SIDE_MM**2)
    assert m[0] == pytest.approx(0.0479, rel=0.02)
    assert m[1] == pytest.approx(0.0479, rel=0.02)
    assert abs(m[2]) < 1e-3 * m[0]  # Mxy = 0 on the axes of symmetry


def test_simply_supported_square_central_load(square):
    # TWK (SS rectangle, central load) / Roark Table 11.4, nu = 0.3:
    # w_max = 0.01160 P a^2 / D; within 1%.
    mesh, k, _ = square
    c = _centre(mesh)
    f = nodal_load_vector(mesh.n_nodes, [c], force_z_n=P_N)
    sol = _solve(mesh, simply_supported(mesh, "outline"), f, k)
    assert sol.u[3 * c] * D_NMM / (P_N * SIDE_MM**2) == pytest.approx(0.01160, rel=0.01)


def test_clamped_square_uniform_load(square):
    # TWK (clamped rectangle, uniform load) / Roark Table 11.4, nu = 0.3:
    # w_max = 0.00126 q a^4 / D; within 1%.
    mesh, k, f = square
    sol = _solve(mesh, clamped(mesh, "outline"), f, k)
    w = sol.u[3 * _centre(mesh)] * D_NMM / (Q_MPA * SIDE_MM**4)
    assert w == pytest.approx(0.00126, rel=0.01)


def test_clamped_square_central_load(square):
    # TWK Table 55, nu = 0.3: w_max = 0.00560 P a^2 / D (from memory, check; Roark Table 11.4's
    # alpha = 0.0611 in w = alpha W b^2 / (E t^3) gives 0.0611 / 10.92 = 0.00560 too, also from
    # memory). Within 1%.
    mesh, k, _ = square
    c = _centre(mesh)
    f = nodal_load_vector(mesh.n_nodes, [c], force_z_n=P_N)
    sol = _solve(mesh, clamped(mesh, "outline"), f, k)
    assert sol.u[3 * c] * D_NMM / (P_N * SIDE_MM**2) == pytest.approx(0.00560, rel=0.01)


def test_equilibrium_of_reactions(square):
    # Statics: the supports carry the whole load q a^2 (N); about the centre the reaction moments
    # vanish for a centred load, and for an off-centre point load P at (x0, y0) they are
    # -P y0 about x and +P x0 about y. Relative 1e-10.
    mesh, k, f = square
    sol = _solve(mesh, simply_supported(mesh, "outline"), f, k)
    r = bending_rigid_modes(mesh.nodes, center_mm=(0.0, 0.0))
    total = Q_MPA * SIDE_MM**2
    assert -sol.reactions[0::3].sum() == pytest.approx(total, rel=1e-10)
    atol = 1e-10 * total * SIDE_MM
    np.testing.assert_allclose(r.T @ sol.reactions, [-total, 0.0, 0.0], atol=atol)
    assert sol.equilibrium_residual < 1e-10
    node = int(np.argmin(np.hypot(*(mesh.nodes - [21.875, -12.5]).T)))
    x0, y0 = mesh.nodes[node]
    f2 = nodal_load_vector(mesh.n_nodes, [node], force_z_n=P_N)
    sol2 = _solve(mesh, clamped(mesh, "outline"), f2, k)
    expected = [-P_N, -P_N * y0, P_N * x0]
    np.testing.assert_allclose(r.T @ sol2.reactions, expected, rtol=1e-10, atol=1e-10 * P_N)
    assert sol2.equilibrium_residual < 1e-10


def test_observed_convergence_rate():
    # Error of the centre deflection against the Navier series (TWK, worked above) on
    # meshes of 4, 8, 16, 32 cells a side: fitted order of log(error) vs log(h) about 2 (DKT
    # deflections converge at O(h^2): Batoz, Bathe and Ho 1980, from memory), positive error.
    exact = _navier_ss_uniform()
    errors = []
    for n in (4, 8, 16, 32):
        mesh = all_edges(square_mesh(SIDE_MM, n))
        k, f = assemble_plate(mesh, DB, Q_MPA)
        sol = _solve(mesh, simply_supported(mesh, "outline"), f, k)
        errors.append(sol.u[3 * _centre(mesh)] * D_NMM / (Q_MPA * SIDE_MM**4) - exact)
    errors = np.array(errors)
    assert np.all(errors > 0)  # from above
    rate = -np.polyfit(np.log([4, 8, 16, 32]), np.log(errors), 1)[0]
    assert 1.8 < rate < 2.2


@pytest.mark.parametrize("support", ["clamped", "simply_supported"])
def test_circular_plate_uniform_load(support):
    # TWK ch. 3 (symmetrical bending of circular plates), closed forms: clamped
    # w0 = q a^4 / (64 D); simply supported w0 = (5 + nu) q a^4 / (64 (1 + nu) D).
    # Disk of radius 50 mm, 16 rings; within 1%.
    radius = 50.0
    mesh = disk_mesh(radius, 16)
    k, f = assemble_plate(mesh, DB, Q_MPA)
    if support == "clamped":
        sup, exact = clamped(mesh, "rim"), Q_MPA * radius**4 / (64 * D_NMM)
    else:
        sup = simply_supported(mesh, "rim")
        exact = (5 + NU) * Q_MPA * radius**4 / (64 * (1 + NU) * D_NMM)
    sol = _solve(mesh, sup, f, k)
    assert sol.u[3 * _centre(mesh)] == pytest.approx(exact, rel=0.01)
    assert sol.equilibrium_residual < 1e-10


def test_orthotropic_rectangle_against_navier_series():
    # SS rectangular orthotropic plate under uniform q, D11 w,xxxx + 2 H w,xxyy + D22 w,yyyy = q,
    # H = D12 + 2 D66 (TWK ch. 11, anisotropic plates; Navier solution worked here): w(a/2, b/2) =
    # 16 q / pi^6 sum_{m,n odd} sin(m pi/2) sin(n pi/2) / (m n (D11 (m/a)^4 +
    # 2 H (m/a)^2 (n/b)^2 + D22 (n/b)^4)). Plywood-like constants (invented), grain along x.
    db = orthotropic_bending_matrix(9000.0, 3000.0, 0.2, 500.0, 3.0)
    d11, d22, h = db[0, 0], db[1, 1], db[0, 1] + 2 * db[2, 2]
    a = SIDE_MM
    kk = np.arange(1, 200, 2, dtype=float)
    m, n = np.meshgrid(kk, kk)
    sign = np.sin(m * np.pi / 2) * np.sin(n * np.pi / 2)
    den = m * n * (d11 * (m / a) ** 4 + 2 * h * (m / a) ** 2 * (n / a) ** 2 + d22 * (n / a) ** 4)
    exact = 16 * Q_MPA / np.pi**6 * np.sum(sign / den)
    mesh = all_edges(square_mesh(a, N_DEFAULT))
    k, f = assemble_plate(mesh, db, Q_MPA)
    sol = _solve(mesh, simply_supported(mesh, "outline"), f, k)
    assert sol.u[3 * _centre(mesh)] == pytest.approx(exact, rel=0.01)


def test_rigidity_scaling_is_exact(square):
    # Linear elasticity: w scales as 1 / D, i.e. as 1 / (E t^3) (TWK ch. 1, D = E t^3/12(1-nu^2)).
    mesh, k, f = square
    sup = clamped(mesh, "outline")
    w1 = _solve(mesh, sup, f, k).u[3 * _centre(mesh)]
    k2, _ = assemble_plate(mesh, isotropic_bending_matrix(2 * E_MPA, NU, 2 * T_MM))
    w2 = _solve(mesh, sup, f, k2).u[3 * _centre(mesh)]
    assert w1 / w2 == pytest.approx(16.0, rel=1e-9)
    assert bending_rigidity(E_MPA, NU, T_MM) == pytest.approx(D_NMM, rel=1e-14)


@pytest.mark.parametrize("support", ["clamped", "simply_supported"])
def test_circular_plate_on_a_generated_mesh(support):
    # Same closed forms along the radius (TWK ch. 3): clamped w(r) = q (a^2 - r^2)^2 / (64 D);
    # simply supported w(r) = q (a^2 - r^2) ((5 + nu) a^2 / (1 + nu) - r^2) / (64 D), here on
    # an unstructured mesh of a 128-gon from fea.mesher; every node within 1% of w(0).
    radius = 50.0
    mesh = mesh_polygon(shapely.Point(0.0, 0.0).buffer(radius, quad_segs=32), size_mm=4.0)
    k, f = assemble_plate(mesh, DB, Q_MPA)
    r2 = (mesh.nodes**2).sum(axis=1)
    a2 = radius**2
    if support == "clamped":
        sup, exact = clamped(mesh, "outline"), Q_MPA * (a2 - r2) ** 2 / (64 * D_NMM)
    else:
        sup = simply_supported(mesh, "outline")
        exact = Q_MPA * (a2 - r2) * ((5 + NU) * a2 / (1 + NU) - r2) / (64 * D_NMM)
    sol = _solve(mesh, sup, f, k)
    assert np.abs(sol.u[0::3] - exact).max() < 0.01 * exact.max()


def test_annular_plate_with_free_bore():
    # Annular plate, outer edge r = b simply supported, bore r = a free, uniform q. Axisymmetric
    # Kirchhoff solution (TWK ch. 3): w = q r^4 / (64 D) + C1 + C2 r^2 + C3 ln r + C4 r^2 ln r,
    # with Q_r(a) = 0 -> C4 = -q a^2 / (8 D), M_r(a) = M_r(b) = 0 and w(b) = 0 solved here.
    # Compared with the deflection of the bore's edge; within 1%.
    a, b, q, d, nu = 10.0, 50.0, Q_MPA, D_NMM, NU
    c4 = -q * a * a / (8 * d)

    def slope_parts(r: float) -> tuple[float, float]:
        """Known parts of w' and w'' (without C2, C3)."""
        w1 = q * r**3 / (16 * d) + c4 * (2 * r * np.log(r) + r)
        w2 = 3 * q * r * r / (16 * d) + c4 * (2 * np.log(r) + 3)
        return w1, w2

    # M_r = -D (w'' + nu w' / r) = 0; C2 contributes 2 + 2 nu, C3 contributes (nu - 1) / r^2.
    rows, rhs = [], []
    for r in (a, b):
        w1, w2 = slope_parts(r)
        rows.append([2 + 2 * nu, (nu - 1) / r**2])
        rhs.append(-(w2 + nu * w1 / r))
    c2, c3 = np.linalg.solve(rows, rhs)

    def w(r: float) -> float:
        return q * r**4 / (64 * d) + c2 * r * r + c3 * np.log(r) + c4 * r * r * np.log(r)

    exact_bore = w(a) - w(b)
    ring = shapely.Point(0.0, 0.0).buffer(b, quad_segs=32)
    bore = shapely.Point(0.0, 0.0).buffer(a, quad_segs=16)
    mesh = mesh_polygon(ring.difference(bore), size_mm=3.0, tags=["rim", "bore"])
    k, f = assemble_plate(mesh, DB, Q_MPA)
    sol = _solve(mesh, simply_supported(mesh, "rim"), f, k)
    w_bore = sol.u[3 * mesh.nodes_of("bore")]
    np.testing.assert_allclose(w_bore, exact_bore, rtol=0.01)
    assert sol.equilibrium_residual < 1e-10
