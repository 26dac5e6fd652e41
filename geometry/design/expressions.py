"""Safe arithmetic over named references, for dimensions written as expressions.

A value in a design file may be a number or a string such as ``"wheelbase_mm / 2 + 10"``. The
string is parsed with :mod:`ast` and only this small language is evaluated (no attribute access,
no calls other than the listed functions, no comprehensions):

- numbers, reference names, parentheses;
- ``+ - * / **`` and unary ``-`` / ``+``;
- functions ``min(a, b, ...)``, ``max(a, b, ...)``, ``abs(x)``, ``sqrt(x)``, and the degree
  trigonometry ``sin_deg(x)``, ``cos_deg(x)``, ``tan_deg(x)`` (argument in degrees, because
  angles in files are degrees); the constant ``pi``.

Every result is a finite float. :func:`evaluate` returns the value and the set of reference
names used; :func:`resolve_references` evaluates the ``references:`` mapping in dependency order
(a reference may use any other, in any order; cycles are refused) and records, for each
reference, every reference it depends on directly or through others.
"""

from __future__ import annotations

import ast
import difflib
import math
import operator
from collections.abc import Callable, Iterable, Mapping
from dataclasses import dataclass
from typing import Any

__all__ = [
    "ExpressionError",
    "Evaluated",
    "FUNCTIONS",
    "evaluate",
    "resolve_references",
]

#: Longest expression text accepted (characters); a guard against pathological input.
MAX_EXPRESSION_CHARS = 500


class ExpressionError(ValueError):
    """A bad expression: ``message`` says what is wrong, ``hint`` what would be valid.

    ``key`` names the reference that is at fault when the error comes from
    :func:`resolve_references` (empty otherwise).
    """

    def __init__(self, message: str, hint: str = "", key: str = "") -> None:
        super().__init__(message)
        self.message = message
        self.hint = hint
        self.key = key


@dataclass(frozen=True)
class Evaluated:
    """The value of an expression (float, in the unit of the field) and the names it used."""

    value: float
    refs: frozenset[str]


def _sqrt(x: float) -> float:
    if x < 0:
        raise ExpressionError(f"sqrt of a negative number ({x:g})")
    return math.sqrt(x)


def _one(fn: Callable[[float], float]) -> Callable[..., float]:
    def call(*args: float) -> float:
        if len(args) != 1:
            raise ExpressionError("this function takes exactly one argument")
        return fn(args[0])

    return call


def _many(fn: Callable[..., float]) -> Callable[..., float]:
    def call(*args: float) -> float:
        if not args:
            raise ExpressionError("min/max need at least one argument")
        return fn(args)

    return call


#: The functions an expression may call, by name.
FUNCTIONS: dict[str, Callable[..., float]] = {
    "min": _many(min),
    "max": _many(max),
    "abs": _one(abs),
    "sqrt": _one(_sqrt),
    "sin_deg": _one(lambda x: math.sin(math.radians(x))),
    "cos_deg": _one(lambda x: math.cos(math.radians(x))),
    "tan_deg": _one(lambda x: math.tan(math.radians(x))),
}

_CONSTANTS = {"pi": math.pi}

_BINARY: dict[type, Callable[[float, float], float]] = {
    ast.Add: operator.add,
    ast.Sub: operator.sub,
    ast.Mult: operator.mul,
    ast.Div: operator.truediv,
    ast.Pow: operator.pow,
}


def _suggest(name: str, known: list[str]) -> str:
    close = difflib.get_close_matches(name, known, n=1, cutoff=0.6)
    if close:
        return f"did you mean '{close[0]}'?"
    if known:
        return "known references: " + ", ".join(sorted(known))
    return "no references are defined (add them under 'references:')"


class _Evaluator:
    def __init__(self, names: Mapping[str, float], known: list[str]) -> None:
        self.names = names
        self.known = known
        self.used: set[str] = set()

    def run(self, node: ast.AST) -> float:
        if isinstance(node, ast.Constant):
            if isinstance(node.value, bool) or not isinstance(node.value, (int, float)):
                raise ExpressionError(f"'{node.value!r}' is not a number")
            return float(node.value)
        if isinstance(node, ast.Name):
            if node.id in self.names:
                self.used.add(node.id)
                return float(self.names[node.id])
            if node.id in _CONSTANTS:
                return _CONSTANTS[node.id]
            raise ExpressionError(f"unknown reference '{node.id}'",
                                  _suggest(node.id, self.known))
        if isinstance(node, ast.UnaryOp) and isinstance(node.op, (ast.USub, ast.UAdd)):
            v = self.run(node.operand)
            return -v if isinstance(node.op, ast.USub) else v
        if isinstance(node, ast.BinOp) and type(node.op) in _BINARY:
            a, b = self.run(node.left), self.run(node.right)
            if isinstance(node.op, ast.Div) and b == 0.0:
                raise ExpressionError("division by zero")
            if isinstance(node.op, ast.Pow) and a < 0 and not float(b).is_integer():
                raise ExpressionError("a negative number to a fractional power")
            return _BINARY[type(node.op)](a, b)
        if isinstance(node, ast.Call) and isinstance(node.func, ast.Name) and not node.keywords:
            fn = FUNCTIONS.get(node.func.id)
            if fn is None:
                raise ExpressionError(f"unknown function '{node.func.id}'",
                                      "functions: " + ", ".join(FUNCTIONS))
            return fn(*(self.run(a) for a in node.args))
        raise ExpressionError(
            f"'{ast.unparse(node)}' is not allowed in an expression",
            "use numbers, reference names, + - * / **, parentheses and "
            + ", ".join(FUNCTIONS),
        )


def evaluate(
    expr: Any, names: Mapping[str, float], known: Iterable[str] | None = None
) -> Evaluated:
    """Evaluate a number or an expression string over ``names`` (reference name -> float).

    ``known``: the names offered in a did-you-mean hint (default: the keys of ``names``).
    Returns the float value and the reference names the expression used. Raises
    ExpressionError for anything that is not a finite number or an allowed expression.
    """
    if isinstance(expr, bool):
        raise ExpressionError(f"expected a number, got {expr!r}")
    if isinstance(expr, (int, float)):
        if not math.isfinite(expr):
            raise ExpressionError(f"{expr!r} is not a finite number")
        return Evaluated(float(expr), frozenset())
    if not isinstance(expr, str):
        raise ExpressionError(f"expected a number or an expression, got {type(expr).__name__}")
    text = expr.strip()
    if not text:
        raise ExpressionError("empty expression")
    if len(text) > MAX_EXPRESSION_CHARS:
        raise ExpressionError(f"expression of {len(text)} characters; at most "
                              f"{MAX_EXPRESSION_CHARS} characters are allowed",
                              "split it into several references")
    try:
        tree = ast.parse(text, mode="eval")
    except SyntaxError as exc:
        raise ExpressionError(f"cannot read expression '{text}': {exc.msg}") from exc
    except (RecursionError, MemoryError, ValueError) as exc:  # nesting, huge literals
        raise ExpressionError("expression too deeply nested or too large to read") from exc
    ev = _Evaluator(names, list(names) if known is None else list(known))
    try:
        value = ev.run(tree.body)
    except RecursionError as exc:
        raise ExpressionError("expression too deeply nested") from exc
    except OverflowError as exc:
        raise ExpressionError(f"'{text}' is too large") from exc
    except ZeroDivisionError as exc:  # e.g. 0 ** -1
        raise ExpressionError(f"'{text}' divides by zero") from exc
    if isinstance(value, complex) or not math.isfinite(value):
        raise ExpressionError(f"'{text}' is not a finite number")
    return Evaluated(float(value), frozenset(ev.used))


def _names_in(expr: Any) -> set[str]:
    """Names an expression uses; empty for what :func:`evaluate` will refuse (too long, bad)."""
    if not isinstance(expr, str) or len(expr.strip()) > MAX_EXPRESSION_CHARS:
        return set()
    try:
        tree = ast.parse(expr.strip(), mode="eval")
    except (SyntaxError, RecursionError, MemoryError, ValueError):
        return set()
    return {n.id for n in ast.walk(tree) if isinstance(n, ast.Name)}


def resolve_references(
    raw: Mapping[str, Any],
) -> tuple[dict[str, float], dict[str, frozenset[str]]]:
    """Evaluate every named reference; they may use each other in any order.

    Returns ``(values, depends)``: ``values[name]`` is the float value, ``depends[name]`` every
    reference it uses directly or indirectly (not including itself). Raises ExpressionError
    (with ``key`` set to the offending reference) for a bad expression or a cycle.
    """
    values: dict[str, float] = {}
    depends: dict[str, frozenset[str]] = {}
    state: dict[str, int] = {}  # 1 = being evaluated, 2 = done

    def visit(name: str, chain: list[str]) -> None:
        if state.get(name) == 2:
            return
        if state.get(name) == 1:
            cycle = " -> ".join([*chain[chain.index(name):], name])
            raise ExpressionError(f"references form a cycle: {cycle}",
                                  "a reference cannot depend on itself", key=chain[-1])
        state[name] = 1
        for dep in sorted(_names_in(raw[name])):
            if dep in raw:
                visit(dep, [*chain, name])
        try:
            result = evaluate(raw[name], values, known=list(raw))
        except ExpressionError as exc:
            # names that exist but were not yet evaluated cannot occur (visited above)
            raise ExpressionError(exc.message, exc.hint, key=name) from exc
        deps: set[str] = set(result.refs)
        for d in result.refs:
            deps |= depends[d]
        values[name] = result.value
        depends[name] = frozenset(deps)
        state[name] = 2

    for key in raw:
        visit(key, [])
    return values, depends
