"""The core of the declarative spec engine behind the design-file schema
(:mod:`platewright.geometry.design.schema`).

Field spec types each check one value, return it normalised (numbers evaluated to floats,
defaults filled) or :data:`BAD`, and record every problem (path, line, what is wrong, what is
valid) in a :class:`Context`; nothing is raised. This module holds that contract (:class:`Spec`,
:class:`Context`, :data:`BAD`) and the helpers every spec shares; the value specs live in
:mod:`.spec_values`, the structure specs (records, lists, variants) and the reference renderer in
:mod:`.spec_records`. Units are not stored in a spec: :func:`unit_of` reads them from the field
name's suffix (``_mm`` -> mm, ``_deg`` -> degrees, ``_mm_s`` -> mm/s).
"""

from __future__ import annotations

import difflib
import re
from collections.abc import Sequence
from dataclasses import dataclass, field
from typing import Any

from platewright.geometry.design.yamlsource import LineMap
from platewright.geometry.errors import Problem

__all__ = ["BAD", "WORD", "Context", "Spec", "as_sequence", "short_repr", "suggest", "unit_of"]

BAD = object()  # marks a value that failed validation (its problem is already recorded)
WORD = re.compile(r"^[A-Za-z][A-Za-z0-9_\-]*$")
_UNITS = {"_mm_s": "mm/s", "_mm": "mm", "_mm2": "mm^2", "_deg": "degrees", "_s": "s", "_g": "g",
          "_n": "N", "_mpa": "MPa"}


def short_repr(value: Any, limit: int = 60) -> str:
    """``repr`` of a value for a message, cut to ``limit`` characters (a pasted list may be long)."""
    text = repr(value)
    return text if len(text) <= limit else text[: limit - 3] + "..."


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




def as_sequence(value: Any, ctx: Context, path: str, what: str) -> list | None:
    """``value`` when it is a list, else None with the problem recorded at ``path``."""
    if not isinstance(value, list):
        ctx.fail(path, f"expected {what}, got {short_repr(value)}")
        return None
    return value
