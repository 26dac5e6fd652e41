"""Engraved labels that stay on their part: inside the material, clear of every cut (mm).

A label's extent is its ink box in the face the cut files name (:mod:`.lettering`). It fits when
that box lies inside the plate's as-cut material (the outline's part edge minus every hole's part
edge, fit allowances applied) shrunk by ``LABEL_MARGIN_MM``. Cut edges are the edges of that
material, so a label that fits runs over no hole and off no edge, and on a nest sheet it stays on
its own part.

The fitting rule (:func:`fit_label`, run when a plate is built), in this order:

1. the label as asked;
2. shrunk: the largest height, in 0.01 mm steps, down to ``MIN_LABEL_HEIGHT_MM`` (or the height
   asked, when that is smaller);
3. shortened, for the default text only (a text the design gives is never cut short): its least
   important field is dropped first, each shorter text again shrunk as in 2: the kerf, then the
   plate name when a part number names the part, then the material and thickness, leaving the
   part number (else the plate name);
4. dropped: the plate carries it in ``dropped_engravings`` and nothing is engraved.

A label with no ``at_mm`` may sit near the lower edge (the default), near the upper edge or in
the middle of the outline's box, whichever allows the largest height (the earlier one on a
tie); a position the design gives is kept. :func:`label_findings` reports every shrunk,
shortened or dropped label as a ``label`` warning, and measures every engraved label (whoever
placed it) against the same margin.
"""

from __future__ import annotations

import dataclasses
import math
from collections.abc import Sequence
from dataclasses import dataclass

import shapely

from platewright.geometry.errors import DesignError
from platewright.geometry.model import Engraving, Finding, Plate
from platewright.geometry.plate.cutpaths import part_contours
from platewright.geometry.plate.lettering import text_polygon
from platewright.geometry.plate.region import to_polygon

__all__ = [
    "LABEL_MARGIN_MM",
    "MIN_LABEL_HEIGHT_MM",
    "LabelRequest",
    "default_label_texts",
    "material_room",
    "fit_label",
    "label_findings",
]

#: Material kept between a label's ink and any cut edge, mm: twice the ~0.5 mm at which engraved
#: lines next to a cut burn away (REFERENCE.md, common practice).
LABEL_MARGIN_MM = 1.0
#: Smallest cap height a label is shrunk to, mm (common practice for engraved part marks, from
#: memory: below about 2 mm laser-engraved text becomes hard to read).
MIN_LABEL_HEIGHT_MM = 2.0
#: Height steps of the shrinking, mm.
_STEP_MM = 0.01
#: Slack of the label check, mm (the polygons are built to the chord tolerance).
_SLACK_MM = 0.01


@dataclass(frozen=True)
class LabelRequest:
    """A label as the design asks for it: ``texts`` from the full text to the shortest allowed
    (one entry when it may not be shortened), cap ``height_mm``, ``rotation_deg``, the anchors
    it may take in order of preference (mm), and its feature id."""

    id: str
    texts: tuple[str, ...]
    height_mm: float
    rotation_deg: float
    anchors_mm: tuple[tuple[float, float], ...]


def default_label_texts(name: str, part_number: str, material: str, kerf: str) -> tuple[str, ...]:
    """The default label and its shortenings, longest first: fields joined by two spaces, dropped
    in the order kerf, name (only when a part number names the part), material."""
    fields = {"name": name, "part": part_number, "material": material, "kerf": kerf}
    order = ("name", "part", "material", "kerf")
    drops = ["kerf"] + (["name"] if part_number else []) + ["material"]
    out = []
    gone: set[str] = set()
    for step in [None, *drops]:
        if step is not None:
            gone.add(step)
        text = "  ".join(fields[k] for k in order if k not in gone and fields[k])
        if text and text not in out:
            out.append(text)
    return tuple(out)


def material_room(plate: Plate, margin_mm: float = LABEL_MARGIN_MM) -> shapely.Geometry:
    """Where label ink may go: the as-cut material shrunk by ``margin_mm`` (mm), a shapely
    geometry (prepared). Uses the nominal contours when a fit allowance makes a feature vanish
    (the cut stage reports that)."""
    try:
        items = part_contours(plate)
    except DesignError:
        items = [(f.id, c) for f in (plate.outline, *plate.features) for c in f.contours]
    solids, holes = [], []
    for _, c in items:
        (solids if c.is_ccw() else holes).append(to_polygon(c))
    material = shapely.union_all(solids)
    if holes:
        material = shapely.difference(material, shapely.union_all(holes))
    room = shapely.make_valid(material)
    if margin_mm > 0.0:
        room = shapely.buffer(room, -margin_mm, quad_segs=16)
    shapely.prepare(room)
    return room


def _largest(room, text: str, at: tuple[float, float], asked: float, lowest: float,
             rotation: float) -> float | None:
    """The largest height in [lowest, asked] (0.01 mm steps) at which ``text`` fits, or None."""
    def fits(h: float) -> bool:
        return bool(room.covers(text_polygon(text, at, h, rotation)))

    if fits(asked):
        return asked
    if not fits(lowest):
        return None
    lo, hi = lowest, asked
    while hi - lo > _STEP_MM / 2.0:
        mid = 0.5 * (lo + hi)
        lo, hi = (mid, hi) if fits(mid) else (lo, mid)
    stepped = math.floor(lo / _STEP_MM + 1e-9) * _STEP_MM
    return stepped if stepped >= lowest and fits(stepped) else lo


def fit_label(plate: Plate, request: LabelRequest) -> Plate:
    """``plate`` with the label of ``request`` fitted by the module's rule: engraved (possibly
    shrunk or shortened; what was asked is kept in ``requested_text`` / ``requested_height_mm``)
    or, when nothing fits, listed in ``dropped_engravings``."""
    room = material_room(plate)
    asked = float(request.height_mm)
    lowest = min(asked, MIN_LABEL_HEIGHT_MM)
    full = request.texts[0]
    for text in request.texts:
        best: tuple[float, tuple[float, float]] | None = None
        for at in request.anchors_mm:
            h = _largest(room, text, at, asked, lowest, request.rotation_deg)
            if h is not None and (best is None or h > best[0] + 1e-12):
                best = (h, at)
        if best is not None:
            h, at = best
            label = Engraving(request.id, text, (float(at[0]), float(at[1])), h,
                              request.rotation_deg,
                              requested_text=full if text != full else "",
                              requested_height_mm=asked if h != asked else 0.0)
            return dataclasses.replace(plate, engravings=(*plate.engravings, label))
    at = request.anchors_mm[0]
    dropped = Engraving(request.id, full, (float(at[0]), float(at[1])), asked,
                        request.rotation_deg)
    return dataclasses.replace(plate, dropped_engravings=(*plate.dropped_engravings, dropped))


def _clearance(room_edge, material, poly: shapely.Polygon) -> float:
    """Material (mm) between the label box and the nearest cut edge; 0 when it crosses one."""
    if not material.covers(poly):
        return 0.0
    return float(shapely.distance(poly, room_edge))


def label_findings(plate: Plate, margin_mm: float = LABEL_MARGIN_MM) -> list[Finding]:
    """``label`` warnings: labels shrunk, shortened or dropped when the plate was built, and any
    engraved label whose ink box comes closer than ``margin_mm`` to a cut edge (value: the
    material between them, mm; limit: the margin)."""
    out: list[Finding] = []
    engraved: Sequence[Engraving] = plate.engravings
    material = material_room(plate, 0.0) if engraved else None
    edge = None if material is None else shapely.boundary(material)
    for e in engraved:
        what = f"label '{e.text}'"
        if e.requested_text:
            out.append(Finding("warning", "label", (e.id,), None, None,
                               f"label shortened to '{e.text}' to stay inside the material "
                               f"(asked: '{e.requested_text}')"))
        if e.requested_height_mm:
            out.append(Finding("warning", "label", (e.id,), e.height_mm, e.requested_height_mm,
                               f"{what} shrunk from {e.requested_height_mm:g} to "
                               f"{e.height_mm:g} mm to stay {margin_mm:g} mm inside the material"))
        poly = text_polygon(e.text, e.position_mm, e.height_mm, e.rotation_deg)
        if poly.is_empty or poly.area == 0.0:
            continue
        clear = _clearance(edge, material, poly)
        if clear < margin_mm - _SLACK_MM:
            out.append(Finding("warning", "label", (e.id,), clear, margin_mm,
                               f"{what} comes within {clear:.3f} mm of a cut edge (runs over a "
                               f"hole or off the part when 0), less than the {margin_mm:g} mm "
                               "margin"))
    for e in plate.dropped_engravings:
        lowest = min(e.height_mm, MIN_LABEL_HEIGHT_MM)
        out.append(Finding("warning", "label", (e.id,), None, lowest,
                           f"label '{e.text}' not engraved: even at {lowest:g} mm high and "
                           f"shortened it does not fit inside the material {margin_mm:g} mm "
                           "clear of every cut; give a shorter label text or set label: false"))
    return out
