"""Plate outlines and the exact contour shapes shared with features (mm, degrees).

Outlines run counter-clockwise (material on the left). Corner fillets are exact tangent arcs in
bulge form. The contour builders here (`rounded_rect_contour`, `stadium_contour`) return
counter-clockwise contours; features reverse them for holes.
"""

from __future__ import annotations

import math
from collections.abc import Sequence

import numpy as np
from shapely.geometry import LinearRing, Polygon

from platewright.geometry.model import Feature
from platewright.geometry.plate.curves import Contour
from platewright.geometry.tolerances import CHORD_TOL_MM, LENGTH_TOL_MM, MIN_SEGMENT_MM

__all__ = [
    "rounded_rect_outline",
    "polygon_outline",
    "rounded_rect_contour",
    "stadium_contour",
]

_QUARTER_BULGE = math.tan(math.pi / 8.0)


def check_finite(name: str, value: float) -> float:
    if isinstance(value, bool) or not isinstance(value, (int, float)) or not math.isfinite(value):
        raise ValueError(f"{name}: expected a finite number in mm, got {value!r}")
    return float(value)


def check_positive(name: str, value: float) -> float:
    v = check_finite(name, value)
    if v <= 0:
        raise ValueError(f"{name}: must be greater than zero, got {value!r}")
    return v


def check_point(name: str, value: Sequence[float]) -> tuple[float, float]:
    try:
        x, y = value
    except (TypeError, ValueError):
        raise ValueError(f"{name}: expected a point [x, y] in mm, got {value!r}") from None
    return check_finite(f"{name}[0]", x), check_finite(f"{name}[1]", y)


def _drop_repeats(vertices: list[np.ndarray], bulges: list[float]) -> Contour:
    """Contour from vertex/bulge lists, dropping zero-length straight segments."""
    vs: list[np.ndarray] = []
    bs: list[float] = []
    n = len(vertices)
    for i in range(n):
        nxt = vertices[(i + 1) % n]
        if bulges[i] == 0.0 and float(np.hypot(*(nxt - vertices[i]))) <= LENGTH_TOL_MM:
            continue
        vs.append(vertices[i])
        bs.append(bulges[i])
    return Contour(np.array(vs), np.array(bs))


def _place(contour: Contour, center_mm: tuple[float, float], angle_deg: float) -> Contour:
    c = contour.rotated(angle_deg) if angle_deg else contour
    return c.translated(center_mm[0], center_mm[1])


def rounded_rect_contour(
    center_mm: tuple[float, float],
    width_mm: float,
    height_mm: float,
    corner_radius_mm: float = 0.0,
    angle_deg: float = 0.0,
) -> Contour:
    """Counter-clockwise rectangle ``width_mm`` x ``height_mm`` with quarter-circle corners.

    ``angle_deg`` turns it counter-clockwise about its centre. The radius may be at most half the
    smaller side (equal to it gives a stadium). ValueError for sizes that are not valid.
    """
    cx, cy = check_point("center_mm", center_mm)
    w = check_positive("width_mm", width_mm)
    h = check_positive("height_mm", height_mm)
    r = check_finite("corner_radius_mm", corner_radius_mm)
    ang = check_finite("angle_deg", angle_deg)
    if r < 0:
        raise ValueError(f"corner_radius_mm: must be zero or more, got {corner_radius_mm!r}")
    if r > min(w, h) / 2.0 + LENGTH_TOL_MM:
        raise ValueError(
            f"corner_radius_mm: {r} does not fit a {w} x {h} rectangle "
            f"(valid: 0 to {min(w, h) / 2.0})"
        )
    r = min(r, min(w, h) / 2.0)
    a, b = w / 2.0, h / 2.0
    if r == 0.0:
        v = [np.array(p) for p in ((-a, -b), (a, -b), (a, b), (-a, b))]
        c = Contour(np.array(v))
    else:
        q = _QUARTER_BULGE
        v = [np.array(p, dtype=float) for p in (
            (-a + r, -b), (a - r, -b), (a, -b + r), (a, b - r),
            (a - r, b), (-a + r, b), (-a, b - r), (-a, -b + r),
        )]
        c = _drop_repeats(v, [0.0, q, 0.0, q, 0.0, q, 0.0, q])
    return _place(c, (cx, cy), ang)


def stadium_contour(
    center_mm: tuple[float, float], length_mm: float, width_mm: float, angle_deg: float = 0.0
) -> Contour:
    """Counter-clockwise stadium (slot) of overall ``length_mm`` and ``width_mm`` (mm).

    The long axis points along ``angle_deg`` (counter-clockwise from +x). Equal length and width
    give a circle. ValueError when the length is under the width.
    """
    cx, cy = check_point("center_mm", center_mm)
    length = check_positive("length_mm", length_mm)
    w = check_positive("width_mm", width_mm)
    ang = check_finite("angle_deg", angle_deg)
    if length < w - LENGTH_TOL_MM:
        raise ValueError(
            f"length_mm: {length} is shorter than width_mm {w} (the overall length of a slot is "
            "at least its width)"
        )
    c2 = max(length - w, 0.0) / 2.0
    r = w / 2.0
    if c2 <= LENGTH_TOL_MM:
        c = Contour(np.array([[r, 0.0], [-r, 0.0]]), np.array([1.0, 1.0]))
    else:
        c = Contour(
            np.array([[c2, -r], [c2, r], [-c2, r], [-c2, -r]]),
            np.array([1.0, 0.0, 1.0, 0.0]),
        )
    return _place(c, (cx, cy), ang)


def rounded_rect_outline(
    fid: str,
    center_mm: tuple[float, float],
    width_mm: float,
    height_mm: float,
    corner_radius_mm: float = 0.0,
    angle_deg: float = 0.0,
) -> Feature:
    """Outline feature: a rounded rectangle (mm, degrees), one counter-clockwise contour."""
    c = rounded_rect_contour(center_mm, width_mm, height_mm, corner_radius_mm, angle_deg)
    return Feature(
        id=fid,
        kind="outline",
        center_mm=(float(center_mm[0]), float(center_mm[1])),
        contours=(c,),
        dims={"width_mm": float(width_mm), "height_mm": float(height_mm),
              "corner_radius_mm": float(corner_radius_mm)},
    )


def _fillet_polygon(pts: np.ndarray, radii: np.ndarray, index: list[int]) -> Contour:
    """Fillet every corner of the counter-clockwise polygon ``pts`` ((n, 2) float, mm).

    ``index`` maps each corner to its index in the caller's input (for error messages).
    """
    n = len(pts)
    d_out = np.roll(pts, -1, axis=0) - pts          # edge i: corner i -> corner i+1
    lengths = np.hypot(d_out[:, 0], d_out[:, 1])
    u = d_out / lengths[:, None]
    u_in = np.roll(u, 1, axis=0)                     # edge arriving at corner i
    cross = u_in[:, 0] * u[:, 1] - u_in[:, 1] * u[:, 0]
    dot = np.sum(u_in * u, axis=1)
    turn = np.arctan2(cross, dot)                   # signed turn at each corner, radians
    if np.any(np.abs(turn) > math.pi - 1e-9):
        i = int(np.argmax(np.abs(turn)))
        raise ValueError(f"polygon turns back on itself at corner {index[i]}")
    # a fillet whose arc chord would be shorter than MIN_SEGMENT_MM is left as a sharp corner
    radii = np.where(2.0 * radii * np.sin(np.abs(turn) / 2.0) < MIN_SEGMENT_MM, 0.0, radii)
    setback = radii * np.tan(np.abs(turn) / 2.0)   # tangent length from each corner
    for i in range(n):
        j = (i + 1) % n
        if setback[i] + setback[j] > lengths[i] + LENGTH_TOL_MM:
            bad = i if radii[i] >= radii[j] else j
            raise ValueError(
                f"corner {index[bad]}: radius {radii[bad]} does not fit between its neighbours "
                f"(edge from corner {index[i]} to corner {index[j]} is {lengths[i]:.4g} mm long, "
                f"the fillets need {setback[i] + setback[j]:.4g} mm)"
            )
    verts: list[np.ndarray] = []
    bulges: list[float] = []
    for i in range(n):
        if setback[i] > 0.0:
            verts.append(pts[i] - u_in[i] * setback[i])
            bulges.append(math.tan(turn[i] / 4.0))
            verts.append(pts[i] + u[i] * setback[i])
            bulges.append(0.0)
        else:
            verts.append(pts[i].copy())
            bulges.append(0.0)
    return _drop_repeats(verts, bulges)


def polygon_outline(
    fid: str,
    points_mm: Sequence[tuple[float, float]],
    corner_radii_mm: Sequence[float] | float = 0.0,
) -> Feature:
    """Outline feature: a simple polygon with an exact tangent fillet at each corner.

    ``points_mm``: (n, 2) corners in mm, either orientation (the result runs counter-clockwise).
    ``corner_radii_mm``: one radius (mm) for every corner, or one per corner in input order;
    0 leaves a sharp corner (so does a radius whose arc would be shorter than
    ``MIN_SEGMENT_MM``). Convex and concave corners are both filleted. ValueError, naming
    the corner index, when a radius does not fit between its neighbours, a radius is negative,
    two corners coincide, or the polygon self-intersects.
    """
    try:
        pts = np.array(points_mm, dtype=float)
    except (TypeError, ValueError):
        raise ValueError(f"points_mm: expected a list of [x, y] points, got {points_mm!r}") from None
    if pts.ndim != 2 or pts.shape[1] != 2 or len(pts) < 3:
        raise ValueError("points_mm: need at least 3 corners, each [x, y] in mm")
    if not np.all(np.isfinite(pts)):
        raise ValueError("points_mm: every coordinate must be a finite number")
    n = len(pts)
    if np.ndim(corner_radii_mm) == 0:
        radii = np.full(n, float(corner_radii_mm))  # type: ignore[arg-type]
    else:
        radii = np.array(corner_radii_mm, dtype=float)
        if radii.shape != (n,):
            raise ValueError(
                f"corner_radii_mm: expected one radius or {n} radii (one per corner), "
                f"got {len(radii)}"
            )
    for i, r in enumerate(radii):
        if not math.isfinite(r) or r < 0:
            raise ValueError(f"corner {i}: radius must be zero or more, got {r!r}")
    for i in range(n):
        if float(np.hypot(*(pts[(i + 1) % n] - pts[i]))) <= LENGTH_TOL_MM:
            raise ValueError(f"corner {i} and corner {(i + 1) % n} coincide")
    ring = LinearRing(pts)
    if not ring.is_simple:
        raise ValueError("points_mm: the polygon self-intersects (edges cross or touch)")
    index = list(range(n))
    if not ring.is_ccw:
        pts, radii, index = pts[::-1].copy(), radii[::-1].copy(), index[::-1]
    contour = _fillet_polygon(pts, radii, index)
    # fillets that fit their own edges can still reach a far edge on a thin polygon
    check = Polygon(contour.to_points(CHORD_TOL_MM))
    if not check.is_valid:
        raise ValueError("points_mm: the filleted polygon self-intersects; use smaller radii")
    c = Polygon(pts).centroid
    return Feature(
        id=fid,
        kind="outline",
        center_mm=(float(c.x), float(c.y)),
        contours=(contour,),
        dims={},
    )
