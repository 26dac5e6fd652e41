"""Density-based topology optimisation (SIMP) generic over a finite-element model.

Method: the solid isotropic material with penalisation (Bendsoe and Sigmund, Topology
Optimization, Springer 2003) as written out in Andreassen, Clausen, Schevenels, Lazarov and
Sigmund, "Efficient topology optimization in MATLAB using 88 lines of code", Struct. Multidisc.
Optim. 43 (2011) 1-16:

- Young's modulus of element e: ``E(x_e) = Emin + x_e^p (E0 - Emin)``, ``Emin = emin_ratio E0``;
- objective: compliance (here a weighted sum of load-case compliances, each normalised by its
  value for the solid plate, computed by the model), minimised subject to a volume bound;
- filter: density filter ``x_phys = W x`` or sensitivity filter, both with the weights
  ``max(0, rmin - distance)`` between element centroids (row-normalised; weighted by element
  volume on meshes whose elements differ in size);
- update: optimality criteria with move limit ``move`` and bisection on the Lagrange multiplier
  of the volume constraint.

The model (see DensityModel) owns the analysis: it turns physical densities into the objective
and its sensitivity. This module owns the filter, the passive elements and the update, so the
same optimiser runs the 88-line paper's MBB beam (fea.topopt_grid) and platewright plates
(fea.topopt_plate). The result is deterministic for the same input.

Densities are dimensionless in [0, 1]; lengths in mm (element units for the grid model).
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass
from typing import Protocol, runtime_checkable

import numpy as np
import scipy.sparse as sp
from scipy.spatial import cKDTree

__all__ = [
    "DensityModel",
    "TopOptSettings",
    "TopOptResult",
    "density_filter",
    "optimise",
]

#: Relative width of the multiplier bracket at which the bisection stops (88-line paper: 1e-3).
_BISECTION_TOL = 1e-3
#: Lower bound on the density dividing the sensitivity filter (88-line paper: 1e-3).
_SENS_FILTER_FLOOR = 1e-3


@runtime_checkable
class DensityModel(Protocol):
    """What the optimiser needs from a finite-element model with one density per element.

    n_elements: m. element_volume: (m,) float, mm^3 (or any consistent unit). centroids: (m, 2)
    float, mm. ``compliance(x_phys, penal=, emin_ratio=)`` returns the objective (float) and
    its sensitivity d objective / d x_phys, (m,) float, for physical densities x_phys (m,) float
    in [0, 1] and the SIMP law ``E = E0 (emin_ratio + (1 - emin_ratio) x^penal)``.
    """

    n_elements: int
    element_volume: np.ndarray
    centroids: np.ndarray

    def compliance(
        self, x_phys: np.ndarray, *, penal: float = 3.0, emin_ratio: float = 1e-9
    ) -> tuple[float, np.ndarray]:
        """Objective and its sensitivity (m,) float at physical densities x_phys (m,)."""
        ...


@dataclass(frozen=True)
class TopOptSettings:
    """Settings of the optimiser (defaults of the 88-line paper where it has them).

    penal: SIMP exponent p. rmin_mm: filter radius, mm (element widths for the grid model);
    the default suits plate meshes of 2-3 mm elements (a radius of 2-3 element sizes is common
    practice; it also sets the smallest member and hole the optimiser draws).
    move: largest change of a design variable per iteration. max_iter: iteration limit.
    tol_change: stop when the largest change of a design variable is at most this.
    emin_ratio: Emin / E0, the stiffness of void. filter: "density" (x_phys = W x) or
    "sensitivity" (x_phys = x, sensitivities smoothed).
    """

    penal: float = 3.0
    rmin_mm: float = 6.0
    move: float = 0.2
    max_iter: int = 100
    tol_change: float = 0.01
    emin_ratio: float = 1e-9
    filter: str = "density"

    def __post_init__(self) -> None:
        if self.filter not in ("density", "sensitivity"):
            raise ValueError(f"filter must be 'density' or 'sensitivity', got {self.filter!r}")
        if not self.penal >= 1.0:
            raise ValueError(f"penal must be at least 1, got {self.penal}")
        if not self.rmin_mm > 0.0:
            raise ValueError(f"rmin_mm must be positive, got {self.rmin_mm}")
        if not 0.0 < self.move <= 1.0:
            raise ValueError(f"move must lie in (0, 1], got {self.move}")
        if self.max_iter < 1:
            raise ValueError(f"max_iter must be at least 1, got {self.max_iter}")
        if not 0.0 < self.emin_ratio < 1.0:
            raise ValueError(f"emin_ratio must lie in (0, 1), got {self.emin_ratio}")


@dataclass(frozen=True)
class TopOptResult:
    """Outcome of ``optimise``.

    densities: (m,) float physical (filtered) densities in [0, 1]; passive elements are 1.
    design: (m,) float design variables before the filter (equal to densities for the
        sensitivity filter).
    objective_history: objective at the start of every iteration (before its update).
    volume_history: volume fraction of the design elements at the start of every iteration.
    iterations: number of design updates made.
    converged: the largest change of a design variable fell to tol_change before max_iter.
    objective: objective of the final densities (one more analysis after the last update).
    """

    densities: np.ndarray
    objective_history: tuple[float, ...]
    volume_history: tuple[float, ...]
    iterations: int
    converged: bool
    design: np.ndarray | None = None
    objective: float = float("nan")


def _dot(a: np.ndarray, b: np.ndarray) -> float:
    """Inner product by einsum's own loop: threaded BLAS on long vectors was measured far
    slower on a shared, busy machine (the same finding as fea.solve)."""
    return float(np.einsum("i,i->", a, b))


def density_filter(
    centroids: np.ndarray, rmin_mm: float, element_volume: np.ndarray | None = None
) -> sp.csr_matrix:
    """Row-normalised filter matrix W, (m, m) CSR, with ``W_ij ~ max(0, rmin - |c_i - c_j|) v_j``.

    centroids: (m, 2) float element centroids, mm. rmin_mm: filter radius, mm. element_volume:
    (m,) float or None (all equal, as on the paper's regular grid). Neighbours are found with a
    k-d tree (scipy cKDTree); each row sums to 1. Entries at distance exactly rmin are zero and
    dropped.
    """
    c = np.asarray(centroids, dtype=float)
    if c.ndim != 2 or c.shape[1] != 2:
        raise ValueError(f"centroids must be (m, 2), got {c.shape}")
    if not rmin_mm > 0.0:
        raise ValueError(f"rmin_mm must be positive, got {rmin_mm}")
    m = c.shape[0]
    tree = cKDTree(c)
    pairs = tree.sparse_distance_matrix(tree, rmin_mm, output_type="coo_matrix")
    off = pairs.row != pairs.col
    rows, cols, dist = pairs.row[off], pairs.col[off], pairs.data[off]
    # Self pairs (distance 0) are stored by some scipy versions and not by others: drop them
    # above and add the diagonal once here.
    diag = np.arange(m)
    rows = np.concatenate([rows, diag])
    cols = np.concatenate([cols, diag])
    w = np.concatenate([rmin_mm - dist, np.full(m, float(rmin_mm))])
    if element_volume is not None:
        v = np.asarray(element_volume, dtype=float)
        if v.shape != (m,):
            raise ValueError(f"element_volume must be ({m},), got {v.shape}")
        w = w * v[cols]
    keep = w > 0.0
    h = sp.coo_matrix((w[keep], (rows[keep], cols[keep])), shape=(m, m)).tocsr()
    h.sum_duplicates()
    hs = np.asarray(h.sum(axis=1)).ravel()
    return sp.csr_matrix(sp.diags(1.0 / hs) @ h)


def _oc_update(
    x: np.ndarray,
    dc: np.ndarray,
    dv: np.ndarray,
    design: np.ndarray,
    move: float,
    volume_of: Callable[[np.ndarray], float],
    target: float,
) -> np.ndarray:
    """Optimality-criteria update with bisection on the multiplier (88-line paper, lines 43-49).

    x, dc, dv: (m,) float design variables, objective and volume sensitivities (with respect to
    the design variables). design: (m,) bool elements that may change. volume_of: design
    variables -> volume fraction of the design elements. target: allowed volume fraction.
    """
    ratio = np.maximum(-dc, 0.0) / dv  # compliance sensitivities are <= 0; clip round-off
    lo = np.maximum(0.0, x - move)
    hi = np.minimum(1.0, x + move)
    l1, l2 = 0.0, 1e9
    xnew = x.copy()
    while (l2 - l1) / (l1 + l2) > _BISECTION_TOL:
        lmid = 0.5 * (l2 + l1)
        trial = np.clip(x * np.sqrt(ratio / lmid), lo, hi)
        xnew = np.where(design, trial, x)
        if volume_of(xnew) > target:
            l1 = lmid
        else:
            l2 = lmid
    return xnew


def optimise(
    model: DensityModel,
    volume_fraction: float,
    settings: TopOptSettings = TopOptSettings(),
    *,
    passive_solid: np.ndarray | None = None,
    progress: Callable[[int, float, float], None] | None = None,
) -> TopOptResult:
    """Minimise the model's objective at a bound on the volume fraction of the design elements.

    model: a DensityModel with m elements. volume_fraction: allowed (volume-weighted) fraction
    of solid over the design (non-passive) elements, in (0, 1]. settings: TopOptSettings.
    passive_solid: (m,) bool elements kept solid (x = 1), e.g. keep-out zones round holes and
    supports; they count in neither the volume nor the volume fraction. progress: called after
    every analysis with (iteration, objective, volume fraction).
    Starts from the uniform density ``volume_fraction`` on the design elements. Stops when the
    largest change of a design variable is at most ``settings.tol_change`` or after
    ``settings.max_iter`` updates.
    """
    if not 0.0 < volume_fraction <= 1.0:
        raise ValueError(f"volume_fraction must lie in (0, 1], got {volume_fraction}")
    m = int(model.n_elements)
    vol = np.asarray(model.element_volume, dtype=float)
    if vol.shape != (m,) or np.any(vol <= 0.0):
        raise ValueError(f"element_volume must be ({m},) and positive")
    passive = np.zeros(m, bool) if passive_solid is None else np.asarray(passive_solid, bool)
    if passive.shape != (m,):
        raise ValueError(f"passive_solid must be ({m},) bool, got {passive.shape}")
    design = ~passive
    if not design.any():
        raise ValueError("every element is passive: nothing to optimise")
    s = settings
    uniform = np.ptp(vol) <= 1e-12 * vol.max()
    w = density_filter(model.centroids, s.rmin_mm, None if uniform else vol)
    wt = sp.csr_matrix(w.T)
    v_design = vol * design
    v_total = float(v_design.sum())
    dv_scale = v_total / int(design.sum())  # mean design volume: keeps the multiplier O(1)

    def physical(xd: np.ndarray) -> np.ndarray:
        xp = w @ xd if s.filter == "density" else xd.copy()
        xp[passive] = 1.0
        return np.clip(xp, 0.0, 1.0)

    def volume_of(xd: np.ndarray) -> float:
        return _dot(v_design, physical(xd)) / v_total

    x = np.where(design, float(volume_fraction), 1.0)
    xp = physical(x)
    objectives: list[float] = []
    volumes: list[float] = []
    converged = False
    iterations = 0
    for it in range(1, s.max_iter + 1):
        obj, dc_phys = model.compliance(xp, penal=s.penal, emin_ratio=s.emin_ratio)
        dc_phys = np.asarray(dc_phys, dtype=float)
        objectives.append(float(obj))
        volumes.append(_dot(v_design, xp) / v_total)
        if progress is not None:
            progress(it, float(obj), volumes[-1])
        if s.filter == "density":
            # x_phys = W x on design elements, 1 on passive: chain rule through W^T.
            dc = wt @ np.where(design, dc_phys, 0.0)
            dv = wt @ v_design
        else:
            # Sensitivity filter (Sigmund 1997, as in the 88-line paper), per unit volume.
            dens = dc_phys / vol
            dc = (w @ (x * dens)) / np.maximum(_SENS_FILTER_FLOOR, x) * vol
            dv = v_design.copy()
        xnew = _oc_update(x, dc, np.maximum(dv, 1e-300) / dv_scale, design, s.move,
                          volume_of, volume_fraction)
        change = float(np.abs(xnew - x).max())
        x = xnew
        xp = physical(x)
        iterations = it
        if change <= s.tol_change:
            converged = True
            break
    final, _ = model.compliance(xp, penal=s.penal, emin_ratio=s.emin_ratio)
    return TopOptResult(
        densities=xp,
        objective_history=tuple(objectives),
        volume_history=tuple(volumes),
        iterations=iterations,
        converged=converged,
        design=x,
        objective=float(final),
    )
