"""Reading raw ``components:`` / ``load_cases:`` mappings against the field tables.

:class:`Reader` turns values into numbers (mm, g, N, MPa ... as the field name says; expressions
over the design's ``references`` allowed), vectors, names and region boxes, and collects every
problem (field path, file line, hint) instead of stopping at the first.
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from typing import Any

from platewright.fea.loadcases.fields import NUMBER_WITH_UNIT, Spec, key_hint, unit_hint
from platewright.fea.loadcases.types import REGION_KEYS, Box
from platewright.geometry.design.expressions import ExpressionError, evaluate
from platewright.geometry.errors import Problem
from platewright.geometry.model import Plate

__all__: list[str] = []


class Reader:
    """Reads raw mappings against the field tables, collecting problems."""

    def __init__(self, design: Any, plates: Sequence[Plate] | None) -> None:
        self.design = design
        self.refs: Mapping[str, float] = getattr(design, "references", None) or {}
        self.plates = None if plates is None else {p.name: p for p in plates}
        self.problems: list[Problem] = []

    def fail(self, path: str, message: str, hint: str = "") -> None:
        fn = getattr(self.design, "line_of", None)
        self.problems.append(Problem(path, message, fn(path) if fn else None, hint))

    def number(self, value: Any, path: str, spec: Spec) -> float | None:
        m = NUMBER_WITH_UNIT.match(value) if isinstance(value, str) else None
        if m and m.group(2) not in self.refs:
            msg = (f"'{value}' is not a number: write the value in {spec.unit} without a unit "
                   "(the unit is in the field name)") if spec.unit else (
                f"'{value}' is not a number: this field takes a plain number without a unit")
            self.fail(path, msg, unit_hint(float(m.group(1)), m.group(2), spec.unit))
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

    def vector(self, value: Any, path: str, spec: Spec) -> tuple[float, ...] | None:
        if not isinstance(value, list) or len(value) not in spec.lengths:
            n = " or ".join(str(k) for k in spec.lengths)
            self.fail(path, f"expected a list of {n} numbers{' in ' + spec.unit if spec.unit else ''}"
                      f", got {value!r}")
            return None
        item = Spec("number", "", spec.unit, gt=spec.gt)
        out = [self.number(v, f"{path}[{i}]", item) for i, v in enumerate(value)]
        return None if any(o is None for o in out) else tuple(float(o) for o in out)

    def region(self, value: Any, path: str) -> Box | None:
        if not isinstance(value, Mapping) or not value:
            self.fail(path, f"expected a mapping with some of {', '.join(REGION_KEYS)} (mm), "
                      f"got {value!r}")
            return None
        vals: dict[str, float] = {}
        for key, raw in value.items():
            if key not in REGION_KEYS:
                self.fail(f"{path}.{key}", f"unknown key '{key}'",
                          "valid: " + ", ".join(REGION_KEYS) + " (all in mm)")
                continue
            v = self.number(raw, f"{path}.{key}", Spec("number", "", "mm"))
            if v is not None:
                vals[key] = v
        box = Box(vals.get("x_min", -math.inf), vals.get("x_max", math.inf),
                  vals.get("y_min", -math.inf), vals.get("y_max", math.inf))
        if not (box.x_min_mm < box.x_max_mm and box.y_min_mm < box.y_max_mm):
            self.fail(path, f"empty box {box.describe()}", "each _min must be below its _max")
            return None
        return box

    def value(self, value: Any, path: str, spec: Spec) -> Any:
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
            pts = [self.vector(v, f"{path}[{i}]", Spec("vector", "", "mm"))
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

    def record(self, raw: Any, table: Mapping[str, Spec], path: str, title: str,
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
                self.fail(f"{path}.{key}", f"unknown key '{key}'", key_hint(str(key), keys, table))
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
