"""Cut paths of a hand-built plate: kerf and fit compensation, cut order, refusals.

Expected sizes are worked by hand from the kerf rule: the cutter removes a strip ``kerf`` wide
centred on its path, and a fit adds a signed allowance to the nominal size first, so a hole's
path has diameter nominal + allowance - kerf and the outline's path is the part grown by
kerf / 2 on every side (closed form, no reference to the code under test)."""

from __future__ import annotations

import math

import pytest
import shapely
from geometry_cases import circle, rectangle, stadium

from platewright.geometry.errors import DesignError
from platewright.geometry.model import Feature, Material, Plate
from platewright.geometry.plate.cutpaths import cut_paths, part_contours
from platewright.geometry.plate.region import plate_region, to_polygon

# An invented sheet for the tests; density of cast acrylic 1190 kg/m^3 (CRC Handbook range
# 1.18-1.19 g/cm^3, see shared REFERENCE.md), kerf 0.2 mm (common practice for 3 mm acrylic).
SHEET = Material(
    key="test_sheet",
    name="test sheet (acrylic-like)",
    youngs_modulus_mpa=3000.0,
    poisson_ratio=0.37,
    density_kg_m3=1190.0,
    strength_mpa=70.0,
    strength_kind="tensile",
    typical_kerf_mm=0.2,
    fit_allowance_mm={"press": -0.2, "clearance": 0.2},
    min_web_mm=3.0,
)


def _feature(fid: str, kind: str, contour, allowance: float = 0.0) -> Feature:
    return Feature(id=fid, kind=kind, center_mm=(0.0, 0.0), contours=(contour,),
                   fit_allowance_mm=allowance)


def _plate(kerf: float = 0.2, features: tuple[Feature, ...] = ()) -> Plate:
    outline = _feature("outline", "outline", rectangle(120.0, 80.0))
    return Plate(name="deck", material=SHEET, thickness_mm=3.0, kerf_mm=kerf, outline=outline,
                 features=features)


BORE = _feature("bore_left", "bore", circle((40.0, 0.0), 11.0, ccw=False), allowance=-0.2)
NEAR = _feature("hole_near", "hole", circle((-5.0, 3.0), 1.7, ccw=False))
FAR = _feature("hole_far", "hole", circle((-50.0, 30.0), 1.7, ccw=False), allowance=0.2)
SLOT = _feature("strap", "slot", stadium(20.0, 4.0, 0.0, -25.0).reversed(), allowance=0.1)


def _diameter(contour) -> float:
    return 2.0 * contour.circle_center_radius()[1]


def test_hole_path_diameter_is_nominal_plus_allowance_minus_kerf() -> None:
    paths = {c.feature_id: c for c in cut_paths(_plate(features=(BORE, NEAR, FAR)))}
    # kerf rule (DESIGN.md units and conventions): cut = nominal + allowance - kerf
    assert _diameter(paths["bore_left"].path) == pytest.approx(22.0 - 0.2 - 0.2, abs=1e-12)
    assert _diameter(paths["hole_near"].path) == pytest.approx(3.4 + 0.0 - 0.2, abs=1e-12)
    assert _diameter(paths["hole_far"].path) == pytest.approx(3.4 + 0.2 - 0.2, abs=1e-12)
    # the part edge is nominal + allowance (before kerf)
    assert _diameter(paths["bore_left"].part_contour) == pytest.approx(21.8, abs=1e-12)
    assert paths["bore_left"].path.is_circle and not paths["bore_left"].path.is_ccw()


def test_outer_path_is_outline_grown_by_half_kerf() -> None:
    kerf = 0.2
    out = [c for c in cut_paths(_plate(kerf)) if c.layer == "outer"]
    assert len(out) == 1
    xmin, ymin, xmax, ymax = out[0].path.bbox()
    # closed form: the path runs kerf/2 outside each side: 120 + kerf by 80 + kerf
    assert (xmax - xmin, ymax - ymin) == pytest.approx((120.0 + kerf, 80.0 + kerf), abs=1e-12)
    # and rounds the sharp corners with radius kerf/2 (Steiner formula for a convex polygon)
    r = kerf / 2
    assert out[0].path.signed_area() == pytest.approx(
        (120 + 2 * r) * (80 + 2 * r) - (4 - math.pi) * r * r, rel=1e-13
    )


def test_slot_width_gets_allowance_then_kerf() -> None:
    paths = {c.feature_id: c for c in cut_paths(_plate(features=(SLOT,)))}
    xmin, ymin, xmax, ymax = paths["strap"].path.bbox()
    # width 4 + 0.1 allowance - 0.2 kerf = 3.9; length grows the same at each rounded end
    assert ymax - ymin == pytest.approx(3.9, abs=1e-12)
    assert xmax - xmin == pytest.approx(20.0 + 3.9, abs=1e-12)
    pxmin, pymin, pxmax, pymax = paths["strap"].part_contour.bbox()
    assert pymax - pymin == pytest.approx(4.1, abs=1e-12)


def test_inner_before_outer_in_nearest_neighbour_order() -> None:
    cuts = cut_paths(_plate(features=(FAR, BORE, NEAR, SLOT)))
    assert [c.order for c in cuts] == list(range(len(cuts)))
    assert [c.layer for c in cuts] == ["inner"] * 4 + ["outer"]
    assert cuts[-1].feature_id == "outline"
    # Tour by hand from the origin, using each path's start point (first vertex; a cw circle
    # from geometry_cases starts at its +x point, the reversed slot at its top-left corner):
    # hole_near (-3.4, 3) is 4.5 mm away, the slot (-10, -23.05) 25.1 mm: hole_near first. From
    # there: slot 26.9, hole_far (-48.3, 30) 52.4, bore (50.8, 0) 54.3 -> slot. From the slot:
    # bore 65.0 beats hole_far 65.4 -> bore, then hole_far.
    assert [c.feature_id for c in cuts[:4]] == ["hole_near", "strap", "bore_left", "hole_far"]


def test_part_contours_outline_first_and_region_area() -> None:
    plate = _plate(features=(BORE, NEAR))
    parts = part_contours(plate)
    assert [fid for fid, _ in parts] == ["outline", "bore_left", "hole_near"]
    region = plate_region(plate, chord_tol_mm=1e-4)
    assert shapely.is_valid(region)
    # closed form: 120 x 80 minus discs of diameter 21.8 and 3.4; the chord polygon of a disc
    # is smaller than the disc by at most tol x perimeter, so the region is that much larger.
    exact = 120 * 80 - math.pi * (10.9**2 + 1.7**2)
    assert region.area == pytest.approx(exact, abs=1e-4 * 2 * math.pi * (10.9 + 1.7))
    assert region.area > exact


def test_touching_holes_merge_in_region() -> None:
    a = _feature("a", "hole", circle((0.0, 0.0), 5.0, ccw=False))
    b = _feature("b", "hole", circle((8.0, 0.0), 5.0, ccw=False))
    region = plate_region(_plate(features=(a, b)), chord_tol_mm=1e-4)
    assert shapely.is_valid(region) and len(region.interiors) == 1
    # union of two discs by shapely itself (reference library) on the same chord polygons
    holes = shapely.union(to_polygon(a.contours[0], 1e-4), to_polygon(b.contours[0], 1e-4))
    assert region.area == pytest.approx(120 * 80 - holes.area, rel=1e-12)


def test_kerf_larger_than_hole_is_refused_with_feature_id() -> None:
    tiny = _feature("pin_hole", "hole", circle((10.0, 10.0), 0.08, ccw=False))
    with pytest.raises(DesignError) as info:
        cut_paths(_plate(kerf=0.2, features=(NEAR, tiny)))
    assert [p.path for p in info.value.problems] == ["pin_hole"]
    assert "kerf" in str(info.value)


def test_allowance_that_removes_a_feature_is_refused() -> None:
    # a 1 mm slot with a press allowance of -1.2 mm has no width left
    thin = _feature("thin", "slot", stadium(5.0, 1.0).reversed(), allowance=-1.2)
    with pytest.raises(DesignError) as info:
        part_contours(_plate(features=(thin,)))
    assert info.value.problems[0].path == "thin"


def test_zero_kerf_paths_equal_part_contours() -> None:
    for c in cut_paths(_plate(kerf=0.0, features=(BORE, SLOT))):
        assert c.path is c.part_contour
