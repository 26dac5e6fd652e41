"""Export of an analysed case (mesh and fields) to a VTK unstructured-grid file (.vtu) via meshio.

Points are written in mm with z = 0; cells are linear triangles (a T6 mesh is split 4:1).
Point data: ``displacement_mm`` (n, 3) float (u_x, u_y, w), ``deflection_mm`` (n,) float and
``von_mises_mpa`` (n,) float. The file can be opened in any VTK viewer.
"""

from __future__ import annotations

import os
import tempfile
from pathlib import Path

import meshio
import numpy as np

from platewright.fea.results import CaseResult
from platewright.geometry.writers.atomic import atomic_path

__all__ = ["case_mesh", "write_vtu", "vtu_bytes"]


def case_mesh(result: CaseResult) -> meshio.Mesh:
    """The case's mesh and fields as a meshio.Mesh (points (n, 3) float mm, triangles)."""
    f = result.fields
    if f is None:
        raise ValueError("this result was computed without fields (keep_fields=False)")
    pts = np.column_stack([f.nodes_mm, np.zeros(len(f.nodes_mm))])
    return meshio.Mesh(
        pts,
        [("triangle", np.asarray(f.triangles, dtype=np.int64))],
        point_data={
            "displacement_mm": np.asarray(f.displacement_mm, dtype=float),
            "deflection_mm": np.asarray(f.deflection_mm, dtype=float),
            "von_mises_mpa": np.asarray(f.von_mises_mpa, dtype=float),
        },
    )


def write_vtu(result: CaseResult, path: str | os.PathLike[str]) -> Path:
    """Write ``result`` to ``path`` (.vtu, binary), replacing it only when complete."""
    target = Path(path)
    with atomic_path(target, suffix=".vtu") as tmp:
        meshio.write(tmp, case_mesh(result), file_format="vtu")
    return target


def vtu_bytes(result: CaseResult) -> bytes:
    """The .vtu file content of ``result`` as bytes."""
    with tempfile.TemporaryDirectory() as d:
        p = write_vtu(result, Path(d) / "case.vtu")
        return p.read_bytes()
