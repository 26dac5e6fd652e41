"""The declarative spec engine behind the design-file schema (:mod:`.schema`).

Field spec types (:class:`Number`, :class:`Record`, :class:`Tagged`, ...) each check one value,
return it normalised (numbers evaluated to floats, defaults filled) or :data:`BAD`, and record
every problem (path, line, what is wrong, what is valid) in a :class:`Context`; nothing is raised
here. Units are not stored in a spec: :func:`unit_of` reads them from the field name's suffix
(``_mm`` -> mm, ``_deg`` -> degrees, ``_mm_s`` -> mm/s). :func:`markdown_table` renders a record's
fields as one table of the design-file reference.
"""

from __future__ import annotations

import copy
import difflib
import re
from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass, field
from typing import Any

from platewright.geometry.design.expressions import ExpressionError, evaluate
from platewright.geometry.design.yamlsource import LineMap, format_path
from platewright.geometry.errors import Problem

__all__ = [
    "BAD", "Context", "Spec", "Field", "Number", "Integer", "Text", "Flag", "Point", "NumberList",
    "PointList", "NumberOrList", "Record", "ListOf", "Choice", "Tagged", "AnyOf", "Raw",
    "RefTable", "unit_of", "suggest", "default_text", "markdown_table",
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
class Context:
    """Validation state: line map, evaluated references (name -> value, mm or as written),
    reference dependencies, and the problems and reference uses collected so far."""

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

    def check(self, value: Any, ctx: Context, path: str) -> Any:
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

    def check(self, value: Any, ctx: Context, path: str) -> Any:
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

    def check(self, value: Any, ctx: Context, path: str) -> Any:
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

    def check(self, value: Any, ctx: Context, path: str) -> Any:
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

    def check(self, value: Any, ctx: Context, path: str) -> Any:
        if not isinstance(value, bool):
            return ctx.fail(path, f"expected true or false, got {value!r}")
        return value


def _seq(value: Any, ctx: Context, path: str, what: str) -> list | None:
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

    def check(self, value: Any, ctx: Context, path: str) -> Any:
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

    def check(self, value: Any, ctx: Context, path: str) -> Any:
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

    def check(self, value: Any, ctx: Context, path: str) -> Any:
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
    checks: tuple[Callable[[dict, Context, str], None], ...] = ()

    def type_name(self) -> str:
        return f"mapping ({self.title})"

    def check(self, value: Any, ctx: Context, path: str) -> Any:
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

    def check(self, value: Any, ctx: Context, path: str) -> Any:
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

    def check(self, value: Any, ctx: Context, path: str) -> Any:
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

    def check(self, value: Any, ctx: Context, path: str) -> Any:
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

    def check(self, value: Any, ctx: Context, path: str) -> Any:
        spec = self.mapping if isinstance(value, Mapping) else self.scalar
        return spec.check(value, ctx, path)


@dataclass(frozen=True)
class Raw(Spec):
    """A mapping kept as written (a section whose fields are not yet declared)."""

    def type_name(self) -> str:
        return "mapping (kept as written)"

    def check(self, value: Any, ctx: Context, path: str) -> Any:
        if not isinstance(value, Mapping):
            return ctx.fail(path, f"expected a mapping, got {value!r}")
        return dict(value)


@dataclass(frozen=True)
class RefTable(Spec):
    """Named references: ``name: number or expression``; evaluated before everything else."""

    def type_name(self) -> str:
        return "mapping name -> number or expression"

    def check(self, value: Any, ctx: Context, path: str) -> Any:
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


def default_text(f: Field) -> str:
    """The default column of the reference: ``required``, ``-`` (none) or the value in backticks."""
    if f.required:
        return "required"
    if f.default is None:
        return "-"
    if isinstance(f.default, bool):
        return str(f.default).lower()
    return f"`{f.default}`" if f.default != "" else '`""`'


def markdown_table(rec: Record, lines: list[str], nested: list[tuple[str, Record]],
                   prefix: str) -> None:
    """Append ``rec``'s fields as a markdown table (field, type, unit from the name, default,
    meaning with range) to ``lines``; nested records go to ``nested`` as (``prefix`` path, record).
    """
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
        lines.append(f"| `{name}` | {kind} | {unit_of(name) or '-'} | {default_text(f)} | {doc} |")
        sub = spec.mapping if isinstance(spec, AnyOf) else spec
        sub = sub.item if isinstance(sub, ListOf) else sub
        if isinstance(sub, Record) and sub is not rec:
            nested.append((f"{prefix}{name}{'[]' if isinstance(spec, ListOf) else ''}", sub))
    lines.append("")
