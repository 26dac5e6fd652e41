"""Structure specs of the design-file schema: named fields, records (mappings with declared
fields), lists, choices, tagged variants, either-or specs, raw passthrough and reference tables; and
the renderer of a record as one table of the design-file reference (:func:`markdown_table`).
"""

from __future__ import annotations

import copy
from collections.abc import Callable, Mapping
from dataclasses import dataclass
from typing import Any

from platewright.geometry.design.spec import (
    BAD,
    Context,
    Spec,
    as_sequence,
    short_repr,
    suggest,
    unit_of,
)
from platewright.geometry.design.spec_values import Integer, Number, NumberList
from platewright.geometry.design.yamlsource import format_path

__all__ = [
    "AnyOf", "Choice", "Field", "ListOf", "Raw", "Record", "RefTable", "Tagged", "default_text",
    "markdown_table",
]


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
            return ctx.fail(path, f"expected a mapping ({self.title}), got {short_repr(value)}")
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
    """A list of items of one spec; ``unique`` names a field whose values must differ (and,
    with ``fold_case``, differ in more than upper and lower case); ``max_len`` caps the length
    (0: no cap)."""

    item: Spec
    min_len: int = 0
    unique: str = ""
    max_len: int = 0
    fold_case: bool = False

    def type_name(self) -> str:
        return f"list of {self.item.type_name()}"

    def check(self, value: Any, ctx: Context, path: str) -> Any:
        seq = as_sequence(value, ctx, path, "a list")
        if seq is None:
            return BAD
        if len(seq) < self.min_len:
            return ctx.fail(path, f"needs at least {self.min_len} "
                            f"{'entry' if self.min_len == 1 else 'entries'}")
        if self.max_len and len(seq) > self.max_len:
            return ctx.fail(path, f"{len(seq)} entries is too many", f"at most {self.max_len}")
        out = [self.item.check(v, ctx, format_path([path, i])) for i, v in enumerate(seq)]
        if self.unique:
            seen: dict[str, int] = {}
            for i, v in enumerate(seq):
                key = v.get(self.unique) if isinstance(v, Mapping) else None
                if not isinstance(key, str):  # missing or not text: reported by the item spec
                    continue
                folded = key.casefold() if self.fold_case else key
                if folded in seen:
                    first = seq[seen[folded]][self.unique]
                    same = "duplicate" if first == key else "differs only in case from"
                    ctx.fail(format_path([path, i, self.unique]), f"{same} {self.unique} "
                             f"'{first}' (also {format_path([path, seen[folded]])})",
                             f"every {self.unique} must be unique"
                             + (", also ignoring case (file names on Windows and macOS do)"
                                if self.fold_case else ""))
                    out[i] = BAD
                else:
                    seen[folded] = i
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
            return ctx.fail(path, f"expected a mapping, got {short_repr(value)}")
        kind = value.get(self.tag)
        if kind is None:
            return ctx.fail(path, f"missing '{self.tag}'", "one of: " + ", ".join(self.variants))
        if not isinstance(kind, str):
            return ctx.fail(format_path([path, self.tag]), f"expected text, got {short_repr(kind)}",
                            "one of: " + ", ".join(self.variants))
        if kind not in self.variants:
            return ctx.fail(format_path([path, self.tag]), f"unknown {self.tag} {short_repr(kind)}",
                            suggest(kind, list(self.variants)))
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
            return ctx.fail(path, f"expected a mapping, got {short_repr(value)}")
        return dict(value)


@dataclass(frozen=True)
class RefTable(Spec):
    """Named references: ``name: number or expression``; evaluated before everything else."""

    def type_name(self) -> str:
        return "mapping name -> number or expression"

    def check(self, value: Any, ctx: Context, path: str) -> Any:
        if not isinstance(value, Mapping):
            return ctx.fail(path, f"expected a mapping of names to numbers, got {short_repr(value)}")
        for key, v in value.items():
            sub = format_path([path, key])
            if not key.isidentifier() or key.startswith("_"):
                ctx.fail(sub, f"'{key}' cannot be a reference name",
                         "use letters, digits and '_', starting with a letter")
            elif isinstance(v, bool) or not isinstance(v, (int, float, str)):
                ctx.fail(sub, f"expected a number or an expression, got {short_repr(v)}")
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
        elif isinstance(spec, Integer) and spec.le is not None:
            rng = spec.range_text()
        elif isinstance(spec, ListOf) and spec.max_len:
            rng = f"at most {spec.max_len:,} entries"
        doc = f.doc + (f" ({rng})" if rng else "")
        lines.append(f"| `{name}` | {kind} | {unit_of(name) or '-'} | {default_text(f)} | {doc} |")
        sub = spec.mapping if isinstance(spec, AnyOf) else spec
        sub = sub.item if isinstance(sub, ListOf) else sub
        if isinstance(sub, Record) and sub is not rec:
            nested.append((f"{prefix}{name}{'[]' if isinstance(spec, ListOf) else ''}", sub))
    lines.append("")
