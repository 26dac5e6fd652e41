"""Hand-built plates for tests, independent of the feature builders and of the kerf code.

Every contour here is written out by hand from its definition (rectangles, circles, stadium
slots), so tests can state the expected geometry in closed form. All lengths in mm.

``hand_cut_paths`` gives the kerf-compensated paths of these simple shapes worked by hand (a
circle of radius r cut as a hole: path radius r - kerf/2; a rectangle's outline path: the exact
outward offset by kerf/2, i.e. the same rectangle with quarter-circle corners of radius kerf/2),
for writer tests that must not depend on another module.
"""

from __future__ import annotations

import math

import numpy as np

from platewright.geometry.model import CutContour, Engraving, Feature, Material, Plate
from platewright.geometry.plate.curves import Contour, circle

__all__ = [
    "ACRYLIC_3MM_KERF",
    "sample_material",
    "rect_contour",
    "rounded_rect_contour",
    "stadium_contour",
    "outline_feature",
    "round_hole",
    "slot_feature",
    "make_plate",
    "hand_cut_paths",
]

#: Typical CO2 kerf in 3 mm acrylic, 0.18-0.25 mm (REFERENCE.md, common practice).
ACRYLIC_3MM_KERF = 0.2

#: bulge of a 90 degree arc: tan(90deg / 4).
_QUARTER_BULGE = math.tan(math.pi / 8.0)


def sample_material(min_web_mm: float | None = None, kerf_mm: float = ACRYLIC_3MM_KERF) -> Material:
    """A cast-acrylic-like sheet (typical handbook values, REFERENCE.md), invented key."""
    return Material(
        key="test_acrylic",
        name="test cast acrylic",
        youngs_modulus_mpa=3000.0,
        poisson_ratio=0.37,
        density_kg_m3=1185.0,
        strength_mpa=72.0,
        strength_kind="tensile",
        typical_kerf_mm=kerf_mm,
        fit_allowance_mm={"press": -0.1, "slide": 0.05, "clearance": 0.2},
        min_web_mm=min_web_mm,
    )


def rect_contour(
    width_mm: float, height_mm: float, center_mm: tuple[float, float] = (0.0, 0.0), ccw: bool = True
) -> Contour:
    """Axis-aligned rectangle with sharp corners, counter-clockwise unless ``ccw`` is False."""
    cx, cy = center_mm
    hw, hh = width_mm / 2.0, height_mm / 2.0
    v = np.array([[cx - hw, cy - hh], [cx + hw, cy - hh], [cx + hw, cy + hh], [cx - hw, cy + hh]])
    c = Contour(v)
    return c if ccw else c.reversed()


def rounded_rect_contour(
    width_mm: float,
    height_mm: float,
    radius_mm: float,
    center_mm: tuple[float, float] = (0.0, 0.0),
    ccw: bool = True,
) -> Contour:
    """Axis-aligned rectangle with quarter-circle corners of ``radius_mm`` (8 vertices)."""
    cx, cy = center_mm
    hw, hh, r = width_mm / 2.0, height_mm / 2.0, radius_mm
    v = np.array(
        [
            [cx - hw + r, cy - hh], [cx + hw - r, cy - hh],
            [cx + hw, cy - hh + r], [cx + hw, cy + hh - r],
            [cx + hw - r, cy + hh], [cx - hw + r, cy + hh],
            [cx - hw, cy + hh - r], [cx - hw, cy - hh + r],
        ]
    )
    b = np.array([0.0, _QUARTER_BULGE] * 4)
    c = Contour(v, b)
    return c if ccw else c.reversed()


def stadium_contour(
    center_mm: tuple[float, float],
    width_mm: float,
    centre_distance_mm: float,
    angle_deg: float = 0.0,
    ccw: bool = False,
) -> Contour:
    """Stadium (straight slot with round ends): two half circles of diameter ``width_mm`` whose
    centres are ``centre_distance_mm`` apart along the direction ``angle_deg``. Clockwise (a hole)
    unless ``ccw``."""
    cx, cy = center_mm
    a, r, h = math.radians(angle_deg), width_mm / 2.0, centre_distance_mm / 2.0
    u = np.array([math.cos(a), math.sin(a)])
    n = np.array([-u[1], u[0]])
    c0 = np.array([cx, cy])
    v = np.array([c0 - h * u - r * n, c0 + h * u - r * n, c0 + h * u + r * n, c0 - h * u + r * n])
    c = Contour(v, np.array([0.0, 1.0, 0.0, 1.0]))  # ccw: straight, half turn, straight, half turn
    return c if ccw else c.reversed()


def outline_feature(contour: Contour, feature_id: str = "outline") -> Feature:
    """The outline feature for a given counter-clockwise contour."""
    x0, y0, x1, y1 = contour.bbox()
    return Feature(feature_id, "outline", ((x0 + x1) / 2, (y0 + y1) / 2), (contour.oriented(True),))


def round_hole(
    feature_id: str,
    center_mm: tuple[float, float],
    diameter_mm: float,
    fit_allowance_mm: float = 0.0,
    kind: str = "hole",
) -> Feature:
    """A round through hole of nominal ``diameter_mm`` (clockwise circle)."""
    return Feature(
        feature_id,
        kind,
        center_mm,
        (circle(center_mm, diameter_mm / 2.0, ccw=False),),
        fit_allowance_mm=fit_allowance_mm,
        dims={"nominal_diameter_mm": diameter_mm},
    )


def slot_feature(
    feature_id: str,
    center_mm: tuple[float, float],
    width_mm: float,
    centre_distance_mm: float,
    angle_deg: float = 0.0,
    travel_mm: float | None = None,
    fit_allowance_mm: float = 0.0,
) -> Feature:
    """A straight slot (stadium) of nominal ``width_mm``; ``travel_mm`` goes into ``dims``."""
    dims = {"nominal_width_mm": width_mm, "length_mm": centre_distance_mm + width_mm}
    if travel_mm is not None:
        dims["travel_mm"] = travel_mm
    return Feature(
        feature_id,
        "slot",
        center_mm,
        (stadium_contour(center_mm, width_mm, centre_distance_mm, angle_deg),),
        fit_allowance_mm=fit_allowance_mm,
        dims=dims,
    )


def make_plate(
    outline: Contour,
    features: tuple[Feature, ...] = (),
    thickness_mm: float = 3.0,
    kerf_mm: float = ACRYLIC_3MM_KERF,
    min_web_mm: float | None = None,
    engravings: tuple[Engraving, ...] = (),
    name: str = "test_deck",
) -> Plate:
    """A plate of the test material from an outline contour and inner features."""
    return Plate(
        name=name,
        material=sample_material(min_web_mm, kerf_mm),
        thickness_mm=thickness_mm,
        kerf_mm=kerf_mm,
        outline=outline_feature(outline),
        features=tuple(features),
        engravings=tuple(engravings),
    )


def hand_cut_paths(plate: Plate) -> list[CutContour]:
    """Cut paths worked by hand for plates whose outline is a sharp-cornered axis-aligned
    rectangle and whose holes are circles: hole path radius = (d + allowance - kerf) / 2; outline
    path = rectangle grown by kerf/2 on each side with corner arcs of radius kerf/2. Inner paths
    first (order 0, 1, ...), outline last."""
    k = plate.kerf_mm
    out: list[CutContour] = []
    for f in plate.features:
        for c in f.contours:
            if not c.is_circle:
                raise ValueError("hand_cut_paths handles round holes only")
            (cx, cy), r = c.circle_center_radius()
            part = circle((cx, cy), r + f.fit_allowance_mm / 2.0, ccw=False)
            path = circle((cx, cy), r + f.fit_allowance_mm / 2.0 - k / 2.0, ccw=False)
            out.append(CutContour(f.id, "inner", len(out), path, part))
    oc = plate.outline.contours[0]
    x0, y0, x1, y1 = oc.bbox()
    if len(oc) != 4:
        raise ValueError("hand_cut_paths handles sharp rectangles only")
    w, h = x1 - x0, y1 - y0
    path = rounded_rect_contour(w + k, h + k, k / 2.0, ((x0 + x1) / 2, (y0 + y1) / 2))
    out.append(CutContour(plate.outline.id, "outer", len(out), path, oc))
    return out
