"""One solve of one load case on one mesh: element matrices, supports and loads, the linear
solve, and the recovered fields (SPR, fea.recovery) on a linear display mesh.

``run_pass`` is called by the convergence loop (fea.adaptive) once per mesh. Errors of the input
(supports leaving a motion free, a region selecting nothing) are raised as DesignError with the
field path. Units: mm, N, MPa, seconds.
"""

from __future__ import annotations

import math
import time
from collections.abc import Callable, Mapping
from dataclasses import dataclass

import numpy as np

from platewright.fea.assembly import assemble_matrix, element_dofs
from platewright.fea.elements import bending as dkt
from platewright.fea.elements import membrane
from platewright.fea.elements.bending_rigid import BENDING_MODE_NAMES, bending_rigid_modes
from platewright.fea.elements.constitutive import material_plane_stress
from platewright.fea.elements.membrane_rigid import MEMBRANE_MODE_NAMES, membrane_rigid_modes
from platewright.fea.elements.quadratic import QuadraticMesh, quadratic_mesh
from platewright.fea.loadcases.mapping import MappedCase, map_case
from platewright.fea.loadcases.parse import Component, LoadCase
from platewright.fea.mesh.triangles import Mesh
from platewright.fea.multigrid import membrane_layout, plate_layout
from platewright.fea.recovery import GAUSS_AREA_COORDS, patch_recovery
from platewright.fea.solve import (
    ConvergenceError,
    InaccurateSolveError,
    MechanismError,
    Solution,
    UnderSupportedError,
    solve_system,
)
from platewright.geometry.errors import DesignError, Problem
from platewright.geometry.model import Plate

__all__ = ["PassResult", "element_matrices", "run_pass", "support_layout", "split_t6"]

LineOf = Callable[[str], "int | None"] | None


@dataclass(frozen=True)
class PassResult:
    """A solved case on one mesh, with fields on a linear display mesh.

    mesh: the linear mesh; quad: its six-node version (in_plane) or None. mapped: the mapped
    supports and loads. solution: the linear solve. nodes_mm (n, 2), triangles (m, 3): display
    mesh (six-node triangles split 4:1). displacement_mm (n, 3) (u_x, u_y, w); deflection_mm
    (n,). von_mises_mpa (n,): recovered (SPR) von Mises (bending: surface stress 6 M / t^2).
    raw_gap_mpa (n,): the largest difference at each node between the recovered von Mises and
    an element's own value there (Zienkiewicz-Zhu pointwise estimate). raw_max_mpa (n,): the
    largest of the elements' own von Mises values at each node. element_size_mm (m,):
    edge length of an equilateral triangle of the same area, per display triangle. timings_s:
    stage -> seconds (assemble, solve, recover).
    """

    mesh: Mesh
    quad: QuadraticMesh | None
    mapped: MappedCase
    solution: Solution
    nodes_mm: np.ndarray
    triangles: np.ndarray
    displacement_mm: np.ndarray
    deflection_mm: np.ndarray
    von_mises_mpa: np.ndarray
    raw_gap_mpa: np.ndarray
    raw_max_mpa: np.ndarray
    element_size_mm: np.ndarray
    timings_s: dict[str, float]


def element_matrices(plate: Plate, case: LoadCase) -> tuple[np.ndarray, bool]:
    """Constitutive matrix (3, 3): D_b (N mm) in bending, plane-stress D (MPa) in plane; and
    whether isotropic values were used."""
    m = plate.material
    if not m.laser_safe:
        raise DesignError(Problem(case.path, f"material '{m.key}' is refused: {m.refusal_reason}"))
    # Grain not stated: isotropic values with the library's single modulus, which for wood-based
    # sheet is the weaker (across-grain) direction (REFERENCE.md: use the weaker direction
    # unless the design states the grain).
    ortho = m.orthotropic if case.grain_deg is not None else None
    angle = math.radians(case.grain_deg or 0.0)
    if case.family == "in_plane":
        return material_plane_stress(m, angle if ortho else None), ortho is None
    if ortho:
        return dkt.orthotropic_bending_matrix(ortho["E1_mpa"], ortho["E2_mpa"], ortho["nu12"],
                                              ortho["G12_mpa"], plate.thickness_mm, angle), False
    return dkt.isotropic_bending_matrix(m.youngs_modulus_mpa, m.poisson_ratio,
                                        plate.thickness_mm), True


def support_layout(held_mm: np.ndarray) -> str:
    """Where the held points (k, 2) float mm lie, in words, when that explains a free motion:
    "every support acts at one point [x, y] mm" or "every support lies on one line from [..] to
    [..] mm"; "" when they are spread over an area (or there are none)."""
    pts = np.unique(np.asarray(held_mm, dtype=float).reshape(-1, 2), axis=0)
    if len(pts) == 0:
        return ""
    centre = pts.mean(axis=0)
    spread = float(np.abs(pts - centre).max())
    if spread <= 1e-9 * max(1.0, float(np.abs(centre).max())) or len(pts) == 1:
        return f"every support acts at one point [{centre[0]:.4g}, {centre[1]:.4g}] mm"
    _, sv, vt = np.linalg.svd(pts - centre, full_matrices=False)
    if sv[-1] <= 1e-9 * sv[0]:
        t = (pts - centre) @ vt[0]
        a, b = centre + t.min() * vt[0], centre + t.max() * vt[0]
        return (f"every support lies on one line, from [{a[0]:.4g}, {a[1]:.4g}] to "
                f"[{b[0]:.4g}, {b[1]:.4g}] mm")
    return ""


def split_t6(tri6: np.ndarray) -> np.ndarray:
    """Four linear triangles (4 m, 3) per six-node triangle (vertices, then midpoints 01, 12, 20)."""
    v0, v1, v2, m01, m12, m20 = tri6.T
    return np.vstack([np.column_stack(t) for t in (
        (v0, m01, m20), (m01, v1, m12), (m20, m12, v2), (m01, m12, m20))])


def _solve(case: LoadCase, mesh: Mesh, quad: QuadraticMesh | None, mapped: MappedCase,
           dmat: np.ndarray, thickness_mm: float, method: str, line_of: LineOf
           ) -> tuple[Solution, float, float, bool]:
    """Assemble and solve; returns (solution, assembly s, solve s, fell back to direct)."""
    bending = case.family == "bending"
    t0 = time.perf_counter()
    if bending:
        ke = dkt.dkt_stiffness(mesh.nodes, mesh.triangles, dmat)
        k = assemble_matrix(ke, element_dofs(mesh.triangles, 3), 3 * mesh.n_nodes)
        modes, names = bending_rigid_modes(mesh.nodes), BENDING_MODE_NAMES
        layout = plate_layout(mesh.nodes, mesh.triangles)
    else:
        k = membrane.assemble_stiffness(quad.nodes, quad.tri6, dmat, thickness_mm)
        modes = membrane_rigid_modes(quad.nodes, tuple(quad.nodes.mean(axis=0)))
        names = MEMBRANE_MODE_NAMES
        layout = membrane_layout(quad.tri6, quad.n_vertices)
    t1 = time.perf_counter()
    args = (k, mapped.f, mapped.fixed_dofs, mapped.fixed_values)
    kw = {"rigid_modes": modes, "mode_names": names, "spring_matrix": mapped.spring_matrix,
          "layout": layout}
    nodes = mesh.nodes if bending else quad.nodes
    dpn = 3 if bending else 2
    fell_back = False
    try:
        try:
            sol = solve_system(*args, method=method, **kw)
        except ConvergenceError:
            if method != "auto":
                raise
            sol = solve_system(*args, method="direct", **kw)  # multigrid failed: factorise
            fell_back = True
    except MechanismError as exc:
        path = f"{case.path}.supports"
        part = nodes[np.unique(exc.part_dofs // dpn)] if exc.part_dofs.size else nodes
        (x0, y0), (x1, y1) = part.min(axis=0), part.max(axis=0)
        raise DesignError(Problem(path, f"load case '{case.name}': the part of the plate within "
                                  f"x {x0:.4g}..{x1:.4g} mm, y {y0:.4g}..{y1:.4g} mm is joined "
                                  "to the rest by no element and is free to move: "
                                  f"{', '.join(exc.free_motions)}",
                                  line_of(path) if line_of else None,
                                  "support that part too, or join it to the plate")) from exc
    except UnderSupportedError as exc:
        path = f"{case.path}.supports"
        where = support_layout(nodes[mapped.supported_nodes])
        raise DesignError(Problem(path, f"load case '{case.name}': the supports leave the plate "
                                  f"free to move: {', '.join(exc.free_motions)}"
                                  + (f" ({where})" if where else ""),
                                  line_of(path) if line_of else None,
                                  "add a support (fixed or elastic) that blocks "
                                  + ("this motion" if len(exc.free_motions) == 1 else
                                     "these motions"))) from exc
    except ConvergenceError as exc:  # includes InaccurateSolveError from the direct solver
        hint = ("try another mesh_size_mm; this is a numerical failure of the solver, not a "
                "problem with the supports" if isinstance(exc, InaccurateSolveError) else
                "try method='direct' or a larger mesh_size_mm")
        raise DesignError(Problem(case.path, f"load case '{case.name}': {exc}",
                                  line_of(case.path) if line_of else None, hint)) from exc
    return sol, t1 - t0, time.perf_counter() - t1, fell_back


def _recover(case: LoadCase, mesh: Mesh, quad: QuadraticMesh | None, u: np.ndarray,
             dmat: np.ndarray, thickness_mm: float):
    """(nodes, triangles, displacement (n, 3), recovered von Mises (n,), raw gap (n,), largest
    raw element value (n,))."""
    boundary = np.unique(mesh.boundary_edges)
    if case.family == "bending":
        samples = dkt.dkt_moments(mesh.nodes, mesh.triangles, dmat, u, GAUSS_AREA_COORDS)
        corner = dkt.dkt_moments(mesh.nodes, mesh.triangles, dmat, u, np.eye(3))
        rec = patch_recovery(mesh.nodes, mesh.triangles, samples, corner, boundary)
        vm = dkt.von_mises_plane(dkt.surface_stresses(rec.nodal, thickness_mm))
        raw = dkt.von_mises_plane(dkt.surface_stresses(corner, thickness_mm))  # (m, 3)
        conn = mesh.triangles
        disp = np.zeros((mesh.n_nodes, 3))
        disp[:, 2] = u[0::3]
        nodes, tris = mesh.nodes, mesh.triangles
    else:
        samples = membrane.element_stresses(quad.nodes, quad.tri6, u, dmat,
                                            points=GAUSS_AREA_COORDS[:, 1:])
        own = membrane.element_stresses(quad.nodes, quad.tri6, u, dmat)  # (m, 6, 3)
        rec = patch_recovery(mesh.nodes, mesh.triangles, samples, own, boundary, quad.tri6[:, 3:])
        vm = membrane.von_mises(rec.nodal)
        raw = membrane.von_mises(own)  # (m, 6)
        conn = quad.tri6
        disp = np.zeros((len(quad.nodes), 3))
        disp[:, 0], disp[:, 1] = u[0::2], u[1::2]
        nodes, tris = quad.nodes, split_t6(quad.tri6)
    gap = np.zeros(len(nodes))
    np.maximum.at(gap, conn.ravel(), np.abs(raw - vm[conn]).ravel())
    top = np.zeros(len(nodes))
    np.maximum.at(top, conn.ravel(), raw.ravel())
    return nodes, tris, disp, vm, gap, top


def run_pass(
    plate: Plate,
    case: LoadCase,
    mesh: Mesh,
    *,
    components: Mapping[str, Component],
    vehicle_mass_g: float,
    method: str,
    line_of: LineOf,
) -> tuple[PassResult, bool, bool]:
    """Solve ``case`` on ``mesh`` and recover its fields.

    Returns (PassResult, isotropic values used, multigrid fell back to the direct solver).
    Raises DesignError for bad input (see fea.analysis.analyse_plate).
    """
    quad = quadratic_mesh(mesh) if case.family == "in_plane" else None
    t0 = time.perf_counter()
    mapped = map_case(case, plate, mesh, quad, components=components,
                      vehicle_mass_g=vehicle_mass_g, line_of=line_of)
    dmat, iso = element_matrices(plate, case)
    t_map = time.perf_counter() - t0
    sol, t_asm, t_solve, fell_back = _solve(case, mesh, quad, mapped, dmat, plate.thickness_mm,
                                            method, line_of)
    t0 = time.perf_counter()
    nodes, tris, disp, vm, gap, top = _recover(case, mesh, quad, sol.u, dmat,
                                               plate.thickness_mm)
    defl = np.abs(disp[:, 2]) if case.family == "bending" else np.hypot(disp[:, 0], disp[:, 1])
    p = nodes[tris]
    area = 0.5 * np.abs((p[:, 1, 0] - p[:, 0, 0]) * (p[:, 2, 1] - p[:, 0, 1])
                        - (p[:, 2, 0] - p[:, 0, 0]) * (p[:, 1, 1] - p[:, 0, 1]))
    size = np.sqrt(4.0 * area / math.sqrt(3.0)) * (2.0 if case.family == "in_plane" else 1.0)
    timings = {"map": t_map, "assemble": t_asm, "solve": t_solve,
               "recover": time.perf_counter() - t0}
    return (PassResult(mesh, quad, mapped, sol, nodes, tris, disp, defl, vm, gap, top, size,
                       timings), iso, fell_back)
