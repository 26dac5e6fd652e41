"""SIMP density model of a platewright plate: one density per triangle of a linear Mesh.

Each load case is analysed as in fea.analysis, with the element stiffness scaled by the SIMP
law ``E(x) = E0 (emin_ratio + (1 - emin_ratio) x^p)`` (Bendsoe and Sigmund, Topology
Optimization, Springer 2003):

- ``bending`` cases: DKT plate elements (fea.bending) on the linear mesh, dofs (w, theta_x,
  theta_y) per node; supports, springs and loads from fea.mapping.map_case;
- ``in_plane`` cases: LINEAR T3 plane-stress triangles (fea.membrane) on the same mesh, dofs
  (u_x, u_y) per vertex. map_case maps in-plane cases onto the quadratic (T6) mesh; its loads
  and springs are carried over to the vertices with the prolongation P (a midpoint moves as the
  mean of its edge's ends, exact for the linear field): ``f3 = P^T f6``, ``S3 = P^T S6 P``.
  Fixed midpoints always come with their fixed edge ends (map_case fixes whole edges).

The objective is the weighted sum of the case compliances ``f^T u``, each divided by its value
for the solid plate (x = 1), with weights summing to 1, so the solid plate scores 1. Loads are
design-independent: self-weight is that of the solid plate (an overestimate once material is
removed). The sensitivity of one case is ``-p x^(p-1) (1 - emin_ratio) u_e^T K0_e u_e``.

Units: mm, N, MPa; element volume mm^3. The compliances are estimates, like every FE result of
platewright: the holed plate must be re-checked with the real-geometry analysis and by test.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from typing import Any

import numpy as np
import scipy.sparse as sp
import scipy.sparse.linalg as spla

from platewright.fea.analysis import element_matrices, total_vehicle_mass_g
from platewright.fea.assembly import element_dofs
from platewright.fea.elements import bending as dkt
from platewright.fea.elements import membrane
from platewright.fea.elements.bending_rigid import BENDING_MODE_NAMES, bending_rigid_modes
from platewright.fea.elements.membrane_rigid import MEMBRANE_MODE_NAMES, membrane_rigid_modes
from platewright.fea.elements.quadratic import QuadraticMesh, quadratic_mesh
from platewright.fea.loadcases.mapping import MappedCase, map_case
from platewright.fea.loadcases.parse import STANDARD_GRAVITY_M_S2, Component, LoadCase
from platewright.fea.mesh.triangles import Mesh
from platewright.fea.solve import free_rigid_motions
from platewright.geometry.errors import DesignError, Problem
from platewright.geometry.model import Plate

__all__ = ["PlateDensityModel", "t6_to_t3_prolongation"]


def t6_to_t3_prolongation(quad: QuadraticMesh) -> sp.csr_matrix:
    """Prolongation (2 n6, 2 n3) CSR from vertex to T6-node in-plane displacements.

    Vertex rows copy the vertex; a midpoint row is the mean of its edge's two end vertices
    (the value of the linear field there). Dofs ``2 * node + component`` on both sides.
    """
    nv = int(quad.n_vertices)
    n6 = int(quad.nodes.shape[0])
    t6 = np.asarray(quad.tri6, dtype=np.int64)
    mids = t6[:, 3:].ravel()
    ends = np.stack([t6[:, [0, 1]], t6[:, [1, 2]], t6[:, [2, 0]]], axis=1).reshape(-1, 2)
    uniq, first = np.unique(mids, return_index=True)
    a, b = ends[first, 0], ends[first, 1]
    rows = np.concatenate([np.arange(nv), uniq, uniq])
    cols = np.concatenate([np.arange(nv), a, b])
    vals = np.concatenate([np.ones(nv), np.full(uniq.size, 0.5), np.full(uniq.size, 0.5)])
    comp = np.arange(2)
    r2 = (2 * rows[:, None] + comp).ravel()
    c2 = (2 * cols[:, None] + comp).ravel()
    v2 = np.repeat(vals, 2)
    return sp.csr_matrix((v2, (r2, c2)), shape=(2 * n6, 2 * nv))


@dataclass(frozen=True)
class _CaseSystem:
    """One load case reduced to its free dofs, with a fixed sparsity pattern.

    ke0: (m, k, k) solid element stiffness. edof: (m, k) global dofs. free: (nf,) free dofs.
    f_free: (nf,) loads. slot: index of each kept COO entry in the CSC data; keep: which of the
    m k k element entries (then the spring entries) lie in the free block; spring_vals: spring
    entries in the free block. indices, indptr: CSC pattern. n_dofs, dpn: sizes.
    weight: (m, k) consistent loads of each element's own weight when the plate is solid (N,
    N mm; None without self-weight); f_free includes their sum.
    """

    name: str
    family: str
    ke0: np.ndarray
    edof: np.ndarray
    free: np.ndarray
    f_free: np.ndarray
    keep: np.ndarray
    slot: np.ndarray
    spring_vals: np.ndarray
    indices: np.ndarray
    indptr: np.ndarray
    n_dofs: int
    dpn: int
    held_nodes: np.ndarray
    loaded_nodes: np.ndarray
    weight: np.ndarray | None = None


def _pattern(edof: np.ndarray, free: np.ndarray, n_dofs: int, spring: sp.spmatrix | None):
    """Sparsity pattern of the free-free block: (keep, slot, spring_vals, indices, indptr)."""
    where = np.full(n_dofs, -1, np.int64)
    where[free] = np.arange(free.size)
    m, k = edof.shape
    fe = where[edof]
    rows = np.broadcast_to(fe[:, :, None], (m, k, k)).ravel()
    cols = np.broadcast_to(fe[:, None, :], (m, k, k)).ravel()
    if spring is not None:
        s = sp.coo_matrix(spring)
        rows = np.concatenate([rows, where[s.row]])
        cols = np.concatenate([cols, where[s.col]])
        svals = s.data
    else:
        svals = np.zeros(0)
    keep = (rows >= 0) & (cols >= 0)
    nf = free.size
    key = cols[keep] * nf + rows[keep]  # column-major: CSC
    uniq, slot = np.unique(key, return_inverse=True)
    indices = uniq % nf
    indptr = np.concatenate([[0], np.cumsum(np.bincount(uniq // nf, minlength=nf))])
    spring_keep = keep[m * k * k:]
    return keep, slot, svals[spring_keep], indices, indptr


class PlateDensityModel:
    """SIMP model of one plate under several load cases of both families (a DensityModel).

    plate: geometry.model.Plate (material must be laser-safe). mesh: fea.mesh.Mesh of the
    plate's design domain (its boundary tags must name the features the cases use). cases:
    LoadCase objects; those of other plates are skipped. components: all Component objects.
    vehicle_mass_g: mass for collisions, g (None: this plate plus all components).
    weights: one weight per kept case (sequence in case order, or mapping name -> weight);
    None: equal. Weights are scaled to sum to 1.

    Attributes: n_elements (m), element_volume (m,) mm^3, centroids (m, 2) mm, case_names,
    weights (n_cases,) float, solid_compliance (n_cases,) float N mm.
    Raises DesignError when a case selects nothing on the mesh, when its supports leave a
    rigid-body motion free, or when the material is refused.
    """

    def __init__(
        self,
        plate: Plate,
        mesh: Mesh,
        cases: Sequence[LoadCase],
        *,
        components: Sequence[Component] = (),
        vehicle_mass_g: float | None = None,
        weights: Sequence[float] | Mapping[str, float] | None = None,
    ) -> None:
        kept = [c for c in cases if c.plate == plate.name]
        if not kept:
            raise ValueError(f"no load case acts on plate '{plate.name}'")
        self.plate, self.mesh = plate, mesh
        self.n_elements = int(mesh.n_triangles)
        self.element_volume = mesh.areas_mm2() * plate.thickness_mm
        self.centroids = mesh.nodes[mesh.triangles].mean(axis=1)
        self.case_names = tuple(c.name for c in kept)
        self.weights = _weights(self.case_names, weights)
        comps = {c.id: c for c in components}
        vmass = vehicle_mass_g if vehicle_mass_g is not None else \
            total_vehicle_mass_g([plate], components)
        quad = quadratic_mesh(mesh) if any(c.family == "in_plane" for c in kept) else None
        prol = t6_to_t3_prolongation(quad) if quad is not None else None
        self._cases = tuple(self._system(c, comps, vmass, quad, prol) for c in kept)
        ones = np.ones(self.n_elements)
        self.solid_compliance = np.array([self._solve(s, ones, 3.0, 1e-9)[0] for s in self._cases])
        if np.any(self.solid_compliance <= 0.0):
            bad = [n for n, c in zip(self.case_names, self.solid_compliance, strict=True) if c <= 0]
            raise DesignError(Problem(kept[0].path, f"load case(s) {', '.join(bad)} put no "
                                      "load on the plate: nothing to optimise for"))

    # ---- set-up
    def _system(self, case: LoadCase, comps: Mapping[str, Component], vmass: float,
                quad: QuadraticMesh | None, prol: sp.csr_matrix | None) -> _CaseSystem:
        mesh, tri = self.mesh, self.mesh.triangles
        mapped = map_case(case, self.plate, mesh, quad, components=comps, vehicle_mass_g=vmass)
        if np.any(mapped.fixed_values != 0.0):
            raise ValueError("prescribed non-zero displacements are not supported")
        dmat, _ = element_matrices(self.plate, case)
        if case.family == "bending":
            dpn = 3
            ke0 = dkt.dkt_stiffness(mesh.nodes, tri, dmat)
            f, fixed, spring = mapped.f, mapped.fixed_dofs, mapped.spring_matrix
            modes, names = bending_rigid_modes(mesh.nodes), BENDING_MODE_NAMES
            loaded = np.flatnonzero(np.abs(f.reshape(-1, 3)).sum(axis=1))
        else:
            dpn = 2
            ke0 = membrane.stiffness_matrices(mesh.nodes, tri, dmat, self.plate.thickness_mm)
            f, fixed, spring = _to_vertices(mapped, prol, mesh.n_nodes)
            modes = membrane_rigid_modes(mesh.nodes, tuple(mesh.nodes.mean(axis=0)))
            names = MEMBRANE_MODE_NAMES
            loaded = np.flatnonzero(np.abs(f.reshape(-1, 2)).sum(axis=1))
        n_dofs = dpn * mesh.n_nodes
        edof = element_dofs(tri, dpn)
        scale = float(np.abs(np.einsum("eii->e", ke0)).max()) / ke0.shape[1]
        free_motions = free_rigid_motions(modes, names, fixed, spring, scale)
        if free_motions:
            path = f"{case.path}.supports"
            raise DesignError(Problem(path, f"load case '{case.name}': the supports leave the "
                                      f"plate free to move: {', '.join(free_motions)}"))
        mask = np.ones(n_dofs, bool)
        mask[fixed] = False
        free = np.flatnonzero(mask)
        keep, slot, svals, indices, indptr = _pattern(edof, free, n_dofs, spring)
        held = np.asarray(mapped.supported_nodes, dtype=np.int64)
        held = held[held < mesh.n_nodes]
        weight = _element_weights(self.plate, case, mesh) if case.self_weight else None
        if weight is not None:  # loaded nodes: by the loads other than the plate's own weight
            own = np.bincount(edof.ravel(), weights=weight.ravel(), minlength=n_dofs)
            ext = np.abs((f - own).reshape(-1, dpn)).sum(axis=1)
            loaded = np.flatnonzero(ext > 1e-9 * max(float(ext.max()), 1e-300))
        return _CaseSystem(case.name, case.family, ke0, edof, free, f[free], keep, slot, svals,
                           indices, indptr, n_dofs, dpn, held, loaded, weight)

    # ---- analysis
    def _factor(self, s: _CaseSystem, x: np.ndarray, penal: float, emin_ratio: float) -> Any:
        """LU factors of the free-free stiffness of case ``s`` at densities x."""
        stiff = emin_ratio + (1.0 - emin_ratio) * x**penal
        vals = np.concatenate([(stiff[:, None, None] * s.ke0).ravel(), s.spring_vals])
        data = np.bincount(s.slot, weights=vals[s.keep], minlength=s.indices.size)
        nf = s.free.size
        k = sp.csc_matrix((data, s.indices, s.indptr), shape=(nf, nf))
        try:
            return spla.splu(k, permc_spec="MMD_AT_PLUS_A", diag_pivot_thresh=0.0,
                             options={"SymmetricMode": True})
        except RuntimeError as exc:
            raise ValueError(f"load case '{s.name}': the stiffness matrix is singular (a part of "
                             "the mesh is not connected to the supports)") from exc

    def _loads(self, s: _CaseSystem, x: np.ndarray) -> np.ndarray:
        """Free-dof loads (nf,) of case ``s`` with each element's weight scaled by x."""
        if s.weight is None:
            return s.f_free
        full = np.bincount(s.edof.ravel(), weights=((x - 1.0)[:, None] * s.weight).ravel(),
                           minlength=s.n_dofs)
        return s.f_free + full[s.free]

    def _solve(self, s: _CaseSystem, x: np.ndarray, penal: float, emin_ratio: float
               ) -> tuple[float, np.ndarray]:
        """(compliance f^T u, N mm; u (n_dofs,) float) of one case at densities x, with the
        loads of the solid plate."""
        lu = self._factor(s, x, penal, emin_ratio)
        u = np.zeros(s.n_dofs)
        u[s.free] = lu.solve(s.f_free)
        return float(np.einsum("i,i->", s.f_free, u[s.free])), u

    def _checked(self, x_phys: np.ndarray) -> np.ndarray:
        x = np.asarray(x_phys, dtype=float)
        if x.shape != (self.n_elements,):
            raise ValueError(f"x_phys must be ({self.n_elements},), got {x.shape}")
        if np.any(x < 0.0) or np.any(x > 1.0):
            raise ValueError("densities must lie in [0, 1]")
        return x

    def case_compliances(self, x_phys: np.ndarray, *, penal: float = 3.0,
                         emin_ratio: float = 1e-9) -> dict[str, float]:
        """Compliance f^T u of every case (N mm) at densities x_phys (m,) float."""
        x = self._checked(x_phys)
        return {s.name: self._solve(s, x, penal, emin_ratio)[0] for s in self._cases}

    def compliance(self, x_phys: np.ndarray, *, penal: float = 3.0,
                   emin_ratio: float = 1e-9) -> tuple[float, np.ndarray]:
        """Objective sum_k w_k c_k(x) / c_k(1) (dimensionless) and its sensitivity (m,) float."""
        x = self._checked(x_phys)
        obj = 0.0
        grad = np.zeros(self.n_elements)
        dstiff = penal * (1.0 - emin_ratio) * x ** (penal - 1.0)
        for s, w, c0 in zip(self._cases, self.weights, self.solid_compliance, strict=True):
            c, u = self._solve(s, x, penal, emin_ratio)
            ue = u[s.edof]
            ce = np.einsum("ei,eij,ej->e", ue, s.ke0, ue, optimize=True)
            obj += w * c / c0
            grad -= (w / c0) * dstiff * ce
        return float(obj), grad

    def case_responses(self, x_phys: np.ndarray, *, penal: float = 3.0,
                       emin_ratio: float = 1e-9) -> tuple[np.ndarray, np.ndarray]:
        """Compliance of every case, (k,) float N mm, and its sensitivity d c_k / d x_e,
        (k, m) float, at densities x_phys (m,) float (one solve per case)."""
        x = self._checked(x_phys)
        dstiff = penal * (1.0 - emin_ratio) * x ** (penal - 1.0)
        values = np.zeros(len(self._cases))
        grads = np.zeros((len(self._cases), self.n_elements))
        for k, s in enumerate(self._cases):
            values[k], u = self._solve(s, x, penal, emin_ratio)
            ue = u[s.edof]
            grads[k] = -dstiff * np.einsum("ei,eij,ej->e", ue, s.ke0, ue, optimize=True)
        return values, grads

    def case_deflection_norms(
        self, x_phys: np.ndarray, *, penal: float = 3.0, emin_ratio: float = 1e-9,
        power: float = 12.0, watch: np.ndarray | None = None, design_weight: bool = True,
    ) -> tuple[np.ndarray, np.ndarray]:
        """A smooth measure of each case's largest deflection and its sensitivity.

        d_k = (sum_i a_i^P)^(1/P) over the watched nodes, a_i = |w_i| (bending) or
        |(u_x, u_y)| (in plane), P = ``power``: a P-norm that tends to the largest deflection
        as P grows. Returns (d (k,) float mm, d d_k / d x_e (k, m) float), the sensitivity by
        the adjoint method (one more solve with the same factors per case). watch: (n,) bool
        nodes measured (default: every node). design_weight: each element's own weight scales
        with its density (the plate gets lighter as material goes), else the solid plate's
        weight is kept.
        """
        x = self._checked(x_phys)
        watch_idx = np.flatnonzero(np.ones(self.mesh.n_nodes, bool) if watch is None
                                   else np.asarray(watch, bool))
        dstiff = penal * (1.0 - emin_ratio) * x ** (penal - 1.0)
        values = np.zeros(len(self._cases))
        grads = np.zeros((len(self._cases), self.n_elements))
        for k, s in enumerate(self._cases):
            lu = self._factor(s, x, penal, emin_ratio)
            f = self._loads(s, x) if design_weight else s.f_free
            u = np.zeros(s.n_dofs)
            u[s.free] = lu.solve(f)
            un = u.reshape(-1, s.dpn)[watch_idx]
            if s.family == "bending":
                a = np.abs(un[:, 0])
                da = np.zeros_like(un)
                da[:, 0] = np.sign(un[:, 0])
            else:
                a = np.hypot(un[:, 0], un[:, 1])
                da = un / np.maximum(a, 1e-300)[:, None]
            top = float(a.max())
            if not top > 0.0:
                continue
            r = a / top  # scaled against overflow
            norm = float((r**power).sum() ** (1.0 / power))
            values[k] = top * norm
            rhs = np.zeros((self.mesh.n_nodes, s.dpn))
            rhs[watch_idx] = (r ** (power - 1.0) * norm ** (1.0 - power))[:, None] * da
            adj = np.zeros(s.n_dofs)
            adj[s.free] = lu.solve(rhs.ravel()[s.free])
            ae, ue = adj[s.edof], u[s.edof]
            grads[k] = -dstiff * np.einsum("ei,eij,ej->e", ae, s.ke0, ue, optimize=True)
            if design_weight and s.weight is not None:
                grads[k] += np.einsum("ei,ei->e", ae, s.weight)
        return values, grads

    def deflections(self, x_phys: np.ndarray, *, penal: float = 3.0,
                    emin_ratio: float = 1e-9) -> dict[str, float]:
        """Largest nodal deflection of every case, mm, at densities x_phys (m,) float.

        Bending: |w|; in plane: |(u_x, u_y)|. An estimate on the density field: confirm on the
        holed plate with fea.analysis and by test.
        """
        x = self._checked(x_phys)
        out = {}
        for s in self._cases:
            u = self._solve(s, x, penal, emin_ratio)[1].reshape(-1, s.dpn)
            d = np.abs(u[:, 0]) if s.family == "bending" else np.hypot(u[:, 0], u[:, 1])
            out[s.name] = float(d.max())
        return out

    def attached_elements(self) -> np.ndarray:
        """(m,) bool: elements with a node that is supported or loaded in any case (loads
        other than the plate's own weight).

        A natural set of passive (solid) elements: removing material where loads enter or
        supports hold would change the load path the cases describe.
        """
        nodes = np.zeros(self.mesh.n_nodes, bool)
        for s in self._cases:
            nodes[s.held_nodes] = True
            nodes[s.loaded_nodes] = True
        return nodes[self.mesh.triangles].any(axis=1)


def _weights(names: Sequence[str], weights: Sequence[float] | Mapping[str, float] | None
             ) -> np.ndarray:
    """Case weights (n,) float summing to 1."""
    if weights is None:
        w = np.ones(len(names))
    elif isinstance(weights, Mapping):
        unknown = set(weights) - set(names)
        if unknown:
            raise ValueError(f"weights name unknown cases: {', '.join(sorted(unknown))}")
        w = np.array([float(weights.get(n, 0.0)) for n in names])
    else:
        w = np.asarray(weights, dtype=float)
        if w.shape != (len(names),):
            raise ValueError(f"weights must have {len(names)} entries, got {w.shape}")
    if np.any(w < 0.0) or not w.sum() > 0.0:
        raise ValueError("weights must be non-negative and not all zero")
    return w / w.sum()


def _to_vertices(mapped: MappedCase, prol: sp.csr_matrix, n_vertices: int
                 ) -> tuple[np.ndarray, np.ndarray, sp.csr_matrix | None]:
    """In-plane loads (2 nv,), fixed vertex dofs and springs on the vertices (see module doc)."""
    f = prol.T @ mapped.f
    fixed = mapped.fixed_dofs[mapped.fixed_dofs < 2 * n_vertices]
    spring = None
    if mapped.spring_matrix is not None:
        spring = sp.csr_matrix(prol.T @ mapped.spring_matrix @ prol)
    return np.asarray(f, dtype=float), fixed, spring


def _element_weights(plate: Plate, case: LoadCase, mesh: Mesh) -> np.ndarray:
    """Consistent loads of each element's own weight, (m, 9) bending or (m, 6) in plane, N
    and N mm: the same uniform load as fea.loadcases.mapping's self-weight (weight per unit
    area ``rho g g_factor t``; in plane along ``g_direction``, a third of each element's
    weight on each corner, which is the quadratic element's consistent load carried to the
    corners by the prolongation)."""
    rho = plate.material.density_kg_m3 * 1e-9  # kg/mm^3
    q = rho * STANDARD_GRAVITY_M_S2 * case.g_factor * plate.thickness_mm  # N/mm^2
    if case.family == "bending":
        return dkt.dkt_pressure_load(mesh.nodes, mesh.triangles, -q)
    gx, gy = case.g_direction or (0.0, 0.0)
    third = q * mesh.areas_mm2() / 3.0
    fe = np.zeros((mesh.n_triangles, 3, 2))
    fe[:, :, 0] = (gx * third)[:, None]
    fe[:, :, 1] = (gy * third)[:, None]
    return fe.reshape(-1, 6)
