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

from platewright.fea.adaptive import (
    DEFAULT_MAX_REFINEMENTS,
    DEFAULT_TARGET_PCT,
    OverBudget,
    converge,
)
from platewright.fea.case_pass import PassResult, element_matrices, run_pass, support_layout
from platewright.fea.loadcases.parse import Component, LoadCase, LoadInput, parse_loads
from platewright.fea.mesh.triangles import Mesh
from platewright.fea.results import (
    CaseFields,
    CaseResult,
    CollisionResult,
    ErrorEstimate,
    LimitCheck,
    MaterialUsed,
    PlateAnalysis,
    SingularValue,
)
from platewright.fea.singular import (
    load_region_ends,
    point_positions,
    region_ends,
    singular_points,
)
from platewright.geometry.errors import DesignError, Problem
from platewright.geometry.model import Material, Plate
from platewright.geometry.plate.mass import mass_properties

__all__ = [
    "BYTES_PER_DOF",
    "DEFAULT_MEMORY_LIMIT_BYTES",
    "analyse_design",
    "analyse_plate",
    "total_vehicle_mass_g",
    "element_matrices",
    "estimate_memory_bytes",
    "support_layout",
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
    """Meshes of a plate, built on demand and kept: boundary rings per (element size, local
    size points), one mesh per (size, fixed points, local size points)."""

    #: Growth of the local sizes away from a refinement point, mm per mm (the mesher's default).
    GRADING = 0.3

    def __init__(self, plate: Plate) -> None:
        self.plate = plate
        self._rings: dict[tuple, list] = {}
        self._lin: dict[tuple, Mesh] = {}

    def rings(self, size_mm: float, size_points: np.ndarray | None = None):
        """The plate's tagged boundary rings sampled for ``size_mm`` and the local sizes
        ``size_points`` (k, 3) [x, y, size] mm (fea.mesh.plate_input)."""
        local = np.zeros((0, 3)) if size_points is None else np.asarray(size_points, float)
        key = (size_mm, local.tobytes())
        if key not in self._rings:
            from platewright.fea.mesh.plate_input import plate_rings

            size_at = None
            if len(local):
                def size_at(xy: np.ndarray) -> np.ndarray:
                    d = np.hypot(xy[:, None, 0] - local[None, :, 0],
                                 xy[:, None, 1] - local[None, :, 1])
                    return (local[None, :, 2] + self.GRADING * d).min(axis=1)

            self._rings[key] = plate_rings(self.plate, size_mm, size_at)
        return self._rings[key]

    def outline(self, size_mm: float, size_points: np.ndarray | None = None
                ) -> tuple[np.ndarray, ...]:
        """Boundary rings (outline first, then holes) as (k, 2) float arrays, mm."""
        return tuple(np.asarray(r.points_mm, float)
                     for r in sorted(self.rings(size_mm, size_points), key=lambda r: r.is_hole))

    def linear(self, size_mm: float, max_nodes: int, fixed_mm: np.ndarray | None = None,
               size_points: np.ndarray | None = None) -> tuple[Mesh, list, bool]:
        """(mesh, rings, newly built) for an element size, with nodes at ``fixed_mm`` (p, 2)
        and local refinement ``size_points`` (k, 3) [x, y, size], mm."""
        fixed = np.zeros((0, 2)) if fixed_mm is None else np.asarray(fixed_mm, float)
        local = np.zeros((0, 3)) if size_points is None else np.asarray(size_points, float)
        key = (size_mm, fixed.tobytes(), local.tobytes())
        rings = self.rings(size_mm, local)
        if key in self._lin:
            return self._lin[key], rings, False
        from platewright.fea.mesh.mesher import mesh_rings

        mesh = mesh_rings(rings, size_mm, max_nodes=max_nodes, fixed_points_mm=fixed,
                          size_points=local, grading=self.GRADING)
        self._lin[key] = mesh
        return mesh, rings, True


def _default_size_mm(plate: Plate) -> float:
    x0, y0, x1, y1 = plate.outline.contours[0].bbox()
    return float(math.hypot(x1 - x0, y1 - y0) / 40.0)


def _is_wood(m: Material) -> bool:
    text = f"{m.key} {m.name}".lower()
    return any(w in text for w in _WOOD_WORDS)


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


def _memory_refusal(case: LoadCase, h: float, verts: int, dofs: int, need: int, limit: int,
                    line_of) -> DesignError:
    size_path = f"{case.path}.mesh_size_mm"
    smallest = h * math.sqrt(need / limit)
    return DesignError(Problem(size_path, f"load case '{case.name}': a mesh of {h:g} mm would "
                               f"have about {verts:,} nodes and {dofs:,} unknowns, needing "
                               f"about {need / 1e6:,.0f} MB (limit {limit / 1e6:,.0f} MB)",
                               line_of(size_path) if line_of else None,
                               f"use mesh_size_mm of at least {smallest:.3g}"))


def _mesh_refusal(case: LoadCase, plate: Plate, h: float, exc: Exception, dpv: int, limit: int,
                  line_of) -> DesignError:
    size_path = f"{case.path}.mesh_size_mm"
    found = re.search(r"about ([\d,]+) nodes", str(exc))
    if found is None:
        return DesignError(Problem(size_path, f"load case '{case.name}': cannot mesh plate "
                                   f"'{plate.name}' at {h:g} mm: {exc}",
                                   line_of(size_path) if line_of else None))
    n = int(found.group(1).replace(",", ""))
    return DesignError(Problem(size_path, f"load case '{case.name}': a mesh of {h:g} mm "
                               f"would have about {n:,} nodes (refined at small features) and "
                               f"{n * dpv:,} unknowns, needing about "
                               f"{n * dpv * BYTES_PER_DOF / 1e6:,.0f} MB (limit "
                               f"{limit / 1e6:,.0f} MB)",
                               line_of(size_path) if line_of else None,
                               "use a larger mesh_size_mm"))


def _material_used(plate: Plate, case: LoadCase, iso: bool) -> MaterialUsed:
    m = plate.material
    ortho = None
    e, nu = m.youngs_modulus_mpa, m.poisson_ratio
    if not iso and m.orthotropic:
        o = m.orthotropic
        ortho = {k: float(o[k]) for k in ("E1_mpa", "E2_mpa", "nu12", "G12_mpa")}
        ortho["grain_deg"] = float(case.grain_deg or 0.0)
        e, nu = ortho["E1_mpa"], ortho["nu12"]
    return MaterialUsed(m.key, m.name, float(e), float(nu), ortho, float(m.strength_mpa),
                        m.strength_kind)


def _run_case(plate: Plate, case: LoadCase, meshes: _PlateMeshes, size_mm: float | None,
              components: Mapping[str, Component], vmass: float, method: str,
              memory_limit_bytes: int, line_of, keep_fields: bool) -> CaseResult:
    h = float(size_mm or case.mesh_size_mm or _default_size_mm(plate))
    area = mass_properties(plate).area_mm2
    verts, dofs, need = estimate_memory_bytes(area, h, case.family)
    size_path = f"{case.path}.mesh_size_mm"
    x0, y0, x1, y1 = plate.outline.contours[0].bbox()
    across = math.hypot(x1 - x0, y1 - y0)
    if h > across:  # size_mm comes from the option --mesh-size-mm
        raise DesignError(Problem("--mesh-size-mm" if size_mm else size_path,
                                  f"load case '{case.name}': an element size of "
                                  f"{h:g} mm is larger than plate '{plate.name}' ({across:.4g} mm "
                                  "across its bounding box)",
                                  line_of(size_path) if line_of and not size_mm else None,
                                  f"use at most {across:.4g} mm (default: "
                                  f"{_default_size_mm(plate):.3g} mm)"))
    if need > memory_limit_bytes:
        raise _memory_refusal(case, h, verts, dofs, need, memory_limit_bytes, line_of)
    dpv = _DOFS_PER_VERTEX[case.family]
    max_nodes = int(memory_limit_bytes // (BYTES_PER_DOF * dpv))
    t_start = time.perf_counter()
    timings = {"mesh": 0.0, "map": 0.0, "assemble": 0.0, "solve": 0.0, "recover": 0.0}
    try:
        rings0 = meshes.rings(h)
    except ValueError as exc:
        raise _mesh_refusal(case, plate, h, exc, dpv, memory_limit_bytes, line_of) from exc
    singular = singular_points(plate, case, components, rings0)
    radius = float(case.exclusion_radius_mm if case.exclusion_radius_mm is not None
                   else plate.thickness_mm)
    sup_pts, load_pts = point_positions(case, components)
    def fixed_points(rings) -> np.ndarray:
        """Mesh nodes wanted: point supports and loads, and where held or loaded stretches
        of edge end on these rings (so a support or edge load starts exactly there)."""
        ends = [p for s in case.supports if s.at == "edge"
                for p in region_ends(rings, plate, s.features[0] if s.features else None,
                                     s.region)]
        return np.array(sup_pts + load_pts + ends + load_region_ends(rings, plate, case),
                        dtype=float).reshape(-1, 2)

    flags: dict[str, bool] = {"iso": True, "fell_back": False}
    used: list[tuple[float, np.ndarray]] = []

    def solve(size: float, size_points: np.ndarray) -> PassResult:
        t0 = time.perf_counter()
        try:
            fixed = fixed_points(meshes.rings(size, size_points))
            mesh, _rings, fresh = meshes.linear(size, max_nodes, fixed, size_points)
        except ValueError as exc:
            if size != h or len(size_points):
                raise OverBudget(str(exc)) from exc
            raise _mesh_refusal(case, plate, h, exc, dpv, memory_limit_bytes, line_of) from exc
        if mesh.n_nodes * dpv * BYTES_PER_DOF > memory_limit_bytes:
            if size != h or len(size_points):
                raise OverBudget("refined mesh over the memory limit")
            need_now = mesh.n_nodes * dpv * BYTES_PER_DOF
            size_path = f"{case.path}.mesh_size_mm"
            raise DesignError(Problem(size_path, f"load case '{case.name}': the mesh of {h:g} mm "
                                      f"has {mesh.n_nodes:,} nodes, needing about "
                                      f"{need_now / 1e6:,.0f} MB (limit "
                                      f"{memory_limit_bytes / 1e6:,.0f} MB)",
                                      line_of(size_path) if line_of else None,
                                      "use a larger mesh_size_mm"))
        timings["mesh"] += time.perf_counter() - t0 if fresh else 0.0
        ps, iso, fell_back = run_pass(plate, case, mesh, components=components,
                                      vehicle_mass_g=vmass, method=method, line_of=line_of)
        flags["iso"] = iso
        flags["fell_back"] |= fell_back
        for k, v in ps.timings_s.items():
            timings[k] = timings.get(k, 0.0) + v
        used.append((size, size_points))
        return ps

    def fits(size: float) -> bool:
        return estimate_memory_bytes(area, size, case.family)[2] <= memory_limit_bytes

    max_ref = case.max_refinements if case.max_refinements is not None \
        else DEFAULT_MAX_REFINEMENTS
    target = case.error_target_pct if case.error_target_pct is not None else DEFAULT_TARGET_PCT
    in_plane_points = [p for p in singular if case.family == "in_plane"
                       and p.kind in ("point load", "point support")]
    # Local refinement stops at a fraction of the sheet thickness: detail much finer says
    # nothing a real cut edge keeps, and the stiffness of far smaller elements only spoils the
    # conditioning (common practice). The plate element's moments converge at first order
    # only, so bending may go four times finer than plane stress.
    floor = plate.thickness_mm / (64.0 if case.family == "bending" else 16.0)
    conv = converge(solve, h, singular, radius, deflection_excluded=in_plane_points,
                    target_pct=target, max_refinements=max_ref, fits=fits, floor_mm=floor)
    last = conv.passes[-1]
    sol, mapped, mesh = last.solution, last.mapped, last.mesh
    nodes, tris, disp, defl, vm = (last.nodes_mm, last.triangles, last.displacement_mm,
                                   last.deflection_mm, last.von_mises_mpa)
    dp, fp = conv.design[-1], conv.deflection[-1]
    max_vm = dp.value
    strength = plate.material.strength_mpa
    sf = strength / max_vm if max_vm > 0 else math.inf
    held = nodes[mapped.supported_nodes]
    span = case.limits.span_mm
    if span is None:
        span = 2.0 * float(cKDTree(held).query(nodes)[0].max()) if len(held) else math.inf
    checks, limit_mm = _limits(case, fp.value, max_vm, sf, span)
    dpn = 3 if case.family == "bending" else 2
    r = sol.reactions.reshape(-1, dpn)
    reaction = (0.0, 0.0, float(r[:, 0].sum())) if dpn == 3 else (
        float(r[:, 0].sum()), float(r[:, 1].sum()), 0.0)
    iso = flags["iso"]
    notes = list(mapped.notes)
    if flags["fell_back"]:
        notes.append("multigrid did not converge; the system was solved by direct factorisation")
    if iso and plate.material.orthotropic and case.grain_deg is None:
        notes.append(f"{plate.material.name}: grain direction not given (grain_deg), so isotropic "
                     "values in the weaker, across-grain direction were used; set grain_deg to "
                     "use the orthotropic properties")
    elif iso and _is_wood(plate.material):
        notes.append(f"{plate.material.name}: isotropic E and nu were used (no orthotropic data); "
                     "wood-based sheet is stiffer along the face grain than across it")
    tree = cKDTree(nodes)
    sing = tuple(SingularValue(p.kind, p.at_mm, float(last.raw_max_mpa[tree.query(p.at_mm)[1]]),
                               p.note, p.angle_deg, p.fillet_radius_mm) for p in singular)
    if singular:
        notes.append(f"the design stress leaves out a disc of {radius:g} mm radius around each of "
                     f"{len(singular)} point(s) where the ideal stress is infinite (see singular "
                     "points); the safety factor never rests on those values")
    if in_plane_points:
        notes.append("in plane, the displacement under a point load or support is unbounded "
                     "too: the largest deflection leaves out the same discs")
    if not conv.converged:
        notes.append(f"the error estimates did not reach the {target:g} % target "
                     f"({conv.stop_reason}); the figures carry the estimates shown")
    est = ErrorEstimate(conv.deflection_error, conv.stress_error, target, conv.converged,
                        len(conv.passes), tuple(int(ps.solution.dofs) for ps in conv.passes),
                        float(last.element_size_mm.min()), conv.stop_reason)
    coll = None
    if mapped.collision is not None and case.collision is not None:
        c = mapped.collision
        coll = CollisionResult(c.force_n, c.bumper_travel_mm, c.vehicle_mass_g, c.deceleration_g,
                               case.collision.speed_m_s, case.collision.bumper_stiffness_n_per_mm)
    timings["total"] = time.perf_counter() - t_start
    fields = CaseFields(nodes, tris, disp, defl, vm, meshes.outline(*used[-1])) \
        if keep_fields else None
    return CaseResult(
        name=case.name, plate=plate.name, family=case.family,
        max_deflection_mm=fp.value, at_mm=fp.at_mm,
        max_von_mises_mpa=max_vm, von_mises_at_mm=dp.at_mm,
        strength_mpa=strength, strength_kind=plate.material.strength_kind, safety_factor=sf,
        limit_mm=limit_mm, span_mm=span, checks=checks, passes=all(c.passes for c in checks),
        dofs=sol.dofs, free_dofs=sol.free_dofs, equilibrium_residual=sol.equilibrium_residual,
        method=sol.method, iterations=sol.iterations, mesh_quality=mesh.quality(),
        nodes=len(nodes), elements=mesh.n_triangles, mesh_size_mm=h,
        applied_force_n=mapped.applied_n, reaction_force_n=reaction, isotropic_properties=iso,
        collision=coll, notes=tuple(notes), timings_s=timings, fields=fields,
        solver_backward_error=sol.backward_error, singular_points=sing,
        exclusion_radius_mm=radius, error_estimate=est,
        material_used=_material_used(plate, case, iso), point_loads=mapped.point_loads)


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
