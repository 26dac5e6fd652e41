"""Benchmark (not a test): mass saved by lightening against the deflection limit, and wall time.

For the bundled four-wheel deck (templates/designs/four_wheel_deck.yaml) every load case gets a
deflection limit of +0 %, +5 %, +10 % and +25 % over the solid plate's own deflection (its
safety-factor limit is kept), and both styles run. Each row reports the mass removed, whether
every case passes in the verifying real-geometry analysis, the worst deflection over its limit,
and the wall time of the suggestion. Targets: at +10 %, at least 25 % of the plate's mass
removed with every case passing; a suggestion within 20 s on a 2-core machine.

Run: python benchmarks/bench_lighten.py [--styles organic,pattern] [--shape round]
"""

from __future__ import annotations

import argparse
import time
from dataclasses import replace
from pathlib import Path

from platewright.fea.analysis import analyse_plate
from platewright.fea.lighten.design_region import LighteningSettings
from platewright.fea.lighten.pipeline import lighten_plate
from platewright.fea.loadcases.parse import Limits, parse_loads
from platewright.geometry.design.loader import load_design
from platewright.geometry.plate.pipeline import build_design

DESIGN = Path(__file__).resolve().parents[1] / "templates" / "designs" / "four_wheel_deck.yaml"
MARGINS = (0.0, 0.05, 0.10, 0.25)


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--styles", default="organic,pattern")
    ap.add_argument("--shape", default="round", choices=["round", "triangle", "slot"])
    ap.add_argument("--margins", default=",".join(str(m) for m in MARGINS))
    args = ap.parse_args()
    design = load_design(DESIGN)
    plates = [b.plate for b in build_design(design).plates]
    loads = parse_loads(design, plates)
    plate = plates[0]
    cases = [c for c in loads.cases if c.plate == plate.name]
    t0 = time.perf_counter()
    solid = analyse_plate(plate, cases, components=loads.components,
                          vehicle_mass_g=loads.vehicle_mass_g)
    t_solid = time.perf_counter() - t0
    d0 = {c.name: c.max_deflection_mm for c in solid.cases}
    print(f"plate {plate.name}: solid deflections "
          + ", ".join(f"{k} {v:.4f} mm" for k, v in d0.items())
          + f"; one solid analysis {t_solid:.2f} s")
    header = (f"{'limit':>6} {'style':>8} {'holes':>5} {'mass g':>15} {'saved':>7} {'passes':>6} "
              f"{'worst d/limit':>13} {'cands':>5} {'opt it':>6} {'time s':>7} {'t/solid':>7}")
    print(header)
    print("-" * len(header))
    for margin in (float(m) for m in args.margins.split(",")):
        limited = [replace(c, limits=Limits(max_deflection_mm=d0[c.name] * (1.0 + margin),
                                            min_safety_factor=c.limits.min_safety_factor))
                   for c in cases]
        for style in args.styles.split(","):
            t0 = time.perf_counter()
            res = lighten_plate(plate, limited, style=style, components=loads.components,
                                vehicle_mass_g=loads.vehicle_mass_g,
                                settings=LighteningSettings(pattern_shape=args.shape))
            wall = time.perf_counter() - t0
            worst = max(c.max_deflection_mm / c.limit_mm for c in res.after.cases
                        if c.limit_mm is not None)
            name = style if style == "organic" else f"{style[:3]}-{args.shape[:3]}"
            print(f"{margin * 100:5.0f}% {name:>8} {len(res.holes):5d} "
                  f"{res.mass_before_g:6.1f}->{res.mass_after_g:6.1f} "
                  f"{100 * res.mass_saved_fraction:6.1f}% {str(res.after.passes):>6} "
                  f"{worst:13.4f} {len(res.candidates):5d} {res.optimiser_iterations:6d} "
                  f"{wall:7.2f} {wall / t_solid:7.1f}", flush=True)


if __name__ == "__main__":
    main()
