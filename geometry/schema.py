"""The declarative schema of a design file: one table of field specs, used to validate and to
print the design-file reference (:func:`describe_schema`).

A spec says the type, the default, the valid range or values and the meaning of a field; the unit
is read from the field name's suffix (``_mm``, ``_deg``). Numbers may be written as expressions
over the named ``references`` (see :mod:`.expressions`). Validation collects every problem (path,
line, what is wrong, what is valid) and returns them together; nothing is raised here.

To add a section later, add a :class:`Field` to ``DESIGN`` (or a variant to ``FEATURE_TYPES``);
``load_cases`` and ``components`` are declared as lists of raw mappings for now.
"""

from __future__ import annotations

import copy
import difflib
import re
from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass, field
from typing import Any

from .errors import Problem
from .expressions import ExpressionError, evaluate, resolve_references
from .yamlsource import LineMap, format_path

__all__ = [
    "Spec", "Field", "Number", "Integer", "Text", "Flag", "Point", "NumberList", "PointList",
    "NumberOrList", "Record", "ListOf", "Choice", "Tagged", "AnyOf", "Raw", "RefTable",
    "DESIGN", "PLATE", "OUTLINE", "LABEL", "MACHINE", "FEATURE_TYPES", "FIT_CLASSES",
    "DEFAULT_LABEL_HEIGHT_MM", "Validated",
    "validate_design", "describe_schema", "allowed_keys", "unit_of", "suggest",
]

BAD = object()  # marks a value that failed validation (its problem is already recorded)
_WORD = re.compile(r"^[A-Za-z][A-Za-z0-9_\-]*$")
_UNITS = {"_mm_s": "mm/s", "_mm": "mm", "_mm2": "mm^2", "_deg": "degrees", "_s": "s", "_g": "g",
          "_n": "N", "_mpa": "MPa"}


def unit_of(name: str) -> str:
    """The unit a field name states by its suffix (``diameter_mm`` -> ``mm``), or ``""``."""
    for suffix, unit in _UNITS.items():
        if name.endswith(suffix):
            return unit
    return ""


def suggest(word: str, known: Sequence[str]) -> str:
    """A did-you-mean hint for ``word`` among ``known``, else the list of valid words."""
    close = difflib.get_close_matches(word, list(known), n=1, cutoff=0.6)
    if close:
        return f"did you mean '{close[0]}'?"
    return "valid: " + ", ".join(known) if known else ""


@dataclass
class _Ctx:
    lines: LineMap
    refs: dict[str, float]
    depends: dict[str, frozenset[str]]
    problems: list[Problem] = field(default_factory=list)
    refs_at: dict[str, frozenset[str]] = field(default_factory=dict)
    position_refs: dict[str, frozenset[str]] = field(default_factory=dict)

    def fail(self, path: str, message: str, hint: str = "") -> object:
        if self.lines.is_overridden(path):
            hint = f"{hint} (value from --set)" if hint else "value from --set"
        self.problems.append(Problem(path, message, self.lines.line_of(path), hint))
        return BAD


@dataclass(frozen=True)
class Spec:
    """Base of all field specs; ``check`` returns the normalised value or BAD."""

    def type_name(self) -> str:
        return "value"

    def check(self, value: Any, ctx: _Ctx, path: str) -> Any:
        return value


@dataclass(frozen=True)
class Number(Spec):
    """A float (or expression): ``gt``/``ge``/``le`` bound it; ``expr`` allows expressions."""

    gt: float | None = None
    ge: float | None = None
    le: float | None = None
    expr: bool = True

    def type_name(self) -> str:
        return "number or expression" if self.expr else "number"

    def range_text(self) -> str:
        parts = [f"> {self.gt:g}" if self.gt is not None else "",
                 f">= {self.ge:g}" if self.ge is not None else "",
                 f"<= {self.le:g}" if self.le is not None else ""]
        return " and ".join(p for p in parts if p)

    def check(self, value: Any, ctx: _Ctx, path: str) -> Any:
        if isinstance(value, str) and not self.expr:
            return ctx.fail(path, f"expected a plain number, got '{value}'")
        try:
            ev = evaluate(value, ctx.refs)
        except ExpressionError as exc:
            return ctx.fail(path, exc.message, exc.hint)
        deps = set(ev.refs)
        for r in ev.refs:
            deps |= ctx.depends.get(r, frozenset())
        ctx.refs_at[path] = frozenset(deps)
        v = ev.value
        if ((self.gt is not None and not v > self.gt) or (self.ge is not None and not v >= self.ge)
                or (self.le is not None and not v <= self.le)):
            shown = f"{v:g}" if isinstance(value, (int, float)) else f"{value} = {v:g}"
            return ctx.fail(path, f"out of range ({shown})", f"must be {self.range_text()}")
        return v


@dataclass(frozen=True)
class Integer(Spec):
    """A whole number, at least ``ge``."""

    ge: int = 1

    def type_name(self) -> str:
        return "integer"

    def check(self, value: Any, ctx: _Ctx, path: str) -> Any:
        if isinstance(value, bool) or not isinstance(value, int):
            return ctx.fail(path, f"expected a whole number, got {value!r}")
        if value < self.ge:
            return ctx.fail(path, f"out of range ({value})", f"must be >= {self.ge}")
        return value


@dataclass(frozen=True)
class Text(Spec):
    """A string; ``choices`` restricts it, ``word`` requires a name usable in paths and files."""

    choices: tuple[str, ...] = ()
    word: bool = False

    def type_name(self) -> str:
        return "one of: " + ", ".join(self.choices) if self.choices else "text"

    def check(self, value: Any, ctx: _Ctx, path: str) -> Any:
        if isinstance(value, (int, float)) and not isinstance(value, bool) and not self.word:
            value = str(value)  # e.g. a part number written as 1001
        if not isinstance(value, str):
            return ctx.fail(path, f"expected text, got {value!r}")
        if self.choices and value not in self.choices:
            return ctx.fail(path, f"'{value}' is not allowed", suggest(value, self.choices))
        if self.word and not _WORD.match(value):
            return ctx.fail(path, f"'{value}' is not a valid name",
                            "start with a letter; use letters, digits, '_' and '-'")
        return value


@dataclass(frozen=True)
class Flag(Spec):
    """true or false."""

    def type_name(self) -> str:
        return "true/false"

    def check(self, value: Any, ctx: _Ctx, path: str) -> Any:
        if not isinstance(value, bool):
            return ctx.fail(path, f"expected true or false, got {value!r}")
        return value


def _seq(value: Any, ctx: _Ctx, path: str, what: str) -> list | None:
    if not isinstance(value, list):
        ctx.fail(path, f"expected {what}, got {value!r}")
        return None
    return value


@dataclass(frozen=True)
class NumberList(Spec):
    """A list of numbers (each may be an expression), at least ``min_len`` long."""

    item: Number = Number()
    min_len: int = 1
    exact_len: int | None = None

    def type_name(self) -> str:
        if self.exact_len == 2:
            return "[x, y] numbers or expressions"
        return "list of numbers or expressions"

    def check(self, value: Any, ctx: _Ctx, path: str) -> Any:
        seq = _seq(value, ctx, path, self.type_name())
        if seq is None:
            return BAD
        if self.exact_len is not None and len(seq) != self.exact_len:
            return ctx.fail(path, f"expected {self.exact_len} values, got {len(seq)}",
                            f"write it as {self.type_name()}")
        if len(seq) < self.min_len:
            return ctx.fail(path, f"needs at least {self.min_len} values, got {len(seq)}")
        out = [self.item.check(v, ctx, format_path([path, i])) for i, v in enumerate(seq)]
        return BAD if any(o is BAD for o in out) else out


def Point(item: Number | None = None) -> NumberList:  # noqa: N802 - reads as a type in tables
    """A 2-D point or pair ``[x, y]`` (each a number or expression)."""
    return NumberList(item=item or Number(), min_len=2, exact_len=2)


@dataclass(frozen=True)
class PointList(Spec):
    """A list of ``[x, y]`` points, at least ``min_len`` of them."""

    min_len: int = 3

    def type_name(self) -> str:
        return "list of [x, y]"

    def check(self, value: Any, ctx: _Ctx, path: str) -> Any:
        seq = _seq(value, ctx, path, self.type_name())
        if seq is None:
            return BAD
        if len(seq) < self.min_len:
            return ctx.fail(path, f"needs at least {self.min_len} points, got {len(seq)}")
        out = [Point().check(v, ctx, format_path([path, i])) for i, v in enumerate(seq)]
        return BAD if any(o is BAD for o in out) else [tuple(p) for p in out]


@dataclass(frozen=True)
class NumberOrList(Spec):
    """One number for all, or a list with one number per item."""

    item: Number = Number()

    def type_name(self) -> str:
        return "number or list of numbers"

    def check(self, value: Any, ctx: _Ctx, path: str) -> Any:
        if isinstance(value, list):
            return NumberList(self.item, min_len=1).check(value, ctx, path)
        return self.item.check(value, ctx, path)


@dataclass(frozen=True)
class Field:
    """A named field: spec, whether required, default, meaning; ``position`` marks fields that
    place the feature (their references are the feature's ``refs``)."""

    spec: Spec
    doc: str
    required: bool = False
    default: Any = None
    position: bool = False


@dataclass(frozen=True)
class Record(Spec):
    """A mapping with declared fields; unknown keys are errors (with a did-you-mean hint)."""

    title: str
    fields: Mapping[str, Field]
    checks: tuple[Callable[[dict, _Ctx, str], None], ...] = ()

    def type_name(self) -> str:
        return f"mapping ({self.title})"

    def check(self, value: Any, ctx: _Ctx, path: str) -> Any:
        if not isinstance(value, Mapping):
            return ctx.fail(path, f"expected a mapping ({self.title}), got {value!r}")
        out: dict[str, Any] = {}
        ok = True
        for key in value:
            if key not in self.fields:
                ok = False
                ctx.fail(format_path([path, key]) if path else key, f"unknown key '{key}'",
                         suggest(key, list(self.fields)))
        for name, f in self.fields.items():
            sub = format_path([path, name]) if path else name
            if name not in value or value[name] is None and not f.required:
                if f.required:
                    ok = False
                    ctx.fail(sub, f"missing required field '{name}'", f.doc)
                out[name] = copy.copy(f.default)  # never share a mutable default
                continue
            v = f.spec.check(value[name], ctx, sub)
            ok = ok and v is not BAD
            out[name] = v
            if f.position and v is not BAD:
                refs = {r for p, rs in ctx.refs_at.items() if p == sub or p.startswith(sub + "[")
                        or p.startswith(sub + ".") for r in rs}
                ctx.position_refs[path] = ctx.position_refs.get(path, frozenset()) | refs
        if ok:
            before = len(ctx.problems)
            for chk in self.checks:
                chk(out, ctx, path)
            ok = len(ctx.problems) == before
        return out if ok else BAD


@dataclass(frozen=True)
class ListOf(Spec):
    """A list of items of one spec; ``unique`` names a field whose values must differ."""

    item: Spec
    min_len: int = 0
    unique: str = ""

    def type_name(self) -> str:
        return f"list of {self.item.type_name()}"

    def check(self, value: Any, ctx: _Ctx, path: str) -> Any:
        seq = _seq(value, ctx, path, "a list")
        if seq is None:
            return BAD
        if len(seq) < self.min_len:
            return ctx.fail(path, f"needs at least {self.min_len} "
                            f"{'entry' if self.min_len == 1 else 'entries'}")
        out = [self.item.check(v, ctx, format_path([path, i])) for i, v in enumerate(seq)]
        if self.unique:
            seen: dict[Any, int] = {}
            for i, v in enumerate(seq):
                key = v.get(self.unique) if isinstance(v, Mapping) else None
                if key is None:
                    continue
                if key in seen:
                    ctx.fail(format_path([path, i, self.unique]), f"duplicate {self.unique} "
                             f"'{key}' (also {format_path([path, seen[key]])})",
                             f"every {self.unique} must be unique")
                    out[i] = BAD
                else:
                    seen[key] = i
        return BAD if any(o is BAD for o in out) else out


@dataclass(frozen=True)
class Choice(Spec):
    """A mapping with exactly one key naming the variant: ``{variant: {fields...}}``."""

    variants: Mapping[str, Record]

    def type_name(self) -> str:
        return "one of: " + ", ".join(f"{{{k}: ...}}" for k in self.variants)

    def check(self, value: Any, ctx: _Ctx, path: str) -> Any:
        if not isinstance(value, Mapping) or len(value) != 1:
            return ctx.fail(path, "expected a mapping with exactly one key",
                            "one of: " + ", ".join(self.variants))
        (kind, body), = value.items()
        if kind not in self.variants:
            return ctx.fail(format_path([path, kind]), f"unknown variant '{kind}'",
                            suggest(kind, list(self.variants)))
        out = self.variants[kind].check(body, ctx, format_path([path, kind]))
        return BAD if out is BAD else {"kind": kind, **out}


@dataclass(frozen=True)
class Tagged(Spec):
    """A mapping whose ``tag`` field picks the variant record (e.g. a feature's ``type``)."""

    tag: str
    variants: Mapping[str, Record]

    def type_name(self) -> str:
        return f"mapping with '{self.tag}'"

    def check(self, value: Any, ctx: _Ctx, path: str) -> Any:
        if not isinstance(value, Mapping):
            return ctx.fail(path, f"expected a mapping, got {value!r}")
        kind = value.get(self.tag)
        if kind is None:
            return ctx.fail(path, f"missing '{self.tag}'", "one of: " + ", ".join(self.variants))
        if kind not in self.variants:
            return ctx.fail(format_path([path, self.tag]), f"unknown {self.tag} '{kind}'",
                            suggest(str(kind), list(self.variants)))
        return self.variants[kind].check(value, ctx, path)


@dataclass(frozen=True)
class AnyOf(Spec):
    """Either a scalar spec or a mapping spec, chosen by the value's shape."""

    scalar: Spec
    mapping: Record

    def type_name(self) -> str:
        return f"{self.scalar.type_name()} or {self.mapping.type_name()}"

    def check(self, value: Any, ctx: _Ctx, path: str) -> Any:
        spec = self.mapping if isinstance(value, Mapping) else self.scalar
        return spec.check(value, ctx, path)


@dataclass(frozen=True)
class Raw(Spec):
    """A mapping kept as written (a section whose fields are not yet declared)."""

    def type_name(self) -> str:
        return "mapping (kept as written)"

    def check(self, value: Any, ctx: _Ctx, path: str) -> Any:
        if not isinstance(value, Mapping):
            return ctx.fail(path, f"expected a mapping, got {value!r}")
        return dict(value)


@dataclass(frozen=True)
class RefTable(Spec):
    """Named references: ``name: number or expression``; evaluated before everything else."""

    def type_name(self) -> str:
        return "mapping name -> number or expression"

    def check(self, value: Any, ctx: _Ctx, path: str) -> Any:
        if not isinstance(value, Mapping):
            return ctx.fail(path, f"expected a mapping of names to numbers, got {value!r}")
        for key, v in value.items():
            sub = format_path([path, key])
            if not key.isidentifier() or key.startswith("_"):
                ctx.fail(sub, f"'{key}' cannot be a reference name",
                         "use letters, digits and '_', starting with a letter")
            elif isinstance(v, bool) or not isinstance(v, (int, float, str)):
                ctx.fail(sub, f"expected a number or an expression, got {v!r}")
        return dict(value)


FIT_CLASSES = ("press", "transition", "slide", "clearance")
_SIZE = Number(gt=0.0, le=5000.0)
_MM = Number(ge=-5000.0, le=5000.0)
_ANGLE = Number(ge=-360.0, le=360.0)
_AT = Field(Point(_MM), "position of the centre [x, y] in plate coordinates", required=True,
            position=True)
_ID = Field(Text(word=True), "feature id, unique on the plate (used by rules, loads, --set)",
            required=True)
_NOTE = Field(Text(), "free text kept with the feature (e.g. which bearing)", default="")
_FIT = Field(Text(FIT_CLASSES), "fit class; its allowance comes from the material library",
             required=True)
_SERIES = Field(Text(("fine", "medium", "coarse")), "ISO 273 clearance series", default="medium")
_SCREW = Field(Text(), "metric screw size, e.g. M3 (ISO 273 table, M2 to M8)", required=True)


def _feature(kind: str, title: str, checks: tuple = (), **fields: Field) -> Record:
    return Record(title, {"id": _ID, "type": Field(Text((kind,)), "feature type", required=True),
                          "at_mm": _AT, **fields, "note": _NOTE}, checks)


def _check_slotted(d: dict, ctx: _Ctx, path: str) -> None:
    has_travel = d["travel_mm"] is not None
    has_angle = d["trim_deg"] is not None or d["span_mm"] is not None
    if has_travel == has_angle or (has_angle and (d["trim_deg"] is None or d["span_mm"] is None)):
        ctx.fail(path, "give either travel_mm, or both trim_deg and span_mm",
                 "travel_mm = span_mm * tan(trim_deg)")


_HOLE_SPEC = Record("mount hole", {
    "at_mm": Field(Point(_MM), "hole centre relative to the mount centre [x, y]", required=True),
    "diameter_mm": Field(_SIZE, "hole diameter", required=True)})

FEATURE_TYPES: dict[str, Record] = {
    "hole": _feature("hole", "round hole", diameter_mm=Field(_SIZE, "nominal diameter", required=True),
                     fit_allowance_mm=Field(Number(ge=-2.0, le=2.0),
                                            "signed allowance added to the diameter", default=0.0)),
    "bore": _feature("bore", "bearing or shaft bore", diameter_mm=Field(_SIZE, "nominal diameter (e.g. "
                     "the bearing's outside diameter)", required=True), fit=_FIT),
    "slotted_bore": _feature(
        "slotted_bore", "bore that can slide along a direction (alignment trim)", (_check_slotted,),
        diameter_mm=Field(_SIZE, "nominal bore diameter = slot width", required=True), fit=_FIT,
        travel_mm=Field(Number(gt=0.0, le=500.0), "slide travel (centre distance of the ends)"),
        trim_deg=Field(Number(gt=0.0, le=45.0), "trim angle swept end to end (with span_mm)"),
        span_mm=Field(_SIZE, "distance to the axle's other support (with trim_deg)"),
        direction_deg=Field(_ANGLE, "direction of travel from +x", default=0.0)),
    "slot": _feature("slot", "straight slot (stadium)",
                     length_mm=Field(_SIZE, "overall length", required=True),
                     width_mm=Field(_SIZE, "width", required=True),
                     angle_deg=Field(_ANGLE, "direction of the length from +x", default=0.0)),
    "cutout": _feature("cutout", "rectangular cut-out (cable pass-through)",
                       width_mm=Field(_SIZE, "size along x before rotation", required=True),
                       height_mm=Field(_SIZE, "size along y before rotation", required=True),
                       corner_radius_mm=Field(Number(ge=0.0), "corner radius", default=0.0),
                       angle_deg=Field(_ANGLE, "rotation from +x", default=0.0)),
    "fastener": _feature("fastener", "clearance hole for a screw", screw=_SCREW, series=_SERIES),
    "fastener_array": _feature("fastener_array",
        "rows x cols clearance holes (stand-offs)", screw=_SCREW, series=_SERIES,
        rows=Field(Integer(1), "number of rows (along y)", required=True),
        cols=Field(Integer(1), "number of columns (along x)", required=True),
        pitch_mm=Field(Point(Number(ge=0.0)), "hole pitch [along x, along y]", required=True),
        angle_deg=Field(_ANGLE, "rotation of the pattern from +x", default=0.0),
        centered=Field(Flag(), "true: at_mm is the pattern centre; false: the first hole",
                       default=True)),
    "motor_mount": _feature("motor_mount",
        "motor face: pilot clearance and mounting holes from the motor library",
        motor=Field(Text(word=True), "motor pattern key from the library", required=True),
        angle_deg=Field(_ANGLE, "rotation of the pattern from +x", default=0.0),
        strap=Field(Flag(), "also cut clamp-strap slots (round gearmotors)", default=False)),
    "custom_mount": _feature("custom_mount",
        "your own mounting pattern",
        holes=Field(ListOf(_HOLE_SPEC, min_len=1), "the holes", required=True),
        pilot_diameter_mm=Field(_SIZE, "optional centre clearance hole diameter"),
        angle_deg=Field(_ANGLE, "rotation of the pattern from +x", default=0.0)),
}

_RADIUS = Field(Number(ge=0.0), "corner radius", default=0.0)
OUTLINE = Choice({
    "rounded_rect": Record("rounded rectangle", {
        "at_mm": Field(Point(_MM), "centre [x, y]", default=[0.0, 0.0], position=True),
        "width_mm": Field(_SIZE, "size along x", required=True),
        "height_mm": Field(_SIZE, "size along y", required=True),
        "corner_radius_mm": _RADIUS,
        "angle_deg": Field(_ANGLE, "rotation from +x", default=0.0)}),
    "polygon": Record("polygon with filleted corners", {
        "points_mm": Field(PointList(3), "corners in order [[x, y], ...]", required=True,
                           position=True),
        "corner_radii_mm": Field(NumberOrList(Number(ge=0.0)),
                                 "one radius for all corners, or one per corner", default=0.0)}),
    "around": Record("rectangle around given coordinates", {
        "x_mm": Field(NumberList(_MM), "x coordinates to enclose", required=True, position=True),
        "y_mm": Field(NumberList(_MM), "y coordinates to enclose", required=True, position=True),
        "margin_mm": Field(Number(ge=0.0), "material beyond the outermost coordinates",
                           required=True),
        "corner_radius_mm": _RADIUS}),
})

#: Text height of an engraved label when the design does not give one (mm).
DEFAULT_LABEL_HEIGHT_MM = 3.0
LABEL = AnyOf(Flag(), Record("engraved label", {
    "at_mm": Field(Point(_MM), "text centre [x, y] (default: near the lower edge)"),
    "height_mm": Field(Number(gt=0.0, le=100.0), "text height",
                       default=DEFAULT_LABEL_HEIGHT_MM),
    "rotation_deg": Field(_ANGLE, "text rotation", default=0.0),
    "text": Field(Text(), "text (default: name, part number, material, kerf)"),
}))

PLATE = Record("plate", {
    "name": Field(Text(word=True), "plate name, unique (file names, --set paths)", required=True),
    "part_number": Field(Text(), "part number for the label and the report", default=""),
    "quantity": Field(Integer(1), "how many to cut", default=1),
    "material": Field(Text(word=True), "material key for this plate (default: the design's)"),
    "thickness_mm": Field(Number(gt=0.0, le=50.0), "sheet thickness (default: the design's)"),
    "kerf_mm": Field(Number(ge=0.0, le=2.0), "kerf for this plate (default: design/machine)"),
    "outline": Field(OUTLINE, "the plate's outer contour", required=True),
    "features": Field(ListOf(Tagged("type", FEATURE_TYPES), unique="id"),
                      "holes, bores, slots, mounts and cut-outs", default=[]),
    "label": Field(LABEL, "engraved label: true, false, or settings", default=True),
})

_AS_PROFILE = "as in a bundled machine profile file (templates/machines)"
MACHINE = Record("inline machine profile", {
    "name": Field(Text(), "machine name", default="inline machine"),
    "kind": Field(Text(), "machine kind, e.g. co2_laser", default=""),
    "notes": Field(Text(), "free text", default=""),
    "bed_mm": Field(Point(_SIZE), "usable bed size [x, y]"),
    "kerf_mm": Field(Number(ge=0.0, le=2.0), "default kerf of this machine"),
    "kerf_mm_by_material": Field(Spec(), "kerf by material key: list of {thickness_mm, kerf_mm}, "
                                 + _AS_PROFILE),
    "cut_speed_mm_s": Field(Spec(), "cut speed by material key: list of {thickness_mm, "
                            "speed_mm_s}, " + _AS_PROFILE),
    "pierce_s": Field(Number(ge=0.0), "time per pierce, s"),
    "travel_mm_s": Field(Number(gt=0.0), "rapid travel speed, mm/s"),
    "hourly_rate": Field(Number(ge=0.0), "machine cost per hour in `currency`"),
    "currency": Field(Text(), "currency code of hourly_rate and prices", default=""),
    "sheets": Field(Spec(), "stock sheets: list of {material, thickness_mm, size_mm, price}"),
    "sources": Field(Spec(), "field -> where its value comes from"),
})

DESIGN = Record("design", {
    "name": Field(Text(), "design name", required=True),
    "notes": Field(Text(), "free text, ignored", default=""),
    "material": Field(Text(word=True), "material key from the library (plates may override)",
                      required=True),
    "thickness_mm": Field(Number(gt=0.0, le=50.0), "sheet thickness", required=True),
    "machine": Field(AnyOf(Text(word=True), MACHINE), "bundled machine profile key, or an "
                     "inline profile", default="example_co2_60w"),
    "kerf_mm": Field(Number(ge=0.0, le=2.0), "kerf for all plates (default: from the machine "
                     "profile for the material, else the material's typical kerf)"),
    "references": Field(RefTable(), "named dimensions; values may use other references",
                        default={}),
    "plates": Field(ListOf(PLATE, min_len=1, unique="name"), "the plates", required=True),
    "load_cases": Field(ListOf(Raw()), "load cases (kept as written for now)", default=[]),
    "components": Field(ListOf(Raw()), "point masses (kept as written for now)", default=[]),
})


@dataclass
class Validated:
    """Result of :func:`validate_design`.

    data: the normalised design (defaults filled, numbers evaluated to floats; an outline is
    ``{"kind": variant, **fields}``), or None when there were problems. references: name ->
    value; depends: name -> every reference it uses. refs_at: field path -> references its value
    used (closure). position_refs: record path -> references used by its position fields.
    """

    data: dict | None
    problems: list[Problem]
    references: dict[str, float]
    depends: dict[str, frozenset[str]]
    refs_at: dict[str, frozenset[str]]
    position_refs: dict[str, frozenset[str]]


def validate_design(tree: Any, lines: LineMap) -> Validated:
    """Validate a raw design tree (as parsed, overrides applied); collects every problem."""
    ctx = _Ctx(lines, {}, {})
    if not isinstance(tree, Mapping):
        ctx.fail("", "the design file must be a mapping with at least 'name', 'material', "
                 "'thickness_mm' and 'plates'")
        return Validated(None, ctx.problems, {}, {}, {}, {})
    raw_refs = tree.get("references") or {}
    if RefTable().check(raw_refs, ctx, "references") is not BAD and not ctx.problems:
        try:
            values, depends = resolve_references(raw_refs)
            ctx.refs = {k: values[k] for k in raw_refs}
            ctx.depends = depends
        except ExpressionError as exc:
            ctx.fail(format_path(["references", exc.key]), exc.message, exc.hint)
    if ctx.problems:  # numbers cannot be checked against broken references
        return Validated(None, ctx.problems, {}, {}, {}, {})
    data = DESIGN.check(tree, ctx, "")
    ok = data is not BAD and not ctx.problems
    return Validated(data if ok else None, ctx.problems, ctx.refs, ctx.depends, ctx.refs_at,
                     ctx.position_refs)


def allowed_keys(tree: Any, parts: Sequence[str | int]) -> list[str] | None:
    """The keys the schema allows in the mapping at ``parts`` of ``tree``.

    ``parts`` has indices already resolved to ints. Returns None for an open mapping (any
    key allowed: ``references``) and [] where no mapping is expected.
    """
    spec: Spec = DESIGN
    node = tree
    for part in [*parts, None]:
        if isinstance(spec, AnyOf):
            spec = spec.mapping if isinstance(node, Mapping) else spec.scalar
        if isinstance(spec, Tagged):
            kind = node.get(spec.tag) if isinstance(node, Mapping) else None
            if kind not in spec.variants:
                return []
            spec = spec.variants[kind]
        if part is None:
            break
        if isinstance(spec, Record) and isinstance(part, str) and part in spec.fields:
            spec = spec.fields[part].spec
        elif isinstance(spec, ListOf) and isinstance(part, int):
            spec = spec.item
        elif isinstance(spec, Choice) and isinstance(part, str) and part in spec.variants:
            spec = spec.variants[part]
        else:
            return []
        node = node[part] if isinstance(node, (Mapping, list)) else None
    if isinstance(spec, Record):
        return list(spec.fields)
    if isinstance(spec, (RefTable, Raw)):
        return None
    return []


def _default_text(f: Field) -> str:
    if f.required:
        return "required"
    if f.default is None:
        return "-"
    if isinstance(f.default, bool):
        return str(f.default).lower()
    return f"`{f.default}`" if f.default != "" else '`""`'


def _table(rec: Record, lines: list[str], nested: list[tuple[str, Record]], prefix: str) -> None:
    lines += ["| field | type | unit | default | meaning |", "|---|---|---|---|---|"]
    for name, f in rec.fields.items():
        spec = f.spec
        kind = spec.type_name()
        rng = ""
        if isinstance(spec, Number):
            rng = spec.range_text()
        elif isinstance(spec, NumberList) and spec.item.range_text():
            rng = "each " + spec.item.range_text()
        doc = f.doc + (f" ({rng})" if rng else "")
        lines.append(f"| `{name}` | {kind} | {unit_of(name) or '-'} | {_default_text(f)} | {doc} |")
        sub = spec.mapping if isinstance(spec, AnyOf) else spec
        sub = sub.item if isinstance(sub, ListOf) else sub
        if isinstance(sub, Record) and sub is not rec:
            nested.append((f"{prefix}{name}{'[]' if isinstance(spec, ListOf) else ''}", sub))
    lines.append("")


def describe_schema() -> str:
    """The design-file reference as markdown: every field with type, unit, default, meaning."""
    out = ["# Design file reference", "",
           "Lengths in mm, angles in degrees; the unit is in each field name. A number may be "
           "written as an expression over `references` names: `+ - * / **`, parentheses, "
           + ", ".join(f"`{k}()`" for k in ("min", "max", "abs", "sqrt", "sin_deg", "cos_deg",
                                            "tan_deg")) + " (degrees) and `pi`.", ""]
    queue: list[tuple[str, Record]] = [("", DESIGN)]
    seen: set[int] = set()
    while queue:
        where, rec = queue.pop(0)
        if id(rec) in seen:
            continue
        seen.add(id(rec))
        out += [f"## {rec.title}" + (f" (`{where}`)" if where else " (top level)"), ""]
        nested: list[tuple[str, Record]] = []
        _table(rec, out, nested, f"{where}." if where else "")
        queue += nested
        if rec is PLATE:
            out += ["## outline variants (`plates[].outline`)", "",
                    "Write exactly one of these keys under `outline:`.", ""]
            for k, var in OUTLINE.variants.items():
                out += [f"### `{k}`: {var.title}", ""]
                _table(var, out, [], f"plates[].outline.{k}.")
            out += ["## feature types (`plates[].features[]`)", "",
                    "Every feature has `id`, `type` and `at_mm`; the other fields depend on "
                    "`type`.", ""]
            for k, var in FEATURE_TYPES.items():
                out += [f"### `type: {k}`: {var.title}", ""]
                _table(var, out, nested, f"plates[].features[] ({k}).")
                queue += nested
    out += ["## overrides", "",
            "`--set PATH=VALUE` changes one field before validation, e.g. "
            "`references.wheelbase_mm=180`, `plates[1].thickness_mm=4`, "
            "`plates.deck.features.left_bore.diameter_mm=8.1` (plates by `name`, features by "
            "`id`). The value is read as YAML. New references must be added in the file.", ""]
    return "\n".join(out).rstrip() + "\n"
