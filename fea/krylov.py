"""Conjugate gradients with a multigrid preconditioner, stopping on the true residual.

Two forms: plain preconditioned CG (Hestenes and Stiefel 1952; Saad, Iterative Methods for Sparse
Linear Systems, 2nd ed., alg. 9.1) for a fixed symmetric positive definite preconditioner, and
flexible CG (Notay, SIAM J. Sci. Comput. 22 (2000) 1444-1460, truncated to one previous direction)
for a preconditioner that changes from call to call, as a K-cycle does because it runs inner
Krylov steps. Inner products use einsum's own loop, not threaded BLAS (see fea.solve).
"""

from __future__ import annotations

from collections.abc import Callable

import numpy as np
import scipy.sparse as sp

__all__ = ["solve_cg"]


def _dot(a: np.ndarray, b: np.ndarray) -> float:
    return float(np.einsum("i,i->", a, b))


def _run(a, b, x, precond, target: float, maxiter: int, flexible: bool) -> tuple[np.ndarray, int]:
    r = b - a @ x
    z = precond(r)
    p = z.copy()
    rz = _dot(r, z)
    ap = a @ p
    for it in range(1, maxiter + 1):
        pap = _dot(p, ap)
        if pap <= 0.0:  # breakdown: not positive definite in this direction
            return x, it
        alpha = (_dot(p, r) if flexible else rz) / pap
        x += alpha * p
        r -= alpha * ap
        if np.sqrt(_dot(r, r)) <= target or it == maxiter:
            return x, it
        z = precond(r)
        if flexible:
            p = z - (_dot(z, ap) / pap) * p
        else:
            rz_new = _dot(r, z)
            p *= rz_new / rz
            p += z
            rz = rz_new
        ap = a @ p
    return x, maxiter


def solve_cg(
    a: sp.csr_matrix,
    b: np.ndarray,
    precond: Callable[[np.ndarray], np.ndarray],
    tol: float,
    maxiter: int,
    flexible: bool = False,
) -> tuple[np.ndarray, int, float, float]:
    """Solve ``a x = b`` to the relative residual ``tol`` (||b - a x|| <= tol ||b||).

    Returns (x, iterations, relative true residual, round-off floor). The recursive residual
    of CG drifts from the true one near round-off, about eps ||A||_1 ||x|| / ||b||, so the
    iteration restarts from its current iterate (at most three times) until the TRUE residual
    meets tol or ten times that floor.
    """
    norm_b = np.sqrt(_dot(b, b))
    # ||A||_1 of the symmetric A = largest row sum of |A|, without a copy of A
    norm_a = float(np.bincount(np.repeat(np.arange(a.shape[0]), np.diff(a.indptr)),
                               weights=np.abs(a.data), minlength=a.shape[0]).max(initial=0.0))
    x = np.zeros_like(b)
    iterations = 0
    rel = floor = 1.0
    for _ in range(4):
        x, its = _run(a, b, x, precond, tol * norm_b, maxiter - iterations, flexible)
        iterations += its
        res = b - a @ x
        rel = float(np.sqrt(_dot(res, res)) / norm_b)
        floor = float(np.finfo(float).eps * norm_a * np.sqrt(_dot(x, x)) / norm_b)
        if rel <= tol or rel <= 10.0 * floor or not np.isfinite(rel) or iterations >= maxiter:
            break
    return x, iterations, rel, floor
