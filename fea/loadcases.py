"""Load cases and components of a design file: field tables, parsing and validation.

The design loader keeps ``load_cases:`` and ``components:`` as raw mappings; this module turns
them into frozen dataclasses and collects every problem (field path, file line, what is valid)
into one DesignError. The same field tables print the reference text of
:func:`describe_load_cases`, so the documentation cannot drift from the parser.

Units are in the field names: mm, g, N, N mm, N/mm, MPa, m/s, degrees (radians inside).
Numbers may be plain numbers or expressions over the design's ``references``; a number written
with a unit (``"0.5 in"``) is refused with the value converted to the unit the field expects.
"""

from __future__ import annotations

import math
import re
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from typing import Any

import numpy as np
from platewright.geometry.errors import DesignError, Problem
from platewright.geometry.expressions import ExpressionError, evaluate
from platewright.geometry.model import Feature, Plate

from .loadfields import (
    CASE_FIELDS,
    COLLISION_FIELDS,
    COMPONENT_FIELDS,
    LIMIT_FIELDS,
    LOAD_FIELDS,
    LOAD_KEYS,
    REGION_KEYS,
    SUPPORT_FIELDS,
    SUPPORT_KEYS,
    Spec,
    unknown_key_hint,
    unit_conversion_hint,
)

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
    "parse_loads",
    "resolve_feature",
    "feature_names",
]

#: Standard acceleration of gravity, m/s^2 (CGPM 1901; ISO 80000-3).
STANDARD_GRAVITY_M_S2 = 9.80665
#: Analysis families: loads across the plate (Kirchhoff bending) or in its plane (plane stress).
FAMILIES = ("bending", "in_plane")

_NUMBER_WITH_UNIT = re.compile(r"^\s*([-+]?\d+(?:\.\d*)?(?:[eE][-+]?\d+)?|[-+]?\.\d+)\s*([A-Za-z\"/]+)\s*$")


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
        return (
            (p[:, 0] >= self.x_min_mm - tol_mm) & (p[:, 0] <= self.x_max_mm + tol_mm)
            & (p[:, 1] >= self.y_min_mm - tol_mm) & (p[:, 1] <= self.y_max_mm + tol_mm)
        )

    def describe(self) -> str:
        """The box as written in the file, e.g. ``{x_min: 80}``."""
        parts = [f"{k}: {v:g}" for k, v in zip(REGION_KEYS, self._values(), strict=True)
                 if math.isfinite(v)]
        return "{" + ", ".join(parts) + "}"

    def _values(self) -> tuple[float, float, float, float]:
        return (self.x_min_mm, self.x_max_mm, self.y_min_mm, self.y_max_mm)


@dataclass(frozen=True)
class Component:
    """A point mass carried by a plate (battery, motor, controller ...).

    id: name used by loads. plate: plate name. mass_g: mass, g. at_mm: position (x, y), mm, or
    None when placed at ``feature`` (its mounting holes carry the weight). footprint_mm: (length
    along x, width along y), mm, centred on ``at_mm``: the weight is spread over that area; None =
    a point load at the mesh node nearest to ``at_mm``. path: field path in the design file.
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
    """One support of a load case (see describe_load_cases for the fields).

    at: bores | edge | mount | points. features: feature names (bores: one or more; edge and
    mount: one). mode: rigid | elastic (bores, mount). stiffness_n_per_mm: total stiffness of an
    elastic support, N/mm (vertical in bending, each in-plane direction in in_plane).
    rotational_stiffness_n_mm_per_rad: total tilt stiffness of an elastic support (bending),
    N mm/rad. condition: clamped | pinned (edge, points). region: part of the edge, or None.
    points_mm: support points (points), mm. path: field path.
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


@dataclass(frozen=True)
class Load:
    """One load of a load case.

    type: component | force | moment | edge | pressure. component: component id (component).
    feature: feature name the load acts on (force, moment, edge). at_mm: point of a force, mm.
    force_n: (Fx, Fy, Fz), N, the total force (force, edge). moment_n_mm: (Mx, My, Mz), N mm,
    right-hand rule about +x, +y, +z (moment). region: part of an edge, or area of a pressure.
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
    """A bump into an obstacle, as a quasi-static in-plane load (in_plane cases only).

    A vehicle of mass m meeting a linear bumper spring of stiffness k at speed v stops when the
    spring has stored its kinetic energy: 1/2 m v^2 = 1/2 F^2 / k, so the peak force is
    F = v sqrt(k m) and the bumper travel F / k. speed_m_s: impact speed, m/s.
    bumper_stiffness_n_per_mm: N/mm. feature/region: the edge the force is spread along.
    direction: unit (x, y) of the force ON the plate (e.g. (-1, 0) for a head-on hit when x
    points forward). vehicle_mass_g: mass m, g (None: the design's vehicle mass, else all plates
    times their quantity plus all components). path: field path.
    """

    speed_m_s: float
    bumper_stiffness_n_per_mm: float
    feature: str
    region: Box | None
    direction: tuple[float, float]
    vehicle_mass_g: float | None
    path: str


@dataclass(frozen=True)
class Limits:
    """Pass/fail limits of a load case (None = not checked).

    max_deflection_mm: largest allowed deflection, mm. span_ratio: N in "deflection <= span / N";
    the span is ``span_mm`` when given, else twice the largest distance from a plate node to its
    nearest supported node (the span of a beam on two supports; twice the length of a
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
    mesh_size_mm: target element size, mm (None: chosen from the plate size). grain_deg: face
    grain direction from +x, degrees, for sheets with orthotropic data (None: along x).
    path: field path of the case.
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


@dataclass(frozen=True)
class LoadInput:
    """Parsed ``components:`` and ``load_cases:`` plus the vehicle mass override (g or None)."""

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
    its members except a ``pilot`` clearance hole (it carries no bolt).
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


def resolve_feature(plate: Plate, name: str) -> tuple[Feature, ...]:
    """The features a name stands for on ``plate`` (see feature_names); KeyError if unknown."""
    return feature_names(plate)[name]


class _Reader:
    """Collects problems while reading the raw mappings."""

    def __init__(self, design: Any, plates: Sequence[Plate] | None) -> None:
        self.design = design
        self.refs: Mapping[str, float] = getattr(design, "references", None) or {}
        self.plates = {p.name: p for p in plates} if plates is not None else None
        self.problems: list[Problem] = []

    def line(self, path: str) -> int | None:
        fn = getattr(self.design, "line_of", None)
        return fn(path) if fn is not None else None

    def fail(self, path: str, message: str, hint: str = "") -> None:
        self.problems.append(Problem(path, message, self.line(path), hint))

    def number(self, value: Any, path: str, spec: Spec) -> float | None:
        if isinstance(value, str):
            m = _NUMBER_WITH_UNIT.match(value)
            if m and m.group(2) not in self.refs:
                self.fail(path, f"'{value}' is not a number: write the value in {spec.unit} "
                          "without a unit (the unit is in the field name)",
                          unit_conversion_hint(float(m.group(1)), m.group(2), spec.unit))
                return None
        try:
            v = evaluate(value, self.refs).value
        except ExpressionError as exc:
            unit = f" in {spec.unit}" if spec.unit else ""
            self.fail(path, f"expected a number{unit}: {exc.message}", exc.hint)
            return None
        if spec.gt is not None and not v > spec.gt:
            self.fail(path, f"must be greater than {spec.gt:g}, got {v:g}")
            return None
        if spec.ge is not None and not v >= spec.ge:
            self.fail(path, f"must be at least {spec.ge:g}, got {v:g}")
            return None
        return v

    def vector(self, value: Any, path: str, spec: Spec) -> tuple[float, ...] | None:
        if not isinstance(value, list) or len(value) not in spec.lengths:
            n = " or ".join(str(k) for k in spec.lengths)
            self.fail(path, f"expected a list of {n} numbers in {spec.unit or 'any unit'}, got "
                      f"{value!r}")
            return None
        out = [self.number(v, f"{path}[{i}]", Spec("number", "", unit=spec.unit))
               for i, v in enumerate(value)]
        return None if any(o is None for o in out) else tuple(float(o) for o in out)

    def region(self, value: Any, path: str) -> Box | None:
        if not isinstance(value, Mapping) or not value:
            self.fail(path, f"expected a mapping with some of {', '.join(REGION_KEYS)} (mm), got "
                      f"{value!r}")
            return None
        vals: dict[str, float] = {}
        for key, raw in value.items():
            sub = f"{path}.{key}"
            if key not in REGION_KEYS:
                self.fail(sub, f"unknown key '{key}'", unknown_key_hint(str(key), REGION_KEYS))
                continue
            v = self.number(raw, sub, Spec("number", "", unit="mm"))
            if v is not None:
                vals[key] = v
        box = Box(vals.get("x_min", -math.inf), vals.get("x_max", math.inf),
                  vals.get("y_min", -math.inf), vals.get("y_max", math.inf))
        if box.x_min_mm >= box.x_max_mm or box.y_min_mm >= box.y_max_mm:
            self.fail(path, f"empty box {box.describe()}", "each _min must be below its _max")
            return None
        return box

    def record(self, raw: Any, table: Mapping[str, Spec], path: str, title: str,
               allowed: Sequence[str] | None = None) -> dict[str, Any] | None:
        """Read one mapping against a field table; None (problems recorded) when it is bad."""
        if not isinstance(raw, Mapping):
            self.fail(path, f"expected a mapping ({title}), got {raw!r}")
            return None
        keys = list(table) if allowed is None else list(allowed)
        before = len(self.problems)
        out: dict[str, Any] = {}
        for key in raw:
            if key not in keys:
                hint = unknown_key_hint(str(key), keys)
                if allowed is not None and key in table:
                    self.fail(f"{path}.{key}", f"'{key}' does not apply to this {title}",
                              "fields here: " + ", ".join(keys))
                else:
                    self.fail(f"{path}.{key}", f"unknown key '{key}'", hint)
        for key in keys:
            spec = table[key]
            sub = f"{path}.{key}"
            value = raw.get(key)
            if value is None:
                if spec.required:
                    self.fail(sub if key in raw else path, f"missing required field '{key}'",
                              spec.doc)
                out[key] = spec.default
                continue
            out[key] = self.value(value, sub, spec)
        return out if len(self.problems) == before else None

    def value(self, value: Any, path: str, spec: Spec) -> Any:
        kind = spec.kind
        if kind == "number":
            return self.number(value, path, spec)
        if kind == "vector":
            return self.vector(value, path, spec)
        if kind == "flag":
            if not isinstance(value, bool):
                self.fail(path, f"expected true or false, got {value!r}")
            return value
        if kind == "text":
            if not isinstance(value, str) or not value:
                self.fail(path, f"expected a name, got {value!r}")
                return None
            if spec.choices and value not in spec.choices:
                self.fail(path, f"'{value}' is not allowed", "valid: " + ", ".join(spec.choices))
            return value
        if kind == "names":
            items = value if isinstance(value, list) else [value]
            if not items or not all(isinstance(v, str) and v for v in items):
                self.fail(path, f"expected a list of feature names, got {value!r}")
                return None
            return tuple(items)
        if kind == "region":
            return self.region(value, path)
        if kind == "points":
            if not isinstance(value, list) or not value:
                self.fail(path, f"expected a list of [x, y] points in mm, got {value!r}")
                return None
            pts = [self.vector(v, f"{path}[{i}]", Spec("vector", "", unit="mm", lengths=(2,)))
                   for i, v in enumerate(value)]
            return None if any(p is None for p in pts) else tuple(pts)
        if kind in ("list", "mapping"):
            ok = isinstance(value, list) if kind == "list" else isinstance(value, Mapping)
            if not ok:
                self.fail(path, f"expected a {'list' if kind == 'list' else 'mapping'}, got "
                          f"{value!r}")
                return None
            return value
        raise AssertionError(f"unknown field kind {kind}")


from .loadcheck import check_case, check_component, read_case  # noqa: E402  (uses the types above)


def parse_loads(design: Any, plates: Sequence[Plate] | None = None) -> LoadInput:
    """Parse and validate the design's ``components:`` and ``load_cases:`` sections.

    design: a loaded Design (its ``components``, ``load_cases``, ``references`` and
    ``line_of``). plates: the built plates; when given, plate names, feature names, positions
    and regions are checked against their geometry. Returns a LoadInput. Raises DesignError
    listing every problem, each with its field path and file line.
    """
    rd = _Reader(design, plates)
    comps: list[Component] = []
    for i, raw in enumerate(getattr(design, "components", ()) or ()):
        path = f"components[{i}]"
        d = rd.record(raw, COMPONENT_FIELDS, path, "component")
        if d is None:
            continue
        comp = Component(d["id"], d["plate"], d["mass_g"], d["at_mm"], d["feature"],
                         d["footprint_mm"], path)
        if any(c.id == comp.id for c in comps):
            rd.fail(f"{path}.id", f"duplicate component id '{comp.id}'", "ids must differ")
        if check_component(rd, comp):
            comps.append(comp)
    cases: list[LoadCase] = []
    for i, raw in enumerate(getattr(design, "load_cases", ()) or ()):
        path = f"load_cases[{i}]"
        case = read_case(rd, raw, path, {
            "case": CASE_FIELDS, "support": SUPPORT_FIELDS, "support_keys": SUPPORT_KEYS,
            "load": LOAD_FIELDS, "load_keys": LOAD_KEYS, "collision": COLLISION_FIELDS,
            "limits": LIMIT_FIELDS,
        })
        if case is None:
            continue
        if any(c.name == case.name for c in cases):
            rd.fail(f"{path}.name", f"duplicate load case name '{case.name}'", "names must differ")
            continue
        if check_case(rd, case, comps):
            cases.append(case)
    if rd.problems:
        raise DesignError(rd.problems, getattr(design, "source_path", ""))
    vm = getattr(design, "vehicle_mass_g", None)
    return LoadInput(tuple(comps), tuple(cases), None if vm is None else float(vm))
