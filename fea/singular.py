"""Points where the ideal elastic solution is singular, and the exclusion around them.

At a sharp re-entrant corner of the plate's edge, at the end of a clamped or pinned stretch of
edge, under a point support and under a point load, the stress of the linear-elastic model
grows without bound (Williams, J. Appl. Mech. 19 (1952) 526-528, for corners and edge-condition
changes; the Flamant and Boussinesq solutions for point forces): the finite-element value there
grows as the mesh is refined and is not a design figure. The design stress is taken outside a
small disc around each such point (radius ``exclusion_radius_mm``, default one sheet thickness:
within about a thickness a real corner, clamp or load pad is not the sharp ideal one, and plate
theory does not describe the stress there). The singular points are listed with their
mesh-dependent values so the user sees them.

Units: mm, degrees.
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass

import numpy as np
import shapely

from platewright.fea.loadcases.types import Box, Component, LoadCase, resolve_feature
from platewright.fea.mesh.boundary import TaggedRing
from platewright.geometry.model import Plate
from platewright.geometry.plate.cutpaths import part_contours

__all__ = [
    "SingularPoint",
    "KINDS",
    "held_curve_changes",
    "reentrant_corners",
    "singular_points",
    "load_region_ends",
    "region_ends",
    "support_region_ends",
    "point_positions",
    "outside_exclusion",
]

#: Kinds of singular point, in report order.
KINDS = ("re-entrant corner", "support end", "held curve change", "point support", "point load")
#: A vertex counts as a corner when the edge direction turns by more than this, degrees.
_CORNER_TURN_DEG = 2.0


@dataclass(frozen=True)
class SingularPoint:
    """One point where the ideal solution is singular.

    kind: one of KINDS. at_mm: (x, y), mm. note: plain words for the report. angle_deg: the
    material's angle at a re-entrant corner (degrees, > 180), else None. fillet_radius_mm: a
    suggested corner radius (re-entrant corners), else None.
    """

    kind: str
    at_mm: tuple[float, float]
    note: str
    angle_deg: float | None = None
    fillet_radius_mm: float | None = None


def _tangents(p0: np.ndarray, p1: np.ndarray, bulge: float) -> tuple[np.ndarray, np.ndarray]:
    """Unit tangents at the start and end of a line or bulge arc (bulge = tan(sweep / 4))."""
    chord = p1 - p0
    ang = math.atan2(chord[1], chord[0])
    half = 2.0 * math.atan(bulge)  # half the sweep: tangents turn by it either side of the chord
    start, end = ang - half, ang + half
    return np.array([math.cos(start), math.sin(start)]), np.array([math.cos(end), math.sin(end)])


def reentrant_corners(plate: Plate, region: shapely.Polygon | None = None,
                      tol_mm: float = 1e-6) -> list[tuple[tuple[float, float], float]]:
    """Sharp re-entrant corners of the as-cut plate: [((x, y) mm, material angle degrees)].

    Works on the exact contours (lines and arcs), outline and holes: with the material on the
    left of every contour, a turn to the right at a vertex is a re-entrant corner, and the
    material's angle there is 180 degrees plus the turn. Corners of a hole that lie off the
    material (a notch cut by the outline) are left out when ``region`` (the meshed material,
    mm) is given.
    """
    out: list[tuple[tuple[float, float], float]] = []
    for _fid, contour in part_contours(plate):
        segs = list(contour.segments())
        n = len(segs)
        for i in range(n):
            p0, p1, b = segs[i - 1]
            q0, q1, c = segs[i]
            _, t_in = _tangents(np.asarray(p0, float), np.asarray(p1, float), b)
            t_out, _ = _tangents(np.asarray(q0, float), np.asarray(q1, float), c)
            turn = math.degrees(math.atan2(t_in[0] * t_out[1] - t_in[1] * t_out[0],
                                           float(t_in @ t_out)))
            if turn < -_CORNER_TURN_DEG:
                at = (float(q0[0]), float(q0[1]))
                if region is not None and region.boundary.distance(shapely.Point(at)) > tol_mm:
                    continue
                out.append((at, 180.0 - turn))
    return out


def _curvature(p0: np.ndarray, p1: np.ndarray, bulge: float) -> float:
    """Signed curvature (1/mm) of a line (0) or bulge arc (left turn positive)."""
    if bulge == 0.0:
        return 0.0
    chord = float(np.hypot(*(p1 - p0)))
    theta = 4.0 * math.atan(bulge)
    return 2.0 * math.sin(theta / 2.0) / chord


def held_curve_changes(plate: Plate, region: shapely.Polygon, case: LoadCase
                       ) -> list[tuple[tuple[float, float], str]]:
    """Where a simply supported (pinned, or held rim) boundary of a bending case changes its
    curvature without a corner - a straight stretch running into an arc, as at the ends of a
    slot: [((x, y) mm, text)].

    On a boundary held against deflection but free to turn, Kirchhoff's conditions tie the
    bending moment to the boundary's curvature, so a jump in curvature makes the ideal stress
    grow without bound there (slowly, like a logarithm; seen in this code's own refinement
    studies). Clamped boundaries and in-plane cases have no such point.
    """
    if case.family != "bending":
        return []
    out: list[tuple[tuple[float, float], str]] = []
    for k, s in enumerate(case.supports):
        soft = (s.at == "edge" and s.condition == "pinned") or (
            s.at in ("bores", "mount") and s.mode == "rigid")
        if not soft:
            continue
        name = s.features[0] if s.at in ("edge", "mount") and s.features else None
        names = s.features if s.at == "bores" else (name,)
        ids = {f.id for n in names for f in resolve_feature(plate, n)}
        for fid, contour in part_contours(plate):
            if fid not in ids:
                continue
            segs = list(contour.segments())
            for i in range(len(segs)):
                p0, p1, b = segs[i - 1]
                q0, q1, c = segs[i]
                k0 = _curvature(np.asarray(p0, float), np.asarray(p1, float), b)
                k1 = _curvature(np.asarray(q0, float), np.asarray(q1, float), c)
                _, t_in = _tangents(np.asarray(p0, float), np.asarray(p1, float), b)
                t_out, _ = _tangents(np.asarray(q0, float), np.asarray(q1, float), c)
                turn = abs(math.degrees(math.atan2(t_in[0] * t_out[1] - t_in[1] * t_out[0],
                                                   float(t_in @ t_out))))
                if turn > _CORNER_TURN_DEG or abs(k0 - k1) <= 1e-9 * (abs(k0) + abs(k1) + 1e-12):
                    continue
                at = (float(q0[0]), float(q0[1]))
                if region.boundary.distance(shapely.Point(at)) > 1e-6:
                    continue
                if s.region is not None and not s.region.contains(np.array([at]))[0]:
                    continue
                out.append((at, f"{'pinned edge' if s.at == 'edge' else 'held rim'} "
                                f"(supports[{k}])"))
    return out


def _box_polygon(box: Box, bounds: tuple[float, float, float, float]) -> shapely.Polygon:
    x0, y0, x1, y1 = bounds
    pad = 1.0 + max(x1 - x0, y1 - y0)
    return shapely.box(max(box.x_min_mm, x0 - pad), max(box.y_min_mm, y0 - pad),
                       min(box.x_max_mm, x1 + pad), min(box.y_max_mm, y1 + pad))


def region_ends(rings: Sequence[TaggedRing], plate: Plate, feature: str | None,
                region: Box | None) -> list[tuple[float, float]]:
    """Where the part of a feature's boundary inside ``region`` ends, mm (empty without a
    region, or when the region holds whole rings).

    rings: the meshed boundary rings (fea.mesh.plate_input.plate_rings), each tagged with the
    feature ids it lies on (a ring of merged features counts for each). The ends are where the
    box's sides cross the rings. Making them mesh nodes lets a support or an edge load start
    exactly there, whatever the element size.
    """
    if region is None:
        return []
    ids = {f.id for f in resolve_feature(plate, feature)}
    pts = np.vstack([np.asarray(r.points_mm, float) for r in rings])
    box = _box_polygon(region, (*pts.min(axis=0), *pts.max(axis=0)))
    out: list[tuple[float, float]] = []
    for ring in rings:
        if not ids & set(ring.tag.split("+")):
            continue
        held = shapely.LinearRing(np.asarray(ring.points_mm, float)).intersection(box)
        if held.is_empty:
            continue
        held = shapely.line_merge(held) if held.geom_type == "MultiLineString" else held
        for part in getattr(held, "geoms", [held]):
            if part.geom_type != "LineString" or part.is_closed:
                continue
            out += [(float(e[0]), float(e[1])) for e in (part.coords[0], part.coords[-1])]
    return out


def support_region_ends(rings: Sequence[TaggedRing], plate: Plate, case: LoadCase
                        ) -> list[tuple[tuple[float, float], str]]:
    """Where the held stretch of each clamped or pinned edge support ends: [((x, y), text)],
    mm (see region_ends); the text names the support."""
    out: list[tuple[tuple[float, float], str]] = []
    for k, s in enumerate(case.supports):
        # A mirror line, or a roller that lets the edge slide, leaves no singularity at its end.
        if s.at == "edge" and s.condition != "symmetry" and (
                case.family == "bending" or len(s.directions) == 2):
            label = f"{s.condition} edge (supports[{k}])"
            out += [(p, label) for p in region_ends(rings, plate, s.features[0] if s.features
                                                    else None, s.region)]
    return out


def load_region_ends(rings: Sequence[TaggedRing], plate: Plate, case: LoadCase
                     ) -> list[tuple[float, float]]:
    """Where the loaded stretch of each edge load and of the collision ends, mm."""
    out: list[tuple[float, float]] = []
    for ld in case.loads:
        if ld.type == "edge":
            out += region_ends(rings, plate, ld.feature, ld.region)
    if case.collision is not None:
        out += region_ends(rings, plate, case.collision.feature, case.collision.region)
    return out


def point_positions(case: LoadCase, components: Mapping[str, Component]
                    ) -> tuple[list[tuple[float, float]], list[tuple[float, float]]]:
    """(point supports, point loads) of a case, mm: support points, forces at a point, and
    components carried at a point without a footprint."""
    sup = [tuple(map(float, p)) for s in case.supports if s.at == "points" for p in s.points_mm]
    loads: list[tuple[float, float]] = []
    for ld in case.loads:
        if ld.type == "force" and ld.at_mm is not None:
            loads.append((float(ld.at_mm[0]), float(ld.at_mm[1])))
        elif ld.type == "component":
            comp = components.get(ld.component or "")
            if comp is not None and comp.at_mm is not None and comp.footprint_mm is None:
                loads.append((float(comp.at_mm[0]), float(comp.at_mm[1])))
    return sup, loads


def singular_points(plate: Plate, case: LoadCase, components: Mapping[str, Component],
                    rings: Sequence[TaggedRing]) -> list[SingularPoint]:
    """Every singular point of ``case`` on ``plate`` meshed from ``rings`` (outline first), in
    KINDS order, duplicates (same kind, same place) dropped."""
    t = plate.thickness_mm
    outline = [np.asarray(r.points_mm, float) for r in rings if not r.is_hole]
    holes = [np.asarray(r.points_mm, float) for r in rings if r.is_hole]
    region = shapely.Polygon(outline[0], holes)
    out: list[SingularPoint] = []
    for at, angle in reentrant_corners(plate, region):
        fillet = max(t, 1.0)
        out.append(SingularPoint(
            "re-entrant corner", at,
            f"sharp inside corner ({angle:.0f} degrees of material): the ideal stress here is "
            f"infinite, so the value grows with mesh refinement; a cut corner is never quite "
            f"sharp, but round it - a radius of at least {fillet:g} mm (one sheet thickness, "
            "common practice) - and check again", angle, fillet))
    for at, label in support_region_ends(rings, plate, case):
        out.append(SingularPoint(
            "support end", at,
            f"end of the {label}: where a held edge meets a free one the ideal stress can be "
            "infinite (in plane it is), so the value depends on the mesh; a real clamp gives a "
            "little, so the design stress is read just outside"))
    for at, label in held_curve_changes(plate, region, case):
        out.append(SingularPoint(
            "held curve change", at,
            f"on the {label} a straight stretch runs into a curve here: on a boundary held "
            "against deflection but free to turn, the ideal bending stress grows without bound "
            "(slowly) where the curvature jumps, so the value depends on the mesh; a clamp or a "
            "washer that also stops the turning removes it"))
    sup, loads = point_positions(case, components)
    for at in sup:
        out.append(SingularPoint(
            "point support", at,
            "a support at a single point: the ideal stress under it is infinite; spread it "
            "(a bore, a pad) for a design value there"))
    for at in loads:
        out.append(SingularPoint(
            "point load", at,
            "a force on a single point: the ideal stress under it is infinite; give a footprint "
            "or a feature to spread it for a design value there"))
    seen: set[tuple[str, float, float]] = set()
    unique = []
    for p in out:
        key = (p.kind, round(p.at_mm[0], 6), round(p.at_mm[1], 6))
        if key not in seen:
            seen.add(key)
            unique.append(p)
    return unique


def outside_exclusion(points_mm: np.ndarray, singular: Sequence[SingularPoint],
                      radius_mm: float) -> np.ndarray:
    """Which points (n, 2) float mm lie at least ``radius_mm`` from every singular point:
    (n,) bool."""
    pts = np.asarray(points_mm, dtype=float).reshape(-1, 2)
    keep = np.ones(len(pts), dtype=bool)
    for p in singular:
        keep &= np.hypot(pts[:, 0] - p.at_mm[0], pts[:, 1] - p.at_mm[1]) >= radius_mm * (1 - 1e-9)
    return keep
