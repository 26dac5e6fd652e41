"""The typed, immutable core objects that flow between stages.

Design (validated input) -> Plate (nominal exact geometry + features) -> CutContour (kerf- and
fit-compensated paths) -> Finding / MassProperties -> written files.

Units: mm, g, MPa, kg/m^3 as named in each field.
"""

from __future__ import annotations

from dataclasses import dataclass, field

from platewright.geometry.plate.curves import Contour

__all__ = [
    "Material",
    "Feature",
    "Engraving",
    "Plate",
    "CutContour",
    "Finding",
    "MassProperties",
]


@dataclass(frozen=True)
class Material:
    """One sheet material from the library.

    Moduli and strength in MPa, density kg/m^3, lengths mm. ``fit_allowance_mm`` maps a fit class
    name (``press``, ``transition``, ``slide``, ``clearance``) to the signed allowance added to a
    nominal diameter or width before kerf. ``sources`` maps a field name to where its value comes
    from. ``laser_safe`` False means the tool refuses the material, ``refusal_reason`` says why.
    ``orthotropic``: optional dict with E1_mpa, E2_mpa, nu12, G12_mpa (along/across face grain).
    """

    key: str
    name: str
    youngs_modulus_mpa: float
    poisson_ratio: float
    density_kg_m3: float
    strength_mpa: float
    strength_kind: str
    typical_kerf_mm: float
    fit_allowance_mm: dict[str, float]
    min_web_mm: float | None
    laser_safe: bool = True
    refusal_reason: str = ""
    warning: str = ""
    orthotropic: dict[str, float] | None = None
    sources: dict[str, str] = field(default_factory=dict)


@dataclass(frozen=True)
class Feature:
    """One feature of a plate, kept with its id and its nominal exact geometry.

    ``contours`` are the NOMINAL contours (before fit allowance and kerf), oriented with material to
    the left: an outline runs counter-clockwise, a hole clockwise. ``fit_allowance_mm`` is the
    signed allowance added to the nominal size (diameter or width) before kerf; the as-cut part
    edge is the nominal edge moved by ``fit_allowance_mm / 2`` into the material.
    ``kind``: outline | bore | slot | hole | mount_hole | pilot | cutout | strap_slot.
    ``dims`` holds the report fields for this feature (``nominal_diameter_mm``, ``nominal_width_mm``,
    ``length_mm``, ``travel_mm``, ``trim_deg`` ...). ``refs`` lists the named references the
    feature's position depends on. ``note`` is free text (e.g. which bearing).
    """

    id: str
    kind: str
    center_mm: tuple[float, float]
    contours: tuple[Contour, ...]
    fit_allowance_mm: float = 0.0
    fit_class: str = ""
    dims: dict[str, float] = field(default_factory=dict)
    refs: tuple[str, ...] = ()
    note: str = ""
    source_path: str = ""
    source_line: int | None = None


@dataclass(frozen=True)
class Engraving:
    """Text on the non-cut engraving layer: anchor position (mm; middle of the cap height, centre
    of the text), cap height (mm), rotation (degrees, counter-clockwise about the anchor).

    ``requested_text`` / ``requested_height_mm``: what the design asked for, when the label was
    shortened / shrunk to stay inside the material ("" / 0 when engraved as asked; see
    :mod:`platewright.geometry.plate.labels`).
    """

    id: str
    text: str
    position_mm: tuple[float, float]
    height_mm: float
    rotation_deg: float = 0.0
    requested_text: str = ""
    requested_height_mm: float = 0.0


@dataclass(frozen=True)
class Plate:
    """One plate: outline feature + inner features, material, thickness (mm) and kerf (mm).

    ``kerf_source``: where the kerf came from (text for the report, e.g. ``plate kerf_mm`` or
    ``machine profile 'x': cast_acrylic 3 mm entry``; starts with ``interpolated`` when it was
    interpolated between two profile entries); empty when not known.
    ``engravings``: the labels engraved; ``dropped_engravings``: labels the design asked for that
    fit nowhere inside the material (not engraved, reported by the rules).
    """

    name: str
    material: Material
    thickness_mm: float
    kerf_mm: float
    outline: Feature
    features: tuple[Feature, ...]
    engravings: tuple[Engraving, ...] = ()
    part_number: str = ""
    quantity: int = 1
    source_path: str = ""
    kerf_source: str = ""
    dropped_engravings: tuple[Engraving, ...] = ()

    def feature(self, feature_id: str) -> Feature:
        """The feature (or the outline) with this id; KeyError if absent."""
        if self.outline.id == feature_id:
            return self.outline
        for f in self.features:
            if f.id == feature_id:
                return f
        raise KeyError(feature_id)


@dataclass(frozen=True)
class CutContour:
    """One closed cut path: the contour the cutter's centre follows (mm).

    ``layer`` is ``inner`` or ``outer``; ``order`` is the cut sequence (inner contours first).
    ``part_contour`` is the as-cut part edge (nominal + fit allowance), before kerf.
    """

    feature_id: str
    layer: str
    order: int
    path: Contour
    part_contour: Contour


@dataclass(frozen=True)
class Finding:
    """A manufacturability finding: level ``error`` or ``warning``, rule name, features involved,
    measured value and limit (mm unless the rule says otherwise) and a readable message."""

    level: str
    rule: str
    features: tuple[str, ...]
    value: float | None
    limit: float | None
    message: str


@dataclass(frozen=True)
class MassProperties:
    """Section and mass properties of a plate of uniform thickness.

    area_mm2; mass_g; centroid_mm (x, y); second moments of area about the centroid, mm^4:
    ``Ixx = int y^2 dA``, ``Iyy = int x^2 dA``, ``Ixy = int x y dA`` (centroidal axes);
    mass moments of inertia about the centroid, g mm^2, of the plate as a thin solid of its
    thickness: ``inertia_g_mm2`` keys Ixx, Iyy, Izz, Ixy (Izz about the plate normal; Ixx and Iyy
    include the t^2/12 thickness term).
    """

    area_mm2: float
    mass_g: float
    centroid_mm: tuple[float, float]
    second_moment_mm4: dict[str, float]
    inertia_g_mm2: dict[str, float]
