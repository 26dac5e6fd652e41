"""Polygon views (shapely) of exact contours and of a plate's as-cut material region.

Polygons are a derived view for booleans, checks and meshing: arcs are replaced by chords whose
sagitta is at most ``chord_tol_mm`` (mm), with every chord end exactly on its arc, so a polygon
of a convex arc lies inside the exact curve by at most ``chord_tol_mm``.
"""

from __future__ import annotations

import shapely
from shapely.geometry.polygon import orient

from platewright.geometry.errors import DesignError, Problem
from platewright.geometry.model import Plate
from platewright.geometry.plate.curves import Contour
from platewright.geometry.plate.cutpaths import part_contours
from platewright.geometry.tolerances import CHORD_TOL_MM

__all__ = ["to_polygon", "plate_region"]


def to_polygon(contour: Contour, chord_tol_mm: float = CHORD_TOL_MM) -> shapely.Polygon:
    """The area enclosed by ``contour`` as a valid shapely Polygon (mm).

    The exterior ring runs counter-clockwise whatever the contour's direction. Raises
    ValueError when the contour crosses itself (the polygon would not be valid).
    """
    ring = contour.to_points(chord_tol_mm)
    poly = shapely.Polygon(ring)
    if not shapely.is_valid(poly):
        raise ValueError(f"contour is not a simple loop: {shapely.is_valid_reason(poly)}")
    return orient(poly, 1.0)


def plate_region(plate: Plate, chord_tol_mm: float = CHORD_TOL_MM) -> shapely.Polygon:
    """The as-cut material of ``plate`` (fit allowance applied, before kerf) as one Polygon, mm.

    Material = union of the counter-clockwise part contours (the outline) minus the union of the
    clockwise ones (holes, bores, slots); holes that touch or overlap each other merge, holes that
    cut the outline notch it. Raises DesignError (path = plate name) when the holes split the
    plate into separate pieces or remove it entirely.
    """
    solids = []
    holes = []
    for _fid, c in part_contours(plate):
        (solids if c.is_ccw() else holes).append(to_polygon(c, chord_tol_mm))
    material = shapely.union_all(solids)
    if holes:
        material = shapely.difference(material, shapely.union_all(holes))
    if not shapely.is_valid(material):
        material = shapely.make_valid(material)
    if isinstance(material, shapely.Polygon) and not material.is_empty:
        return orient(material, 1.0)
    pieces = len(getattr(material, "geoms", []))
    raise DesignError(
        Problem(
            path=plate.name,
            message=(
                "the holes remove the whole plate"
                if material.is_empty
                else f"the holes split the plate into {pieces} separate pieces"
            ),
            hint="move or shrink the holes so the plate stays in one piece",
        )
    )
