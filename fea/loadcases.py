"""Load cases and components of a design file: field tables, parsing and validation.

The design loader keeps ``load_cases:`` and ``components:`` as raw mappings; this module turns
them into frozen dataclasses and collects every problem (field path, file line, what is valid)
into one DesignError. The same field tables print the reference text of
:func:`describe_load_cases`, so the documentation cannot drift from the parser.

Units are in the field names: mm, g, N, N mm, N/mm, MPa, m/s, degrees (radians inside).
Numbers may be plain numbers or expressions over the design's ``references``; a number written
with a unit (``"0.5 in"``) is refused, and the hint gives the value in the unit the field wants.
"""

from __future__ import annotations

import difflib
import math
import re
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from typing import Any

import numpy as np
import shapely

from platewright.geometry.errors import DesignError, Problem
from platewright.geometry.expressions import ExpressionError, evaluate
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
    "parse_loads",
    "feature_names",
    "resolve_feature",
    "describe_load_cases",
]

#: Standard acceleration of gravity, m/s^2 (3rd CGPM 1901; ISO 80000-3).
STANDARD_GRAVITY_M_S2 = 9.80665
#: Analysis families: loads across the plate (Kirchhoff bending) or in its plane (plane stress).
FAMILIES = ("bending", "in_plane")


# ----------------------------------------------------------------------------------- types

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
        return "{" + ", ".join(f"{k}: {v:g}" for k, v in zip(_REGION_KEYS, vals, strict=True)
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
    condition: clamped | pinned (edge, points). region: part of the edge (None: all of it).
    points_mm: support points, mm. path: field path.
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


# ----------------------------------------------------------------------------- field tables

@dataclass(frozen=True)
class _Spec:
    """One field: kind (number, vector, flag, text, names, region, points, list, mapping), meaning,
    unit, default, bounds (gt, ge), choices, allowed vector lengths."""

    kind: str
    doc: str
    unit: str = ""
    default: Any = None
    required: bool = False
    choices: tuple[str, ...] = ()
    gt: float | None = None
    ge: float | None = None
    lengths: tuple[int, ...] = (2,)


_REGION_KEYS = ("x_min", "x_max", "y_min", "y_max")
_REGION_DOC = ("box {`x_min`, `x_max`, `y_min`, `y_max`} in mm selecting part of it "
               "(sides may be left open)")

_COMPONENT = {
    "id": _Spec("text", "name used by `{type: component}` loads", required=True),
    "plate": _Spec("text", "plate that carries it", required=True),
    "mass_g": _Spec("number", "mass", "g", required=True, gt=0.0),
    "at_mm": _Spec("vector", "position [x, y] (give at_mm or feature)", "mm"),
    "feature": _Spec("text", "feature whose holes carry it (e.g. a motor mount)"),
    "footprint_mm": _Spec("vector", "[length along x, width along y] centred on at_mm; the weight "
                          "is spread over it (default: a point load)", "mm"),
}
_CASE = {
    "name": _Spec("text", "name of the case in reports", required=True),
    "plate": _Spec("text", "plate analysed", required=True),
    "family": _Spec("text", "bending: loads across the plate (Kirchhoff plate); in_plane: loads "
                    "in its plane (plane stress)", required=True, choices=FAMILIES),
    "g_factor": _Spec("number", "multiplies component weights and self-weight (in multiples "
                      "of gravity, e.g. 3 for a hard landing)", default=1.0, ge=0.0),
    "self_weight": _Spec("flag", "include the plate's own weight (default: true in bending; in "
                         "in_plane true when g_direction is given)"),
    "g_direction": _Spec("vector", "in_plane only: direction [x, y] in which the weights act, "
                         "e.g. [1, 0] for hard braking when x points forward"),
    "supports": _Spec("list", "how the plate is held (list, see Supports)", required=True),
    "loads": _Spec("list", "what loads it (list, see Loads)", default=[]),
    "collision": _Spec("mapping", "in_plane only: a bump (see Collision)"),
    "limits": _Spec("mapping", "pass/fail limits (see Limits)"),
    "mesh_size_mm": _Spec("number", "target element size (default: from the plate size)", "mm",
                          gt=0.0),
    "grain_deg": _Spec("number", "face grain direction from +x for sheets with orthotropic data "
                       "(default: along x)", "degrees"),
}
_SUPPORT = {
    "at": _Spec("text", "bores: the rims of holes; mount: every hole of a mount; edge: an edge "
                "or part of it; points: single points", required=True,
                choices=("bores", "mount", "edge", "points")),
    "features": _Spec("names", "feature names (bores)"),
    "feature": _Spec("text", "feature name (mount, edge; edge default: the outline)"),
    "mode": _Spec("text", "rigid: rim held (bending: no deflection; in_plane: no movement); "
                  "elastic: rim on springs", default="rigid",
                  choices=("rigid", "elastic")),
    "stiffness_n_per_mm": _Spec("number", "elastic: stiffness of EACH named bore or mount "
                                "(vertical in bending; each in-plane direction in in_plane)",
                                "N/mm", gt=0.0),
    "rotational_stiffness_n_mm_per_rad": _Spec("number", "elastic, bending: tilt stiffness of "
                                               "each named bore or mount", "N mm/rad",
                                               default=0.0, ge=0.0),
    "condition": _Spec("text", "clamped: no deflection, no slope; pinned: no deflection (in "
                       "in_plane both fix the edge)", choices=("clamped", "pinned")),
    "region_mm": _Spec("region", "part of the edge: " + _REGION_DOC),
    "points_mm": _Spec("points", "support points [[x, y], ...] (nearest mesh node)", "mm"),
}
_SUPPORT_KEYS = {
    "bores": ("at", "features", "feature", "mode", "stiffness_n_per_mm",
              "rotational_stiffness_n_mm_per_rad"),
    "mount": ("at", "feature", "mode", "stiffness_n_per_mm", "rotational_stiffness_n_mm_per_rad"),
    "edge": ("at", "feature", "condition", "region_mm"),
    "points": ("at", "points_mm", "condition"),
}
_LOAD = {
    "type": _Spec("text", "what kind of load", required=True,
                  choices=("component", "force", "moment", "edge", "pressure")),
    "component": _Spec("text", "component id: its weight x g_factor"),
    "feature": _Spec("text", "feature the load is spread on (force, moment; edge default: the "
                     "outline)"),
    "at_mm": _Spec("vector", "force: point [x, y] instead of a feature (nearest mesh node)", "mm"),
    "force_n": _Spec("vector", "total force [Fx, Fy, Fz] (or [Fx, Fy]); bending uses Fz, "
                     "in_plane Fx, Fy", "N", lengths=(2, 3)),
    "moment_n_mm": _Spec("vector", "moment [Mx, My, Mz] (right-hand rule); bending uses Mx, My, "
                         "in_plane Mz", "N mm", lengths=(3,)),
    "region_mm": _Spec("region", "edge: part of the edge; pressure: the loaded area: "
                       + _REGION_DOC),
    "pressure_mpa": _Spec("number", "bending: area load, positive pressing down (-z)", "MPa"),
}
_LOAD_KEYS = {
    "component": ("type", "component"),
    "force": ("type", "feature", "at_mm", "force_n"),
    "moment": ("type", "feature", "moment_n_mm"),
    "edge": ("type", "feature", "region_mm", "force_n"),
    "pressure": ("type", "pressure_mpa", "region_mm"),
}
_COLLISION = {
    "speed_m_s": _Spec("number", "impact speed", "m/s", required=True, gt=0.0),
    "bumper_stiffness_n_per_mm": _Spec("number", "stiffness of the bumper", "N/mm", required=True,
                                       gt=0.0),
    "feature": _Spec("text", "edge hit (default: the outline)"),
    "region_mm": _Spec("region", "part of that edge: " + _REGION_DOC),
    "direction": _Spec("vector", "direction [x, y] of the force on the plate, e.g. [-1, 0] for a "
                       "head-on hit when x points forward", required=True),
    "vehicle_mass_g": _Spec("number", "mass that hits (default: all plates x quantity + all "
                            "components)", "g", gt=0.0),
}
_LIMITS = {
    "max_deflection_mm": _Spec("number", "largest allowed deflection", "mm", gt=0.0),
    "span_ratio": _Spec("number", "N in deflection <= span / N (e.g. 300)", gt=0.0),
    "span_mm": _Spec("number", "span for span_ratio (default: twice the largest distance from "
                     "any point to the nearest support)", "mm", gt=0.0),
    "min_safety_factor": _Spec("number", "strength / max von Mises must reach this", gt=0.0),
    "max_von_mises_mpa": _Spec("number", "largest allowed von Mises stress", "MPa", gt=0.0),
}

# Conversions to the unit a field expects, for hints only (exact by definition unless noted).
_TO_UNIT = {
    "mm": {"mm": 1.0, "cm": 10.0, "m": 1000.0, "in": 25.4, "inch": 25.4, '"': 25.4, "ft": 304.8},
    "g": {"g": 1.0, "kg": 1000.0, "lb": 453.59237, "oz": 28.349523125},
    "N": {"n": 1.0, "kn": 1000.0, "lbf": 4.4482216152605},
    "MPa": {"mpa": 1.0, "pa": 1e-6, "kpa": 1e-3, "gpa": 1e3, "psi": 6.894757293168e-3},
    "m/s": {"m/s": 1.0, "km/h": 1.0 / 3.6, "mph": 0.44704},
    "N/mm": {"n/mm": 1.0, "n/m": 1e-3, "kn/m": 1.0, "lbf/in": 4.4482216152605 / 25.4},
}
_NUMBER_WITH_UNIT = re.compile(
    r"^\s*([-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?)\s*([A-Za-z\"/]+)\s*$")


def _unit_hint(value: float, unit_text: str, unit: str) -> str:
    table = _TO_UNIT.get(unit, {})
    factor = table.get(unit_text) or table.get(unit_text.lower())
    if factor is None:
        return f"give the number in {unit}" if unit else "give a plain number"
    return f"{value:g} {unit_text} = {value * factor:.6g} {unit}"


def _key_hint(key: str, keys: Sequence[str], table: Mapping[str, _Spec]) -> str:
    """Hint for an unknown key: the unit the name must carry, or a near match."""
    for k in keys:
        unit = table[k].unit if k in table else ""
        if unit and k.startswith(key + "_"):
            return f"the unit goes in the field name: write '{k}' (value in {unit})"
        if unit and key != k and "_" in key and key.rsplit("_", 1)[0] == k.rsplit("_", 1)[0]:
            return f"this field is '{k}', in {unit}: convert the value and rename the field"
    close = difflib.get_close_matches(key, list(keys), n=1, cutoff=0.6)
    return f"did you mean '{close[0]}'?" if close else "valid: " + ", ".join(keys)


# ---------------------------------------------------------------------------------- reading

class _Reader:
    """Reads raw mappings against the field tables, collecting problems."""

    def __init__(self, design: Any, plates: Sequence[Plate] | None) -> None:
        self.design = design
        self.refs: Mapping[str, float] = getattr(design, "references", None) or {}
        self.plates = None if plates is None else {p.name: p for p in plates}
        self.problems: list[Problem] = []

    def fail(self, path: str, message: str, hint: str = "") -> None:
        fn = getattr(self.design, "line_of", None)
        self.problems.append(Problem(path, message, fn(path) if fn else None, hint))

    def number(self, value: Any, path: str, spec: _Spec) -> float | None:
        m = _NUMBER_WITH_UNIT.match(value) if isinstance(value, str) else None
        if m and m.group(2) not in self.refs:
            msg = (f"'{value}' is not a number: write the value in {spec.unit} without a unit "
                   "(the unit is in the field name)") if spec.unit else (
                f"'{value}' is not a number: this field takes a plain number without a unit")
            self.fail(path, msg, _unit_hint(float(m.group(1)), m.group(2), spec.unit))
            return None
        try:
            v = evaluate(value, self.refs).value
        except ExpressionError as exc:
            self.fail(path, f"expected a number{' in ' + spec.unit if spec.unit else ''}: "
                      f"{exc.message}", exc.hint)
            return None
        if (spec.gt is not None and not v > spec.gt) or (spec.ge is not None and not v >= spec.ge):
            bound = f"greater than {spec.gt:g}" if spec.gt is not None else f"at least {spec.ge:g}"
            self.fail(path, f"must be {bound}, got {v:g}")
            return None
        return v

    def vector(self, value: Any, path: str, spec: _Spec) -> tuple[float, ...] | None:
        if not isinstance(value, list) or len(value) not in spec.lengths:
            n = " or ".join(str(k) for k in spec.lengths)
            self.fail(path, f"expected a list of {n} numbers{' in ' + spec.unit if spec.unit else ''}"
                      f", got {value!r}")
            return None
        item = _Spec("number", "", spec.unit, gt=spec.gt)
        out = [self.number(v, f"{path}[{i}]", item) for i, v in enumerate(value)]
        return None if any(o is None for o in out) else tuple(float(o) for o in out)

    def region(self, value: Any, path: str) -> Box | None:
        if not isinstance(value, Mapping) or not value:
            self.fail(path, f"expected a mapping with some of {', '.join(_REGION_KEYS)} (mm), "
                      f"got {value!r}")
            return None
        vals: dict[str, float] = {}
        for key, raw in value.items():
            if key not in _REGION_KEYS:
                self.fail(f"{path}.{key}", f"unknown key '{key}'",
                          "valid: " + ", ".join(_REGION_KEYS) + " (all in mm)")
                continue
            v = self.number(raw, f"{path}.{key}", _Spec("number", "", "mm"))
            if v is not None:
                vals[key] = v
        box = Box(vals.get("x_min", -math.inf), vals.get("x_max", math.inf),
                  vals.get("y_min", -math.inf), vals.get("y_max", math.inf))
        if not (box.x_min_mm < box.x_max_mm and box.y_min_mm < box.y_max_mm):
            self.fail(path, f"empty box {box.describe()}", "each _min must be below its _max")
            return None
        return box

    def value(self, value: Any, path: str, spec: _Spec) -> Any:
        kind = spec.kind
        if kind == "number":
            return self.number(value, path, spec)
        if kind == "vector":
            return self.vector(value, path, spec)
        if kind == "region":
            return self.region(value, path)
        if kind == "flag" and isinstance(value, bool):
            return value
        if kind == "text" and isinstance(value, str) and value:
            if spec.choices and value not in spec.choices:
                self.fail(path, f"'{value}' is not allowed", "valid: " + ", ".join(spec.choices))
                return None
            return value
        if kind == "names":
            items = value if isinstance(value, list) else [value]
            if items and all(isinstance(v, str) and v for v in items):
                return tuple(items)
        if kind == "points" and isinstance(value, list) and value:
            pts = [self.vector(v, f"{path}[{i}]", _Spec("vector", "", "mm"))
                   for i, v in enumerate(value)]
            return None if any(p is None for p in pts) else tuple(pts)
        if (kind == "list" and isinstance(value, list)) or (
                kind == "mapping" and isinstance(value, Mapping)):
            return value
        wanted = {"flag": "true or false", "text": "a name", "names": "a list of feature names",
                  "points": "a list of [x, y] points in mm", "list": "a list",
                  "mapping": "a mapping"}[kind]
        self.fail(path, f"expected {wanted}, got {value!r}")
        return None

    def record(self, raw: Any, table: Mapping[str, _Spec], path: str, title: str,
               keys: Sequence[str] | None = None) -> tuple[dict[str, Any], bool]:
        """Read one mapping: (values with defaults filled, True when no problem was found)."""
        if not isinstance(raw, Mapping):
            self.fail(path, f"expected a mapping ({title}), got {raw!r}")
            return {}, False
        keys = list(table) if keys is None else list(keys)
        before = len(self.problems)
        for key in raw:
            if key in keys:
                continue
            if key in table:
                self.fail(f"{path}.{key}", f"'{key}' does not apply to {title}",
                          "fields here: " + ", ".join(keys))
            else:
                self.fail(f"{path}.{key}", f"unknown key '{key}'", _key_hint(str(key), keys, table))
        out: dict[str, Any] = {}
        for key in keys:
            spec = table[key]
            if raw.get(key) is None:
                if spec.required:
                    self.fail(path, f"missing required field '{key}'", spec.doc)
                out[key] = spec.default
            else:
                out[key] = self.value(raw[key], f"{path}.{key}", spec)
        return out, len(self.problems) == before


def _discriminated(rd: _Reader, raw: Any, path: str, key: str, table: Mapping[str, _Spec],
                   keys_by: Mapping[str, Sequence[str]], title: str) -> tuple[dict, bool]:
    if not isinstance(raw, Mapping):
        rd.fail(path, f"expected a mapping ({title}), got {raw!r}")
        return {}, False
    kind = raw.get(key)
    if not isinstance(kind, str) or kind not in keys_by:
        rd.fail(f"{path}.{key}" if key in raw else path,
                f"missing '{key}'" if kind is None else f"{kind!r} is not a valid {key}",
                "valid: " + ", ".join(keys_by))
        return {}, False
    return rd.record(raw, table, path, f"a {title} with {key}: {kind}", keys_by[kind])


def _read_support(rd: _Reader, raw: Any, path: str) -> Support | None:
    d, ok = _discriminated(rd, raw, path, "at", _SUPPORT, _SUPPORT_KEYS, "support")
    if not ok:
        return None
    at = d["at"]
    feats: tuple[str, ...] = tuple(d.get("features") or ())
    if d.get("feature") is not None:
        if feats:
            rd.fail(f"{path}.feature", "give 'features' or 'feature', not both")
            return None
        feats = (d["feature"],)
    if at in ("bores", "mount") and not feats:
        rd.fail(path, f"a support at {at} needs "
                f"{'features: [names]' if at == 'bores' else 'feature: name'}")
        return None
    mode = d.get("mode") or "rigid"
    stiff = d.get("stiffness_n_per_mm")
    if at in ("bores", "mount") and (mode == "elastic") != (stiff is not None):
        rd.fail(path, "mode: elastic needs stiffness_n_per_mm" if mode == "elastic" else
                "stiffness_n_per_mm applies to mode: elastic", "add mode: elastic or drop it")
        return None
    if at == "edge" and d.get("condition") is None:
        rd.fail(path, "a support at an edge needs 'condition'", "clamped or pinned")
        return None
    if at == "points" and d.get("points_mm") is None:
        rd.fail(path, "a support at points needs 'points_mm'", "[[x, y], ...] in mm")
        return None
    return Support(at, feats, mode, float(stiff or 0.0),
                   float(d.get("rotational_stiffness_n_mm_per_rad") or 0.0),
                   d.get("condition") or "pinned", d.get("region_mm"),
                   tuple(d.get("points_mm") or ()), path)


def _read_load(rd: _Reader, raw: Any, path: str) -> Load | None:
    d, ok = _discriminated(rd, raw, path, "type", _LOAD, _LOAD_KEYS, "load")
    if not ok:
        return None
    t = d["type"]
    need = {"component": "component", "moment": "moment_n_mm", "pressure": "pressure_mpa",
            "edge": "force_n", "force": "force_n"}[t]
    if d.get(need) is None:
        rd.fail(path, f"a {t} load needs '{need}'", _LOAD[need].doc)
        return None
    if t == "force" and (d.get("feature") is None) == (d.get("at_mm") is None):
        rd.fail(path, "a force load needs exactly one of 'feature' and 'at_mm'")
        return None
    if t == "moment" and d.get("feature") is None:
        rd.fail(path, "a moment load needs 'feature' (the holes it is spread over)")
        return None
    f = tuple(d.get("force_n") or (0.0, 0.0, 0.0))
    return Load(t, d.get("component"), d.get("feature"), d.get("at_mm"),
                (f + (0.0,))[:3] if len(f) == 2 else f, tuple(d.get("moment_n_mm") or (0.0,) * 3),
                d.get("region_mm"), float(d.get("pressure_mpa") or 0.0), path)


def _unit(v: tuple[float, ...] | None, rd: _Reader, path: str) -> tuple[float, float] | None:
    if v is None:
        return None
    n = math.hypot(v[0], v[1])
    if n == 0.0:
        rd.fail(path, "a direction must not be [0, 0]")
        return None
    return (v[0] / n, v[1] / n)


def _read_case(rd: _Reader, raw: Any, path: str) -> tuple[LoadCase | None, bool]:
    """The case (None when its core fields are bad) and whether it was read without problems;
    a case with bad parts is still returned so its other fields can be checked."""
    before = len(rd.problems)
    d, _ = rd.record(raw, _CASE, path, "load case")
    if not d:
        return None, False
    supports = [_read_support(rd, s, f"{path}.supports[{j}]")
                for j, s in enumerate(d.get("supports") or [])]
    if d.get("supports") == []:
        rd.fail(f"{path}.supports", "a load case needs at least one support")
    loads = [_read_load(rd, s, f"{path}.loads[{j}]") for j, s in enumerate(d.get("loads") or [])]
    coll = None
    if d.get("collision") is not None:
        c, ok = rd.record(d["collision"], _COLLISION, f"{path}.collision", "collision")
        direction = _unit(c.get("direction"), rd, f"{path}.collision.direction") if ok else None
        if ok and direction is not None:
            coll = Collision(c["speed_m_s"], c["bumper_stiffness_n_per_mm"], c["feature"],
                             c["region_mm"], direction, c["vehicle_mass_g"], f"{path}.collision")
    lim = Limits()
    if d.get("limits") is not None:
        m, ok = rd.record(d["limits"], _LIMITS, f"{path}.limits", "limits")
        lim = Limits(**m) if ok else lim
    g_dir = _unit(d.get("g_direction"), rd, f"{path}.g_direction")
    if any(d.get(k) is None for k in ("name", "plate", "family", "g_factor")) or (
            d.get("supports") is None):
        return None, False
    self_weight = d["self_weight"]
    if self_weight is None:
        self_weight = d["family"] == "bending" or g_dir is not None
    case = LoadCase(d["name"], d["plate"], d["family"], float(d["g_factor"]), bool(self_weight),
                    g_dir, tuple(s for s in supports if s), tuple(x for x in loads if x), coll,
                    lim, d["mesh_size_mm"], d["grain_deg"], path)
    return case, len(rd.problems) == before


# --------------------------------------------------------------------------------- checking

def _names_hint(plate: Plate) -> str:
    names = sorted(feature_names(plate))
    shown = ", ".join(names[:40]) + (" ..." if len(names) > 40 else "")
    return f"features of plate '{plate.name}': {shown}"


def _spans(features: Sequence[Feature]) -> tuple[np.ndarray, str]:
    pts = np.vstack([c.to_points(0.05) for f in features for c in f.contours])
    lo, hi = pts.min(axis=0), pts.max(axis=0)
    return pts, f"spans x {lo[0]:g}..{hi[0]:g} mm, y {lo[1]:g}..{hi[1]:g} mm"


class _Checker:
    """Cross-checks a parsed case against its plate's geometry."""

    def __init__(self, rd: _Reader, plate: Plate) -> None:
        self.rd, self.plate = rd, plate
        self.names = feature_names(plate)
        outline = plate.outline.contours[0].to_points(0.05)
        self.outline = shapely.Polygon(outline)

    def feature(self, name: str | None, path: str, holes_only: bool = False) -> bool:
        if name is None:
            return True
        if name not in self.names:
            self.rd.fail(path, f"plate '{self.plate.name}' has no feature '{name}'",
                         _names_hint(self.plate))
            return False
        if holes_only and name == self.plate.outline.id:
            self.rd.fail(path, f"'{name}' is the outline, not a hole",
                         "hold an edge with {at: edge, feature: ..., condition: ...}")
            return False
        return True

    def point(self, p: tuple[float, float] | None, path: str) -> None:
        if p is not None and self.outline.distance(shapely.Point(p)) > 1e-6:
            _, spans = _spans([self.plate.outline])
            self.rd.fail(path, f"point [{p[0]:g}, {p[1]:g}] lies outside plate '{self.plate.name}'",
                         f"the outline {spans}")

    def region(self, box: Box | None, feature: str | None, path: str) -> None:
        if box is None or not self.feature(feature, path.rsplit(".", 1)[0] + ".feature"):
            return
        _, plate_span = _spans([self.plate.outline])
        pts, spans = _spans(resolve_feature(self.plate, feature))
        x0, y0, x1, y1 = self.outline.bounds
        if box.x_min_mm > x1 or box.x_max_mm < x0 or box.y_min_mm > y1 or box.y_max_mm < y0:
            self.rd.fail(path, f"region {box.describe()} lies outside plate '{self.plate.name}'",
                         f"the outline {plate_span}")
        elif not box.contains(pts).any():
            self.rd.fail(path, f"region {box.describe()} selects no part of feature "
                         f"'{feature or self.plate.outline.id}'", f"that feature {spans}")

    def area(self, box: Box | None, path: str) -> None:
        if box is None:
            return
        x0, y0, x1, y1 = self.outline.bounds
        clip = shapely.box(max(box.x_min_mm, x0 - 1), max(box.y_min_mm, y0 - 1),
                           min(box.x_max_mm, x1 + 1), min(box.y_max_mm, y1 + 1))
        if clip.is_empty or not clip.intersects(self.outline) or \
                clip.intersection(self.outline).area <= 0.0:
            _, spans = _spans([self.plate.outline])
            self.rd.fail(path, f"region {box.describe()} lies outside plate '{self.plate.name}'",
                         f"the outline {spans}")


def _check_component(rd: _Reader, c: Component) -> bool:
    before = len(rd.problems)
    if (c.at_mm is None) == (c.feature is None):
        rd.fail(c.path, "a component needs exactly one of 'at_mm' and 'feature'")
    if c.footprint_mm is not None and (c.at_mm is None or min(c.footprint_mm) <= 0):
        rd.fail(f"{c.path}.footprint_mm", "footprint_mm needs at_mm and two positive sizes")
    if rd.plates is not None:
        plate = rd.plates.get(c.plate)
        if plate is None:
            rd.fail(f"{c.path}.plate", f"no plate '{c.plate}'", "plates: " + ", ".join(rd.plates))
        else:
            chk = _Checker(rd, plate)
            chk.feature(c.feature, f"{c.path}.feature", holes_only=True)
            chk.point(c.at_mm, f"{c.path}.at_mm")
    return len(rd.problems) == before


def _check_family(rd: _Reader, case: LoadCase, comps: Mapping[str, Component], clean: bool
                  ) -> None:
    bending = case.family == "bending"
    for ld in case.loads:
        fx, fy, fz = ld.force_n
        mx, my, mz = ld.moment_n_mm
        if ld.type in ("force", "edge") and (bool(fx or fy) if bending else bool(fz)):
            rd.fail(f"{ld.path}.force_n", f"a {case.family} case takes only "
                    f"{'Fz' if bending else 'Fx and Fy'}", "put the other components in "
                    f"{'an in_plane' if bending else 'a bending'} case")
        if ld.type == "moment" and (bool(mz) if bending else bool(mx or my)):
            rd.fail(f"{ld.path}.moment_n_mm", f"a {case.family} case takes only "
                    f"{'Mx and My' if bending else 'Mz'}", "put the other components in "
                    f"{'an in_plane' if bending else 'a bending'} case")
        if ld.type == "pressure" and not bending:
            rd.fail(f"{ld.path}.type", "a pressure acts across the plate: use family: bending")
        if ld.type == "component":
            comp = comps.get(ld.component or "")
            if comp is None:
                rd.fail(f"{ld.path}.component", f"no component '{ld.component}'",
                        "components: " + (", ".join(comps) or "(none defined)"))
            elif comp.plate != case.plate:
                rd.fail(f"{ld.path}.component", f"component '{comp.id}' sits on plate "
                        f"'{comp.plate}', not on '{case.plate}'")
    if bending and case.collision is not None:
        rd.fail(f"{case.path}.collision", "a collision loads the plate in its plane",
                "use family: in_plane")
    if bending and case.g_direction is not None:
        rd.fail(f"{case.path}.g_direction", "in bending the weights act along -z",
                "drop g_direction, or use family: in_plane")
    weights = case.self_weight or any(ld.type == "component" for ld in case.loads)
    if not bending and weights and case.g_direction is None:
        rd.fail(f"{case.path}.g_direction", "an in_plane case with weights needs g_direction",
                "e.g. g_direction: [1, 0]; or self_weight: false and no component loads")
    if clean and not case.loads and not case.self_weight and case.collision is None:
        rd.fail(case.path, f"nothing loads case '{case.name}'",
                "add loads, self_weight: true or a collision")


def _check_case(rd: _Reader, case: LoadCase, comps: Mapping[str, Component], clean: bool = True
                ) -> bool:
    before = len(rd.problems)
    _check_family(rd, case, comps, clean)
    if rd.plates is None:
        return len(rd.problems) == before
    plate = rd.plates.get(case.plate)
    if plate is None:
        rd.fail(f"{case.path}.plate", f"no plate '{case.plate}'", "plates: " + ", ".join(rd.plates))
        return False
    chk = _Checker(rd, plate)
    for s in case.supports:
        if s.at == "bores":
            for j, name in enumerate(s.features):
                chk.feature(name, f"{s.path}.features[{j}]" if len(s.features) > 1 or
                            s.features != (name,) else f"{s.path}.features", holes_only=True)
        elif s.at == "mount":
            chk.feature(s.features[0], f"{s.path}.feature", holes_only=True)
        elif s.at == "edge":
            feat = s.features[0] if s.features else None
            if chk.feature(feat, f"{s.path}.feature"):
                chk.region(s.region, feat, f"{s.path}.region_mm")
        else:
            for j, p in enumerate(s.points_mm):
                chk.point(p, f"{s.path}.points_mm[{j}]")
    for ld in case.loads:
        if ld.type in ("force", "moment"):
            chk.feature(ld.feature, f"{ld.path}.feature")
            chk.point(ld.at_mm, f"{ld.path}.at_mm")
        elif ld.type == "edge" and chk.feature(ld.feature, f"{ld.path}.feature"):
            chk.region(ld.region, ld.feature, f"{ld.path}.region_mm")
        elif ld.type == "pressure":
            chk.area(ld.region, f"{ld.path}.region_mm")
    col = case.collision
    if col is not None and chk.feature(col.feature, f"{col.path}.feature"):
        chk.region(col.region, col.feature, f"{col.path}.region_mm")
    return len(rd.problems) == before


def parse_loads(design: Any, plates: Sequence[Plate] | None = None) -> LoadInput:
    """Parse and validate the design's ``components:`` and ``load_cases:`` sections.

    design: a loaded Design (its ``components``, ``load_cases``, ``references``, ``line_of``
    and, if present, ``vehicle_mass_g``). plates: the built plates; when given, plate names,
    feature names, points and regions are checked against their geometry. Returns a LoadInput.
    Raises DesignError listing every problem, each with its field path and file line.
    """
    rd = _Reader(design, plates)
    comps: dict[str, Component] = {}
    for i, raw in enumerate(getattr(design, "components", ()) or ()):
        path = f"components[{i}]"
        d, ok = rd.record(raw, _COMPONENT, path, "a component")
        if not ok:
            continue
        comp = Component(d["id"], d["plate"], d["mass_g"], d["at_mm"], d["feature"],
                         d["footprint_mm"], path)
        if comp.id in comps:
            rd.fail(f"{path}.id", f"duplicate component id '{comp.id}'", "ids must differ")
        elif _check_component(rd, comp):
            comps[comp.id] = comp
    cases: list[LoadCase] = []
    seen: set[str] = set()
    for i, raw in enumerate(getattr(design, "load_cases", ()) or ()):
        case, clean = _read_case(rd, raw, f"load_cases[{i}]")
        name = raw.get("name") if isinstance(raw, Mapping) else None
        if isinstance(name, str) and name in seen:
            rd.fail(f"load_cases[{i}].name", f"duplicate load case name '{name}'",
                    "names must differ")
            continue
        if isinstance(name, str):
            seen.add(name)
        if case is not None and _check_case(rd, case, comps, clean) and clean:
            cases.append(case)
    if rd.problems:
        raise DesignError(rd.problems, getattr(design, "source_path", ""))
    vm = getattr(design, "vehicle_mass_g", None)
    return LoadInput(tuple(comps.values()), tuple(cases), None if vm is None else float(vm))


# ------------------------------------------------------------------------------ reference

def _table(title: str, fields: Mapping[str, _Spec], note: str = "") -> str:
    rows = [f"### {title}", "", note, ""] if note else [f"### {title}", ""]
    rows += ["| field | unit | default | meaning |", "|---|---|---|---|"]
    for name, s in fields.items():
        default = "required" if s.required else ("-" if s.default is None else f"`{s.default}`")
        choices = f" ({' / '.join(s.choices)})" if s.choices else ""
        unit = s.unit or ("mm" if s.kind == "region" else "-")
        rows.append(f"| `{name}` | {unit} | {default} | {s.doc}{choices} |")
    return "\n".join(rows) + "\n"


def describe_load_cases() -> str:
    """Markdown reference of the ``components:`` and ``load_cases:`` sections (every field, its
    unit and default), as ``platewright`` prints it."""
    support_use = "; ".join(f"`at: {k}` takes {', '.join(v[1:])}" for k, v in _SUPPORT_KEYS.items())
    load_use = "; ".join(f"`type: {k}` takes {', '.join(v[1:])}" for k, v in _LOAD_KEYS.items())
    parts = [
        "## Load cases and components\n",
        "Each load case analyses one plate with finite elements: `bending` for loads across the "
        "plate (weights, pressures, vertical forces; thin-plate Kirchhoff theory) or `in_plane` "
        "for loads in its plane (pulls, bumps, braking; plane stress). Plate coordinates: x "
        "along the vehicle (forward +), y across, z up. Weights use g = 9.80665 m/s^2.\n",
        "Features are named by their id; a mount (e.g. `drive_left`) also names all its holes "
        "together, without the pilot clearance hole. Numbers may be expressions over "
        "`references`; write them in the unit the field name gives, without a unit.\n",
        "Results are finite-element ESTIMATES of an ideal, linear-elastic plate: they leave out "
        "fastener slip, stress raisers at cut edges, creep, impact and material scatter. Confirm "
        "any part whose failure could hurt someone by testing it.\n",
        _table("Components (`components:`)", _COMPONENT),
        "A top-level `vehicle_mass_g` (g) sets the mass of the vehicle for every collision "
        "(default: every plate times its quantity plus every component).\n",
        _table("Load case (`load_cases:`)", _CASE),
        _table("Supports (`supports:`)", _SUPPORT, support_use + ". A case whose supports let "
               "the plate move as a rigid body is refused, naming the free motion."),
        _table("Loads (`loads:`)", _LOAD, load_use + ". Forces and moments on a feature are "
               "spread over its edges; the total is exact."),
        _table("Collision (`collision:`)", _COLLISION, "Peak force F = v sqrt(k m) from the "
               "energy balance of a linear spring (m v^2 / 2 = F^2 / (2 k)); the bumper travel "
               "F / k is reported. The force is spread along the given edge."),
        _table("Limits (`limits:`)", _LIMITS, "Safety factor = material strength / largest von "
               "Mises stress. A case passes when every limit it sets is met."),
    ]
    return "\n".join(parts)
