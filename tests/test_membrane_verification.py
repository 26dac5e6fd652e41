"""Verification of the plane-stress triangles against published benchmarks and closed-form
solutions, plus a cross-check against scikit-fem on the same meshes.

Every expected value is from a source outside platewright, named beside the check."""

from __future__ import annotations

import numpy as np
import pytest
import skfem
from skfem.models.elasticity import linear_elasticity

from platewright.fea.elements.constitutive import isotropic_plane_stress
from platewright.fea.elements.membrane import (
    assemble_stiffness,
    body_force_vector,
    edge_load_vector,
    element_strains,
    nodal_stresses,
)
from platewright.fea.elements.membrane_rigid import MEMBRANE_MODE_NAMES, membrane_rigid_modes
from platewright.fea.elements.quadratic import quadratic_mesh
from platewright.fea.mesh.structured import (
    cook_membrane_mesh,
    elliptic_membrane_mesh,
    plate_with_hole_quarter_mesh,
    rectangle_mesh,
)
from platewright.fea.solve import solve_system

# ----------------------------------------------------------------------------------- helpers


def _node_at(nodes: np.ndarray, x: float, y: float) -> int:
    d = np.hypot(nodes[:, 0] - x, nodes[:, 1] - y)
    i = int(np.argmin(d))
    assert d[i] < 1e-6 * max(1.0, abs(x) + abs(y)), "no node at the requested point"
    return i


def _fe_space(mesh, order: int):
    """(nodes, connectivity, edges_of(tag), nodes_of(tag)) for T3 (order 1) or T6 (order 2)."""
    if order == 1:
        return mesh.nodes, mesh.triangles, mesh.edges_of, mesh.nodes_of
    q = quadratic_mesh(mesh)
    return q.nodes, q.tri6, q.edge_nodes_of, q.nodes_of


def _distorted_rectangle(nx: int, ny: int, seed: int = 3):
    """[0, 2] x [0, 1] grid with interior nodes moved randomly by up to 0.3 of a cell."""
    mesh = rectangle_mesh(2.0, 1.0, nx, ny)
    rng = np.random.default_rng(seed)
    p = mesh.nodes.copy()
    inner = np.ones(len(p), dtype=bool)
    inner[np.unique(mesh.boundary_edges)] = False
    h = np.array([2.0 / nx, 1.0 / ny])
    p[inner] += rng.uniform(-0.3, 0.3, size=(inner.sum(), 2)) * h
    return type(mesh)(p, mesh.triangles, mesh.boundary_edges, mesh.boundary_tags, mesh.tag_names)


# ------------------------------------------------- cantilever under parabolic end shear


E_BEAM, NU_BEAM = 3000.0, 0.37
L_BEAM, D_BEAM, P_BEAM = 48.0, 12.0, 40.0
I_BEAM = D_BEAM**3 / 12.0


def _beam_exact(x: np.ndarray, y: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    # Timoshenko and Goodier, Theory of Elasticity, sec. 21 (cantilever loaded at the end), in
    # the form written out by Augarde and Deeks, Finite Elem. Anal. Des. 44 (2008) 595-600:
    # clamped at x = 0, shear P (+y) at x = L, thickness 1, plane stress.
    e, nu, p, ll, d, i = E_BEAM, NU_BEAM, P_BEAM, L_BEAM, D_BEAM, I_BEAM
    u = -p * y / (6 * e * i) * ((6 * ll - 3 * x) * x + (2 + nu) * (y**2 - d**2 / 4))
    v = p / (6 * e * i) * (3 * nu * y**2 * (ll - x) + (4 + 5 * nu) * d**2 * x / 4
                           + (3 * ll - x) * x**2)
    return u, v


def _beam_exact_strain(x: np.ndarray, y: np.ndarray) -> np.ndarray:
    # Derivatives of _beam_exact, worked by hand: eps_xx = -P y (L - x)/(E I), eps_yy = -nu eps_xx,
    # gamma_xy = P (1 + nu) (D^2/4 - y^2) / (E I).
    exx = -P_BEAM * y * (L_BEAM - x) / (E_BEAM * I_BEAM)
    gxy = P_BEAM * (1 + NU_BEAM) * (D_BEAM**2 / 4 - y**2) / (E_BEAM * I_BEAM)
    return np.stack([exx, -NU_BEAM * exx, gxy], axis=-1)


def test_beam_exact_field_is_the_published_one() -> None:
    # Guard the typed-in formulas: finite differences of the field give the beam-theory stresses
    # sigma_xx = -P (L - x) y / I and tau_xy = P (D^2/4 - y^2) / (2 I), sigma_yy = 0
    # (Timoshenko and Goodier sec. 21), and the tip deflection is the REFERENCE.md formula.
    x, y, h = np.array([13.0]), np.array([2.5]), 1e-5
    ux = (_beam_exact(x + h, y)[0] - _beam_exact(x - h, y)[0]) / (2 * h)
    vy = (_beam_exact(x, y + h)[1] - _beam_exact(x, y - h)[1]) / (2 * h)
    g = ((_beam_exact(x, y + h)[0] - _beam_exact(x, y - h)[0])
         + (_beam_exact(x + h, y)[1] - _beam_exact(x - h, y)[1])) / (2 * h)
    sig = isotropic_plane_stress(E_BEAM, NU_BEAM) @ np.array([ux[0], vy[0], g[0]])
    assert sig[0] == pytest.approx(-P_BEAM * (L_BEAM - 13.0) * 2.5 / I_BEAM, rel=1e-7)
    assert abs(sig[1]) < 1e-7 * abs(sig[0])
    assert sig[2] == pytest.approx(P_BEAM * (D_BEAM**2 / 4 - 2.5**2) / (2 * I_BEAM), rel=1e-7)
    tip = P_BEAM * L_BEAM**3 / (3 * E_BEAM * I_BEAM) + (4 + 5 * NU_BEAM) * P_BEAM * D_BEAM**2 \
        * L_BEAM / (24 * E_BEAM * I_BEAM)
    assert _beam_exact(np.array([L_BEAM]), np.array([0.0]))[1][0] == pytest.approx(tip)
    np.testing.assert_allclose(_beam_exact_strain(x, y)[0], [ux[0], vy[0], g[0]], rtol=1e-7)


def _solve_beam(n: int, order: int):
    """Cantilever on a 4n x n grid; exact displacements imposed at x = 0; parabolic shear at L."""
    mesh = rectangle_mesh(L_BEAM, D_BEAM, 4 * n, n, origin_mm=(0.0, -D_BEAM / 2))
    nodes, conn, edges_of, nodes_of = _fe_space(mesh, order)
    d = isotropic_plane_stress(E_BEAM, NU_BEAM)
    k = assemble_stiffness(nodes, conn, d, 1.0)

    def shear(x: np.ndarray, normal: np.ndarray) -> np.ndarray:
        tau = P_BEAM / (2 * I_BEAM) * (D_BEAM**2 / 4 - x[:, 1] ** 2)
        return np.column_stack([np.zeros_like(tau), tau])

    f = edge_load_vector(nodes, edges_of("right"), shear)
    clamp = nodes_of("left")
    ux, uy = _beam_exact(nodes[clamp, 0], nodes[clamp, 1])
    sol = solve_system(k, f, np.concatenate([2 * clamp, 2 * clamp + 1]), np.concatenate([ux, uy]),
                       rigid_modes=membrane_rigid_modes(nodes), mode_names=MEMBRANE_MODE_NAMES)
    return nodes, conn, d, f, sol


def test_cantilever_tip_deflection_quadratic_triangles() -> None:
    # Tip deflection v(L, 0) = P L^3/(3EI) + (4 + 5 nu) P D^2 L/(24 E I) (Timoshenko and Goodier;
    # REFERENCE.md), within 1% with T6 on the default 16 x 4 grid.
    nodes, _, _, f, sol = _solve_beam(4, 2)
    expected = P_BEAM * L_BEAM**3 / (3 * E_BEAM * I_BEAM) + (4 + 5 * NU_BEAM) * P_BEAM \
        * D_BEAM**2 * L_BEAM / (24 * E_BEAM * I_BEAM)
    tip = _node_at(nodes, L_BEAM, 0.0)
    assert sol.u[2 * tip + 1] == pytest.approx(expected, rel=0.01)
    # Equilibrium (Newton's third law for the whole beam): the clamp carries -P vertically and
    # the end moment P L, and the solver's residual measure is at round-off.
    assert f[1::2].sum() == pytest.approx(P_BEAM, rel=1e-13)  # integral of the parabola
    r = sol.reactions
    assert r[1::2].sum() == pytest.approx(-P_BEAM, rel=1e-10)
    assert abs(r[0::2].sum()) < 1e-10 * P_BEAM
    moment = np.sum(nodes[:, 0] * (r[1::2] + f[1::2]) - nodes[:, 1] * (r[0::2] + f[0::2]))
    assert abs(moment) < 1e-10 * P_BEAM * L_BEAM
    assert sol.equilibrium_residual < 1e-10


def _energy_error(nodes, conn, d, u) -> float:
    """sqrt(sum_e int (eps_h - eps)^T D (eps_h - eps) dA) for the beam, thickness 1.

    Collapsed-square Gauss rule on each triangle (Stroud, Approximate Calculation of Multiple
    Integrals): xi = s, eta = t (1 - s), weight w_s w_t (1 - s), 6 x 6 Gauss-Legendre points.
    """
    g, w = np.polynomial.legendre.leggauss(6)
    g, w = 0.5 * (g + 1), 0.5 * w
    s, t = np.meshgrid(g, g, indexing="ij")
    ws = (w[:, None] * w[None, :] * (1 - s)).ravel()
    ref = np.column_stack([s.ravel(), (t * (1 - s)).ravel()])
    eps_h = element_strains(nodes, conn, u, ref)  # (m, p, 3)
    p = nodes[conn[:, :3]]
    jac = np.stack([p[:, 1] - p[:, 0], p[:, 2] - p[:, 0]], axis=2)
    det = np.linalg.det(jac)
    x = p[:, None, 0, :] + np.einsum("eij,pj->epi", jac, ref)
    e = eps_h - _beam_exact_strain(x[..., 0], x[..., 1])
    dens = np.einsum("epi,ij,epj->ep", e, d, e)
    return float(np.sqrt(np.sum(det[:, None] * ws[None, :] * dens)))


@pytest.mark.parametrize("order, levels, rate", [(1, (4, 8, 16), 1.0), (2, (1, 2, 4), 2.0)])
def test_energy_norm_convergence_rates(order: int, levels: tuple[int, ...], rate: float) -> None:
    # A priori estimate |u - u_h|_E = O(h^p) for degree-p elements on a smooth solution (Strang
    # and Fix, An Analysis of the Finite Element Method, ch. 3): T3 -> 1, T6 -> 2.
    hs, errs = [], []
    for n in levels:
        nodes, conn, d, _, sol = _solve_beam(n, order)
        hs.append(D_BEAM / n)
        errs.append(_energy_error(nodes, conn, d, sol.u))
    slope = np.polyfit(np.log(hs), np.log(errs), 1)[0]
    assert abs(slope - rate) < 0.15 * rate


# ------------------------------------------------------------ patch tests and null space


@pytest.mark.parametrize("order", [1, 2])
def test_linear_patch_test_on_distorted_mesh(order: int) -> None:
    # Irons' patch test (Irons and Razzaque 1972; Zienkiewicz and Taylor vol. 1 ch. 9): a
    # linear displacement field imposed on the boundary is reproduced exactly inside and gives
    # the exact constant stress D eps.
    mesh = _distorted_rectangle(6, 4)
    nodes, conn, _, nodes_of = _fe_space(mesh, order)
    d = isotropic_plane_stress(1000.0, 0.3)
    k = assemble_stiffness(nodes, conn, d, 1.7)
    a = np.array([0.1, 2e-3, -1e-3])  # u = a0 + a1 x + a2 y
    b = np.array([-0.2, 5e-4, 3e-3])  # v = b0 + b1 x + b2 y
    x, y = nodes[:, 0], nodes[:, 1]
    exact = np.column_stack([a[0] + a[1] * x + a[2] * y, b[0] + b[1] * x + b[2] * y]).ravel()
    bnd = np.unique(np.concatenate([nodes_of(s) for s in ("left", "right", "top", "bottom")]))
    fixed = np.concatenate([2 * bnd, 2 * bnd + 1])
    sol = solve_system(k, np.zeros(k.shape[0]), fixed, exact[fixed],
                       rigid_modes=membrane_rigid_modes(nodes), mode_names=MEMBRANE_MODE_NAMES)
    np.testing.assert_allclose(sol.u, exact, rtol=0, atol=1e-12)
    stress = nodal_stresses(nodes, conn, sol.u, d)
    expected = d @ np.array([a[1], b[2], a[2] + b[1]])
    np.testing.assert_allclose(stress, np.broadcast_to(expected, stress.shape), atol=1e-9)


def _quadratic_field(nodes: np.ndarray, d: np.ndarray):
    """A quadratic displacement field, and the constant body force that keeps it in equilibrium,
    b = -div(D eps(u)), worked by hand for isotropic D (D13 = D23 = 0)."""
    a = np.array([0.0, 1e-3, 2e-3, 3e-3, -1e-3, 2e-3])  # u = a0 + a1 x + a2 y + a3 x^2 + a4 xy
    c = np.array([0.0, -1e-3, 1e-3, 1e-3, 4e-3, -2e-3])  # + a5 y^2; v likewise with c
    x, y = nodes[:, 0], nodes[:, 1]
    u = a[0] + a[1] * x + a[2] * y + a[3] * x**2 + a[4] * x * y + a[5] * y**2
    v = c[0] + c[1] * x + c[2] * y + c[3] * x**2 + c[4] * x * y + c[5] * y**2
    d11, d12, d22, d33 = d[0, 0], d[0, 1], d[1, 1], d[2, 2]
    bx = -(2 * d11 * a[3] + d12 * c[4] + d33 * (2 * a[5] + c[4]))
    by = -(d33 * (a[4] + 2 * c[3]) + d12 * a[4] + 2 * d22 * c[5])
    return np.column_stack([u, v]).ravel(), np.array([bx, by])


@pytest.mark.parametrize("order, exact", [(2, True), (1, False)])
def test_quadratic_patch_test(order: int, exact: bool) -> None:
    # Higher-order patch test (Zienkiewicz and Taylor vol. 1 ch. 9): T6 contains all quadratics,
    # so a quadratic field with its equilibrating body force is reproduced exactly; T3 cannot
    # represent it (this guards the test itself against passing trivially).
    mesh = _distorted_rectangle(5, 4, seed=7)
    nodes, conn, _, nodes_of = _fe_space(mesh, order)
    d = isotropic_plane_stress(1000.0, 0.3)
    t = 2.0
    k = assemble_stiffness(nodes, conn, d, t)
    u_exact, body = _quadratic_field(nodes, d)
    f = body_force_vector(nodes, conn, body, t)
    bnd = np.unique(np.concatenate([nodes_of(s) for s in ("left", "right", "top", "bottom")]))
    fixed = np.concatenate([2 * bnd, 2 * bnd + 1])
    sol = solve_system(k, f, fixed, u_exact[fixed], rigid_modes=membrane_rigid_modes(nodes),
                       mode_names=MEMBRANE_MODE_NAMES)
    err = np.abs(sol.u - u_exact).max()
    if exact:
        assert err < 1e-12
    else:
        assert err > 1e-6


@pytest.mark.parametrize("order", [1, 2])
def test_free_plate_has_exactly_the_rigid_body_null_space(order: int) -> None:
    # A free, connected membrane has exactly three zero-energy modes and they are the in-plane
    # rigid motions (pyamg and FE texts: the near-nullspace of elasticity).
    mesh = _distorted_rectangle(4, 3, seed=11)
    nodes, conn, _, _ = _fe_space(mesh, order)
    k = assemble_stiffness(nodes, conn, isotropic_plane_stress(1.0, 0.3), 1.0).toarray()
    ev, vec = np.linalg.eigh(k)
    zero = ev < 1e-10 * ev.max()
    assert np.count_nonzero(zero) == 3
    assert ev[~zero].min() > 1e-6 * ev.max()
    r = membrane_rigid_modes(nodes)
    basis = vec[:, zero]
    # The rigid modes lie in the computed null space (projection residual ~ 0) ...
    resid = r - basis @ (basis.T @ r)
    assert np.linalg.norm(resid) < 1e-8 * np.linalg.norm(r)
    # ... and span it (rank 3).
    assert np.linalg.matrix_rank(r, tol=1e-8) == 3


# ------------------------------------------------------------ published benchmarks


def _solve_tagged(mesh, order, d, loads, fixes):
    nodes, conn, edges_of, nodes_of = _fe_space(mesh, order)
    k = assemble_stiffness(nodes, conn, d, 1.0)
    f = np.zeros(k.shape[0])
    for tag, load in loads:
        f += edge_load_vector(nodes, edges_of(tag), load)
    fixed = np.concatenate([2 * nodes_of(tag) + comp for tag, comp in fixes])
    sol = solve_system(k, f, fixed, rigid_modes=membrane_rigid_modes(nodes),
                       mode_names=MEMBRANE_MODE_NAMES)
    return nodes, conn, sol


def _hole_kt(d_over_w: float, n_around: int = 32, n_radial: int = 24) -> tuple[float, float]:
    """Quarter model with symmetry, tension 1 MPa along y on the far edge (length 2 W):
    (sigma_yy at (R, 0), sigma_xx at (0, R)) over the gross remote stress."""
    r = 1.0
    half_w = r / d_over_w
    mesh = plate_with_hole_quarter_mesh(r, half_w, 2 * half_w, n_around, n_radial)
    d = isotropic_plane_stress(70000.0, 0.33)
    nodes, conn, sol = _solve_tagged(mesh, 2, d, [("top", np.array([0.0, 1.0]))],
                                     [("x_axis", 1), ("y_axis", 0)])
    assert sol.equilibrium_residual < 1e-10
    s = nodal_stresses(nodes, conn, sol.u, d)
    return s[_node_at(nodes, r, 0.0), 1], s[_node_at(nodes, 0.0, r), 0]


def test_kirsch_hole_in_a_wide_plate() -> None:
    # Kirsch (1898), e.g. Timoshenko and Goodier sec. 35: hoop stress 3 sigma across the load
    # and -sigma on the load axis, for d/W -> 0. Here d/W = 0.05, within 3% of 3.
    kt, axis = _hole_kt(0.05)
    assert kt == pytest.approx(3.0, rel=0.03)
    assert axis == pytest.approx(-1.0, rel=0.05)


@pytest.mark.parametrize("d_over_w", [0.2, 0.4, 0.5])
def test_finite_width_hole_matches_heywood_fit(d_over_w: float) -> None:
    # Gross-section Ktg = 0.284 + 2/(1 - d/W) - 0.600 (1 - d/W) + 1.32 (1 - d/W)^2
    # (Pilkey and Pilkey, Peterson's Stress Concentration Factors, chart for a central hole in
    # a finite-width plate in tension), within 3%.
    g = 1 - d_over_w
    ktg = 0.284 + 2 / g - 0.600 * g + 1.32 * g**2
    kt, _ = _hole_kt(d_over_w, n_around=24, n_radial=16)
    assert kt == pytest.approx(ktg, rel=0.03)


def test_nafems_le1_elliptic_membrane() -> None:
    # NAFEMS LE1 (NAFEMS standard benchmarks, 1990): sigma_yy at D = (2000, 0) mm is 92.7 MPa,
    # within 2% with T6. Outward normal pressure 10 MPa on the outer ellipse (force per length
    # = 10 MPa x thickness 1 mm here; the stress does not depend on the thickness).
    d = isotropic_plane_stress(210000.0, 0.3)
    mesh = elliptic_membrane_mesh(16, 8, grading_power=1.5)
    nodes, conn, sol = _solve_tagged(mesh, 2, d, [("outer", lambda x, n: 10.0 * n)],
                                     [("x_axis", 1), ("y_axis", 0)])
    s = nodal_stresses(nodes, conn, sol.u, d)
    assert s[_node_at(nodes, 2000.0, 0.0), 1] == pytest.approx(92.7, rel=0.02)
    assert sol.equilibrium_residual < 1e-10


def test_cooks_membrane() -> None:
    # Cook's membrane (Cook, Improved two-dimensional finite element, J. Struct. Div. ASCE 100
    # (1974); converged value as listed in REFERENCE.md): v at (48, 52) -> 23.96, within 1%.
    d = isotropic_plane_stress(1.0, 1.0 / 3.0)
    nodes, _, sol = _solve_tagged(
        cook_membrane_mesh(24), 2, d, [("right", np.array([0.0, 1.0 / 16.0]))],
        [("left", 0), ("left", 1)],
    )
    v = sol.u[2 * _node_at(nodes, 48.0, 52.0) + 1]
    assert v == pytest.approx(23.96, rel=0.01)
    assert sol.reactions[1::2].sum() == pytest.approx(-1.0, rel=1e-10)


# ------------------------------------------------------------ cross-check with scikit-fem


@pytest.mark.parametrize("order", [1, 2])
def test_same_mesh_same_answer_as_scikit_fem(order: int) -> None:
    # scikit-fem (a general-purpose FE library) with plane-stress Lame parameters
    # lambda* = E nu / (1 - nu^2), mu = E / (2 (1 + nu)), thickness 1, on the same distorted
    # mesh and element order: a clamped plate under a uniform body force.
    e, nu = 2500.0, 0.35
    body = np.array([0.3, -1.0])
    mesh = _distorted_rectangle(12, 6, seed=5)
    nodes, conn, _, nodes_of = _fe_space(mesh, order)
    k = assemble_stiffness(nodes, conn, isotropic_plane_stress(e, nu), 1.0)
    f = body_force_vector(nodes, conn, body, 1.0)
    clamp = nodes_of("left")
    ours = solve_system(k, f, np.concatenate([2 * clamp, 2 * clamp + 1]),
                        rigid_modes=membrane_rigid_modes(nodes),
                        mode_names=MEMBRANE_MODE_NAMES).u.reshape(-1, 2)

    sk_mesh = skfem.MeshTri(mesh.nodes.T.copy(), mesh.triangles.T.copy())
    scalar = skfem.ElementTriP1() if order == 1 else skfem.ElementTriP2()
    basis = skfem.Basis(sk_mesh, skfem.ElementVector(scalar))
    lam = e * nu / (1 - nu**2)
    mu = e / (2 * (1 + nu))
    big_k = linear_elasticity(lam, mu).assemble(basis)

    @skfem.LinearForm
    def load(v, w):
        return body[0] * v[0] + body[1] * v[1]

    rhs = load.assemble(basis)
    fixed = basis.get_dofs(lambda x: np.isclose(x[0], 0.0)).all()
    theirs = skfem.solve(*skfem.condense(big_k, rhs, D=fixed))

    # Map scikit-fem's dofs to our nodes by position (vertices, then edge midpoints).
    sk_u = np.empty_like(ours)
    sk_u[: mesh.n_nodes] = theirs[basis.nodal_dofs.T]
    if order == 2:
        mid = sk_mesh.p[:, sk_mesh.facets].mean(axis=1).T
        key = {tuple(np.round(p, 12)): i for i, p in enumerate(nodes)}
        idx = np.array([key[tuple(np.round(p, 12))] for p in mid])
        sk_u[idx] = theirs[basis.facet_dofs.T]
    rel = np.linalg.norm(ours - sk_u) / np.linalg.norm(sk_u)
    assert rel < 1e-8


def test_unstructured_mesh_same_answer_as_scikit_fem() -> None:
    # The same cross-check on an unstructured mesh from the project's mesher: a 60 x 30 mm plate
    # with two holes, clamped at x = 0, T6 under a body force (scikit-fem as reference).
    import shapely

    from platewright.fea.mesh.mesher import mesh_polygon

    plate = shapely.box(0.0, 0.0, 60.0, 30.0)
    plate = plate.difference(shapely.Point(20.0, 15.0).buffer(6.0, 16))
    plate = plate.difference(shapely.Point(44.0, 12.0).buffer(4.0, 16))
    mesh = mesh_polygon(plate, size_mm=4.0)
    e, nu, body = 3000.0, 0.37, np.array([0.0, -1e-3])
    q = quadratic_mesh(mesh)
    k = assemble_stiffness(q.nodes, q.tri6, isotropic_plane_stress(e, nu), 1.0)
    f = body_force_vector(q.nodes, q.tri6, body, 1.0)
    clamp = np.flatnonzero(np.isclose(q.nodes[:, 0], 0.0))
    ours = solve_system(k, f, np.concatenate([2 * clamp, 2 * clamp + 1]),
                        rigid_modes=membrane_rigid_modes(q.nodes),
                        mode_names=MEMBRANE_MODE_NAMES).u.reshape(-1, 2)

    sk_mesh = skfem.MeshTri(mesh.nodes.T.copy(), mesh.triangles.T.copy())
    basis = skfem.Basis(sk_mesh, skfem.ElementVector(skfem.ElementTriP2()))
    big_k = linear_elasticity(e * nu / (1 - nu**2), e / (2 * (1 + nu))).assemble(basis)

    @skfem.LinearForm
    def load(v, w):
        return body[0] * v[0] + body[1] * v[1]

    fixed = basis.get_dofs(lambda x: np.isclose(x[0], 0.0)).all()
    theirs = skfem.solve(*skfem.condense(big_k, load.assemble(basis), D=fixed))
    sk_u = np.empty_like(ours)
    sk_u[: mesh.n_nodes] = theirs[basis.nodal_dofs.T]
    mid = sk_mesh.p[:, sk_mesh.facets].mean(axis=1).T
    key = {tuple(np.round(p, 9)): i for i, p in enumerate(q.nodes)}
    sk_u[[key[tuple(np.round(p, 9))] for p in mid]] = theirs[basis.facet_dofs.T]
    assert np.linalg.norm(ours - sk_u) < 1e-8 * np.linalg.norm(sk_u)
