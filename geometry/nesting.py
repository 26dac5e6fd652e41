"""Sheet nesting: lay every copy of every plate onto the fewest stock sheets.

Method: a greedy bottom-left-fill over candidate positions on the TRUE part outlines (shapely
polygons of the cut paths), after Jakobs (1996, "On genetic algorithms for the packing of
polygons", EJOR 88, bottom-left move) and Burke, Hellier, Kendall and Whitwell (2006, "A new
bottom-left-fill heuristic algorithm for the two-dimensional irregular packing problem",
Operations Research 54(3)): parts in decreasing order of size; for each part, each allowed
rotation and each open sheet (first fit), candidate positions are generated from the edges of
the sheet, of the placed parts and of their holes; they are tested in bottom-left order with
shapely 2 array functions (points of the part against the prepared union of the placed parts,
then the exact test against an STRtree of them); the first free one is slid down and left
(Jakobs' bottom-left move) by exact vertex-edge ray casting until it touches. Among the rotations'
candidate positions the one with the lowest centroid (then leftmost) wins, a gravity-centre
rule used in the bottom-left literature (from memory); it packed the benchmark part list denser
than ranking by the lower-left corner (benchmarks/bench_nest.py). A part may sit inside a hole
of another part, and a part with a hole may be placed around a smaller one already placed.

Clearances: a part's footprint is the polygon of its outline cut path minus its inner cut paths,
grown by ``spacing_mm / 2`` (plus the chord tolerance of the polygon view; the round joins are
circumscribed, so the footprint always covers the exact offset). Footprints never overlap, so
any two cut paths, including a part and the hole it sits in, stay ``spacing_mm`` apart; every
cut path stays ``margin_mm`` inside the sheet edge.

Sheet frame: origin at the sheet's lower-left corner, x along the sheet width, y along its
height, mm. A placement maps a plate point ``p`` to ``R(rotation_deg) @ p + (x_mm, y_mm)``.

Cut order on a sheet (see :func:`sheet_cut_order`): part by part, every part's inner contours
before its outline; a part that sits inside another part's hole is cut completely before the
part that holds it (before that hole, whose scrap would otherwise drop with the part on it).
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field

import numpy as np
import shapely
from shapely import affinity

from .curves import Contour
from .errors import DesignError, Problem
from .model import CutContour, Plate
from .region import plate_region, to_polygon
from .tolerances import CHORD_TOL_MM

__all__ = [
    "ROTATION_MODES",
    "NestItem",
    "SheetSize",
    "Placement",
    "NestedSheet",
    "NestResult",
    "nest_parts",
    "sheet_cut_order",
]

#: Allowed rotations (degrees) for each ``rotations`` mode. ``90`` is the default; ``free`` is
#: 15-degree steps. ``180`` and ``none`` keep the face grain of wood along its first direction.
ROTATION_MODES: dict[str, tuple[float, ...]] = {
    "none": (0.0,),
    "180": (0.0, 180.0),
    "90": (0.0, 90.0, 180.0, 270.0),
    "free": tuple(float(a) for a in range(0, 360, 15)),
}
#: Line segments per quarter circle in the footprint's round joins.
_QUAD_SEGS = 8
#: Overlap test shrink (mm): touching footprints are allowed, overlap deeper than this is not.
_TEST_SHRINK_MM = 1e-6
#: Gap (mm) left when a slide stops at a contact.
_SLIDE_GAP_MM = 1e-5
#: Candidates tested per shapely array call.
_BATCH = 512
#: Points of a part probed against the placed parts before the exact test (cheap rejection).
_PROBES = 24


@dataclass(frozen=True)
class NestItem:
    """One plate to nest: a unique ``label``, the plate, its cut paths (plate frame, mm, e.g.
    ``BuiltPlate.cut``) and how many copies to place."""

    label: str
    plate: Plate
    cut: tuple[CutContour, ...]
    quantity: int


@dataclass(frozen=True)
class SheetSize:
    """A stock sheet: width (x) and height (y) in mm, price each (None when unknown)."""

    width_mm: float
    height_mm: float
    price: float | None = None


@dataclass(frozen=True)
class Placement:
    """One placed copy: item label, copy number (1-based), rotation (degrees, counter-clockwise
    about the plate origin) then translation (mm, sheet frame). ``inside`` is the label#copy of
    the part whose hole holds this one ("" when none)."""

    label: str
    copy: int
    rotation_deg: float
    x_mm: float
    y_mm: float
    inside: str = ""

    @property
    def tag(self) -> str:
        """``label#copy``, unique on a nest."""
        return f"{self.label}#{self.copy}"

    def place(self, contour: Contour) -> Contour:
        """A plate-frame contour moved to the sheet frame (mm)."""
        return contour.rotated(self.rotation_deg).translated(self.x_mm, self.y_mm)


@dataclass(frozen=True)
class NestedSheet:
    """One filled sheet: material key, thickness and size (mm), placements in cut order, the
    as-cut area of the parts (mm^2, holes excluded) and every cut path in sheet cut order
    (sheet frame; feature ids ``label#copy/feature``)."""

    index: int
    material: str
    thickness_mm: float
    size: SheetSize
    placements: tuple[Placement, ...]
    parts_area_mm2: float
    cut: tuple[CutContour, ...]

    @property
    def utilisation(self) -> float:
        """Parts area / sheet area (0..1)."""
        return self.parts_area_mm2 / (self.size.width_mm * self.size.height_mm)


@dataclass(frozen=True)
class NestResult:
    """All sheets (numbered 1.. across materials), the settings used and notes (e.g. grain)."""

    sheets: tuple[NestedSheet, ...]
    spacing_mm: float
    margin_mm: float
    rotations: str
    notes: tuple[str, ...] = ()


@dataclass
class _Shape:
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
class _Sheet:
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


def _item_polygon(item: NestItem, chord_tol_mm: float) -> shapely.Polygon:
    """The area inside the outline cut path and outside every inner cut path (mm)."""
    outer = [to_polygon(c.path, chord_tol_mm) for c in item.cut if c.layer == "outer"]
    holes = [to_polygon(c.path, chord_tol_mm) for c in item.cut
             if c.layer != "outer" and not c.path.is_ccw()]
    islands = [to_polygon(c.path, chord_tol_mm) for c in item.cut
               if c.layer != "outer" and c.path.is_ccw()]
    if not outer:
        raise DesignError(Problem(item.label, "plate has no outline cut path"))
    poly = shapely.union_all(outer)
    if holes:
        poly = shapely.difference(poly, shapely.union_all(holes))
    if islands:  # material left standing inside a cut-out stays occupied
        poly = shapely.union(poly, shapely.union_all(islands))
    if not isinstance(poly, shapely.Polygon):
        poly = max(getattr(poly, "geoms", [poly]), key=lambda g: g.area)
    return shapely.Polygon(poly.exterior, [r for r in poly.interiors])


def _shape(base: shapely.Polygon, angle_deg: float, clearance_mm: float) -> _Shape:
    raw = affinity.rotate(base, angle_deg, origin=(0.0, 0.0))
    # circumscribed round joins: chords stay outside the exact offset curve
    grow = clearance_mm / math.cos(math.pi / (4 * _QUAD_SEGS))
    foot = shapely.buffer(raw, grow, quad_segs=_QUAD_SEGS)
    if not isinstance(foot, shapely.Polygon):
        foot = max(foot.geoms, key=lambda g: g.area)
    test = shapely.buffer(raw, grow - _TEST_SHRINK_MM, quad_segs=_QUAD_SEGS)
    return _Shape(raw, foot, test, np.array(raw.bounds), np.array(foot.bounds), _rings_edges(foot))


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


def _slide(sheet: _Sheet, shape: _Shape, usable: np.ndarray, tx: float, ty: float
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


def _candidates(sheet: _Sheet, shape: _Shape, usable: np.ndarray) -> np.ndarray:
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


def _first_free(sheet: _Sheet, shape: _Shape, cands: np.ndarray) -> tuple[float, float] | None:
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


def _try_sheet(sheet: _Sheet, shapes: Sequence[tuple[int, float, _Shape]], usable: np.ndarray,
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


def _add(sheet: _Sheet, shape: _Shape, tx: float, ty: float, record: tuple) -> None:
    foot = affinity.translate(shape.foot, tx, ty)
    sheet.feet.append(foot)
    sheet.edges.append(shape.edges + np.array([tx, ty]))
    sheet.placed.append(record)
    sheet.free_area_mm2 -= shape.raw.area
    sheet.tree = shapely.STRtree(sheet.feet)
    sheet.union = foot if sheet.union is None else shapely.union(sheet.union, foot)
    shapely.prepare(sheet.union)


def _check(spacing_mm: float, margin_mm: float, rotations: str) -> None:
    problems = []
    if not (math.isfinite(spacing_mm) and spacing_mm >= 0):
        problems.append(Problem("--spacing-mm", f"must be >= 0 mm, got {spacing_mm}"))
    if not (math.isfinite(margin_mm) and margin_mm >= 0):
        problems.append(Problem("--margin-mm", f"must be >= 0 mm, got {margin_mm}"))
    if rotations not in ROTATION_MODES:
        problems.append(Problem("--rotations", f"unknown mode '{rotations}'",
                                hint="valid: " + ", ".join(ROTATION_MODES)))
    if problems:
        raise DesignError(problems)


def nest_parts(items: Sequence[NestItem], sheets: Mapping[tuple[str, float], SheetSize], *,
               spacing_mm: float = 3.0, margin_mm: float = 5.0, rotations: str = "90",
               chord_tol_mm: float = CHORD_TOL_MM) -> NestResult:
    """Place every copy of every item on the fewest sheets, one material and thickness per sheet.

    items: plates with cut paths (plate frame, mm) and quantities (0 copies are skipped).
    sheets: (material key, thickness_mm) -> the stock sheet for that group.
    spacing_mm: least distance between any two cut paths (mm); margin_mm: least distance from a
    cut path to the sheet edge (mm); rotations: a key of :data:`ROTATION_MODES`.
    Raises DesignError when a setting is bad, a group has no sheet, or a part fits on no sheet.
    """
    _check(spacing_mm, margin_mm, rotations)
    angles = ROTATION_MODES[rotations]
    clearance = spacing_mm / 2.0 + chord_tol_mm
    groups: dict[tuple[str, float], list[int]] = {}
    for i, it in enumerate(items):
        if it.quantity > 0:
            groups.setdefault((it.plate.material.key, float(it.plate.thickness_mm)), []).append(i)
    problems: list[Problem] = []
    shapes: dict[int, list[tuple[int, float, _Shape]]] = {}
    areas: dict[int, float] = {}
    for (mat, t), idx in groups.items():
        size = sheets.get((mat, t))
        if size is None:
            problems.append(Problem(f"sheet.{mat}", f"no stock sheet given for {mat} {t:g} mm"))
            continue
        inset = margin_mm + chord_tol_mm
        usable = np.array([inset, inset, size.width_mm - inset, size.height_mm - inset])
        for i in idx:
            base = _item_polygon(items[i], chord_tol_mm)
            areas[i] = float(plate_region(items[i].plate, chord_tol_mm).area)
            kept: list[tuple[int, float, _Shape]] = []
            for r, a in enumerate(angles):
                s = _shape(base, a, clearance)
                same = any(shapely.equals_exact(
                    affinity.translate(s.raw, *(k.raw_box[:2] - s.raw_box[:2])), k.raw, 1e-6)
                    for _, _, k in kept)
                w, h = s.raw_box[2] - s.raw_box[0], s.raw_box[3] - s.raw_box[1]
                if not same and w <= usable[2] - usable[0] + 1e-9 and h <= usable[3] - usable[1] + 1e-9:
                    kept.append((r, a, s))
            if not kept:
                b = base.bounds
                problems.append(Problem(
                    items[i].label, f"part {b[2] - b[0]:.1f} x {b[3] - b[1]:.1f} mm does not fit on the "
                    f"{size.width_mm:g} x {size.height_mm:g} mm sheet inside a {margin_mm:g} mm margin",
                    hint="use a bigger sheet, a smaller margin or --rotations free"))
            shapes[i] = kept
    if problems:
        raise DesignError(problems)

    out: list[NestedSheet] = []
    notes: list[str] = []
    for (mat, t), idx in groups.items():
        size = sheets[(mat, t)]
        inset = margin_mm + chord_tol_mm
        usable = np.array([inset, inset, size.width_mm - inset, size.height_mm - inset])
        usable_area = float((usable[2] - usable[0]) * (usable[3] - usable[1]))
        units = [(i, c) for i in idx for c in range(1, items[i].quantity + 1)]
        units.sort(key=lambda u: (-shapes[u[0]][0][2].foot.envelope.area, items[u[0]].label, u[1]))
        open_sheets: list[_Sheet] = []
        for i, copy in units:
            placed = False
            for sheet in open_sheets:
                if (i, 0) in sheet.failed:
                    continue
                got = _try_sheet(sheet, shapes[i], usable, shapes[i][0][2].raw.area)
                if got is None:
                    sheet.failed.add((i, 0))
                    continue
                r, a, tx, ty = got
                shape = next(s for rr, _, s in shapes[i] if rr == r)
                _add(sheet, shape, tx, ty, (i, copy, a, tx, ty))
                placed = True
                break
            if not placed:
                sheet = _Sheet(free_area_mm2=usable_area)
                got = _try_sheet(sheet, shapes[i], usable, 0.0)
                if got is None:  # cannot happen: fit was checked on an empty sheet
                    raise DesignError(Problem(items[i].label, "part does not fit on an empty sheet"))
                r, a, tx, ty = got
                shape = next(s for rr, _, s in shapes[i] if rr == r)
                _add(sheet, shape, tx, ty, (i, copy, a, tx, ty))
                open_sheets.append(sheet)
        for sheet in open_sheets:
            placements = [Placement(items[i].label, c, a, tx, ty) for i, c, a, tx, ty in sheet.placed]
            cut, ordered = sheet_cut_order(placements, [items[p[0]] for p in sheet.placed], chord_tol_mm)
            area = sum(areas[p[0]] for p in sheet.placed)
            out.append(NestedSheet(len(out) + 1, mat, t, size, tuple(ordered), area, tuple(cut)))
        if items[idx[0]].plate.material.orthotropic is not None:  # a face grain
            turned = sorted({items[i].label for s in open_sheets for i, _, a, _, _ in s.placed
                             if abs(math.remainder(a, 180.0)) > 1e-9})
            if turned:
                notes.append(f"{mat}: the face grain of {', '.join(turned)} runs across the sheet "
                             f"(rotated); use --rotations 180 to keep it along the sheet")
    return NestResult(tuple(out), spacing_mm, margin_mm, rotations, tuple(notes))


def sheet_cut_order(placements: Sequence[Placement], items: Sequence[NestItem],
                    chord_tol_mm: float = CHORD_TOL_MM) -> tuple[list[CutContour], list[Placement]]:
    """Cut paths of the placed parts in sheet frame and cut order, and the placements in that
    order (with ``inside`` set).

    Rule: part by part, each part's inner contours (in the plate's order) then its outline;
    parts inside another's hole first, deepest first, otherwise in placement order. Feature ids
    become ``label#copy/feature``; ``order`` runs 0..n-1 over the sheet.
    """
    outlines = []
    for p, it in zip(placements, items):
        outer = [to_polygon(p.place(c.path), chord_tol_mm) for c in it.cut if c.layer == "outer"]
        outlines.append(shapely.union_all(outer))
    filled = [shapely.Polygon(o.exterior) if isinstance(o, shapely.Polygon) else o.convex_hull
              for o in outlines]
    depth = [0] * len(placements)
    holder = [-1] * len(placements)
    tree = shapely.STRtree(outlines)
    for j, f in enumerate(filled):
        for i in tree.query(f, predicate="contains_properly"):
            if i != j:
                depth[i] += 1
                # the holder is the smallest part that contains this one
                if holder[i] < 0 or f.area < filled[holder[i]].area:
                    holder[i] = j
    order = sorted(range(len(placements)), key=lambda k: (-depth[k], k))
    cut: list[CutContour] = []
    ordered: list[Placement] = []
    for k in order:
        p, it = placements[k], items[k]
        inside = placements[holder[k]].tag if holder[k] >= 0 else ""
        ordered.append(Placement(p.label, p.copy, p.rotation_deg, p.x_mm, p.y_mm, inside))
        seq = sorted(it.cut, key=lambda c: (c.layer == "outer", c.order))
        for c in seq:
            cut.append(CutContour(f"{p.tag}/{c.feature_id}", c.layer, len(cut), p.place(c.path),
                                  p.place(c.part_contour)))
    return cut, ordered

