"""Value specs of the design-file schema: numbers (with expressions over references), integers,
text, flags, number lists and points. Each checks one value against :class:`~.spec.Spec`'s contract.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

from platewright.geometry.design.expressions import ExpressionError, evaluate
from platewright.geometry.design.spec import (
    BAD,
    WORD,
    Context,
    Spec,
    as_sequence,
    short_repr,
    suggest,
)
from platewright.geometry.design.yamlsource import format_path

__all__ = ["Flag", "Integer", "Number", "NumberList", "NumberOrList", "Point", "PointList", "Text",
           "MAX_NAME_CHARS", "MAX_LIST_ITEMS"]

#: Longest name (plate name, feature id, material key ...): names become file names.
MAX_NAME_CHARS = 64
#: Most values in a list of numbers or points (polygon corners, coordinates to enclose).
MAX_LIST_ITEMS = 1000


@dataclass(frozen=True)
class Number(Spec):
    """A float (or expression): ``gt``/``ge``/``le`` bound it; ``expr`` allows expressions."""

    gt: float | None = None
    ge: float | None = None
    le: float | None = None
    expr: bool = True
    #: values of smaller magnitude than this, other than 0, are refused (a size too small to
    #: make: it only breaks the geometry); 0 = no such floor
    tiny: float = 0.0

    def type_name(self) -> str:
        return "number or expression" if self.expr else "number"

    def range_text(self) -> str:
        gt, ge = self.gt, self.ge
        zero_too = self.tiny and ge == 0.0  # a radius or pitch: 0, or at least tiny
        if zero_too:
            ge = self.tiny
        parts = [f"> {gt:g}" if gt is not None else "",
                 f">= {ge:g}" if ge is not None else "",
                 f"<= {self.le:g}" if self.le is not None else ""]
        text = " and ".join(p for p in parts if p)
        if zero_too:
            return f"0, or {text}"
        return f"{text} (at least {self.tiny:g})" if self.tiny else text

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
        if self.tiny and 0.0 < abs(v) < self.tiny:
            shown = f"{v:g}" if isinstance(value, (int, float)) else f"{value} = {v:g}"
            return ctx.fail(path, f"too small to make ({shown})", f"must be {self.range_text()}")
        return v


@dataclass(frozen=True)
class Integer(Spec):
    """A whole number, at least ``ge`` and (when given) at most ``le``."""

    ge: int = 1
    le: int | None = None

    def type_name(self) -> str:
        return "integer"

    def range_text(self) -> str:
        return f">= {self.ge}" + (f" and <= {self.le:,}" if self.le is not None else "")

    def check(self, value: Any, ctx: Context, path: str) -> Any:
        if isinstance(value, bool) or not isinstance(value, int):
            return ctx.fail(path, f"expected a whole number, got {short_repr(value)}")
        if value < self.ge or (self.le is not None and value > self.le):
            return ctx.fail(path, f"out of range ({short_repr(value)})", f"must be {self.range_text()}")
        return value


@dataclass(frozen=True)
class Text(Spec):
    """A string; ``choices`` restricts it, ``word`` requires a name usable in paths and files
    (at most :data:`MAX_NAME_CHARS` characters); ``max_len`` caps any text (0: no cap)."""

    choices: tuple[str, ...] = ()
    word: bool = False
    max_len: int = 0

    def type_name(self) -> str:
        return "one of: " + ", ".join(self.choices) if self.choices else "text"

    def check(self, value: Any, ctx: Context, path: str) -> Any:
        if isinstance(value, (int, float)) and not isinstance(value, bool) and not self.word:
            value = str(value)  # e.g. a part number written as 1001
        if not isinstance(value, str):
            return ctx.fail(path, f"expected text, got {short_repr(value)}")
        limit = MAX_NAME_CHARS if self.word else self.max_len
        if limit and len(value) > limit:
            return ctx.fail(path, f"text of {len(value)} characters is too long",
                            f"at most {limit} characters")
        if self.choices and value not in self.choices:
            return ctx.fail(path, f"{short_repr(value)} is not allowed", suggest(value, self.choices))
        if self.word and not WORD.match(value):
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
            return ctx.fail(path, f"expected true or false, got {short_repr(value)}")
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
        seq = as_sequence(value, ctx, path, self.type_name())
        if seq is None:
            return BAD
        if self.exact_len is not None and len(seq) != self.exact_len:
            return ctx.fail(path, f"expected {self.exact_len} values, got {len(seq)}",
                            f"write it as {self.type_name()}")
        if len(seq) < self.min_len:
            return ctx.fail(path, f"needs at least {self.min_len} values, got {len(seq)}")
        if len(seq) > MAX_LIST_ITEMS:
            return ctx.fail(path, f"{len(seq)} values is too many", f"at most {MAX_LIST_ITEMS}")
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
        seq = as_sequence(value, ctx, path, self.type_name())
        if seq is None:
            return BAD
        if len(seq) < self.min_len:
            return ctx.fail(path, f"needs at least {self.min_len} points, got {len(seq)}")
        if len(seq) > MAX_LIST_ITEMS:
            return ctx.fail(path, f"{len(seq)} points is too many", f"at most {MAX_LIST_ITEMS}")
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
