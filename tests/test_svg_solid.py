"""SVG drawing (parsed with xml.etree) and the extruded solid (checked with trimesh)."""

from __future__ import annotations

import math
import re
import xml.etree.ElementTree as ET

import numpy as np
import pytest
import trimesh
from plate_factory import make_plate, rect_contour, round_hole, rounded_rect_contour, slot_feature

from platewright.geometry.cutpaths import cut_paths
from platewright.geometry.model import Engraving
from platewright.geometry.solid_writer import plate_solid, write_plate_glb, write_plate_stl
from platewright.geometry.svg_writer import MARGIN_MM, plate_svg_string, write_plate_svg

SVG_NS = "{http://www.w3.org/2000/svg}"
W, H, R, T, KERF = 100.0, 60.0, 8.0, 3.0, 0.2  # mm


def _plate():
    holes = (
        round_hole("a", (30.0, 20.0), 4.0),
        round_hole("b", (-30.0, -15.0), 10.0, fit_allowance_mm=0.2),
    )
    slot = slot_feature("s", (0.0, 0.0), 5.0, 20.0, angle_deg=30.0)
    label = Engraving("label", "REAR <L>", (0.0, -22.0), 4.0, rotation_deg=15.0)
    return make_plate(
        rounded_rect_contour(W, H, R), (*holes, slot), thickness_mm=T, kerf_mm=KERF,
        engravings=(label,),
    )


def _svg_arc_center(x1, y1, rx, fa, fs, x2, y2):
    """Centre of an SVG arc with rx = ry and no rotation, by the endpoint-to-centre conversion
    of the SVG 1.1 specification, Appendix F.6.5 (W3C), worked here independently."""
    x1p, y1p = (x1 - x2) / 2.0, (y1 - y2) / 2.0
    num = max(0.0, rx * rx * rx * rx - rx * rx * y1p * y1p - rx * rx * x1p * x1p)
    coef = math.sqrt(num / (rx * rx * y1p * y1p + rx * rx * x1p * x1p))
    if fa == fs:
        coef = -coef
    cxp, cyp = coef * y1p, -coef * x1p
    return cxp + (x1 + x2) / 2.0, cyp + (y1 + y2) / 2.0


def test_svg_size_layers_and_elements(tmp_path):
    plate = _plate()
    cut = cut_paths(plate)
    path = tmp_path / "deck.svg"
    write_plate_svg(plate, cut, path)
    text = path.read_text(encoding="utf-8")
    assert text == plate_svg_string(plate, cut)
    root = ET.fromstring(text)
    # outline path = part grown by kerf / 2 (DESIGN.md kerf convention), plus the margin
    w_mm, h_mm = W + KERF + 2 * MARGIN_MM, H + KERF + 2 * MARGIN_MM
    assert root.get("width") == f"{w_mm:g}mm" and root.get("height") == f"{h_mm:g}mm"
    vb = [float(x) for x in root.get("viewBox").split()]
    assert vb[2:] == pytest.approx([w_mm, h_mm], abs=1e-9)  # 1 user unit = 1 mm
    groups = {g.get("id"): g for g in root.iter(f"{SVG_NS}g")}
    assert set(groups) == {"PW_ENGRAVE", "PW_CUT_INNER", "PW_CUT_OUTER"}
    inner = groups["PW_CUT_INNER"]
    assert len(inner.findall(f"{SVG_NS}circle")) == 2
    assert len(inner.findall(f"{SVG_NS}path")) == 1
    assert len(groups["PW_CUT_OUTER"].findall(f"{SVG_NS}path")) == 1
    for g in (inner, groups["PW_CUT_OUTER"]):
        assert g.get("fill") == "none" and float(g.get("stroke-width")) <= 0.1
    txt = groups["PW_ENGRAVE"].find(f"{SVG_NS}text")
    assert txt.text == "REAR <L>"  # escaped in the file, parsed back intact


def test_svg_flips_y_and_arcs_are_exact():
    plate = _plate()
    root = ET.fromstring(plate_svg_string(plate, cut_paths(plate)))
    circles = {c.get("data-feature"): c for c in root.iter(f"{SVG_NS}circle")}
    # hole a at plate (30, 20): +y up in the plate, so SVG y = -20
    assert (float(circles["a"].get("cx")), float(circles["a"].get("cy"))) == (30.0, -20.0)
    # hole b: path radius (10 + 0.2 - 0.2) / 2 (nominal + allowance - kerf)
    assert float(circles["b"].get("r")) == pytest.approx(5.0, abs=1e-6)
    outer = [g for g in root.iter(f"{SVG_NS}g") if g.get("id") == "PW_CUT_OUTER"][0]
    d = outer.find(f"{SVG_NS}path").get("d")
    tokens = re.findall(r"[MLAZ]|-?\d+(?:\.\d+)?", d)
    # walk the path; every corner arc's centre (SVG F.6.5) must be a corner centre of the
    # outline, (+-(W/2 - R), +-(H/2 - R)) with y flipped, and its radius R + kerf / 2
    corners = {(sx * (W / 2 - R), -sy * (H / 2 - R)) for sx in (-1, 1) for sy in (-1, 1)}
    found = set()
    i, x, y = 0, 0.0, 0.0
    while i < len(tokens):
        cmd = tokens[i]
        if cmd in ("M", "L"):
            x, y = float(tokens[i + 1]), float(tokens[i + 2])
            i += 3
        elif cmd == "A":
            rx, _, _, fa, fs, x2, y2 = (float(t) for t in tokens[i + 1:i + 8])
            assert rx == pytest.approx(R + KERF / 2, abs=1e-6)
            cx, cy = _svg_arc_center(x, y, rx, int(fa), int(fs), x2, y2)
            found.add((round(cx, 4) + 0.0, round(cy, 4) + 0.0))
            x, y = x2, y2
            i += 8
        else:
            i += 1
    assert found == {(round(a, 4) + 0.0, round(b, 4) + 0.0) for a, b in corners}


def _expected_area():
    # rounded rectangle W x H with corner radius R: W H - (4 - pi) R^2 (closed form);
    # holes as cut: pi (d + allowance)^2 / 4; stadium slot of width w and centre distance c:
    # w c + pi w^2 / 4
    outline = W * H - (4.0 - math.pi) * R * R
    holes = math.pi * 4.0**2 / 4 + math.pi * 10.2**2 / 4 + (5.0 * 20.0 + math.pi * 25.0 / 4)
    return outline - holes


def test_solid_volume_and_watertight():
    plate = _plate()
    mesh = plate_solid(plate)
    assert mesh.is_watertight and mesh.is_winding_consistent
    assert mesh.volume > 0
    assert mesh.volume == pytest.approx(_expected_area() * T, rel=1e-3)
    zmin, zmax = mesh.bounds[:, 2]
    assert (zmin, zmax) == pytest.approx((0.0, T))
    # bounding box = part outline (the solid is the part, not the cutter path)
    assert mesh.extents[:2] == pytest.approx([W, H], abs=1e-9)
    # Euler characteristic of a solid of genus g (3 through holes): V - E + F = 2 - 2 g
    assert mesh.euler_number == 2 - 2 * 3


def test_solid_rectangle_with_hole_exact_area():
    # 80 x 50 rectangle minus one 20 mm hole; a polygon with chords of sagitta <= 5 um on the
    # circle removes slightly less than pi r^2, by at most (2 pi r) x 5 um
    plate = make_plate(rect_contour(80.0, 50.0), (round_hole("h", (0.0, 0.0), 20.0),))
    vol = plate_solid(plate).volume
    exact = (80.0 * 50.0 - math.pi * 100.0) * T
    assert exact <= vol <= exact + 2 * math.pi * 10.0 * 0.005 * T


def test_stl_and_glb_round_trip(tmp_path):
    plate = _plate()
    expected = plate_solid(plate).volume
    write_plate_stl(plate, tmp_path / "deck.stl")
    stl = trimesh.load(tmp_path / "deck.stl", file_type="stl")
    assert stl.is_watertight
    assert stl.volume == pytest.approx(expected, rel=1e-6)
    write_plate_glb(plate, tmp_path / "deck.glb")
    scene = trimesh.load(tmp_path / "deck.glb", file_type="glb")
    meshes = list(scene.geometry.values()) if isinstance(scene, trimesh.Scene) else [scene]
    assert len(meshes) == 1
    # glTF 2.0 specification: linear distances are metres, so mm^3 -> m^3 is 1e-9
    assert meshes[0].volume == pytest.approx(expected * 1e-9, rel=1e-6)
    # GLB stores float32 positions: about 7 significant digits
    assert np.ptp(meshes[0].vertices[:, 0]) == pytest.approx(W * 1e-3, rel=1e-6)
