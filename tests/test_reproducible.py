"""Repeated builds of the same design give byte-identical files (reproducible outputs).

A cut file that changes between two builds of an unchanged design hides real changes from version
control and file comparison. ezdxf stamps save times, fresh GUIDs and a hash-seed-dependent class
order into every DXF unless told otherwise; the build must not.
"""

from __future__ import annotations

import os
import subprocess
import sys
from pathlib import Path

import pytest

from platewright.geometry.plate.build import list_templates


def _build(design: Path, out: Path, seed: str) -> dict[str, bytes]:
    env = dict(os.environ, PYTHONHASHSEED=seed)
    proc = subprocess.run(
        [sys.executable, "-m", "platewright.cli.main", "build", str(design), "-q", "-o", str(out)],
        env=env, capture_output=True, text=True,
    )
    assert proc.returncode == 0, proc.stderr
    return {str(p.relative_to(out)): p.read_bytes() for p in sorted(out.rglob("*")) if p.is_file()}


@pytest.mark.parametrize("design", list_templates()[:2], ids=lambda p: p.stem)
def test_two_builds_are_byte_identical(design: Path, tmp_path: Path) -> None:
    first = _build(design, tmp_path / "a", seed="1")
    second = _build(design, tmp_path / "b", seed="2")
    assert first.keys() == second.keys()
    assert any(name.endswith(".dxf") for name in first)
    different = [name for name in first if first[name] != second[name]]
    assert different == []
