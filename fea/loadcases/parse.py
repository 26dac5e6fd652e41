"""Load cases and components of a design file: parsing and validation.

The design loader keeps ``load_cases:`` and ``components:`` as raw mappings; :func:`parse_loads`
turns them into frozen dataclasses and collects every problem (field path, file line, what is
valid) into one DesignError. The parts live in their own modules and are importable from here:
the dataclasses in :mod:`.loadcase_types`, the field tables and :func:`describe_load_cases` (the
reference text printed from the same tables, so the documentation cannot drift from the parser)
in :mod:`.loadcase_fields`, the value reader in :mod:`.loadcase_reader` and the checks against
the plate geometry in :mod:`.loadcase_checks`.

Units are in the field names: mm, g, N, N mm, N/mm, MPa, m/s, degrees (radians inside).
Numbers may be plain numbers or expressions over the design's ``references``; a number written
with a unit (``"0.5 in"``) is refused, and the hint gives the value in the unit the field wants.
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from typing import Any

from platewright.fea.loadcases.checks import check_case, check_component
from platewright.fea.loadcases.fields import (
    CASE,
    COLLISION,
    COMPONENT,
    LIMITS,
    LOAD,
    LOAD_KEYS,
    SUPPORT,
    SUPPORT_KEYS,
    Spec,
    describe_load_cases,
)
from platewright.fea.loadcases.reader import Reader
from platewright.fea.loadcases.types import (
    FAMILIES,
    STANDARD_GRAVITY_M_S2,
    Box,
    Collision,
    Component,
    Limits,
    Load,
    LoadCase,
    LoadInput,
    Support,
    feature_names,
    resolve_feature,
)
from platewright.geometry.errors import DesignError
from platewright.geometry.model import Plate

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


def _discriminated(rd: Reader, raw: Any, path: str, key: str, table: Mapping[str, Spec],
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


def _read_support(rd: Reader, raw: Any, path: str) -> Support | None:
    d, ok = _discriminated(rd, raw, path, "at", SUPPORT, SUPPORT_KEYS, "support")
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
    if at == "points" and d.get("condition") == "symmetry":
        rd.fail(f"{path}.condition", "symmetry is a line: use it on an edge",
                "{at: edge, condition: symmetry, region_mm: {...}}")
        return None
    directions = d.get("directions") or ("x", "y")
    bad = [v for v in directions if v not in ("x", "y")]
    if bad or len(set(directions)) != len(directions):
        rd.fail(f"{path}.directions", f"directions must be [x], [y] or [x, y], got "
                f"{list(directions)}", "x and y are the plate's axes")
        return None
    return Support(at, feats, mode, float(stiff or 0.0),
                   float(d.get("rotational_stiffness_n_mm_per_rad") or 0.0),
                   d.get("condition") or "pinned", d.get("region_mm"),
                   tuple(d.get("points_mm") or ()), path, tuple(sorted(directions)))


def _read_load(rd: Reader, raw: Any, path: str) -> Load | None:
    d, ok = _discriminated(rd, raw, path, "type", LOAD, LOAD_KEYS, "load")
    if not ok:
        return None
    t = d["type"]
    need = {"component": "component", "moment": "moment_n_mm", "pressure": "pressure_mpa",
            "edge": "force_n", "force": "force_n"}[t]
    if d.get(need) is None:
        rd.fail(path, f"a {t} load needs '{need}'", LOAD[need].doc)
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


def _unit(v: tuple[float, ...] | None, rd: Reader, path: str) -> tuple[float, float] | None:
    if v is None:
        return None
    n = math.hypot(v[0], v[1])
    if n == 0.0:
        rd.fail(path, "a direction must not be [0, 0]")
        return None
    return (v[0] / n, v[1] / n)


def _read_case(rd: Reader, raw: Any, path: str) -> tuple[LoadCase | None, bool]:
    """The case (None when its core fields are bad) and whether it was read without problems;
    a case with bad parts is still returned so its other fields can be checked."""
    before = len(rd.problems)
    d, _ = rd.record(raw, CASE, path, "load case")
    if not d:
        return None, False
    supports = [_read_support(rd, s, f"{path}.supports[{j}]")
                for j, s in enumerate(d.get("supports") or [])]
    if d.get("supports") == []:
        rd.fail(f"{path}.supports", "a load case needs at least one support")
    loads = [_read_load(rd, s, f"{path}.loads[{j}]") for j, s in enumerate(d.get("loads") or [])]
    coll = None
    if d.get("collision") is not None:
        c, ok = rd.record(d["collision"], COLLISION, f"{path}.collision", "collision")
        direction = _unit(c.get("direction"), rd, f"{path}.collision.direction") if ok else None
        if ok and direction is not None:
            coll = Collision(c["speed_m_s"], c["bumper_stiffness_n_per_mm"], c["feature"],
                             c["region_mm"], direction, c["vehicle_mass_g"], f"{path}.collision")
    lim = Limits()
    if d.get("limits") is not None:
        m, ok = rd.record(d["limits"], LIMITS, f"{path}.limits", "limits")
        lim = Limits(**m) if ok else lim
    g_dir = _unit(d.get("g_direction"), rd, f"{path}.g_direction")
    if any(d.get(k) is None for k in ("name", "plate", "family", "g_factor")) or (
            d.get("supports") is None):
        return None, False
    self_weight = d["self_weight"]
    if self_weight is None:
        self_weight = d["family"] == "bending" or g_dir is not None
    refinements = d.get("max_refinements")
    if refinements is not None and float(refinements) != int(refinements):
        rd.fail(f"{path}.max_refinements", f"max_refinements must be a whole number, got "
                f"{refinements:g}", "e.g. 4; 0 solves once")
        refinements = None
    case = LoadCase(d["name"], d["plate"], d["family"], float(d["g_factor"]), bool(self_weight),
                    g_dir, tuple(s for s in supports if s), tuple(x for x in loads if x), coll,
                    lim, d["mesh_size_mm"], d["grain_deg"], path,
                    None if d.get("error_target_pct") is None else float(d["error_target_pct"]),
                    None if refinements is None else int(refinements),
                    d.get("exclusion_radius_mm"))
    return case, len(rd.problems) == before


def parse_loads(design: Any, plates: Sequence[Plate] | None = None) -> LoadInput:
    """Parse and validate the design's ``components:`` and ``load_cases:`` sections.

    design: a loaded Design (its ``components``, ``load_cases``, ``references``, ``line_of``
    and, if present, ``vehicle_mass_g``). plates: the built plates; when given, plate names,
    feature names, points and regions are checked against their geometry. Returns a LoadInput.
    Raises DesignError listing every problem, each with its field path and file line.
    """
    rd = Reader(design, plates)
    comps: dict[str, Component] = {}
    for i, raw in enumerate(getattr(design, "components", ()) or ()):
        path = f"components[{i}]"
        d, ok = rd.record(raw, COMPONENT, path, "a component")
        if not ok:
            continue
        comp = Component(d["id"], d["plate"], d["mass_g"], d["at_mm"], d["feature"],
                         d["footprint_mm"], path)
        if comp.id in comps:
            rd.fail(f"{path}.id", f"duplicate component id '{comp.id}'", "ids must differ")
        elif check_component(rd, comp):
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
        if case is not None and check_case(rd, case, comps, clean) and clean:
            cases.append(case)
    if rd.problems:
        raise DesignError(rd.problems, getattr(design, "source_path", ""))
    vm = getattr(design, "vehicle_mass_g", None)
    return LoadInput(tuple(comps.values()), tuple(cases), None if vm is None else float(vm))
