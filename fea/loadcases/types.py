"""Typed load cases and components: the frozen dataclasses :func:`.loadcases.parse_loads` returns.

Box, Component, Support, Load, Collision, Limits, LoadCase and LoadInput, plus the feature names a
load case may use on a plate. Units are in the field names: mm, g, N, N mm, N/mm, MPa, m/s,
degrees.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from platewright.geometry.model import Feature, Plate

__all__ = [
    "FAMILIES",
    "STANDARD_GRAVITY_M_S2",
    "Box",
    "Component",
    "Support",
    "Load",
    "Collision",
    "Limits",
    "LoadCase",
    "LoadInput",
    "feature_names",
    "resolve_feature",
]

#: Standard acceleration of gravity, m/s^2 (3rd CGPM 1901; ISO 80000-3).
STANDARD_GRAVITY_M_S2 = 9.80665
#: Analysis families: loads across the plate (Kirchhoff bending) or in its plane (plane stress).
FAMILIES = ("bending", "in_plane")

#: Keys of a region box in a design file, in the order of Box's fields (all mm).
REGION_KEYS = ("x_min", "x_max", "y_min", "y_max")


@dataclass(frozen=True)
class Box:
    """An axis-aligned selection box in plate coordinates, mm; open sides are +-infinity."""

    x_min_mm: float = -math.inf
    x_max_mm: float = math.inf
    y_min_mm: float = -math.inf
    y_max_mm: float = math.inf

    def contains(self, points_mm: np.ndarray, tol_mm: float = 1e-6) -> np.ndarray:
        """Which of the points (n, 2) float mm lie in the box (borders included): (n,) bool."""
        p = np.atleast_2d(np.asarray(points_mm, dtype=float))
        return ((p[:, 0] >= self.x_min_mm - tol_mm) & (p[:, 0] <= self.x_max_mm + tol_mm)
                & (p[:, 1] >= self.y_min_mm - tol_mm) & (p[:, 1] <= self.y_max_mm + tol_mm))

    def describe(self) -> str:
        """The box as written in the file, e.g. ``{x_min: 80}``."""
        vals = (self.x_min_mm, self.x_max_mm, self.y_min_mm, self.y_max_mm)
        return "{" + ", ".join(f"{k}: {v:g}" for k, v in zip(REGION_KEYS, vals, strict=True)
                               if math.isfinite(v)) + "}"


@dataclass(frozen=True)
class Component:
    """A point mass carried by a plate (battery, motor, controller ...).

    id: name used by loads. plate: plate name. mass_g: mass, g. at_mm: position (x, y), mm, or
    None when placed at ``feature`` (its holes carry the weight, spread along their edges).
    footprint_mm: (length along x, width along y), mm, centred on ``at_mm``: the weight is spread
    over that area; None = a point load at the mesh node nearest to ``at_mm``. path: field path.
    """

    id: str
    plate: str
    mass_g: float
    at_mm: tuple[float, float] | None
    feature: str | None
    footprint_mm: tuple[float, float] | None
    path: str


@dataclass(frozen=True)
class Support:
    """One support of a load case.

    at: bores | edge | mount | points. features: feature names (bores: one or more; edge, mount:
    one; an empty tuple on an edge means the plate outline). mode: rigid | elastic.
    stiffness_n_per_mm: stiffness of an elastic support at EACH named feature, N/mm (vertical
    in bending; in each in-plane direction in in_plane), shared along the feature's rim by edge
    length. rotational_stiffness_n_mm_per_rad: tilt stiffness of each, bending, N mm/rad.
    condition: clamped | pinned (edge, points) | symmetry (edge: a mirror line). region: part
    of the edge (None: all of it). points_mm: support points, mm. path: field path.
    directions: in_plane displacement components held, a subset of ("x", "y"); one makes a
    roller.
    """

    at: str
    features: tuple[str, ...]
    mode: str
    stiffness_n_per_mm: float
    rotational_stiffness_n_mm_per_rad: float
    condition: str
    region: Box | None
    points_mm: tuple[tuple[float, float], ...]
    path: str
    directions: tuple[str, ...] = ("x", "y")


@dataclass(frozen=True)
class Load:
    """One load of a load case.

    type: component | force | moment | edge | pressure. component: component id. feature:
    feature name the load acts on (None on an edge load: the outline). at_mm: point of a force,
    mm. force_n: (Fx, Fy, Fz) total force, N. moment_n_mm: (Mx, My, Mz), N mm, right-hand rule
    about +x, +y, +z. region: part of an edge, or the area of a pressure (None: all).
    pressure_mpa: area load, MPa = N/mm^2, positive pressing DOWN (along -z) like a weight.
    path: field path.
    """

    type: str
    component: str | None
    feature: str | None
    at_mm: tuple[float, float] | None
    force_n: tuple[float, float, float]
    moment_n_mm: tuple[float, float, float]
    region: Box | None
    pressure_mpa: float
    path: str


@dataclass(frozen=True)
class Collision:
    """A bump into an obstacle as a quasi-static in-plane edge load (in_plane cases only).

    A vehicle of mass m meeting a linear bumper spring of stiffness k at speed v stops when the
    spring holds all its kinetic energy: m v^2 / 2 = F^2 / (2 k), so the peak force is
    F = v sqrt(k m) and the bumper travel F / k. speed_m_s: m/s. bumper_stiffness_n_per_mm: N/mm.
    feature (None: the outline) and region: the edge the force is spread along. direction: unit
    (x, y) of the force ON the plate. vehicle_mass_g: m, g (None: the design's vehicle mass, else
    every plate times its quantity plus every component). path: field path.
    """

    speed_m_s: float
    bumper_stiffness_n_per_mm: float
    feature: str | None
    region: Box | None
    direction: tuple[float, float]
    vehicle_mass_g: float | None
    path: str


@dataclass(frozen=True)
class Limits:
    """Pass/fail limits of a load case (None = not checked).

    max_deflection_mm: largest allowed deflection, mm. span_ratio: N in "deflection <= span / N";
    the span is ``span_mm`` when given, else twice the largest distance from a plate node to the
    nearest supported node (the span of a beam on two supports, twice the length of a
    cantilever: common practice). min_safety_factor: strength / max von Mises must reach it.
    max_von_mises_mpa: largest allowed von Mises stress, MPa.
    """

    max_deflection_mm: float | None = None
    span_ratio: float | None = None
    span_mm: float | None = None
    min_safety_factor: float | None = None
    max_von_mises_mpa: float | None = None


@dataclass(frozen=True)
class LoadCase:
    """One load case on one plate.

    name; plate: plate name; family: bending | in_plane. g_factor: multiplies component weights
    and self-weight (dimensionless). self_weight: include the plate's own weight. g_direction:
    unit (x, y) along which weights act in an in_plane case (None in bending, where they act
    along -z). supports, loads: tuples. collision: Collision or None. limits: Limits.
    mesh_size_mm: target element size, mm (None: from the plate size). grain_deg: face grain
    direction from +x, degrees, for sheets with orthotropic data (None: along x). path.
    error_target_pct: target of the estimated error of the reported peaks, % (None: 1).
    max_refinements: refinement passes allowed after the first solve (None: the default, 4).
    exclusion_radius_mm: disc around each singular point left out of the design stress, mm
    (None: the sheet thickness).
    """

    name: str
    plate: str
    family: str
    g_factor: float
    self_weight: bool
    g_direction: tuple[float, float] | None
    supports: tuple[Support, ...]
    loads: tuple[Load, ...]
    collision: Collision | None
    limits: Limits
    mesh_size_mm: float | None
    grain_deg: float | None
    path: str
    error_target_pct: float | None = None
    max_refinements: int | None = None
    exclusion_radius_mm: float | None = None


@dataclass(frozen=True)
class LoadInput:
    """Parsed ``components:`` and ``load_cases:``, plus the design's vehicle mass (g) or None."""

    components: tuple[Component, ...]
    cases: tuple[LoadCase, ...]
    vehicle_mass_g: float | None = None

    def component(self, component_id: str) -> Component:
        """The component with this id; KeyError if absent."""
        for c in self.components:
            if c.id == component_id:
                return c
        raise KeyError(component_id)


def feature_names(plate: Plate) -> dict[str, tuple[Feature, ...]]:
    """Every name a load case may use on ``plate`` -> the features it stands for.

    A plate feature's own id names it alone. A design feature that expands into several plate
    features (ids ``name.pilot``, ``name.hole1``, ...) is also named by ``name``, standing for
    its members except a ``pilot`` clearance hole (no bolt bears on it).
    """
    out: dict[str, tuple[Feature, ...]] = {plate.outline.id: (plate.outline,)}
    groups: dict[str, list[Feature]] = {}
    for f in plate.features:
        out[f.id] = (f,)
        if "." in f.id and f.kind != "pilot":
            groups.setdefault(f.id.split(".", 1)[0], []).append(f)
    for name, members in groups.items():
        out.setdefault(name, tuple(members))
    return out


def resolve_feature(plate: Plate, name: str | None) -> tuple[Feature, ...]:
    """The features a name stands for on ``plate`` (None: the outline); KeyError if unknown."""
    return (plate.outline,) if name is None else feature_names(plate)[name]
