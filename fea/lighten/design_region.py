"""The design region of a plate for lightening: where holes may go, and the settings that shape it.

The design region is the plate's as-cut material minus keep-out zones, each recorded with what
it protects, its rule and its area (so a report can show what limits the saving):

- a ring round every functional feature whose width follows what the feature does
  (:mod:`.keep_outs`: bearing seats and press fits by Lame's ring, fasteners, shaft bores and
  slots by an edge distance of 1.5 diameters, motor faces by their footprint, cut-outs by the
  minimum web), never less than the minimum web, overridable per feature;
- a band of ``edge_margin_mm`` along the outline;
- component footprints and the areas of area loads (the weight must have material to sit on),
  and a disc round point loads and point supports;
- user zones marked solid in the design file (``lightening.solid_zones``);
- the engraved labels' ink boxes with their margin (``labels.LABEL_MARGIN_MM``), so that a new
  hole never runs under a label.

A new hole placed inside the region therefore keeps its feature's ring to every feature and the
margin to the outline; the web between new holes is enforced where holes are made
(:mod:`.tracing`, :mod:`.patterns`). All lengths in mm, areas mm^2.
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, replace
from pathlib import Path
from typing import Any

import shapely

from platewright.fea.lighten.keep_outs import ROLE_RULES, KeepOut, KeepOutRule, feature_keep_outs
from platewright.fea.loadcases.parse import Box, Component, LoadCase
from platewright.geometry.model import Plate
from platewright.geometry.plate.cutpaths import part_contours
from platewright.geometry.plate.labels import LABEL_MARGIN_MM
from platewright.geometry.plate.lettering import text_polygon
from platewright.geometry.plate.region import plate_region, to_polygon

__all__ = [
    "STYLES",
    "PATTERN_SHAPES",
    "LighteningSettings",
    "DesignRegion",
    "design_region",
    "resolved_settings",
    "settings_from_mapping",
    "lightening_section",
]

#: Lightening styles: free-form holes traced from the density field, or a regular array.
STYLES = ("organic", "pattern")
#: Hole shapes of the regular style.
PATTERN_SHAPES = ("round", "triangle", "slot", "grid")
#: Region polygons are built to this chord tolerance, mm (coarser than cut files: they only
#: bound where holes may go, and every hole is checked on exact geometry afterwards).
_REGION_TOL_MM = 0.02


@dataclass(frozen=True)
class LighteningSettings:
    """Settings of a lightening run (the design file's ``lightening:`` section).

    None means "derived from the plate" as stated. Lengths mm.
    style: "organic" | "pattern". deflection_budget: the stiffness budget, a share (0.1 = every
    case may deflect at most 10 % more than the solid plate, on top of its own limits; None:
    only the cases' own limits, the volume share chosen from their slack). budget_curve: more
    budgets at which the continuous optimum is also found (for the report's curve).
    edge_margin_mm: solid band along the outline (None:
    ``max(1.5 t, min web)``). feature_ring_mm: ring kept round every feature (None: ``max(1.5 t,
    d)`` for round holes, the minimum web for the others). min_web_mm: web between new holes and
    to every contour (None: ``max(2 t, material min web)``, common practice "hole to hole >=
    2 t"). corner_radius_mm: smallest corner radius of a new hole (None: ``max(t, 1 mm)``).
    min_hole_mm: smallest width of a new hole (None: ``max(3 t, 2 corner radius)``).
    chord_tol_mm: largest distance of a hole's lines and arcs from the traced shape.
    solid_zones: boxes kept solid. pattern_shape: "round" | "triangle" | "slot" | "grid".
    pattern_pitch_mm: lattice pitch of the regular style (None: from the plate size).
    mesh_size_mm: element size of the optimisation mesh (None: bounding-box diagonal / 45).
    max_iter: optimiser iterations. max_candidates: verified candidates per style.
    keep_footprints: component footprints, area loads and point loads/supports stay solid.
    keep_outs: per-feature roles and rings (:class:`.keep_outs.KeepOutRule`).
    """

    style: str = "organic"
    deflection_budget: float | None = None
    budget_curve: tuple[float, ...] = ()
    edge_margin_mm: float | None = None
    feature_ring_mm: float | None = None
    min_web_mm: float | None = None
    corner_radius_mm: float | None = None
    min_hole_mm: float | None = None
    chord_tol_mm: float = 0.05
    solid_zones: tuple[Box, ...] = ()
    pattern_shape: str = "grid"
    pattern_pitch_mm: float | None = None
    mesh_size_mm: float | None = None
    max_iter: int = 30
    max_candidates: int = 7
    keep_footprints: bool = True
    keep_outs: tuple[KeepOutRule, ...] = ()

    def __post_init__(self) -> None:
        if self.style not in STYLES:
            raise ValueError(f"style must be one of {STYLES}, got {self.style!r}")
        if self.pattern_shape not in PATTERN_SHAPES:
            raise ValueError(f"pattern_shape must be one of {PATTERN_SHAPES}, got "
                             f"{self.pattern_shape!r}")
        for name in ("edge_margin_mm", "feature_ring_mm", "min_web_mm", "corner_radius_mm",
                     "min_hole_mm", "pattern_pitch_mm", "mesh_size_mm"):
            v = getattr(self, name)
            if v is not None and not v > 0.0:
                raise ValueError(f"{name} must be positive, got {v}")
        if not self.chord_tol_mm > 0.0:
            raise ValueError(f"chord_tol_mm must be positive, got {self.chord_tol_mm}")
        if self.max_iter < 1 or self.max_candidates < 1:
            raise ValueError("max_iter and max_candidates must be at least 1")
        for b in (self.deflection_budget, *self.budget_curve):
            if b is not None and not (math.isfinite(b) and b >= 0.0):
                raise ValueError(f"deflection_budget and budget_curve must be shares >= 0, got {b}")


def resolved_settings(plate: Plate, settings: LighteningSettings) -> LighteningSettings:
    """``settings`` with every None size replaced by its value derived from ``plate`` (mm)."""
    t = plate.thickness_mm
    web = max(2.0 * t, plate.material.min_web_mm or 0.0)
    if settings.min_web_mm is not None:
        web = settings.min_web_mm
    radius = settings.corner_radius_mm or max(t, 1.0)
    x0, y0, x1, y1 = plate.outline.contours[0].bbox()
    diag = math.hypot(x1 - x0, y1 - y0)
    return replace(
        settings,
        min_web_mm=web,
        edge_margin_mm=settings.edge_margin_mm or max(1.5 * t, web),
        corner_radius_mm=radius,
        min_hole_mm=settings.min_hole_mm or max(3.0 * t, 2.0 * radius),
        mesh_size_mm=settings.mesh_size_mm or diag / 45.0,
        pattern_pitch_mm=settings.pattern_pitch_mm or max(diag / 12.0, 4.0 * radius + web),
    )


@dataclass(frozen=True)
class DesignRegion:
    """Where lightening holes may go on one plate (shapely geometry, mm).

    material: the as-cut material of the plate. free: the design region (material minus every
    keep-out), possibly several pieces. keep_out: the union of the keep-out zones (may reach past
    the material). settings: the resolved settings used. keep_outs: every zone with what it
    protects, its rule and its area inside the material (mm^2), in the order built.
    """

    material: shapely.Polygon
    free: shapely.Geometry
    keep_out: shapely.Geometry
    settings: LighteningSettings
    thickness_mm: float
    keep_outs: tuple[KeepOut, ...] = ()

    @property
    def free_area_mm2(self) -> float:
        """Area of the design region, mm^2."""
        return float(self.free.area)

    @property
    def free_fraction(self) -> float:
        """Area of the design region over the plate's area (dimensionless)."""
        return float(self.free.area / self.material.area) if self.material.area > 0 else 0.0


def _box_polygon(box: Box, bounds: tuple[float, float, float, float]) -> shapely.Polygon:
    x0, y0, x1, y1 = bounds
    return shapely.box(max(box.x_min_mm, x0 - 1.0), max(box.y_min_mm, y0 - 1.0),
                       min(box.x_max_mm, x1 + 1.0), min(box.y_max_mm, y1 + 1.0))


def design_region(
    plate: Plate,
    settings: LighteningSettings = LighteningSettings(),
    *,
    cases: Sequence[LoadCase] = (),
    components: Sequence[Component] = (),
) -> DesignRegion:
    """The design region of ``plate`` (see the module text), mm.

    cases: this plate's load cases (their area loads become keep-outs). components: all
    components; those on this plate with a footprint become keep-outs (when
    ``settings.keep_footprints``). Round features are those whose contour is one circle.
    """
    s = resolved_settings(plate, settings)
    t = plate.thickness_mm
    material = plate_region(plate, _REGION_TOL_MM)
    bounds = material.bounds
    inner = [(fid, c) for fid, c in part_contours(plate)
             if not (fid == plate.outline.id and c.is_ccw())]
    kept: list[KeepOut] = feature_keep_outs(
        plate, inner, min_web_mm=float(s.min_web_mm), tol_mm=_REGION_TOL_MM,
        feature_ring_mm=s.feature_ring_mm, rules=s.keep_outs)
    outline = to_polygon(plate.outline.contours[0], _REGION_TOL_MM)
    kept.append(KeepOut("outline", "outline", float(s.edge_margin_mm), ROLE_RULES["outline"],
                        outline.exterior.buffer(s.edge_margin_mm, quad_segs=16)))
    for i, box in enumerate(s.solid_zones):
        kept.append(KeepOut(f"solid_zone{i + 1}", "solid_zone", None, ROLE_RULES["solid_zone"],
                            _box_polygon(box, bounds)))
    for e in plate.engravings:
        label = text_polygon(e.text, e.position_mm, e.height_mm, e.rotation_deg)
        if not label.is_empty:
            kept.append(KeepOut(e.id, "label", float(LABEL_MARGIN_MM),
                                ROLE_RULES["label"],
                                label.buffer(LABEL_MARGIN_MM, join_style="mitre")))
    if s.keep_footprints:
        for c in components:
            if c.plate == plate.name and c.at_mm is not None and c.footprint_mm is not None:
                hx, hy = c.footprint_mm[0] / 2.0, c.footprint_mm[1] / 2.0
                kept.append(KeepOut(c.id, "footprint", None, ROLE_RULES["footprint"],
                                    shapely.box(c.at_mm[0] - hx, c.at_mm[1] - hy,
                                                c.at_mm[0] + hx, c.at_mm[1] + hy)))
        disc = max(2.0 * float(s.min_web_mm), 3 * t)
        for case in cases:
            if case.plate != plate.name:
                continue
            for load in case.loads:
                if load.type == "pressure" and load.region is not None:
                    kept.append(KeepOut(f"{case.name}: pressure", "load_or_support", None,
                                        ROLE_RULES["load_or_support"],
                                        _box_polygon(load.region, bounds)))
                if load.type == "force" and load.at_mm is not None:
                    kept.append(KeepOut(f"{case.name}: force", "load_or_support", disc,
                                        ROLE_RULES["load_or_support"],
                                        shapely.Point(load.at_mm).buffer(disc)))
            for sup in case.supports:
                for p in sup.points_mm:
                    kept.append(KeepOut(f"{case.name}: support", "load_or_support", disc,
                                        ROLE_RULES["load_or_support"],
                                        shapely.Point(p).buffer(disc)))
    kept = [replace(k, area_mm2=float(shapely.intersection(k.zone, material).area))
            for k in kept]
    zones = [k.zone for k in kept]
    keep_out = shapely.union_all(zones)
    free = shapely.difference(material, keep_out)
    free = shapely.make_valid(free) if not free.is_valid else free
    return DesignRegion(material, free, keep_out, s, t, tuple(kept))


def _box_from(raw: Mapping[str, Any]) -> Box:
    return Box(float(raw.get("x_min_mm", -math.inf)), float(raw.get("x_max_mm", math.inf)),
               float(raw.get("y_min_mm", -math.inf)), float(raw.get("y_max_mm", math.inf)))


def settings_from_mapping(raw: Mapping[str, Any] | None, plate_name: str = "") -> LighteningSettings:
    """Settings from a validated ``lightening:`` mapping (see geometry.schema.LIGHTENING).

    Fields left out (or None) keep their defaults; ``solid_zones`` entries with a ``plate``
    apply to that plate only.
    """
    if not raw:
        return LighteningSettings()
    zones = tuple(_box_from(z) for z in raw.get("solid_zones") or ()
                  if not z.get("plate") or z.get("plate") == plate_name)
    keys = ("edge_margin_mm", "feature_ring_mm", "min_web_mm", "corner_radius_mm", "min_hole_mm",
            "pattern_pitch_mm", "mesh_size_mm")
    kw: dict[str, Any] = {k: raw[k] for k in keys if raw.get(k) is not None}
    for k in ("chord_tol_mm",):
        if raw.get(k) is not None:
            kw[k] = float(raw[k])
    for k in ("max_iter", "max_candidates"):
        if raw.get(k) is not None:
            kw[k] = int(raw[k])
    if raw.get("style") in STYLES:
        kw["style"] = raw["style"]
    if raw.get("pattern_shape") is not None:
        kw["pattern_shape"] = raw["pattern_shape"]
    if raw.get("keep_footprints") is not None:
        kw["keep_footprints"] = bool(raw["keep_footprints"])
    if raw.get("deflection_budget") is not None:
        kw["deflection_budget"] = float(raw["deflection_budget"])
    if raw.get("budget_curve"):
        kw["budget_curve"] = tuple(float(b) for b in raw["budget_curve"])
    rules = tuple(KeepOutRule(str(r["feature"]), r.get("role"),
                              None if r.get("ring_mm") is None else float(r["ring_mm"]))
                  for r in raw.get("keep_outs") or ()
                  if not r.get("plate") or r.get("plate") == plate_name)
    return LighteningSettings(solid_zones=zones, keep_outs=rules, **kw)


def lightening_section(design: Any) -> dict[str, Any] | None:
    """The validated ``lightening:`` section of a loaded design, or None when it has none.

    The Design object does not carry this section, so it is read again from the design file
    (``design.source_path``) with the same ``--set`` overrides and checked against
    geometry.schema.LIGHTENING. A design loaded from text has no file: None. Raises DesignError
    for a bad section (it was already validated when the design was loaded, so only when the
    file changed in between).
    """
    from platewright.geometry.design.overrides import apply_overrides
    from platewright.geometry.design.schema import LIGHTENING
    from platewright.geometry.design.spec import Context
    from platewright.geometry.design.yamlsource import parse_yaml
    from platewright.geometry.errors import DesignError

    path = Path(getattr(design, "source_path", "") or "")
    if not path.is_file():
        return None
    tree = parse_yaml(path.read_text(encoding="utf-8"), str(path))
    overrides = tuple(getattr(design, "overrides", ()))
    data = apply_overrides(tree.data, overrides, tree.lines) if overrides else tree.data
    raw = data.get("lightening") if isinstance(data, Mapping) else None
    if raw is None:
        return None
    ctx = Context(tree.lines, dict(getattr(design, "references", {})),
                  dict(getattr(design, "reference_depends", {})))
    value = LIGHTENING.check(raw, ctx, "lightening")
    if ctx.problems:
        raise DesignError(ctx.problems, str(path))
    return value
