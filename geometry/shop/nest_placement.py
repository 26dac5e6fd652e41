"""Placement geometry of the sheet nesting: where one part may go on one partly filled sheet.

Used by :func:`.nesting.nest_parts` (the sheet-level driver; its module text gives the method).
Here: a part at one rotation as shapely polygons (``PartShape``: the as-cut area, its footprint grown
by the clearance, its edges and probe points), a sheet being filled (``SheetState``: placed
footprints, their edges, an STRtree and a prepared union), the candidate translations in
bottom-left order (edges of the sheet, of the placed parts and of their holes), the first free
candidate (probe points against the union, then the exact test against the STRtree), the
bottom-left move (vertex-edge ray casting down then left until it touches) and the choice among
rotations (lowest gravity centre, then leftmost).

Sheet frame: origin at the sheet's lower-left corner, x along the sheet width, y along its
height, mm; translations move the plate origin (mm); areas mm^2. ``usable`` is the (4,) float
box (x_min, y_min, x_max, y_max, mm) that every cut path must stay inside.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass, field

import numpy as np
import shapely
from shapely import affinity

__all__: list[str] = []

#: Line segments per quarter circle in the footprint's round joins (their chords cut the exact
#: offset by at most clearance x (1 - cos(pi / 64)), 0.0018 mm at a 1.5 mm clearance).
_QUAD_SEGS = 16
#: Overlap test shrink (mm): touching footprints are allowed, overlap deeper than this is not.
_TEST_SHRINK_MM = 1e-6
#: Gap (mm) left when a slide stops at a contact.
_SLIDE_GAP_MM = 1e-5
#: Candidates tested per shapely array call.
_BATCH = 512
#: Points of a part probed against the placed parts before the exact test (cheap rejection).
_PROBES = 24


@dataclass
class PartShape:
    """One item at one rotation, plate origin at the sheet origin (mm)."""

    raw: shapely.Polygon          # as cut paths: outline path minus inner paths
    foot: shapely.Polygon         # raw grown by the clearance (the occupied area)
    test: shapely.Polygon         # foot shrunk by _TEST_SHRINK_MM (overlap test)
    raw_box: np.ndarray           # (4,) float raw bounds
    foot_box: np.ndarray          # (4,) float foot bounds
    edges: np.ndarray             # (m, 2, 2) float foot edges
    ncoords: int = field(init=False)
    probes: np.ndarray = field(init=False)   # (p, 2) float points of raw, inside foot
    centroid: np.ndarray = field(init=False)  # (2,) float centroid of raw

    def __post_init__(self) -> None:
        self.ncoords = int(shapely.get_num_coordinates(self.test))
        ext = np.asarray(self.raw.exterior.coords)[:-1, :2]
        pick = np.unique(np.linspace(0, len(ext) - 1, min(len(ext), _PROBES)).astype(int))
        rep = np.asarray(self.raw.representative_point().coords)[:, :2]
        self.probes = np.vstack([rep, ext[pick]])
        self.centroid = np.asarray(self.raw.centroid.coords)[0, :2]


@dataclass
class SheetState:
    """A sheet being filled: placed footprints, their edges and an STRtree over them."""

    feet: list[shapely.Polygon] = field(default_factory=list)
    edges: list[np.ndarray] = field(default_factory=list)
    placed: list[tuple[int, int, float, float, float]] = field(default_factory=list)
    free_area_mm2: float = 0.0
    failed: set[tuple[int, int]] = field(default_factory=set)
    tree: shapely.STRtree | None = None
    union: shapely.Geometry | None = None


def _rings_edges(poly: shapely.Polygon) -> np.ndarray:
    """(m, 2, 2) float: every edge of every ring of ``poly`` (mm)."""
    out = []
    for ring in (poly.exterior, *poly.interiors):
        c = np.asarray(ring.coords)[:, :2]
        out.append(np.stack([c[:-1], c[1:]], axis=1))
    return np.concatenate(out)


def part_shape(base: shapely.Polygon, angle_deg: float, clearance_mm: float) -> PartShape:
    raw = affinity.rotate(base, angle_deg, origin=(0.0, 0.0))
    # straight edges move out by exactly the clearance, so two footprints that touch hold their
    # cut paths exactly the spacing apart there (a window sized for whole rows takes them)
    foot = shapely.buffer(raw, clearance_mm, quad_segs=_QUAD_SEGS)
    if not isinstance(foot, shapely.Polygon):
        foot = max(foot.geoms, key=lambda g: g.area)
    test = shapely.buffer(raw, clearance_mm - _TEST_SHRINK_MM, quad_segs=_QUAD_SEGS)
    return PartShape(raw, foot, test, np.array(raw.bounds), np.array(foot.bounds), _rings_edges(foot))


def _drop(moving: np.ndarray, obstacles: np.ndarray) -> float:
    """How far (mm) edges ``moving`` (m, 2, 2) can travel in -y before touching ``obstacles``
    (k, 2, 2): vertex-edge ray casts both ways (inf when nothing is in the way)."""
    if len(obstacles) == 0:
        return math.inf
    best = math.inf
    for verts, edges, sign in ((moving[:, 0], obstacles, 1.0), (obstacles[:, 0], moving, -1.0)):
        a, b = edges[:, 0], edges[:, 1]
        lo, hi = np.minimum(a[:, 0], b[:, 0]), np.maximum(a[:, 0], b[:, 0])
        vx = verts[:, 0][:, None]
        span = (vx >= lo[None]) & (vx <= hi[None]) & (hi - lo > 1e-12)[None]
        if not span.any():
            continue
        vi, ei = np.nonzero(span)
        dx = b[ei, 0] - a[ei, 0]
        y_edge = a[ei, 1] + (verts[vi, 0] - a[ei, 0]) * (b[ei, 1] - a[ei, 1]) / dx
        d = sign * (verts[vi, 1] - y_edge)
        d = d[d >= -1e-7]
        if len(d):
            best = min(best, float(d.min()))
    return max(best, 0.0)


def _slide(sheet: SheetState, shape: PartShape, usable: np.ndarray, tx: float, ty: float
           ) -> tuple[float, float]:
    """Bottom-left move: down as far as possible, then left, until neither moves (mm)."""
    obst = np.concatenate(sheet.edges) if sheet.edges else np.zeros((0, 2, 2))
    for _ in range(12):
        moved = 0.0
        for axis in (1, 0):
            t = np.array([tx, ty])
            mov = shape.edges + t
            lo, hi = shape.foot_box[1 - axis] + t[1 - axis], shape.foot_box[3 - axis] + t[1 - axis]
            ob = obst
            if len(ob):
                c = ob[:, :, 1 - axis]
                ob = ob[(c.max(axis=1) >= lo - 1e-9) & (c.min(axis=1) <= hi + 1e-9)]
            if axis == 0:  # moving left: swap x and y, then it is a drop
                mov, ob = mov[:, :, ::-1], ob[:, :, ::-1]
            wall = shape.raw_box[axis] + t[axis] - usable[axis]
            d = min(_drop(mov, ob), wall) - _SLIDE_GAP_MM
            if d > 1e-6:
                if axis == 1:
                    ty -= d
                else:
                    tx -= d
                moved += d
        if moved < 1e-3:
            break
    return tx, ty


def _candidates(sheet: SheetState, shape: PartShape, usable: np.ndarray) -> np.ndarray:
    """(n, 2) float translations to try, in bottom-left order (y, then x)."""
    fb, rb = shape.foot_box, shape.raw_box
    fc = (fb[:2] + fb[2:]) / 2.0
    xs, ys = [usable[0] - rb[0]], [usable[1] - rb[1]]
    for foot in sheet.feet:
        b = foot.bounds
        xs += [b[2] - fb[0], b[0] - fb[2]]
        ys += [b[3] - fb[1], b[1] - fb[3]]
        for ring in foot.interiors:
            hb = ring.bounds
            xs += [hb[0] - fb[0], (hb[0] + hb[2]) / 2.0 - fc[0]]
            ys += [hb[1] - fb[1], (hb[1] + hb[3]) / 2.0 - fc[1]]
    x = np.unique(np.round(xs, 9))
    y = np.unique(np.round(ys, 9))
    x = x[(x + rb[0] >= usable[0] - 1e-9) & (x + rb[2] <= usable[2] + 1e-9)]
    y = y[(y + rb[1] >= usable[1] - 1e-9) & (y + rb[3] <= usable[3] + 1e-9)]
    gy, gx = np.meshgrid(y, x, indexing="ij")
    return np.column_stack([gx.ravel(), gy.ravel()])


def _first_free(sheet: SheetState, shape: PartShape, cands: np.ndarray) -> tuple[float, float] | None:
    """The first candidate (bottom-left order) whose footprint overlaps no placed footprint."""
    if sheet.tree is None:
        return (float(cands[0, 0]), float(cands[0, 1])) if len(cands) else None
    # exact cheap rejection: a point of the part strictly inside a placed footprint
    # (points in stages, so most blocked candidates cost one or a few point tests)
    for lo in range(0, len(shape.probes), 4):
        pts = cands[:, None, :] + shape.probes[None, lo:lo + 4, :]
        blocked = shapely.contains_xy(sheet.union, pts[..., 0].ravel(), pts[..., 1].ravel())
        cands = cands[~blocked.reshape(len(cands), -1).any(axis=1)]
        if not len(cands):
            return None
    for start in range(0, len(cands), _BATCH):
        off = cands[start:start + _BATCH]
        geoms = np.full(len(off), shape.test, dtype=object)
        moved = shapely.transform(geoms, lambda c, o=off: c + np.repeat(o, shape.ncoords, axis=0))
        hit = np.zeros(len(off), dtype=bool)
        pairs = sheet.tree.query(moved, predicate="intersects")
        hit[pairs[0]] = True
        free = np.flatnonzero(~hit)
        if len(free):
            return float(off[free[0], 0]), float(off[free[0], 1])
    return None


def try_sheet(sheet: SheetState, shapes: Sequence[tuple[int, float, PartShape]], usable: np.ndarray,
               area: float) -> tuple[int, float, float, float] | None:
    """Best (rotation index, angle, tx, ty) for one item on one sheet, or None."""
    if area > sheet.free_area_mm2 + 1e-9:
        return None
    best = None
    for r, angle, shape in shapes:
        cands = _candidates(sheet, shape, usable)
        pos = _first_free(sheet, shape, cands)
        if pos is None:
            continue
        tx, ty = _slide(sheet, shape, usable, *pos)
        # lowest gravity centre, then leftmost: ranks rotations (and sheets' fill) better
        # than the reference corner when parts turn
        key = (round(ty + shape.centroid[1], 6), round(tx + shape.centroid[0], 6))
        if best is None or key < best[0]:
            best = (key, r, angle, tx, ty)
    return None if best is None else best[1:]


def add_part(sheet: SheetState, shape: PartShape, tx: float, ty: float, record: tuple) -> None:
    foot = affinity.translate(shape.foot, tx, ty)
    sheet.feet.append(foot)
    sheet.edges.append(shape.edges + np.array([tx, ty]))
    sheet.placed.append(record)
    sheet.free_area_mm2 -= shape.raw.area
    sheet.tree = shapely.STRtree(sheet.feet)
    sheet.union = foot if sheet.union is None else shapely.union(sheet.union, foot)
    shapely.prepare(sheet.union)
