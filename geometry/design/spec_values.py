"""Value specs of the design-file schema: numbers (with expressions over references), integers,
text, flags, number lists and points. Each checks one value against :class:`~.spec.Spec`'s contract.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

from platewright.geometry.design.expressions import ExpressionError, evaluate
from platewright.geometry.design.spec import BAD, WORD, Context, Spec, as_sequence, suggest
from platewright.geometry.design.yamlsource import format_path

__all__ = ["Flag", "Integer", "Number", "NumberList", "NumberOrList", "Point", "PointList", "Text"]


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
            return ctx.fail(path, f"expected true or false, got {value!r}")
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
