"""Mesher benchmark (run by hand): a 300 x 200 mm plate with 20 holes at three element sizes.

    python benchmarks/bench_mesh.py            # sizes chosen for about 5k, 50k and 250k nodes
    python benchmarks/bench_mesh.py 2.0 1.0    # other sizes, mm

Each size runs in a fresh process so the peak resident memory (ru_maxrss) belongs to that run.
Prints nodes, triangles, seconds, peak memory, minimum angle and the time per node relative to
the first run (close to 1 means cost grows linearly with the node count).
"""

from __future__ import annotations

import multiprocessing as mp
import resource
import sys
import time

import numpy as np

from platewright.fea.mesh.boundary import TaggedRing
from platewright.fea.mesh.mesher import mesh_rings
from platewright.fea.mesh.plate_input import sample_contour
from platewright.geometry.plate.curves import circle

DEFAULT_SIZES_MM = (4.5, 1.2, 0.52)


def bench_rings(size_mm: float) -> list[TaggedRing]:
    """A 300 x 200 mm deck with 20 round holes of 3 to 16 mm diameter (invented layout).

    Holes are sampled as the plate input does (chords no longer than the local size).
    """
    outline = np.array([[-150.0, -100.0], [150.0, -100.0], [150.0, 100.0], [-150.0, 100.0]])
    rings = [TaggedRing(outline, "outline", False)]
    diameters = [3.0, 5.0, 8.0, 12.0, 16.0]
    for i in range(5):
        for j in range(4):
            x = -120.0 + 60.0 * i + (6.0 if j % 2 else 0.0)
            y = -75.0 + 50.0 * j
            d = diameters[(i + j) % 5]
            pts = sample_contour(circle((x, y), d / 2.0, ccw=False), size_mm)
            rings.append(TaggedRing(pts, f"hole_{i}_{j}", True))
    return rings


def _run(size_mm: float, out: mp.Queue) -> None:
    rings = bench_rings(size_mm)
    t0 = time.perf_counter()
    mesh = mesh_rings(rings, size_mm)
    dt = time.perf_counter() - t0
    peak_mb = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024.0
    q = mesh.quality()
    out.put((size_mm, len(mesh.nodes), len(mesh.triangles), dt, peak_mb, q.min_angle_deg,
             q.mean_angle_deg, q.count_below_20_deg))


def main(argv: list[str]) -> None:
    sizes = [float(a) for a in argv] or list(DEFAULT_SIZES_MM)
    ctx = mp.get_context("spawn")
    print(f"{'size_mm':>8} {'nodes':>9} {'triangles':>10} {'seconds':>8} {'peak_MB':>8} "
          f"{'min_deg':>8} {'mean_min_deg':>12} {'<20deg':>6} {'s/node ratio':>12}")
    ref = None
    for s in sizes:
        q: mp.Queue = ctx.Queue()
        p = ctx.Process(target=_run, args=(s, q))
        p.start()
        res = q.get()
        p.join()
        size, nodes, tris, dt, peak, amin, amean, nbad = res
        per_node = dt / nodes
        ref = ref or per_node
        print(f"{size:8.3f} {nodes:9d} {tris:10d} {dt:8.2f} {peak:8.0f} {amin:8.2f} "
              f"{amean:12.2f} {nbad:6d} {per_node / ref:12.2f}")


if __name__ == "__main__":
    main(sys.argv[1:])
