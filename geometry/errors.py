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
    source: the file the path and line belong to when it is not the file the error is about
    (e.g. a machine profile file named by a design); empty for that file.
    """

    path: str
    message: str
    line: int | None = None
    hint: str = ""
    source: str = ""

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

    def where(self, problem: Problem) -> str:
        """The file a problem belongs to: its own ``source``, else the error's; may be empty."""
        return problem.source or self.source

    def render(self) -> str:
        """All problems, one per line, prefixed by the file each belongs to when known."""
        return "\n".join((f"{self.where(p)}: " if self.where(p) else "") + str(p)
                         for p in self.problems)
