"""Mass properties against closed-form section formulas and against trimesh (general-purpose
mesh library) on the extruded solid.

Section formulas used (standard section-property tables, e.g. Roark's Formulas for Stress and
Strain, Table A.1): rectangle b h^3 / 12 about its centroidal axis; full circle pi r^4 / 4 about a
diameter; quarter circle: area pi r^2 / 4, centroid 4 r / (3 pi) from each straight edge, second
moment about a straight edge pi r^4 / 16; half disc centroid 4 r / (3 pi) from the diameter;
parallel-axis theorem I = I_c + A d^2. Solid cuboid mass moment m (a^2 + b^2) / 12 (standard
rigid-body table)."""

from __future__ import annotations

import math

import numpy as np
import pytest
import shapely
import trimesh
from geometry_cases import circle, rectangle, rounded_rectangle

from platewright.geometry.model import Feature, Material, Plate
from platewright.geometry.plate.curves import Contour
from platewright.geometry.plate.mass import combine, contour_moments, mass_properties
from platewright.geometry.plate.region import plate_region

# Invented test sheet; density 1190 kg/m^3 is cast acrylic (CRC Handbook 1.18-1.19 g/cm^3).
SHEET = Material(
    key="test_sheet", name="test sheet", youngs_modulus_mpa=3000.0, poisson_ratio=0.37,
    density_kg_m3=1190.0, strength_mpa=70.0, strength_kind="tensile", typical_kerf_mm=0.2,
    fit_allowance_mm={}, min_web_mm=None,
)
RHO = 1190.0 * 1e-6  # g/mm^3 (1 kg/m^3 = 1e-6 g/mm^3)


def _plate(outline: Contour, holes: list[tuple[Contour, float]], t: float = 3.0) -> Plate:
    feats = tuple(
        Feature(id=f"h{i}", kind="hole", center_mm=(0.0, 0.0), contours=(c,),
                fit_allowance_mm=a)
        for i, (c, a) in enumerate(holes)
    )
    out = Feature(id="outline", kind="outline", center_mm=(0.0, 0.0), contours=(outline,))
    return Plate(name="p", material=SHEET, thickness_mm=t, kerf_mm=0.2, outline=out,
                 features=feats)


def _rounded_rect_section(b: float, h: float, r: float) -> tuple[float, float, float]:
    """(A, Ixx, Iyy) of a b x h rectangle with corner radius r about its centre, built from the
    table entries: a cross of three rectangles plus four quarter discs."""
    parts = []  # (area, Ixx own centroidal, Iyy own, xc, yc)
    parts.append((b * (h - 2 * r), b * (h - 2 * r) ** 3 / 12, (h - 2 * r) * b**3 / 12, 0.0, 0.0))
    for sy in (-1, 1):
        w = b - 2 * r
        parts.append((w * r, w * r**3 / 12, r * w**3 / 12, 0.0, sy * (h / 2 - r / 2)))
    aq = math.pi * r * r / 4
    e = 4 * r / (3 * math.pi)
    iq = math.pi * r**4 / 16 - aq * e * e  # about its own centroid (parallel to the edges)
    for sx in (-1, 1):
        for sy in (-1, 1):
            parts.append((aq, iq, iq, sx * (b / 2 - r + e), sy * (h / 2 - r + e)))
    area = sum(p[0] for p in parts)
    ixx = sum(p[1] + p[0] * p[4] ** 2 for p in parts)
    iyy = sum(p[2] + p[0] * p[3] ** 2 for p in parts)
    return area, ixx, iyy


def test_contour_moments_of_off_centre_circle_and_half_disc() -> None:
    r, x0, y0 = 1.5, 3.0, -2.0
    a, sx, sy, ixx0, iyy0, ixy0 = contour_moments(circle((x0, y0), r))
    area = math.pi * r * r
    # circle pi r^4/4 about a diameter + parallel axis (tables)
    assert (a, sx, sy) == pytest.approx((area, area * x0, area * y0), rel=1e-13)
    assert ixx0 == pytest.approx(math.pi * r**4 / 4 + area * y0**2, rel=1e-13)
    assert iyy0 == pytest.approx(math.pi * r**4 / 4 + area * x0**2, rel=1e-13)
    assert ixy0 == pytest.approx(area * x0 * y0, rel=1e-13)
    # clockwise: all negated
    assert contour_moments(circle((x0, y0), r, ccw=False))[0] == pytest.approx(-area, rel=1e-13)
    # upper half disc of radius 2 on the x axis: centroid 4r/(3 pi) above the diameter
    half = Contour([[2.0, 0.0], [-2.0, 0.0], [0.0, 0.0]], [1.0, 0.0, 0.0])
    a, sx, sy, ixx0, iyy0, _ = contour_moments(half)
    assert a == pytest.approx(2 * math.pi, rel=1e-13)
    assert sy / a == pytest.approx(8 / (3 * math.pi), rel=1e-13)
    assert ixx0 == pytest.approx(math.pi * 16 / 8, rel=1e-13)  # half of pi r^4/4 about diameter
    assert abs(sx) < 1e-12


def test_rotated_section_follows_tensor_rotation() -> None:
    # Rotating the area by angle a rotates its second-moment tensor J = [[Iyy0, Ixy0],
    # [Ixy0, Ixx0]] (J = int p p^T dA) to R J R^T (rigid rotation, closed form). Arcs then start at
    # arbitrary angles.
    c = rounded_rectangle(30, 12, 3, cx=4.0, cy=1.0)
    _, _, _, ixx, iyy, ixy = contour_moments(c)
    j = np.array([[iyy, ixy], [ixy, ixx]])
    ang = math.radians(37.0)
    rot = np.array([[math.cos(ang), -math.sin(ang)], [math.sin(ang), math.cos(ang)]])
    expect = rot @ j @ rot.T
    _, _, _, ixx2, iyy2, ixy2 = contour_moments(c.rotated(37.0))
    assert np.array([[iyy2, ixy2], [ixy2, ixx2]]) == pytest.approx(expect, rel=1e-12)


def test_rounded_plate_with_offset_hole_closed_form() -> None:
    b, h, r, t = 100.0, 60.0, 8.0, 3.0
    hx, hy, d_nom, allowance = 25.0, -10.0, 12.0, 0.3
    rh = (d_nom + allowance) / 2  # as-cut hole radius (the allowance is added to the diameter)
    plate = _plate(rounded_rectangle(b, h, r), [(circle((hx, hy), d_nom / 2, ccw=False),
                                                 allowance)], t)
    mp = mass_properties(plate)
    a_rr, ixx_rr, iyy_rr = _rounded_rect_section(b, h, r)
    a_h = math.pi * rh * rh
    area = a_rr - a_h
    cx, cy = -a_h * hx / area, -a_h * hy / area
    ih = math.pi * rh**4 / 4
    ixx = ixx_rr + a_rr * cy**2 - (ih + a_h * (hy - cy) ** 2)
    iyy = iyy_rr + a_rr * cx**2 - (ih + a_h * (hx - cx) ** 2)
    ixy = a_rr * cx * cy - a_h * (hx - cx) * (hy - cy)
    assert a_rr == pytest.approx(b * h - (4 - math.pi) * r * r, rel=1e-14)  # self-check
    assert mp.area_mm2 == pytest.approx(area, rel=1e-12)
    assert mp.centroid_mm == pytest.approx((cx, cy), rel=1e-10)
    assert mp.second_moment_mm4["Ixx"] == pytest.approx(ixx, rel=1e-11)
    assert mp.second_moment_mm4["Iyy"] == pytest.approx(iyy, rel=1e-11)
    assert mp.second_moment_mm4["Ixy"] == pytest.approx(ixy, rel=1e-9)
    m = RHO * t * area
    assert mp.mass_g == pytest.approx(m, rel=1e-12)
    assert mp.inertia_g_mm2["Izz"] == pytest.approx(RHO * t * (ixx + iyy), rel=1e-11)
    assert mp.inertia_g_mm2["Ixx"] == pytest.approx(RHO * t * ixx + m * t * t / 12, rel=1e-11)


def test_solid_rectangle_matches_cuboid_formula() -> None:
    a, b, t = 80.0, 50.0, 4.0
    mp = mass_properties(_plate(rectangle(a, b, cx=7.0, cy=-3.0), [], t))
    m = RHO * a * b * t
    assert mp.centroid_mm == pytest.approx((7.0, -3.0), rel=1e-12)
    # solid cuboid a x b x t about its centre: Izz = m(a^2+b^2)/12, Ixx = m(b^2+t^2)/12
    assert mp.inertia_g_mm2["Izz"] == pytest.approx(m * (a * a + b * b) / 12, rel=1e-12)
    assert mp.inertia_g_mm2["Ixx"] == pytest.approx(m * (b * b + t * t) / 12, rel=1e-12)
    assert mp.inertia_g_mm2["Iyy"] == pytest.approx(m * (a * a + t * t) / 12, rel=1e-12)
    assert abs(mp.inertia_g_mm2["Ixy"]) < 1e-9 * mp.inertia_g_mm2["Izz"]


def _extruded(poly: shapely.Polygon, t: float) -> trimesh.Trimesh:
    """Extrude a polygon with holes by t (mm), triangulated by shapely's constrained Delaunay
    triangulation (trimesh's own triangulators are optional extras not installed here)."""
    tris = shapely.constrained_delaunay_triangles(poly)
    corners = np.array([np.asarray(g.exterior.coords)[:3] for g in tris.geoms])  # (m, 3, 2)
    verts, faces = np.unique(corners.reshape(-1, 2), axis=0, return_inverse=True)
    faces = faces.reshape(-1, 3)
    # orient every triangle counter-clockwise for extrude_triangulation
    p = verts[faces]
    cross = (p[:, 1, 0] - p[:, 0, 0]) * (p[:, 2, 1] - p[:, 0, 1]) - (
        p[:, 1, 1] - p[:, 0, 1]) * (p[:, 2, 0] - p[:, 0, 0])
    faces[cross < 0] = faces[cross < 0][:, ::-1]
    return trimesh.creation.extrude_triangulation(verts, faces, t)


def test_against_trimesh_extruded_solid() -> None:
    t = 3.0
    holes = [
        (circle((25.0, -10.0), 6.0, ccw=False), 0.3),
        (rounded_rectangle(20.0, 10.0, 2.0, cx=-20.0, cy=12.0).reversed(), -0.2),
        (circle((-30.0, -15.0), 1.7, ccw=False), 0.0),
    ]
    plate = _plate(rounded_rectangle(100.0, 60.0, 8.0), holes, t)
    mp = mass_properties(plate)
    tol = 2e-4  # chord tolerance of the reference polygon, mm
    mesh = _extruded(plate_region(plate, chord_tol_mm=tol), t)
    assert mesh.is_watertight
    mesh.density = RHO
    # the polygon lies inside every convex arc by <= tol: relative error about tol * P / A
    rel = 4 * tol * 400.0 / mp.area_mm2
    assert mesh.volume == pytest.approx(mp.area_mm2 * t, rel=rel)
    assert mesh.mass == pytest.approx(mp.mass_g, rel=rel)
    com = mesh.center_mass
    assert com[:2] == pytest.approx(mp.centroid_mm, abs=rel * 100.0)
    assert com[2] == pytest.approx(t / 2, abs=1e-9)
    # trimesh's tensor is about the centre of mass; off-diagonals are -int x y dm
    tensor = mesh.moment_inertia
    scale = mp.inertia_g_mm2["Izz"]
    assert tensor[0, 0] == pytest.approx(mp.inertia_g_mm2["Ixx"], rel=3 * rel)
    assert tensor[1, 1] == pytest.approx(mp.inertia_g_mm2["Iyy"], rel=3 * rel)
    assert tensor[2, 2] == pytest.approx(mp.inertia_g_mm2["Izz"], rel=3 * rel)
    assert -tensor[0, 1] == pytest.approx(mp.inertia_g_mm2["Ixy"], abs=3 * rel * scale)


def test_combine_two_plates_parallel_axis() -> None:
    t = 3.0
    p1 = mass_properties(_plate(rectangle(10.0, 10.0), [], t))
    p2 = mass_properties(_plate(rectangle(20.0, 10.0, cx=30.0), [], t))
    tot = combine([p1, p2])
    m1, m2 = RHO * t * 100, RHO * t * 200
    assert tot.mass_g == pytest.approx(m1 + m2, rel=1e-12)
    cx = (m2 * 30.0) / (m1 + m2)  # = 20
    assert tot.centroid_mm == pytest.approx((cx, 0.0), abs=1e-12)
    # each plate m(a^2+b^2)/12 about its own centre, shifted by the parallel-axis theorem
    izz = m1 * 200 / 12 + m1 * cx**2 + m2 * 500 / 12 + m2 * (30 - cx) ** 2
    assert tot.inertia_g_mm2["Izz"] == pytest.approx(izz, rel=1e-12)
    iyy_area = 10 * 1000 / 12 + 100 * cx**2 + 10 * 8000 / 12 + 200 * (30 - cx) ** 2
    assert tot.second_moment_mm4["Iyy"] == pytest.approx(iyy_area, rel=1e-12)
    assert tot.area_mm2 == pytest.approx(300.0, rel=1e-12)
    with pytest.raises(ValueError):
        combine([])
