"""The design region of a plate for lightening: where holes may go, and the settings that shape it.

The design region is the plate's as-cut material minus keep-out zones:

- a ring around every functional feature (bores, slots, mount and fastener holes, cut-outs).
  Round holes of diameter d get a ring of ``max(1.5 t, d)`` (the edge-distance rule of sheet
  metal, common practice; REFERENCE.md "hole to edge >= max(1.5 t, d)"), every other feature a
  ring of the minimum web; never less than the minimum web;
- a band of ``edge_margin_mm`` along the outline;
- component footprints and the areas of area loads (the weight must have material to sit on);
- user zones marked solid in the design file (``lightening.solid_zones``);
- the engraved labels' ink boxes with their margin (``labels.LABEL_MARGIN_MM``), so that a new
  hole never runs under a label.

A new hole placed inside the region therefore keeps the edge distance to every feature and the
margin to the outline; the web between new holes is enforced where holes are made
(:mod:`.holes_from_density`, :mod:`.hole_patterns`). All lengths in mm.
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, replace
from pathlib import Path
from typing import Any

import shapely

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
PATTERN_SHAPES = ("round", "triangle", "slot")
#: Region polygons are built to this chord tolerance, mm (coarser than cut files: they only
#: bound where holes may go, and every hole is checked on exact geometry afterwards).
_REGION_TOL_MM = 0.02


@dataclass(frozen=True)
class LighteningSettings:
    """Settings of a lightening run (the design file's ``lightening:`` section).

    None means "derived from the plate" as stated. Lengths mm.
    style: "organic" | "pattern". edge_margin_mm: solid band along the outline (None:
    ``max(1.5 t, min web)``). feature_ring_mm: ring kept round every feature (None: ``max(1.5 t,
    d)`` for round holes, the minimum web for the others). min_web_mm: web between new holes and
    to every contour (None: ``max(2 t, material min web)``, common practice "hole to hole >=
    2 t"). corner_radius_mm: smallest corner radius of a new hole (None: ``max(t, 1 mm)``).
    min_hole_mm: smallest width of a new hole (None: ``max(3 t, 2 corner radius)``).
    chord_tol_mm: largest distance of a hole's lines and arcs from the traced shape.
    solid_zones: boxes kept solid. pattern_shape: "round" | "triangle" | "slot".
    pattern_pitch_mm: lattice pitch of the regular style (None: from the plate size).
    mesh_size_mm: element size of the optimisation mesh (None: bounding-box diagonal / 45).
    max_iter: optimiser iterations. max_candidates: verified candidates per style.
    keep_footprints: component footprints, area loads and point loads/supports stay solid.
    """

    style: str = "organic"
    edge_margin_mm: float | None = None
    feature_ring_mm: float | None = None
    min_web_mm: float | None = None
    corner_radius_mm: float | None = None
    min_hole_mm: float | None = None
    chord_tol_mm: float = 0.05
    solid_zones: tuple[Box, ...] = ()
    pattern_shape: str = "round"
    pattern_pitch_mm: float | None = None
    mesh_size_mm: float | None = None
    max_iter: int = 30
    max_candidates: int = 7
    keep_footprints: bool = True

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
    the material). settings: the resolved settings used.
    """

    material: shapely.Polygon
    free: shapely.Geometry
    keep_out: shapely.Geometry
    settings: LighteningSettings
    thickness_mm: float

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
    zones: list[shapely.Geometry] = []
    for fid, contour in part_contours(plate):
        if fid == plate.outline.id and contour.is_ccw():
            continue
        poly = to_polygon(contour, _REGION_TOL_MM)
        if contour.is_circle:
            _, r = contour.circle_center_radius()
            ring = max(1.5 * t, 2.0 * r, s.min_web_mm)
        else:
            ring = s.min_web_mm
        if s.feature_ring_mm is not None:
            ring = max(s.feature_ring_mm, s.min_web_mm)
        zones.append(poly.buffer(ring, quad_segs=16))
    outline = to_polygon(plate.outline.contours[0], _REGION_TOL_MM)
    zones.append(outline.exterior.buffer(s.edge_margin_mm, quad_segs=16))
    for box in s.solid_zones:
        zones.append(_box_polygon(box, bounds))
    for e in plate.engravings:
        label = text_polygon(e.text, e.position_mm, e.height_mm, e.rotation_deg)
        if not label.is_empty:
            zones.append(label.buffer(LABEL_MARGIN_MM, join_style="mitre"))
    if s.keep_footprints:
        for c in components:
            if c.plate == plate.name and c.at_mm is not None and c.footprint_mm is not None:
                hx, hy = c.footprint_mm[0] / 2.0, c.footprint_mm[1] / 2.0
                zones.append(shapely.box(c.at_mm[0] - hx, c.at_mm[1] - hy,
                                         c.at_mm[0] + hx, c.at_mm[1] + hy))
        for case in cases:
            if case.plate != plate.name:
                continue
            for load in case.loads:
                if load.type == "pressure" and load.region is not None:
                    zones.append(_box_polygon(load.region, bounds))
                if load.type == "force" and load.at_mm is not None:
                    zones.append(shapely.Point(load.at_mm).buffer(max(2.0 * s.min_web_mm, 3 * t)))
            for sup in case.supports:
                for p in sup.points_mm:
                    zones.append(shapely.Point(p).buffer(max(2.0 * s.min_web_mm, 3 * t)))
    keep_out = shapely.union_all(zones)
    free = shapely.difference(material, keep_out)
    free = shapely.make_valid(free) if not free.is_valid else free
    return DesignRegion(material, free, keep_out, s, t)


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
    return LighteningSettings(solid_zones=zones, **kw)


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
