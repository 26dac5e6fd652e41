"""Plane-STRESS material matrices for membranes (sigma_zz = 0 through the thickness).

Voigt order (xx, yy, xy) with ENGINEERING shear strain gamma_xy = 2 eps_xy, so that
``sigma = D @ [eps_xx, eps_yy, gamma_xy]``. Moduli in MPa, so D is in MPa. This is not the
plane-strain matrix: thin laser-cut plates are free to contract through their thickness.
"""

from __future__ import annotations

import numpy as np

from platewright.geometry.model import Material

__all__ = [
    "isotropic_plane_stress",
    "orthotropic_plane_stress",
    "rotate_plane_stress",
    "material_plane_stress",
]


def isotropic_plane_stress(youngs_modulus_mpa: float, poisson_ratio: float) -> np.ndarray:
    """Isotropic plane-stress matrix, (3, 3) float MPa.

    D = E / (1 - nu^2) [[1, nu, 0], [nu, 1, 0], [0, 0, (1 - nu) / 2]].
    Raises ValueError unless E > 0 and -1 < nu < 0.5.
    """
    e = float(youngs_modulus_mpa)
    nu = float(poisson_ratio)
    if not e > 0.0:
        raise ValueError(f"Young's modulus must be positive, got {e} MPa")
    if not -1.0 < nu < 0.5:
        raise ValueError(f"Poisson's ratio must lie in (-1, 0.5), got {nu}")
    c = e / (1.0 - nu * nu)
    return c * np.array([[1.0, nu, 0.0], [nu, 1.0, 0.0], [0.0, 0.0, 0.5 * (1.0 - nu)]])


def orthotropic_plane_stress(
    e1_mpa: float,
    e2_mpa: float,
    nu12: float,
    g12_mpa: float,
    grain_angle_rad: float = 0.0,
) -> np.ndarray:
    """Orthotropic plane-stress matrix in plate axes, (3, 3) float MPa.

    e1_mpa: modulus along the grain (material axis 1); e2_mpa: across it; nu12: major Poisson
    ratio (strain in 2 from stress in 1, nu21 = nu12 E2 / E1); g12_mpa: in-plane shear modulus.
    grain_angle_rad: angle from the plate x axis to material axis 1, counter-clockwise, radians.
    Raises ValueError when the compliance is not positive definite.
    """
    e1, e2, nu, g = float(e1_mpa), float(e2_mpa), float(nu12), float(g12_mpa)
    if not (e1 > 0.0 and e2 > 0.0 and g > 0.0):
        raise ValueError("E1, E2 and G12 must be positive (MPa)")
    if not nu * nu < e1 / e2:
        raise ValueError(f"nu12^2 must be below E1/E2 = {e1 / e2:.4g}, got nu12 = {nu}")
    compliance = np.array(
        [[1.0 / e1, -nu / e1, 0.0], [-nu / e1, 1.0 / e2, 0.0], [0.0, 0.0, 1.0 / g]]
    )
    q = np.linalg.inv(compliance)
    q = 0.5 * (q + q.T)
    return rotate_plane_stress(q, grain_angle_rad)


def rotate_plane_stress(d_material: np.ndarray, angle_rad: float) -> np.ndarray:
    """Express a material-axes plane-stress matrix in plate axes, (3, 3) float MPa.

    d_material: (3, 3) float matrix in material axes (1, 2, 12), engineering shear.
    angle_rad: angle from plate x to material axis 1, counter-clockwise, radians.
    Uses strain invariance: eps_material = T eps_plate, D_plate = T^T D_material T.
    """
    c, s = np.cos(angle_rad), np.sin(angle_rad)
    t = np.array(
        [
            [c * c, s * s, c * s],
            [s * s, c * c, -c * s],
            [-2.0 * c * s, 2.0 * c * s, c * c - s * s],
        ]
    )
    d = t.T @ np.asarray(d_material, dtype=float) @ t
    return 0.5 * (d + d.T)


def material_plane_stress(material: Material, grain_angle_rad: float | None = None) -> np.ndarray:
    """Plane-stress matrix of a library material, (3, 3) float MPa.

    When the material carries orthotropic data and a grain angle (radians, plate x to the face
    grain) is given, the orthotropic matrix is returned. Otherwise the isotropic matrix from the
    material's E and nu (for wood-based sheet the caller should pass the weaker direction's E and
    say so in the report). Refuses materials marked not laser-safe, naming the reason.
    """
    if not material.laser_safe:
        reason = material.refusal_reason or "it must not be laser-cut"
        raise ValueError(f"material {material.key!r} is refused: {reason}")
    ortho = material.orthotropic
    if ortho is not None and grain_angle_rad is not None:
        return orthotropic_plane_stress(
            ortho["E1_mpa"], ortho["E2_mpa"], ortho["nu12"], ortho["G12_mpa"], grain_angle_rad
        )
    return isotropic_plane_stress(material.youngs_modulus_mpa, material.poisson_ratio)
