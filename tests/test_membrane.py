"""Plane-stress element building blocks: shape functions, quadrature, element matrices, loads,
stress recovery, material matrices, P2 nodes and structured meshes.

Expected values come from closed-form formulas worked in the test (sources named beside each)."""

from __future__ import annotations

from math import factorial

import numpy as np
import pytest

from platewright.fea.elements.constitutive import (
    isotropic_plane_stress,
    material_plane_stress,
    orthotropic_plane_stress,
)
from platewright.fea.elements.membrane import (
    NODE_POINTS,
    assemble_stiffness,
    body_force_vector,
    edge_load_vector,
    gauss_points,
    shape_functions,
    stiffness_matrices,
    von_mises,
)
from platewright.fea.elements.membrane_rigid import membrane_rigid_modes
from platewright.fea.elements.quadratic import quadratic_mesh
from platewright.fea.mesh.structured import (
    cook_membrane_mesh,
    elliptic_membrane_mesh,
    plate_with_hole_quarter_mesh,
    rectangle_mesh,
)
from platewright.geometry.model import Material


def _monomial_integral(a: int, b: int) -> float:
    # Integral of xi^a eta^b over the unit right triangle = a! b! / (a + b + 2)!
    # (the Dirichlet / beta-function integral, e.g. Zienkiewicz and Taylor, The Finite Element
    # Method vol. 1, the area-coordinate integration formula).
    return factorial(a) * factorial(b) / factorial(a + b + 2)


@pytest.mark.parametrize("k", [3, 6])
def test_shape_functions_are_nodal_and_partition_unity(k: int) -> None:
    # Lagrange property N_i(x_j) = delta_ij; sum N_i = 1 and sum dN_i = 0 at any point.
    n, dn = shape_functions(k, NODE_POINTS[k])
    np.testing.assert_allclose(n, np.eye(k), atol=1e-14)
    pts = np.random.default_rng(0).dirichlet([1, 1, 1], size=20)[:, 1:]
    n, dn = shape_functions(k, pts)
    np.testing.assert_allclose(n.sum(axis=1), 1.0, atol=1e-14)
    np.testing.assert_allclose(dn.sum(axis=1), 0.0, atol=1e-13)


def test_shape_function_gradient_matches_finite_differences() -> None:
    # Central differences of N (a check independent of the analytic derivative).
    p = np.array([[0.21, 0.37]])
    h = 1e-6
    _, dn = shape_functions(6, p)
    for j, e in enumerate(np.eye(2)):
        fd = (shape_functions(6, p + h * e)[0] - shape_functions(6, p - h * e)[0]) / (2 * h)
        np.testing.assert_allclose(dn[0, :, j], fd[0], atol=1e-8)


@pytest.mark.parametrize("k, degree", [(3, 1), (6, 2)])
def test_quadrature_is_exact_to_its_degree(k: int, degree: int) -> None:
    pts, w = gauss_points(k)
    for a in range(degree + 1):
        for b in range(degree + 1 - a):
            got = float(np.sum(w * pts[:, 0] ** a * pts[:, 1] ** b))
            assert got == pytest.approx(_monomial_integral(a, b), rel=1e-14)
    if k == 6:  # and not beyond: xi^3 is not integrated exactly (the rule has degree 2)
        assert float(np.sum(w * pts[:, 0] ** 3)) != pytest.approx(_monomial_integral(3, 0))


def test_constant_strain_triangle_matches_closed_form() -> None:
    # CST stiffness K = t A B^T D B with B = 1/(2A) [[y23, 0, y31, 0, y12, 0],
    # [0, x32, 0, x13, 0, x21], [x32, y23, x13, y31, x21, y12]], y_ij = y_i - y_j
    # (Logan, A First Course in the Finite Element Method, ch. 6; Cook et al., Concepts and
    # Applications of FEA, ch. 3).
    xy = np.array([[1.0, 0.5], [4.0, 1.0], [2.0, 3.5]])
    (x1, y1), (x2, y2), (x3, y3) = xy
    area = 0.5 * ((x2 - x1) * (y3 - y1) - (x3 - x1) * (y2 - y1))
    b = np.array(
        [
            [y2 - y3, 0, y3 - y1, 0, y1 - y2, 0],
            [0, x3 - x2, 0, x1 - x3, 0, x2 - x1],
            [x3 - x2, y2 - y3, x1 - x3, y3 - y1, x2 - x1, y1 - y2],
        ]
    ) / (2 * area)
    d = isotropic_plane_stress(200000.0, 0.29)
    t = 1.5
    expected = t * area * b.T @ d @ b
    got = stiffness_matrices(xy, np.array([[0, 1, 2]]), d, t)[0]
    np.testing.assert_allclose(got, expected, rtol=1e-13, atol=1e-9)


@pytest.mark.parametrize("k", [3, 6])
def test_element_matrices_are_symmetric_with_three_zero_modes(k: int) -> None:
    # A single free element has exactly the 3 rigid-body zero-energy modes (any complete
    # displacement element; Cook et al., ch. on element tests).
    xy = np.array([[0.0, 0.0], [3.0, 0.4], [1.1, 2.2]])
    if k == 6:
        xy = np.vstack([xy, 0.5 * (xy[[0, 1, 2]] + xy[[1, 2, 0]])])
    ke = stiffness_matrices(xy, np.arange(k)[None, :], isotropic_plane_stress(1.0, 0.3), 1.0)[0]
    np.testing.assert_allclose(ke, ke.T, atol=1e-14)
    ev = np.linalg.eigvalsh(ke)
    assert np.all(ev > -1e-12 * ev.max())
    assert np.count_nonzero(ev < 1e-10 * ev.max()) == 3
    np.testing.assert_allclose(ke @ membrane_rigid_modes(xy), 0.0, atol=1e-12)


def test_stiffness_scales_with_thickness_and_rejects_clockwise() -> None:
    mesh = rectangle_mesh(2.0, 1.0, 2, 1)
    d = isotropic_plane_stress(1.0, 0.3)
    k1 = stiffness_matrices(mesh.nodes, mesh.triangles, d, 1.0)
    k3 = stiffness_matrices(mesh.nodes, mesh.triangles, d, np.array([3.0, 3.0, 3.0, 3.0]))
    np.testing.assert_allclose(k3, 3.0 * k1)
    with pytest.raises(ValueError, match="clockwise"):
        stiffness_matrices(mesh.nodes, mesh.triangles[:, [0, 2, 1]], d, 1.0)


def test_edge_loads_are_consistent() -> None:
    p = np.array([[0.0, 0.0], [4.0, 0.0], [2.0, 0.0]])
    # Constant line load q on a linear edge: q L / 2 at each end.
    f = edge_load_vector(p, np.array([[0, 1]]), np.array([[0.0, 3.0]]))
    np.testing.assert_allclose(f[1::2], [6.0, 6.0, 0.0])
    # Quadratic edge: the Simpson weights L/6, L/6, 4L/6 (Zienkiewicz and Taylor vol. 1,
    # consistent loads of a quadratic side).
    f = edge_load_vector(p, np.array([[0, 1, 2]]), np.array([[3.0, 0.0]]))
    np.testing.assert_allclose(f[0::2], [2.0, 2.0, 8.0])
    # Linearly varying load q(x) = x on a linear edge: end forces L^2/6 and L^2/3
    # (integral of the hat functions times x, worked by hand).
    f = edge_load_vector(p, np.array([[0, 1]]), lambda x, n: np.column_stack([x[:, 0], 0 * x[:, 0]]))
    np.testing.assert_allclose(f[[0, 2]], [16.0 / 6.0, 16.0 / 3.0])


def test_normal_pressure_on_a_closed_boundary_has_no_resultant() -> None:
    # A uniform pressure on a closed contour has zero net force (divergence theorem).
    mesh = plate_with_hole_quarter_mesh(1.0, 3.0, 3.0, 8, 4)
    q = quadratic_mesh(mesh)
    edges = np.column_stack([mesh.boundary_edges, q.boundary_midpoints])
    f = edge_load_vector(q.nodes, edges, lambda x, n: -2.0 * n)
    assert abs(f[0::2].sum()) < 1e-12 and abs(f[1::2].sum()) < 1e-12
    # And it pushes inward on the right edge: resultant -2 x length 3 along x there.
    fr = edge_load_vector(q.nodes, q.edge_nodes_of("right"), lambda x, n: -2.0 * n)
    assert fr[0::2].sum() == pytest.approx(-6.0, rel=1e-13)


@pytest.mark.parametrize("k", [3, 6])
def test_body_force_lumps_match_area_coordinate_integrals(k: int) -> None:
    # Integral of N_i over a triangle from the area-coordinate formula
    # int L1^a L2^b L3^c dA = 2 A a! b! c! / (a + b + c + 2)!  (Zienkiewicz and Taylor vol. 1):
    # T3: A/3 each; T6: corners int L(2L - 1) = 2A(2 * 2/24 - 1/6) = 0, midsides 4 * 2A/24 = A/3.
    xy = np.array([[0.0, 0.0], [5.0, 1.0], [1.0, 4.0]])
    area = 0.5 * (5.0 * 4.0 - 1.0 * 1.0)
    if k == 6:
        xy = np.vstack([xy, 0.5 * (xy[[0, 1, 2]] + xy[[1, 2, 0]])])
        share = np.array([0, 0, 0, 1, 1, 1]) * area / 3.0
    else:
        share = np.full(3, area / 3.0)
    t, g = 2.0, -1e-5
    f = body_force_vector(xy, np.arange(k)[None, :], np.array([0.0, g]), t)
    np.testing.assert_allclose(f[1::2], share * t * g, atol=1e-18)
    np.testing.assert_allclose(f[0::2], 0.0, atol=1e-18)


def test_von_mises_textbook_states() -> None:
    # Uniaxial: sigma; pure shear: sqrt(3) tau; equal biaxial: sigma (von Mises criterion,
    # e.g. Dowling, Mechanical Behavior of Materials, ch. 7).
    s = np.array([[100.0, 0.0, 0.0], [0.0, 0.0, 10.0], [50.0, 50.0, 0.0], [-80.0, 0.0, 0.0]])
    np.testing.assert_allclose(von_mises(s), [100.0, 10.0 * np.sqrt(3.0), 50.0, 80.0])


def test_isotropic_plane_stress_matrix() -> None:
    # Plane stress Hooke's law (Timoshenko and Goodier ch. 2): D11 = E/(1-nu^2), D12 = nu D11,
    # D33 = G = E / (2 (1 + nu)); distinct from plane strain D11 = E(1-nu)/((1+nu)(1-2nu)).
    e, nu = 210000.0, 0.3
    d = isotropic_plane_stress(e, nu)
    assert d[0, 0] == pytest.approx(e / (1 - nu**2))
    assert d[0, 1] == pytest.approx(nu * e / (1 - nu**2))
    assert d[2, 2] == pytest.approx(e / (2 * (1 + nu)))
    assert d[0, 0] != pytest.approx(e * (1 - nu) / ((1 + nu) * (1 - 2 * nu)))
    with pytest.raises(ValueError):
        isotropic_plane_stress(e, 0.5)
    with pytest.raises(ValueError):
        isotropic_plane_stress(-1.0, 0.3)


def test_orthotropic_matrix_matches_laminate_formulas() -> None:
    # Reduced stiffness Q11 = E1/(1 - nu12 nu21), Q12 = nu12 E2/(1 - nu12 nu21),
    # Q22 = E2/(1 - nu12 nu21), Q66 = G12, and the transformed Qbar for a ply at angle theta
    # (Jones, Mechanics of Composite Materials, 2nd ed., ch. 2; equation numbers from memory).
    e1, e2, nu12, g12, th = 9000.0, 4500.0, 0.07, 600.0, np.radians(30.0)
    nu21 = nu12 * e2 / e1
    den = 1 - nu12 * nu21
    q11, q12, q22, q66 = e1 / den, nu12 * e2 / den, e2 / den, g12
    c, s = np.cos(th), np.sin(th)
    qb11 = q11 * c**4 + 2 * (q12 + 2 * q66) * s**2 * c**2 + q22 * s**4
    qb12 = (q11 + q22 - 4 * q66) * s**2 * c**2 + q12 * (s**4 + c**4)
    qb22 = q11 * s**4 + 2 * (q12 + 2 * q66) * s**2 * c**2 + q22 * c**4
    qb16 = (q11 - q12 - 2 * q66) * s * c**3 + (q12 - q22 + 2 * q66) * s**3 * c
    qb26 = (q11 - q12 - 2 * q66) * s**3 * c + (q12 - q22 + 2 * q66) * s * c**3
    qb66 = (q11 + q22 - 2 * q12 - 2 * q66) * s**2 * c**2 + q66 * (s**4 + c**4)
    expected = np.array([[qb11, qb12, qb16], [qb12, qb22, qb26], [qb16, qb26, qb66]])
    np.testing.assert_allclose(orthotropic_plane_stress(e1, e2, nu12, g12, th), expected,
                               rtol=1e-12)
    # Isotropic data (G = E / (2 (1 + nu))) is invariant under rotation.
    iso = orthotropic_plane_stress(1000.0, 1000.0, 0.25, 400.0, 0.7)
    np.testing.assert_allclose(iso, isotropic_plane_stress(1000.0, 0.25), rtol=1e-12, atol=1e-9)
    with pytest.raises(ValueError):
        orthotropic_plane_stress(1000.0, 100.0, 3.5, 50.0)


def _material(**kw) -> Material:
    base = dict(
        key="demo_sheet", name="demo sheet", youngs_modulus_mpa=3000.0, poisson_ratio=0.35,
        density_kg_m3=1200.0, strength_mpa=60.0, strength_kind="tensile", typical_kerf_mm=0.2,
        fit_allowance_mm={}, min_web_mm=None,
    )
    base.update(kw)
    return Material(**base)


def test_material_matrix_refuses_chlorine_bearing_stock() -> None:
    # Safety rule (REFERENCE.md "Never laser-cut"): chlorine-bearing plastics are refused.
    bad = _material(key="pvc_sheet", laser_safe=False,
                    refusal_reason="chlorine-bearing: releases hydrogen chloride when cut")
    with pytest.raises(ValueError, match="chlorine"):
        material_plane_stress(bad)
    np.testing.assert_allclose(material_plane_stress(_material()),
                               isotropic_plane_stress(3000.0, 0.35))
    ortho = _material(orthotropic={"E1_mpa": 9000.0, "E2_mpa": 4500.0, "nu12": 0.07,
                                   "G12_mpa": 600.0})
    np.testing.assert_allclose(material_plane_stress(ortho, 0.0)[0, 0], 9000.0 / (1 - 0.07**2 / 2))


def test_quadratic_nodes_follow_euler_count() -> None:
    # A triangulated disc has E = V + F - 1 edges (Euler's formula V - E + F = 1), so the P2
    # node count is V + E.
    mesh = plate_with_hole_quarter_mesh(1.0, 4.0, 6.0, 8, 5)
    q = quadratic_mesh(mesh)
    v, f = mesh.n_nodes, mesh.n_triangles
    assert q.nodes.shape == (v + (v + f - 1), 2)
    assert q.tri6.shape == (f, 6)
    p = q.nodes
    for j, (a, b) in enumerate(((0, 1), (1, 2), (2, 0))):
        np.testing.assert_allclose(p[q.tri6[:, 3 + j]], 0.5 * (p[q.tri6[:, a]] + p[q.tri6[:, b]]))
    np.testing.assert_allclose(
        p[q.boundary_midpoints],
        0.5 * (p[mesh.boundary_edges[:, 0]] + p[mesh.boundary_edges[:, 1]]),
    )
    assert set(q.nodes_of("hole")) >= set(mesh.nodes_of("hole"))


def _perimeter(mesh) -> float:
    e = mesh.boundary_edges
    return float(np.linalg.norm(mesh.nodes[e[:, 1]] - mesh.nodes[e[:, 0]], axis=1).sum())


def test_structured_meshes_have_the_right_area_and_tags() -> None:
    rect = rectangle_mesh(30.0, 20.0, 6, 4, origin_mm=(-15.0, -10.0))
    assert rect.area_mm2() == pytest.approx(600.0)
    assert _perimeter(rect) == pytest.approx(100.0)
    assert np.all(rect.areas_mm2() > 0)
    assert len(rect.edges_of("left")) == 4 and len(rect.edges_of("top")) == 6
    np.testing.assert_allclose(rect.nodes[rect.nodes_of("right"), 0], 15.0)
    # Cook's membrane: trapezoid with parallel sides 44 and 16 at x = 0 and 48: area 1440.
    cook = cook_membrane_mesh(5)
    assert cook.area_mm2() == pytest.approx(48.0 * (44.0 + 16.0) / 2.0)
    np.testing.assert_allclose(cook.nodes[cook.nodes_of("left"), 0], 0.0)
    # LE1 ring: quarter ellipse areas pi/4 (a b) difference; the polygon is a little short.
    le1 = elliptic_membrane_mesh(40, 6, grading_power=1.5)
    exact = np.pi / 4 * (3250.0 * 2750.0 - 2000.0 * 1000.0)
    assert le1.area_mm2() == pytest.approx(exact, rel=2e-3)
    assert np.all(le1.areas_mm2() > 0)
    outer = le1.nodes[le1.nodes_of("outer")]
    np.testing.assert_allclose((outer[:, 0] / 3250) ** 2 + (outer[:, 1] / 2750) ** 2, 1.0)
    # Quarter plate with a hole: W/2 x H/2 minus a quarter disc (polygonal, a bit more area).
    hole = plate_with_hole_quarter_mesh(2.0, 10.0, 25.0, 16, 8)
    exact = 10.0 * 25.0 - np.pi * 4.0 / 4.0
    assert hole.area_mm2() == pytest.approx(exact, rel=2e-3)
    assert hole.area_mm2() > exact
    assert np.all(hole.areas_mm2() > 0)
    arc = hole.nodes[hole.nodes_of("hole")]
    np.testing.assert_allclose(np.hypot(arc[:, 0], arc[:, 1]), 2.0)
    assert _perimeter(hole) == pytest.approx(10 + 25 + 8 + 23 + np.pi, rel=1e-3)
    # Glued patches share their nodes: the free plate has exactly three zero-energy modes.
    small = plate_with_hole_quarter_mesh(2.0, 10.0, 25.0, 4, 3)
    k = assemble_stiffness(small.nodes, small.triangles, isotropic_plane_stress(1.0, 0.3), 1.0)
    ev = np.linalg.eigvalsh(k.toarray())
    assert np.count_nonzero(ev < 1e-10 * ev.max()) == 3
