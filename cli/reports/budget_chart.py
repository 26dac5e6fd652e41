"""The mass-stiffness chart of the lighten report: mass saved against the stiffness budget.

An inline SVG (no plotting library at run time): the continuous (grey) optimum's saving at each
budget of ``lightening.budget_curve`` as a line, and each verified cut-hole suggestion as a
marker at the deflection growth it actually used. Values come from report.json's
``lightening`` section; nothing is computed here but the drawing.

Budgets and savings are shares; the axes print them in per cent.
"""

from __future__ import annotations

import html
from collections.abc import Sequence

__all__ = ["budget_chart_svg"]

_W, _H = 520.0, 300.0
_LEFT, _RIGHT, _TOP, _BOTTOM = 58.0, 18.0, 16.0, 44.0
_MARKERS = ("#c0392b", "#1f6fb2", "#2e8b57", "#8e44ad")


def _ticks(top: float) -> list[float]:
    step = next(s for s in (0.01, 0.02, 0.05, 0.1, 0.2, 0.5, 1.0, 2.0) if top / s <= 6.0)
    return [i * step for i in range(int(top / step + 1e-9) + 1)]


def budget_chart_svg(curve: Sequence[tuple[float, float]],
                     points: Sequence[tuple[str, float, float]]) -> str:
    """SVG text: ``curve`` (budget, saved share) of the continuous optimum as a grey line with
    dots, ``points`` (label, deflection growth used, saved share) as coloured markers with a
    legend. Empty string when there is nothing to draw."""
    if not curve and not points:
        return ""
    xs = [b for b, _ in curve] + [x for _, x, _ in points]
    ys = [f for _, f in curve] + [y for _, _, y in points]
    xmax = max(max(xs, default=0.0), 0.01) * 1.08
    ymax = max(max(ys, default=0.0), 0.01) * 1.12
    pw, ph = _W - _LEFT - _RIGHT, _H - _TOP - _BOTTOM

    def px(x: float) -> float:
        return _LEFT + pw * max(x, 0.0) / xmax

    def py(y: float) -> float:
        return _TOP + ph * (1.0 - max(y, 0.0) / ymax)

    out = [f'<svg xmlns="http://www.w3.org/2000/svg" width="{_W:.0f}" height="{_H:.0f}" '
           f'viewBox="0 0 {_W:.0f} {_H:.0f}" font-family="sans-serif" font-size="11">',
           f'<rect x="{_LEFT}" y="{_TOP}" width="{pw}" height="{ph}" fill="none" '
           'stroke="#888"/>']
    for t in _ticks(xmax):
        out.append(f'<line x1="{px(t):.1f}" y1="{_TOP}" x2="{px(t):.1f}" y2="{_TOP + ph}" '
                   f'stroke="#e3e3e3"/><text x="{px(t):.1f}" y="{_TOP + ph + 14}" '
                   f'text-anchor="middle">{100 * t:g}</text>')
    for t in _ticks(ymax):
        out.append(f'<line x1="{_LEFT}" y1="{py(t):.1f}" x2="{_LEFT + pw}" y2="{py(t):.1f}" '
                   f'stroke="#e3e3e3"/><text x="{_LEFT - 6}" y="{py(t) + 4:.1f}" '
                   f'text-anchor="end">{100 * t:g}</text>')
    out.append(f'<text x="{_LEFT + pw / 2}" y="{_H - 8}" text-anchor="middle">stiffness '
               'budget: deflection growth allowed (%)</text>')
    out.append(f'<text transform="translate(14 {_TOP + ph / 2}) rotate(-90)" '
               'text-anchor="middle">mass saved (% of the plate)</text>')
    legend = []
    if curve:
        pts = " ".join(f"{px(b):.1f},{py(f):.1f}" for b, f in sorted(curve))
        out.append(f'<polyline points="{pts}" fill="none" stroke="#555" stroke-width="1.5"/>')
        out += [f'<circle cx="{px(b):.1f}" cy="{py(f):.1f}" r="3" fill="#555"/>'
                for b, f in curve]
        legend.append(("#555", "continuous (grey) optimum"))
    for k, (label, x, y) in enumerate(points):
        color = _MARKERS[k % len(_MARKERS)]
        out.append(f'<rect x="{px(x) - 4:.1f}" y="{py(y) - 4:.1f}" width="8" height="8" '
                   f'fill="{color}"/>')
        legend.append((color, label))
    for k, (color, label) in enumerate(legend):
        y = _TOP + 14 + 15 * k
        out.append(f'<rect x="{_LEFT + 10}" y="{y - 8}" width="8" height="8" fill="{color}"/>'
                   f'<text x="{_LEFT + 24}" y="{y}">{html.escape(label)}</text>')
    out.append("</svg>")
    return "".join(out)
