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
The placement geometry (candidate positions, overlap tests, the bottom-left move, the choice
among rotations) is in :mod:`.nest_placement`; this module is the sheet-level driver.

Clearances: a part's footprint is the polygon of its outline cut path minus its inner cut paths,
grown by exactly ``spacing_mm / 2`` (round joins of 16 chords a quarter). Footprints never
overlap, so any two cut paths, including a part and the hole it sits in, stay ``spacing_mm``
apart: exactly between straight edges, so a cut-out sized for whole rows of parts at the spacing
takes them; where an arc is involved to within the polygons' chord tolerance and the joins'
chords (each path's polygon lies up to ``chord_tol_mm`` inside its arcs, the joins up to
0.0018 mm at a 1.5 mm clearance: 0.014 mm in all, far below what a cutter holds). Every cut path
stays ``margin_mm`` inside the sheet edge (the margin is grown by the chord tolerance).

Sheet frame: origin at the sheet's lower-left corner, x along the sheet width, y along its
height, mm. A placement maps a plate point ``p`` to ``R(rotation_deg) @ p + (x_mm, y_mm)``.

Cut order on a sheet (see :func:`sheet_cut_order`): part by part, every part's inner contours
before its outline; a part that sits inside another part's hole is cut completely before the
part that holds it (before that hole, whose scrap would otherwise drop with the part on it).
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass

import numpy as np
import shapely
from shapely import affinity

from platewright.geometry.errors import DesignError, Problem
from platewright.geometry.model import CutContour, Plate
from platewright.geometry.plate.curves import Contour
from platewright.geometry.plate.region import plate_region, to_polygon
from platewright.geometry.shop.nest_placement import PartShape, SheetState, add_part, part_shape, try_sheet
from platewright.geometry.tolerances import CHORD_TOL_MM

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

    def depths(self) -> dict[str, int]:
        """Nesting depth of every placed copy by tag: 0 for a part on the open sheet, 1 for a
        part inside another part's cut-out, 2 for one inside that one's cut-out, ..."""
        inside = {p.tag: p.inside for p in self.placements}
        out: dict[str, int] = {}
        for tag in inside:
            depth, holder = 0, inside[tag]
            while holder and depth <= len(inside):
                depth += 1
                holder = inside.get(holder, "")
            out[tag] = depth
        return out


@dataclass(frozen=True)
class NestResult:
    """All sheets (numbered 1.. across materials), the settings used and notes (e.g. grain)."""

    sheets: tuple[NestedSheet, ...]
    spacing_mm: float
    margin_mm: float
    rotations: str
    notes: tuple[str, ...] = ()


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
    clearance = spacing_mm / 2.0
    groups: dict[tuple[str, float], list[int]] = {}
    for i, it in enumerate(items):
        if it.quantity > 0:
            groups.setdefault((it.plate.material.key, float(it.plate.thickness_mm)), []).append(i)
    problems: list[Problem] = []
    shapes: dict[int, list[tuple[int, float, PartShape]]] = {}
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
            kept: list[tuple[int, float, PartShape]] = []
            for r, a in enumerate(angles):
                s = part_shape(base, a, clearance)
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
        open_sheets: list[SheetState] = []
        for i, copy in units:
            placed = False
            for sheet in open_sheets:
                if (i, 0) in sheet.failed:
                    continue
                got = try_sheet(sheet, shapes[i], usable, shapes[i][0][2].raw.area)
                if got is None:
                    sheet.failed.add((i, 0))
                    continue
                r, a, tx, ty = got
                shape = next(s for rr, _, s in shapes[i] if rr == r)
                add_part(sheet, shape, tx, ty, (i, copy, a, tx, ty))
                placed = True
                break
            if not placed:
                sheet = SheetState(free_area_mm2=usable_area)
                got = try_sheet(sheet, shapes[i], usable, 0.0)
                if got is None:  # cannot happen: fit was checked on an empty sheet
                    raise DesignError(Problem(items[i].label, "part does not fit on an empty sheet"))
                r, a, tx, ty = got
                shape = next(s for rr, _, s in shapes[i] if rr == r)
                add_part(sheet, shape, tx, ty, (i, copy, a, tx, ty))
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

