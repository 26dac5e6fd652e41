"""The build pipeline as one library call: Design -> built plates with cut paths, rules and mass.

This is what ``platewright build`` runs before writing files; a Python user gets the same objects.
"""

from __future__ import annotations

from dataclasses import dataclass

from platewright.geometry.design.loader import Design
from platewright.geometry.errors import DesignError, Problem
from platewright.geometry.model import CutContour, Finding, MassProperties, Plate
from platewright.geometry.plate.build import build_plates
from platewright.geometry.plate.cutpaths import cut_paths
from platewright.geometry.plate.dimensions import FeatureDimensions, dimension_table
from platewright.geometry.plate.mass import combine, mass_properties, merged_mass_properties
from platewright.geometry.plate.rules import check_plate

__all__ = ["BuiltPlate", "BuildResult", "build_design"]


@dataclass(frozen=True)
class BuiltPlate:
    """One plate with everything derived from it: cut paths (mm), findings, mass, dimensions."""

    plate: Plate
    cut: tuple[CutContour, ...]
    findings: tuple[Finding, ...]
    mass: MassProperties
    dimensions: tuple[FeatureDimensions, ...]

    @property
    def cut_length_mm(self) -> float:
        """Total length of all cut paths, mm (one plate, quantity not applied)."""
        return float(sum(c.path.length() for c in self.cut))

    @property
    def pierce_count(self) -> int:
        """One pierce per closed cut contour."""
        return len(self.cut)

    @property
    def bbox_mm(self) -> tuple[float, float, float, float]:
        """Bounding box of the as-cut outline (xmin, ymin, xmax, ymax), mm."""
        outer = [c for c in self.cut if c.layer == "outer"][0]
        return outer.part_contour.bbox()


@dataclass(frozen=True)
class BuildResult:
    """All plates of a design plus the combined mass properties (plates laid at their origins)."""

    design: Design
    plates: tuple[BuiltPlate, ...]
    total: MassProperties

    @property
    def errors(self) -> list[tuple[str, Finding]]:
        """(plate name, finding) for every error-level finding."""
        return [(b.plate.name, f) for b in self.plates for f in b.findings if f.level == "error"]


def _disjoint(findings: tuple[Finding, ...]) -> bool:
    """False when a rule found holes that overlap, touch (a web of 0 or less) or reach outside
    the outline: the exact mass properties assume disjoint holes inside the outline."""
    for f in findings:
        if f.level != "error":
            continue
        if f.rule in ("feature_overlap", "feature_outside"):
            return False
        if f.rule in ("web", "edge_distance") and f.value is not None and f.value <= 0.0:
            return False
    return True


def _mass(design: Design, plate: Plate, findings: tuple[Finding, ...]) -> MassProperties:
    """Exact mass properties; from the merged polygon region when holes overlap, touch or
    reach outside (then an estimate to the chord tolerance). DesignError (the plate's path and
    line) when the holes leave no material."""
    try:
        if _disjoint(findings):
            try:
                return mass_properties(plate)
            except ValueError:  # not caught by the rules: merge to be sure
                pass
        return merged_mass_properties(plate)
    except ValueError:
        raise DesignError(Problem(plate.source_path, f"the holes of plate '{plate.name}' "
                                  "remove all of its material", design.line_of(plate.source_path),
                                  "move or shrink the holes so that material is left"),
                          design.source_path) from None


def build_design(design: Design) -> BuildResult:
    """Build every plate of ``design``: geometry, cut paths, manufacturability findings and mass.

    Raises DesignError for input that cannot be built (also holes that leave no material);
    manufacturability errors are returned as findings (the caller decides whether they stop the
    build). Where holes overlap or touch, the mass properties come from the merged polygon
    region (an estimate to the chord tolerance) instead of the exact contour integrals.
    """
    built = []
    for plate in build_plates(design):
        cut = tuple(cut_paths(plate))
        findings = tuple(check_plate(plate, bed_mm=design.machine.bed_mm))
        built.append(
            BuiltPlate(
                plate=plate,
                cut=cut,
                findings=findings,
                mass=_mass(design, plate, findings),
                dimensions=tuple(dimension_table(plate, cut)),
            )
        )
    total = combine([b.mass for b in built for _ in range(max(1, b.plate.quantity))])
    return BuildResult(design=design, plates=tuple(built), total=total)
