"""Lightening: design region, density -> holes, verified suggestions, patterns, the command.

Bases of the checks (named beside each): closed-form geometry (circle area, lattice spacing),
the manufacturing rules of REFERENCE.md (common practice: web >= t, hole to hole >= 2 t, hole
to edge >= max(1.5 t, d)), the design file's own limits checked by a fresh, independent run of
the real-geometry finite-element analysis (fea.analysis.analyse_plate, DESIGN.md: "re-verified
by fea.solve"), shapely (a general-purpose geometry library) for distances, areas and
mirror images, and ezdxf (a general-purpose DXF library) to read cut files back.

The scenario is invented: a symmetric tray of a fictional rover, four M3 posts, a press in the
middle.
"""

from __future__ import annotations

import argparse
import json
import math

import ezdxf
import numpy as np
import pytest
import shapely
from plate_factory import make_plate, rect_contour
from shapely.affinity import scale

from platewright.cli.commands.lighten import LightenCommand
from platewright.fea.analysis import analyse_plate
from platewright.fea.lighten.design_region import (
    LighteningSettings,
    design_region,
    lightening_section,
    settings_from_mapping,
)
from platewright.fea.lighten.patterns import effective_pitch_mm, pattern_holes
from platewright.fea.lighten.pipeline import lighten_plate
from platewright.fea.lighten.tracing import (
    MIN_HOLE_SEGMENT_MM,
    hole_features,
    holes_from_density,
)
from platewright.fea.loadcases.parse import parse_loads
from platewright.fea.mesh.mesher import mesh_polygon
from platewright.geometry.design.loader import load_design
from platewright.geometry.errors import DesignError
from platewright.geometry.plate.mass import mass_properties
from platewright.geometry.plate.pipeline import build_design
from platewright.geometry.plate.region import to_polygon
from platewright.geometry.plate.rules import check_plate
from platewright.geometry.writers.dxf import LAYER_CUT_INNER, entity_feature_ids

T = 3.0  # sheet thickness of the test tray, mm
M3_MEDIUM = 3.4  # ISO 273 medium clearance hole for M3, mm (REFERENCE.md)
LIMIT_MM = 0.65  # deflection limit written in the design below, mm
MIN_SF = 2.0  # safety factor limit written in the design below
POSTS = [(-65.0, -35.0), (65.0, -35.0), (-65.0, 35.0), (65.0, 35.0)]  # post centres, mm

TRAY = """\
# Invented test plate: a symmetric tray for the fictional "Pebble" test rover.
name: Pebble test tray
material: cast_acrylic
thickness_mm: 3.0
plates:
  - name: tray
    outline: {rounded_rect: {width_mm: 160, height_mm: 100, corner_radius_mm: 8}}
    label: false
    features:
      - {id: post, type: fastener_array, at_mm: [0, 0], screw: M3, rows: 2, cols: 2,
         pitch_mm: [130, 70]}
load_cases:
  - name: press
    plate: tray
    family: bending
    self_weight: false
    supports:
      - {at: bores, features: [post]}
    loads:
      - {type: force, at_mm: [0, 0], force_n: [0, 0, -20]}
    mesh_size_mm: 6
    limits: {max_deflection_mm: 0.65, min_safety_factor: 2.0}
"""
SECTION = """\
lightening:
  style: organic
  mesh_size_mm: 5
  max_iter: 12
  max_candidates: 4
"""
FAST = LighteningSettings(mesh_size_mm=5.0, max_iter=12, max_candidates=4)


@pytest.fixture(scope="module")
def tray(tmp_path_factory):
    path = tmp_path_factory.mktemp("tray") / "tray.yaml"
    path.write_text(TRAY + SECTION, encoding="utf-8")
    design = load_design(path)
    plates = [b.plate for b in build_design(design).plates]
    loads = parse_loads(design, plates)
    return path, design, plates[0], loads


@pytest.fixture(scope="module")
def organic(tray):
    _, _, plate, loads = tray
    return lighten_plate(plate, loads.cases, style="organic", settings=FAST)


@pytest.fixture(scope="module")
def pattern(tray, organic):
    _, _, plate, loads = tray
    return lighten_plate(plate, loads.cases, style="pattern", settings=FAST,
                         before=organic.before, densities=organic.density)


def _hole_polys(result):
    return [to_polygon(h.contours[0], 1e-4) for h in result.holes]


# ----------------------------------------------------------------------- density -> holes

def _square_mesh():
    return mesh_polygon(shapely.box(-50, -50, 50, 50), 2.5)


def test_radial_void_becomes_one_smooth_circle_kept_whole_when_alone():
    # Closed form: density r / 50 falls below 0.5 inside the circle r < 25 mm. A hole with no
    # neighbour keeps its whole void (the web rule only acts between holes): area pi 25^2.
    mesh = _square_mesh()
    cent = mesh.nodes[mesh.triangles].mean(axis=1)
    dens = np.clip(np.hypot(cent[:, 0], cent[:, 1]) / 50.0, 0.0, 1.0)
    plate = make_plate(rect_contour(100.0, 100.0), thickness_mm=T)
    region = design_region(plate, LighteningSettings(min_web_mm=6.0, corner_radius_mm=3.0))
    polys = holes_from_density(mesh.nodes, mesh.triangles, dens, region, 0.5)
    assert len(polys) == 1
    (hole,) = hole_features(polys, 0.05)
    contour = hole.contours[0]
    assert hole.kind == "lightening" and hole.id == "lighten1"
    assert not contour.is_ccw()  # a hole runs clockwise (material on the left)
    expected = math.pi * 25.0**2
    # mesh interpolation of r on 2.5 mm triangles: a fraction of a millimetre on the radius
    assert abs(-contour.signed_area() - expected) / expected < 0.03
    seg = np.hypot(*(np.roll(contour.vertices, -1, axis=0) - contour.vertices).T)
    assert seg.min() >= MIN_HOLE_SEGMENT_MM  # no tiny segments (REFERENCE.md: cutters reject them)
    assert np.count_nonzero(contour.bulges) >= 2  # arcs were fitted, not a staircase of lines
    assert len(contour) <= 24
    # the lines and arcs stay within the stated chord tolerance of the traced shape (shapely)
    exact = to_polygon(contour, 0.001)
    assert exact.hausdorff_distance(polys[0]) <= 0.05 + 0.01


def test_two_voids_keep_a_web_between_them():
    # Two disc voids of radius 18 mm whose edges are 2 mm apart: the holes made from them must
    # be at least the minimum web apart (REFERENCE.md common practice: hole to hole >= 2 t).
    mesh = _square_mesh()
    cent = mesh.nodes[mesh.triangles].mean(axis=1)
    d1 = np.hypot(cent[:, 0] + 19.0, cent[:, 1])
    d2 = np.hypot(cent[:, 0] - 19.0, cent[:, 1])
    dens = np.where((d1 < 18.0) | (d2 < 18.0), 0.0, 1.0)
    plate = make_plate(rect_contour(100.0, 100.0), thickness_mm=T)
    region = design_region(plate, LighteningSettings(min_web_mm=2 * T))
    polys = holes_from_density(mesh.nodes, mesh.triangles, dens, region, 0.5)
    assert len(polys) == 2
    assert polys[0].distance(polys[1]) >= 2 * T - 1e-6


def test_no_void_no_holes():
    mesh = _square_mesh()
    plate = make_plate(rect_contour(100.0, 100.0), thickness_mm=T)
    region = design_region(plate)
    assert holes_from_density(mesh.nodes, mesh.triangles, np.ones(mesh.n_triangles), region,
                              0.5) == []


def test_triangle_pattern_webs_and_sizes():
    # Void everywhere: every lattice site gets its largest triangle. Closed form: neighbours
    # share a lattice edge, so their webs are at least the minimum web; each hole holds a circle
    # of at least min_hole_mm (its inscribed circle).
    mesh = _square_mesh()
    plate = make_plate(rect_contour(100.0, 100.0), thickness_mm=T)
    region = design_region(plate, LighteningSettings(pattern_shape="triangle"))
    s = region.settings
    holes = pattern_holes(region, mesh.nodes, mesh.triangles, np.zeros(mesh.n_triangles), 1.0)
    assert len(holes) >= 4
    polys = [to_polygon(h.contours[0], 0.01) for h in holes]
    for i, a in enumerate(polys):
        assert region.free.buffer(1e-6).contains(a)
        assert not a.buffer(-s.min_hole_mm / 2.0 + 1e-3).is_empty
        for b in polys[i + 1:]:
            assert a.distance(b) >= s.min_web_mm - 1e-3
    # lattice spacing: centroids of neighbours are p / sqrt(3) apart at least
    p = effective_pitch_mm(region, "triangle")
    c = np.array([h.center_mm for h in holes])
    dist = np.hypot(*(c[:, None, :] - c[None, :, :]).transpose(2, 0, 1))
    np.fill_diagonal(dist, np.inf)
    assert dist.min() >= p / math.sqrt(3.0) - 1e-6


# ----------------------------------------------------------------------- design region

def test_design_region_keeps_edge_distance_and_outline_band(tray):
    _, _, plate, loads = tray
    region = design_region(plate, cases=loads.cases, components=loads.components)
    # REFERENCE.md (common practice): hole to edge >= max(1.5 t, d) round every M3 post
    for x, y in POSTS:
        ring = shapely.Point(x, y).buffer(M3_MEDIUM / 2.0 + max(1.5 * T, M3_MEDIUM) - 1e-3)
        assert region.free.intersection(ring).area < 1e-6
    # web >= t to the outline (REFERENCE.md common practice)
    outline = shapely.box(-80, -50, 80, 50)
    assert region.free.distance(outline.exterior) >= T - 1e-6
    # the point load at the centre keeps material
    assert not region.free.contains(shapely.Point(0.0, 0.0))


def test_lightening_section_is_validated_and_read(tray, tmp_path):
    path, design, _, _ = tray
    raw = lightening_section(design)
    s = settings_from_mapping(raw, "tray")
    assert (s.mesh_size_mm, s.max_iter, s.max_candidates) == (5.0, 12, 4)
    bad = tmp_path / "bad.yaml"
    bad.write_text(TRAY + "lightening: {min_webb_mm: 4}\n", encoding="utf-8")
    with pytest.raises(DesignError) as err:
        load_design(bad)
    assert "min_web_mm" in str(err.value)  # the did-you-mean hint names the right field


# ----------------------------------------------------------------------- verified suggestions

@pytest.mark.parametrize("which", ["organic", "pattern"])
def test_every_suggestion_passes_an_independent_check(tray, organic, pattern, which):
    _, _, plate, loads = tray
    res = {"organic": organic, "pattern": pattern}[which]
    assert res.holes, "the tray has slack (0.52 mm solid vs 0.65 mm allowed): holes expected"
    again = analyse_plate(res.lightened, loads.cases)  # independent FE run on the holed plate
    for case in again.cases:
        assert case.max_deflection_mm <= LIMIT_MM  # the design file's limit
        assert case.safety_factor >= MIN_SF
    # mass saved = density x thickness x hole area (closed form; areas from shapely)
    rho_g_mm3 = plate.material.density_kg_m3 * 1e-6
    saved = rho_g_mm3 * T * sum(p.area for p in _hole_polys(res))
    assert res.mass_before_g - res.mass_after_g == pytest.approx(saved, rel=1e-3)
    assert mass_properties(res.lightened).mass_g == pytest.approx(res.mass_after_g, rel=1e-9)


@pytest.mark.parametrize("which", ["organic", "pattern"])
def test_rules_hold_and_keep_outs_are_respected(tray, organic, pattern, which):
    res = {"organic": organic, "pattern": pattern}[which]
    new = {h.id for h in res.holes}
    for f in check_plate(res.lightened):
        assert f.level != "error", f.message
        if f.rule in ("web", "edge_distance", "feature_size"):
            assert not new.intersection(f.features), f.message
    polys = _hole_polys(res)
    outline = shapely.box(-80, -50, 80, 50)
    for p in polys:
        for x, y in POSTS:  # REFERENCE.md: hole to edge >= max(1.5 t, d)
            assert p.distance(shapely.Point(x, y)) >= M3_MEDIUM / 2 + max(1.5 * T, M3_MEDIUM) - 1e-3
        assert p.distance(outline.exterior) >= T  # web >= t (REFERENCE.md)
    for i, a in enumerate(polys):  # hole to hole >= 2 t (REFERENCE.md, sheet metal)
        for b in polys[i + 1:]:
            assert a.distance(b) >= 2 * T - 1e-3


def test_symmetric_problem_gives_symmetric_holes(organic):
    # The tray, its supports and its load are symmetric about both axes; the mesh is not, so
    # the mirror image of the holes must cover nearly the same area (shapely).
    holes = shapely.union_all(_hole_polys(organic))
    for fx, fy in ((-1.0, 1.0), (1.0, -1.0)):
        mirrored = scale(holes, xfact=fx, yfact=fy, origin=(0.0, 0.0))
        assert holes.symmetric_difference(mirrored).area <= 0.2 * holes.area


def test_same_input_same_output(tray, organic):
    _, _, plate, loads = tray
    again = lighten_plate(plate, loads.cases, style="organic", settings=FAST)
    assert [h.id for h in again.holes] == [h.id for h in organic.holes]
    for a, b in zip(again.holes, organic.holes):
        assert np.array_equal(a.contours[0].vertices, b.contours[0].vertices)
        assert np.array_equal(a.contours[0].bulges, b.contours[0].bulges)
    assert again.mass_after_g == organic.mass_after_g


def test_plate_failing_as_designed_is_not_lightened(tray):
    _, _, plate, loads = tray
    from dataclasses import replace

    from platewright.fea.loadcases.parse import Limits

    tight = [replace(c, limits=Limits(max_deflection_mm=0.1)) for c in loads.cases]
    res = lighten_plate(plate, tight, settings=FAST)
    assert res.holes == () and res.lightened is plate
    assert not res.verified and res.notes


# ----------------------------------------------------------------------- the command

def test_lighten_command_writes_files_report_and_readable_dxf(tray, tmp_path):
    path, _, _, _ = tray
    cmd = LightenCommand()
    parser = argparse.ArgumentParser()
    cmd.add_arguments(parser)
    out = tmp_path / "out"
    rc = cmd.run(parser.parse_args([str(path), "-o", str(out), "-q"]))
    assert rc == 0
    report = json.loads((out / "report.json").read_text(encoding="utf-8"))
    (entry,) = report["plates"]
    lt = entry["lightening"]
    for key in ("mass_before_g", "mass_after_g", "holes", "files", "cases"):  # DESIGN.md contract
        assert key in lt
    assert lt["mass_after_g"] < lt["mass_before_g"] and lt["holes"] >= 1
    for c in lt["cases"]:
        assert {"name", "deflection_before_mm", "deflection_after_mm", "limit_mm"} <= set(c)
        assert c["deflection_after_mm"] <= c["limit_mm"]
    for kind in ("dxf", "svg", "stl", "glb"):
        assert (out / lt["files"][kind]).is_file()
    assert lt["files"]["dxf"] == "plates/tray_lightened.dxf"
    assert "Lightening" in (out / "report.html").read_text(encoding="utf-8")
    doc = ezdxf.readfile(out / lt["files"]["dxf"])  # read back with ezdxf
    inner = [e for e in doc.modelspace() if e.dxf.layer == LAYER_CUT_INNER]
    ids = {i for e in inner for i in entity_feature_ids(e)}
    assert {f"lighten{k + 1}" for k in range(lt["holes"])} <= ids
    assert len(inner) == 4 + lt["holes"]  # four posts plus the new holes, each one closed path


def test_long_straight_hole_edges_stay_within_the_chord_tolerance():
    # A slot-like hole: long straight sides (two points each) between rounded ends. An arc fitted
    # through sparse points may bow far from the straight edge between them; the fitted contour
    # must stay within chord_tol of the traced shape everywhere (Hausdorff distance, shapely).
    hole = shapely.box(-75.0, -7.0, 75.0, 7.0).buffer(-4.0).buffer(4.0, quad_segs=16)
    hole = shapely.Polygon(np.vstack([hole.exterior.coords[:-1],
                                      [[-70.0, -7.0 + 0.02]]]))  # a near-collinear extra point
    hole = shapely.make_valid(hole)
    (feat,) = hole_features([hole], 0.05)
    fitted = to_polygon(feat.contours[0], 0.001)
    assert fitted.hausdorff_distance(hole) <= 0.05 + 0.005


def test_grid_pattern_ribs_are_one_web_and_mirror_symmetric():
    # Void everywhere: the grid holes are the lattice triangles inset by half a web, so two
    # neighbours are at least one web apart (common practice: hole to hole >= 2 t), every hole
    # lies in the design region, and the lattice is mirror-symmetric about the plate's centre
    # lines (shapely mirror images).
    mesh = _square_mesh()
    plate = make_plate(rect_contour(100.0, 100.0), thickness_mm=T)
    region = design_region(plate, LighteningSettings(pattern_shape="grid"))
    s = region.settings
    holes = pattern_holes(region, mesh.nodes, mesh.triangles, np.zeros(mesh.n_triangles), 1.0)
    assert len(holes) >= 4
    polys = [to_polygon(h.contours[0], 0.01) for h in holes]
    for i, a in enumerate(polys):
        assert region.free.buffer(1e-3).contains(a)
        assert not a.buffer(-s.min_hole_mm / 2.0 + 1e-3).is_empty
        for b in polys[i + 1:]:
            assert a.distance(b) >= s.min_web_mm - 0.02  # chord tolerance of the fitted arcs
    union = shapely.union_all(polys)
    for fx, fy in ((-1.0, 1.0), (1.0, -1.0)):
        mirrored = scale(union, xfact=fx, yfact=fy, origin=(0.0, 0.0))
        assert union.symmetric_difference(mirrored).area <= 0.01 * union.area
