"""Linear static solve with supports: support check, direct or multigrid solve, reactions.

The system is ``(K + S) u = f`` with some dofs prescribed (``u[fixed] = fixed_values``) and optional
elastic supports ``S`` (a sparse spring matrix, N/mm or the element's own units). Before solving,
the supports are checked against the rigid-body modes of the unsupported structure: every
combination of modes that the supports leave free is reported by name and the solve is refused
(``UnderSupportedError``), because the stiffness matrix would be singular.

Solvers: a sparse LU factorisation (SuperLU, minimum-degree ordering on A^T + A) for small systems,
and smoothed-aggregation algebraic multigrid (pyamg) as a preconditioner for conjugate gradients
for large ones, with the rigid-body modes restricted to the free dofs as the near-nullspace
(Vanek, Mandel and Brezina, Computing 56 (1996) 179-196). With a ``layout`` (fea.multigrid) the
multigrid knows the mesh: p-coarsening for quadratic elements, aggregation on the vertex graph,
and a direct/multigrid limit measured for each element family.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
import scipy.sparse as sp
import scipy.sparse.linalg as spla

from platewright.fea.multigrid import MultigridLayout

__all__ = [
    "AUTO_DIRECT_LIMIT",
    "ConvergenceError",
    "MechanismError",
    "Solution",
    "UnderSupportedError",
    "free_rigid_motions",
    "solve_system",
]

#: ``method="auto"`` factorises directly below this many free unknowns, else uses multigrid.
AUTO_DIRECT_LIMIT = 60_000

#: A combination of unit-scaled rigid modes whose support "energy" (Gram eigenvalue) is below this
#: counts as free (dimensionless; the constrained ones are O(1e-6) or more on any real support).
_FREE_MODE_TOL = 1e-12


class UnderSupportedError(ValueError):
    """The supports leave a rigid-body motion free; ``free_motions`` names them."""

    def __init__(self, free_motions: Sequence[str], message: str | None = None) -> None:
        self.free_motions = tuple(free_motions)
        if message is None:
            message = (
                "the supports do not prevent "
                + ", ".join(self.free_motions)
                + "; add a support (fixed or elastic) that blocks "
                + ("this motion" if len(self.free_motions) == 1 else "these motions")
            )
        super().__init__(message)


class MechanismError(UnderSupportedError):
    """The supported stiffness is singular although no rigid-body mode is free.

    Typical causes: a part of the mesh not connected to the rest, or elements with zero stiffness.
    """


class ConvergenceError(RuntimeError):
    """The iterative solver did not reach the requested tolerance."""


@dataclass(frozen=True)
class Solution:
    """Result of one linear solve.

    u: (n_dofs,) float displacements (mm, or radians for rotation dofs).
    reactions: (n_dofs,) float support forces acting ON the structure (N): ``K u - f`` at fixed
        dofs, ``-S u`` (spring forces) at free dofs with elastic supports, zero elsewhere.
    equilibrium_residual: largest over the rigid modes r of |r . (f + reactions)| divided by the
        magnitude sum(|r_i f_i|) + sum(|r_i reactions_i|); dimensionless, ~1e-12 for a good solve.
    method: "direct" or "amg".
    iterations: conjugate-gradient iterations (0 for the direct solver).
    dofs: total number of unknowns (fixed included).
    free_dofs: number of unknowns actually solved for.
    """

    u: np.ndarray
    reactions: np.ndarray
    equilibrium_residual: float
    method: str
    iterations: int
    dofs: int
    free_dofs: int


def _check_fixed(
    n_dofs: int, fixed_dofs: np.ndarray, fixed_values: np.ndarray | None
) -> tuple[np.ndarray, np.ndarray]:
    """Unique sorted fixed dofs and their values; conflicting duplicates are refused."""
    fixed = np.asarray(fixed_dofs, dtype=np.int64).ravel()
    if fixed_values is None:
        values = np.zeros(fixed.shape[0])
    else:
        values = np.broadcast_to(np.asarray(fixed_values, dtype=float), fixed.shape).copy()
    if fixed.size and (fixed.min() < 0 or fixed.max() >= n_dofs):
        raise ValueError(f"fixed dofs must lie in [0, {n_dofs})")
    uniq, first, inverse = np.unique(fixed, return_index=True, return_inverse=True)
    uvals = values[first]
    if not np.allclose(values, uvals[inverse], rtol=0.0, atol=0.0):
        raise ValueError("a dof is fixed twice with different values")
    return uniq, uvals


def free_rigid_motions(
    rigid_modes: np.ndarray,
    mode_names: Sequence[str],
    fixed_dofs: np.ndarray,
    spring_matrix: sp.spmatrix | None = None,
    stiffness_scale: float = 1.0,
) -> tuple[str, ...]:
    """Names of the rigid-body motions the supports leave free (empty tuple when fully supported).

    rigid_modes: (n_dofs, r) float, one rigid-body mode per column.
    mode_names: r names, e.g. ("translation along x", "translation along y", "rotation about z").
    fixed_dofs: (f,) int prescribed dofs.
    spring_matrix: optional (n_dofs, n_dofs) sparse elastic-support stiffness.
    stiffness_scale: a typical diagonal entry of K, to judge spring stiffness against (N/mm).

    A combination ``R c`` is free when it vanishes on every fixed dof and carries no spring energy,
    i.e. when ``c`` lies in the null space of ``R_f^T R_f + R^T S R / stiffness_scale`` (modes
    scaled to unit largest entry). A free combination such as a rotation about a single pinned
    node is named by the modes it needs, preferring the last modes (rotations) over the first
    (translations): a rotation about any point is reported as the rotation.
    """
    modes = np.asarray(rigid_modes, dtype=float)
    if modes.ndim != 2 or modes.shape[1] != len(mode_names):
        raise ValueError("rigid_modes must be (n_dofs, r) with one name per column")
    r = modes.shape[1]
    if r == 0:
        return ()
    scale = np.abs(modes).max(axis=0)
    scale[scale == 0.0] = 1.0
    modes = modes / scale
    fixed = np.asarray(fixed_dofs, dtype=np.int64)
    rf = modes[fixed]
    gram = rf.T @ rf
    if spring_matrix is not None:
        gram = gram + modes.T @ (sp.csr_matrix(spring_matrix) @ modes) / stiffness_scale
    gram = 0.5 * (gram + gram.T)
    evals, evecs = np.linalg.eigh(gram)
    null = evecs[:, evals < _FREE_MODE_TOL * max(1.0, float(np.abs(evals).max(initial=0.0)))]
    k = null.shape[1]
    if k == 0:
        return ()
    chosen: list[int] = []
    for i in reversed(range(r)):
        trial = null[[*chosen, i], :]
        if np.linalg.svd(trial, compute_uv=False).min() > 1e-6:
            chosen.append(i)
        if len(chosen) == k:
            break
    return tuple(mode_names[i] for i in sorted(chosen))


def _solve_direct(a: sp.csr_matrix, b: np.ndarray) -> np.ndarray:
    """Sparse LU (SuperLU) with a symmetric ordering; raises MechanismError when singular."""
    try:
        lu = spla.splu(
            a.tocsc(),
            permc_spec="MMD_AT_PLUS_A",
            diag_pivot_thresh=0.0,
            options={"SymmetricMode": True},
        )
    except RuntimeError as exc:  # "Factor is exactly singular"
        raise MechanismError(
            ("a mechanism",),
            "the supported stiffness matrix is singular although every rigid-body mode is "
            "blocked: part of the mesh is not connected to the supports, or has no stiffness",
        ) from exc
    x = lu.solve(b)
    res = np.linalg.norm(a @ x - b)
    if not np.all(np.isfinite(x)) or res > 1e-6 * max(np.linalg.norm(b), 1e-300):
        raise MechanismError(
            ("a mechanism",),
            f"the supported stiffness matrix is (nearly) singular: relative residual {res:.3g}",
        )
    return x


def _dot(a: np.ndarray, b: np.ndarray) -> float:
    """Inner product without threaded BLAS (einsum's own loop): on a shared, busy machine
    threaded level-1 BLAS calls on long vectors were measured 5-10x slower than this."""
    return float(np.einsum("i,i->", a, b))


def _pcg(
    a: sp.csr_matrix, b: np.ndarray, x: np.ndarray, precond, tol: float, maxiter: int
) -> tuple[np.ndarray, int]:
    """Preconditioned conjugate gradients (Hestenes and Stiefel 1952; Saad, Iterative Methods
    for Sparse Linear Systems, alg. 9.1). Stops when the recursive residual ||r|| <= tol ||b||."""
    r = b - a @ x
    target = tol * np.sqrt(_dot(b, b))
    z = precond(r)
    p = z.copy()
    rz = _dot(r, z)
    for it in range(1, maxiter + 1):
        ap = a @ p
        pap = _dot(p, ap)
        if pap <= 0.0:  # breakdown: A or the preconditioner is not positive definite here
            return x, it
        alpha = rz / pap
        x += alpha * p
        r -= alpha * ap
        if np.sqrt(_dot(r, r)) <= target:
            return x, it
        z = precond(r)
        rz_new = _dot(r, z)
        p *= rz_new / rz
        p += z
        rz = rz_new
    return x, maxiter


def _v_cycle(ml):
    """One V-cycle of a pyamg hierarchy as a function r -> z, starting from zero.

    Written out (rather than pyamg's own solve) so that no residual norms are computed per
    application. Symmetric smoothing and an exact coarse solve keep it symmetric positive
    definite, as CG requires.
    """
    levels = ml.levels
    last = len(levels) - 1

    def cycle(lvl: int, b: np.ndarray) -> np.ndarray:
        level = levels[lvl]
        if lvl == last:
            return np.asarray(ml.coarse_solver(level.A, b), dtype=float).ravel()
        x = np.zeros_like(b)
        level.presmoother(level.A, x, b)
        coarse = cycle(lvl + 1, level.R @ (b - level.A @ x))
        x += level.P @ coarse
        level.postsmoother(level.A, x, b)
        return x

    return lambda r: cycle(0, r)


def _solve_amg(
    a: sp.csr_matrix, b: np.ndarray, near_null: np.ndarray, tol: float, maxiter: int
) -> tuple[np.ndarray, int]:
    """Smoothed-aggregation AMG (one V-cycle) preconditioned CG; returns (x, iterations).

    The prolongation smoother uses local (row-sum) Jacobi weights, which need no eigenvalue
    estimate (so the hierarchy is deterministic); the coarsest level is solved by sparse LU
    after pyamg drops the zero rows that aggregates smaller than the number of rigid modes
    produce.
    """
    import pyamg

    ml = pyamg.smoothed_aggregation_solver(
        a,
        B=np.ascontiguousarray(near_null),
        symmetry="hermitian",
        smooth=("jacobi", {"omega": 4.0 / 3.0, "weighting": "local"}),
        improve_candidates=None,  # rigid modes are exact null vectors of K: no need to smooth
        # forward sweep before, backward sweep after: the V-cycle stays symmetric (the
        # post-smoother is the adjoint of the pre-smoother) at half the cost of symmetric sweeps
        presmoother=("gauss_seidel", {"sweep": "forward"}),
        postsmoother=("gauss_seidel", {"sweep": "backward"}),
        max_coarse=300,
        coarse_solver="splu",
    )
    precond = _v_cycle(ml)
    norm_b = np.sqrt(_dot(b, b))
    norm_a = float(abs(a).sum(axis=0).max())  # 1-norm
    x = np.zeros_like(b)
    iterations = 0
    rel = floor = 1.0
    # The residual cannot drop below round-off, about eps ||A|| ||x|| / ||b|| (a direct solve
    # stops there too). The recursive CG residual drifts from the true one near that level, so
    # restart from the current iterate until the TRUE residual meets tol or the floor.
    for _ in range(4):
        x, its = _pcg(a, b, x, precond, tol, maxiter)
        iterations += its
        res = b - a @ x
        rel = float(np.sqrt(_dot(res, res)) / norm_b)
        floor = float(np.finfo(float).eps * norm_a * np.sqrt(_dot(x, x)) / norm_b)
        if rel <= tol or rel <= 10.0 * floor or not np.isfinite(rel):
            break
    if not np.isfinite(rel) or (rel > 10.0 * tol and rel > 100.0 * floor):
        raise ConvergenceError(
            f"multigrid-preconditioned CG stopped at relative residual {rel:.3g} after "
            f"{iterations} iterations (asked for {tol:.1g})"
        )
    return x, iterations


def _solve_layout(
    a: sp.csr_matrix, b: np.ndarray, free: np.ndarray, modes: np.ndarray,
    layout: MultigridLayout, tol: float, maxiter: int,
) -> tuple[np.ndarray, int]:
    """Multigrid of fea.multigrid (p-coarsening and vertex aggregation) with CG; (x, iterations)."""
    from platewright.fea.krylov import solve_cg
    from platewright.fea.multigrid import build_hierarchy

    hierarchy = build_hierarchy(a, free, modes, layout)
    x, iterations, rel, floor = solve_cg(a, b, hierarchy.apply, tol, maxiter,
                                         flexible=layout.inner_steps > 0)
    if not np.isfinite(rel) or (rel > 10.0 * tol and rel > 100.0 * floor):
        raise ConvergenceError(
            f"multigrid-preconditioned CG stopped at relative residual {rel:.3g} after "
            f"{iterations} iterations (asked for {tol:.1g})"
        )
    return x, iterations


def solve_system(
    K: sp.spmatrix,
    f: np.ndarray,
    fixed_dofs: np.ndarray,
    fixed_values: np.ndarray | float | None = None,
    *,
    rigid_modes: np.ndarray,
    mode_names: Sequence[str],
    method: str = "auto",
    tol: float = 1e-10,
    spring_matrix: sp.spmatrix | None = None,
    maxiter: int = 1000,
    layout: MultigridLayout | None = None,
) -> Solution:
    """Solve ``(K + S) u = f`` with ``u[fixed_dofs] = fixed_values``.

    K: (n, n) sparse symmetric stiffness of the unsupported structure (N/mm).
    f: (n,) float applied loads (N).
    fixed_dofs: (p,) int prescribed dofs; fixed_values: (p,) float or scalar (mm), default 0.
    rigid_modes: (n, r) float rigid-body modes of the unsupported structure; mode_names: r names.
    method: "auto" (direct below AUTO_DIRECT_LIMIT free unknowns, else "amg"), "direct" or "amg".
    tol: relative residual ||b - A x|| / ||b|| at which CG stops (multigrid only).
    spring_matrix: optional (n, n) sparse elastic-support stiffness S (N/mm).
    maxiter: largest number of CG iterations.
    layout: how the unknowns sit on the mesh (fea.multigrid.membrane_layout / plate_layout);
        with it, "amg" uses p-coarsening and vertex aggregation and "auto" the layout's direct
        limit; without it, pyamg's smoothed aggregation on the matrix alone.
    Raises UnderSupportedError naming the free motions before any factorisation, MechanismError
    when the supported matrix is still singular, ConvergenceError when CG does not converge.
    """
    if method not in ("auto", "direct", "amg"):
        raise ValueError(f"method must be 'auto', 'direct' or 'amg', got {method!r}")
    k_mat = sp.csr_matrix(K)
    n = k_mat.shape[0]
    if k_mat.shape != (n, n):
        raise ValueError(f"K must be square, got {k_mat.shape}")
    f = np.asarray(f, dtype=float).ravel()
    if f.shape != (n,):
        raise ValueError(f"f must have {n} entries, got {f.shape}")
    modes = np.asarray(rigid_modes, dtype=float)
    if modes.ndim != 2 or modes.shape[0] != n:
        raise ValueError(f"rigid_modes must be ({n}, r), got {modes.shape}")
    fixed, values = _check_fixed(n, fixed_dofs, fixed_values)
    spring = None if spring_matrix is None else sp.csr_matrix(spring_matrix)

    diag = np.abs(k_mat.diagonal())
    scale = float(diag.max()) if diag.size and diag.max() > 0 else 1.0
    free_motions = free_rigid_motions(modes, mode_names, fixed, spring, scale)
    if free_motions:
        raise UnderSupportedError(free_motions)

    a_full = k_mat if spring is None else (k_mat + spring).tocsr()
    free_mask = np.ones(n, dtype=bool)
    free_mask[fixed] = False
    free = np.flatnonzero(free_mask)
    u = np.zeros(n)
    u[fixed] = values
    a_rows = a_full[free]
    b = f[free] - a_rows @ u
    a_ff = a_rows[:, free].tocsr()
    chosen = method
    if chosen == "auto":
        limit = AUTO_DIRECT_LIMIT if layout is None else layout.direct_limit
        chosen = "direct" if free.size < limit else "amg"
    iterations = 0
    if free.size and np.any(b != 0.0):
        if chosen == "direct":
            u[free] = _solve_direct(a_ff, b)
        elif layout is not None:
            u[free], iterations = _solve_layout(a_ff, b, free, modes, layout, tol, maxiter)
        else:
            u[free], iterations = _solve_amg(a_ff, b, modes[free], tol, maxiter)

    reactions = np.zeros(n)
    if spring is not None:
        reactions[free] = -(spring @ u)[free]
    reactions[fixed] = (k_mat @ u - f)[fixed]
    total = f + reactions
    num = np.abs(modes.T @ total)
    den = np.abs(modes).T @ np.abs(f) + np.abs(modes).T @ np.abs(reactions)
    ratio = np.divide(num, den, out=np.zeros_like(num), where=den > 0)
    eq_res = float(ratio.max(initial=0.0))
    return Solution(
        u=u,
        reactions=reactions,
        equilibrium_residual=eq_res,
        method=chosen,
        iterations=iterations,
        dofs=n,
        free_dofs=int(free.size),
    )
