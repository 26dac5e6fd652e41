"""Result types of a lightening run and their ``lightening`` section of report.json.

Masses in g, lengths mm, times s. Every figure from the finite-element check is an ESTIMATE to
be confirmed by test (fea.results.ESTIMATE_NOTE).
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from platewright.fea.lighten.budget import budget_use
from platewright.fea.lighten.keep_outs import KeepOut
from platewright.fea.results import ESTIMATE_NOTE, PlateAnalysis
from platewright.geometry.model import Feature, Plate

__all__ = ["Candidate", "DensityField", "LighteningResult"]


def _num(v: float | None, digits: int = 6) -> float | None:
    if v is None or not math.isfinite(v):
        return None
    return float(round(v, digits))


@dataclass(frozen=True)
class Candidate:
    """One verified candidate of the search.

    level: the search level, the share of the design region (lightest density first) that
    may become holes, dimensionless in [0, 1]. holes:
    number of holes. mass_g: plate mass with them, g. passes: every case met its limits (real
    geometry FE) and no rule failed for the new holes. worst: the case that limited it ("" when
    it passed). seconds: time to make and verify it, s.
    """

    level: float
    holes: int
    mass_g: float
    passes: bool
    worst: str = ""
    seconds: float = 0.0


@dataclass(frozen=True)
class DensityField:
    """The optimised material layout the holes come from: nodes (n, 2) float mm, triangles
    (m, 3) int, element densities (m,) float in [0, 1], the optimiser's iterations, the share
    of the design region it keeps (volume_fraction) and the share of the plate's mass its grey
    densities remove (saved_fraction: sum over the design region of (1 - density) x element
    volume, over the plate's volume); curve: (budget, saved_fraction) of the continuous optimum
    at more budgets, when asked."""

    nodes: np.ndarray
    triangles: np.ndarray
    densities: np.ndarray
    iterations: int = 0
    volume_fraction: float = 1.0
    saved_fraction: float = 0.0
    curve: tuple[tuple[float, float], ...] = ()


@dataclass(frozen=True)
class LighteningResult:
    """The outcome of lightening one plate in one style.

    plate: the plate as designed. lightened: the plate with the kept holes added as Features of
    kind ``lightening`` (the same as ``plate`` when no candidate passed). holes: those Features.
    style: "organic" | "pattern" (with ``pattern_shape``). before, after: the real-geometry FE
    analyses of both plates (``after`` verifies every suggestion; it is ``before`` when no holes
    were kept). mass_before_g, mass_after_g: g. cut_length_before_mm, cut_length_after_mm: total
    cut path, mm. pierces_before, pierces_after. candidates: every verified candidate in search
    order. optimiser_iterations: SIMP updates made. volume_fraction: the SIMP bound on the design
    region. design_region_fraction: design region area / plate area. timings_s: stage -> s.
    notes: what the reader must know (e.g. why no holes were kept). density: the DensityField
    the holes came from, or None when no optimisation ran (not written to the report).
    deflection_budget: the stiffness budget asked for (None: the cases' limits only);
    case_budgets: case -> the budget applied (cut to the case's own deflection limit).
    grey_saved_fraction: the mass share the continuous (grey) optimum removes in the same design
    region at the same budget (None when no optimisation ran). keep_outs: the keep-out zones;
    design_region_mm2: the design region's area.
    """

    plate: Plate
    lightened: Plate
    holes: tuple[Feature, ...]
    style: str
    before: PlateAnalysis
    after: PlateAnalysis
    mass_before_g: float
    mass_after_g: float
    cut_length_before_mm: float
    cut_length_after_mm: float
    pierces_before: int
    pierces_after: int
    candidates: tuple[Candidate, ...]
    optimiser_iterations: int
    volume_fraction: float
    design_region_fraction: float
    pattern_shape: str = ""
    timings_s: Mapping[str, float] = field(default_factory=dict)
    notes: tuple[str, ...] = ()
    density: DensityField | None = field(default=None, repr=False, compare=False)
    deflection_budget: float | None = None
    case_budgets: Mapping[str, float] = field(default_factory=dict)
    grey_saved_fraction: float | None = None
    keep_outs: tuple[KeepOut, ...] = field(default=(), repr=False, compare=False)
    design_region_mm2: float = 0.0

    @property
    def verified(self) -> bool:
        """True when the kept plate passes every case (always so for a plate with holes)."""
        return self.after.passes

    @property
    def mass_saved_g(self) -> float:
        """Mass removed, g."""
        return self.mass_before_g - self.mass_after_g

    @property
    def mass_saved_fraction(self) -> float:
        """Mass removed over the plate's mass (dimensionless)."""
        return self.mass_saved_g / self.mass_before_g if self.mass_before_g > 0 else 0.0

    @property
    def share_of_grey_optimum(self) -> float | None:
        """Mass saved by the cut holes over the grey optimum's saving (None without one)."""
        g = self.grey_saved_fraction
        if g is None or g <= 0.0:
            return None
        return self.mass_saved_fraction / g

    def to_report(self, files: Mapping[str, str] | None = None) -> dict[str, Any]:
        """JSON-ready dict for ``plates[].lightening`` of report.json (DESIGN.md contract plus
        cut length, pierces, style, iterations, timings). ``files``: kind -> relative path."""
        after = {c.name: c for c in self.after.cases}
        used = budget_use(self.before, self.after, self.case_budgets) if self.case_budgets else {}
        cases = []
        for b in self.before.cases:
            a = after.get(b.name, b)
            entry = {
                "name": b.name, "family": b.family,
                "deflection_before_mm": _num(b.max_deflection_mm),
                "deflection_after_mm": _num(a.max_deflection_mm),
                "limit_mm": _num(b.limit_mm),
                "safety_factor_before": _num(b.safety_factor, 4),
                "safety_factor_after": _num(a.safety_factor, 4),
                "passes_before": b.passes, "passes_after": a.passes,
            }
            if b.name in self.case_budgets:
                bk = self.case_budgets[b.name]
                entry["budget"] = _num(bk, 6)
                entry["allowed_deflection_mm"] = _num(b.max_deflection_mm * (1.0 + bk))
                entry["budget_used"] = _num(used.get(b.name), 4)
            cases.append(entry)
        return {
            "style": self.style,
            "pattern_shape": self.pattern_shape or None,
            "mass_before_g": _num(self.mass_before_g),
            "mass_after_g": _num(self.mass_after_g),
            "mass_saved_g": _num(self.mass_saved_g),
            "mass_saved_fraction": _num(self.mass_saved_fraction, 4),
            "holes": len(self.holes),
            "hole_ids": [h.id for h in self.holes],
            "files": dict(files or {}),
            "cases": cases,
            "verified": self.verified,
            "added_cut_length_mm": _num(self.cut_length_after_mm - self.cut_length_before_mm, 3),
            "added_pierces": self.pierces_after - self.pierces_before,
            "iterations": {"optimiser": self.optimiser_iterations,
                           "verified_candidates": len(self.candidates)},
            "volume_fraction": _num(self.volume_fraction, 4),
            "design_region_fraction": _num(self.design_region_fraction, 4),
            "candidates": [{"level": _num(c.level, 4), "holes": c.holes, "mass_g": _num(c.mass_g),
                            "passes": c.passes, "limited_by": c.worst or None,
                            "seconds": _num(c.seconds, 3)} for c in self.candidates],
            "deflection_budget": _num(self.deflection_budget, 6),
            "grey_optimum": {
                "curve": [{"budget": _num(b, 6), "mass_saved_fraction": _num(f, 4)}
                          for b, f in (self.density.curve if self.density is not None else ())],
                "mass_saved_fraction": _num(self.grey_saved_fraction, 4),
                "mass_saved_g": _num(None if self.grey_saved_fraction is None
                                     else self.grey_saved_fraction * self.mass_before_g),
                "cut_share": _num(self.share_of_grey_optimum, 4),
            },
            "design_region": {
                "area_mm2": _num(self.design_region_mm2, 1),
                "fraction": _num(self.design_region_fraction, 4),
                "keep_outs": [{"name": k.name, "role": k.role, "ring_mm": _num(k.ring_mm, 3),
                               "rule": k.rule, "area_mm2": _num(k.area_mm2, 1)}
                              for k in self.keep_outs],
            },
            "timings_s": {k: _num(v, 3) for k, v in self.timings_s.items()},
            "notes": list(self.notes),
            "note": ESTIMATE_NOTE,
        }
