"""SVG drawing (parsed with xml.etree) and the extruded solid (checked with trimesh)."""

from __future__ import annotations

import json
import math
import re
import struct
import subprocess
import sys
import xml.etree.ElementTree as ET

import numpy as np
import pytest
import shapely
import trimesh
from plate_factory import make_plate, rect_contour, round_hole, rounded_rect_contour, slot_feature

from platewright.geometry.model import Engraving
from platewright.geometry.plate.cutpaths import cut_paths
from platewright.geometry.plate.region import plate_region
from platewright.geometry.writers.solid import (
    extrude_region,
    plate_solid,
    write_plate_glb,
    write_plate_stl,
)
from platewright.geometry.writers.svg import MARGIN_MM, plate_svg_string, write_plate_svg

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


# --- files read back by hand, from the format definitions -----------------------------------

# Binary STL layout (the de-facto format definition, from memory): 80-byte header, uint32
# little-endian triangle count, then per triangle 12 float32 (normal, 3 corners) + uint16.
_STL_RECORD = np.dtype([("n", "<f4", (3,)), ("v", "<f4", (3, 3)), ("attr", "<u2")])


def _read_stl(path):
    data = path.read_bytes()
    (count,) = struct.unpack_from("<I", data, 80)
    assert len(data) == 84 + 50 * count  # 50 bytes per triangle record
    assert not data[:5].lower() == b"solid"  # an ASCII-looking header misleads some readers
    return np.frombuffer(data, dtype=_STL_RECORD, count=count, offset=84)


def _read_glb(path):
    """(JSON document, BIN bytes) of a GLB, per the Khronos glTF 2.0 specification, section
    'Binary glTF Layout': 12-byte header (magic 'glTF', version, length), then chunks of
    (uint32 length, uint32 type, data), JSON first, then BIN."""
    data = path.read_bytes()
    magic, version, length = struct.unpack_from("<4sII", data, 0)
    assert (magic, version, length) == (b"glTF", 2, len(data))
    json_len, json_type = struct.unpack_from("<I4s", data, 12)
    assert json_type == b"JSON" and json_len % 4 == 0
    text = data[20:20 + json_len]
    assert text.rstrip(b" ") == text.rstrip()  # spec: JSON chunk padded with spaces (0x20)
    bin_len, bin_type = struct.unpack_from("<I4s", data, 20 + json_len)
    assert bin_type == b"BIN\0" and bin_len % 4 == 0
    start = 28 + json_len
    assert start + bin_len == len(data)
    return json.loads(text), data[start:start + bin_len]


def _ring_counts(region):
    rings = [region.exterior, *region.interiors]
    return sum(len(r.coords) - 1 for r in rings), len(region.interiors)


def test_stl_triangle_count_and_normals(tmp_path):
    plate = _plate()
    write_plate_stl(plate, tmp_path / "deck.stl")
    rec = _read_stl(tmp_path / "deck.stl")
    region = plate_region(plate)
    n_points, n_holes = _ring_counts(region)
    n_tri = len(shapely.constrained_delaunay_triangles(region).geoms)  # shapely (reference)
    # top + bottom = 2 x triangulation, walls = 2 triangles per boundary segment; a closed
    # ring of k points has k segments
    assert len(rec) == 2 * n_tri + 2 * n_points
    # Euler's formula for a polygon with n vertices and h holes triangulated without extra
    # points: n + 2 h - 2 triangles (closed form, worked from V - E + F = 1 - h)
    assert n_tri == n_points + 2 * n_holes - 2
    assert np.all(rec["attr"] == 0)
    v = rec["v"].astype(float)
    cross = np.cross(v[:, 1] - v[:, 0], v[:, 2] - v[:, 0])
    unit = cross / np.linalg.norm(cross, axis=1)[:, None]
    normal = rec["n"].astype(float)
    # stored normal = right-hand-rule unit normal of the stored corners (STL definition)
    assert np.allclose(normal, unit, atol=1e-5)
    z = v[:, :, 2]
    top, bottom = np.all(z == np.float32(T), axis=1), np.all(z == 0.0, axis=1)
    assert top.sum() == bottom.sum() == n_tri
    assert np.allclose(normal[top], [0, 0, 1]) and np.allclose(normal[bottom], [0, 0, -1])
    walls = ~(top | bottom)
    assert np.allclose(normal[walls, 2], 0.0, atol=1e-6)
    # walls face away from the material: a step of 1e-4 mm along the normal from a wall
    # triangle's centroid leaves the region, the same step against it enters (shapely)
    c = v[walls].mean(axis=1)[:, :2]
    step = 1e-4 * normal[walls, :2]
    assert not np.any(shapely.contains_xy(region, *(c + step).T))
    assert np.all(shapely.contains_xy(region, *(c - step).T))


def test_stl_every_edge_shared_by_two_faces(tmp_path):
    plate = _plate()
    write_plate_stl(plate, tmp_path / "deck.stl")
    corners = _read_stl(tmp_path / "deck.stl")["v"].reshape(-1, 3)
    # weld corners by exact coordinates (numpy), then count edges
    _, idx = np.unique(corners, axis=0, return_inverse=True)
    f = idx.reshape(-1, 3)
    directed = np.concatenate([f[:, [0, 1]], f[:, [1, 2]], f[:, [2, 0]]])
    undirected, count = np.unique(np.sort(directed, axis=1), axis=0, return_counts=True)
    assert np.all(count == 2)  # closed 2-manifold surface: every edge in exactly two faces
    # consistent winding: the two faces use the edge in opposite directions, so no directed
    # edge repeats
    assert len(np.unique(directed, axis=0)) == len(directed)
    # Euler characteristic from the welded file, genus 3 (three through holes): V - E + F
    assert idx.max() + 1 - len(undirected) + len(f) == 2 - 2 * 3


def test_glb_container_and_accessors(tmp_path):
    plate = _plate()
    write_plate_glb(plate, tmp_path / "deck.glb")
    doc, binary = _read_glb(tmp_path / "deck.glb")
    # glTF 2.0 specification: asset.version is required; 34962 ARRAY_BUFFER holds vertex
    # attributes, 34963 ELEMENT_ARRAY_BUFFER holds indices; 5126 FLOAT, 5125 UNSIGNED_INT
    assert doc["asset"]["version"] == "2.0" and doc["asset"]["generator"] == "platewright"
    (mesh,) = doc["meshes"]
    (prim,) = mesh["primitives"]
    pos_acc = doc["accessors"][prim["attributes"]["POSITION"]]
    idx_acc = doc["accessors"][prim["indices"]]
    assert (pos_acc["componentType"], pos_acc["type"]) == (5126, "VEC3")
    assert (idx_acc["componentType"], idx_acc["type"]) == (5125, "SCALAR")
    pos_view = doc["bufferViews"][pos_acc["bufferView"]]
    idx_view = doc["bufferViews"][idx_acc["bufferView"]]
    assert (pos_view["target"], idx_view["target"]) == (34962, 34963)
    assert doc["buffers"][0]["byteLength"] == len(binary)

    def view(acc, bv, dtype, width):
        start = bv.get("byteOffset", 0) + acc.get("byteOffset", 0)
        return np.frombuffer(binary, dtype=dtype, count=acc["count"] * width, offset=start)

    pos = view(pos_acc, pos_view, "<f4", 3).reshape(-1, 3)
    ind = view(idx_acc, idx_view, "<u4", 1)
    assert ind.max() < len(pos) and len(ind) % 3 == 0
    # spec: POSITION accessor min/max are required and bound the stored values exactly
    assert pos_acc["min"] == pos.min(axis=0).tolist()
    assert pos_acc["max"] == pos.max(axis=0).tolist()
    # metres: the part is W x H x T mm
    assert pos.max(axis=0) - pos.min(axis=0) == pytest.approx([W * 1e-3, H * 1e-3, T * 1e-3])
    # indexed triangles with shared vertices: every edge in exactly two triangles
    f = ind.reshape(-1, 3)
    edges = np.sort(np.concatenate([f[:, [0, 1]], f[:, [1, 2]], f[:, [2, 0]]]), axis=1)
    assert np.all(np.unique(edges, axis=0, return_counts=True)[1] == 2)


def test_files_volume_against_closed_form(tmp_path):
    # trimesh (reference library) reads both files; the volume must be the closed-form area
    # of the part times the thickness, mm^3 in STL and m^3 (x 1e-9) in GLB (glTF 2.0: metres)
    plate = _plate()
    write_plate_stl(plate, tmp_path / "deck.stl")
    write_plate_glb(plate, tmp_path / "deck.glb")
    stl = trimesh.load(tmp_path / "deck.stl", file_type="stl")
    glb = trimesh.load(tmp_path / "deck.glb", file_type="glb", force="mesh")
    assert stl.is_watertight and glb.is_watertight
    assert stl.volume == pytest.approx(_expected_area() * T, rel=1e-3)
    assert glb.volume == pytest.approx(_expected_area() * T * 1e-9, rel=1e-3)
    assert glb.volume == pytest.approx(stl.volume * 1e-9, rel=1e-6)


def test_solid_plain_rectangle_and_notch(tmp_path):
    # no holes: V - E + F = 2 (a box), volume W H T exactly
    box = make_plate(rect_contour(80.0, 50.0), ())
    write_plate_stl(box, tmp_path / "box.stl")
    mesh = trimesh.load(tmp_path / "box.stl", file_type="stl")
    assert mesh.is_watertight and mesh.euler_number == 2
    assert mesh.volume == pytest.approx(80.0 * 50.0 * T, rel=1e-12)
    # 20 mm hole centred on the right edge notches the outline: half a circle removed; the
    # chord polygon removes slightly less, by at most (pi r) x 5 um sagitta
    notched = make_plate(rect_contour(80.0, 50.0), (round_hole("n", (40.0, 0.0), 20.0),))
    write_plate_stl(notched, tmp_path / "notch.stl")
    mesh = trimesh.load(tmp_path / "notch.stl", file_type="stl")
    assert mesh.is_watertight and mesh.euler_number == 2
    exact = (80.0 * 50.0 - math.pi * 100.0 / 2.0) * T
    assert exact * (1 - 1e-6) <= mesh.volume <= exact + math.pi * 10.0 * 0.005 * T


def test_extrude_refuses_non_positive_thickness():
    square = shapely.box(0.0, 0.0, 10.0, 10.0)
    with pytest.raises(ValueError, match="thickness"):
        extrude_region(square, 0.0)


def test_writers_do_not_import_trimesh():
    # the command line must not pay for importing trimesh (it is loaded only by plate_solid)
    code = (
        "import sys, platewright.geometry.writers.solid, platewright.cli.commands.registry; "
        "sys.exit('trimesh' in sys.modules)"
    )
    assert subprocess.run([sys.executable, "-c", code], check=False).returncode == 0
