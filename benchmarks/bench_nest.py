"""Nesting benchmark (run by hand): an invented mixed part list at 25, 50 and 100 copies.

    python benchmarks/bench_nest.py              # 25, 50, 100 parts, 90-degree rotations
    python benchmarks/bench_nest.py 50 --free    # 50 parts, 15-degree steps
    python benchmarks/bench_nest.py 50 --png out.png   # also draw the first sheets

Parts: decks with a round cut-out, brackets with two holes, strips, pads and L-shaped rails
(the demo scenario's test-track buggy; every size invented), on 600 x 400 mm sheets, spacing
3 mm, margin 5 mm. Prints parts, sheets, utilisation of each sheet, seconds and seconds per part
relative to the first run (close to 1 means cost grows linearly with the part count).
"""

from __future__ import annotations

import sys
import time

import numpy as np

from platewright.geometry.model import CutContour, Feature, Material, Plate
from platewright.geometry.plate.curves import Contour, circle
from platewright.geometry.shop.nesting import NestItem, SheetSize, nest_parts

_MAT = Material("bench_acrylic", "bench acrylic", 3000.0, 0.37, 1185.0, 72.0, "tensile", 0.2, {},
                None)


def _rect(w: float, h: float) -> Contour:
    return Contour(np.array([[-w / 2, -h / 2], [w / 2, -h / 2], [w / 2, h / 2], [-w / 2, h / 2]]))


def _item(name: str, outline: Contour, holes: list[Contour], qty: int) -> NestItem:
    feat = Feature("outline", "outline", (0.0, 0.0), (outline,))
    plate = Plate(name, _MAT, 3.0, 0.2, feat, ())
    cut = [CutContour(f"h{k}", "inner", k, h, h) for k, h in enumerate(holes)]
    cut.append(CutContour("outline", "outer", len(cut), outline, outline))
    return NestItem(name, plate, tuple(cut), qty)


def part_list(n: int) -> list[NestItem]:
    """About ``n`` copies of five invented parts, in fixed proportions."""
    ell = Contour(np.array([[0, 0], [140, 0], [140, 25], [25, 25], [25, 90], [0, 90]], float))
    kinds = [
        (_rect(200, 140), [circle((0, 0), 55, ccw=False)], 0.12),
        (_rect(70, 45), [circle((-20, 0), 4, ccw=False), circle((20, 0), 4, ccw=False)], 0.3),
        (_rect(160, 22), [], 0.2),
        (_rect(35, 35), [circle((0, 0), 5, ccw=False)], 0.24),
        (ell, [], 0.14),
    ]
    names = ["deck", "bracket", "strip", "pad", "rail"]
    return [_item(nm, o, h, max(1, round(n * f))) for nm, (o, h, f) in zip(names, kinds)]


def run(n: int, rotations: str):
    items = part_list(n)
    t0 = time.perf_counter()
    res = nest_parts(items, {("bench_acrylic", 3.0): SheetSize(600.0, 400.0)}, spacing_mm=3.0,
                     margin_mm=5.0, rotations=rotations)
    return sum(it.quantity for it in items), res, time.perf_counter() - t0


def draw(res, path: str) -> None:
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    sheets = res.sheets[:4]
    fig, axes = plt.subplots(1, len(sheets), figsize=(5 * len(sheets), 3.6), squeeze=False)
    for ax, s in zip(axes[0], sheets):
        ax.plot([0, 600, 600, 0, 0], [0, 0, 400, 400, 0], "k-", lw=0.8)
        for c in s.cut:
            p = c.path.to_points(0.05)
            p = np.vstack([p, p[:1]])
            ax.plot(p[:, 0], p[:, 1], "r-" if c.layer == "outer" else "b-", lw=0.6)
        ax.set_aspect("equal")
        ax.set_title(f"sheet {s.index}: {100 * s.utilisation:.1f} %")
    fig.savefig(path, dpi=110, bbox_inches="tight")


def main(argv: list[str]) -> None:
    rotations = "free" if "--free" in argv else "90"
    png = argv[argv.index("--png") + 1] if "--png" in argv else None
    counts = [int(a) for a in argv if a.isdigit()] or [25, 50, 100]
    base = None
    for n in counts:
        parts, res, secs = run(n, rotations)
        per = secs / parts
        base = base or per
        used = ", ".join(f"{100 * s.utilisation:.0f}%" for s in res.sheets)
        print(f"{parts:4d} parts  {len(res.sheets):2d} sheets [{used}]  {secs:6.2f} s  "
              f"per part x{per / base:.2f}  ({rotations})")
        if png:
            draw(res, png)


if __name__ == "__main__":
    main(sys.argv[1:])
