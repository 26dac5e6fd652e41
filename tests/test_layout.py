"""The architecture's one-way rule, checked on the source: geometry imports neither fea nor cli,
and fea does not import cli (DEVELOPERS.md, "Data flow")."""

from __future__ import annotations

import ast
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1]
FORBIDDEN = {"geometry": ("platewright.fea", "platewright.cli"), "fea": ("platewright.cli",)}


def _imports(path: Path) -> list[str]:
    names = []
    for node in ast.walk(ast.parse(path.read_text(encoding="utf-8"))):
        if isinstance(node, ast.ImportFrom) and node.module:
            names.append(node.module)
        elif isinstance(node, ast.Import):
            names += [a.name for a in node.names]
    return names


@pytest.mark.parametrize("package", sorted(FORBIDDEN))
def test_lower_stages_never_import_higher_ones(package: str) -> None:
    files = sorted((ROOT / package).rglob("*.py"))
    assert files
    bad = [f"{f.relative_to(ROOT)} imports {name}" for f in files for name in _imports(f)
           if name.startswith(FORBIDDEN[package])]
    assert bad == []


def test_every_sub_package_says_what_its_stage_does() -> None:
    for init in sorted(ROOT.glob("*/*/__init__.py")):
        if init.parts[-3] in ("geometry", "fea", "cli"):
            doc = ast.get_docstring(ast.parse(init.read_text(encoding="utf-8")))
            assert doc and len(doc) > 80, f"{init.relative_to(ROOT)} needs a paragraph"
