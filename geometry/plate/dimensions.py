"""Nominal against as-cut-path dimensions of every feature: the table a person checks before cutting.

Cut-path values are MEASURED from the compensated path geometry (circle radius, extent of the path in
the feature's own frame), never re-derived from the compensation formula, so the table shows what the
cutter will actually follow. Round holes also report ``finished_diameter_mm`` and slots
``finished_width_mm``: the size of the hole as it comes off the machine (nominal + fit allowance),
measured from the as-cut part edge. All values in mm.
"""

from __future__ import annotations

from dataclasses import dataclass, field

from platewright.geometry.model import CutContour, Feature, Plate
from platewright.geometry.plate.curves import Contour

__all__ = ["FeatureDimensions", "dimension_table"]


@dataclass(frozen=True)
class FeatureDimensions:
    """One row of the dimension table. ``nominal`` and ``cut`` map report field names to mm
    (``cut`` holds the cut-path sizes and the finished sizes)."""

    feature_id: str
    kind: str
    center_mm: tuple[float, float]
    fit_class: str
    fit_allowance_mm: float
    nominal: dict[str, float] = field(default_factory=dict)
    cut: dict[str, float] = field(default_factory=dict)
    note: str = ""


def _extent_in_frame(path: Contour, angle_deg: float, about: tuple[float, float]) -> tuple[float, float]:
    """Width and height (mm) of ``path`` in a frame rotated by ``angle_deg`` about ``about``."""
    xmin, ymin, xmax, ymax = path.rotated(-angle_deg, about).bbox()
    return xmax - xmin, ymax - ymin


def _row(feature: Feature, paths: list[Contour], parts: list[Contour]) -> FeatureDimensions:
    dims = dict(feature.dims)
    angle = float(dims.get("angle_deg", dims.get("direction_deg", 0.0)))
    nominal = {k: float(v) for k, v in dims.items() if k.endswith("_mm") or k.endswith("_deg")}
    cut: dict[str, float] = {}
    main = paths[0] if paths else None
    part = parts[0] if parts else None
    if main is not None and main.is_circle:
        cut["cut_diameter_mm"] = 2.0 * main.circle_center_radius()[1]
        if part is not None and part.is_circle:  # the hole as it comes off the machine
            cut["finished_diameter_mm"] = 2.0 * part.circle_center_radius()[1]
    elif main is not None:
        w, h = _extent_in_frame(main, angle, feature.center_mm)
        if feature.kind in ("slot", "strap_slot"):
            cut["cut_width_mm"] = min(w, h)
            cut["cut_length_mm"] = max(w, h)
            if part is not None:
                cut["finished_width_mm"] = min(_extent_in_frame(part, angle, feature.center_mm))
        else:
            cut["cut_width_mm"] = w
            cut["cut_height_mm"] = h
    if feature.kind == "outline" and feature.contours:
        xmin, ymin, xmax, ymax = feature.contours[0].bbox()
        nominal.setdefault("width_mm", xmax - xmin)
        nominal.setdefault("height_mm", ymax - ymin)
    return FeatureDimensions(
        feature_id=feature.id,
        kind=feature.kind,
        center_mm=feature.center_mm,
        fit_class=feature.fit_class,
        fit_allowance_mm=feature.fit_allowance_mm,
        nominal=nominal,
        cut=cut,
        note=feature.note,
    )


def dimension_table(plate: Plate, cut: list[CutContour] | tuple[CutContour, ...]) -> list[FeatureDimensions]:
    """One row per feature (outline first), nominal values from the feature, cut values measured
    from its cut path(s) in ``cut``."""
    by_id: dict[str, list[Contour]] = {}
    parts: dict[str, list[Contour]] = {}
    for c in cut:
        by_id.setdefault(c.feature_id, []).append(c.path)
        parts.setdefault(c.feature_id, []).append(c.part_contour)
    rows = []
    for feature in (plate.outline, *plate.features):
        rows.append(_row(feature, by_id.get(feature.id, []), parts.get(feature.id, [])))
    return rows
