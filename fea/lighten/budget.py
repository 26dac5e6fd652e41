"""The stiffness budget: how much more each load case may deflect after lightening.

With ``lightening.deflection_budget = b`` every case's largest deflection after lightening may be
at most ``(1 + b)`` times the solid plate's (the plate as designed), while every limit of the
case itself (deflection, span ratio, safety factor) still applies. Where a case's own
deflection limit is the tighter one, its budget is cut to it: ``b_k = min(b, limit / d0 - 1)``.
The use of the budget is ``(d_after / d0 - 1) / b`` (1 = all of it; negative when the plate got
stiffer, e.g. because it got lighter under its own weight).

Deflections mm; budgets and uses are dimensionless shares.
"""

from __future__ import annotations

import math
from collections.abc import Mapping

from platewright.fea.results import PlateAnalysis

__all__ = ["DEFLECTION_CHECKS", "case_budgets", "budget_utilisation", "budget_use", "meets_budget"]

#: Limit checks whose value is the case's largest deflection (fea.results checks).
DEFLECTION_CHECKS = ("max_deflection_mm", "span_ratio")


def case_budgets(before: PlateAnalysis, budget: float) -> dict[str, float]:
    """Budget b_k of every case of ``before`` (the solid plate's analysis): the smaller of
    ``budget`` and what the case's own deflection limits leave (``limit / d0 - 1``, at least 0)."""
    out = {}
    for case in before.cases:
        b = float(budget)
        for chk in case.checks:
            if chk.name in DEFLECTION_CHECKS and chk.limit is not None and chk.value:
                b = min(b, max(0.0, chk.limit / chk.value - 1.0))
        out[case.name] = b
    return out


def _ratios(before: PlateAnalysis, after: PlateAnalysis) -> dict[str, float]:
    done = {c.name: c for c in after.cases}
    out = {}
    for b in before.cases:
        a = done.get(b.name)
        if a is None:
            continue
        d0, d1 = b.max_deflection_mm, a.max_deflection_mm
        out[b.name] = d1 / d0 if d0 > 0.0 else (1.0 if d1 <= 0.0 else math.inf)
    return out


def budget_utilisation(before: PlateAnalysis, after: PlateAnalysis,
                       budgets: Mapping[str, float]) -> float:
    """Worst ``(d_after / d0) / (1 + b_k)`` over the cases (at most 1 when the budget holds)."""
    ratios = _ratios(before, after)
    return max((r / (1.0 + budgets[n]) for n, r in ratios.items() if n in budgets), default=0.0)


def meets_budget(before: PlateAnalysis, after: PlateAnalysis,
                 budgets: Mapping[str, float]) -> bool:
    """True when every case deflects at most ``(1 + b_k)`` times its solid deflection."""
    ratios = _ratios(before, after)
    return all(r <= 1.0 + budgets[n] for n, r in ratios.items() if n in budgets)


def budget_use(before: PlateAnalysis, after: PlateAnalysis,
               budgets: Mapping[str, float]) -> dict[str, float | None]:
    """Share of its budget each case used, ``(d_after / d0 - 1) / b_k`` (None when b_k = 0)."""
    ratios = _ratios(before, after)
    return {n: ((r - 1.0) / budgets[n] if budgets[n] > 0.0 else None)
            for n, r in ratios.items() if n in budgets}
