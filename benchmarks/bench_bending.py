"""Benchmark: DKT plate bending from ~10k to ~1M unknowns, multigrid against the direct solve.

A simply supported square (side 100 mm, 2 mm sheet, E = 2000 MPa, nu = 0.3) under uniform
pressure, on structured meshes of n x n cells (two triangles each, 3 (n + 1)^2 unknowns). Each
row: element stiffness, assembly, load, supports + solve (``method="auto"`` with the plate
multigrid layout: direct below fea.multigrid.plate_layout's direct limit, else the multigrid of
fea.multigrid with flexible CG to the relative residual 1e-10 or round-off), CG iterations, the
centre deflection against the tabulated 0.00406 q a^4 / D (Timoshenko and Woinowsky-Krieger;
Roark Table 11.4), and the process's peak resident memory so far (sizes run smallest first, so
each row's peak is that size's). With --direct-max, sizes up to it are ALSO solved directly in
the same process (paired), and the ratio direct / chosen solve time is printed: the measurement
behind the automatic choice.

Run: ``python benchmarks/bench_bending.py [--cells 57 99 182 288 576] [--method auto]
[--direct-max 300000]``.
"""

from __future__ import annotations

import argparse
import datetime
import os
import platform
import resource
import sys
import time

import numpy as np

from platewright.fea.assembly import assemble_matrix, assemble_vector, element_dofs
from platewright.fea.elements.bending import (
    bending_rigidity,
    dkt_pressure_load,
    dkt_stiffness,
    isotropic_bending_matrix,
)
from platewright.fea.elements.bending_rigid import BENDING_MODE_NAMES, bending_rigid_modes
from platewright.fea.loadcases.supports import simply_supported
from platewright.fea.mesh.triangles import Mesh
from platewright.fea.multigrid import plate_layout
from platewright.fea.solve import ConvergenceError, MechanismError, solve_system

E_MPA, NU, T_MM, SIDE_MM, Q_MPA = 2000.0, 0.3, 2.0, 100.0, 1e-3


def square(n: int) -> Mesh:
    """Structured square [-a/2, a/2]^2, n x n cells with alternating diagonals, tag "outline"."""
    xs = np.linspace(-SIDE_MM / 2, SIDE_MM / 2, n + 1)
    gx, gy = np.meshgrid(xs, xs, indexing="xy")
    nodes = np.column_stack([gx.ravel(), gy.ravel()])
    i, j = (a.ravel() for a in np.meshgrid(np.arange(n), np.arange(n), indexing="xy"))
    a0 = j * (n + 1) + i
    a1, a2, a3 = a0 + 1, a0 + n + 2, a0 + n + 1
    alt = ((i + j) % 2 == 1)[:, None]
    t1 = np.where(alt, np.column_stack([a0, a1, a3]), np.column_stack([a0, a1, a2]))
    t2 = np.where(alt, np.column_stack([a1, a2, a3]), np.column_stack([a0, a2, a3]))
    k = np.arange(n)
    edges = np.vstack(
        [
            np.column_stack([k, k + 1]),
            np.column_stack([k * (n + 1) + n, (k + 1) * (n + 1) + n]),
            np.column_stack([n * (n + 1) + k + 1, n * (n + 1) + k]),
            np.column_stack([(k + 1) * (n + 1), k * (n + 1)]),
        ]
    )
    return Mesh(nodes, np.vstack([t1, t2]), edges, np.zeros(len(edges), int), ("outline",))


def peak_rss_mb() -> float:
    """Peak resident memory of this process so far, MB (Linux reports kB)."""
    return resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024.0


def run(n: int, method: str = "auto") -> dict[str, float]:
    """One timed solve on n x n cells with ``method`` of solve_system; returns the measurements."""
    t0 = time.perf_counter()
    mesh = square(n)
    db = isotropic_bending_matrix(E_MPA, NU, T_MM)
    t1 = time.perf_counter()
    ke = dkt_stiffness(mesh.nodes, mesh.triangles, db)
    t2 = time.perf_counter()
    dofs = element_dofs(mesh.triangles, 3)
    n_dofs = 3 * mesh.n_nodes
    k = assemble_matrix(ke, dofs, n_dofs)
    del ke
    f = assemble_vector(dkt_pressure_load(mesh.nodes, mesh.triangles, Q_MPA), dofs, n_dofs)
    t3 = time.perf_counter()
    sup = simply_supported(mesh, "outline")
    sol = solve_system(
        k, f, sup.fixed_dofs, sup.fixed_values,
        rigid_modes=bending_rigid_modes(mesh.nodes), mode_names=BENDING_MODE_NAMES, method=method,
        layout=plate_layout(mesh.nodes, mesh.triangles),
    )  # fmt: skip
    t4 = time.perf_counter()
    centre = int(np.argmin(np.hypot(mesh.nodes[:, 0], mesh.nodes[:, 1])))
    coef = sol.u[3 * centre] * bending_rigidity(E_MPA, NU, T_MM) / (Q_MPA * SIDE_MM**4)
    return {
        "dofs": float(n_dofs),
        "mesh_s": t1 - t0,
        "stiffness_s": t2 - t1,
        "assembly_s": t3 - t2,
        "solve_s": t4 - t3,
        "total_s": t4 - t0,
        "iterations": float(sol.iterations),
        "method": sol.method,
        "w_coef": coef,
        "eq_res": sol.equilibrium_residual,
        "peak_mb": peak_rss_mb(),
    }


def _direct_solve_s(n: int) -> float:
    """Seconds of a direct solve of the same n x n problem (supports + factorisation + solve)."""
    mesh = square(n)
    db = isotropic_bending_matrix(E_MPA, NU, T_MM)
    dofs = element_dofs(mesh.triangles, 3)
    k = assemble_matrix(dkt_stiffness(mesh.nodes, mesh.triangles, db), dofs, 3 * mesh.n_nodes)
    f = assemble_vector(dkt_pressure_load(mesh.nodes, mesh.triangles, Q_MPA), dofs,
                        3 * mesh.n_nodes)
    sup = simply_supported(mesh, "outline")
    t0 = time.perf_counter()
    solve_system(k, f, sup.fixed_dofs, sup.fixed_values, rigid_modes=bending_rigid_modes(mesh.nodes),
                 mode_names=BENDING_MODE_NAMES, method="direct")
    return time.perf_counter() - t0


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--cells", type=int, nargs="+", default=[57, 99, 182, 288, 576])
    parser.add_argument("--method", choices=["auto", "direct", "amg"], default="auto")
    parser.add_argument("--direct-max", type=int, default=0,
                        help="also time the direct solve up to this many unknowns (paired)")
    args = parser.parse_args(argv)
    load = "load average {:.2f} {:.2f} {:.2f}".format(*os.getloadavg())
    print(f"# bench_bending {datetime.date.today()} {platform.node()} {os.cpu_count()} cores, "
          f"{load}")
    head = (
        f"{'dofs':>9} {'method':>6} {'it':>4} {'Ke s':>7} {'asm s':>7} {'solve s':>8} "
        f"{'total s':>8} {'peak MB':>8} {'w D/qa^4':>9} {'eq res':>8} {'direct s':>9} "
        f"{'dir/solve':>9}"
    )
    print(head)
    print("-" * len(head))
    rows = []
    for n in sorted(args.cells):
        try:
            r = run(n, args.method)
        except (ConvergenceError, MechanismError) as exc:
            dofs = 3 * (n + 1) ** 2
            print(f"{dofs:>9} refused by solve_system: {exc}", flush=True)
            continue
        line = (
            f"{int(r['dofs']):>9} {r['method']:>6} {int(r['iterations']):>4} "
            f"{r['stiffness_s']:>7.2f} {r['assembly_s']:>7.2f} {r['solve_s']:>8.2f} "
            f"{r['total_s']:>8.2f} {r['peak_mb']:>8.0f} "
            f"{r['w_coef']:>9.6f} {r['eq_res']:>8.1e}"
        )
        if r["dofs"] <= args.direct_max and r["method"] != "direct":
            try:
                ds = _direct_solve_s(n)
                line += f" {ds:>9.2f} {ds / r['solve_s']:>9.2f}"
            except MechanismError as exc:
                line += f" refused: {str(exc)[:40]}"
        print(line, flush=True)
        rows.append(r)
    print("# after: load average {:.2f} {:.2f} {:.2f}".format(*os.getloadavg()))
    for r in rows:
        if 240_000 <= r["dofs"] <= 300_000:
            ok = "met" if r["solve_s"] <= 5.0 else "missed"
            print(f"# target at {int(r['dofs']):,} unknowns: solve within 5 s: {ok} "
                  f"({r['solve_s']:.2f} s, {int(r['iterations'])} iterations)")
        if r["dofs"] >= 900_000:
            ok = "met" if r["solve_s"] <= 30.0 else "missed"
            print(f"# target at {int(r['dofs']):,} unknowns: solve within 30 s: {ok} "
                  f"({r['solve_s']:.2f} s, {int(r['iterations'])} iterations)")
    return 0


if __name__ == "__main__":
    sys.exit(main())
