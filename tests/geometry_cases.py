"""Shapes shared by the geometry tests, built here from first principles (not from project code
other than the Contour type): rectangles, rounded rectangles, convex polygons with per-corner
fillets, stadium slots, circles and a concave L-shape. All lengths in mm; outlines are built
counter-clockwise, use ``.reversed()`` for the hole of the same shape."""

from __future__ import annotations

import math

import numpy as np

from platewright.geometry.plate.curves import Contour, circle

__all__ = [
    "rectangle",
    "rounded_rectangle",
    "filleted_polygon",
    "stadium",
    "l_shape",
    "circle",
    "regular_polygon",
]


def rectangle(w: float, h: float, cx: float = 0.0, cy: float = 0.0) -> Contour:
    """Counter-clockwise w x h rectangle centred at (cx, cy)."""
    x0, x1, y0, y1 = cx - w / 2, cx + w / 2, cy - h / 2, cy + h / 2
    return Contour([[x0, y0], [x1, y0], [x1, y1], [x0, y1]])


def filleted_polygon(points: np.ndarray, radii: list[float]) -> Contour:
    """Counter-clockwise CONVEX polygon (points (n, 2) in ccw order) with a tangent fillet of
    radius radii[i] at corner i (0 = sharp). The fillet at a corner of turning angle phi is
    tangent at distance r tan(phi / 2) from the corner and has bulge tan(phi / 4) (textbook
    fillet construction)."""
    pts = np.asarray(points, dtype=float)
    n = len(pts)
    verts: list[np.ndarray] = []
    bulges: list[float] = []
    for i in range(n):
        prev, v, nxt = pts[i - 1], pts[i], pts[(i + 1) % n]
        t_in = (v - prev) / np.linalg.norm(v - prev)
        t_out = (nxt - v) / np.linalg.norm(nxt - v)
        phi = math.atan2(t_in[0] * t_out[1] - t_in[1] * t_out[0], float(np.dot(t_in, t_out)))
        r = radii[i]
        if r <= 0.0:
            verts.append(v)
            bulges.append(0.0)
            continue
        lt = r * math.tan(phi / 2.0)
        verts.append(v - t_in * lt)
        bulges.append(math.tan(phi / 4.0))
        verts.append(v + t_out * lt)
        bulges.append(0.0)
    return Contour(np.array(verts), np.array(bulges))


def rounded_rectangle(w: float, h: float, r: float, cx: float = 0.0, cy: float = 0.0) -> Contour:
    """Counter-clockwise w x h rectangle centred at (cx, cy) with four fillets of radius r."""
    x0, x1, y0, y1 = cx - w / 2, cx + w / 2, cy - h / 2, cy + h / 2
    return filleted_polygon(np.array([[x0, y0], [x1, y0], [x1, y1], [x0, y1]]), [r] * 4)


def stadium(length: float, width: float, cx: float = 0.0, cy: float = 0.0) -> Contour:
    """Counter-clockwise slot along x: centre distance ``length`` between the end semicircles,
    width ``width``; overall length length + width."""
    r = width / 2
    x0, x1 = cx - length / 2, cx + length / 2
    return Contour(
        [[x0, cy - r], [x1, cy - r], [x1, cy + r], [x0, cy + r]], [0.0, 1.0, 0.0, 1.0]
    )


def l_shape() -> Contour:
    """Counter-clockwise L: 10 x 10 square minus the 6 x 6 square at its top right; area 64,
    perimeter 40, five convex corners and one concave corner at (4, 4)."""
    return Contour([[0, 0], [10, 0], [10, 4], [4, 4], [4, 10], [0, 10]])


def regular_polygon(n: int, radius: float, phase_rad: float = 0.0) -> np.ndarray:
    """Vertices (n, 2) of a regular n-gon of circumradius ``radius``, counter-clockwise."""
    a = phase_rad + 2 * math.pi * np.arange(n) / n
    return np.column_stack([radius * np.cos(a), radius * np.sin(a)])


# re-exported so tests import every shape from one place
circle = circle
