"""Time and memory of a DKT plate-bending solve from ~10k to ~1M unknowns.

A simply supported square (side 100 mm, 2 mm sheet, E = 2000 MPa, nu = 0.3) under uniform
pressure, on structured meshes of n x n cells (two triangles each, 3 (n + 1)^2 unknowns). Each
row: element stiffness, assembly, load, supports + solve (``method="auto"``: direct below
fea.solve.AUTO_DIRECT_LIMIT free unknowns, else multigrid-preconditioned CG), the centre
deflection against the tabulated 0.00406 q a^4 / D (Timoshenko and Woinowsky-Krieger; Roark
Table 11.4), and the process's peak resident memory so far (sizes run smallest first, so each
row's peak is that size's). Ratios are against the first (reference) row of the same process.

Run: ``python benchmarks/bench_bending.py [--cells 57 99 182 315 576] [--method direct]``.
The default is the direct solver: on this fourth-order problem the multigrid path of
``method="auto"`` above the direct limit has not converged (measured; see the report).
"""

from __future__ import annotations

import argparse
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


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--cells", type=int, nargs="+", default=[57, 99, 182, 315, 576])
    parser.add_argument("--method", choices=["auto", "direct", "amg"], default="direct")
    args = parser.parse_args(argv)
    head = (
        f"{'dofs':>9} {'method':>6} {'it':>4} {'Ke s':>7} {'asm s':>7} {'solve s':>8} "
        f"{'total s':>8} {'s/dof ratio':>11} {'peak MB':>8} {'w D/qa^4':>9} {'eq res':>8}"
    )
    print(head)
    ref = None
    for n in sorted(args.cells):
        try:
            r = run(n, args.method)
        except (ConvergenceError, MechanismError) as exc:
            dofs = 3 * (n + 1) ** 2
            print(f"{dofs:>9} refused by solve_system: {exc}", flush=True)
            continue
        per_dof = r["total_s"] / r["dofs"]
        ref = per_dof if ref is None else ref
        print(
            f"{int(r['dofs']):>9} {r['method']:>6} {int(r['iterations']):>4} "
            f"{r['stiffness_s']:>7.2f} {r['assembly_s']:>7.2f} {r['solve_s']:>8.2f} "
            f"{r['total_s']:>8.2f} {per_dof / ref:>11.2f} {r['peak_mb']:>8.0f} "
            f"{r['w_coef']:>9.6f} {r['eq_res']:>8.1e}",
            flush=True,
        )
    return 0


if __name__ == "__main__":
    sys.exit(main())
