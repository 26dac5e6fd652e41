"""Rigid-body modes of a 2D membrane (in-plane displacements, dofs ``2 * node + component``)."""

from __future__ import annotations

import numpy as np

__all__ = ["MEMBRANE_MODE_NAMES", "membrane_rigid_modes"]

#: Names of the three in-plane rigid-body motions, in the column order of membrane_rigid_modes.
MEMBRANE_MODE_NAMES: tuple[str, str, str] = (
    "translation along x",
    "translation along y",
    "rotation about z",
)


def membrane_rigid_modes(
    nodes: np.ndarray, center_mm: tuple[float, float] = (0.0, 0.0)
) -> np.ndarray:
    """The three rigid-body modes of a membrane, (2 n, 3) float.

    nodes: (n, 2) float node coordinates, mm.
    center_mm: the point the rotation turns about (mm); any point gives a valid mode.
    Columns: translation (1, 0), translation (0, 1) in mm, and the small rotation (-y, x) in
    mm per radian about ``center_mm``; rows are dofs ``2 * node + component``.
    """
    p = np.asarray(nodes, dtype=float)
    if p.ndim != 2 or p.shape[1] != 2:
        raise ValueError(f"nodes must be (n, 2), got {p.shape}")
    n = p.shape[0]
    x = p[:, 0] - center_mm[0]
    y = p[:, 1] - center_mm[1]
    modes = np.zeros((2 * n, 3))
    modes[0::2, 0] = 1.0
    modes[1::2, 1] = 1.0
    modes[0::2, 2] = -y
    modes[1::2, 2] = x
    return modes
