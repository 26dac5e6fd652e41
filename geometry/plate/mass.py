"""Exact section and mass properties of plates bounded by lines and arcs.

Area moments come from Green's theorem along each contour, integrated in closed form: lines
are polynomials in their parameter (integrated exactly), arcs are trigonometric polynomials
integrated with their antiderivatives. No polygon approximation is involved.

Units: lengths mm, areas mm^2, second moments of area mm^4, masses g, mass moments g mm^2,
densities kg/m^3 (times 1e-6 gives g/mm^3).
"""

from __future__ import annotations

import math

import numpy as np
import shapely
from shapely.geometry.polygon import orient

from platewright.geometry.model import MassProperties, Plate
from platewright.geometry.plate.curves import Contour, segment_arc
from platewright.geometry.plate.cutpaths import part_contours
from platewright.geometry.tolerances import CHORD_TOL_MM

__all__ = ["contour_moments", "mass_properties", "merged_mass_properties", "combine"]

#: kg/m^3 -> g/mm^3
_DENSITY_TO_G_MM3 = 1e-6

# Two-point Gauss-Legendre rule on [0, 1]: exact for polynomials up to degree 3, which covers
# every integrand below along a straight line.
_GL_T = np.array([0.5 - 0.5 / math.sqrt(3.0), 0.5 + 0.5 / math.sqrt(3.0)])
_GL_W = np.array([0.5, 0.5])


def _line_terms(p0: np.ndarray, p1: np.ndarray) -> np.ndarray:
    """Green's-theorem integrals along the line p0 -> p1, (6,) float (see contour_moments)."""
    dx, dy = p1 - p0
    x = p0[0] + _GL_T * dx
    y = p0[1] + _GL_T * dy
    w = _GL_W
    return np.array(
        [
            np.sum(w * x) * dy,  # A    = int x dy
            np.sum(w * x * x) * dy / 2.0,  # Sx = 1/2 int x^2 dy
            -np.sum(w * y * y) * dx / 2.0,  # Sy = -1/2 int y^2 dx
            -np.sum(w * y**3) * dx / 3.0,  # Ixx0 = -1/3 int y^3 dx
            np.sum(w * x**3) * dy / 3.0,  # Iyy0 = 1/3 int x^3 dy
            np.sum(w * x * x * y) * dy / 2.0,  # Ixy0 = 1/2 int x^2 y dy
        ]
    )


def _trig_antiderivative(a: int, b: int, t: float) -> float:
    """An antiderivative of cos(t)^a sin(t)^b at t (radians), for the (a, b) used here."""
    c, s = math.cos(t), math.sin(t)
    table = {
        (1, 0): s,
        (2, 0): t / 2.0 + math.sin(2 * t) / 4.0,
        (3, 0): s - s**3 / 3.0,
        (4, 0): 3 * t / 8.0 + math.sin(2 * t) / 4.0 + math.sin(4 * t) / 32.0,
        (0, 1): -c,
        (0, 2): t / 2.0 - math.sin(2 * t) / 4.0,
        (0, 3): -c + c**3 / 3.0,
        (0, 4): 3 * t / 8.0 - math.sin(2 * t) / 4.0 + math.sin(4 * t) / 32.0,
        (1, 1): s * s / 2.0,
        (2, 1): -(c**3) / 3.0,
        (3, 1): -(c**4) / 4.0,
    }
    return table[(a, b)]


def _arc_terms(p0: np.ndarray, p1: np.ndarray, bulge: float) -> np.ndarray:
    """Green's-theorem integrals along one arc, (6,) float, in closed form.

    With x = cx + u, y = cy + v, u = R cos t, v = R sin t: dx = -v dt, dy = u dt, and each
    integrand expands into terms R^(a+b) cos^a sin^b.
    """
    arc = segment_arc(p0, p1, bulge)
    cx, cy = arc.center
    r = arc.radius
    t0, t1 = arc.start_rad, arc.start_rad + arc.sweep_rad

    def j(a: int, b: int) -> float:
        # int u^a v^b dt over the arc
        return r ** (a + b) * (_trig_antiderivative(a, b, t1) - _trig_antiderivative(a, b, t0))

    # int x^k dy = sum_m C(k, m) cx^(k-m) int u^(m+1) dt
    def x_pow_dy(k: int) -> float:
        return sum(math.comb(k, m) * cx ** (k - m) * j(m + 1, 0) for m in range(k + 1))

    # int y^k dx = -sum_m C(k, m) cy^(k-m) int v^(m+1) dt
    def y_pow_dx(k: int) -> float:
        return -sum(math.comb(k, m) * cy ** (k - m) * j(0, m + 1) for m in range(k + 1))

    # int x^2 y dy = int (cx^2 + 2 cx u + u^2)(cy + v) u dt
    x2y_dy = (
        cx * cx * (cy * j(1, 0) + j(1, 1))
        + 2.0 * cx * (cy * j(2, 0) + j(2, 1))
        + (cy * j(3, 0) + j(3, 1))
    )
    return np.array(
        [
            x_pow_dy(1),
            x_pow_dy(2) / 2.0,
            -y_pow_dx(2) / 2.0,
            -y_pow_dx(3) / 3.0,
            x_pow_dy(3) / 3.0,
            x2y_dy / 2.0,
        ]
    )


def contour_moments(contour: Contour) -> tuple[float, float, float, float, float, float]:
    """Signed area and moments of the region enclosed by ``contour``, about the ORIGIN.

    Returns ``(A, Sx, Sy, Ixx0, Iyy0, Ixy0)``: A = int dA (mm^2), Sx = int x dA,
    Sy = int y dA (mm^3), Ixx0 = int y^2 dA, Iyy0 = int x^2 dA, Ixy0 = int x y dA (mm^4).
    All are positive-signed for a counter-clockwise contour and negated for a clockwise one, so
    an outline plus its (clockwise) holes sum to the moments of the material. Exact for lines
    and arcs.
    """
    total = np.zeros(6)
    for p0, p1, b in contour.segments():
        total += _line_terms(p0, p1) if b == 0.0 else _arc_terms(p0, p1, b)
    return tuple(float(v) for v in total)  # type: ignore[return-value]


def _props(
    area: float,
    mass_g: float,
    centroid: tuple[float, float],
    area_moments: tuple[float, float, float],
    mass_moments: tuple[float, float, float, float],
) -> MassProperties:
    ixx, iyy, ixy = area_moments
    mxx, myy, mzz, mxy = mass_moments
    return MassProperties(
        area_mm2=float(area),
        mass_g=float(mass_g),
        centroid_mm=(float(centroid[0]), float(centroid[1])),
        second_moment_mm4={"Ixx": float(ixx), "Iyy": float(iyy), "Ixy": float(ixy)},
        inertia_g_mm2={"Ixx": float(mxx), "Iyy": float(myy), "Izz": float(mzz), "Ixy": float(mxy)},
    )


def mass_properties(plate: Plate) -> MassProperties:
    """Area (mm^2), mass (g), centroid (mm) and inertia of one as-cut plate.

    The region is the as-cut part (fit allowance applied, kerf not: the kerf is scrap): the
    outline (counter-clockwise) plus its holes (clockwise, negative), holes assumed disjoint.
    Second moments of area (mm^4) are about centroidal axes parallel to x and y:
    Ixx = int y^2 dA, Iyy = int x^2 dA, Ixy = int x y dA. Mass moments (g mm^2) treat the plate
    as a solid of thickness t about its centroid: Ixx = rho t Ixx_A + m t^2/12,
    Iyy = rho t Iyy_A + m t^2/12, Izz = rho t (Ixx_A + Iyy_A), and the product of inertia
    Ixy = +int x y dm = rho t Ixy_A (positive sign convention, no leading minus).
    """
    total = np.zeros(6)
    for _fid, c in part_contours(plate):
        total += np.array(contour_moments(c))
    return _from_moments(plate, total)


def merged_mass_properties(plate: Plate, chord_tol_mm: float = CHORD_TOL_MM) -> MassProperties:
    """Mass properties as :func:`mass_properties`, for holes that overlap or reach outside.

    The material is the outline minus the union of the holes, as shapely polygons built to
    ``chord_tol_mm``; every arc is replaced by its chords, so the area is larger than the exact
    one by at most (hole perimeter x chord_tol_mm) and the result is an estimate of that order.
    The moments are the exact ones of those straight-sided pieces. ValueError when nothing is
    left of the plate.
    """
    solids, holes = [], []
    for _fid, c in part_contours(plate):
        (solids if c.is_ccw() else holes).append(shapely.Polygon(c.to_points(chord_tol_mm)))
    material = shapely.make_valid(shapely.union_all(solids))
    if holes:
        material = shapely.difference(material, shapely.make_valid(shapely.union_all(holes)))
    total = np.zeros(6)
    for poly in getattr(material, "geoms", [material]):
        if not isinstance(poly, shapely.Polygon) or poly.is_empty:
            continue  # lines and points left where holes touch carry no area
        poly = orient(poly, 1.0)  # exterior counter-clockwise, holes clockwise
        for ring in (poly.exterior, *poly.interiors):
            pts = np.asarray(ring.coords)[:-1]
            if len(pts) >= 3:
                total += np.array(contour_moments(Contour(pts)))
    return _from_moments(plate, total)


def _from_moments(plate: Plate, total: np.ndarray) -> MassProperties:
    """Mass properties of a plate from its summed contour moments about the origin."""
    a, sx, sy, ixx0, iyy0, ixy0 = (float(v) for v in total)
    if not a > 0.0:
        raise ValueError(f"plate {plate.name!r} has no material (area {a:g} mm^2)")
    cx, cy = sx / a, sy / a
    ixx = ixx0 - a * cy * cy
    iyy = iyy0 - a * cx * cx
    ixy = ixy0 - a * cx * cy
    t = plate.thickness_mm
    rho_t = plate.material.density_kg_m3 * _DENSITY_TO_G_MM3 * t  # g/mm^2
    m = rho_t * a
    thick = m * t * t / 12.0
    return _props(
        a, m, (cx, cy), (ixx, iyy, ixy),
        (rho_t * ixx + thick, rho_t * iyy + thick, rho_t * (ixx + iyy), rho_t * ixy),
    )


def combine(props: list[MassProperties]) -> MassProperties:
    """Totals for several plates, combined as if laid flat in one plane at their own origins.

    Each plate's properties are taken in its own plate coordinates, so a plate's centroid keeps
    its plate-coordinate position; no stacking height is added. Area and mass add; the centroid
    is the combined MASS centroid (mm); both the second moments of area (mm^4) and the mass
    moments (g mm^2) are shifted to that point by the parallel-axis theorem. Pass a plate's
    properties once per copy to count a quantity. Raises ValueError for an empty list.
    """
    if not props:
        raise ValueError("combine() needs at least one MassProperties")
    area = sum(p.area_mm2 for p in props)
    mass = sum(p.mass_g for p in props)
    if mass > 0.0:
        cx = sum(p.mass_g * p.centroid_mm[0] for p in props) / mass
        cy = sum(p.mass_g * p.centroid_mm[1] for p in props) / mass
    else:
        cx = sum(p.area_mm2 * p.centroid_mm[0] for p in props) / area
        cy = sum(p.area_mm2 * p.centroid_mm[1] for p in props) / area
    ixx = iyy = ixy = mxx = myy = mzz = mxy = 0.0
    for p in props:
        dx, dy = p.centroid_mm[0] - cx, p.centroid_mm[1] - cy
        s, i = p.second_moment_mm4, p.inertia_g_mm2
        ixx += s["Ixx"] + p.area_mm2 * dy * dy
        iyy += s["Iyy"] + p.area_mm2 * dx * dx
        ixy += s["Ixy"] + p.area_mm2 * dx * dy
        mxx += i["Ixx"] + p.mass_g * dy * dy
        myy += i["Iyy"] + p.mass_g * dx * dx
        mzz += i["Izz"] + p.mass_g * (dx * dx + dy * dy)
        mxy += i["Ixy"] + p.mass_g * dx * dy
    return _props(area, mass, (cx, cy), (ixx, iyy, ixy), (mxx, myy, mzz, mxy))
