"""The half MBB beam on a regular grid of bilinear (Q4) squares, as in the 88-line paper.

Andreassen, Clausen, Schevenels, Lazarov and Sigmund, "Efficient topology optimization in
MATLAB using 88 lines of code", Struct. Multidisc. Optim. 43 (2011) 1-16, sections 2-3:
unit square plane-stress elements (E0 = 1, thickness 1), ``nelx`` by ``nely`` of them; nodes
numbered column by column from the top left corner, element e = elx * nely + ely (0-based, ely
counted downwards); a unit downward force at the top left node; the left edge held in x
(symmetry) and the bottom right corner held in y. All in element units (lengths 1, E0 = 1).

The model implements fea.topopt.DensityModel. Each call assembles K(x) with the vectorised
assembly of fea.assembly and factorises it once (scipy SuperLU).
"""

from __future__ import annotations

import numpy as np
import scipy.sparse.linalg as spla

from platewright.fea.assembly import assemble_matrix

__all__ = ["q4_element_stiffness", "MBBModel", "mbb_model"]


def q4_element_stiffness(nu: float = 0.3) -> np.ndarray:
    """Stiffness (8, 8) float of a unit square Q4 plane-stress element, E = 1, thickness 1.

    Closed form of the 88-line paper (its lines 12-17), exact 2x2 Gauss integration of the
    bilinear element. Dof order: (u, v) of the nodes lower left, lower right, upper right,
    upper left, matching the paper's edofMat.
    """
    a11 = np.array([[12, 3, -6, -3], [3, 12, 3, 0], [-6, 3, 12, -3], [-3, 0, -3, 12]], float)
    a12 = np.array([[-6, -3, 0, 3], [-3, -6, -3, -6], [0, -3, -6, 3], [3, -6, 3, -6]], float)
    b11 = np.array([[-4, 3, -2, 9], [3, -4, -9, 4], [-2, -9, -4, -3], [9, 4, -3, -4]], float)
    b12 = np.array([[2, -3, 4, -9], [-3, 2, 9, -2], [4, 9, 2, 3], [-9, -2, 3, 2]], float)
    a = np.block([[a11, a12], [a12.T, a11]])
    b = np.block([[b11, b12], [b12.T, b11]])
    return (a + nu * b) / (24.0 * (1.0 - nu * nu))


class MBBModel:
    """Half MBB beam, ``nelx`` x ``nely`` unit Q4 elements (implements DensityModel).

    n_elements: nelx * nely. element_volume: (m,) ones. centroids: (m, 2) float, element units
    (x to the right, y downwards from the top edge). edof: (m, 8) int element dofs. force:
    (n_dofs,) float. fixed: (p,) int fixed dofs. ke: (8, 8) float unit element stiffness.
    Compliance is the plain f^T u of the paper (not normalised).
    """

    def __init__(self, nelx: int, nely: int, nu: float = 0.3) -> None:
        if nelx < 1 or nely < 1:
            raise ValueError(f"nelx and nely must be at least 1, got {nelx}, {nely}")
        self.nelx, self.nely = int(nelx), int(nely)
        self.n_elements = self.nelx * self.nely
        self.element_volume = np.ones(self.n_elements)
        elx, ely = np.divmod(np.arange(self.n_elements), self.nely)
        self.centroids = np.column_stack([elx + 0.5, ely + 0.5]).astype(float)
        self.ke = q4_element_stiffness(nu)
        # Node numbers (0-based) column by column: node = col * (nely + 1) + row.
        n1 = elx * (self.nely + 1) + ely  # upper left node of each element
        n2 = n1 + self.nely + 1  # upper right
        # Lower left 2 n1 + 2, lower right 2 n2 + 2, upper right 2 n2, upper left 2 n1.
        base = np.column_stack([2 * n1 + 2, 2 * n2 + 2, 2 * n2, 2 * n1])
        self.edof = np.stack([base, base + 1], axis=2).reshape(-1, 8)
        self.n_dofs = 2 * (self.nelx + 1) * (self.nely + 1)
        self.force = np.zeros(self.n_dofs)
        self.force[1] = -1.0  # unit load down at the top left node
        left_x = np.arange(0, 2 * (self.nely + 1), 2)
        self.fixed = np.union1d(left_x, [self.n_dofs - 1])
        self.free = np.setdiff1d(np.arange(self.n_dofs), self.fixed)

    def displacements(self, x_phys: np.ndarray, *, penal: float = 3.0,
                      emin_ratio: float = 1e-9) -> np.ndarray:
        """Nodal displacements (n_dofs,) float at densities x_phys (m,) float."""
        x = np.asarray(x_phys, dtype=float)
        if x.shape != (self.n_elements,):
            raise ValueError(f"x_phys must be ({self.n_elements},), got {x.shape}")
        stiff = emin_ratio + x**penal * (1.0 - emin_ratio)
        k = assemble_matrix(stiff[:, None, None] * self.ke[None], self.edof, self.n_dofs)
        kff = k[self.free][:, self.free].tocsc()
        u = np.zeros(self.n_dofs)
        u[self.free] = spla.splu(kff, permc_spec="MMD_AT_PLUS_A").solve(self.force[self.free])
        return u

    def compliance(self, x_phys: np.ndarray, *, penal: float = 3.0,
                   emin_ratio: float = 1e-9) -> tuple[float, np.ndarray]:
        """Compliance f^T u (element units) and its sensitivity (m,) float (paper, eqs. 2, 5)."""
        x = np.asarray(x_phys, dtype=float)
        u = self.displacements(x, penal=penal, emin_ratio=emin_ratio)
        ue = u[self.edof]
        ce = np.einsum("ei,ij,ej->e", ue, self.ke, ue)
        c = float(((emin_ratio + x**penal * (1.0 - emin_ratio)) * ce).sum())
        dc = -penal * (1.0 - emin_ratio) * x ** (penal - 1.0) * ce
        return c, dc

    def case_responses(self, x_phys: np.ndarray, *, penal: float = 3.0,
                       emin_ratio: float = 1e-9) -> tuple[np.ndarray, np.ndarray]:
        """The compliance as the one load case: (1,) float and its sensitivity (1, m) float."""
        c, dc = self.compliance(x_phys, penal=penal, emin_ratio=emin_ratio)
        return np.array([c]), dc[None, :]

    @property
    def solid_compliance(self) -> np.ndarray:
        """Compliance of the solid beam (x = 1), (1,) float, element units."""
        return np.array([self.compliance(np.ones(self.n_elements))[0]])


def mbb_model(nelx: int, nely: int, nu: float = 0.3) -> MBBModel:
    """The half MBB beam of the 88-line paper, nelx x nely unit elements (see MBBModel)."""
    return MBBModel(nelx, nely, nu)
