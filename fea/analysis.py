"""The plate analysis pipeline: design + plates -> mesh -> load case mapping -> solve -> results.

``analyse_design`` parses the design's load cases (fea.loadcases) and runs every case of every
plate; ``analyse_plate`` runs the cases of one plate. One mesh is made per plate and element
size and shared by its cases. Bending cases use DKT plate elements on the linear mesh;
in_plane cases use quadratic (T6) plane-stress triangles on the same mesh with midside nodes.

Every result is an ESTIMATE (see fea.results.ESTIMATE_NOTE). Units: mm, N, MPa, g, seconds.
"""

from __future__ import annotations

import math
import re
import time
from collections.abc import Callable, Mapping, Sequence
from typing import Any

import numpy as np
from scipy.spatial import cKDTree

from platewright.fea.assembly import assemble_matrix, element_dofs
from platewright.fea.elements import bending as dkt
from platewright.fea.elements import membrane
from platewright.fea.elements.bending_rigid import BENDING_MODE_NAMES, bending_rigid_modes
from platewright.fea.elements.constitutive import material_plane_stress
from platewright.fea.elements.membrane_rigid import MEMBRANE_MODE_NAMES, membrane_rigid_modes
from platewright.fea.elements.quadratic import QuadraticMesh, quadratic_mesh
from platewright.fea.loadcases.mapping import MappedCase, map_case
from platewright.fea.loadcases.parse import Component, LoadCase, LoadInput, parse_loads
from platewright.fea.mesh.triangles import Mesh
from platewright.fea.multigrid import membrane_layout, plate_layout
from platewright.fea.results import CaseFields, CaseResult, CollisionResult, LimitCheck, PlateAnalysis
from platewright.fea.solve import ConvergenceError, MechanismError, UnderSupportedError, solve_system
from platewright.geometry.errors import DesignError, Problem
from platewright.geometry.model import Material, Plate
from platewright.geometry.plate.mass import mass_properties

__all__ = [
    "BYTES_PER_DOF",
    "DEFAULT_MEMORY_LIMIT_BYTES",
    "analyse_design",
    "analyse_plate",
    "total_vehicle_mass_g",
    "estimate_memory_bytes",
]

#: Memory per unknown of a solve (stiffness matrix plus sparse factor fill), bytes: an estimate
#: for 2-D meshes of up to about a million unknowns (sparse LU fill grows like n log n).
BYTES_PER_DOF = 2_000
#: Largest estimated memory an analysis may take, bytes (2 GiB).
DEFAULT_MEMORY_LIMIT_BYTES = 2 * 1024**3
#: Unknowns per mesh vertex: DKT 3; T6 membrane 2 per node with about 4 nodes per vertex.
_DOFS_PER_VERTEX = {"bending": 3, "in_plane": 8}
_WOOD_WORDS = ("plywood", "mdf", "wood", "birch", "hardboard", "bamboo", "fibreboard")

Progress = Callable[[str], None]


def total_vehicle_mass_g(plates: Sequence[Plate], components: Sequence[Component]) -> float:
    """Total mass, g: every plate times its quantity plus every component."""
    total = sum(mass_properties(p).mass_g * max(1, p.quantity) for p in plates)
    return float(total + sum(c.mass_g for c in components))


def estimate_memory_bytes(area_mm2: float, size_mm: float, family: str) -> tuple[int, int, int]:
    """(vertices, unknowns, bytes) expected for a plate of ``area_mm2`` meshed at ``size_mm``.

    Vertices of a mesh of equilateral triangles of side h: 2 A / (sqrt(3) h^2); unknowns per
    vertex as in _DOFS_PER_VERTEX; BYTES_PER_DOF per unknown. Refinement at small holes adds to
    this, which the mesher checks again with its own estimate.
    """
    vertices = int(2.0 * area_mm2 / (math.sqrt(3.0) * size_mm**2)) + 1
    dofs = vertices * _DOFS_PER_VERTEX[family]
    return vertices, dofs, dofs * BYTES_PER_DOF


class _PlateMeshes:
    """One mesh per element size of a plate (and its quadratic version), built on demand."""

    def __init__(self, plate: Plate) -> None:
        self.plate = plate
        self._lin: dict[float, tuple[Mesh, tuple[np.ndarray, ...]]] = {}
        self._quad: dict[float, QuadraticMesh] = {}

    def rings(self, size_mm: float | None):
        from platewright.fea.mesh.plate_input import (
            plate_rings,  # written alongside; imported when first needed
        )

        return plate_rings(self.plate, size_mm)

    def linear(self, size_mm: float, max_nodes: int) -> tuple[Mesh, tuple[np.ndarray, ...], bool]:
        if size_mm in self._lin:
            return (*self._lin[size_mm], False)
        from platewright.fea.mesh.mesher import mesh_rings

        rings = self.rings(size_mm)
        mesh = mesh_rings(rings, size_mm, max_nodes=max_nodes)
        outline = tuple(np.asarray(r.points_mm, float) for r in sorted(rings, key=lambda r: r.is_hole))
        self._lin[size_mm] = (mesh, outline)
        return mesh, outline, True

    def quadratic(self, size_mm: float) -> QuadraticMesh:
        if size_mm not in self._quad:
            self._quad[size_mm] = quadratic_mesh(self._lin[size_mm][0])
        return self._quad[size_mm]


def _default_size_mm(plate: Plate) -> float:
    x0, y0, x1, y1 = plate.outline.contours[0].bbox()
    return float(math.hypot(x1 - x0, y1 - y0) / 40.0)


def _is_wood(m: Material) -> bool:
    text = f"{m.key} {m.name}".lower()
    return any(w in text for w in _WOOD_WORDS)


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


def _split_t6(tri6: np.ndarray) -> np.ndarray:
    """Four linear triangles (4 m, 3) per six-node triangle (vertices, then midpoints 01, 12, 20)."""
    v0, v1, v2, m01, m12, m20 = tri6.T
    return np.vstack([np.column_stack(t) for t in (
        (v0, m01, m20), (m01, v1, m12), (m20, m12, v2), (m01, m12, m20))])


def _limits(case: LoadCase, defl: float, vm: float, sf: float, span: float
            ) -> tuple[tuple[LimitCheck, ...], float | None]:
    lim = case.limits
    checks: list[LimitCheck] = []
    limit_mm = None
    if lim.max_deflection_mm is not None:
        checks.append(LimitCheck("max_deflection_mm", defl, lim.max_deflection_mm, "mm",
                                 defl <= lim.max_deflection_mm))
        limit_mm = lim.max_deflection_mm
    if lim.span_ratio is not None:
        allowed = span / lim.span_ratio
        checks.append(LimitCheck("span_ratio", defl, allowed, "mm", defl <= allowed))
        limit_mm = allowed if limit_mm is None else min(limit_mm, allowed)
    if lim.min_safety_factor is not None:
        checks.append(LimitCheck("min_safety_factor", sf, lim.min_safety_factor, "",
                                 sf >= lim.min_safety_factor))
    if lim.max_von_mises_mpa is not None:
        checks.append(LimitCheck("max_von_mises_mpa", vm, lim.max_von_mises_mpa, "MPa",
                                 vm <= lim.max_von_mises_mpa))
    return tuple(checks), limit_mm


def _solve_case(plate: Plate, case: LoadCase, mesh: Mesh, quad: QuadraticMesh | None,
                mapped: MappedCase, dmat: np.ndarray, method: str, line_of) -> tuple:
    bending = case.family == "bending"
    t0 = time.perf_counter()
    if bending:
        ke = dkt.dkt_stiffness(mesh.nodes, mesh.triangles, dmat)
        k = assemble_matrix(ke, element_dofs(mesh.triangles, 3), 3 * mesh.n_nodes)
        modes, names = bending_rigid_modes(mesh.nodes), BENDING_MODE_NAMES
        layout = plate_layout(mesh.nodes, mesh.triangles)
    else:
        k = membrane.assemble_stiffness(quad.nodes, quad.tri6, dmat, plate.thickness_mm)
        modes = membrane_rigid_modes(quad.nodes, tuple(quad.nodes.mean(axis=0)))
        names = MEMBRANE_MODE_NAMES
        layout = membrane_layout(quad.tri6, quad.n_vertices)
    t1 = time.perf_counter()
    args = (k, mapped.f, mapped.fixed_dofs, mapped.fixed_values)
    kw = {"rigid_modes": modes, "mode_names": names, "spring_matrix": mapped.spring_matrix,
          "layout": layout}
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
        raise DesignError(Problem(path, f"load case '{case.name}': {exc}",
                                  line_of(path) if line_of else None)) from exc
    except UnderSupportedError as exc:
        path = f"{case.path}.supports"
        raise DesignError(Problem(path, f"load case '{case.name}': the supports leave the plate "
                                  f"free to move: {', '.join(exc.free_motions)}",
                                  line_of(path) if line_of else None,
                                  "add a support (fixed or elastic) that blocks "
                                  + ("this motion" if len(exc.free_motions) == 1 else
                                     "these motions"))) from exc
    except ConvergenceError as exc:
        raise DesignError(Problem(case.path, f"load case '{case.name}': {exc}",
                                  line_of(case.path) if line_of else None,
                                  "try method='direct' or a larger mesh_size_mm")) from exc
    return sol, t1 - t0, time.perf_counter() - t1, fell_back


def _recover(plate: Plate, case: LoadCase, mesh: Mesh, quad: QuadraticMesh | None, u: np.ndarray,
             dmat: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """(nodes (n, 2), triangles (m, 3), displacement (n, 3), von Mises (n,)) for results."""
    if case.family == "bending":
        mom = dkt.nodal_moments(mesh.nodes, mesh.triangles, dmat, u)
        vm = dkt.von_mises_plane(dkt.surface_stresses(mom, plate.thickness_mm))
        disp = np.zeros((mesh.n_nodes, 3))
        disp[:, 2] = u[0::3]
        return mesh.nodes, mesh.triangles, disp, vm
    sig = membrane.nodal_stresses(quad.nodes, quad.tri6, u, dmat)
    disp = np.zeros((len(quad.nodes), 3))
    disp[:, 0], disp[:, 1] = u[0::2], u[1::2]
    return quad.nodes, _split_t6(quad.tri6), disp, membrane.von_mises(sig)


def _run_case(plate: Plate, case: LoadCase, meshes: _PlateMeshes, size_mm: float | None,
              components: Mapping[str, Component], vmass: float, method: str,
              memory_limit_bytes: int, line_of, keep_fields: bool) -> CaseResult:
    h = float(size_mm or case.mesh_size_mm or _default_size_mm(plate))
    area = mass_properties(plate).area_mm2
    verts, dofs, need = estimate_memory_bytes(area, h, case.family)
    size_path = f"{case.path}.mesh_size_mm"
    if need > memory_limit_bytes:
        smallest = h * math.sqrt(need / memory_limit_bytes)
        raise DesignError(Problem(size_path, f"load case '{case.name}': a mesh of {h:g} mm would "
                                  f"have about {verts:,} nodes and {dofs:,} unknowns, needing "
                                  f"about {need / 1e6:,.0f} MB (limit {memory_limit_bytes / 1e6:,.0f} "
                                  "MB)", line_of(size_path) if line_of else None,
                                  f"use mesh_size_mm of at least {smallest:.3g}"))
    timings: dict[str, float] = {}
    t0 = time.perf_counter()
    dpv = _DOFS_PER_VERTEX[case.family]
    try:
        mesh, rings, fresh = meshes.linear(h, int(memory_limit_bytes // (BYTES_PER_DOF * dpv)))
    except ValueError as exc:
        found = re.search(r"about ([\d,]+) nodes", str(exc))
        if found is None:
            raise DesignError(Problem(size_path, f"load case '{case.name}': cannot mesh plate "
                                      f"'{plate.name}' at {h:g} mm: {exc}",
                                      line_of(size_path) if line_of else None)) from exc
        n = int(found.group(1).replace(",", ""))
        raise DesignError(Problem(size_path, f"load case '{case.name}': a mesh of {h:g} mm "
                                  f"would have about {n:,} nodes (refined at small features) and "
                                  f"{n * dpv:,} unknowns, needing about "
                                  f"{n * dpv * BYTES_PER_DOF / 1e6:,.0f} MB (limit "
                                  f"{memory_limit_bytes / 1e6:,.0f} MB)",
                                  line_of(size_path) if line_of else None,
                                  "use a larger mesh_size_mm")) from exc
    need = mesh.n_nodes * _DOFS_PER_VERTEX[case.family] * BYTES_PER_DOF
    if need > memory_limit_bytes:  # refinement at small features made more nodes than estimated
        raise DesignError(Problem(size_path, f"load case '{case.name}': the mesh of {h:g} mm has "
                                  f"{mesh.n_nodes:,} nodes, needing about {need / 1e6:,.0f} MB "
                                  f"(limit {memory_limit_bytes / 1e6:,.0f} MB)",
                                  line_of(size_path) if line_of else None,
                                  "use a larger mesh_size_mm"))
    quad = meshes.quadratic(h) if case.family == "in_plane" else None
    timings["mesh"] = time.perf_counter() - t0 if fresh else 0.0
    t0 = time.perf_counter()
    mapped = map_case(case, plate, mesh, quad, components=components, vehicle_mass_g=vmass,
                      line_of=line_of)
    dmat, iso = element_matrices(plate, case)
    timings["map"] = time.perf_counter() - t0
    sol, timings["assemble"], timings["solve"], fell_back = _solve_case(
        plate, case, mesh, quad, mapped, dmat, method, line_of)
    t0 = time.perf_counter()
    nodes, tris, disp, vm = _recover(plate, case, mesh, quad, sol.u, dmat)
    defl = np.abs(disp[:, 2]) if case.family == "bending" else np.hypot(disp[:, 0], disp[:, 1])
    i_d, i_s = int(np.argmax(defl)), int(np.argmax(vm))
    max_vm = float(vm[i_s])
    strength = plate.material.strength_mpa
    sf = strength / max_vm if max_vm > 0 else math.inf
    held = nodes[mapped.supported_nodes]
    span = case.limits.span_mm
    if span is None:
        span = 2.0 * float(cKDTree(held).query(nodes)[0].max()) if len(held) else math.inf
    checks, limit_mm = _limits(case, float(defl[i_d]), max_vm, sf, span)
    dpn = 3 if case.family == "bending" else 2
    r = sol.reactions.reshape(-1, dpn)
    reaction = (0.0, 0.0, float(r[:, 0].sum())) if dpn == 3 else (
        float(r[:, 0].sum()), float(r[:, 1].sum()), 0.0)
    notes = list(mapped.notes)
    if fell_back:
        notes.append("multigrid did not converge; the system was solved by direct factorisation")
    if iso and plate.material.orthotropic and case.grain_deg is None:
        notes.append(f"{plate.material.name}: grain direction not given (grain_deg), so isotropic "
                     "values in the weaker, across-grain direction were used; set grain_deg to "
                     "use the orthotropic properties")
    elif iso and _is_wood(plate.material):
        notes.append(f"{plate.material.name}: isotropic E and nu were used (no orthotropic data); "
                     "wood-based sheet is stiffer along the face grain than across it")
    coll = None
    if mapped.collision is not None and case.collision is not None:
        c = mapped.collision
        coll = CollisionResult(c.force_n, c.bumper_travel_mm, c.vehicle_mass_g, c.deceleration_g,
                               case.collision.speed_m_s, case.collision.bumper_stiffness_n_per_mm)
    timings["recover"] = time.perf_counter() - t0
    fields = CaseFields(nodes, tris, disp, defl, vm, rings) if keep_fields else None
    return CaseResult(
        name=case.name, plate=plate.name, family=case.family,
        max_deflection_mm=float(defl[i_d]), at_mm=(float(nodes[i_d, 0]), float(nodes[i_d, 1])),
        max_von_mises_mpa=max_vm, von_mises_at_mm=(float(nodes[i_s, 0]), float(nodes[i_s, 1])),
        strength_mpa=strength, strength_kind=plate.material.strength_kind, safety_factor=sf,
        limit_mm=limit_mm, span_mm=span, checks=checks, passes=all(c.passes for c in checks),
        dofs=sol.dofs, free_dofs=sol.free_dofs, equilibrium_residual=sol.equilibrium_residual,
        method=sol.method, iterations=sol.iterations, mesh_quality=mesh.quality(),
        nodes=len(nodes), elements=mesh.n_triangles, mesh_size_mm=h,
        applied_force_n=mapped.applied_n, reaction_force_n=reaction, isotropic_properties=iso,
        collision=coll, notes=tuple(notes), timings_s=timings, fields=fields)


def analyse_plate(
    plate: Plate,
    cases: Sequence[LoadCase],
    *,
    components: Sequence[Component] = (),
    vehicle_mass_g: float | None = None,
    size_mm: float | None = None,
    method: str = "auto",
    progress: Progress | None = None,
    line_of: Callable[[str], int | None] | None = None,
    memory_limit_bytes: int = DEFAULT_MEMORY_LIMIT_BYTES,
    keep_fields: bool = True,
) -> PlateAnalysis:
    """Run the load cases of one plate.

    cases: parsed LoadCase objects for this plate (others are skipped). components: all
    components (those loaded must sit on this plate). vehicle_mass_g: mass for collisions, g
    (None: this plate times its quantity plus all components). size_mm: element size for every
    case, mm (overrides each case's mesh_size_mm; None: the case's, else bounding-box diagonal
    / 40). method: solver, "auto" | "direct" | "amg". progress: called with a short text before
    each case. line_of: field path -> design-file line, for errors. memory_limit_bytes: refuse
    meshes estimated to need more. keep_fields: keep the mesh fields for plots and exports.
    Raises DesignError for bad input (a region selecting nothing, too large a mesh, supports
    leaving a rigid-body motion free).
    """
    comps = {c.id: c for c in components}
    vmass = vehicle_mass_g if vehicle_mass_g is not None else \
        total_vehicle_mass_g([plate], components)
    meshes = _PlateMeshes(plate)
    out = []
    for case in cases:
        if case.plate != plate.name:
            continue
        if progress is not None:
            progress(f"{plate.name}: {case.name} ({case.family})")
        out.append(_run_case(plate, case, meshes, size_mm, comps, vmass, method,
                             memory_limit_bytes, line_of, keep_fields))
    return PlateAnalysis(plate.name, tuple(out))


def analyse_design(
    design: Any,
    plates: Sequence[Plate],
    *,
    size_mm: float | None = None,
    method: str = "auto",
    progress: Progress | None = None,
    memory_limit_bytes: int = DEFAULT_MEMORY_LIMIT_BYTES,
    loads: LoadInput | None = None,
) -> list[PlateAnalysis]:
    """Run every load case of ``design`` on its built ``plates``.

    Returns one PlateAnalysis per plate that has load cases, in plate order (empty list when
    the design has none). ``loads``: already parsed input (default: parsed here from the
    design). Other arguments as in analyse_plate. Raises DesignError for bad input, with the
    field path and line of the design file.
    """
    if loads is None:
        loads = parse_loads(design, plates)
    vmass = loads.vehicle_mass_g
    if vmass is None:
        vmass = total_vehicle_mass_g(plates, loads.components)
    line_of = getattr(design, "line_of", None)
    out = []
    for plate in plates:
        cases = [c for c in loads.cases if c.plate == plate.name]
        if not cases:
            continue
        try:
            out.append(analyse_plate(plate, cases, components=loads.components,
                                     vehicle_mass_g=vmass, size_mm=size_mm, method=method,
                                     progress=progress, line_of=line_of,
                                     memory_limit_bytes=memory_limit_bytes))
        except DesignError as exc:
            if exc.source:
                raise
            raise DesignError(exc.problems, getattr(design, "source_path", "")) from exc
    return out
