"""Benchmark: quadratic plane stress (T6), platewright against scikit-fem on the SAME problem.

Run by hand:  python benchmarks/bench_membrane.py [--sizes 50000 200000 1000000]
                  [--direct-max 250000] [--amg-max 1000000] [--blas-threads 1]

Problem (invented): the 300 x 200 mm deck with 20 round holes of benchmarks/bench_mesh.py, 3 mm
aluminium (E = 70000 MPa, nu = 0.33), clamped on its left edge, under its own weight and a 50 N
downward shear spread evenly over its right edge. For each size three fresh processes run:

- platewright: meshes the deck with its own mesher (timed apart, "mesh s"), saves the mesh for
  the others, then P2 nodes + assembly + loads ("asm s"), solve_system with method "auto" and the
  element family's multigrid layout ("solve s"), nodal von Mises stresses ("stress s");
- scikit-fem + pyamg: the SAME mesh and P2 elements, the SAME 3-point quadrature (exact for the
  straight-sided T6 stiffness; scikit-fem's default for P2 is 6 points), the same loads and
  supports, then pyamg's smoothed aggregation with the three rigid-body modes as near-nullspace
  (pyamg's defaults otherwise) as preconditioner of CG, to the same relative residual 1e-10;
- scikit-fem + its default solve (scipy's sparse direct solver), same assembly, up to
  --direct-max unknowns.

Printed for each: times, CG iterations, peak resident memory of the process (ru_maxrss), and the
largest displacement magnitude at the vertices, with the relative difference of scikit-fem's from
platewright's (the two discretisations are identical, so it shows the solve accuracy). The ratios
are scikit-fem time / platewright time for assembly + solve (mesh excluded: it is shared). All
processes get the same BLAS thread count (default 1).
"""

from __future__ import annotations

import argparse
import datetime
import json
import os
import platform
import resource
import subprocess
import sys
import tempfile
import time

import numpy as np

E_MPA, NU, THICK_MM = 70000.0, 0.33, 3.0
WEIGHT_N_MM3 = 2.7e-6 * 9.81  # 2700 kg/m^3 x g, N/mm^3
SHEAR_N = 50.0
TOL = 1e-10
#: T6 unknowns of the deck at mesh size h (mm) are about DOFS_AT_1MM / h^2 (measured).
DOFS_AT_1MM = 544_000.0


def _peak_mb() -> float:
    return resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024.0


def _edge_x(nodes: np.ndarray) -> tuple[float, float]:
    return float(nodes[:, 0].min()), float(nodes[:, 0].max())


def run_platewright(unknowns: int, mesh_file: str) -> dict:
    sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
    from bench_mesh import bench_rings

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
    from platewright.fea.mesh.mesher import mesh_rings
    from platewright.fea.multigrid import membrane_layout
    from platewright.fea.solve import solve_system

    size = float(np.sqrt(DOFS_AT_1MM / unknowns))
    out: dict = {}
    rings = bench_rings(size)
    t0 = time.perf_counter()
    mesh = mesh_rings(rings, size)
    out["mesh_s"] = time.perf_counter() - t0
    np.savez(mesh_file, nodes=mesh.nodes, triangles=mesh.triangles)
    t0 = time.perf_counter()
    q = quadratic_mesh(mesh)
    d = isotropic_plane_stress(E_MPA, NU)
    k = assemble_stiffness(q.nodes, q.tri6, d, THICK_MM)
    f = body_force_vector(q.nodes, q.tri6, np.array([0.0, -WEIGHT_N_MM3]), THICK_MM)
    x0, x1 = _edge_x(mesh.nodes)
    be = np.column_stack([mesh.boundary_edges, q.boundary_midpoints])
    right = be[np.all(np.isclose(q.nodes[be[:, :2], 0], x1, rtol=0, atol=1e-9), axis=1)]
    height = float(np.ptp(q.nodes[right[:, :2], 1]))
    f += edge_load_vector(q.nodes, right, np.array([0.0, -SHEAR_N / height]))
    out["asm_s"] = time.perf_counter() - t0
    left = np.flatnonzero(np.isclose(q.nodes[:, 0], x0, rtol=0, atol=1e-9))
    fixed = np.concatenate([2 * left, 2 * left + 1])
    t0 = time.perf_counter()
    sol = solve_system(k, f, fixed, rigid_modes=membrane_rigid_modes(q.nodes),
                       mode_names=MEMBRANE_MODE_NAMES, tol=TOL,
                       layout=membrane_layout(q.tri6, q.n_vertices))
    out["solve_s"] = time.perf_counter() - t0
    t0 = time.perf_counter()
    vm = von_mises(nodal_stresses(q.nodes, q.tri6, sol.u, d))
    out["stress_s"] = time.perf_counter() - t0
    uv = sol.u.reshape(-1, 2)[: q.n_vertices]
    out.update(dofs=sol.dofs, method=sol.method, iterations=sol.iterations,
               max_u_mm=float(np.hypot(uv[:, 0], uv[:, 1]).max()), max_vm_mpa=float(vm.max()),
               peak_mb=_peak_mb())
    return out


def run_skfem(mesh_file: str, solver: str) -> dict:
    import skfem
    from skfem.models.elasticity import linear_elasticity

    data = np.load(mesh_file)
    nodes, tri = data["nodes"], data["triangles"]
    out: dict = {}
    t0 = time.perf_counter()
    m = skfem.MeshTri(nodes.T.copy(), tri.T.copy())
    elem = skfem.ElementVector(skfem.ElementTriP2())
    basis = skfem.Basis(m, elem, intorder=2)  # 3 points: exact for straight-sided P2 stiffness
    lam = E_MPA * NU / (1 - NU**2)  # plane-stress Lame constants
    mu = E_MPA / (2 * (1 + NU))
    k = THICK_MM * linear_elasticity(lam, mu).assemble(basis)

    @skfem.LinearForm
    def weight(v, w):
        return -WEIGHT_N_MM3 * THICK_MM * v[1]

    x0, x1 = _edge_x(nodes)
    right = m.facets_satisfying(lambda x: np.isclose(x[0], x1, rtol=0, atol=1e-9),
                                boundaries_only=True)
    fb = skfem.FacetBasis(m, elem, facets=right, intorder=2)
    height = float(np.ptp(m.p[1, m.facets[:, right]]))

    @skfem.LinearForm
    def shear(v, w):
        return -SHEAR_N / height * v[1]

    f = weight.assemble(basis) + shear.assemble(fb)
    fixed = basis.get_dofs(lambda x: np.isclose(x[0], x0, rtol=0, atol=1e-9)).all()
    out["asm_s"] = time.perf_counter() - t0
    t0 = time.perf_counter()
    if solver == "direct":
        u = skfem.solve(*skfem.condense(k, f, D=fixed))
        out["iterations"] = 0
    else:
        import pyamg

        a, b, u, free = skfem.condense(k, f, D=fixed)
        comp = np.zeros(basis.N, dtype=int)
        comp[basis.nodal_dofs[1]] = 1
        comp[basis.facet_dofs[1]] = 1
        xy = basis.doflocs[:, free]
        c = comp[free]
        modes = np.zeros((free.size, 3))
        modes[c == 0, 0] = 1.0
        modes[c == 1, 1] = 1.0
        modes[c == 0, 2] = -xy[1, c == 0]
        modes[c == 1, 2] = xy[0, c == 1]
        ml = pyamg.smoothed_aggregation_solver(a.tocsr(), B=modes)
        res: list[float] = []
        u = u.copy()
        u[free] = ml.solve(b, tol=TOL, accel="cg", maxiter=1000, residuals=res)
        out["iterations"] = len(res) - 1
    out["solve_s"] = time.perf_counter() - t0
    uv = np.stack([u[basis.nodal_dofs[0]], u[basis.nodal_dofs[1]]], axis=1)
    out.update(dofs=int(basis.N), max_u_mm=float(np.hypot(uv[:, 0], uv[:, 1]).max()),
               peak_mb=_peak_mb())
    return out


def _child(args: list[str], blas_threads: int) -> dict:
    cmd = [sys.executable, os.path.abspath(__file__), "--child", *args]
    env = dict(os.environ)
    if blas_threads > 0:
        for var in ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS", "MKL_NUM_THREADS"):
            env[var] = str(blas_threads)
    res = subprocess.run(cmd, capture_output=True, text=True, check=False, env=env)
    if res.returncode != 0:
        return {"error": res.stderr.strip().splitlines()[-1] if res.stderr else "failed"}
    return json.loads(res.stdout.strip().splitlines()[-1])


def _load() -> str:
    return "load average {:.2f} {:.2f} {:.2f}".format(*os.getloadavg())


def main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--sizes", type=int, nargs="*", default=[50_000, 200_000, 1_000_000])
    ap.add_argument("--direct-max", type=int, default=250_000,
                    help="largest size for scikit-fem's default direct solve")
    ap.add_argument("--amg-max", type=int, default=1_100_000,
                    help="largest size for scikit-fem + pyamg")
    ap.add_argument("--blas-threads", type=int, default=1,
                    help="BLAS threads in every child (0: leave the environment alone)")
    ap.add_argument("--child", nargs="+", help=argparse.SUPPRESS)
    args = ap.parse_args(argv)
    if args.child:
        kind = args.child[0]
        if kind == "pw":
            result = run_platewright(int(args.child[1]), args.child[2])
        else:
            result = run_skfem(args.child[1], kind)
        print(json.dumps(result))
        return 0
    print(f"# bench_membrane {datetime.date.today()} {platform.node()} "
          f"{os.cpu_count()} cores, {_load()}")
    head = (f"{'dofs':>9} | {'mesh s':>6} {'asm s':>6} {'solve s':>7} {'it':>3} {'stress s':>8} "
            f"{'total s':>7} {'MB':>5} | {'sk asm':>6} {'sk+amg s':>8} {'it':>3} {'MB':>5} "
            f"{'ratio':>5} | {'sk dir s':>8} {'MB':>5} {'ratio':>5} | {'max |u| mm':>11} "
            f"{'sk diff':>8}")
    print(head)
    print("-" * len(head))
    rows = []
    with tempfile.TemporaryDirectory() as tmp:
        for n in args.sizes:
            mesh_file = os.path.join(tmp, f"mesh_{n}.npz")
            pw = _child(["pw", str(n), mesh_file], args.blas_threads)
            if "error" in pw:
                print(f"{n:>9} platewright failed: {pw['error']}", flush=True)
                continue
            amg = (_child(["amg", mesh_file], args.blas_threads) if n <= args.amg_max
                   else {"error": "skipped"})
            direct = (_child(["direct", mesh_file], args.blas_threads)
                      if n <= args.direct_max else {"error": "skipped"})
            pw_t = pw["asm_s"] + pw["solve_s"]
            total = pw["mesh_s"] + pw_t + pw["stress_s"]
            line = (f"{pw['dofs']:>9} | {pw['mesh_s']:>6.2f} {pw['asm_s']:>6.2f} "
                    f"{pw['solve_s']:>7.2f} {pw['iterations']:>3} {pw['stress_s']:>8.2f} "
                    f"{total:>7.2f} {pw['peak_mb']:>5.0f} |")
            row = {"dofs": pw["dofs"], "pw": pw, "total_s": total}
            diffs = []
            if "error" in amg:
                line += f" {amg['error'][:36]:>36} |"
            else:
                ratio = (amg["asm_s"] + amg["solve_s"]) / pw_t
                row["ratio_amg"] = ratio
                diffs.append(abs(amg["max_u_mm"] - pw["max_u_mm"]))
                line += (f" {amg['asm_s']:>6.2f} {amg['solve_s']:>8.2f} {amg['iterations']:>3} "
                         f"{amg['peak_mb']:>5.0f} {ratio:>5.2f} |")
            if "error" in direct:
                line += f" {direct['error'][:20]:>20} |"
            else:
                ratio = (direct["asm_s"] + direct["solve_s"]) / pw_t
                row["ratio_direct"] = ratio
                diffs.append(abs(direct["max_u_mm"] - pw["max_u_mm"]))
                line += f" {direct['solve_s']:>8.2f} {direct['peak_mb']:>5.0f} {ratio:>5.2f} |"
            rel = max(diffs) / pw["max_u_mm"] if diffs else float("nan")
            line += f" {pw['max_u_mm']:>11.6e} {rel:>8.1e}"
            print(line, flush=True)
            rows.append(row)
    print(f"# after: {_load()}")
    print("# ratio = scikit-fem (asm + solve) / platewright (asm + solve); sk diff = largest "
          "|max |u| difference| / platewright's max |u|")
    for row in rows:
        if 150_000 <= row["dofs"] <= 260_000 and "ratio_amg" in row:
            ok = "met" if row["ratio_amg"] >= 3.0 else "missed"
            print(f"# target at {row['dofs']:,} unknowns: >= 3x scikit-fem + pyamg: {ok} "
                  f"({row['ratio_amg']:.2f}x)")
        if row["dofs"] >= 900_000:
            ok = "met" if row["total_s"] <= 15.0 and row["pw"]["peak_mb"] <= 3072 else "missed"
            print(f"# target at {row['dofs']:,} unknowns: mesh + assembly + solve + stresses "
                  f"<= 15 s and <= 3 GB: {ok} ({row['total_s']:.1f} s, "
                  f"{row['pw']['peak_mb']:.0f} MB)")
    return 0


if __name__ == "__main__":
    sys.exit(main())
