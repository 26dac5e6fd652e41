"""Assembly and the supported linear solve: checks against hand-worked spring systems and
physical facts (rigid-body motions, equilibrium), plus direct vs multigrid agreement."""

from __future__ import annotations

import numpy as np
import pytest
import scipy.sparse as sp

from platewright.fea.assembly import assemble_matrix, assemble_vector, element_dofs
from platewright.fea.elements.bending import (
    dkt_pressure_load,
    dkt_stiffness,
    isotropic_bending_matrix,
)
from platewright.fea.elements.bending_rigid import BENDING_MODE_NAMES, bending_rigid_modes
from platewright.fea.elements.constitutive import isotropic_plane_stress
from platewright.fea.elements.membrane import assemble_stiffness, body_force_vector
from platewright.fea.elements.membrane_rigid import MEMBRANE_MODE_NAMES, membrane_rigid_modes
from platewright.fea.elements.quadratic import quadratic_mesh
from platewright.fea.loadcases.supports import clamped
from platewright.fea.mesh.structured import rectangle_mesh
from platewright.fea.solve import (
    MechanismError,
    UnderSupportedError,
    free_rigid_motions,
    solve_system,
)

BAR_MODE = np.ones((3, 1))  # rigid translation of a 3-node axial spring chain
BAR_NAME = ("translation along x",)


def _chain(k1: float, k2: float) -> sp.csr_matrix:
    """Two axial springs in series, nodes 0-1-2, assembled with the library."""
    ke = np.array([[[k1, -k1], [-k1, k1]], [[k2, -k2], [-k2, k2]]])
    return assemble_matrix(ke, np.array([[0, 1], [1, 2]]), 3)


def test_assemble_matrix_matches_a_dense_loop_and_sums_duplicates() -> None:
    # Reference: the definition of assembly, K[I, J] += ke[e, a, b], written as a plain loop here.
    rng = np.random.default_rng(1)
    m, k, n = 40, 6, 25
    ke = rng.standard_normal((m, k, k))
    dofs = np.stack([rng.choice(n, size=k, replace=False) for _ in range(m)])
    dense = np.zeros((n, n))
    for e in range(m):
        for a in range(k):
            for b in range(k):
                dense[dofs[e, a], dofs[e, b]] += ke[e, a, b]
    mat = assemble_matrix(ke, dofs, n)
    assert sp.isspmatrix_csr(mat)
    assert mat.has_canonical_format
    np.testing.assert_allclose(mat.toarray(), dense, rtol=0, atol=1e-12)

    fe = rng.standard_normal((m, k))
    vec = np.zeros(n)
    for e in range(m):
        vec[dofs[e]] += fe[e]
    np.testing.assert_allclose(assemble_vector(fe, dofs, n), vec, atol=1e-12)


def test_assembly_rejects_out_of_range_dofs() -> None:
    with pytest.raises(ValueError):
        assemble_matrix(np.zeros((1, 2, 2)), np.array([[0, 5]]), 3)
    with pytest.raises(ValueError):
        assemble_vector(np.zeros((1, 2)), np.array([[-1, 0]]), 3)


def test_element_dofs_are_node_major() -> None:
    # dof = dofs_per_node * node + component (the numbering the membrane modes use).
    np.testing.assert_array_equal(element_dofs(np.array([[4, 1]]), 2), [[8, 9, 2, 3]])
    np.testing.assert_array_equal(element_dofs(np.array([[2]]), 3), [[6, 7, 8]])


def test_series_springs_tip_displacement_and_reaction() -> None:
    # Springs in series (Hooke's law): u_tip = P / k1 + P / k2; the support carries -P.
    k1, k2, p = 200.0, 50.0, 10.0
    sol = solve_system(
        _chain(k1, k2), np.array([0.0, 0.0, p]), [0], rigid_modes=BAR_MODE, mode_names=BAR_NAME
    )
    np.testing.assert_allclose(sol.u, [0.0, p / k1, p / k1 + p / k2], rtol=1e-13)
    np.testing.assert_allclose(sol.reactions, [-p, 0.0, 0.0], atol=1e-12)
    assert sol.equilibrium_residual < 1e-13
    assert sol.method == "direct" and sol.iterations == 0
    assert sol.dofs == 3 and sol.free_dofs == 2


def test_prescribed_displacement_gives_spring_force() -> None:
    # Both ends prescribed, u = (0, ?, d): the middle node sits where the forces balance,
    # u1 = k2 d / (k1 + k2), and the end reaction is the series stiffness times d.
    k1, k2, d = 3.0, 1.0, 0.8
    sol = solve_system(
        _chain(k1, k2), np.zeros(3), [0, 2], [0.0, d], rigid_modes=BAR_MODE, mode_names=BAR_NAME
    )
    assert sol.u[1] == pytest.approx(k2 * d / (k1 + k2), rel=1e-13)
    k_series = k1 * k2 / (k1 + k2)
    np.testing.assert_allclose(sol.reactions[[0, 2]], [-k_series * d, k_series * d], rtol=1e-13)


def test_elastic_support_alone_holds_the_chain() -> None:
    # A ground spring ks at node 0 and no fixed dof: u0 = P / ks, u2 = P/ks + P/k1 + P/k2,
    # and the spring pushes back with -P (springs in series, Hooke's law).
    k1, k2, ks, p = 4.0, 2.0, 8.0, 1.0
    spring = sp.csr_matrix(([ks], ([0], [0])), shape=(3, 3))
    sol = solve_system(
        _chain(k1, k2), np.array([0.0, 0.0, p]), [], rigid_modes=BAR_MODE, mode_names=BAR_NAME,
        spring_matrix=spring,
    )
    np.testing.assert_allclose(sol.u, [p / ks, p / ks + p / k1, p / ks + p / k1 + p / k2])
    np.testing.assert_allclose(sol.reactions, [-p, 0.0, 0.0], atol=1e-12)
    assert sol.equilibrium_residual < 1e-13


def _plate(nx: int = 6, ny: int = 3):
    mesh = rectangle_mesh(60.0, 30.0, nx, ny, origin_mm=(100.0, 40.0))
    d = isotropic_plane_stress(70000.0, 0.33)
    k = assemble_stiffness(mesh.nodes, mesh.triangles, d, 2.0)
    return mesh, k, membrane_rigid_modes(mesh.nodes)


def test_free_plate_is_refused_naming_all_three_motions() -> None:
    mesh, k, modes = _plate()
    f = np.zeros(k.shape[0])
    with pytest.raises(UnderSupportedError) as info:
        solve_system(k, f, [], rigid_modes=modes, mode_names=MEMBRANE_MODE_NAMES)
    assert info.value.free_motions == MEMBRANE_MODE_NAMES


def test_single_pinned_node_leaves_rotation_about_z_free() -> None:
    # Pinning one node (both dofs) stops translation but the plate can still turn about it,
    # wherever that node lies (here far from the coordinate origin).
    mesh, k, modes = _plate()
    node = int(mesh.nodes_of("bottom")[2])
    f = np.zeros(k.shape[0])
    f[1::2] = -0.1
    with pytest.raises(UnderSupportedError, match="rotation about z") as info:
        solve_system(k, f, [2 * node, 2 * node + 1], rigid_modes=modes,
                     mode_names=MEMBRANE_MODE_NAMES)
    assert info.value.free_motions == ("rotation about z",)
    assert isinstance(info.value, ValueError)


def test_rollers_in_y_only_leave_translation_along_x_free() -> None:
    # Two supports that stop only u_y on the line y = const stop rotation and y-translation,
    # not sliding along x.
    mesh, k, modes = _plate()
    nodes = mesh.nodes_of("bottom")[[0, -1]]
    free = free_rigid_motions(modes, MEMBRANE_MODE_NAMES, 2 * nodes + 1)
    assert free == ("translation along x",)
    # A pin plus a roller in y at another node on the same line is a statically determinate
    # support: nothing is free.
    fixed = np.array([2 * nodes[0], 2 * nodes[0] + 1, 2 * nodes[1] + 1])
    assert free_rigid_motions(modes, MEMBRANE_MODE_NAMES, fixed) == ()


def test_disconnected_part_is_reported_as_mechanism() -> None:
    # Two separate plates share one set of (global) rigid modes; supporting one leaves the
    # other free: the factorisation finds the singular matrix.
    m1 = rectangle_mesh(10.0, 10.0, 2, 2)
    m2 = rectangle_mesh(10.0, 10.0, 2, 2, origin_mm=(20.0, 0.0))
    nodes = np.vstack([m1.nodes, m2.nodes])
    tri = np.vstack([m1.triangles, m2.triangles + m1.n_nodes])
    k = assemble_stiffness(nodes, tri, isotropic_plane_stress(1000.0, 0.3), 1.0)
    fixed = np.concatenate([2 * m1.nodes_of("left"), 2 * m1.nodes_of("left") + 1])
    f = np.zeros(k.shape[0])
    f[-1] = 1.0
    with pytest.raises(MechanismError) as info:
        solve_system(k, f, fixed, rigid_modes=membrane_rigid_modes(nodes),
                     mode_names=MEMBRANE_MODE_NAMES)
    # The test is structural (connected parts against the supports), so it names the motions
    # of the loose part and which unknowns belong to it.
    assert set(info.value.free_motions) == set(MEMBRANE_MODE_NAMES)
    assert set(info.value.part_dofs.tolist()) == set(range(2 * m1.n_nodes, k.shape[0]))


def _clamped_strip(length_mm: float, width_mm: float, nx: int, ny: int):
    """DKT cantilever strip (cast-acrylic-like E = 3000 MPa, nu = 0.37, t = 3 mm) clamped on its
    left end under a uniform pressure of 1e-3 MPa downwards: (K, f, fixed dofs, modes, mesh)."""
    mesh = rectangle_mesh(length_mm, width_mm, nx, ny)
    db = isotropic_bending_matrix(3000.0, 0.37, 3.0)
    dofs = element_dofs(mesh.triangles, 3)
    k = assemble_matrix(dkt_stiffness(mesh.nodes, mesh.triangles, db), dofs, 3 * mesh.n_nodes)
    f = assemble_vector(dkt_pressure_load(mesh.nodes, mesh.triangles, -1e-3), dofs,
                        3 * mesh.n_nodes)
    return k, f, clamped(mesh, "left").fixed_dofs, bending_rigid_modes(mesh.nodes), mesh


def test_ill_conditioned_but_well_supported_strip_is_solved_not_refused() -> None:
    # A 400 x 10 mm strip clamped at one end with 1 mm elements: the bending stiffness has a
    # condition number of order (L / h)^4 ~ 1e10, so even an exact-arithmetic-quality solve
    # leaves ||b - A x|| / ||b|| near 1e-6. It is fully supported and must be solved.
    k, f, fixed, modes, mesh = _clamped_strip(400.0, 10.0, 400, 10)
    sol = solve_system(k, f, fixed, rigid_modes=modes, mode_names=BENDING_MODE_NAMES,
                       method="direct")
    # Normwise backward error (Rigal and Gaches 1967; Higham, Accuracy and Stability of
    # Numerical Algorithms, 2nd ed., thm. 7.1) of a stable sparse LU: round-off level.
    assert sol.backward_error < 1e-13
    # Cantilever under a uniform load q b (Timoshenko, Strength of Materials): tip deflection
    # q b L^4 / (8 E I), I = b t^3 / 12, for a narrow beam; a plate strip held flat across is
    # stiffer by 1 / (1 - nu^2) (Timoshenko and Woinowsky-Krieger, ch. 1). A strip 10 mm wide
    # lies between, near the beam value.
    q, length, e, nu, t = 1e-3, 400.0, 3000.0, 0.37, 3.0
    beam = q * length**4 / (8 * e * t**3 / 12)
    tip = -sol.u[0::3].min()
    assert (1 - nu**2) * beam < tip < 1.005 * beam
    assert tip > 0.97 * beam


def test_rejects_unknown_method_and_conflicting_fixed_values() -> None:
    with pytest.raises(ValueError, match="method"):
        solve_system(_chain(1, 1), np.zeros(3), [0], rigid_modes=BAR_MODE, mode_names=BAR_NAME,
                     method="fast")
    with pytest.raises(ValueError, match="twice"):
        solve_system(_chain(1, 1), np.zeros(3), [0, 0], [0.0, 1.0], rigid_modes=BAR_MODE,
                     mode_names=BAR_NAME)


def test_direct_and_multigrid_agree_on_20k_unknowns() -> None:
    # Quadratic plane stress, a 140 x 70 mm aluminium plate clamped on the left, under its own
    # weight plus a tip load: 20 022 unknowns. The two solvers must give the same field.
    mesh = rectangle_mesh(140.0, 70.0, 70, 35)
    q = quadratic_mesh(mesh)
    d = isotropic_plane_stress(70000.0, 0.33)
    k = assemble_stiffness(q.nodes, q.tri6, d, 3.0)
    n = k.shape[0]
    assert 20_000 <= n <= 20_100
    f = body_force_vector(q.nodes, q.tri6, np.array([0.0, -2.7e-5]), 3.0)
    tip = q.nodes_of("right")
    f[2 * tip + 1] -= 5.0 / tip.size
    left = q.nodes_of("left")
    fixed = np.concatenate([2 * left, 2 * left + 1])
    modes = membrane_rigid_modes(q.nodes)
    direct = solve_system(k, f, fixed, rigid_modes=modes, mode_names=MEMBRANE_MODE_NAMES,
                          method="direct")
    amg = solve_system(k, f, fixed, rigid_modes=modes, mode_names=MEMBRANE_MODE_NAMES,
                       method="amg")
    assert amg.method == "amg" and direct.method == "direct"
    rel = np.linalg.norm(amg.u - direct.u) / np.linalg.norm(direct.u)
    assert rel < 1e-8
    # Smoothed aggregation with the rigid-body near-nullspace converges in few iterations
    # (pyamg's elasticity examples need tens, not hundreds; "common practice" bound).
    assert 0 < amg.iterations < 100
    # Equilibrium: the clamp carries the whole applied load.
    assert direct.equilibrium_residual < 1e-10
    assert amg.equilibrium_residual < 1e-9
    applied_y = f[1::2].sum()
    assert direct.reactions[1::2].sum() == pytest.approx(-applied_y, rel=1e-10)
