"""Benchmark (not a test): mass saved against the stiffness budget, organic and pattern, next to
the continuous (grey) optimum, on the starter designs.

For every plate with load cases in the chosen starters and every budget b, ``lighten_plate`` runs
with ``deflection_budget = b`` (every case may deflect at most (1 + b) x the solid plate's, its
own limits still apply): the organic style first, then the pattern style on the same density
field. Each row prints the mass saved by the cut holes (verified on the re-meshed holed plate:
"ok" means every case meets its limits and its budget in that analysis), the grey optimum's
saving at the same budget and design region, the share of it the cut holes reach, the largest
use of the budget over the cases, and the wall time. Targets (issue 13) at b = 0.10: at least
25 % on the four-wheel deck and 20 % on the two-wheel deck, the pattern within 70 % of the
organic saving, cut holes at least 85 % of the grey optimum, each starter within 15 s.

Run: python benchmarks/bench_lighten.py [--starters four_wheel_deck,two_wheel_base]
     [--budgets 0.02,0.05,0.1,0.2] [--shape round] [--styles organic,pattern]
"""

from __future__ import annotations

import argparse
import os
import time
from pathlib import Path

from platewright.fea.analysis import analyse_plate
from platewright.fea.lighten.design_region import LighteningSettings
from platewright.fea.lighten.pipeline import lighten_plate
from platewright.fea.loadcases.parse import parse_loads
from platewright.geometry.design.loader import load_design
from platewright.geometry.plate.pipeline import build_design

DESIGNS = Path(__file__).resolve().parents[1] / "templates" / "designs"
BUDGETS = (0.02, 0.05, 0.10, 0.20)


def _row(plate: str, b: float, res, wall: float, base: float | None) -> str:
    rep = res.to_report()
    used = [c["budget_used"] for c in rep["cases"] if c.get("budget_used") is not None]
    grey = res.grey_saved_fraction
    share = res.share_of_grey_optimum
    name = res.style if res.style == "organic" else f"pat-{res.pattern_shape[:3]}"
    of_org = "" if base is None or base <= 0 else f"{res.mass_saved_fraction / base:6.2f}"
    return (f"{plate:>10} {100 * b:5.0f}% {name:>8} {len(res.holes):5d} "
            f"{100 * res.mass_saved_fraction:6.1f}% {'-' if grey is None else f'{100 * grey:5.1f}%':>6} "
            f"{'-' if share is None else f'{share:5.2f}':>6} {of_org:>7} "
            f"{'ok' if res.verified else 'FAIL':>4} {max(used, default=0.0):6.2f} "
            f"{len(res.candidates):5d} {wall:7.1f}")


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--starters", default="four_wheel_deck,two_wheel_base")
    ap.add_argument("--budgets", default=",".join(str(b) for b in BUDGETS))
    ap.add_argument("--styles", default="organic,pattern")
    ap.add_argument("--shape", default="grid", choices=["round", "triangle", "slot", "grid"])
    args = ap.parse_args()
    print(f"load average before: {os.getloadavg()[0]:.2f} (2 cores)")
    header = (f"{'plate':>10} {'budget':>6} {'style':>8} {'holes':>5} {'saved':>7} {'grey':>6} "
              f"{'cut/gr':>6} {'of org':>7} {'ver':>4} {'used':>6} {'cands':>5} {'wall s':>7}")
    for starter in args.starters.split(","):
        design = load_design(DESIGNS / f"{starter}.yaml")
        plates = [b.plate for b in build_design(design).plates]
        loads = parse_loads(design, plates)
        print(f"\n{starter}")
        print(header)
        print("-" * len(header))
        for plate in plates:
            cases = [c for c in loads.cases if c.plate == plate.name]
            if not cases:
                continue
            before = analyse_plate(plate, cases, components=loads.components,
                                   vehicle_mass_g=loads.vehicle_mass_g)
            for b in (float(v) for v in args.budgets.split(",")):
                settings = LighteningSettings(deflection_budget=b, pattern_shape=args.shape)
                shared, base = None, None
                for style in args.styles.split(","):
                    t0 = time.perf_counter()
                    res = lighten_plate(plate, cases, style=style, settings=settings,
                                        components=loads.components,
                                        vehicle_mass_g=loads.vehicle_mass_g, before=before,
                                        densities=shared)
                    wall = time.perf_counter() - t0
                    shared = shared or res.density
                    print(_row(plate.name, b, res, wall, base if style != "organic" else None),
                          flush=True)
                    if style == "organic":
                        base = res.mass_saved_fraction
    print(f"\nload average after: {os.getloadavg()[0]:.2f} (2 cores)")


if __name__ == "__main__":
    main()
