"""Exact offsets of closed line-and-arc contours (kerf and fit compensation).

``offset_contour(c, d)`` moves every point of ``c`` by ``d`` mm to the RIGHT of its direction of
travel. Material lies to the left of a contour (outlines counter-clockwise, holes clockwise), so a
positive ``d`` grows the material by ``d`` on every side and a negative ``d`` shrinks it.

The result stays exact (lines and arcs only):

- a line moves along its right-hand normal;
- an arc keeps its centre; its radius becomes ``r + d`` when it turns left (bulge > 0) and
  ``r - d`` when it turns right. An arc whose radius would reach zero is dropped and its
  neighbours are joined as below (the exact offset has a sharp corner there);
- at a corner where the offset curves separate, an arc of radius ``|d|`` about the original
  vertex is inserted (what a round cutting beam does around a convex corner);
- where they overlap, both are trimmed to their intersection (line-line, line-arc, arc-arc),
  taking the intersection nearest the corner;
- tangent joins need nothing; pieces that vanish in trimming are dropped and their neighbours
  rejoined.

When the loop collapses (a hole smaller than twice the offset, a slot narrower than the offset
path) or the result would cross itself, :class:`OffsetError` is raised.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, replace

import numpy as np
import shapely

from platewright.geometry.plate.curves import Contour, segment_arc
from platewright.geometry.tolerances import CHORD_TOL_MM, LENGTH_TOL_MM

__all__ = ["OffsetError", "offset_contour"]

#: Offset end points closer than this are joined without corner handling (mm).
_JOIN_TOL_MM = 1e-7
_TWO_PI = 2.0 * math.pi


class OffsetError(ValueError):
    """The offset of a contour does not exist as a simple closed loop (it collapses or crosses
    itself), e.g. a 1 mm hole offset 0.6 mm toward its centre."""


@dataclass
class _Piece:
    """One offset segment.

    Line: ``origin`` (2,) mm, unit direction ``u`` (2,), parameters ``s0 < s1`` (mm along ``u``).
    Arc: ``center`` (2,) mm, ``radius`` mm, start angle ``a0`` and signed ``sweep`` (radians);
    ``sweep_sign`` keeps the original direction so a piece eaten by trimming can be detected.
    """

    is_arc: bool
    origin: np.ndarray
    u: np.ndarray
    s0: float
    s1: float
    center: np.ndarray
    radius: float
    a0: float
    sweep: float
    sweep_sign: float = 1.0

    @staticmethod
    def line(p0: np.ndarray, p1: np.ndarray) -> _Piece:
        d = p1 - p0
        n = float(np.hypot(d[0], d[1]))
        return _Piece(False, p0.copy(), d / n, 0.0, n, np.zeros(2), 0.0, 0.0, 0.0)

    @staticmethod
    def arc(center: np.ndarray, radius: float, a0: float, sweep: float) -> _Piece:
        z = np.zeros(2)
        sign = 1.0 if sweep > 0 else -1.0
        return _Piece(True, z, z, 0.0, 0.0, center.copy(), radius, a0, sweep, sign)

    def copy(self) -> _Piece:
        return replace(self)

    def point(self, at_end: bool) -> np.ndarray:
        if self.is_arc:
            a = self.a0 + (self.sweep if at_end else 0.0)
            return self.center + self.radius * np.array([math.cos(a), math.sin(a)])
        return self.origin + self.u * (self.s1 if at_end else self.s0)

    def tangent(self, at_end: bool) -> np.ndarray:
        """Unit direction of travel at the start or end."""
        if self.is_arc:
            a = self.a0 + (self.sweep if at_end else 0.0)
            s = 1.0 if self.sweep > 0 else -1.0
            return s * np.array([-math.sin(a), math.cos(a)])
        return self.u

    def length(self) -> float:
        """Signed length (mm); zero or negative when trimming has eaten the piece."""
        if self.is_arc:
            return self.radius * self.sweep * self.sweep_sign
        return self.s1 - self.s0

    def trim(self, p: np.ndarray, at_end: bool) -> None:
        """Move the start or end of the piece to ``p`` (which lies on its carrier curve)."""
        if self.is_arc:
            a = math.atan2(p[1] - self.center[1], p[0] - self.center[0])
            old = self.a0 + (self.sweep if at_end else 0.0)
            delta = (a - old + math.pi) % _TWO_PI - math.pi
            if at_end:
                self.sweep += delta
            else:
                self.a0 += delta
                self.sweep -= delta
        else:
            s = float(np.dot(p - self.origin, self.u))
            if at_end:
                self.s1 = s
            else:
                self.s0 = s


def _cross(a: np.ndarray, b: np.ndarray) -> float:
    return float(a[0] * b[1] - a[1] * b[0])


def _line_line(a: _Piece, b: _Piece) -> list[np.ndarray]:
    den = _cross(a.u, b.u)
    if abs(den) < 1e-15:
        return []
    t = _cross(b.origin - a.origin, b.u) / den
    return [a.origin + t * a.u]


def _line_circle(ln: _Piece, c: np.ndarray, r: float) -> list[np.ndarray]:
    f = ln.origin - c
    bq = float(np.dot(f, ln.u))
    disc = bq * bq - (float(np.dot(f, f)) - r * r)
    if disc < 0.0:
        if disc > -1e-12 * max(1.0, r * r):
            disc = 0.0
        else:
            return []
    root = math.sqrt(disc)
    return [ln.origin + (-bq - root) * ln.u, ln.origin + (-bq + root) * ln.u]


def _circle_circle(c0: np.ndarray, r0: float, c1: np.ndarray, r1: float) -> list[np.ndarray]:
    dv = c1 - c0
    dist = float(np.hypot(dv[0], dv[1]))
    if dist < 1e-15:
        return []
    a = (r0 * r0 - r1 * r1 + dist * dist) / (2.0 * dist)
    h2 = r0 * r0 - a * a
    if h2 < 0.0:
        if h2 > -1e-12 * max(1.0, r0 * r0):
            h2 = 0.0
        else:
            return []
    h = math.sqrt(h2)
    base = c0 + a * dv / dist
    perp = np.array([-dv[1], dv[0]]) / dist
    return [base + h * perp, base - h * perp]


def _intersections(a: _Piece, b: _Piece) -> list[np.ndarray]:
    """Points where the carrier curves (infinite line or full circle) of two pieces cross."""
    if not a.is_arc and not b.is_arc:
        return _line_line(a, b)
    if not a.is_arc:
        return _line_circle(a, b.center, b.radius)
    if not b.is_arc:
        return _line_circle(b, a.center, a.radius)
    return _circle_circle(a.center, a.radius, b.center, b.radius)


def _raw_pieces(contour: Contour, d: float) -> list[_Piece | None]:
    """Each segment moved by ``d``; None where an arc's radius reaches zero."""
    out: list[_Piece | None] = []
    for p0, p1, b in contour.segments():
        chord = float(np.hypot(*(p1 - p0)))
        if chord < LENGTH_TOL_MM:
            continue
        if b == 0.0:
            t = (p1 - p0) / chord
            n = np.array([t[1], -t[0]])
            out.append(_Piece.line(p0 + d * n, p1 + d * n))
            continue
        arc = segment_arc(p0, p1, b)
        r = arc.radius + d if arc.sweep_rad > 0 else arc.radius - d
        if r <= LENGTH_TOL_MM:
            out.append(None)
            continue
        out.append(_Piece.arc(np.array(arc.center), r, arc.start_rad, arc.sweep_rad))
    return out


def _with_corners(raw: list[_Piece | None], d: float) -> tuple[list[_Piece], list[bool]]:
    """Insert a round corner of radius |d| about each original vertex where the offsets
    separate. Returns the pieces and, per piece, whether its END must be trimmed against the
    start of the next piece (False: they already meet)."""
    pieces: list[_Piece] = []
    trim_after: list[bool] = []
    n = len(raw)
    for i, a in enumerate(raw):
        if a is None:
            if trim_after:
                trim_after[-1] = True  # a collapsed arc: its neighbours must be trimmed
            continue
        pieces.append(a)
        trim_after.append(False)
        b = raw[(i + 1) % n]
        if b is None:
            trim_after[-1] = True
            continue
        pa, pb = a.point(at_end=True), b.point(at_end=False)
        if float(np.hypot(*(pa - pb))) <= _JOIN_TOL_MM:
            continue  # tangent join
        ta, tb = a.tangent(at_end=True), b.tangent(at_end=False)
        turn = math.atan2(_cross(ta, tb), float(np.dot(ta, tb)))
        if turn * d > 0.0:
            # the offsets separate: round corner about the original vertex
            vertex = pa - d * np.array([ta[1], -ta[0]])
            a0 = math.atan2(pa[1] - vertex[1], pa[0] - vertex[0])
            pieces.append(_Piece.arc(vertex, abs(d), a0, turn))
            trim_after.append(False)
        else:
            trim_after[-1] = True
    if raw and raw[0] is None and trim_after:
        trim_after[-1] = True
    return pieces, trim_after


def _trim(a: _Piece, b: _Piece) -> None:
    """Trim the end of ``a`` and the start of ``b`` to the crossing nearest their ends."""
    pa = a.point(at_end=True)
    pb = b.point(at_end=False)
    if float(np.hypot(*(pa - pb))) <= _JOIN_TOL_MM:
        return
    hits = _intersections(a, b)
    if not hits:
        raise OffsetError("offset pieces do not meet: the contour is too small for this offset")
    best = min(hits, key=lambda p: float(np.hypot(*(p - pa)) + np.hypot(*(p - pb))))
    a.trim(best, at_end=True)
    b.trim(best, at_end=False)


def _assemble(raw: list[_Piece | None], d: float) -> list[_Piece]:
    """Corners, then trims; pieces eaten by trimming are dropped and their neighbours trimmed
    against each other, until nothing more vanishes."""
    live, trim_after = _with_corners(raw, d)
    while True:
        if len(live) < 2:
            raise OffsetError("the contour collapses under this offset")
        work = [p.copy() for p in live]
        for i in range(len(work)):
            if trim_after[i]:
                _trim(work[i], work[(i + 1) % len(work)])
        gone = {i for i, p in enumerate(work) if p.length() <= LENGTH_TOL_MM}
        if not gone:
            return work
        if len(gone) == len(work):
            raise OffsetError("the contour collapses under this offset")
        keep_live: list[_Piece] = []
        keep_trim: list[bool] = []
        for i, p in enumerate(live):
            if i in gone:
                if keep_trim:
                    keep_trim[-1] = True
                continue
            keep_live.append(p)
            keep_trim.append(trim_after[i] or ((i + 1) % len(live)) in gone)
        if 0 in gone and keep_trim:
            keep_trim[-1] = True
        live, trim_after = keep_live, keep_trim


def _to_contour(pieces: list[_Piece]) -> Contour:
    verts = np.array([p.point(at_end=False) for p in pieces])
    bulges = np.array([math.tan(p.sweep / 4.0) if p.is_arc else 0.0 for p in pieces])
    return Contour(verts, bulges)


def _offset_circle(contour: Contour, d: float) -> Contour:
    (cx, cy), r = contour.circle_center_radius()
    new_r = r + d if contour.bulges[0] > 0 else r - d
    if new_r <= LENGTH_TOL_MM:
        raise OffsetError(
            f"a circle of diameter {2 * r:.4g} mm collapses when offset {d:.4g} mm toward its centre"
        )
    centre = np.array([cx, cy])
    return Contour(centre + (contour.vertices - centre) * (new_r / r), contour.bulges)


def offset_contour(contour: Contour, distance_mm: float) -> Contour:
    """The contour moved ``distance_mm`` (mm) to the right of its direction of travel.

    Positive distances grow the material (outlines outward, holes toward their centre);
    negative ones shrink it. The result is exact (lines and arcs) and keeps the orientation of
    the input. A circle stays two half arcs. ``distance_mm == 0`` returns ``contour`` itself.

    Raises :class:`OffsetError` when the offset loop collapses or crosses itself.
    """
    d = float(distance_mm)
    if d == 0.0:
        return contour
    if contour.is_circle:
        return _offset_circle(contour, d)
    raw = _raw_pieces(contour, d)
    if all(p is None for p in raw):
        raise OffsetError("the contour collapses under this offset")
    result = _to_contour(_assemble(raw, d))
    _check_simple(contour, result, d)
    return result


def _check_simple(original: Contour, result: Contour, d: float) -> None:
    """Raise OffsetError unless ``result`` is a simple loop of the same orientation."""
    area0 = original.signed_area()
    area1 = result.signed_area()
    if area1 == 0.0 or (area0 > 0) != (area1 > 0):
        raise OffsetError(f"the contour collapses when offset {d:.4g} mm")
    ring = result.to_points(CHORD_TOL_MM)
    if len(ring) < 3 or not shapely.is_valid(shapely.Polygon(ring)):
        raise OffsetError(f"the contour crosses itself when offset {d:.4g} mm")
