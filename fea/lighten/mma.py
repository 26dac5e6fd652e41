"""The method of moving asymptotes (MMA) for problems with a few inequality constraints.

Svanberg, "The method of moving asymptotes - a new method for structural optimization",
Int. J. Numer. Meth. Eng. 24 (1987) 359-373, with the strictly convex approximations and the
asymptote rules of Svanberg's later notes ("MMA and GCMMA - two methods for nonlinear
optimization", KTH, 2007):

    minimise f0(x)  subject to  f_i(x) <= 0 (i = 1..m),  xmin <= x <= xmax.

At the current point every function is replaced by a convex, separable approximation

    f~_i(x) = r_i + sum_j ( p_ij / (U_j - x_j) + q_ij / (x_j - L_j) ),
    p_ij = (U_j - x_j)^2 (1.001 max(0, df_i/dx_j) + 0.001 max(0, -df_i/dx_j) + 1e-5 / dx_j),
    q_ij = (x_j - L_j)^2 (0.001 max(0, df_i/dx_j) + 1.001 max(0, -df_i/dx_j) + 1e-5 / dx_j),

with moving asymptotes L < x < U (dx_j = xmax_j - xmin_j). Each constraint gets an elastic
variable y_i with cost c y_i + y_i^2 / 2 so the sub-problem is always feasible. The
sub-problem is solved through its dual (Svanberg 1987, section 5): for multipliers
lambda >= 0 the minimising x is closed form per variable, and the concave dual function of
the m multipliers is maximised by a projected Newton ascent (m is small here: one per load
case).

Everything is dimensionless here; the caller scales objective and constraints to order 1.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

__all__ = ["MMAState", "mma_update"]

#: Cost of the elastic variables y_i (Svanberg 2007 suggests a large number, e.g. 1000).
_ELASTIC_COST = 1000.0
#: Asymptote rules of Svanberg (2007): first distance, widening and narrowing factors.
_ASY_INIT, _ASY_INCR, _ASY_DECR = 0.5, 1.2, 0.7
#: Newton steps and gradient tolerance of the dual solve.
_DUAL_ITER, _DUAL_TOL = 100, 1e-10


@dataclass
class MMAState:
    """What MMA carries from one iteration to the next: the asymptotes (n,) and the two
    previous points (n,) (None before they exist), and the iteration count."""

    low: np.ndarray | None = None
    upp: np.ndarray | None = None
    xold1: np.ndarray | None = None
    xold2: np.ndarray | None = None
    iteration: int = 0
    multipliers: np.ndarray = field(default_factory=lambda: np.zeros(0))


def _asymptotes(x: np.ndarray, span: np.ndarray, s: MMAState) -> tuple[np.ndarray, np.ndarray]:
    if s.iteration < 2 or s.xold1 is None or s.xold2 is None or s.low is None or s.upp is None:
        return x - _ASY_INIT * span, x + _ASY_INIT * span
    sign = (x - s.xold1) * (s.xold1 - s.xold2)
    factor = np.where(sign > 0.0, _ASY_INCR, np.where(sign < 0.0, _ASY_DECR, 1.0))
    low = x - factor * (s.xold1 - s.low)
    upp = x + factor * (s.upp - s.xold1)
    low = np.clip(low, x - 10.0 * span, x - 0.01 * span)
    upp = np.clip(upp, x + 0.01 * span, x + 10.0 * span)
    return low, upp


def _approximation(df: np.ndarray, ux2: np.ndarray, xl2: np.ndarray, span: np.ndarray
                   ) -> tuple[np.ndarray, np.ndarray]:
    """(p, q) of the convex approximation for gradients df (..., n)."""
    pos, neg = np.maximum(df, 0.0), np.maximum(-df, 0.0)
    reg = 1e-5 / span
    return ux2 * (1.001 * pos + 0.001 * neg + reg), xl2 * (0.001 * pos + 1.001 * neg + reg)


def mma_update(
    x: np.ndarray,
    df0: np.ndarray,
    fval: np.ndarray,
    dfdx: np.ndarray,
    xmin: np.ndarray,
    xmax: np.ndarray,
    state: MMAState,
    move: float = 0.2,
) -> np.ndarray:
    """One MMA step from ``x`` (n,); returns the new point (n,) and updates ``state``.

    df0: (n,) gradient of the objective. fval: (m,) constraint values (feasible when <= 0).
    dfdx: (m, n) constraint gradients. xmin, xmax: (n,) bounds. move: largest step as a share
    of ``xmax - xmin``. Variables with xmin == xmax stay where they are.
    """
    x = np.asarray(x, float)
    fval = np.atleast_1d(np.asarray(fval, float))
    dfdx = np.atleast_2d(np.asarray(dfdx, float))
    span = np.maximum(xmax - xmin, 1e-9)
    low, upp = _asymptotes(x, span, state)
    alpha = np.maximum.reduce([low + 0.1 * (x - low), x - move * span, xmin])
    beta = np.minimum.reduce([upp - 0.1 * (upp - x), x + move * span, xmax])
    ux, xl = upp - x, x - low
    ux2, xl2 = ux * ux, xl * xl
    p0, q0 = _approximation(np.asarray(df0, float), ux2, xl2, span)
    pc, qc = _approximation(dfdx, ux2, xl2, span)
    b = (pc / ux + qc / xl).sum(axis=1) - fval  # f~_i(x) <= 0  <=>  sum(...) <= b_i
    m = fval.size

    def primal(lam: np.ndarray) -> np.ndarray:
        pl = p0 + lam @ pc
        ql = q0 + lam @ qc
        sp_, sq = np.sqrt(pl), np.sqrt(ql)
        return np.clip((sp_ * low + sq * upp) / (sp_ + sq), alpha, beta)

    def dual(lam: np.ndarray) -> tuple[float, np.ndarray, np.ndarray]:
        """Dual value, gradient (m,) and the primal point (n,) at multipliers ``lam``."""
        xs = primal(lam)
        inv_u, inv_l = 1.0 / (upp - xs), 1.0 / (xs - low)
        y = np.maximum(0.0, lam - _ELASTIC_COST)
        cons = pc @ inv_u + qc @ inv_l - b
        value = float(p0 @ inv_u + q0 @ inv_l + lam @ cons
                      + _ELASTIC_COST * y.sum() + 0.5 * (y @ y) - lam @ y)
        return value, cons - y, xs

    def hessian(lam: np.ndarray, xs: np.ndarray) -> np.ndarray:
        """Dual Hessian (m, m), negative semi-definite (only variables inside their bounds
        move with the multipliers)."""
        free = (xs > alpha) & (xs < beta)
        inv_u, inv_l = 1.0 / (upp[free] - xs[free]), 1.0 / (xs[free] - low[free])
        dfx = pc[:, free] * inv_u**2 - qc[:, free] * inv_l**2  # d f~_i / d x_j
        curv = 2.0 * (p0[free] + lam @ pc[:, free]) * inv_u**3 \
            + 2.0 * (q0[free] + lam @ qc[:, free]) * inv_l**3
        return -(dfx / curv) @ dfx.T - np.diag((lam > _ELASTIC_COST).astype(float))

    # Projected Newton ascent on the concave dual: multipliers at 0 whose dual falls stay at 0;
    # the others take a Newton step, regularised where the dual is flat (every variable at a
    # bound), limited to a trust region that doubles the multipliers at most, and shortened
    # until the dual rises.
    lam = state.multipliers.copy() if state.multipliers.shape == (m,) else np.zeros(m)
    lam = np.maximum(lam, 0.0)
    value, grad, xs = dual(lam)
    for _ in range(_DUAL_ITER):
        act = (lam > 0.0) | (grad > 0.0)
        if not act.any() or np.abs(grad[act]).max() <= _DUAL_TOL:
            break
        h = hessian(lam, xs)[np.ix_(act, act)]
        tau = 1e-10 * (1.0 + float(np.abs(np.diag(h)).max()))
        step = np.zeros(m)
        step[act] = np.linalg.solve(tau * np.eye(h.shape[0]) - h, grad[act])
        reach = max(1.0, 2.0 * float(np.abs(lam).max()))
        big = float(np.abs(step).max())
        if big > reach:
            step *= reach / big
        t, moved = 1.0, False
        for _ in range(40):
            trial = np.maximum(lam + t * step, 0.0)
            tv, tg, tx = dual(trial)
            if tv > value:
                moved = True
                break
            t *= 0.5
        if not moved:
            break
        lam, value, grad, xs = trial, tv, tg, tx
    xnew = np.where(xmax > xmin, primal(lam), x)
    state.xold2, state.xold1 = state.xold1, x.copy()
    state.low, state.upp = low, upp
    state.iteration += 1
    state.multipliers = lam
    return xnew
