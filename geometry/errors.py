"""The one error type for bad input: it names the field, the line, the problem and what is valid."""

from __future__ import annotations

from dataclasses import dataclass

__all__ = ["DesignError", "Problem"]


@dataclass(frozen=True)
class Problem:
    """One thing wrong with the input.

    path: dotted field path, e.g. ``plates[0].features[2].diameter_mm``.
    line: 1-based line in the design file, or None when unknown (e.g. a ``--set`` value).
    message: what is wrong.
    hint: what would be valid (may be empty), e.g. ``did you mean 'thickness_mm'?``.
    """

    path: str
    message: str
    line: int | None = None
    hint: str = ""

    def __str__(self) -> str:
        where = self.path or "<design>"
        if self.line is not None:
            where += f" (line {self.line})"
        text = f"{where}: {self.message}"
        if self.hint:
            text += f"; {self.hint}"
        return text


class DesignError(Exception):
    """Raised for any refused input; carries one or more Problems. The CLI exits with status 2."""

    def __init__(self, problems: list[Problem] | Problem, source: str = "") -> None:
        self.problems = [problems] if isinstance(problems, Problem) else list(problems)
        self.source = source
        super().__init__(self.render())

    def render(self) -> str:
        """All problems, one per line, prefixed by the source file when known."""
        head = f"{self.source}: " if self.source else ""
        return "\n".join(head + str(p) for p in self.problems)
