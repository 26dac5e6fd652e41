"""Time per iteration of the SIMP optimiser on a 200 x 120 mm plate, two load cases.

An invented demo deck: 200 x 120 mm, 3 mm sheet of the library's test acrylic-like material
(E 3000 MPa, nu 0.37), four 6 mm corner bores. Load cases (both families at once):

- ``deck_load`` (bending): the four bores held rigidly, a 0.002 MPa pressure on the whole deck
  (about 48 N in all) plus self-weight;
- ``side_bump`` (in_plane): the two left bores held, a 30 N push along -x spread on the right
  edge.

For each element size: elements, unknowns, model set-up (mapping, element matrices, solid
solves), time per iteration (both analyses, filter, update) and total, at volume fraction 0.5,
rmin = 2.5 element sizes, ``--iterations`` updates (default 20). Times in seconds.

Run: ``python benchmarks/bench_topopt.py [--sizes 3.0 2.0] [--iterations 20]``.
"""

from __future__ import annotations

import argparse
import sys
import time
from pathlib import Path
from types import SimpleNamespace

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parents[1] / "tests"))

from plate_factory import make_plate, rect_contour, round_hole  # noqa: E402

from platewright.fea.lighten.plate_density import PlateDensityModel  # noqa: E402
from platewright.fea.lighten.simp import TopOptSettings, optimise  # noqa: E402
from platewright.fea.loadcases.parse import parse_loads  # noqa: E402
from platewright.fea.mesh.mesher import mesh_rings  # noqa: E402
from platewright.fea.mesh.plate_input import plate_rings  # noqa: E402

BORES = {"bore_a": (12.0, 12.0), "bore_b": (188.0, 12.0), "bore_c": (188.0, 108.0),
         "bore_d": (12.0, 108.0)}


def deck_and_cases():
    """The demo plate and its two parsed load cases."""
    holes = tuple(round_hole(k, c, 6.0) for k, c in BORES.items())
    plate = make_plate(rect_contour(200.0, 120.0, (100.0, 60.0)), holes, thickness_mm=3.0,
                       name="demo_deck")
    cases = [
        {"name": "deck_load", "plate": plate.name, "family": "bending",
         "supports": [{"at": "bores", "features": list(BORES), "mode": "rigid"}],
         "loads": [{"type": "pressure", "pressure_mpa": 0.002}]},
        {"name": "side_bump", "plate": plate.name, "family": "in_plane", "self_weight": False,
         "supports": [{"at": "bores", "features": ["bore_a", "bore_d"], "mode": "rigid"}],
         "loads": [{"type": "edge", "region_mm": {"x_min": 200}, "force_n": [-30, 0]}]},
    ]
    design = SimpleNamespace(load_cases=cases, components=[], references={},
                             line_of=lambda _p: None, source_path="bench")
    return plate, parse_loads(design, [plate]).cases


def run(size_mm: float, iterations: int) -> dict[str, float]:
    """One optimisation at element size ``size_mm``; returns the measured numbers."""
    plate, cases = deck_and_cases()
    t0 = time.perf_counter()
    mesh = mesh_rings(plate_rings(plate, size_mm), size_mm)
    t1 = time.perf_counter()
    model = PlateDensityModel(plate, mesh, cases, vehicle_mass_g=500.0)
    t2 = time.perf_counter()
    stamps: list[float] = []
    res = optimise(model, 0.5, TopOptSettings(rmin_mm=2.5 * size_mm, max_iter=iterations,
                                              tol_change=0.0),
                   progress=lambda *_a: stamps.append(time.perf_counter()))
    t3 = time.perf_counter()
    steps = np.diff(np.array([t2, *stamps]))
    dofs = 3 * mesh.n_nodes + 2 * mesh.n_nodes
    return {"size_mm": size_mm, "elements": mesh.n_triangles, "unknowns": dofs,
            "mesh_s": t1 - t0, "setup_s": t2 - t1, "per_iter_s": float(np.median(steps[1:])),
            "total_s": t3 - t2, "iterations": res.iterations,
            "objective": res.objective_history[-1]}


def main(argv: list[str] | None = None) -> int:
    """Run the benchmark and write one line per size to standard output."""
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--sizes", type=float, nargs="+", default=[3.0, 2.0])
    ap.add_argument("--iterations", type=int, default=20)
    args = ap.parse_args(argv)
    out = sys.stdout
    out.write("size_mm elements unknowns(bend+inplane) mesh_s setup_s per_iter_s total_s "
              "iterations objective\n")
    for h in args.sizes:
        r = run(h, args.iterations)
        out.write(f"{r['size_mm']:7.2f} {r['elements']:8d} {r['unknowns']:9d} "
                  f"{r['mesh_s']:7.2f} {r['setup_s']:7.2f} {r['per_iter_s']:10.3f} "
                  f"{r['total_s']:7.2f} {r['iterations']:10d} {r['objective']:9.4f}\n")
        out.flush()
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
