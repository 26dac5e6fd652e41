"""Exact closed contours made of straight lines and circular arcs (the bulge form).

A contour is a closed loop of ``n`` vertices; segment ``i`` runs from vertex ``i`` to vertex
``(i + 1) % n``. Its bulge ``b[i] = tan(theta / 4)`` where ``theta`` is the signed included angle of
the arc (radians, positive counter-clockwise); ``b = 0`` is a straight line. This is the same
convention as a DXF LWPOLYLINE, so a contour goes to a cut file with no approximation.

Orientation convention used everywhere in platewright: material lies to the LEFT of the direction
of travel, so an outline runs counter-clockwise and a hole runs clockwise.

All coordinates in mm.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

__all__ = ["Contour", "Arc", "circle", "segment_arc"]


@dataclass(frozen=True)
class Arc:
    """One circular arc: centre (mm), radius (mm), start angle and signed sweep (radians)."""

    center: tuple[float, float]
    radius: float
    start_rad: float
    sweep_rad: float


def segment_arc(p0: np.ndarray, p1: np.ndarray, bulge: float) -> Arc:
    """The arc from ``p0`` to ``p1`` (mm) with the given non-zero bulge."""
    theta = 4.0 * math.atan(bulge)
    chord = p1 - p0
    c = math.hypot(chord[0], chord[1])
    radius = c / (2.0 * abs(math.sin(theta / 2.0)))
    # distance from chord midpoint to centre, signed toward the left of the chord for ccw arcs
    mid = (p0 + p1) / 2.0
    left = np.array([-chord[1], chord[0]]) / c
    h = (c / 2.0) / math.tan(theta / 2.0)
    center = mid + left * h
    start = math.atan2(p0[1] - center[1], p0[0] - center[0])
    return Arc((float(center[0]), float(center[1])), float(radius), start, theta)


@dataclass(frozen=True)
class Contour:
    """A closed contour of lines and arcs.

    vertices: (n, 2) float, mm. bulges: (n,) float, dimensionless (tan of a quarter of the
    included angle of segment i). Immutable: arrays are copied and made read-only.
    """

    vertices: np.ndarray
    bulges: np.ndarray = field(default=None)  # type: ignore[assignment]

    def __post_init__(self) -> None:
        v = np.array(self.vertices, dtype=float).reshape(-1, 2)
        b = np.zeros(len(v)) if self.bulges is None else np.array(self.bulges, dtype=float)
        if b.shape != (len(v),):
            raise ValueError("bulges must have one entry per vertex")
        if len(v) < 2 or (len(v) == 2 and not np.all(b != 0)):
            raise ValueError("a closed contour needs 3 vertices, or 2 joined by arcs")
        v.setflags(write=False)
        b.setflags(write=False)
        object.__setattr__(self, "vertices", v)
        object.__setattr__(self, "bulges", b)

    def __len__(self) -> int:
        return len(self.vertices)

    @property
    def is_circle(self) -> bool:
        """True when the contour is one full circle (two half arcs of equal bulge sign)."""
        return len(self.vertices) == 2 and abs(abs(self.bulges[0]) - 1.0) < 1e-12 and abs(
            self.bulges[0] - self.bulges[1]
        ) < 1e-12

    def circle_center_radius(self) -> tuple[tuple[float, float], float]:
        """Centre (mm) and radius (mm) of a circular contour."""
        if not self.is_circle:
            raise ValueError("contour is not a circle")
        c = self.vertices.mean(axis=0)
        r = float(np.hypot(*(self.vertices[0] - self.vertices[1]))) / 2.0
        return (float(c[0]), float(c[1])), r

    def segments(self):
        """Yield ``(p0, p1, bulge)`` for each segment (p0, p1 as (2,) arrays, mm)."""
        n = len(self.vertices)
        for i in range(n):
            yield self.vertices[i], self.vertices[(i + 1) % n], float(self.bulges[i])

    def signed_area(self) -> float:
        """Signed enclosed area, mm^2 (positive when counter-clockwise). Exact for arcs."""
        v = self.vertices
        w = np.roll(v, -1, axis=0)
        poly = 0.5 * float(np.sum(v[:, 0] * w[:, 1] - w[:, 0] * v[:, 1]))
        seg = 0.0
        for p0, p1, b in self.segments():
            if b != 0.0:
                theta = 4.0 * math.atan(b)
                c = float(np.hypot(*(p1 - p0)))
                r = c / (2.0 * abs(math.sin(theta / 2.0)))
                # circular segment between chord and arc, signed with the sweep
                seg += 0.5 * r * r * (theta - math.sin(theta))
        return poly + seg

    def length(self) -> float:
        """Perimeter length, mm. Exact for arcs."""
        total = 0.0
        for p0, p1, b in self.segments():
            c = float(np.hypot(*(p1 - p0)))
            if b == 0.0:
                total += c
            else:
                theta = 4.0 * math.atan(b)
                r = c / (2.0 * abs(math.sin(theta / 2.0)))
                total += r * abs(theta)
        return total

    def is_ccw(self) -> bool:
        """True when the contour runs counter-clockwise."""
        return self.signed_area() > 0.0

    def reversed(self) -> Contour:
        """The same loop traversed the other way (bulges negated and shifted)."""
        v = self.vertices[::-1]
        b = -np.roll(self.bulges[::-1], -1)
        return Contour(v, b)

    def oriented(self, ccw: bool) -> Contour:
        """This contour running counter-clockwise (``ccw=True``) or clockwise."""
        return self if self.is_ccw() == ccw else self.reversed()

    def translated(self, dx_mm: float, dy_mm: float) -> Contour:
        """The contour moved by (dx, dy) mm."""
        return Contour(self.vertices + np.array([dx_mm, dy_mm]), self.bulges)

    def rotated(self, angle_deg: float, about: tuple[float, float] = (0.0, 0.0)) -> Contour:
        """The contour rotated counter-clockwise by ``angle_deg`` about ``about`` (mm)."""
        a = math.radians(angle_deg)
        rot = np.array([[math.cos(a), -math.sin(a)], [math.sin(a), math.cos(a)]])
        o = np.asarray(about, dtype=float)
        return Contour((self.vertices - o) @ rot.T + o, self.bulges)

    def bbox(self) -> tuple[float, float, float, float]:
        """Exact bounding box (xmin, ymin, xmax, ymax), mm, including arc extremes."""
        xs = list(self.vertices[:, 0])
        ys = list(self.vertices[:, 1])
        for p0, p1, b in self.segments():
            if b == 0.0:
                continue
            arc = segment_arc(p0, p1, b)
            for k in range(4):
                ang = k * math.pi / 2.0
                rel = (ang - arc.start_rad) % (2 * math.pi) if arc.sweep_rad > 0 else (
                    arc.start_rad - ang
                ) % (2 * math.pi)
                if rel < abs(arc.sweep_rad):
                    xs.append(arc.center[0] + arc.radius * math.cos(ang))
                    ys.append(arc.center[1] + arc.radius * math.sin(ang))
        return float(min(xs)), float(min(ys)), float(max(xs)), float(max(ys))

    def to_points(self, chord_tol_mm: float) -> np.ndarray:
        """Polyline approximation, (m, 2) float mm, open (first point not repeated).

        Arcs are split so that the sagitta of each chord is at most ``chord_tol_mm``; the
        points lie exactly on the arcs.
        """
        out: list[np.ndarray] = []
        for p0, p1, b in self.segments():
            out.append(p0[None, :])
            if b == 0.0:
                continue
            arc = segment_arc(p0, p1, b)
            r = arc.radius
            tol = min(chord_tol_mm, r * 0.5)
            max_step = 2.0 * math.acos(max(-1.0, 1.0 - tol / r))
            n = max(2, int(math.ceil(abs(arc.sweep_rad) / max_step)))
            t = arc.start_rad + arc.sweep_rad * np.arange(1, n) / n
            pts = np.column_stack(
                [arc.center[0] + r * np.cos(t), arc.center[1] + r * np.sin(t)]
            )
            out.append(pts)
        return np.vstack(out)


def circle(center_mm: tuple[float, float], radius_mm: float, ccw: bool = True) -> Contour:
    """A full circle as two half arcs (mm); clockwise when ``ccw`` is False (a hole)."""
    if radius_mm <= 0:
        raise ValueError("circle radius must be positive")
    cx, cy = center_mm
    v = np.array([[cx + radius_mm, cy], [cx - radius_mm, cy]])
    b = 1.0 if ccw else -1.0
    return Contour(v, np.array([b, b]))
