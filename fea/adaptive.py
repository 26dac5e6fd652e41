"""Peaks with error estimates: the design stress outside the singular points, the largest
deflection, and the refinement loop that converges them.

Each pass solves the case on a mesh and recovers its stresses by superconvergent patch recovery
(fea.recovery; Zienkiewicz and Zhu, Int. J. Numer. Meth. Eng. 33 (1992) 1331-1364). Then

- the design von Mises stress is the largest recovered value at the nodes and on the rims of
  the exclusion discs outside every singular point (fea.singular). Local refinement goes
  where the Zienkiewicz-Zhu pointwise gap (recovered value against the elements' own values)
  is above target near the peak; the error estimate of the value is the gap on the first mesh
  and then the change of the value between two meshes whose elements at the peak differ in
  size (see _stress_error);
- the largest deflection's estimate comes from two meshes whose element size differs by a
  factor sqrt(2): with the convergence order 2 of both elements' displacements, Richardson's
  estimate of the finer mesh's error is |w_fine - w_coarse| / (sqrt(2)^2 - 1), i.e. the change
  itself (L. F. Richardson, Phil. Trans. R. Soc. A 210 (1911) 307-357), times the safety
  factor SAFETY_FACTOR of Roache's grid convergence index.

The first refinement is global (element size / sqrt(2)), for the deflection estimate; further
passes refine where the design stress stands (element size halved there, graded into the rest)
and globally again while the deflection estimate is above target, until both estimates are
below the target (default 1 %) or the budget (number of refinements, memory) runs out.

Units: mm, MPa.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Sequence
from dataclasses import dataclass, field

import numpy as np
from scipy.spatial import cKDTree

from platewright.fea.case_pass import PassResult
from platewright.fea.singular import SingularPoint, outside_exclusion

__all__ = ["Peak", "Convergence", "OverBudget", "design_peak", "deflection_peak", "converge",
           "DEFAULT_TARGET_PCT", "DEFAULT_MAX_REFINEMENTS"]

#: Default target of the estimated discretisation error of every reported peak, percent.
DEFAULT_TARGET_PCT = 1.0
#: Default largest number of refinement passes after the first solve.
DEFAULT_MAX_REFINEMENTS = 4
#: Safety factor on the change between two meshes (P. J. Roache, J. Fluids Eng. 116 (1994)
#: 405-413, "grid convergence index": 1.25 with three meshes and an observed order, 3 with two
#: meshes of assumed order; 1.5 here, for two meshes of the elements' known order).
SAFETY_FACTOR = 1.5
#: Points per local element size along the rim of an exclusion disc.
_RIM_DENSITY = 4.0
#: Most points asking for local refinement after one pass.
_MAX_REFINE_POINTS = 400
#: Stress of a singular field near a corner falls like r^(lambda - 1), lambda >= 1/2, so the
#: error of the recovered value falls at least like h^(3/2) once the corner is resolved
#: (common practice for the exponent used to size the next mesh).
_STRESS_ORDER = 1.5


class OverBudget(Exception):
    """Raised by a solve callback when the refined mesh would exceed the memory budget."""


@dataclass(frozen=True)
class Peak:
    """A peak of a field: value, where (x, y) mm, the local element size there (mm), the
    pointwise recovery gap there (same unit as the value), and ``refine``: (k, 3) float rows
    (x, y, size) mm asking for smaller elements where the true peak may stand."""

    value: float
    at_mm: tuple[float, float]
    local_size_mm: float
    gap: float = 0.0
    refine: np.ndarray = field(default_factory=lambda: np.zeros((0, 3)), repr=False,
                               compare=False)


@dataclass(frozen=True)
class Convergence:
    """The refinement history of one case.

    passes: PassResult per mesh, first to last. design: Peak of the design stress per pass
    (MPa); deflection: Peak of the deflection per pass (mm). stress_error, deflection_error:
    estimates for the last pass (MPa, mm; None when not estimated). target_pct: the target, %.
    converged: both estimates at or below the target. stop_reason: why the loop stopped.
    """

    passes: tuple[PassResult, ...]
    design: tuple[Peak, ...]
    deflection: tuple[Peak, ...]
    stress_error: float | None
    deflection_error: float | None
    target_pct: float
    converged: bool
    stop_reason: str


def _locate(nodes: np.ndarray, tris: np.ndarray, pts: np.ndarray
            ) -> tuple[np.ndarray, np.ndarray]:
    """Triangle (q,) int (-1: none) and barycentric coordinates (q, 3) of points (q, 2)."""
    p = nodes[tris]
    cen = p.mean(axis=1)
    k = min(12, len(tris))
    _, cand = cKDTree(cen).query(pts, k=k)
    cand = np.asarray(cand).reshape(len(pts), k)
    a, b, c = p[cand, 0], p[cand, 1], p[cand, 2]  # (q, k, 2)
    v0, v1, v2 = b - a, c - a, pts[:, None, :] - a
    det = v0[..., 0] * v1[..., 1] - v0[..., 1] * v1[..., 0]
    l1 = (v2[..., 0] * v1[..., 1] - v2[..., 1] * v1[..., 0]) / det
    l2 = (v0[..., 0] * v2[..., 1] - v0[..., 1] * v2[..., 0]) / det
    lam = np.stack([1.0 - l1 - l2, l1, l2], axis=-1)
    inside = lam.min(axis=-1) >= -1e-9
    first = np.argmax(inside, axis=1)
    found = inside[np.arange(len(pts)), first]
    tri = np.where(found, cand[np.arange(len(pts)), first], -1)
    return tri, lam[np.arange(len(pts)), first]


def _rim_points(singular: Sequence[SingularPoint], radius_mm: float, spacing_mm: float
                ) -> np.ndarray:
    """Points on the rims of the exclusion discs, spacing about ``spacing_mm``: (q, 2)."""
    if not singular or radius_mm <= 0.0:
        return np.zeros((0, 2))
    n = max(16, int(math.ceil(2.0 * math.pi * radius_mm / max(spacing_mm, 1e-9))))
    ang = 2.0 * math.pi * np.arange(n) / n
    ring = radius_mm * np.column_stack([np.cos(ang), np.sin(ang)])
    return np.vstack([np.asarray(p.at_mm)[None, :] + ring for p in singular])


def design_peak(ps: PassResult, singular: Sequence[SingularPoint], radius_mm: float,
                tol: float = DEFAULT_TARGET_PCT / 100.0, floor_mm: float = 0.0) -> Peak:
    """Largest recovered von Mises stress at least ``radius_mm`` from every singular point.

    Candidates: mesh nodes outside the discs and points on the discs' rims inside the plate
    (recovered values interpolated linearly on the display mesh). Returns the Peak with the
    pointwise Zienkiewicz-Zhu gap there (MPa). Without any candidate (a plate smaller than the
    discs) the largest value anywhere is returned. ``refine`` lists the candidates that could
    hold the true peak (value + gap at least the peak's value - gap) and whose gap is above
    ``tol`` (fraction) of the peak, with an element size for the next mesh that should bring
    the gap under it (between a quarter and a half of today's, never below ``floor_mm``;
    candidates already at the floor are not listed).
    """
    nodes, tris, vm, gap = ps.nodes_mm, ps.triangles, ps.von_mises_mpa, ps.raw_gap_mpa
    node_size = np.zeros(len(nodes))
    np.maximum.at(node_size, tris.ravel(), np.repeat(ps.element_size_mm, 3))
    keep = outside_exclusion(nodes, singular, radius_mm)
    vals, pts, gaps, sizes = [vm[keep]], [nodes[keep]], [gap[keep]], [node_size[keep]]
    if singular:
        near = ~keep
        spacing = float(node_size[near].min()) / _RIM_DENSITY if near.any() else radius_mm / 8
        rim = _rim_points(singular, radius_mm, max(spacing, radius_mm / 256.0))
        rim = rim[outside_exclusion(rim, singular, radius_mm)]
        if len(rim):
            tri, lam = _locate(nodes, tris, rim)
            ok = tri >= 0
            idx = tris[tri[ok]]
            w = lam[ok]
            vals.append((vm[idx] * w).sum(axis=1))
            gaps.append((gap[idx] * w).sum(axis=1))
            pts.append(rim[ok])
            sizes.append(ps.element_size_mm[tri[ok]])
    v = np.concatenate(vals)
    if v.size == 0:
        v, g, xy, sz = vm, gap, nodes, node_size
    else:
        g, xy, sz = np.concatenate(gaps), np.concatenate(pts), np.concatenate(sizes)
    i = int(np.argmax(v))
    peak = float(v[i])
    want = (v + g >= peak - g[i]) & (g > tol * peak) & (peak > 0.0) & (sz > 1.2 * floor_mm)
    idx = np.flatnonzero(want)
    idx = idx[np.argsort(-g[idx])][:_MAX_REFINE_POINTS]
    ratio = np.clip((0.8 * tol * peak / np.maximum(g[idx], 1e-300)) ** (1.0 / _STRESS_ORDER),
                    0.25, 0.5)
    new = np.maximum(sz[idx] * ratio, floor_mm)
    shrink = new <= 0.85 * sz[idx]
    refine = np.column_stack([xy[idx][shrink], new[shrink]])
    return Peak(peak, (float(xy[i, 0]), float(xy[i, 1])), float(sz[i]), float(g[i]), refine)


def deflection_peak(ps: PassResult, excluded: Sequence[SingularPoint], radius_mm: float
                    ) -> Peak:
    """Largest deflection (mm), outside the discs of ``excluded`` points (in-plane point loads
    and supports, where the ideal displacement is unbounded too)."""
    defl = ps.deflection_mm
    keep = outside_exclusion(ps.nodes_mm, excluded, radius_mm)
    if not keep.any():
        keep[:] = True
    i = int(np.flatnonzero(keep)[np.argmax(defl[keep])])
    return Peak(float(defl[i]), (float(ps.nodes_mm[i, 0]), float(ps.nodes_mm[i, 1])), 0.0)


def _size_at(ps: PassResult, xy: tuple[float, float]) -> float:
    """Element size (mm) of ``ps``'s display mesh at a point (inf outside the mesh)."""
    tri, _ = _locate(ps.nodes_mm, ps.triangles, np.asarray([xy], dtype=float))
    return float(ps.element_size_mm[tri[0]]) if tri[0] >= 0 else math.inf


def _stress_error(dp: Peak, prev: Peak | None, prev_pass: PassResult | None) -> float:
    """Error estimate of the recovered design stress (MPa).

    First pass: the pointwise recovery gap (it estimates the error of the element field, and
    the recovered value is the more accurate one). Later passes, when the last pass made the
    elements smaller where the peak stands (by at least 15 %): the larger of the change of the
    value times SAFETY_FACTOR (a grid-convergence estimate) and half the gap; otherwise the
    larger of the change and the whole gap.
    """
    if prev is None or prev_pass is None:
        return dp.gap
    change = abs(dp.value - prev.value)
    if dp.local_size_mm <= 0.85 * _size_at(prev_pass, dp.at_mm):
        return max(SAFETY_FACTOR * change, 0.5 * dp.gap)
    return max(change, dp.gap)


def converge(
    solve: Callable[[float, np.ndarray], PassResult],
    size_mm: float,
    singular: Sequence[SingularPoint],
    radius_mm: float,
    *,
    deflection_excluded: Sequence[SingularPoint] = (),
    target_pct: float = DEFAULT_TARGET_PCT,
    max_refinements: int = DEFAULT_MAX_REFINEMENTS,
    fits: Callable[[float], bool] = lambda _h: True,
    floor_mm: float = 0.0,
) -> Convergence:
    """Solve, estimate, refine, until both peaks' estimates are at most ``target_pct`` % of
    their values or the budget runs out.

    solve(size_mm, size_points (k, 3) [x, y, size] mm) -> PassResult for that mesh. size_mm:
    the first mesh's element size, mm. singular, radius_mm: the singular points and the
    exclusion radius (mm). deflection_excluded: points excluded from the deflection peak.
    max_refinements: refinement passes allowed after the first solve (0: one solve, no
    estimate of the deflection). fits(size_mm): False when a mesh of that element size
    would exceed the memory budget; ``solve`` may also raise OverBudget for a refined mesh.
    floor_mm: smallest element size local refinement may ask for, mm.
    """
    tol = target_pct / 100.0
    h = float(size_mm)
    local = np.zeros((0, 3))
    passes: list[PassResult] = []
    design: list[Peak] = []
    defl: list[Peak] = []
    d_err: float | None = None
    s_err: float | None = None
    reason = "refinement budget used up"
    global_pair = False
    for k in range(max_refinements + 1):
        try:
            ps = solve(h, local)
        except OverBudget:
            if not passes:
                raise
            reason = "memory budget reached"
            break
        passes.append(ps)
        dp = design_peak(ps, singular, radius_mm, tol, floor_mm)
        fp = deflection_peak(ps, deflection_excluded, radius_mm)
        design.append(dp)
        defl.append(fp)
        s_err = _stress_error(dp, design[-2] if k else None, passes[-2] if k else None)
        if global_pair:
            d_err = SAFETY_FACTOR * abs(fp.value - defl[-2].value)
        s_ok = s_err <= tol * dp.value or dp.value == 0.0
        d_ok = d_err is not None and (d_err <= tol * fp.value or fp.value == 0.0)
        if s_ok and d_ok:
            reason = "both estimates within the target"
            break
        if k == max_refinements:
            break
        if k and not global_pair and len(ps.nodes_mm) == len(passes[-2].nodes_mm):
            reason = "local refinement no longer changes the mesh where the design stress stands"
            break
        new_h = h / math.sqrt(2.0) if (not d_ok) else h
        new_local = local
        if not s_ok:
            extra = dp.refine
            if not len(extra) and dp.local_size_mm > 1.2 * floor_mm:
                # The gap is small but the value still moved: refine where it stands.
                extra = np.array([[*dp.at_mm, max(0.5 * dp.local_size_mm, floor_mm)]])
            if not len(extra) and d_ok:
                reason = "smallest element size reached where the design stress stands"
                break
            new_local = np.vstack([local, extra])
        if not fits(new_h):
            reason = "memory budget reached"
            break
        global_pair = new_h < h
        h, local = new_h, new_local
    converged = (s_err is not None and (s_err <= tol * design[-1].value or design[-1].value == 0)
                 and d_err is not None and (d_err <= tol * defl[-1].value
                                            or defl[-1].value == 0))
    if max_refinements == 0:
        reason = "no refinement asked for (max_refinements: 0)"
    return Convergence(tuple(passes), tuple(design), tuple(defl), s_err, d_err, target_pct,
                       bool(converged), reason)
