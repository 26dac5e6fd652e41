"""The stiffness budget: least mass under one deflection budget per load case, and keep-outs by
what a feature does.

Sources of the checks (named beside each):
- Svanberg, "The method of moving asymptotes", Int. J. Numer. Meth. Eng. 24 (1987) 359-373:
  the five-segment cantilever example, optimum recalled from memory and confirmed in the test by
  its own Karush-Kuhn-Tucker conditions worked here;
- Andreassen et al., "Efficient topology optimization in MATLAB using 88 lines of code" (2011):
  the half MBB beam, through the numpy re-implementation of the paper's procedure in
  tests/test_topopt.py (an independent program solving the same problem the other way round:
  least compliance at a volume);
- scikit-fem (a general-purpose FE library) for the strain energy of each element of a solid
  plane-stress bar, independent of platewright's assembly;
- Lame's thick-walled ring with a rigid insert (Timoshenko and Goodier, Theory of Elasticity;
  Shigley, press and shrink fits), worked in the test;
- a fresh, independent run of the real-geometry analysis (fea.analysis.analyse_plate) on every
  holed plate, for the budget itself.

The plates are invented test parts of a fictional rover.
"""

from __future__ import annotations

import argparse
import csv
import io
import json
import math

import numpy as np
import pytest
import shapely
import skfem
from plate_factory import make_plate, rect_contour
from skfem.helpers import ddot, sym_grad, trace
from test_lighten import FAST, SECTION, TRAY
from test_topopt import _design, _paper_ke, _top88

from platewright.cli.commands.lighten import LightenCommand
from platewright.cli.commands.sweep import SweepCommand
from platewright.fea.analysis import analyse_plate
from platewright.fea.lighten.budget import case_budgets
from platewright.fea.lighten.design_region import (
    LighteningSettings,
    design_region,
    lightening_section,
    settings_from_mapping,
)
from platewright.fea.lighten.keep_outs import ROLES, press_fit_ring_mm
from platewright.fea.lighten.mbb_grid import mbb_model
from platewright.fea.lighten.min_mass import minimise_mass
from platewright.fea.lighten.mma import MMAState, mma_update
from platewright.fea.lighten.pipeline import lighten_plate
from platewright.fea.lighten.plate_density import PlateDensityModel
from platewright.fea.lighten.simp import TopOptSettings
from platewright.fea.loadcases.parse import parse_loads
from platewright.fea.mesh.structured import rectangle_mesh
from platewright.fea.mesh.triangles import Mesh
from platewright.geometry.design import schema
from platewright.geometry.design.loader import load_design
from platewright.geometry.plate.build import list_templates
from platewright.geometry.plate.pipeline import build_design

TEMPLATES = {p.stem: p for p in list_templates()}

# ------------------------------------------------------------------------------------------ MMA


def test_mma_reaches_the_published_cantilever_optimum():
    # Svanberg (1987), cantilever of five hollow square segments: minimise 0.0624 sum(x)
    # subject to 61/x1^3 + 37/x2^3 + 19/x3^3 + 7/x4^3 + 1/x5^3 <= 1, 1 <= x <= 10, start 5.
    # Optimum (from memory): x = (6.016, 5.309, 4.494, 3.502, 2.153), objective 1.340.
    c = np.array([61.0, 37.0, 19.0, 7.0, 1.0])
    x = np.full(5, 5.0)
    state = MMAState()
    for _ in range(40):
        g = np.array([(c / x**3).sum() - 1.0])
        x = mma_update(x, np.full(5, 0.0624), g, (-3.0 * c / x**4)[None], np.ones(5),
                       np.full(5, 10.0), state, move=1.0)
    np.testing.assert_allclose(x, [6.016, 5.309, 4.494, 3.502, 2.153], atol=2e-3)
    assert 0.0624 * x.sum() == pytest.approx(1.340, abs=1e-3)
    # KKT, worked here: the constraint is active and 0.0624 = lam * 3 c_j / x_j^4 for every j
    # with one multiplier lam > 0.
    assert (c / x**3).sum() == pytest.approx(1.0, abs=1e-6)
    lam = 0.0624 * x**4 / (3.0 * c)
    assert np.ptp(lam) / lam.mean() < 1e-4 and lam.min() > 0.0


# ------------------------------------------------------------------------------- the MBB beam

def _paper_compliance(x_phys: np.ndarray, nelx: int, nely: int) -> float:
    """Compliance of the half MBB beam at x_phys, assembled as in the 88-line listing (column-
    major element order, its edofMat), solved with a dense solver: independent of fea.lighten."""
    ke = _paper_ke(0.3)
    nodenrs = np.arange((1 + nelx) * (1 + nely)).reshape(1 + nelx, 1 + nely).T
    edof_vec = (2 * nodenrs[:-1, :-1] + 2).reshape(-1, order="F")
    edof = edof_vec[:, None] + np.array([0, 1, 2 * nely + 2, 2 * nely + 3, 2 * nely,
                                         2 * nely + 1, -2, -1])
    ndof = 2 * (nelx + 1) * (nely + 1)
    k = np.zeros((ndof, ndof))
    stiff = 1e-9 + x_phys**3 * (1.0 - 1e-9)
    for e in range(nelx * nely):
        k[np.ix_(edof[e], edof[e])] += stiff[e] * ke
    f = np.zeros(ndof)
    f[1] = -1.0
    fixed = np.union1d(np.arange(0, 2 * (nely + 1), 2), [ndof - 1])
    free = np.setdiff1d(np.arange(ndof), fixed)
    u = np.zeros(ndof)
    u[free] = np.linalg.solve(k[np.ix_(free, free)], f[free])
    return float(f @ u)


def test_least_mass_mbb_meets_its_budget_and_matches_the_88_line_optimum():
    # The 88-line example top88(60, 20, 0.5, 3, 1.5, 2) gives a compliance c*; asking for the
    # least volume at the budget c* / c(solid) - 1 is the same problem the other way round, so
    # its volume must come out near 0.5 and its compliance within the budget.
    hist, _ = _top88(60, 20, 0.5, 3.0, 1.5, 2)
    model = mbb_model(60, 20)
    c_solid = _paper_compliance(np.ones(1200), 60, 20)
    budget = hist[-1] / c_solid - 1.0
    res = minimise_mass(model, budget, TopOptSettings(rmin_mm=1.5, max_iter=250))
    c_ours = _paper_compliance(res.densities, 60, 20)  # the listing's own FE, not ours
    assert c_ours <= (1.0 + budget) * c_solid * (1.0 + 1e-3)  # met within the stated tolerance
    assert res.volume_fraction == pytest.approx(0.5, abs=0.02)
    # the independent procedure at the volume we report finds (nearly) the same compliance
    hist_at, _ = _top88(60, 20, res.volume_fraction, 3.0, 1.5, 2)
    assert c_ours == pytest.approx(hist_at[-1], rel=0.03)
    assert res.measure_ratio[0] == pytest.approx(c_ours / c_solid, rel=1e-9)


# ---------------------------------------------------------------------- budget 0: dead material

def _bar_model():
    bar = make_plate(rect_contour(200, 40, (100, 20)), thickness_mm=3.0, name="bar")
    cases = parse_loads(_design([{
        "name": "pull", "plate": "bar", "family": "in_plane", "self_weight": False,
        "supports": [{"at": "edge", "condition": "clamped", "region_mm": {"x_max": 0}}],
        "loads": [{"type": "force", "at_mm": [100, 20], "force_n": [50, 0]}]}]), [bar]).cases
    m = rectangle_mesh(200.0, 40.0, 50, 10)
    mesh = Mesh(m.nodes, m.triangles, m.boundary_edges, np.zeros(len(m.boundary_edges), int),
                (bar.outline.id,))
    return bar, mesh, PlateDensityModel(bar, mesh, cases)


def _skfem_energy_density(bar, mesh) -> np.ndarray:
    """Strain energy per unit volume of every element of the solid bar (scikit-fem, P1 plane
    stress, left edge clamped, 50 N along x at the node nearest (100, 20)), N mm / mm^3."""
    m = bar.material
    e, nu, t = m.youngs_modulus_mpa, m.poisson_ratio, bar.thickness_mm
    lam, mu = e * nu / (1 - nu**2), e / (2 * (1 + nu))
    sk = skfem.MeshTri(mesh.nodes.T.copy(), mesh.triangles.T.copy())
    basis = skfem.Basis(sk, skfem.ElementVector(skfem.ElementTriP1()))

    @skfem.BilinearForm
    def stiffness(u, v, w):
        eu, ev = sym_grad(u), sym_grad(v)
        return t * (2 * mu * ddot(eu, ev) + lam * trace(eu) * trace(ev))

    k = stiffness.assemble(basis)
    f = np.zeros(basis.N)
    node = int(np.argmin(np.hypot(mesh.nodes[:, 0] - 100, mesh.nodes[:, 1] - 20)))
    f[basis.nodal_dofs[0, node]] = 50.0
    u = skfem.solve(*skfem.condense(k, f, D=basis.get_dofs(lambda p: np.isclose(p[0], 0.0)).all()))

    @skfem.Functional
    def energy(w):
        eu = sym_grad(w["u"])
        return 0.5 * (2 * mu * ddot(eu, eu) + lam * trace(eu) ** 2)  # per unit volume

    per_area = energy.elemental(basis, u=basis.interpolate(u))  # integral over each element
    p = mesh.nodes[mesh.triangles]
    area = 0.5 * np.abs((p[:, 1, 0] - p[:, 0, 0]) * (p[:, 2, 1] - p[:, 0, 1])
                        - (p[:, 2, 0] - p[:, 0, 0]) * (p[:, 1, 1] - p[:, 0, 1]))
    return per_area / area


def test_budget_zero_removes_only_material_that_carries_no_load():
    # A bar clamped at x = 0 and pulled at its middle: beyond the load (x > 100 mm) the bar
    # carries (almost) nothing. With a budget of 0 the optimiser may take away only such
    # material; it must not touch the loaded half.
    bar, mesh, model = _bar_model()
    c = model.centroids
    passive = np.hypot(c[:, 0] - 100.0, c[:, 1] - 20.0) < 6.0  # where the load enters
    watch = np.zeros(mesh.n_nodes, bool)
    watch[mesh.triangles[passive].ravel()] = True  # as the pipeline watches: the keep-outs

    def responses(xp):
        return model.case_deflection_norms(xp, power=24.0, watch=watch)

    res = minimise_mass(model, 0.0, TopOptSettings(rmin_mm=8.0, max_iter=80),
                        passive_solid=passive, responses=responses)
    assert res.measure_ratio[0] <= 1.0 + 1e-3  # the budget, within the optimiser's tolerance
    removed = res.densities < 0.5
    assert removed.sum() > 50  # it did take material away
    energy = _skfem_energy_density(bar, mesh)
    assert energy[removed].max() < 1e-3 * energy.mean()  # only unloaded material went
    assert c[removed, 0].min() > 100.0  # all of it beyond the load


# --------------------------------------------------------------------- the budget on real plates

@pytest.fixture(scope="module")
def tray_design(tmp_path_factory):
    path = tmp_path_factory.mktemp("budget") / "tray.yaml"
    path.write_text(TRAY + SECTION, encoding="utf-8")
    design = load_design(path)
    plates = [b.plate for b in build_design(design).plates]
    return path, plates[0], parse_loads(design, plates)


def test_budget_is_met_on_the_re_meshed_holed_plate(tray_design):
    _, plate, loads = tray_design
    solid = analyse_plate(plate, loads.cases)  # independent run, plate as designed
    res = lighten_plate(plate, loads.cases, settings=LighteningSettings(
        deflection_budget=0.1, mesh_size_mm=5.0, max_iter=25, max_candidates=4))
    assert res.holes, "a 10 % budget leaves room for holes on the tray"
    again = analyse_plate(res.lightened, loads.cases)  # independent run on the holed plate
    for b, a in zip(solid.cases, again.cases):
        assert a.max_deflection_mm <= 1.1 * b.max_deflection_mm
        assert a.passes  # the case's own limits still hold
    rep = res.to_report()
    (case,) = rep["cases"]
    assert case["budget"] == pytest.approx(0.1)
    used = (again.cases[0].max_deflection_mm / solid.cases[0].max_deflection_mm - 1.0) / 0.1
    assert case["budget_used"] == pytest.approx(used, abs=1e-3) and used <= 1.0
    assert rep["deflection_budget"] == 0.1
    grey = rep["grey_optimum"]["mass_saved_fraction"]
    assert 0.0 < grey < 1.0
    assert rep["grey_optimum"]["cut_share"] == pytest.approx(res.mass_saved_fraction / grey,
                                                              rel=1e-3)


def test_a_case_limit_tighter_than_the_budget_governs(tray_design):
    # The tray's press case: 0.65 mm allowed. With a budget of 50 % its own limit is tighter:
    # b = 0.65 / d0 - 1 with d0 from an independent solid analysis.
    _, plate, loads = tray_design
    solid = analyse_plate(plate, loads.cases)
    d0 = solid.cases[0].max_deflection_mm
    assert case_budgets(solid, 0.5)["press"] == pytest.approx(0.65 / d0 - 1.0, rel=1e-9)
    assert case_budgets(solid, 0.1)["press"] == 0.1


def test_no_budget_keeps_the_limit_only_behaviour(tray_design):
    _, plate, loads = tray_design
    res = lighten_plate(plate, loads.cases, settings=FAST)
    rep = res.to_report()
    assert rep["deflection_budget"] is None and "budget" not in rep["cases"][0]
    assert res.case_budgets == {}


# ------------------------------------------------------------------------------------- keep-outs

def test_press_fit_ring_follows_lames_stress_rise():
    # Lame, rigid insert: hoop stress at the bore / unbounded plate's = C (1 + nu) / (C + nu),
    # C = (b^2 + a^2) / (b^2 - a^2). The ring returned must give exactly +15 %.
    for d, nu in ((22.0, 0.37), (8.0, 0.3), (10.0, 0.33)):
        a = d / 2.0
        b = a + press_fit_ring_mm(d, nu)
        cc = (b * b + a * a) / (b * b - a * a)
        assert cc * (1 + nu) / (cc + nu) == pytest.approx(1.15, rel=1e-12)
    assert press_fit_ring_mm(22.0, 0.1) == 0.0  # nu below the rise: it is never reached


def test_starter_keep_outs_follow_the_feature_roles():
    design = load_design(TEMPLATES["four_wheel_deck"])
    plates = [b.plate for b in build_design(design).plates]
    loads = parse_loads(design, plates)
    plate = plates[0]
    region = design_region(plate, cases=loads.cases, components=loads.components)
    t = plate.thickness_mm
    by_name = {k.name: k for k in region.keep_outs}
    bore = by_name["bore_rear_left"]
    nu = plate.material.poisson_ratio
    # the as-cut bore (22 mm nominal, press allowance and kerf applied in the cut) gets the
    # Lame ring, worked above; never less than the 2 t web (common practice)
    assert bore.role == "bearing_seat" and bore.ring_mm > 2 * t
    feat = next(f for f in plate.features if f.id == "bore_rear_left")
    cut_d = 22.0 + feat.fit_allowance_mm  # as-cut part edge: nominal + fit allowance
    assert bore.ring_mm == pytest.approx(press_fit_ring_mm(cut_d, nu), rel=1e-3)
    a, b = cut_d / 2, cut_d / 2 + bore.ring_mm
    assert bore.area_mm2 == pytest.approx(math.pi * (b * b - a * a), rel=2e-3)  # annulus
    # an M4 fastener (4.5 mm): edge distance 1.5 d gives a 4.5 mm ring, below the 8 mm web
    assert by_name["board.hole1"].role == "fastener"
    assert by_name["board.hole1"].ring_mm == pytest.approx(2 * t)
    assert by_name["battery"].role == "footprint"
    # 80 x 40 mm footprint, less the slivers where two 4.5 mm board holes at y = +-22 reach
    # 0.25 mm into it (a circular segment, well under 1 mm^2 each)
    assert by_name["battery"].area_mm2 == pytest.approx(80 * 40, abs=2.0)
    # design region = material minus the union of the zones (shapely, independently)
    union = shapely.union_all([k.zone for k in region.keep_outs])
    assert region.free_area_mm2 == pytest.approx(region.material.difference(union).area, rel=1e-9)


def test_keep_out_of_one_feature_can_be_set_in_the_design(tmp_path):
    text = TRAY + "lightening:\n  keep_outs:\n    - {feature: post, ring_mm: 12}\n"
    path = tmp_path / "tray.yaml"
    path.write_text(text, encoding="utf-8")
    design = load_design(path)
    plate = build_design(design).plates[0].plate
    s = settings_from_mapping(lightening_section(design), "tray")
    region = design_region(plate, s)
    posts = [k for k in region.keep_outs if k.name.startswith("post.")]
    assert len(posts) == 4 and all(k.ring_mm == 12.0 and k.rule == "set in the design file"
                                   for k in posts)
    for k in posts:  # a 12 mm ring round a 3.4 mm hole (as cut): the zone reaches 13.7 mm out
        x, y = next(f.center_mm for f in plate.features if f.id == k.name)
        assert k.zone.contains(shapely.Point(x + 13.5, y))
        assert not k.zone.contains(shapely.Point(x + 14.5, y))


def test_keep_out_roles_are_the_same_in_the_schema():
    assert schema.KEEP_OUT_ROLES == ROLES


# --------------------------------------------------------------------- command line and sweeps

def _run(cmd, args):
    parser = argparse.ArgumentParser()
    cmd.add_arguments(parser)
    return cmd.run(parser.parse_args(args))


def test_budget_set_on_a_design_without_lightening_section(tmp_path, capsys):
    path = tmp_path / "tray.yaml"
    path.write_text(TRAY, encoding="utf-8")  # no lightening: section
    out = tmp_path / "out"
    rc = _run(LightenCommand(), [str(path), "-o", str(out),
                                 "--set", "lightening.deflection_budget=0.1",
                                 "--set", "lightening.max_candidates=3",
                                 "--set", "lightening.mesh_size_mm=5"])
    assert rc == 0
    printed = capsys.readouterr().out
    assert "stiffness budget +10 %" in printed and "of budget" in printed
    report = json.loads((out / "report.json").read_text(encoding="utf-8"))
    lt = report["plates"][0]["lightening"]
    assert report["schema_version"] == 1 and lt["deflection_budget"] == 0.1
    assert lt["cases"][0]["budget_used"] <= 1.0
    assert lt["design_region"]["keep_outs"] and lt["design_region"]["area_mm2"] > 0
    page = (out / "report.html").read_text(encoding="utf-8")
    assert "budget used" in page and "Keep-outs" in page and "grey" in page


def test_sweep_varies_the_budget(tmp_path):
    path = tmp_path / "tray.yaml"
    path.write_text(TRAY + SECTION, encoding="utf-8")
    out = tmp_path / "sweep"
    rc = _run(SweepCommand(), [str(path), "--vary", "lightening.deflection_budget=0.05:0.25:0.2",
                               "--check", "--lighten", "--jobs", "1", "-q", "-o", str(out)])
    assert rc == 0
    rows = list(csv.DictReader(io.StringIO((out / "sweep.csv").read_text(encoding="utf-8"))))
    assert [float(r["lightening.deflection_budget"]) for r in rows] == [0.05, 0.25]
    solid = float(rows[0]["max_deflection_mm:tray/press"])
    for r in rows:
        b = float(r["lightening.deflection_budget"])
        after = float(r["lightened_max_deflection_mm:tray/press"])
        assert after <= (1.0 + b) * solid * (1.0 + 1e-9)
    saved = [float(r["lightened_saved_fraction:tray"]) for r in rows]
    assert saved[1] >= saved[0]  # a looser budget never saves less here
