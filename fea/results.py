"""Result objects of the plate analysis (frozen), and their JSON-ready report dictionaries.

Every figure is a finite-element ESTIMATE for an ideal linear-elastic plate; ``ESTIMATE_NOTE``
says so in every report. Units: mm, N, MPa, g, seconds; array shapes in the field docs.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from platewright.fea.mesh.triangles import MeshQuality

__all__ = ["ESTIMATE_NOTE", "LimitCheck", "CollisionResult", "CaseFields", "CaseResult",
           "ErrorEstimate", "MaterialUsed", "PlateAnalysis", "SingularValue"]

#: Printed with every set of results.
ESTIMATE_NOTE = (
    "finite-element estimates for an ideal linear-elastic plate (no fastener slip, cut-edge "
    "defects, creep, impact or material scatter): confirm by testing a real part before "
    "relying on it where a failure could hurt someone"
)


def _num(v: float | None, digits: int = 6) -> float | None:
    """A float for JSON: rounded to ``digits`` significant digits; None for None/inf/nan."""
    if v is None or not math.isfinite(v):
        return None
    return float(f"{v:.{digits}g}")


@dataclass(frozen=True)
class LimitCheck:
    """One limit: ``name`` (max_deflection_mm, span_ratio, min_safety_factor,
    max_von_mises_mpa), the ``value`` found and the ``limit`` set (in ``unit``), ``passes``."""

    name: str
    value: float
    limit: float
    unit: str
    passes: bool

    def to_report(self) -> dict[str, Any]:
        """JSON-ready dict."""
        return {"name": self.name, "value": _num(self.value), "limit": _num(self.limit),
                "unit": self.unit, "passes": self.passes}


@dataclass(frozen=True)
class CollisionResult:
    """A bump: peak force_n (N) = v sqrt(k m), bumper_travel_mm (mm) = F / k, vehicle_mass_g (g),
    deceleration_g (peak deceleration, multiples of g), speed_m_s, bumper_stiffness_n_per_mm."""

    force_n: float
    bumper_travel_mm: float
    vehicle_mass_g: float
    deceleration_g: float
    speed_m_s: float
    bumper_stiffness_n_per_mm: float

    def to_report(self) -> dict[str, Any]:
        """JSON-ready dict."""
        return {k: _num(getattr(self, k)) for k in (
            "force_n", "bumper_travel_mm", "vehicle_mass_g", "deceleration_g", "speed_m_s",
            "bumper_stiffness_n_per_mm")}


@dataclass(frozen=True)
class SingularValue:
    """A point where the ideal stress is infinite (fea.singular), with the value found there.

    kind: re-entrant corner | support end | point support | point load. at_mm: (x, y), mm.
    von_mises_mpa: the largest von Mises stress of the elements meeting at the mesh node there,
    MPa - it depends on the mesh (it grows as the mesh is refined where the ideal value is
    infinite) and is never a design value. note: plain words. angle_deg: material angle
    of a re-entrant corner, degrees (else None). fillet_radius_mm: suggested corner radius, mm
    (else None).
    """

    kind: str
    at_mm: tuple[float, float]
    von_mises_mpa: float
    note: str
    angle_deg: float | None = None
    fillet_radius_mm: float | None = None

    def to_report(self) -> dict[str, Any]:
        """JSON-ready dict."""
        return {"kind": self.kind, "at_mm": [_num(self.at_mm[0]), _num(self.at_mm[1])],
                "von_mises_mpa": _num(self.von_mises_mpa), "mesh_dependent": True,
                "angle_deg": _num(self.angle_deg, 4),
                "fillet_radius_mm": _num(self.fillet_radius_mm, 4), "note": self.note}


@dataclass(frozen=True)
class ErrorEstimate:
    """Estimated discretisation errors of the reported peaks (fea.adaptive).

    deflection_mm, von_mises_mpa: estimated error of max_deflection_mm and of the design von
    Mises stress (None: not estimated). target_pct: the target, % of each value. converged:
    both at or below the target. passes: meshes solved. unknowns: unknowns of each mesh.
    smallest_element_mm: smallest element edge of the last mesh (about), mm. stop_reason.
    """

    deflection_mm: float | None
    von_mises_mpa: float | None
    target_pct: float
    converged: bool
    passes: int
    unknowns: tuple[int, ...]
    smallest_element_mm: float
    stop_reason: str

    @staticmethod
    def _pct(err: float | None, value: float) -> float | None:
        if err is None:
            return None
        return 100.0 * err / value if value > 0 else 0.0

    def to_report(self, deflection_mm: float, von_mises_mpa: float) -> dict[str, Any]:
        """JSON-ready dict; the values the estimates belong to are passed in."""
        return {"deflection_mm": _num(self.deflection_mm, 3),
                "deflection_pct": _num(self._pct(self.deflection_mm, deflection_mm), 3),
                "von_mises_mpa": _num(self.von_mises_mpa, 3),
                "von_mises_pct": _num(self._pct(self.von_mises_mpa, von_mises_mpa), 3),
                "target_pct": _num(self.target_pct), "converged": self.converged,
                "passes": self.passes, "unknowns": list(self.unknowns),
                "smallest_element_mm": _num(self.smallest_element_mm, 3),
                "method": "stress: superconvergent patch recovery (Zienkiewicz and Zhu 1992), "
                          "its pointwise gap and the change between meshes refined where the "
                          "stress stands; deflection: change between meshes a factor sqrt(2) "
                          "apart (Richardson, order 2); changes times 1.5 (Roache's grid "
                          "convergence index)",
                "stop_reason": self.stop_reason}


@dataclass(frozen=True)
class MaterialUsed:
    """The elastic constants a case was solved with: key and name of the material,
    youngs_modulus_mpa and poisson_ratio (the isotropic values, or E1 and nu12 when the
    orthotropic data were used), orthotropic: {E1_mpa, E2_mpa, nu12, G12_mpa, grain_deg} or
    None, strength_mpa and strength_kind."""

    key: str
    name: str
    youngs_modulus_mpa: float
    poisson_ratio: float
    orthotropic: dict[str, float] | None
    strength_mpa: float
    strength_kind: str

    def to_report(self) -> dict[str, Any]:
        """JSON-ready dict."""
        return {"key": self.key, "name": self.name,
                "youngs_modulus_mpa": _num(self.youngs_modulus_mpa),
                "poisson_ratio": _num(self.poisson_ratio),
                "orthotropic": None if self.orthotropic is None else
                {k: _num(v) for k, v in self.orthotropic.items()},
                "strength_mpa": _num(self.strength_mpa), "strength_kind": self.strength_kind}


@dataclass(frozen=True)
class CaseFields:
    """Fields on the mesh for plots and exports (linear triangles; a T6 mesh is split 4:1).

    nodes_mm: (n, 2) float. triangles: (m, 3) int, counter-clockwise. displacement_mm: (n, 3)
    float (u_x, u_y, w). deflection_mm: (n,) float, |w| in bending, |(u_x, u_y)| in plane.
    von_mises_mpa: (n,) float (bending: on the more stressed face). rings_mm: the plate's
    boundary rings (outline first, then holes), each (k, 2) float.
    """

    nodes_mm: np.ndarray
    triangles: np.ndarray
    displacement_mm: np.ndarray
    deflection_mm: np.ndarray
    von_mises_mpa: np.ndarray
    rings_mm: tuple[np.ndarray, ...]


@dataclass(frozen=True)
class CaseResult:
    """The outcome of one load case on one plate.

    name, plate, family (bending | in_plane). max_deflection_mm and at_mm (x, y) where it
    occurs. max_von_mises_mpa and von_mises_at_mm: the DESIGN stress - the largest recovered
    von Mises stress at least exclusion_radius_mm from every singular point (never a singular
    value) - and where it occurs. strength_mpa / strength_kind of the material; safety_factor
    = strength / design stress (inf when unstressed). limit_mm: the
    governing deflection limit (None when none is set); span_mm: span used by span_ratio.
    checks: the limits set, passes: all of them met (True when none is set). dofs, free_dofs,
    equilibrium_residual (dimensionless), method (direct | amg), iterations. mesh_quality,
    nodes, elements, mesh_size_mm. applied_force_n (Fx, Fy, Fz) and reaction_force_n, N.
    isotropic_properties: True when isotropic E and nu were used (no orthotropic data).
    collision: CollisionResult or None. notes: remarks. timings_s: stage -> seconds.
    fields: CaseFields for plots and exports. solver_backward_error: normwise backward error
    of the linear solve (dimensionless, ~1e-16 for a stable solve; see fea.solve).
    singular_points: SingularValue per point where the ideal stress is infinite.
    exclusion_radius_mm: radius of the disc around each left out of the design stress, mm.
    error_estimate: ErrorEstimate of the two peaks. material_used: MaterialUsed.
    point_loads: how each point load was applied ({asked_mm, applied_mm, offset_mm, how}).
    """

    name: str
    plate: str
    family: str
    max_deflection_mm: float
    at_mm: tuple[float, float]
    max_von_mises_mpa: float
    von_mises_at_mm: tuple[float, float]
    strength_mpa: float
    strength_kind: str
    safety_factor: float
    limit_mm: float | None
    span_mm: float
    checks: tuple[LimitCheck, ...]
    passes: bool
    dofs: int
    free_dofs: int
    equilibrium_residual: float
    method: str
    iterations: int
    mesh_quality: MeshQuality
    nodes: int
    elements: int
    mesh_size_mm: float
    applied_force_n: tuple[float, float, float]
    reaction_force_n: tuple[float, float, float]
    isotropic_properties: bool
    collision: CollisionResult | None
    notes: tuple[str, ...]
    timings_s: dict[str, float] = field(default_factory=dict)
    fields: CaseFields | None = field(default=None, repr=False, compare=False)
    solver_backward_error: float = 0.0
    singular_points: tuple[SingularValue, ...] = ()
    exclusion_radius_mm: float = 0.0
    error_estimate: ErrorEstimate | None = None
    material_used: MaterialUsed | None = None
    point_loads: tuple[dict[str, Any], ...] = ()

    @property
    def design_von_mises_mpa(self) -> float:
        """The design stress, MPa: the largest von Mises stress outside the exclusion discs
        around the singular points (the same figure as max_von_mises_mpa)."""
        return self.max_von_mises_mpa

    def to_report(self) -> dict[str, Any]:
        """JSON-ready dict for ``plates[].fea.load_cases[]`` of report.json (schema 1)."""
        q = self.mesh_quality
        return {
            "name": self.name,
            "family": self.family,
            "max_deflection_mm": _num(self.max_deflection_mm),
            "at_mm": [_num(self.at_mm[0]), _num(self.at_mm[1])],
            "limit_mm": _num(self.limit_mm),
            "max_von_mises_mpa": _num(self.max_von_mises_mpa),
            "design_von_mises_mpa": _num(self.max_von_mises_mpa),
            "von_mises_at_mm": [_num(self.von_mises_at_mm[0]), _num(self.von_mises_at_mm[1])],
            "exclusion_radius_mm": _num(self.exclusion_radius_mm, 4),
            "singular_points": [p.to_report() for p in self.singular_points],
            "error_estimate": None if self.error_estimate is None else
            self.error_estimate.to_report(self.max_deflection_mm, self.max_von_mises_mpa),
            "material_used": None if self.material_used is None else
            self.material_used.to_report(),
            "point_loads": [dict(p) for p in self.point_loads],
            "safety_factor": _num(self.safety_factor, 4),
            "strength_mpa": _num(self.strength_mpa),
            "strength_kind": self.strength_kind,
            "passes": self.passes,
            "limits": [c.to_report() for c in self.checks],
            "span_mm": _num(self.span_mm),
            "dofs": self.dofs,
            "equilibrium_residual": _num(self.equilibrium_residual, 3),
            "solver": {"method": self.method, "iterations": self.iterations,
                       "free_dofs": self.free_dofs,
                       "backward_error": _num(self.solver_backward_error, 3)},
            "mesh": {"nodes": self.nodes, "elements": self.elements,
                     "size_mm": _num(self.mesh_size_mm),
                     "min_angle_deg": _num(q.min_angle_deg, 4),
                     "max_aspect_ratio": _num(q.max_aspect_ratio, 4),
                     "count_below_20_deg": q.count_below_20_deg},
            "applied_force_n": [_num(v) for v in self.applied_force_n],
            "reaction_force_n": [_num(v) for v in self.reaction_force_n],
            "isotropic_properties": self.isotropic_properties,
            "collision": None if self.collision is None else self.collision.to_report(),
            "notes": list(self.notes),
            "timings_s": {k: _num(v, 3) for k, v in self.timings_s.items()},
        }


@dataclass(frozen=True)
class PlateAnalysis:
    """All load cases of one plate: ``plate`` name, ``cases`` (CaseResult, file order)."""

    plate: str
    cases: tuple[CaseResult, ...]

    @property
    def passes(self) -> bool:
        """True when every case meets its limits."""
        return all(c.passes for c in self.cases)

    def to_report(self) -> dict[str, Any]:
        """JSON-ready dict for ``plates[].fea`` of report.json: ``{"load_cases": [...], ...}``."""
        return {"load_cases": [c.to_report() for c in self.cases], "passes": self.passes,
                "note": ESTIMATE_NOTE}
