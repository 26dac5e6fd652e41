"""DXF cut files, read back with ezdxf (a general-purpose DXF library) and checked by hand.

Kerf convention (DESIGN.md): the cutter removes a strip ``kerf`` wide centred on its path, so a
hole's path has diameter nominal + allowance - kerf and the outline's path is the part grown by
kerf / 2 on every side. Expected values below are worked from that, never from the writer.
"""

from __future__ import annotations

import math

import ezdxf
import numpy as np
import pytest
from ezdxf import bbox
from plate_factory import (
    hand_cut_paths,
    make_plate,
    rect_contour,
    round_hole,
    slot_feature,
)

from platewright.geometry.model import CutContour, Engraving
from platewright.geometry.plate.curves import Contour
from platewright.geometry.plate.cutpaths import cut_paths
from platewright.geometry.tolerances import MIN_SEGMENT_MM
from platewright.geometry.writers.dxf import (
    LAYER_CUT_INNER,
    LAYER_CUT_OUTER,
    LAYER_ENGRAVE,
    LAYER_NOTES,
    entity_feature_ids,
    polyline_vertices,
    write_plate_dxf,
)

W, H, T, KERF = 120.0, 80.0, 3.0, 0.2  # mm; kerf typical of 3 mm acrylic (REFERENCE.md)
M3_MEDIUM = 3.4  # ISO 273 medium clearance hole for M3, mm (REFERENCE.md)
BEARING_OD = 22.0  # 608 deep-groove ball bearing outside diameter, ISO 15, mm
PRESS = -0.1  # press-fit allowance on the bore, mm (REFERENCE.md: acrylic ~0.2 under is fine)
SLOT_W, SLOT_CD = 5.0, 15.0  # slot width and centre distance, mm


def _plate():
    holes = tuple(
        round_hole(f"m3_{i}", (sx * 50.0, sy * 30.0), M3_MEDIUM)
        for i, (sx, sy) in enumerate([(-1, -1), (1, -1), (1, 1), (-1, 1)])
    )
    bore = round_hole("bore", (0.0, 0.0), BEARING_OD, fit_allowance_mm=PRESS, kind="bore")
    slot = slot_feature("adjust", (30.0, 0.0), SLOT_W, SLOT_CD, travel_mm=SLOT_CD)
    label = Engraving("label", "DECK A", (-30.0, 0.0), 5.0)
    return make_plate(
        rect_contour(W, H), (*holes, bore, slot), thickness_mm=T, kerf_mm=KERF,
        engravings=(label,),
    )


@pytest.fixture(scope="module")
def written(tmp_path_factory):
    plate = _plate()
    path = tmp_path_factory.mktemp("dxf") / "deck.dxf"
    write_plate_dxf(plate, cut_paths(plate), path)
    doc = ezdxf.readfile(path)
    return plate, doc, list(doc.modelspace())


def _on(entities, layer):
    return [e for e in entities if e.dxf.layer == layer]


def test_header_units_and_audit(written):
    _, doc, _ = written
    assert doc.dxfversion == "AC1024"  # R2010
    assert doc.header["$INSUNITS"] == 4  # DXF reference: 4 = millimetres
    assert doc.header["$MEASUREMENT"] == 1  # 1 = metric
    auditor = doc.audit()
    assert not auditor.has_errors


def test_layers_exist_and_cut_entities_are_closed(written):
    _, doc, ents = written
    for name in (LAYER_CUT_INNER, LAYER_CUT_OUTER, LAYER_ENGRAVE, LAYER_NOTES):
        assert doc.layers.has_entry(name)
    colours = {doc.layers.get(n).color for n in (LAYER_CUT_INNER, LAYER_CUT_OUTER, LAYER_ENGRAVE)}
    assert len(colours) == 3
    cut = _on(ents, LAYER_CUT_INNER) + _on(ents, LAYER_CUT_OUTER)
    assert len(cut) == 4 + 1 + 1 + 1  # four M3 holes, bore, slot, outline
    for e in cut:
        assert e.dxftype() in ("CIRCLE", "LWPOLYLINE")
        if e.dxftype() == "LWPOLYLINE":
            assert e.closed
    assert not [e for e in ents if e.dxftype() == "SPLINE"]


def test_circle_radii_are_nominal_plus_allowance_minus_kerf(written):
    _, _, ents = written
    radii = {entity_feature_ids(e)[0]: e.dxf.radius for e in ents if e.dxftype() == "CIRCLE"}
    for i in range(4):
        assert radii[f"m3_{i}"] == pytest.approx((M3_MEDIUM + 0.0 - KERF) / 2, abs=1e-6)
    assert radii["bore"] == pytest.approx((BEARING_OD + PRESS - KERF) / 2, abs=1e-6)
    circles = {entity_feature_ids(e)[0]: e.dxf.center for e in ents if e.dxftype() == "CIRCLE"}
    assert tuple(circles["m3_2"])[:2] == pytest.approx((50.0, 30.0), abs=1e-9)


def test_slot_width_and_outline_size(written):
    _, _, ents = written
    by_id = {entity_feature_ids(e)[0]: e for e in ents if e.dxftype() == "LWPOLYLINE"}
    slot = np.array(by_id["adjust"].get_points("xyb"))
    # a stadium path: two straight sides and two half circles (bulge +-1 = tan(180deg / 4));
    # each half circle's chord is the path width = nominal - kerf
    arcs = slot[np.abs(slot[:, 2]) > 0]
    assert len(slot) == 4 and len(arcs) == 2
    assert np.allclose(np.abs(arcs[:, 2]), 1.0, atol=1e-12)
    nxt = np.roll(slot, -1, axis=0)
    chords = np.hypot(*(nxt[:, :2] - slot[:, :2]).T)[np.abs(slot[:, 2]) > 0]
    assert chords == pytest.approx([SLOT_W - KERF] * 2, abs=1e-6)
    # axis along x: the path's extent in x is centre distance + width - kerf
    assert np.ptp(slot[:, 0]) == pytest.approx(SLOT_CD, abs=1e-6)
    ext = bbox.extents([by_id["adjust"]], fast=False)  # ezdxf's own arc-aware extents
    assert ext.size.x == pytest.approx(SLOT_CD + SLOT_W - KERF, abs=1e-6)
    assert ext.size.y == pytest.approx(SLOT_W - KERF, abs=1e-6)
    # outline path: the part grown by kerf / 2 on every side
    ext = bbox.extents([by_id["outline"]], fast=False)
    assert (ext.size.x, ext.size.y) == pytest.approx((W + KERF, H + KERF), abs=1e-6)
    assert by_id["outline"].dxf.layer == LAYER_CUT_OUTER


def test_cut_order_engrave_inner_outer(written):
    _, _, ents = written
    kinds = []
    for e in ents:
        if e.dxf.layer == LAYER_NOTES:
            continue
        kinds.append(e.dxf.layer)
    assert kinds[0] == LAYER_ENGRAVE
    assert kinds[-1] == LAYER_CUT_OUTER
    assert kinds.count(LAYER_CUT_OUTER) == 1
    assert set(kinds[1:-1]) == {LAYER_CUT_INNER}
    text = [e for e in ents if e.dxf.layer == LAYER_ENGRAVE][0]
    assert text.dxftype() == "TEXT" and text.dxf.text == "DECK A"


def test_feature_ids_map_to_features(written):
    plate, _, ents = written
    ids = [i for e in ents if e.dxf.layer.startswith("PW_CUT") for i in entity_feature_ids(e)]
    assert sorted(ids) == sorted([f.id for f in plate.features] + [plate.outline.id])


def test_no_short_segments_and_no_duplicates(written):
    _, _, ents = written
    keys = set()
    for e in ents:
        if e.dxftype() == "LWPOLYLINE":
            pts = np.array(e.get_points("xy"))
            seg = np.hypot(*(np.roll(pts, -1, axis=0) - pts).T)
            assert seg.min() >= MIN_SEGMENT_MM
            key = ("P", tuple(np.round(pts, 6).ravel()))
        elif e.dxftype() == "CIRCLE":
            key = ("C", *np.round(tuple(e.dxf.center), 6), round(e.dxf.radius, 6))
        else:
            continue
        assert key not in keys
        keys.add(key)


def test_notes_state_size_material_kerf_and_units(written):
    plate, _, ents = written
    notes = " | ".join(e.dxf.text for e in _on(ents, LAYER_NOTES))
    assert f"{W:.3f} x {H:.3f} mm" in notes  # the part's overall size
    assert plate.material.name in notes
    assert "kerf used: 0.2 mm" in notes and "units: mm" in notes


def test_duplicate_paths_written_once_with_both_ids(tmp_path):
    plate = make_plate(
        rect_contour(60.0, 40.0),
        (round_hole("a", (0.0, 0.0), 6.0), round_hole("b", (0.0, 0.0), 6.0)),
    )
    cut = hand_cut_paths(plate)
    write_plate_dxf(plate, cut, tmp_path / "dup.dxf")
    circles = ezdxf.readfile(tmp_path / "dup.dxf").modelspace().query("CIRCLE")
    assert len(circles) == 1
    assert set(entity_feature_ids(circles[0])) == {"a", "b"}
    # hand-worked path radius (d - kerf) / 2
    assert circles[0].dxf.radius == pytest.approx((6.0 - KERF) / 2, abs=1e-12)


def test_tiny_segments_are_merged(tmp_path):
    # a 20 x 10 rectangle with an extra vertex 5e-5 mm after a corner, and its closing vertex
    # 2e-5 mm short of the start: both segments are below MIN_SEGMENT_MM = 1e-4 mm
    v = np.array(
        [[0.0, 0.0], [20.0, 0.0], [20.0, 5e-5], [20.0, 10.0], [0.0, 10.0], [0.0, 2e-5]]
    )
    rows = polyline_vertices(Contour(v))
    assert len(rows) == 4
    seg = np.hypot(*(np.roll(rows[:, :2], -1, axis=0) - rows[:, :2]).T)
    assert seg.min() >= MIN_SEGMENT_MM
    # a quarter-round corner whose arc follows a tiny segment keeps its bulge tan(90deg / 4)
    b = math.tan(math.pi / 8)
    v2 = np.array([[0.0, 0.0], [10.0, 0.0], [10.0 + 3e-5, 0.0], [15.0, 5.0], [0.0, 5.0]])
    rows2 = polyline_vertices(Contour(v2, [0.0, 0.0, b, 0.0, 0.0]))
    assert len(rows2) == 4 and rows2[1, 2] == pytest.approx(b)
    plate = make_plate(rect_contour(30.0, 20.0))
    outer = CutContour("outline", "outer", 0, Contour(v + [-10.0, -5.0]), Contour(v))
    write_plate_dxf(plate, [outer], tmp_path / "tiny.dxf")
    poly = ezdxf.readfile(tmp_path / "tiny.dxf").modelspace().query("LWPOLYLINE")[0]
    assert len(poly) == 4 and poly.closed
