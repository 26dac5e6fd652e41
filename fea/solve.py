"""Linear static solve with supports: support check, direct or multigrid solve, reactions.

The system is ``(K + S) u = f`` with some dofs prescribed (``u[fixed] = fixed_values``) and optional
elastic supports ``S`` (a sparse spring matrix, N/mm or the element's own units). Before solving,
the supports are checked against the rigid-body modes of the unsupported structure: every
combination of modes that the supports leave free is reported by name and the solve is refused
(``UnderSupportedError``), because the stiffness matrix would be singular. When the stiffness
falls into several connected parts (no element couples them), each part is checked the same way
against the modes restricted to it (``MechanismError`` names the loose part's unknowns). Both
tests are structural - ranks of small Gram matrices of unit-scaled modes - so they do not depend
on how well conditioned the stiffness is: a fine bending mesh (condition number ~ (L / h)^4) that
is properly supported is never refused.

After a direct solve the normwise backward error
``||b - A x||_inf / (||A||_inf ||x||_inf + ||b||_inf)`` is checked (Rigal and Gaches, J. ACM 14
(1967) 543-548; Higham, Accuracy and Stability of Numerical Algorithms, 2nd ed., thm. 7.1): a
stable factorisation gives round-off level (~1e-16) whatever the conditioning, so a value above
``BACKWARD_ERROR_LIMIT`` means the factorisation itself failed (``InaccurateSolveError``).

Solvers: a sparse LU factorisation (SuperLU, minimum-degree ordering on A^T + A) for small systems,
and smoothed-aggregation algebraic multigrid (pyamg) as a preconditioner for conjugate gradients
for large ones, with the rigid-body modes restricted to the free dofs as the near-nullspace
(Vanek, Mandel and Brezina, Computing 56 (1996) 179-196). With a ``layout`` (fea.multigrid) the
multigrid knows the mesh: p-coarsening for quadratic elements, aggregation on the vertex graph,
and a direct/multigrid limit measured for each element family.
"""

from __future__ import annotations

import itertools
import math
from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
import scipy.sparse as sp
import scipy.sparse.linalg as spla

from platewright.fea.multigrid import MultigridLayout

__all__ = [
    "AUTO_DIRECT_LIMIT",
    "BACKWARD_ERROR_LIMIT",
    "ConvergenceError",
    "InaccurateSolveError",
    "MechanismError",
    "Solution",
    "UnderSupportedError",
    "backward_error",
    "free_rigid_motions",
    "solve_system",
]

#: ``method="auto"`` factorises directly below this many free unknowns, else uses multigrid.
AUTO_DIRECT_LIMIT = 60_000

#: Largest normwise backward error accepted from the direct solver (dimensionless); stable
#: sparse LU reaches about 1e-16 on any system it can factorise.
BACKWARD_ERROR_LIMIT = 1e-8

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
    """A part of the structure that no element connects to the rest is left free to move.

    ``free_motions`` names the rigid motions of that part; ``part_dofs`` (k,) int are its
    unknowns (so a caller can say where the part lies).
    """

    def __init__(self, free_motions: Sequence[str], message: str | None = None,
                 part_dofs: np.ndarray | None = None) -> None:
        super().__init__(free_motions, message)
        self.part_dofs = np.zeros(0, np.int64) if part_dofs is None else np.asarray(part_dofs)


class ConvergenceError(RuntimeError):
    """The iterative solver did not reach the requested tolerance."""


class InaccurateSolveError(ConvergenceError):
    """The direct factorisation failed numerically (zero pivot, or a normwise backward error
    above BACKWARD_ERROR_LIMIT) on a system whose supports hold every part."""


@dataclass(frozen=True)
class Solution:
    """Result of one linear solve.

    u: (n_dofs,) float displacements (mm, or radians for rotation dofs).
    reactions: (n_dofs,) float support forces acting ON the structure (N): ``K u - f`` at fixed
        dofs, ``-S u`` (spring forces) at free dofs with elastic supports, zero elsewhere.
    equilibrium_residual: largest over the rigid modes r of |r . (f + reactions)| divided by the
        magnitude sum(|r_i f_i|) + sum(|r_i reactions_i|); dimensionless, ~1e-12 for a good solve.
    backward_error: normwise backward error of the solve of the free unknowns,
        ||b - A x||_inf / (||A||_inf ||x||_inf + ||b||_inf), dimensionless (0 when nothing was
        solved); round-off level (~1e-16) for a stable solve, whatever the conditioning.
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
    backward_error: float = 0.0


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
    (translations) among those that span it about as well: a rotation about any point is
    reported as the rotation.
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
    # Name the free combinations by k of the modes: among the sets of k modes that span them
    # well (smallest singular value of their rows at least half the best set's), the one with
    # the latest modes, so a rotation about any point is named as the rotation, while a
    # rotation about a line slightly off the x axis stays "rotation about x".
    scored = [(float(np.linalg.svd(null[list(c), :], compute_uv=False).min()), c)
              for c in itertools.combinations(range(r), k)]
    best = max(score for score, _ in scored)
    good = [c for score, c in scored if score >= 0.5 * best]
    chosen = max(good, key=lambda c: sorted(c, reverse=True))
    return tuple(mode_names[i] for i in sorted(chosen))


def backward_error(a: sp.spmatrix, x: np.ndarray, b: np.ndarray) -> float:
    """Normwise backward error ||b - A x||_inf / (||A||_inf ||x||_inf + ||b||_inf), dimensionless:
    the smallest relative change of A and b for which x is the exact solution (Rigal and Gaches
    1967). Independent of the conditioning of A; inf when x is not finite."""
    if not np.all(np.isfinite(x)):
        return math.inf
    res = float(np.abs(b - a @ x).max(initial=0.0))
    rows = np.asarray(abs(sp.csr_matrix(a)).sum(axis=1)).ravel()
    norm_a = float(rows.max(initial=0.0))
    den = norm_a * float(np.abs(x).max(initial=0.0)) + float(np.abs(b).max(initial=0.0))
    return res / den if den > 0.0 else (0.0 if res == 0.0 else math.inf)


def _solve_direct(a: sp.csr_matrix, b: np.ndarray) -> tuple[np.ndarray, float]:
    """Sparse LU (SuperLU) with a symmetric ordering: (x, normwise backward error).

    Called only after the structural support checks have passed, so a failure here is
    numerical: InaccurateSolveError, naming the figure tested.
    """
    try:
        lu = spla.splu(
            a.tocsc(),
            permc_spec="MMD_AT_PLUS_A",
            diag_pivot_thresh=0.0,
            options={"SymmetricMode": True},
        )
    except RuntimeError as exc:  # "Factor is exactly singular"
        raise InaccurateSolveError(
            "the sparse factorisation met a zero pivot although the supports hold every part "
            "of the structure against rigid motion (a numerical failure, not a support problem)"
        ) from exc
    x = lu.solve(b)
    eta = backward_error(a, x, b)
    if not eta <= BACKWARD_ERROR_LIMIT:
        raise InaccurateSolveError(
            f"the sparse factorisation is inaccurate: normwise backward error {eta:.3g} "
            "(||b - A x|| / (||A|| ||x|| + ||b||), infinity norms; a stable solve gives about "
            f"1e-16, more than {BACKWARD_ERROR_LIMIT:.0e} is refused)"
        )
    return x, eta


def _connected_parts(a: sp.csr_matrix) -> tuple[int, np.ndarray]:
    """Connected parts of the stiffness graph (dofs coupled by a non-zero entry):
    (number of parts, (n,) int part label per dof)."""
    from scipy.sparse.csgraph import connected_components

    pattern = sp.csr_matrix((np.ones(a.nnz), a.indices, a.indptr), shape=a.shape)
    return connected_components(pattern, directed=False)


def _loose_part(
    k_mat: sp.csr_matrix,
    modes: np.ndarray,
    mode_names: Sequence[str],
    fixed: np.ndarray,
    spring: sp.csr_matrix | None,
    scale: float,
) -> None:
    """Raise MechanismError for the first connected part that its supports leave free.

    Each part is checked like the whole structure, with the rigid modes restricted to its dofs:
    a part joined to the rest by no element must be held on its own.
    """
    n_parts, label = _connected_parts(k_mat)
    if n_parts < 2:
        return
    fixed_mask = np.zeros(k_mat.shape[0], dtype=bool)
    fixed_mask[fixed] = True
    order = np.argsort(label, kind="stable")
    bounds = np.searchsorted(label[order], np.arange(n_parts + 1))
    for p in range(n_parts):
        dofs = order[bounds[p]: bounds[p + 1]]
        local = np.zeros_like(modes)
        local[dofs] = modes[dofs]
        keep = np.abs(local).max(axis=0) > 0.0
        if not keep.any():
            continue
        names = [nm for nm, k in zip(mode_names, keep, strict=True) if k]
        free = free_rigid_motions(local[:, keep], names, dofs[fixed_mask[dofs]], spring, scale)
        if free:
            raise MechanismError(
                free,
                f"a part of the structure ({dofs.size} unknowns) is joined to the rest by no "
                "element and its supports do not prevent " + ", ".join(free),
                part_dofs=dofs,
            )


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
    when a connected part of the structure is left free (also before factorising),
    ConvergenceError when CG does not converge, InaccurateSolveError (a ConvergenceError) when
    the direct factorisation fails numerically.
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
    _loose_part(k_mat, modes, mode_names, fixed, spring, scale)

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
    eta = 0.0
    if free.size and np.any(b != 0.0):
        if chosen == "direct":
            u[free], eta = _solve_direct(a_ff, b)
        else:
            if layout is not None:
                u[free], iterations = _solve_layout(a_ff, b, free, modes, layout, tol, maxiter)
            else:
                u[free], iterations = _solve_amg(a_ff, b, modes[free], tol, maxiter)
            eta = backward_error(a_ff, u[free], b)

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
        backward_error=eta,
    )
