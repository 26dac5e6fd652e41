"""Least material for a stiffness budget: SIMP densities, every load case constrained at once.

The question a user asks is "how much lighter may this plate get if it bends at most N % more
than it does now?". Written as a topology optimisation problem (Bendsoe and Sigmund, Topology
Optimization, Springer 2003, section 1.2, the minimum-volume form of the compliance problem):

    minimise    V(x~) / V_design                     (share of the design region kept)
    subject to  c_k(x~) <= (1 + b_k) c_k(1)           for every load case k,
                0 <= x <= 1,   x~ = W x  (density filter),  x~ = 1 on passive elements,

with the SIMP law ``E(x~) = E0 (emin_ratio + (1 - emin_ratio) x~^p)`` of
:mod:`.simp` (Andreassen et al. 2011) and c_k the compliance ``f^T u`` of case k, bending and
in-plane cases alike (fea.lighten.plate_density). The constraints are solved together by the
method of moving asymptotes (:mod:`.mma`, Svanberg 1987), not by a volume bound followed by a
search. Compliance is the energy measure of a case's deflection; the pipeline checks the
deflection itself on the holed plate and tightens ``b_k`` where the two disagree.

The start is the solid plate (feasible for any budget >= 0); the result is the grey
(continuous) optimum whose mass share, counted as ``sum(x~ v) / sum(v)``, is the reference the
cut holes are measured against. Dimensionless densities; volumes in the model's unit.
"""

from __future__ import annotations

from collections.abc import Callable, Sequence
from dataclasses import dataclass
from typing import Protocol

import numpy as np
import scipy.sparse as sp

from platewright.fea.lighten.mma import MMAState, mma_update
from platewright.fea.lighten.simp import TopOptSettings, density_filter

__all__ = ["CaseModel", "MinMassResult", "Responses", "minimise_mass"]

#: Physical densities (m,) -> (one measure per case (k,), its sensitivities (k, m)).
Responses = Callable[[np.ndarray], tuple[np.ndarray, np.ndarray]]


class CaseModel(Protocol):
    """A density model with several load cases (fea.lighten.plate_density, mbb_grid).

    n_elements: m. element_volume: (m,) float. centroids: (m, 2) float. solid_compliance:
    (k,) float compliance of each case at x = 1. case_responses(x_phys, penal=, emin_ratio=)
    gives (compliances (k,), sensitivities (k, m)).
    """

    n_elements: int
    element_volume: np.ndarray
    centroids: np.ndarray
    solid_compliance: np.ndarray

    def case_responses(self, x_phys: np.ndarray, *, penal: float = 3.0,
                       emin_ratio: float = 1e-9) -> tuple[np.ndarray, np.ndarray]:
        """Compliances (k,) and their sensitivities (k, m) at x_phys (m,)."""
        ...


@dataclass(frozen=True)
class MinMassResult:
    """Outcome of ``minimise_mass``.

    densities: (m,) float physical densities (passive elements 1). design: (m,) float design
    variables. volume_fraction: share of the design region's volume kept, sum(x~ v) / sum(v)
    over the design elements (the grey optimum's measure). measure_ratio: (k,) float
    measure_k / measure_k(1) at the result. budgets: (k,) float the b_k used. volume_history,
    worst_history: per iteration, the volume fraction and max_k c_k / ((1 + b_k) c_k(1)).
    iterations: analyses made. converged: the change fell below tol_change with every
    constraint met. measure_ratio holds the ratio of whatever measure was limited.
    """

    densities: np.ndarray
    design: np.ndarray
    volume_fraction: float
    measure_ratio: np.ndarray
    budgets: np.ndarray
    volume_history: tuple[float, ...]
    worst_history: tuple[float, ...]
    iterations: int
    converged: bool


def minimise_mass(
    model: CaseModel,
    budgets: float | Sequence[float],
    settings: TopOptSettings | None = None,
    *,
    passive_solid: np.ndarray | None = None,
    start: np.ndarray | None = None,
    responses: Responses | None = None,
    feasibility_tol: float = 1e-3,
    progress: Callable[[int, float, float], None] | None = None,
) -> MinMassResult:
    """Least volume of the design elements keeping every case within its compliance budget.

    budgets: b_k >= 0, one for every case or one for all (compliance may grow by the share
    b_k). settings: penal, rmin_mm (density filter radius), move, max_iter, tol_change,
    emin_ratio of TopOptSettings (its ``filter`` must be "density"). passive_solid: (m,) bool
    elements kept solid. start: (m,) design variables to start from (default: solid).
    responses: physical densities (m,) -> (measures (k,), sensitivities (k, m)), the
    quantities the budgets limit (default: the model's case compliances at the settings'
    penal and emin_ratio); each is limited to (1 + b_k) times its value for the solid plate.
    feasibility_tol: a constraint counts as met at ``c <= (1 + b)(1 + tol) c(1)``.
    progress: called after every analysis with (iteration, volume fraction, worst constraint
    ratio). See the module text for the method.
    """
    s = settings or TopOptSettings()
    if s.filter != "density":
        raise ValueError("minimise_mass uses the density filter")
    m = int(model.n_elements)
    vol = np.asarray(model.element_volume, float)
    if responses is None:
        def responses(xp: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
            return model.case_responses(xp, penal=s.penal, emin_ratio=s.emin_ratio)
    c0 = np.asarray(responses(np.ones(m))[0], float)
    if np.any(c0 <= 0.0):
        raise ValueError("a case has no response on the solid plate: nothing to limit")
    k = c0.size
    b = np.broadcast_to(np.asarray(budgets, float), (k,)).copy()
    if np.any(b < 0.0) or not np.all(np.isfinite(b)):
        raise ValueError(f"budgets must be finite and >= 0, got {b}")
    passive = np.zeros(m, bool) if passive_solid is None else np.asarray(passive_solid, bool)
    design = ~passive
    if not design.any():
        raise ValueError("every element is passive: nothing to optimise")
    uniform = np.ptp(vol) <= 1e-12 * vol.max()
    w = density_filter(model.centroids, s.rmin_mm, None if uniform else vol)
    wt = sp.csr_matrix(w.T)
    v_design = vol * design
    v_total = float(v_design.sum())
    dvol = wt @ (v_design / v_total)
    allowed = (1.0 + b) * c0

    def physical(xd: np.ndarray) -> np.ndarray:
        xp = w @ xd
        xp[passive] = 1.0
        return np.clip(xp, 0.0, 1.0)

    x = np.ones(m) if start is None else np.where(design, np.clip(start, 0.0, 1.0), 1.0)
    xmin = np.where(design, 0.0, 1.0)
    xmax = np.ones(m)
    state = MMAState()
    vols: list[float] = []
    worst: list[float] = []
    converged = False
    it = 0
    for it in range(1, s.max_iter + 1):
        xp = physical(x)
        c, dc = responses(xp)
        vols.append(float(v_design @ xp) / v_total)
        worst.append(float(np.max(np.asarray(c) / allowed)))
        if progress is not None:
            progress(it, vols[-1], worst[-1])
        g = np.asarray(c) / allowed - 1.0
        dg = (wt @ (np.where(design, dc, 0.0) / allowed[:, None]).T).T
        xnew = mma_update(x, dvol, g, dg, xmin, xmax, state, move=s.move)
        change = float(np.abs(xnew - x).max())
        x = xnew
        if change <= s.tol_change and worst[-1] <= 1.0 + feasibility_tol:
            converged = True
            break
    xp = physical(x)
    c, _ = responses(xp)
    return MinMassResult(
        densities=xp, design=x, volume_fraction=float(v_design @ xp) / v_total,
        measure_ratio=np.asarray(c) / c0, budgets=b, volume_history=tuple(vols),
        worst_history=tuple(worst), iterations=it, converged=converged)
