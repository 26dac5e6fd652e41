"""Contour plots of analysis results as PNG bytes (matplotlib, Agg backend, no global state).

Each plot shows one field (deflection in mm or von Mises stress in MPa) over the plate, the
outline and holes drawn on top, and the largest value marked. The caption repeats that the
values are finite-element estimates. Nothing is written to disk here.
"""

from __future__ import annotations

import io

import numpy as np
from matplotlib.backends.backend_agg import FigureCanvasAgg
from matplotlib.figure import Figure
from matplotlib.tri import Triangulation

from .results import CaseResult

__all__ = ["FIELDS", "plot_field", "plot_case"]

#: Plot names -> (CaseFields attribute, colour-bar label).
FIELDS: dict[str, tuple[str, str]] = {
    "deflection": ("deflection_mm", "deflection (mm)"),
    "von_mises": ("von_mises_mpa", "von Mises stress (MPa)"),
}


def plot_field(result: CaseResult, field: str = "deflection", *, dpi: int = 110,
               width_in: float = 7.0) -> bytes:
    """PNG bytes of one field of ``result`` over the plate.

    field: "deflection" (|w| in bending, in-plane displacement magnitude otherwise, mm) or
    "von_mises" (MPa; in bending on the more stressed face). dpi and width_in (inches) set the
    image size; the height follows the plate's aspect ratio. Raises ValueError for an unknown
    field or a result kept without fields.
    """
    if field not in FIELDS:
        raise ValueError(f"unknown field {field!r}; valid: {', '.join(FIELDS)}")
    f = result.fields
    if f is None:
        raise ValueError("this result was computed without fields (keep_fields=False)")
    attr, label = FIELDS[field]
    values = np.asarray(getattr(f, attr), dtype=float)
    xy = f.nodes_mm
    x0, y0 = xy.min(axis=0)
    x1, y1 = xy.max(axis=0)
    aspect = (y1 - y0) / max(x1 - x0, 1e-9)
    # fixed margins instead of a layout engine: constrained layout measured ~40% of plot time
    fig = Figure(figsize=(width_in, max(2.5, min(width_in * aspect + 0.8, 2 * width_in))), dpi=dpi)
    fig.subplots_adjust(left=0.1, right=0.97, bottom=0.1, top=0.92)
    FigureCanvasAgg(fig)
    ax = fig.add_subplot(1, 1, 1)
    tri = Triangulation(xy[:, 0], xy[:, 1], f.triangles)
    vmin, vmax = float(values.min()), float(values.max())
    if vmax - vmin > 1e-12 * max(1.0, abs(vmax)):
        art = ax.tricontourf(tri, values, levels=np.linspace(vmin, vmax, 15), cmap="viridis")
    else:  # a constant field has no contour levels
        art = ax.tripcolor(tri, values, cmap="viridis", vmin=vmin - 1.0, vmax=vmax + 1.0)
    for ring in f.rings_mm:
        closed = np.vstack([ring, ring[:1]])
        ax.plot(closed[:, 0], closed[:, 1], color="black", linewidth=0.8)
    i = int(np.argmax(values))
    ax.plot(xy[i, 0], xy[i, 1], marker="x", color="red", markersize=9, markeredgewidth=2)
    ax.annotate(f"max {values[i]:.3g}", (xy[i, 0], xy[i, 1]), textcoords="offset points",
                xytext=(6, 6), color="red", fontsize=9)
    ax.set_aspect("equal")
    ax.set_xlabel("x (mm)")
    ax.set_ylabel("y (mm)")
    ax.set_title(f"{result.plate} / {result.name} ({result.family}): {label}", fontsize=10)
    fig.colorbar(art, ax=ax, label=label, shrink=0.85)
    fig.text(0.01, 0.01, "finite-element estimate: confirm by test", fontsize=7, color="0.35")
    buf = io.BytesIO()
    fig.savefig(buf, format="png", metadata={"Software": None})
    return buf.getvalue()


def plot_case(result: CaseResult, *, dpi: int = 110) -> dict[str, bytes]:
    """Both plots of a case: {"deflection": PNG bytes, "von_mises": PNG bytes}."""
    return {name: plot_field(result, name, dpi=dpi) for name in FIELDS}
