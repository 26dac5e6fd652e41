"""The plate analysis pipeline (fea.analysis, fea.mapping, fea.results, fea.plots, fea.vtu)
checked against closed-form results worked out here, each with its source named beside it."""

from __future__ import annotations

import dataclasses
import json
import math
from types import SimpleNamespace

import meshio
import numpy as np
import pytest
import yaml
from plate_factory import make_plate, rect_contour, round_hole

from platewright.fea.analysis import analyse_design, total_vehicle_mass_g
from platewright.fea.elements.quadratic import quadratic_mesh
from platewright.fea.loadcases.mapping import map_case
from platewright.fea.loadcases.parse import parse_loads
from platewright.fea.mesh.mesher import mesh_rings
from platewright.fea.mesh.plate_input import plate_rings
from platewright.fea.plots import plot_case
from platewright.fea.vtu import vtu_bytes, write_vtu
from platewright.geometry.design.loader import load_design_text
from platewright.geometry.model import Plate
from platewright.geometry.plate.build import build_plates
from platewright.geometry.plate.mass import mass_properties

#: Standard gravity, m/s^2 (3rd CGPM 1901), written here independently of the code.
G = 9.80665

# A 200 x 20 mm strip of 3 mm sheet, root at x = 0, free end at x = 200 (a cantilever).
L_MM, DEPTH_MM, T_MM, P_N = 200.0, 20.0, 3.0, 2.0
ROOT = {"at": "edge", "condition": "clamped", "region_mm": {"x_max": 0}}


def _design(cases: list[dict], components: list[dict] = ()) -> SimpleNamespace:
    """A stand-in for a loaded Design: only the fields the load-case parser reads."""
    return SimpleNamespace(load_cases=cases, components=list(components), references={},
                           line_of=lambda _path: None, source_path="test")


def _strip(nu: float = 0.37, **material) -> Plate:
    plate = make_plate(rect_contour(L_MM, DEPTH_MM, (L_MM / 2, 0.0)), thickness_mm=T_MM,
                       name="strip")
    return dataclasses.replace(plate, material=dataclasses.replace(
        plate.material, poisson_ratio=nu, **material))


def _run(plate: Plate, case: dict, components: list[dict] = (), **kw):
    case = {"name": "c", "plate": plate.name, **case}
    return analyse_design(_design([case], components), [plate], **kw)[0].cases[0]


def test_in_plane_cantilever_matches_timoshenko_goodier():
    # Timoshenko and Goodier, Theory of Elasticity, cantilever under end shear P (plane
    # stress): v(L) = P L^3 / (3 E I) + (4 + 5 nu) P D^2 L / (24 E I), I = t D^3 / 12.
    # Here the root is fully clamped and the end load uniform rather than parabolic; for a
    # long beam (L / D = 10) both change the tip deflection by well under 1 % (Saint-Venant),
    # so 1.5 % is asked for.
    plate = _strip()
    e, nu = plate.material.youngs_modulus_mpa, plate.material.poisson_ratio
    r = _run(plate, {"family": "in_plane", "self_weight": False, "supports": [ROOT],
                     "loads": [{"type": "edge", "region_mm": {"x_min": L_MM},
                                "force_n": [0, -P_N]}]}, size_mm=4.0)
    i = T_MM * DEPTH_MM**3 / 12.0
    expected = P_N * L_MM**3 / (3 * e * i) + (4 + 5 * nu) * P_N * DEPTH_MM**2 * L_MM / (24 * e * i)
    assert r.max_deflection_mm == pytest.approx(expected, rel=0.015)
    assert r.at_mm[0] == pytest.approx(L_MM)
    # The root corners, where the clamp meets the free edges, are singular points: the design
    # stress leaves out a disc of one sheet thickness round them. Outside it, on the edge, it
    # is the beam's sigma = M c / I = P (L - x) (D / 2) / I at its own x (Timoshenko and
    # Goodier; the clamp changes the field near the root by ~2 %, Saint-Venant).
    assert {p.at_mm for p in r.singular_points} == {(0.0, DEPTH_MM / 2), (0.0, -DEPTH_MM / 2)}
    x, y = r.von_mises_at_mm
    assert math.hypot(x, abs(y) - DEPTH_MM / 2) >= r.exclusion_radius_mm == T_MM
    assert abs(y) == pytest.approx(DEPTH_MM / 2)
    assert r.max_von_mises_mpa == pytest.approx(P_N * (L_MM - x) * (DEPTH_MM / 2) / i, rel=0.03)


def test_bending_strip_without_poisson_effect_matches_beam_theory():
    # Plate strip in bending (Timoshenko and Woinowsky-Krieger, Theory of Plates and Shells,
    # ch. 1, cylindrical bending): with nu = 0 the plate rigidity D = E t^3 / 12 times the
    # width b equals the beam's E I, and a strip under a uniform end line load bends
    # cylindrically, so the Euler-Bernoulli tip deflection P L^3 / (3 D b) is the exact
    # Kirchhoff answer; the DKT element converges to it (2 % asked for at 4 mm elements).
    plate = _strip(nu=0.0)
    e = plate.material.youngs_modulus_mpa
    r = _run(plate, {"family": "bending", "self_weight": False, "supports": [ROOT],
                     "loads": [{"type": "edge", "region_mm": {"x_min": L_MM},
                                "force_n": [0, 0, -P_N]}]}, size_mm=4.0)
    d = e * T_MM**3 / 12.0
    assert r.max_deflection_mm == pytest.approx(P_N * L_MM**3 / (3 * d * DEPTH_MM), rel=0.02)
    # Root moment P L spread over the width; surface stress 6 M / t^2 (same sources).
    sigma = 6.0 * (P_N * L_MM / DEPTH_MM) / T_MM**2
    root = r.fields.nodes_mm[:, 0] < 1e-9
    mid_root = root & (np.abs(r.fields.nodes_mm[:, 1]) < 5.0)
    assert r.fields.von_mises_mpa[mid_root] == pytest.approx(sigma, rel=0.05)


def test_bending_strip_with_poisson_effect_lies_between_beam_and_plate_strip():
    # With nu > 0 a strip of finite width bends anticlastically: it is stiffer than a narrow
    # beam (E I, deflection P L^3 / (3 E I)) and softer than a plate strip held flat across
    # (D b, deflection (1 - nu^2) times that) - Timoshenko and Woinowsky-Krieger, ch. 1-2.
    # A narrow strip (b / L = 0.1) lies close to the beam value.
    plate = _strip(nu=0.37)
    e, nu = plate.material.youngs_modulus_mpa, plate.material.poisson_ratio
    r = _run(plate, {"family": "bending", "self_weight": False, "supports": [ROOT],
                     "loads": [{"type": "edge", "region_mm": {"x_min": L_MM},
                                "force_n": [0, 0, -P_N]}]}, size_mm=4.0)
    beam = P_N * L_MM**3 / (3 * e * DEPTH_MM * T_MM**3 / 12.0)
    assert (1 - nu**2) * beam * 0.99 < r.max_deflection_mm < beam * 1.01
    assert r.max_deflection_mm > 0.95 * beam


def test_simply_supported_square_under_self_weight_matches_navier_coefficients():
    # Timoshenko and Woinowsky-Krieger, Theory of Plates and Shells, table 8 (also Roark,
    # Table 11.4), square plate side a, simply supported, uniform q: w_max = 0.00406 q a^4 / D
    # (independent of nu), centre moment Mx = My = 0.0479 q a^2 for nu = 0.3.
    a = 100.0
    plate = make_plate(rect_contour(a, a), thickness_mm=T_MM, name="square")
    plate = dataclasses.replace(plate, material=dataclasses.replace(plate.material,
                                                                    poisson_ratio=0.3))
    m = plate.material
    r = _run(plate, {"family": "bending", "supports": [{"at": "edge", "condition": "pinned"}],
                     "limits": {"span_ratio": 300}}, size_mm=5.0)
    q = m.density_kg_m3 * 1e-9 * G * T_MM  # weight per area, N/mm^2
    d = m.youngs_modulus_mpa * T_MM**3 / (12 * (1 - 0.3**2))
    assert r.max_deflection_mm == pytest.approx(0.00406 * q * a**4 / d, rel=0.01)
    assert math.hypot(*r.at_mm) < 5.0  # at the centre, within one element
    centre = int(np.argmin(np.hypot(*r.fields.nodes_mm.T)))
    # Equal biaxial moments: von Mises = 6 M / t^2.
    assert r.fields.von_mises_mpa[centre] == pytest.approx(6 * 0.0479 * q * a**2 / T_MM**2,
                                                           rel=0.01)
    assert r.applied_force_n[2] == pytest.approx(-q * a * a, rel=1e-9)
    # Span: twice the largest distance to a support = a for a square held on all edges.
    assert r.span_mm == pytest.approx(a, rel=0.06)
    assert r.limit_mm == pytest.approx(r.span_mm / 300)


def test_collision_force_worked_by_hand():
    # Energy balance of a linear spring (any mechanics text): m v^2 / 2 = F^2 / (2 k), so
    # F = v sqrt(k m). v = 1.5 m/s, k = 40 N/mm = 40 000 N/m, m = 1.2 kg:
    # F = 1.5 * sqrt(48 000) = 328.634 N; bumper travel F / k = 8.216 mm.
    plate = _strip()
    r = _run(plate, {"family": "in_plane", "supports": [ROOT],
                     "collision": {"speed_m_s": 1.5, "bumper_stiffness_n_per_mm": 40,
                                   "region_mm": {"x_min": L_MM}, "direction": [-1, 0],
                                   "vehicle_mass_g": 1200}}, size_mm=5.0)
    force = 1.5 * math.sqrt(40_000.0 * 1.2)
    assert r.collision.force_n == pytest.approx(force, rel=1e-12)
    assert r.collision.force_n == pytest.approx(328.634, abs=1e-3)
    assert r.collision.bumper_travel_mm == pytest.approx(force / 40.0, rel=1e-12)
    assert r.collision.deceleration_g == pytest.approx(force / (1.2 * G), rel=1e-12)
    assert r.applied_force_n[0] == pytest.approx(-force, rel=1e-12)
    assert r.reaction_force_n[0] == pytest.approx(force, rel=1e-9)
    # Axial bar: u = F L / (E A) (Hooke's law), end displacement in compression.
    e = plate.material.youngs_modulus_mpa
    assert r.max_deflection_mm == pytest.approx(force * L_MM / (e * DEPTH_MM * T_MM), rel=0.02)


def test_default_vehicle_mass_counts_quantity_and_components():
    # Rectangle 200 x 20 mm x 3 mm of 1185 kg/m^3 = 1.185e-3 g/mm^3: 14.22 g per plate.
    plate = dataclasses.replace(_strip(), quantity=2)
    comps = parse_loads(_design([], [{"id": "cell", "plate": "strip", "at_mm": [50, 0],
                                      "mass_g": 100}]), [plate]).components
    hand = 2 * 200 * 20 * 3 * 1.185e-3 + 100
    assert total_vehicle_mass_g([plate], comps) == pytest.approx(hand, rel=1e-9)


def test_reactions_balance_weights_and_loads():
    # Statics: the support reactions balance the applied weights (component weight x g_factor
    # plus self-weight rho t A g x g_factor, worked by hand here).
    holes = tuple(round_hole(f"post{i}", (sx * 60.0, sy * 40.0), 3.4)
                  for i, (sx, sy) in enumerate([(1, 1), (1, -1), (-1, 1), (-1, -1)]))
    plate = make_plate(rect_contour(160, 110), holes, thickness_mm=3.0, name="deck")
    comps = [{"id": "cell", "plate": "deck", "at_mm": [0, 0], "mass_g": 250,
              "footprint_mm": [60, 30]},
             {"id": "box", "plate": "deck", "feature": "post0", "mass_g": 40}]
    r = _run(plate, {"family": "bending", "g_factor": 2.0,
                     "supports": [{"at": "bores", "features": ["post0", "post1", "post2",
                                                              "post3"]}],
                     "loads": [{"type": "component", "component": "cell"},
                               {"type": "component", "component": "box"},
                               {"type": "force", "feature": "post2", "force_n": [0, 0, -3]}]},
             comps, size_mm=6.0)
    area = 160 * 110 - 4 * math.pi * 1.7**2  # the mesh follows the holes within chord error
    weight = 2.0 * G * (0.290 + 1185e-9 * 3.0 * area) + 3.0
    assert r.reaction_force_n[2] == pytest.approx(weight, rel=1e-4)
    assert r.applied_force_n[2] == pytest.approx(-r.reaction_force_n[2], rel=1e-9)
    assert r.equilibrium_residual < 1e-9


def test_elastic_bores_under_a_stiff_plate_share_the_load():
    # A plate much stiffer than its four springs moves as a rigid body: a central load P is
    # shared equally (symmetry), so every spring of stiffness k deflects P / (4 k) (statics).
    steel = {"youngs_modulus_mpa": 200_000.0, "poisson_ratio": 0.29}
    holes = tuple(round_hole(f"p{i}", (sx * 40.0, sy * 40.0), 4.0)
                  for i, (sx, sy) in enumerate([(1, 1), (1, -1), (-1, 1), (-1, -1)]))
    holes += (round_hole("mid", (0.0, 0.0), 6.0),)
    plate = make_plate(rect_contour(100, 100), holes, thickness_mm=10.0, name="sq")
    plate = dataclasses.replace(plate, material=dataclasses.replace(plate.material, **steel))
    k, p = 100.0, 10.0
    r = _run(plate, {"family": "bending", "self_weight": False,
                     "supports": [{"at": "bores", "features": ["p0", "p1", "p2", "p3"],
                                   "mode": "elastic", "stiffness_n_per_mm": k}],
                     "loads": [{"type": "force", "feature": "mid", "force_n": [0, 0, -p]}]})
    assert r.max_deflection_mm == pytest.approx(p / (4 * k), rel=0.01)
    assert r.reaction_force_n[2] == pytest.approx(p, rel=1e-6)


def _mapped(plate: Plate, case: dict):
    loads = parse_loads(_design([{"name": "m", "plate": plate.name, **case}]), [plate])
    mesh = mesh_rings(plate_rings(plate, 6.0), 6.0)
    quad = quadratic_mesh(mesh) if case["family"] == "in_plane" else None
    mapped = map_case(loads.cases[0], plate, mesh, quad, components={}, vehicle_mass_g=1.0)
    return mapped, (mesh.nodes if quad is None else quad.nodes)


def test_moments_on_a_bore_have_the_asked_resultant():
    # Statics of a force system: the nodal forces of a pure moment sum to zero force and to the
    # asked moment, M = sum r x f (right-hand rule), about any point.
    plate = make_plate(rect_contour(120, 80), (round_hole("hub", (20.0, 5.0), 12.0),),
                       name="deck")
    mb, xy = _mapped(plate, {"family": "bending", "self_weight": False, "supports": [ROOT],
                             "loads": [{"type": "moment", "feature": "hub",
                                        "moment_n_mm": [300, -200, 0]}]})
    fz = mb.f[0::3]
    assert abs(fz.sum()) < 1e-9
    assert (fz * xy[:, 1]).sum() == pytest.approx(300.0, rel=1e-9)  # Mx = sum y Fz
    assert (-fz * xy[:, 0]).sum() == pytest.approx(-200.0, rel=1e-9)  # My = -sum x Fz
    mi, xy = _mapped(plate, {"family": "in_plane", "self_weight": False, "supports": [ROOT],
                             "loads": [{"type": "moment", "feature": "hub",
                                        "moment_n_mm": [0, 0, 400]}]})
    fx, fy = mi.f[0::2], mi.f[1::2]
    assert abs(fx.sum()) < 1e-9 and abs(fy.sum()) < 1e-9
    assert (xy[:, 0] * fy - xy[:, 1] * fx).sum() == pytest.approx(400.0, rel=1e-9)


def test_orthotropic_grain_direction_follows_timoshenko_beam():
    # Timoshenko beam (bending plus shear, shear coefficient 5/6 for a rectangle; Timoshenko,
    # Phil. Mag. 41 (1921)): w = P L^3 / (3 E_x I) + P L / (5/6 G A), with E_x the modulus
    # along the beam: E1 with the grain along x, E2 with it across (grain_deg 90).
    e1, e2, g12 = 10_000.0, 2_000.0, 1_500.0
    plate = _strip(orthotropic={"E1_mpa": e1, "E2_mpa": e2, "nu12": 0.3, "G12_mpa": g12})
    i, area = T_MM * DEPTH_MM**3 / 12, T_MM * DEPTH_MM
    for grain, ex in ((0.0, e1), (90.0, e2)):
        r = _run(plate, {"family": "in_plane", "self_weight": False, "grain_deg": grain,
                         "supports": [ROOT], "loads": [{"type": "edge",
                                                        "region_mm": {"x_min": L_MM},
                                                        "force_n": [0, -P_N]}]}, size_mm=4.0)
        expected = P_N * L_MM**3 / (3 * ex * i) + P_N * L_MM / (5 / 6 * g12 * area)
        assert r.max_deflection_mm == pytest.approx(expected, rel=0.02)
        assert r.isotropic_properties is False
    assert _run(_strip(), {"family": "bending", "supports": [ROOT]}).isotropic_properties


def test_limits_safety_factor_and_report_contract():
    plate = _strip()
    case = {"family": "bending", "self_weight": False, "supports": [ROOT],
            "loads": [{"type": "edge", "region_mm": {"x_min": L_MM}, "force_n": [0, 0, -P_N]}],
            "limits": {"max_deflection_mm": 1.0, "min_safety_factor": 2.0}}
    r = _run(plate, case)
    # Definition of the safety factor used by the project: strength / max von Mises.
    assert r.safety_factor == pytest.approx(plate.material.strength_mpa / r.max_von_mises_mpa)
    # P L^3 / (3 E I) is about 40 mm here (beam theory), so the 1 mm limit must fail.
    assert not r.passes
    assert [(c.name, c.passes) for c in r.checks] == [("max_deflection_mm", False),
                                                      ("min_safety_factor", True)]
    rep = r.to_report()
    for key in ("name", "family", "max_deflection_mm", "at_mm", "limit_mm", "max_von_mises_mpa",
                "safety_factor", "passes", "dofs", "equilibrium_residual"):
        assert key in rep  # the fea section of report.json, DESIGN.md schema 1
    json.dumps(rep, allow_nan=False)
    assert rep["limit_mm"] == 1.0 and rep["passes"] is False


def test_runs_are_deterministic():
    plate = _strip()
    case = {"family": "in_plane", "g_direction": [1, 0], "g_factor": 5.0, "supports": [ROOT]}
    a = _run(plate, case).to_report()
    b = _run(plate, case).to_report()
    a.pop("timings_s")
    b.pop("timings_s")
    assert a == b


def test_plots_and_vtu_read_back(tmp_path):
    plate = _strip()
    r = _run(plate, {"family": "bending", "supports": [ROOT]}, size_mm=5.0)
    pngs = plot_case(r, dpi=40)
    assert set(pngs) == {"deflection", "von_mises"}
    assert all(p.startswith(b"\x89PNG\r\n\x1a\n") for p in pngs.values())  # PNG signature
    back = meshio.read(write_vtu(r, tmp_path / "case.vtu"))
    np.testing.assert_allclose(back.points[:, :2], r.fields.nodes_mm)
    np.testing.assert_allclose(back.point_data["von_mises_mpa"], r.fields.von_mises_mpa)
    np.testing.assert_array_equal(back.cells_dict["triangle"], r.fields.triangles)
    assert vtu_bytes(r).startswith(b"<?xml")


# Suggested load cases for copies of the bundled starter designs (the starters themselves are
# not changed). Each expected total load is worked by hand from the masses: g_factor x g x
# (components + plate mass), the plate mass from the exact (Green's theorem) mass module,
# independent of the mesh; a collision F = v sqrt(k m) as in test_collision_force_worked_by_hand.
STARTERS = yaml.safe_load("""
two_wheel_base.yaml: |
  components:
    - {id: battery, plate: deck, at_mm: [-22, 0], mass_g: 350, footprint_mm: [70, 35]}
    - {id: controller, plate: deck, feature: board, mass_g: 60}
  load_cases:
    - name: carry_3g
      plate: deck
      family: bending
      g_factor: 3.0
      supports:
        - {at: mount, feature: motor_left}
        - {at: mount, feature: motor_right}
        - {at: bores, features: [caster], mode: elastic, stiffness_n_per_mm: 500}
      loads:
        - {type: component, component: battery}
        - {type: component, component: controller}
      limits: {span_ratio: 300, min_safety_factor: 2.0}
    - name: bump
      plate: deck
      family: in_plane
      supports:
        - {at: mount, feature: motor_left}
        - {at: mount, feature: motor_right}
      collision: {speed_m_s: 1.5, bumper_stiffness_n_per_mm: 40, region_mm: {x_min: 80},
                  direction: [-1, 0]}
      limits: {min_safety_factor: 3.0}
four_wheel_deck.yaml: |
  components:
    - {id: battery, plate: deck, at_mm: [-40, 0], mass_g: 500, footprint_mm: [80, 40]}
    - {id: controller, plate: deck, feature: board, mass_g: 80}
  load_cases:
    - name: carry_3g
      plate: deck
      family: bending
      g_factor: 3.0
      supports:
        - {at: bores, features: [bore_rear_left, bore_rear_right, bore_front_left, bore_front_right]}
      loads:
        - {type: component, component: battery}
        - {type: component, component: controller}
      limits: {max_deflection_mm: 0.5, span_ratio: 300, min_safety_factor: 2.0}
    - name: bumper_hit
      plate: deck
      family: in_plane
      supports:
        - {at: bores, features: [bore_rear_left, bore_rear_right]}
      collision: {speed_m_s: 2.0, bumper_stiffness_n_per_mm: 60, feature: bumper,
                  direction: [-1, 0]}
      limits: {min_safety_factor: 3.0}
side_rails.yaml: |
  load_cases:
    - name: wheel_loads_3g
      plate: rail_right
      family: in_plane
      g_factor: 3.0
      g_direction: [0, -1]
      supports:
        - {at: mount, feature: deck_screws}
      loads:
        - {type: force, feature: bore_rear, force_n: [0, 7.5]}
        - {type: force, feature: bore_front, force_n: [0, 7.5]}
      limits: {max_deflection_mm: 0.2, min_safety_factor: 3.0}
    - name: side_push
      plate: rail_left
      family: bending
      self_weight: false            # the rail stands upright: its weight acts in its plane
      supports:
        - {at: mount, feature: deck_screws}
      loads:
        - {type: force, feature: trim_front, force_n: [0, 0, -10]}
      limits: {max_deflection_mm: 1.0, min_safety_factor: 2.0}
""")


def _hand_loads(masses: dict[str, float]) -> dict[str, tuple[int, float]]:
    """Case name -> (axis of the total applied force, its value in N), worked by hand."""
    two = four = masses.get("deck", 0.0)  # each deck design has one plate called deck
    return {
        "two_wheel_base.yaml": {
            "carry_3g": (2, -3 * G * 1e-3 * (350 + 60 + two)),
            "bump": (0, -1.5 * math.sqrt(40 * (two + 410)))},
        "four_wheel_deck.yaml": {
            "carry_3g": (2, -3 * G * 1e-3 * (500 + 80 + four)),
            "bumper_hit": (0, -2.0 * math.sqrt(60 * (four + 580)))},
        "side_rails.yaml": {
            "wheel_loads_3g": (1, 15.0 - 3 * G * 1e-3 * masses.get("rail_right", 0.0)),
            "side_push": (2, -10.0)},
    }


@pytest.mark.parametrize("starter", sorted(STARTERS))
def test_starter_design_copies_with_suggested_load_cases(starter):
    from platewright.geometry.plate.build import list_templates

    path = next(p for p in list_templates() if p.name == starter)
    data = yaml.safe_load(path.read_text(encoding="utf-8"))
    data.update(yaml.safe_load(STARTERS[starter]))
    design = load_design_text(yaml.safe_dump(data, sort_keys=False), starter)
    plates = build_plates(design)
    masses = {p.name: mass_properties(p).mass_g for p in plates}
    seen: list[str] = []
    res = analyse_design(design, plates, progress=seen.append)
    hand = _hand_loads(masses)[starter]
    cases = [c for pa in res for c in pa.cases]
    assert sorted(c.name for c in cases) == sorted(hand) and len(seen) == len(cases)
    for c in cases:
        axis, value = hand[c.name]
        assert c.applied_force_n[axis] == pytest.approx(value, rel=2e-3), c.name
        assert c.reaction_force_n[axis] == pytest.approx(-value, rel=2e-3), c.name
        assert c.equilibrium_residual < 1e-9


_DETERMINISM_SCRIPT = """
import json, sys
from types import SimpleNamespace
sys.path.insert(0, sys.argv[1])
from plate_factory import make_plate, rect_contour, round_hole
from platewright.fea.analysis import analyse_design
holes = (round_hole("a", (-20.0, 0.0), 6.0), round_hole("b", (-14.5, 0.0), 6.0))
plate = make_plate(rect_contour(100, 60), holes, name="deck")
case = {"name": "c", "plate": "deck", "family": "bending",
        "supports": [{"at": "bores", "features": ["a"]},
                     {"at": "edge", "condition": "pinned", "region_mm": {"x_min": 50}}]}
design = SimpleNamespace(load_cases=[case], components=[], references={},
                         line_of=lambda _p: None)
rep = analyse_design(design, [plate], size_mm=6.0)[0].cases[0].to_report()
rep.pop("timings_s")
print(json.dumps(rep, sort_keys=True))
"""


def test_results_do_not_depend_on_hash_seed():
    # Determinism across processes: string hashing is randomised per process (PYTHONHASHSEED),
    # so any order taken from a set would show up here. Two touching holes give a merged tag.
    import os
    import subprocess
    import sys
    from pathlib import Path

    here = str(Path(__file__).parent)
    outs = []
    for seed in ("1", "2"):
        env = {**os.environ, "PYTHONHASHSEED": seed}
        run = subprocess.run([sys.executable, "-c", _DETERMINISM_SCRIPT, here], env=env,
                             capture_output=True, text=True, check=True, timeout=120)
        outs.append(run.stdout)
    assert outs[0] == outs[1]
    assert "share one mesh edge" in outs[0]
