"""Manufacturability rules, checked on the AS-CUT part geometry (nominal + fit allowance).

``check_plate`` returns a list of :class:`~platewright.geometry.model.Finding`, each with a level
(``error`` or ``warning``), a rule name, the features involved, the measured value, the limit
(mm unless the rule says otherwise) and a message with units. Rule names:

``bed_size``
    The plate's bounding box does not fit the machine bed in either orientation (error).
``feature_outside``
    An inner contour reaches outside the outline (error). Value: how far it reaches past the
    outline edge, mm; limit 0.
``feature_overlap``
    Two inner contours overlap (error). Value: overlap area, mm^2; limit 0.
``feature_size``
    Smallest width of a hole or slot (a round hole's diameter; otherwise the diameter of the
    largest circle that fits inside it). Warning below the sheet thickness (common practice:
    features >= thickness); error below max(1 mm, 2 x kerf) (common practice: details below 1 mm
    are fragile, and a hole narrower than two kerfs is burnt away rather than cut).
``web``
    Material between two inner contours, or between a non-round inner contour and the outline.
    The minimum web is the material's ``min_web_mm`` when set, otherwise the sheet thickness
    (common practice: web >= t). Warning below the minimum; error when the web is at or below
    zero (touching) or below max(0.5 x minimum, kerf): a web narrower than the kerf is gone after
    cutting with a kerf error of half its width, and half the minimum is where parts crack in
    handling (our choice, stated here).
``edge_distance``
    For round holes, the material between the hole and the outline (centre distance to the
    outline minus radius) replaces the ``web`` rule against the outline. Warning below
    max(1.5 t, d) (common practice for sheet metal; REFERENCE.md), or below the minimum web when
    that is larger; error below the ``web`` error limit.
``kerf_interpolated``
    The plate's kerf was interpolated between two thicknesses of the machine profile's entries
    for the material (warning: measure it). Value: the kerf used, mm; no limit.
``slot_travel``
    A ``slot`` feature with ``dims["travel_mm"]``: the bore swept along the slot axis over the
    travel (a stadium of the as-cut slot width and centre distance = travel, centred on the
    feature centre) must lie inside the outline shrunk by the minimum web. Otherwise an error
    whose value is the largest travel that fits (mm), limit = the travel asked for.
``label``
    An engraved label that was shrunk, shortened or dropped to stay inside the material, or
    whose ink comes within ``labels.LABEL_MARGIN_MM`` of a cut edge (warning; see
    :mod:`.labels` for the fitting rule and the face it is measured in).

Webs and edge distances are reported EXACTLY: they are measured on the lines and arcs of the
as-cut contours (:mod:`.distance`), not on their polygons. Shapely polygons built to
``CHORD_TOL_MM`` only find the candidate pairs (an STRtree, so the cost grows close to linearly
with the number of holes), the overlaps and the outside reach; a value within
2 x ``CHORD_TOL_MM`` of its limit counts as meeting it. The bed check uses the as-cut part's
exact bounding box.
"""

from __future__ import annotations

import math

import numpy as np
import shapely
from shapely.geometry import LineString, Point, Polygon

from platewright.geometry.model import Finding, Plate
from platewright.geometry.plate.curves import Contour
from platewright.geometry.plate.cutpaths import part_contours
from platewright.geometry.plate.distance import contour_distance, point_contour_distance
from platewright.geometry.plate.labels import label_findings
from platewright.geometry.plate.region import to_polygon
from platewright.geometry.shop.machines import KERF_INTERPOLATED
from platewright.geometry.tolerances import CHORD_TOL_MM

__all__ = ["check_plate", "has_errors", "RULE_NAMES"]

#: The rule names ``check_plate`` can report.
RULE_NAMES = (
    "bed_size",
    "feature_outside",
    "feature_overlap",
    "feature_size",
    "web",
    "edge_distance",
    "slot_travel",
    "kerf_interpolated",
    "label",
)

#: Absolute floor of a cuttable feature width, mm (common practice: details below 1 mm are fragile).
MIN_FEATURE_MM = 1.0
#: Distances within this of a limit count as meeting it (mm); covers the chord tolerance.
_SLACK_MM = 2.0 * CHORD_TOL_MM


def has_errors(findings: list[Finding]) -> bool:
    """True when any finding has level ``error``."""
    return any(f.level == "error" for f in findings)


def _polygon(contour: Contour) -> Polygon:
    """Shapely polygon of a contour to CHORD_TOL_MM."""
    return to_polygon(contour, chord_tol_mm=CHORD_TOL_MM)


class _Inner:
    """The inner contours of a plate as parallel arrays (one entry per contour)."""

    def __init__(self, items: list[tuple[str, Contour]]) -> None:
        self.ids = [fid for fid, _ in items]
        self.contours = [c for _, c in items]
        self.polys = np.array([_polygon(c) for c in self.contours], dtype=object)
        self.round = [c.is_circle for c in self.contours]


def _fmt(x: float) -> str:
    return f"{x:.3f}"


def _names(*ids: str) -> tuple[str, ...]:
    return tuple(dict.fromkeys(ids))


def check_plate(plate: Plate, bed_mm: tuple[float, float] | None = None) -> list[Finding]:
    """Check one plate for manufacturability; see the module docstring for the rules.

    plate: the plate (nominal geometry; checks run on the as-cut part edges).
    bed_mm: (width, height) of the machine bed in mm, or None to skip the bed check.
    Returns findings grouped by rule: bed, outside, overlap and web between inner contours,
    size, web/edge distance against the outline, slot travel, labels. Raises DesignError (from
    ``cutpaths.part_contours``) when a feature vanishes under its fit allowance.
    """
    t = plate.thickness_mm
    kerf = plate.kerf_mm
    min_web = plate.material.min_web_mm if plate.material.min_web_mm else t
    web_error = max(0.5 * min_web, kerf)

    items = part_contours(plate)
    outline_c = items[0][1]
    inner = _Inner(items[1:])
    outline = _polygon(outline_c)
    ring = outline.exterior

    findings: list[Finding] = []
    findings += _bed_rule(plate, outline_c, bed_mm)
    inside = _outside_rule(inner, outline, ring, findings)
    _overlap_and_web_rules(inner, min_web, web_error, findings)
    findings += _size_rule(inner, t, kerf)
    findings += _edge_rules(plate, inner, ring, outline_c, inside, min_web, web_error)
    findings += _slot_travel_rule(plate, items, outline, min_web)
    if plate.kerf_source.startswith(KERF_INTERPOLATED):
        findings.append(Finding("warning", "kerf_interpolated", (plate.outline.id,),
                                float(kerf), None, f"kerf {kerf:.3f} mm {plate.kerf_source}: "
                                "measure it on your machine (`platewright coupon`)"))
    findings += label_findings(plate)
    return findings


def _bed_rule(
    plate: Plate, outline_c: Contour, bed_mm: tuple[float, float] | None
) -> list[Finding]:
    if bed_mm is None:
        return []
    x0, y0, x1, y1 = outline_c.bbox()
    w, h = x1 - x0, y1 - y0
    bw, bh = bed_mm
    if (w <= bw and h <= bh) or (w <= bh and h <= bw):
        return []
    # report the orientation that overflows least
    over_a = max(w - bw, h - bh)
    over_b = max(w - bh, h - bw)
    if over_a <= over_b:
        value, limit = (w, bw) if w - bw >= h - bh else (h, bh)
    else:
        value, limit = (w, bh) if w - bh >= h - bw else (h, bw)
    msg = (
        f"plate {plate.name!r} is {_fmt(w)} x {_fmt(h)} mm and does not fit the "
        f"{_fmt(bw)} x {_fmt(bh)} mm machine bed in either orientation"
    )
    return [Finding("error", "bed_size", (plate.outline.id,), float(value), float(limit), msg)]


def _outside_rule(inner: _Inner, outline: Polygon, ring, findings: list[Finding]) -> np.ndarray:
    """Flag inner contours that reach outside the outline; returns the inside mask."""
    n = len(inner.polys)
    if n == 0:
        return np.zeros(0, dtype=bool)
    inside = shapely.covered_by(inner.polys, outline)
    for i in np.flatnonzero(~inside):
        pts = shapely.points(np.asarray(inner.polys[i].exterior.coords))
        outside = ~shapely.covered_by(pts, outline)
        reach = float(np.max(shapely.distance(pts[outside], ring))) if outside.any() else 0.0
        fid = inner.ids[i]
        findings.append(
            Finding(
                "error", "feature_outside", _names(fid), reach, 0.0,
                f"{fid} reaches {_fmt(reach)} mm outside the plate outline",
            )
        )
    return inside


def _overlap_and_web_rules(
    inner: _Inner, min_web: float, web_error: float, findings: list[Finding]
) -> None:
    """Overlap errors and web findings between pairs of inner contours (appended)."""
    n = len(inner.polys)
    if n < 2:
        return
    tree = shapely.STRtree(inner.polys)
    # candidates on the polygons (within the chord error of the exact distance)
    a, b = tree.query(inner.polys, predicate="dwithin", distance=min_web + _SLACK_MM)
    keep = a < b
    a, b = a[keep], b[keep]
    order = np.lexsort((b, a))
    a, b = a[order], b[order]
    pa, pb = inner.polys[a], inner.polys[b]
    dist = shapely.distance(pa, pb)
    overlap_area = np.where(dist <= 0.0, shapely.area(shapely.intersection(pa, pb)), 0.0)
    for i, j, d, area in zip(a, b, dist, overlap_area, strict=True):
        fi, fj = inner.ids[i], inner.ids[j]
        names = _names(fi, fj)
        who = f"{fi} and {fj}" if fi != fj else f"two contours of {fi}"
        if area > 0.0:
            findings.append(
                Finding(
                    "error", "feature_overlap", names, float(area), 0.0,
                    f"{who} overlap by {_fmt(area)} mm^2",
                )
            )
            continue
        if inner.round[i] and inner.round[j]:
            # exact for two circles: centre distance minus both radii
            (ci, ri), (cj, rj) = (c.circle_center_radius() for c in (inner.contours[i],
                                                                    inner.contours[j]))
            d = math.hypot(ci[0] - cj[0], ci[1] - cj[1]) - ri - rj
        else:  # exact on the lines and arcs
            d = contour_distance(inner.contours[i], inner.contours[j])
        findings += _web_finding(names, f"web between {who}", d, min_web, web_error)


def _web_finding(
    names: tuple[str, ...], what: str, d: float, min_web: float, web_error: float,
    rule: str = "web", warn_limit: float | None = None,
) -> list[Finding]:
    warn = min_web if warn_limit is None else warn_limit
    if d <= 0.0 or d < web_error - _SLACK_MM:
        return [
            Finding(
                "error", rule, names, d, web_error,
                f"{what} is {_fmt(d)} mm, below the error limit {_fmt(web_error)} mm "
                f"(minimum {_fmt(warn)} mm)",
            )
        ]
    if d < warn - _SLACK_MM:
        return [
            Finding(
                "warning", rule, names, d, warn,
                f"{what} is {_fmt(d)} mm, below the minimum {_fmt(warn)} mm",
            )
        ]
    return []


def _size_rule(inner: _Inner, t: float, kerf: float) -> list[Finding]:
    out: list[Finding] = []
    err_limit = max(MIN_FEATURE_MM, 2.0 * kerf)
    for i, c in enumerate(inner.contours):
        if inner.round[i]:
            width = 2.0 * c.circle_center_radius()[1]
            what = "diameter"
        else:
            width = _inscribed_width(inner.polys[i], max(t, err_limit))
            what = "width"
        fid = inner.ids[i]
        if width < err_limit - _SLACK_MM:
            out.append(
                Finding(
                    "error", "feature_size", (fid,), width, err_limit,
                    f"{fid} {what} {_fmt(width)} mm is below {_fmt(err_limit)} mm "
                    f"(1 mm or 2 x kerf, whichever is larger)",
                )
            )
        elif width < t - _SLACK_MM:
            out.append(
                Finding(
                    "warning", "feature_size", (fid,), width, t,
                    f"{fid} {what} {_fmt(width)} mm is below the sheet thickness {_fmt(t)} mm",
                )
            )
    return out


def _inscribed_width(poly: Polygon, enough_mm: float) -> float:
    """Diameter (mm) of the largest circle inside ``poly``. A coarse search first: its radius
    never exceeds the true one, so when it already reaches ``enough_mm / 2`` it is returned;
    otherwise the search is repeated to CHORD_TOL_MM."""
    coarse = 2.0 * float(shapely.maximum_inscribed_circle(poly, tolerance=0.05 * enough_mm).length)
    if coarse >= enough_mm:
        return coarse
    return 2.0 * float(shapely.maximum_inscribed_circle(poly, tolerance=CHORD_TOL_MM).length)


def _edge_rules(
    plate: Plate, inner: _Inner, ring, outline_c: Contour, inside: np.ndarray, min_web: float,
    web_error: float,
) -> list[Finding]:
    out: list[Finding] = []
    n = len(inner.polys)
    if n == 0:
        return out
    t = plate.thickness_mm
    oid = plate.outline.id
    dist = shapely.distance(inner.polys, ring)
    for i in np.flatnonzero(inside):
        fid = inner.ids[i]
        names = _names(fid, oid)
        if inner.round[i]:
            (cx, cy), r = inner.contours[i].circle_center_radius()
            limit = max(1.5 * t, 2.0 * r, min_web)
            # the polygon distance is never more than the exact one plus the chord tolerance
            if float(dist[i]) > limit + 2.0 * _SLACK_MM:
                continue
            d = point_contour_distance((cx, cy), outline_c) - r
            out += _web_finding(
                names, f"edge distance of {fid}", d, min_web, web_error,
                rule="edge_distance", warn_limit=limit,
            )
        else:
            if float(dist[i]) > min_web + 2.0 * _SLACK_MM:
                continue
            d = contour_distance(inner.contours[i], outline_c)
            out += _web_finding(
                names, f"web between {fid} and the outline", d, min_web, web_error
            )
    return out


def _slot_axis(poly: Polygon) -> tuple[np.ndarray, float]:
    """Unit long axis (2,) and short side (width, mm) of a polygon's minimum rotated rectangle."""
    rect = np.asarray(shapely.minimum_rotated_rectangle(poly).exterior.coords)[:4]
    e1, e2 = rect[1] - rect[0], rect[2] - rect[1]
    l1, l2 = float(np.hypot(*e1)), float(np.hypot(*e2))
    if l1 >= l2:
        return e1 / l1, l2
    return e2 / l2, l1


def _slot_travel_rule(
    plate: Plate, items: list[tuple[str, Contour]], outline: Polygon, margin: float
) -> list[Finding]:
    out: list[Finding] = []
    by_id: dict[str, list[Contour]] = {}
    for fid, c in items[1:]:
        by_id.setdefault(fid, []).append(c)
    for f in plate.features:
        travel = f.dims.get("travel_mm") if f.kind == "slot" else None
        if travel is None or f.id not in by_id:
            continue
        poly = shapely.union_all([_polygon(c) for c in by_id[f.id]])
        axis, width = _slot_axis(poly)
        # centres where a disc of the slot width plus the edge margin fits inside the outline
        room = outline.buffer(-(width / 2.0 + margin), quad_segs=64)
        c = np.asarray(f.center_mm, dtype=float)
        reach = outline.length + abs(travel)
        line = LineString([c - reach * axis, c + reach * axis])
        seg = room.intersection(line)
        reachable = 0.0
        centre = Point(c)
        for part in getattr(seg, "geoms", [seg]):
            if part.is_empty or part.geom_type != "LineString":
                continue
            if part.distance(centre) <= _SLACK_MM:
                p0, p1 = (np.asarray(p) for p in part.coords[:: len(part.coords) - 1])
                s0, s1 = sorted((float((p0 - c) @ axis), float((p1 - c) @ axis)))
                reachable = max(0.0, 2.0 * min(-s0, s1))
        if reachable < travel - _SLACK_MM:
            out.append(
                Finding(
                    "error", "slot_travel", (f.id,), reachable, float(travel),
                    f"{f.id} needs {_fmt(travel)} mm of travel but only {_fmt(reachable)} mm "
                    f"fits inside the outline with a {_fmt(margin)} mm edge margin",
                )
            )
    return out
