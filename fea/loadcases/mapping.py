"""Supports and loads of a load case -> prescribed dofs, springs and a load vector on a mesh.

Two families:

- ``bending``: DKT plate on the linear mesh, dofs (w, theta_x, theta_y) per node (dof
  ``3 * node + k``, see fea.bending); loads act along z, weights along -z.
- ``in_plane``: plane-stress T6 triangles on the quadratic mesh, dofs (u_x, u_y) per node (dof
  ``2 * node + k``); weights act along the case's ``g_direction``.

Features are found on the mesh by their boundary tags (a tag ``a+b`` marks merged holes and
belongs to both). Forces and moments on a feature are spread over its edges: in bending as
nodal forces ``f_i = l_i (a + b (x_i - x_c) + c (y_i - y_c))`` on w (l_i the tributary edge
length), in plane as the line load ``q(x) = a + c e_z x (x - x_c)``, with x_c the centroid of
the edges. This is the smallest (least-squares) distribution with the requested total force and
moment about x_c, and it is uniform when no moment is asked for.

Units: mm, N, N mm, N/mm, MPa; masses g; densities kg/m^3.
"""

from __future__ import annotations

from collections.abc import Callable, Mapping
from dataclasses import dataclass

import numpy as np
import scipy.sparse as sp

from platewright.fea.elements import bending as dkt
from platewright.fea.elements import membrane
from platewright.fea.elements.quadratic import QuadraticMesh
from platewright.fea.loadcases import supports as ps
from platewright.fea.loadcases.parse import (
    STANDARD_GRAVITY_M_S2,
    Box,
    Component,
    Load,
    LoadCase,
    Support,
    resolve_feature,
)
from platewright.fea.mesh.triangles import Mesh
from platewright.geometry.errors import DesignError, Problem
from platewright.geometry.model import Plate

__all__ = ["MappedCase", "CollisionLoad", "collision_force_n", "map_case", "feature_edge_rows"]

#: kg/m^3 -> kg/mm^3.
_PER_M3_TO_PER_MM3 = 1e-9


@dataclass(frozen=True)
class CollisionLoad:
    """The quasi-static bump load: force_n (N), bumper_travel_mm (mm), vehicle_mass_g (g),
    deceleration_g (peak deceleration in multiples of g), direction (unit (x, y))."""

    force_n: float
    bumper_travel_mm: float
    vehicle_mass_g: float
    deceleration_g: float
    direction: tuple[float, float]


@dataclass(frozen=True)
class MappedCase:
    """A load case on a mesh, ready for fea.solve.solve_system.

    f: (n_dofs,) float loads (N, N mm). fixed_dofs: (p,) int; fixed_values: (p,) float.
    spring_matrix: (n_dofs, n_dofs) CSR (N/mm, N mm/rad) or None. supported_nodes: (s,) int
    nodes held by any support. applied_n: total applied force (Fx, Fy, Fz), N. collision:
    CollisionLoad or None. notes: remarks for the report (e.g. point loads). point_loads: how
    each point load was applied: {asked_mm, applied_mm, offset_mm, how}.
    """

    f: np.ndarray
    fixed_dofs: np.ndarray
    fixed_values: np.ndarray
    spring_matrix: sp.csr_matrix | None
    supported_nodes: np.ndarray
    applied_n: tuple[float, float, float]
    collision: CollisionLoad | None
    notes: tuple[str, ...]
    point_loads: tuple[dict, ...] = ()


def collision_force_n(speed_m_s: float, stiffness_n_per_mm: float, mass_g: float) -> float:
    """Peak force (N) of a mass (g) stopped by a linear spring (N/mm) from a speed (m/s).

    Energy balance m v^2 / 2 = F^2 / (2 k): F = v sqrt(k m). With k in N/mm = 1000 N/m and m in
    g = 0.001 kg the factors cancel: F [N] = v [m/s] sqrt(k [N/mm] m [g]).
    """
    return float(speed_m_s * np.sqrt(stiffness_n_per_mm * mass_g))


class _EdgeView:
    """A subset of boundary edges posing as a mesh for fea.plate_supports (one tag)."""

    def __init__(self, nodes: np.ndarray, edges: np.ndarray) -> None:
        self.nodes = nodes
        self._edges = edges

    def edges_of(self, tag: str) -> np.ndarray:
        return self._edges


class _Mapper:
    def __init__(self, case: LoadCase, plate: Plate, mesh: Mesh, quad: QuadraticMesh | None,
                 line_of: Callable[[str], int | None] | None) -> None:
        self.case, self.plate, self.mesh, self.quad = case, plate, mesh, quad
        self.line_of = line_of or (lambda _p: None)
        self.bending = case.family == "bending"
        if not self.bending and quad is None:
            raise ValueError("an in_plane case needs the quadratic mesh")
        self.nodes = mesh.nodes if self.bending else quad.nodes
        self.dpn = 3 if self.bending else 2
        self.n_dofs = self.dpn * len(self.nodes)
        self.f = np.zeros(self.n_dofs)
        self.fixed: list[np.ndarray] = []
        self.springs: list[sp.csr_matrix] = []
        self.held: list[np.ndarray] = []
        self.notes: list[str] = []
        self.point_loads: list[dict] = []
        self.applied = np.zeros(3)

    def fail(self, path: str, message: str, hint: str = "") -> DesignError:
        return DesignError(Problem(path, message, self.line_of(path), hint))

    # ---- selections
    def edges(self, name: str | None, region: Box | None, path: str) -> np.ndarray:
        rows = feature_edge_rows(self.mesh, self.plate, name, region)
        if rows.size == 0:
            what = f"feature '{name or self.plate.outline.id}'"
            where = f" inside region {region.describe()}" if region is not None else ""
            raise self.fail(path, f"{what} has no mesh edge{where}",
                            "check the feature and region, or use a smaller mesh_size_mm")
        ids = {f.id for f in resolve_feature(self.plate, name)}
        for tag in sorted({self.mesh.tag_names[i] for i in self.mesh.boundary_tags[rows]}):
            others = [t for t in tag.split("+") if t not in ids]
            if others:
                self.notes.append(f"'{name or self.plate.outline.id}' touches "
                                  f"{', '.join(others)}: they share one mesh edge, so a load or "
                                  "support on one acts on the joined edge")
        if self.bending:
            return self.mesh.boundary_edges[rows]
        return np.column_stack([self.mesh.boundary_edges[rows], self.quad.boundary_midpoints[rows]])

    def nearest_node(self, p: tuple[float, float]) -> int:
        xy = self.mesh.nodes  # vertices only: T6 midpoints carry odd consistent loads
        return int(np.argmin(((xy - np.asarray(p)) ** 2).sum(axis=1)))

    def elements_in(self, box: Box | None, path: str) -> np.ndarray:
        tri = self.mesh.triangles
        cen = self.mesh.nodes[tri].mean(axis=1)
        sel = np.ones(len(tri), bool) if box is None else box.contains(cen)
        if not sel.any():
            raise self.fail(path, f"region {box.describe() if box else ''} contains no element",
                            "enlarge the region or use a smaller mesh_size_mm")
        return sel

    # ---- loads
    def spread(self, edges: np.ndarray, force: np.ndarray, moment: np.ndarray, path: str) -> None:
        """Total force (3,) N and moment (3,) N mm (about the edges' centroid) on edges."""
        pts, wts = _edge_quadrature(self.nodes, edges)
        length = wts.sum()
        c = (pts * wts[:, None]).sum(axis=0) / length
        d = pts - c
        if self.bending:
            # Lumped on w: node weight = tributary length.
            nodes, lw = _tributary(edges[:, :2], self.nodes)
            dn = self.nodes[nodes] - c
            sxx, syy, sxy = (lw * dn[:, 0] ** 2).sum(), (lw * dn[:, 1] ** 2).sum(), (
                lw * dn[:, 0] * dn[:, 1]).sum()
            a = force[2] / lw.sum()
            mx, my = moment[0], moment[1]
            m2 = np.array([[sxy, syy], [-sxx, -sxy]])
            bc = np.zeros(2)
            if mx or my:
                bc, *_ = np.linalg.lstsq(m2, np.array([mx, my]), rcond=None)
                if not np.allclose(m2 @ bc, [mx, my], rtol=1e-6, atol=1e-9 * (abs(mx) + abs(my))):
                    raise self.fail(path, "this feature's edges lie on one line and cannot carry "
                                    "a moment about that line", "spread it over a wider feature")
            fz = lw * (a + bc[0] * dn[:, 0] + bc[1] * dn[:, 1])
            np.add.at(self.f, 3 * nodes, fz)
        else:
            j = (wts * (d ** 2).sum(axis=1)).sum()
            a = force[:2] / length
            cz = moment[2] / j if moment[2] else 0.0

            def q(x: np.ndarray, _n: np.ndarray) -> np.ndarray:
                r = x - c
                return a[None, :] + cz * np.column_stack([-r[:, 1], r[:, 0]])

            self.f += membrane.edge_load_vector(self.nodes, edges, q, self.n_dofs)
        self.applied += force

    def point(self, p: tuple[float, float], force: np.ndarray) -> None:
        k = self.nearest_node(p)
        if self.bending:
            self.f[3 * k] += force[2]
        else:
            self.f[2 * k: 2 * k + 2] += force[:2]
        self.applied += force
        at = self.mesh.nodes[k]
        offset = float(np.hypot(at[0] - p[0], at[1] - p[1]))
        how = ("on a mesh node placed at the asked point" if offset <= 1e-9 * max(1.0, abs(p[0]),
                                                                                  abs(p[1]))
               else f"on the nearest mesh node, {offset:.3g} mm from the asked point (the point "
                    "lies in a hole or within a tiny distance of the edge)")
        self.point_loads.append({"asked_mm": [float(p[0]), float(p[1])],
                                 "applied_mm": [float(at[0]), float(at[1])],
                                 "offset_mm": offset, "how": how})
        self.notes.append(f"point load at [{p[0]:g}, {p[1]:g}] mm applied {how}; the stress "
                          "next to it grows as the mesh is refined (left out of the design "
                          "stress), give a footprint or a feature for a design value there")

    def area(self, sel: np.ndarray, force: np.ndarray) -> None:
        """A total force (3,) N spread evenly over the selected elements (m,) bool."""
        tri = self.mesh.triangles if self.bending else self.quad.tri6
        areas = self.mesh.areas_mm2()
        a_sel = areas[sel].sum()
        if self.bending:
            q = np.where(sel, force[2] / a_sel, 0.0)
            fe = dkt.dkt_pressure_load(self.mesh.nodes, self.mesh.triangles, q)
            dofs = (3 * self.mesh.triangles[:, :, None] + np.arange(3)).reshape(-1, 9)
            np.add.at(self.f, dofs.ravel(), fe.ravel())
        else:
            t = self.plate.thickness_mm
            bf = np.where(sel[:, None], force[None, :2] / (a_sel * t), 0.0)
            self.f += membrane.body_force_vector(self.nodes, tri, bf, t)
        self.applied += force

    def weight_vector(self, weight_n: float) -> np.ndarray:
        if self.bending:
            return np.array([0.0, 0.0, -weight_n])
        gx, gy = self.case.g_direction or (0.0, 0.0)
        return np.array([gx * weight_n, gy * weight_n, 0.0])

    def component(self, comp: Component, path: str) -> None:
        w = comp.mass_g * 1e-3 * STANDARD_GRAVITY_M_S2 * self.case.g_factor
        force = self.weight_vector(w)
        if comp.feature is not None:
            self.spread(self.edges(comp.feature, None, path), force, np.zeros(3), path)
        elif comp.footprint_mm is not None:
            (x, y), (lx, ly) = comp.at_mm, comp.footprint_mm
            box = Box(x - lx / 2, x + lx / 2, y - ly / 2, y + ly / 2)
            cen = self.mesh.nodes[self.mesh.triangles].mean(axis=1)
            sel = box.contains(cen)
            if sel.any():
                self.area(sel, force)
            else:
                self.point(comp.at_mm, force)
        else:
            self.point(comp.at_mm, force)

    def load(self, ld: Load, comps: Mapping[str, Component]) -> None:
        f = np.asarray(ld.force_n, float)
        if ld.type == "component":
            self.component(comps[ld.component], ld.path)
        elif ld.type == "force" and ld.at_mm is not None:
            self.point(ld.at_mm, f)
        elif ld.type in ("force", "moment"):
            m = np.asarray(ld.moment_n_mm, float)
            self.spread(self.edges(ld.feature, None, f"{ld.path}.feature"), f, m, ld.path)
        elif ld.type == "edge":
            self.spread(self.edges(ld.feature, ld.region, f"{ld.path}.region_mm"), f,
                        np.zeros(3), ld.path)
        elif ld.type == "pressure":
            sel = self.elements_in(ld.region, f"{ld.path}.region_mm")
            a_sel = self.mesh.areas_mm2()[sel].sum()
            self.area(sel, np.array([0.0, 0.0, -ld.pressure_mpa * a_sel]))

    def self_weight(self) -> None:
        p = self.plate
        rho = p.material.density_kg_m3 * _PER_M3_TO_PER_MM3  # kg/mm^3
        total_n = rho * STANDARD_GRAVITY_M_S2 * self.case.g_factor * p.thickness_mm * \
            self.mesh.area_mm2()
        self.area(np.ones(self.mesh.n_triangles, bool), self.weight_vector(total_n))

    # ---- supports
    def support(self, s: Support) -> None:
        names = s.features or (None,)
        held = np.array([{"x": 0, "y": 1}[d] for d in s.directions])
        if s.at == "points":
            idx = np.array([self.nearest_node(p) for p in s.points_mm])
            for p, k in zip(s.points_mm, idx, strict=True):
                gap = float(np.hypot(*(self.mesh.nodes[k] - np.asarray(p, float))))
                if gap > 1e-9 * max(1.0, float(np.abs(p).max())):
                    self.notes.append(f"support point [{p[0]:g}, {p[1]:g}] mm is held at the "
                                      f"nearest mesh node, {gap:.3g} mm away")
            comps = [0, 1, 2] if (self.bending and s.condition == "clamped") else \
                ([0] if self.bending else held)
            self.fixed.append((self.dpn * idx[:, None] + np.array(comps)).ravel())
            self.held.append(idx)
            return
        edges = np.vstack([self.edges(n, s.region, f"{s.path}.{_field(s)}") for n in names])
        nodes = np.unique(edges)
        self.held.append(nodes)
        if s.at == "edge" and s.condition == "symmetry":
            self.fixed.append(self.symmetry(edges, s))
            return
        if s.at == "edge" or s.mode == "rigid":
            if not self.bending:
                self.fixed.append((2 * nodes[:, None] + held).ravel())
            elif s.at == "edge" and s.condition == "clamped":
                self.fixed.append(ps.clamped(_EdgeView(self.nodes, edges), "sel").fixed_dofs)
            else:  # pinned edge (hard simple support on straight x/y edges) or a rigid rim
                hard = s.at == "edge"
                sup = ps.simply_supported(_EdgeView(self.nodes, edges), "sel", hard=hard)
                self.fixed.append(sup.fixed_dofs)
            return
        for name in names:  # an elastic support: the stiffness is that of each named feature
            ring = self.edges(name, None, f"{s.path}.{_field(s)}")
            if self.bending:
                sup = ps.elastic_ring_support(
                    _EdgeView(self.nodes, ring), "sel", s.stiffness_n_per_mm,
                    rotational_stiffness_nmm_per_rad=s.rotational_stiffness_n_mm_per_rad)
                self.springs.append(sup.spring_matrix)
            else:
                at, share = _consistent_shares(ring, self.nodes, len(self.nodes))
                k = s.stiffness_n_per_mm * share[at]
                rows = np.concatenate([2 * at + c for c in held])
                self.springs.append(sp.csr_matrix((np.tile(k, len(held)), (rows, rows)),
                                                  shape=(self.n_dofs,) * 2))

    def symmetry(self, edges: np.ndarray, s: Support) -> np.ndarray:
        """Dofs held on a mirror line: in plane the displacement across it, in bending the
        rotation about it (no slope across). The edges must lie along x or along y."""
        xy = self.nodes
        d = xy[edges[:, 1]] - xy[edges[:, 0]]
        length = np.hypot(d[:, 0], d[:, 1])
        along_x = np.abs(d[:, 1]) <= 1e-9 * length
        along_y = np.abs(d[:, 0]) <= 1e-9 * length
        if not (along_x.all() or along_y.all()):
            where = "feature" if s.region is None else "region_mm"
            raise self.fail(f"{s.path}.{where}", "a symmetry line must be one straight edge "
                            "along x or along y; the edges selected are not",
                            "select the straight edge on the mirror line with region_mm")
        nodes = np.unique(edges[:, :2] if self.bending else edges)
        if self.bending:  # along x: theta_x = dw/dy = 0; along y: theta_y = -dw/dx = 0
            return 3 * nodes + (1 if along_x.all() else 2)
        return 2 * nodes + (1 if along_x.all() else 0)


def _field(s: Support) -> str:
    """The support's field an error about its edges points at."""
    if s.at == "edge":
        return "feature" if s.region is None else "region_mm"
    return "features" if s.at == "bores" else "feature"


def _tributary(edges: np.ndarray, nodes: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Nodes of (k, 2) edges and their tributary length (half of each adjacent edge), mm."""
    d = nodes[edges[:, 1]] - nodes[edges[:, 0]]
    half = 0.5 * np.hypot(d[:, 0], d[:, 1])
    uniq, inv = np.unique(edges.ravel(), return_inverse=True)
    return uniq, np.bincount(inv, weights=np.repeat(half, 2), minlength=len(uniq))


def _consistent_shares(edges: np.ndarray, nodes: np.ndarray, n: int):
    """Nodes of quadratic edges (k, 3) and their share of the total length (consistent weights
    1/6, 1/6, 2/3 of each edge), summing to 1."""
    d = nodes[edges[:, 1]] - nodes[edges[:, 0]]
    length = np.hypot(d[:, 0], d[:, 1])
    w = np.column_stack([length / 6, length / 6, 2 * length / 3])
    share = np.bincount(edges.ravel(), weights=w.ravel(), minlength=n)
    share /= share.sum()
    return np.flatnonzero(share), share


def _edge_quadrature(nodes: np.ndarray, edges: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Gauss points (q, 2) mm and weights (q,) mm of 3-point rules on straight edges."""
    s, w = np.polynomial.legendre.leggauss(3)
    s, w = 0.5 * (s + 1.0), 0.5 * w
    a, b = nodes[edges[:, 0]], nodes[edges[:, 1]]
    length = np.hypot(*(b - a).T)
    pts = a[:, None, :] + s[None, :, None] * (b - a)[:, None, :]
    return pts.reshape(-1, 2), (length[:, None] * w[None, :]).ravel()


def feature_edge_rows(mesh: Mesh, plate: Plate, name: str | None, region: Box | None = None
                      ) -> np.ndarray:
    """Rows of ``mesh.boundary_edges`` on the features ``name`` stands for (None: the outline)
    whose midpoints lie in ``region`` (None: all): (j,) int. KeyError for an unknown name."""
    ids = {f.id for f in resolve_feature(plate, name)}
    tags = [i for i, t in enumerate(mesh.tag_names) if ids & set(t.split("+"))]
    rows = np.flatnonzero(np.isin(mesh.boundary_tags, tags))
    if region is not None and rows.size:
        mid = mesh.nodes[mesh.boundary_edges[rows]].mean(axis=1)
        rows = rows[region.contains(mid)]
    return rows


def map_case(
    case: LoadCase,
    plate: Plate,
    mesh: Mesh,
    quad: QuadraticMesh | None = None,
    *,
    components: Mapping[str, Component],
    vehicle_mass_g: float,
    line_of: Callable[[str], int | None] | None = None,
) -> MappedCase:
    """Map the supports and loads of ``case`` onto ``mesh`` (bending) or ``quad`` (in_plane).

    components: id -> Component. vehicle_mass_g: mass used by a collision without its own, g.
    line_of: field path -> design-file line, for error messages. Raises DesignError (path and
    line) when a feature or region selects no mesh edge or element.
    """
    mp = _Mapper(case, plate, mesh, quad, line_of)
    for s in case.supports:
        mp.support(s)
    if case.self_weight:
        mp.self_weight()
    for ld in case.loads:
        mp.load(ld, components)
    coll = None
    if case.collision is not None:
        c = case.collision
        mass = c.vehicle_mass_g if c.vehicle_mass_g is not None else vehicle_mass_g
        force = collision_force_n(c.speed_m_s, c.bumper_stiffness_n_per_mm, mass)
        vec = np.array([c.direction[0] * force, c.direction[1] * force, 0.0])
        mp.spread(mp.edges(c.feature, c.region, f"{c.path}.region_mm"), vec, np.zeros(3), c.path)
        coll = CollisionLoad(force, force / c.bumper_stiffness_n_per_mm, mass,
                             force / (mass * 1e-3 * STANDARD_GRAVITY_M_S2), c.direction)
    fixed = np.unique(np.concatenate(mp.fixed)) if mp.fixed else np.zeros(0, np.int64)
    spring = None
    if mp.springs:
        spring = mp.springs[0]
        for extra in mp.springs[1:]:
            spring = spring + extra
        spring = sp.csr_matrix(spring)
    held = np.unique(np.concatenate(mp.held)) if mp.held else np.zeros(0, np.int64)
    return MappedCase(mp.f, fixed, np.zeros(fixed.shape), spring, held,
                      tuple(float(v) for v in mp.applied), coll, tuple(dict.fromkeys(mp.notes)),
                      tuple(mp.point_loads))
