"""Reading a YAML design file while keeping the line of every key and list item.

The text is composed into PyYAML's node graph with the safe loader (no Python objects, no
custom tags), then turned into plain dicts, lists and scalars. On the way, the 1-based line of
every mapping key and every sequence item is recorded under its field path, written the way
problems name fields: ``plates[0].features[2].diameter_mm``.
"""

from __future__ import annotations

import os
import stat
from collections.abc import Sequence
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import yaml

from platewright.geometry.errors import DesignError, Problem

__all__ = ["LineMap", "SourceTree", "format_path", "parse_yaml", "parent_paths", "read_input_file",
           "MAX_DEPTH", "MAX_FILE_BYTES", "MAX_NODES"]

PathPart = str | int


def format_path(parts: Sequence[PathPart]) -> str:
    """Join path parts into a field path: ``("plates", 0, "name")`` -> ``plates[0].name``."""
    out = ""
    for p in parts:
        if isinstance(p, int):
            out += f"[{p}]"
        else:
            out += f".{p}" if out else str(p)
    return out


def parent_paths(path: str) -> list[str]:
    """The path followed by each enclosing path, innermost first (``a[0].b`` -> a[0].b, a[0], a)."""
    out = [path]
    while path:
        cut = max(path.rfind("."), path.rfind("["))
        path = path[:cut] if cut > 0 else ""
        if path:
            out.append(path)
    return out


@dataclass
class LineMap:
    """Field path -> 1-based line in the source text.

    Paths that a ``--set`` override replaced are marked so that their line (and the line of
    everything below them) is reported as unknown rather than the now misleading file line.
    """

    lines: dict[str, int] = field(default_factory=dict)
    overridden: set[str] = field(default_factory=set)

    def is_overridden(self, path: str) -> bool:
        """True when ``path`` (or a field enclosing it) was set by a ``--set`` override."""
        return any(p in self.overridden for p in parent_paths(path))

    def line_of(self, path: str) -> int | None:
        """Line of ``path``, or of its closest enclosing field; None if unknown or overridden."""
        if self.is_overridden(path):
            return None
        for p in parent_paths(path):
            if p in self.lines:
                return self.lines[p]
        return None


@dataclass
class SourceTree:
    """The plain data of a YAML document (``data``) and its line map."""

    data: Any
    lines: LineMap


#: Most values a design may expand to (guards against alias bombs: ``&a [*b, *b, ...]``).
MAX_NODES = 200_000
#: Deepest nesting of lists and mappings accepted (a design needs about 8 levels).
MAX_DEPTH = 50
#: Largest design or machine profile file read, bytes (the starters are under 10 kB).
MAX_FILE_BYTES = 2_000_000


def read_input_file(path: str | Path, what: str = "design file") -> bytes:
    """The bytes of an input file (design or machine profile), refusing what is not one.

    DesignError (source = the path) when the file cannot be opened, is not a regular file
    (``/dev/zero``, a folder, a pipe) or is larger than :data:`MAX_FILE_BYTES`.
    """
    p = Path(path)
    try:
        with open(p, "rb") as fh:
            mode = os.fstat(fh.fileno()).st_mode
            if not stat.S_ISREG(mode):
                raise DesignError(Problem("", f"the {what} is not a regular file",
                                          hint="give a YAML text file"), str(p))
            raw = fh.read(MAX_FILE_BYTES + 1)
    except OSError as exc:
        raise DesignError(Problem("", f"cannot read the {what}: {exc.strerror or exc}"),
                          str(p)) from exc
    if len(raw) > MAX_FILE_BYTES:
        raise DesignError(Problem("", f"the {what} is larger than {MAX_FILE_BYTES:,} bytes",
                                  hint="a design file is text of a few kB"), str(p))
    return raw


def _too_deep(text: str, source: str) -> None:
    """Refuse nesting deeper than MAX_DEPTH before composing (the composer recurses per level).

    Walks the parser's events, which PyYAML produces without recursion; the problem names the
    top-level field the nesting is under and the line where it goes too deep."""
    depth = 0
    top_key, expect_key = "", True  # keys of the top-level mapping, for the problem's path
    root_is_mapping = False
    for event in yaml.parse(text, Loader=yaml.SafeLoader):
        if isinstance(event, (yaml.MappingStartEvent, yaml.SequenceStartEvent)):
            if depth == 0:
                root_is_mapping = isinstance(event, yaml.MappingStartEvent)
            depth += 1
            if depth > MAX_DEPTH:
                raise DesignError(Problem(top_key, f"lists and mappings are nested more than "
                                          f"{MAX_DEPTH} levels deep", event.start_mark.line + 1,
                                          "a design needs only a few levels"), source)
        elif isinstance(event, (yaml.MappingEndEvent, yaml.SequenceEndEvent)):
            depth -= 1
            expect_key = True
        elif depth == 1 and root_is_mapping and isinstance(event, (yaml.ScalarEvent,
                                                                   yaml.AliasEvent)):
            if expect_key and isinstance(event, yaml.ScalarEvent):
                top_key = str(event.value)
            expect_key = not expect_key
_MAP_TAG = "tag:yaml.org,2002:map"
_SEQ_TAG = "tag:yaml.org,2002:seq"


class _TooLarge(Exception):
    pass


def _construct(node: yaml.Node, loader: yaml.SafeLoader, parts: list[PathPart],
               lines: dict[str, int], problems: list[Problem], count: list[int]) -> Any:
    count[0] += 1
    if count[0] > MAX_NODES:
        raise _TooLarge
    if isinstance(node, (yaml.MappingNode, yaml.SequenceNode)) and node.tag not in (
        _MAP_TAG, _SEQ_TAG
    ):
        problems.append(Problem(format_path(parts), f"the tag '{node.tag}' is not allowed",
                                node.start_mark.line + 1, "write plain YAML values"))
        return None
    if isinstance(node, yaml.MappingNode):
        out: dict[Any, Any] = {}
        for key_node, value_node in node.value:
            key = _construct(key_node, loader, parts, lines, problems, count)
            line = key_node.start_mark.line + 1
            if isinstance(key, (dict, list)):
                problems.append(Problem(format_path(parts), "a mapping key must be a plain word",
                                        line))
                continue
            key = key if isinstance(key, str) else str(key)
            path = format_path([*parts, key])
            if key in out:
                problems.append(Problem(path, f"duplicate key '{key}' (first on line "
                                        f"{lines.get(path)})", line,
                                        "each key may appear once in a mapping"))
                continue
            lines[path] = line
            out[key] = _construct(value_node, loader, [*parts, key], lines, problems,
                                  count)
        return out
    if isinstance(node, yaml.SequenceNode):
        items = []
        for i, item in enumerate(node.value):
            lines[format_path([*parts, i])] = item.start_mark.line + 1
            items.append(_construct(item, loader, [*parts, i], lines, problems, count))
        return items
    try:
        return loader.construct_object(node, deep=True)
    except yaml.YAMLError as exc:  # e.g. a malformed timestamp or an unknown tag
        text = getattr(exc, "problem", None) or str(exc).splitlines()[0]
        problems.append(Problem(format_path(parts), f"cannot read value: {text}",
                                node.start_mark.line + 1))
        return None


def parse_yaml(text: str, source: str = "") -> SourceTree:
    """Parse YAML text (safe loader) into plain data plus the line of every field.

    Raises DesignError for malformed YAML (with the parser's line and message), for more than
    one document, for nesting deeper than MAX_DEPTH, for more than MAX_NODES values, and for
    duplicate keys (all duplicates are reported together).
    """
    loader = yaml.SafeLoader(text)
    try:
        _too_deep(text, source)
        node = loader.get_single_node()
    except yaml.MarkedYAMLError as exc:
        mark = exc.problem_mark or exc.context_mark
        line = mark.line + 1 if mark is not None else None
        message = " ".join(str(s) for s in (exc.context, exc.problem) if s)
        raise DesignError(Problem("", f"not valid YAML: {message}", line,
                                  "check indentation, colons and brackets near that line"),
                          source) from exc
    except yaml.YAMLError as exc:
        raise DesignError(Problem("", f"not valid YAML: {exc}"), source) from exc
    lines: dict[str, int] = {}
    problems: list[Problem] = []
    try:
        data = None if node is None else _construct(node, loader, [], lines, problems, [0])
    except _TooLarge:
        raise DesignError(Problem("", f"the design expands to more than {MAX_NODES} values",
                                  None, "aliases (*name) may not multiply the file"),
                          source) from None
    finally:
        loader.dispose()
    if problems:
        raise DesignError(problems, source)
    return SourceTree(data, LineMap(lines))

