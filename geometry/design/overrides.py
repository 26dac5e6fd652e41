"""``--set PATH=VALUE`` overrides, applied to the raw design tree before validation.

A path is a dotted field path. List entries are addressed by index (``plates[1]``) or, for
``plates`` and ``features``, by the entry's ``name`` or ``id`` (``plates.deck.features.left_bore``).
Examples::

    references.wheelbase_mm=180
    plates[1].thickness_mm=4
    plates.deck.features.left_bore.diameter_mm=8.1
    material=birch_plywood

The value is read as YAML (``180`` a number, ``true`` a flag, ``[10, 20]`` a list, anything
else text, so an expression such as ``wheelbase_mm / 2`` works unquoted). An override may only
replace a field that exists, or add one the schema allows at that place; a path that does not
exist is an error with a did-you-mean hint; an absent optional section the schema allows (e.g.
``lightening.deflection_budget=0.1`` on a design without ``lightening:``) is created. New
references cannot be created by ``--set``
(a misspelt name would otherwise be added silently): add them to the file.
"""

from __future__ import annotations

import copy
import re
from collections.abc import Sequence
from typing import Any

import yaml

from platewright.geometry.design.schema import allowed_keys, suggest
from platewright.geometry.design.yamlsource import LineMap, format_path
from platewright.geometry.errors import DesignError, Problem

__all__ = ["parse_override", "split_path", "apply_overrides"]

_TOKEN = re.compile(r"([^.\[\]]+)|\[(\d+)\]")
_NAMED_LISTS = {"plates": "name", "features": "id"}


def split_path(path: str) -> list[str | int]:
    """Split ``plates[0].features.left.diameter_mm`` into ``["plates", 0, "features", ...]``.

    Raises ValueError for an empty or malformed path.
    """
    text = path.strip()
    parts: list[str | int] = []
    pos = 0
    while pos < len(text):
        if text[pos] == "." and parts and pos + 1 < len(text):
            pos += 1
        m = _TOKEN.match(text, pos)
        if m is None:
            raise ValueError(f"cannot read the path '{path}' at character {pos + 1}")
        parts.append(m.group(1) if m.group(1) is not None else int(m.group(2)))
        pos = m.end()
    if not parts or not isinstance(parts[0], str):
        raise ValueError(f"cannot read the path '{path}'")
    return parts


def parse_override(text: str) -> tuple[list[str | int], Any]:
    """Split ``PATH=VALUE`` into the path parts and the YAML-parsed value.

    Raises ValueError when there is no ``=``, the path is malformed or the value is not YAML.
    """
    path, sep, value = text.partition("=")
    if not sep or not path.strip():
        raise ValueError("expected PATH=VALUE, e.g. references.wheelbase_mm=180")
    parts = split_path(path)
    try:
        parsed = yaml.safe_load(value) if value.strip() else ""
    except yaml.YAMLError as exc:
        raise ValueError(f"cannot read the value '{value}': {exc}") from exc
    return parts, parsed


def _fail(text: str, message: str, hint: str = "") -> DesignError:
    return DesignError(Problem(f"--set {text}", message, None, hint))


def _resolve(tree: Any, parts: list[str | int], text: str) -> list[str | int]:
    """Turn name-addressed list entries into indices; check every step exists."""
    out: list[str | int] = []
    node = tree
    for i, part in enumerate(parts):
        last = i == len(parts) - 1
        here = format_path(out) or "the top level"
        if isinstance(node, list):
            if isinstance(part, str):
                key = _NAMED_LISTS.get(str(out[-1]) if out else "", "")
                names = [e.get(key) for e in node if isinstance(e, dict) and key]
                if part not in names:
                    raise _fail(text, f"no entry named '{part}' in {here}",
                                suggest(part, [str(n) for n in names if n is not None]))
                part = names.index(part)
            if not 0 <= part < len(node):
                raise _fail(text, f"{here} has {len(node)} "
                            f"{'entry' if len(node) == 1 else 'entries'}; index {part} does not exist",
                            f"use 0 to {len(node) - 1}" if node else "the list is empty")
        elif isinstance(node, dict):
            if isinstance(part, int):
                raise _fail(text, f"{here} is a mapping, not a list")
            if part not in node:
                allowed = allowed_keys(tree, out)
                creatable = allowed is not None and part in allowed
                if creatable and not last and isinstance(parts[i + 1], str):
                    # an absent optional section (a mapping the schema allows here): create it
                    node[part] = {}
                    if not allowed_keys(tree, [*out, part]):
                        del node[part]
                        creatable = False
                if not (last and creatable) and part not in node:
                    known = list(node) if allowed is None else sorted(set(node) | set(allowed))
                    hint = suggest(part, known)
                    if allowed is None and out == ["references"]:
                        hint += "; new references go in the design file"
                    raise _fail(text, f"'{part}' does not exist in {here}", hint)
        else:
            raise _fail(text, f"{here} is a single value; it has no field '{part}'")
        out.append(part)
        node = node[part] if (isinstance(node, list) or part in node) else None
    return out


def apply_overrides(
    tree: Any, overrides: Sequence[str], lines: LineMap | None = None
) -> Any:
    """A copy of ``tree`` with every ``PATH=VALUE`` override applied, in order.

    Overridden paths are added to ``lines.overridden`` (their file line no longer applies).
    Raises DesignError naming the ``--set`` text for a malformed or non-existent path.
    """
    out = copy.deepcopy(tree)
    for text in overrides:
        try:
            parts, value = parse_override(text)
        except ValueError as exc:
            raise _fail(text, str(exc)) from exc
        if not isinstance(out, dict):
            raise _fail(text, "the design is not a mapping; nothing to override")
        resolved = _resolve(out, parts, text)
        node = out
        for part in resolved[:-1]:
            node = node[part]
        node[resolved[-1]] = value
        if lines is not None:
            lines.overridden.add(format_path(resolved))
    return out
