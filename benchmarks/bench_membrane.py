"""Benchmark: quadratic plane stress (T6) from ~10k to ~1M unknowns, against scikit-fem.

Run by hand:  python benchmarks/bench_membrane.py [--sizes 10000 50000 200000 1000000]
                                                   [--skfem-max 250000]

Problem: a 200 x 100 mm aluminium plate, 3 mm thick, clamped on its left edge, under its own
weight and a 50 N shear on its right edge. For each size, one child process runs platewright
(mesh -> P2 nodes -> assembly -> loads -> solve with method "auto" -> nodal stresses and von
Mises) and reports wall times and its peak resident memory; a second child assembles and solves
the SAME mesh with scikit-fem (its assemble + condense + default solve), up to --skfem-max
unknowns. The table prints the time ratio scikit-fem / platewright for assembly + solve.
Each child is a fresh process, so peak memory (ru_maxrss) belongs to that run alone.
Both children get the same BLAS thread count (--blas-threads, default 1: on a small shared
machine threaded BLAS was measured several times slower than one thread).
"""

from __future__ import annotations

import argparse
import json
import os
import resource
import subprocess
import sys
import time

import numpy as np

WIDTH_MM, HEIGHT_MM, THICK_MM = 200.0, 100.0, 3.0
E_MPA, NU = 70000.0, 0.33
WEIGHT_N_MM3 = 2.7e-6 * 9.81  # 2700 kg/m^3 x g, in N/mm^3
TIP_N = 50.0


def _grid_for(unknowns: int) -> tuple[int, int]:
    """nx, ny (ny = nx / 2) with about ``unknowns`` T6 dofs: 2 (2 nx + 1)(2 ny + 1)."""
    nx = max(2, int(round(np.sqrt(unknowns / 4.0))))
    nx += nx % 2
    return nx, nx // 2


def _peak_mb() -> float:
    return resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024.0


def run_platewright(unknowns: int) -> dict:
    from platewright.fea.elements.constitutive import isotropic_plane_stress
    from platewright.fea.elements.membrane import (
        assemble_stiffness,
        body_force_vector,
        edge_load_vector,
        nodal_stresses,
        von_mises,
    )
    from platewright.fea.elements.membrane_rigid import MEMBRANE_MODE_NAMES, membrane_rigid_modes
    from platewright.fea.elements.quadratic import quadratic_mesh
    from platewright.fea.mesh.structured import rectangle_mesh
    from platewright.fea.solve import solve_system

    nx, ny = _grid_for(unknowns)
    out: dict = {}
    t0 = time.perf_counter()
    mesh = rectangle_mesh(WIDTH_MM, HEIGHT_MM, nx, ny)
    out["mesh_s"] = time.perf_counter() - t0
    t0 = time.perf_counter()
    q = quadratic_mesh(mesh)
    d = isotropic_plane_stress(E_MPA, NU)
    k = assemble_stiffness(q.nodes, q.tri6, d, THICK_MM)
    f = body_force_vector(q.nodes, q.tri6, np.array([0.0, -WEIGHT_N_MM3]), THICK_MM)
    f += edge_load_vector(q.nodes, q.edge_nodes_of("right"), np.array([0.0, -TIP_N / HEIGHT_MM]))
    out["assemble_s"] = time.perf_counter() - t0
    left = q.nodes_of("left")
    fixed = np.concatenate([2 * left, 2 * left + 1])
    t0 = time.perf_counter()
    sol = solve_system(k, f, fixed, rigid_modes=membrane_rigid_modes(q.nodes),
                       mode_names=MEMBRANE_MODE_NAMES)
    out["solve_s"] = time.perf_counter() - t0
    t0 = time.perf_counter()
    vm = von_mises(nodal_stresses(q.nodes, q.tri6, sol.u, d))
    out["stress_s"] = time.perf_counter() - t0
    out.update(
        dofs=sol.dofs, method=sol.method, iterations=sol.iterations,
        tip_mm=float(sol.u[2 * q.nodes_of("right") + 1].mean()), max_vm_mpa=float(vm.max()),
        equilibrium=sol.equilibrium_residual, peak_mb=_peak_mb(),
    )
    return out


def run_skfem(unknowns: int) -> dict:
    import skfem
    from skfem.models.elasticity import linear_elasticity

    from platewright.fea.mesh.structured import rectangle_mesh

    nx, ny = _grid_for(unknowns)
    mesh = rectangle_mesh(WIDTH_MM, HEIGHT_MM, nx, ny)
    out: dict = {}
    t0 = time.perf_counter()
    sk_mesh = skfem.MeshTri(mesh.nodes.T.copy(), mesh.triangles.T.copy())
    basis = skfem.Basis(sk_mesh, skfem.ElementVector(skfem.ElementTriP2()))
    lam = E_MPA * NU / (1 - NU**2)
    mu = E_MPA / (2 * (1 + NU))
    k = THICK_MM * linear_elasticity(lam, mu).assemble(basis)

    @skfem.LinearForm
    def weight(v, w):
        return -WEIGHT_N_MM3 * THICK_MM * v[1]

    f = weight.assemble(basis)
    out["assemble_s"] = time.perf_counter() - t0
    fixed = basis.get_dofs(lambda x: np.isclose(x[0], 0.0)).all()
    t0 = time.perf_counter()
    u = skfem.solve(*skfem.condense(k, f, D=fixed))
    out["solve_s"] = time.perf_counter() - t0
    out.update(dofs=int(u.size), peak_mb=_peak_mb())
    return out


def _child(kind: str, unknowns: int, blas_threads: int) -> dict:
    cmd = [sys.executable, __file__, "--child", kind, str(unknowns)]
    env = dict(os.environ)
    if blas_threads > 0:
        for var in ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS", "MKL_NUM_THREADS"):
            env[var] = str(blas_threads)
    res = subprocess.run(cmd, capture_output=True, text=True, check=False, env=env)
    if res.returncode != 0:
        return {"error": res.stderr.strip().splitlines()[-1] if res.stderr else "failed"}
    return json.loads(res.stdout.strip().splitlines()[-1])


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--sizes", type=int, nargs="*",
                    default=[10_000, 50_000, 200_000, 500_000, 1_000_000])
    ap.add_argument("--skfem-max", type=int, default=250_000)
    ap.add_argument("--blas-threads", type=int, default=1,
                    help="BLAS threads in both children (0: leave the environment alone)")
    ap.add_argument("--child", nargs=2, help=argparse.SUPPRESS)
    args = ap.parse_args()
    if args.child:
        kind, n = args.child[0], int(args.child[1])
        result = run_platewright(n) if kind == "pw" else run_skfem(n)
        print(json.dumps(result))
        return
    head = (f"{'dofs':>9} {'method':>6} {'it':>3} {'asm s':>7} {'solve s':>8} {'stress s':>8} "
            f"{'peak MB':>8} | {'skfem asm':>9} {'skfem sol':>9} {'skfem MB':>8} {'ratio':>6}")
    print(head)
    print("-" * len(head))
    for n in args.sizes:
        pw = _child("pw", n, args.blas_threads)
        if "error" in pw:
            print(f"{n:>9} platewright failed: {pw['error']}")
            continue
        line = (f"{pw['dofs']:>9} {pw['method']:>6} {pw['iterations']:>3} "
                f"{pw['assemble_s']:>7.2f} {pw['solve_s']:>8.2f} {pw['stress_s']:>8.2f} "
                f"{pw['peak_mb']:>8.0f} |")
        if n <= args.skfem_max:
            sk = _child("sk", n, args.blas_threads)
            if "error" in sk:
                line += f" skfem failed: {sk['error']}"
            else:
                ratio = (sk["assemble_s"] + sk["solve_s"]) / (pw["assemble_s"] + pw["solve_s"])
                line += (f" {sk['assemble_s']:>9.2f} {sk['solve_s']:>9.2f} {sk['peak_mb']:>8.0f}"
                         f" {ratio:>6.1f}")
        else:
            line += f" {'(skipped)':>9}"
        print(line, flush=True)


if __name__ == "__main__":
    main()
