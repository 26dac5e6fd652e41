"""Rigid-body modes of a free plate in bending (dofs w, theta_x, theta_y per node).

With the sign convention of ``fea.bending`` (theta_x = dw/dy, theta_y = -dw/dx, right-hand rule
about +x and +y), the three motions that bend nothing are:

- "translation along z": w = 1, no rotation;
- "rotation about x": w = (y - y_c), theta_x = 1;
- "rotation about y": w = -(x - x_c), theta_y = 1;

taken about a reference point (x_c, y_c) (default: the mean of the nodes, which keeps the modes
well scaled for the multigrid near-nullspace). Lengths in mm, rotations in radians.
"""

from __future__ import annotations

import numpy as np

__all__ = ["BENDING_MODE_NAMES", "bending_rigid_modes"]

#: Names of the columns returned by bending_rigid_modes, in order.
BENDING_MODE_NAMES: tuple[str, str, str] = (
    "translation along z",
    "rotation about x",
    "rotation about y",
)


def bending_rigid_modes(
    nodes: np.ndarray, center_mm: tuple[float, float] | None = None
) -> np.ndarray:
    """Rigid-body modes (3 n, 3) float of a plate with nodes (n, 2) float, mm.

    Columns follow BENDING_MODE_NAMES; rows are node-major (w, theta_x, theta_y). The rotation
    modes turn by one radian about axes through ``center_mm`` (default: the mean of the nodes).
    """
    xy = np.asarray(nodes, dtype=float)
    if xy.ndim != 2 or xy.shape[1] != 2:
        raise ValueError(f"nodes must be (n, 2), got {xy.shape}")
    c = xy.mean(axis=0) if center_mm is None else np.asarray(center_mm, dtype=float)
    n = xy.shape[0]
    modes = np.zeros((n, 3, 3))
    modes[:, 0, 0] = 1.0
    modes[:, 0, 1] = xy[:, 1] - c[1]
    modes[:, 1, 1] = 1.0
    modes[:, 0, 2] = -(xy[:, 0] - c[0])
    modes[:, 2, 2] = 1.0
    return modes.reshape(3 * n, 3)
