"""Keep-outs by what a feature does: the solid ring a lightening hole must leave round it.

Every inner contour of a plate gets a role, and the role a rule for the width of the ring of
material kept round the feature's as-cut edge (mm). The rules and where they come from:

``bearing_seat`` (a ``bore`` with a press or transition fit) and ``press_fit`` (any other
round hole with a press fit or a negative fit allowance)
    Lame's thick-walled ring with a rigid insert (a steel bearing or pin in a softer plate;
    plane stress, Timoshenko and Goodier, Theory of Elasticity, thick-walled cylinder; the
    press-fit form as in Shigley's Mechanical Engineering Design, "press and shrink fits"):
    the hoop stress at the bore of a ring of outer radius b round a bore of radius a, for the
    same interference, is ``C (1 + nu) / (C + nu)`` times that of an unbounded plate, with
    ``C = (b^2 + a^2) / (b^2 - a^2)``. The ring is the narrowest with at most
    ``PRESS_FIT_STRESS_RISE`` (15 %) more hoop stress: ``C = (1 + e) nu / (nu - e)``,
    ``b / a = sqrt((C + 1) / (C - 1))``, ring = ``b - a`` (about 0.39 d for acrylic,
    nu = 0.37). The fit itself is set from a test piece (REFERENCE.md).
``shaft_bore`` (a ``bore`` with a slide or clearance fit, or a slotted bore) and ``fastener``
(holes of fastener arrays and mount holes)
    Edge distance ``FASTENER_EDGE_FACTOR`` (1.5) x d from the hole's centre, so a ring of
    ``(1.5 - 0.5) d = d`` (common practice; EN 1993-1-8 Table 3.3 asks at least 1.2 d0 for
    steel bolts; wood codes ask about 1.5 d for bolts, from memory).
``slot`` (slots and strap slots)
    The same edge distance with the slot's width for d: a ring of one slot width.
``motor_face`` (the pilot and mount holes of one motor or custom mount, or its strap slots)
    The motor's face (or the band its strap clamps) bears on the plate: the convex hull of the
    group's contours stays solid, plus the fastener ring of its largest hole (common practice:
    a flange is clamped onto flat, whole material).
``cutout`` (cable pass-throughs and other cut-outs) and anything else
    The minimum web only (they carry no load of their own).

No ring is narrower than the minimum web between holes (``settings.min_web_mm``, common
practice "hole to hole >= 2 t"). A ring can be set per feature (``lightening.keep_outs`` in the
design file: a feature id, or the id of a fastener array or mount for all its holes, with
``ring_mm`` and/or ``role``); ``feature_ring_mm`` sets one ring for every feature. Lengths mm,
areas mm^2.
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass

import shapely

from platewright.geometry.model import Feature, Plate
from platewright.geometry.plate.curves import Contour
from platewright.geometry.plate.region import to_polygon

__all__ = [
    "ROLES",
    "ROLE_RULES",
    "PRESS_FIT_STRESS_RISE",
    "FASTENER_EDGE_FACTOR",
    "KeepOutRule",
    "KeepOut",
    "feature_role",
    "press_fit_ring_mm",
    "ring_width_mm",
    "feature_keep_outs",
]

#: Feature roles with a keep-out rule (see the module text).
ROLES = ("bearing_seat", "press_fit", "shaft_bore", "fastener", "slot", "motor_face", "cutout")
#: Largest rise of the hoop stress at a press-fit bore over an unbounded plate's (Lame ring).
PRESS_FIT_STRESS_RISE = 0.15
#: Edge distance of a fastener, centre to material edge, in hole diameters (common practice).
FASTENER_EDGE_FACTOR = 1.5
#: One line per role: the rule as printed in reports.
ROLE_RULES: dict[str, str] = {
    "bearing_seat": "Lame ring, hoop stress at most +15 % over an unbounded plate",
    "press_fit": "Lame ring, hoop stress at most +15 % over an unbounded plate",
    "shaft_bore": "edge distance 1.5 d from the centre (common practice)",
    "fastener": "edge distance 1.5 d from the centre (common practice)",
    "slot": "edge distance 1.5 x width from the centre line (common practice)",
    "motor_face": "face footprint solid plus the fastener ring (common practice)",
    "cutout": "minimum web only",
    "outline": "band along the outline",
    "footprint": "component footprint (the part rests on it)",
    "load_or_support": "where a load enters or a support holds",
    "solid_zone": "marked solid in the design file",
    "label": "engraved label with its margin (a hole never runs under a label)",
    "user": "set in the design file",
}
_MOTOR_KINDS = ("pilot", "mount_hole", "strap_slot")


@dataclass(frozen=True)
class KeepOutRule:
    """A per-feature setting from ``lightening.keep_outs``: feature id (or group id), role
    and/or ring width (mm); None keeps the default."""

    feature: str
    role: str | None = None
    ring_mm: float | None = None


@dataclass(frozen=True)
class KeepOut:
    """One keep-out zone: what it protects (feature id, group id, or a name such as
    ``outline``), its role, the ring width used (mm, None for zones that are not rings), the
    rule in words, the zone (shapely geometry, mm) and its area inside the plate (mm^2)."""

    name: str
    role: str
    ring_mm: float | None
    rule: str
    zone: shapely.Geometry
    area_mm2: float = 0.0


def feature_role(feature: Feature) -> str:
    """The default role of ``feature`` from its kind and fit (see the module text)."""
    kind, fit = feature.kind, feature.fit_class
    round_ = len(feature.contours) == 1 and feature.contours[0].is_circle
    if kind in _MOTOR_KINDS and "." in feature.id:
        return "motor_face"
    if kind == "bore":
        return "bearing_seat" if fit in ("press", "transition") else "shaft_bore"
    if round_ and (fit == "press" or feature.fit_allowance_mm < 0.0):
        return "press_fit"
    if kind == "slot" and fit:
        return "shaft_bore"  # a slotted bore: an axle rides in it
    if kind in ("hole", "mount_hole", "pilot"):
        return "fastener"
    if kind in ("slot", "strap_slot"):
        return "slot"
    return "cutout"


def press_fit_ring_mm(diameter_mm: float, poisson_ratio: float,
                      stress_rise: float = PRESS_FIT_STRESS_RISE) -> float:
    """Ring width (mm) round a press-fit bore of ``diameter_mm`` for at most ``stress_rise``
    more hoop stress than an unbounded plate (Lame, rigid insert; see the module text).
    0 when the plate's Poisson ratio is at most ``stress_rise`` (the rise never reaches it)."""
    nu, e = float(poisson_ratio), float(stress_rise)
    if nu <= e:
        return 0.0
    c = (1.0 + e) * nu / (nu - e)
    return 0.5 * diameter_mm * (math.sqrt((c + 1.0) / (c - 1.0)) - 1.0)


def _width_mm(contour: Contour) -> float:
    """A contour's diameter (round) or its smallest width (the short side of its minimum
    rotated rectangle), mm."""
    if contour.is_circle:
        return 2.0 * contour.circle_center_radius()[1]
    rect = shapely.minimum_rotated_rectangle(to_polygon(contour, 0.01))
    x = list(rect.exterior.coords)
    return min(math.dist(x[0], x[1]), math.dist(x[1], x[2]))


def ring_width_mm(role: str, width_mm: float, poisson_ratio: float, min_web_mm: float) -> float:
    """The ring (mm) of ``role`` round a feature ``width_mm`` wide (diameter or slot width),
    never below ``min_web_mm``."""
    if role in ("bearing_seat", "press_fit"):
        ring = press_fit_ring_mm(width_mm, poisson_ratio)
    elif role in ("shaft_bore", "fastener", "slot", "motor_face"):
        ring = (FASTENER_EDGE_FACTOR - 0.5) * width_mm
    else:
        ring = 0.0
    return max(ring, min_web_mm)


def _rule_for(rules: Mapping[str, KeepOutRule], fid: str) -> KeepOutRule | None:
    if fid in rules:
        return rules[fid]
    group = fid.rsplit(".", 1)[0] if "." in fid else ""
    return rules.get(group) if group else None


def feature_keep_outs(
    plate: Plate,
    contours: Sequence[tuple[str, Contour]],
    *,
    min_web_mm: float,
    tol_mm: float,
    feature_ring_mm: float | None = None,
    rules: Sequence[KeepOutRule] = (),
) -> list[KeepOut]:
    """The keep-out of every inner contour of ``plate`` (as-cut ``contours``: (feature id,
    contour) pairs, the outline excluded), one per feature or per motor group, in plate order.

    feature_ring_mm: one ring for every feature (still at least the minimum web). rules:
    per-feature roles and rings. Zones are shapely polygons to ``tol_mm``; ``area_mm2`` is left
    0 (the caller measures it inside the plate).
    """
    by_id = {f.id: f for f in plate.features}
    nu = plate.material.poisson_ratio
    table = {r.feature: r for r in rules}
    groups: dict[str, list[tuple[str, Contour]]] = {}
    out: list[KeepOut] = []
    for fid, contour in contours:
        feat = by_id.get(fid)
        if feat is None:
            continue
        rule = _rule_for(table, fid)
        role = (rule.role if rule and rule.role else None) or feature_role(feat)
        if role == "motor_face" and (rule is None or rule.ring_mm is None) \
                and feature_ring_mm is None:
            groups.setdefault(fid.rsplit(".", 1)[0], []).append((fid, contour))
            continue
        poly = to_polygon(contour, tol_mm)
        if rule is not None and rule.ring_mm is not None:
            ring, text = max(rule.ring_mm, min_web_mm), ROLE_RULES["user"]
        elif feature_ring_mm is not None:
            ring, text = max(feature_ring_mm, min_web_mm), "lightening.feature_ring_mm"
        else:
            ring = ring_width_mm(role, _width_mm(contour), nu, min_web_mm)
            text = ROLE_RULES[role]
        out.append(KeepOut(fid, role, float(ring), text, poly.buffer(ring, quad_segs=16)))
    for name, members in groups.items():
        polys = [to_polygon(c, tol_mm) for _, c in members]
        holes = [c for fid, c in members if by_id[fid].kind != "pilot"]
        widest = max((_width_mm(c) for c in holes), default=0.0)
        ring = ring_width_mm("motor_face", widest, nu, min_web_mm)
        hull = shapely.union_all(polys).convex_hull
        out.append(KeepOut(name, "motor_face", float(ring), ROLE_RULES["motor_face"],
                           hull.buffer(ring, quad_segs=16)))
    return out
