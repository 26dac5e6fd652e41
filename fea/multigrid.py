"""Multigrid preconditioner for the plate solvers: p-coarsening, then aggregation on the vertex graph.

Levels, finest first:

1. For quadratic (T6) plane stress only: the linear (T3) problem on the same vertices. The
   prolongation interpolates a linear field exactly: a vertex keeps its value, a midside node takes
   the mean of its edge's two end vertices. The coarse matrix is the Galerkin product P^T A P.
2. Smoothed aggregation (Vanek, Mandel and Brezina, Computing 56 (1996) 179-196) on the VERTEX
   graph of the mesh: all unknowns of a vertex join the same aggregate, aggregates of aggregates
   are formed on the adjacency graph of the aggregates (not on the wider stencil of the coarse
   matrix, which coarsened too fast and made iteration counts grow with size). The tentative
   prolongator reproduces the near-nullspace exactly on each aggregate; it is smoothed by one
   Jacobi step with row-sum weights (no eigenvalue estimate, so the setup is deterministic).
   Near-nullspace: the rigid-body modes; for plate bending also the three constant-curvature
   modes (w = x^2/2, xy, y^2/2 with their slopes), without which the two-level iteration count
   doubled (measured 39 against 18).
3. The coarsest level (at most COARSEST_NODES aggregates) is factorised by sparse LU.

Smoothing: one forward Gauss-Seidel sweep before and one backward sweep after the coarse
correction, so the V-cycle is symmetric. Plate bending (a fourth-order problem) loses accuracy
on every level of a V-cycle; there each coarse level is solved by two steps of flexible
conjugate gradients preconditioned by the next level's cycle (the K-cycle of Notay and
Vassilevski, Numer. Linear Algebra Appl. 15 (2008) 473-487), and the outer iteration is
flexible CG. The methods were chosen by measured iteration counts (benchmarks/README.md):
holed deck in plane stress, 18-19 CG iterations from 60k to 1M unknowns (pyamg's smoothed
aggregation of the matrix alone: 43-62; p-coarsening followed by pyamg's own aggregation: 27 at
150k, 57 at 520k once a fourth level appeared); simply supported square in bending, 19 -> 28
iterations from 30k to 1M unknowns (V-cycles on the same aggregates: 92 at 30k, 223 at 121k).

Automatic choice (``direct_limit``, from paired runs of benchmarks/bench_membrane.py and
bench_bending.py): plane stress factorises below 10k unknowns (multigrid 1.5x faster at 10k, 4x
at 80k); bending below 500k (SuperLU with minimum-degree ordering was faster up to about 530k
unknowns, multigrid about 2.4x faster at 1M).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import scipy.sparse as sp
import scipy.sparse.linalg as spla

__all__ = [
    "COARSEST_NODES",
    "Hierarchy",
    "MultigridLayout",
    "build_hierarchy",
    "curvature_modes",
    "membrane_layout",
    "plate_layout",
    "quadratic_to_linear_prolongation",
    "vertex_aggregates",
]

#: Aggregation stops when a level has at most this many nodes (aggregates); that level is
#: factorised directly.
COARSEST_NODES = 200

#: Jacobi weight of the prolongation smoother with row-sum (Gershgorin) scaling.
_OMEGA = 4.0 / 3.0


@dataclass(frozen=True)
class MultigridLayout:
    """What the multigrid needs to know about the unknowns beyond the matrix.

    dofs_per_node: unknowns per node, numbered ``dofs_per_node * node + component``.
    n_vertices: number of mesh vertices; they are nodes 0 .. n_vertices - 1.
    vertex_edges: (e, 2) int unique vertex pairs joined by a mesh edge (the aggregation graph).
    midside_ends: (k, 2) int end vertices of nodes n_vertices .. n_vertices + k - 1 (quadratic
        elements), or None when every node is a vertex.
    extra_modes: (n_dofs, s) float low-energy modes added to the rigid-body modes in the
        near-nullspace, or None.
    inner_steps: 0 for V-cycles with CG; k >= 2 for K-cycles (k inner flexible-CG steps on every
        coarse level) with flexible CG outside.
    direct_limit: method="auto" factorises directly below this many free unknowns.
    coarsest_nodes: aggregation stops at this many nodes; that level is factorised.
    """

    dofs_per_node: int
    n_vertices: int
    vertex_edges: np.ndarray
    midside_ends: np.ndarray | None = None
    extra_modes: np.ndarray | None = None
    inner_steps: int = 0
    direct_limit: int = 60_000
    coarsest_nodes: int = COARSEST_NODES


def _unique_edges(triangles: np.ndarray) -> np.ndarray:
    tri = np.asarray(triangles, dtype=np.int64)[:, :3]
    e = np.vstack([tri[:, [0, 1]], tri[:, [1, 2]], tri[:, [2, 0]]])
    e.sort(axis=1)
    return np.unique(e, axis=0)


def membrane_layout(tri6: np.ndarray, n_vertices: int) -> MultigridLayout:
    """Layout of quadratic plane stress (2 dofs per node) on six-node triangles.

    tri6: (m, 6) int (vertices, then the midside nodes of edges 01, 12, 20, as in
    fea.elements.quadratic); the first n_vertices nodes are the vertices.
    """
    t6 = np.asarray(tri6, dtype=np.int64)
    mids = t6[:, 3:].ravel()
    ends = np.stack([t6[:, [0, 1, 2]].ravel(), t6[:, [1, 2, 0]].ravel()], axis=1)
    uniq, first = np.unique(mids, return_index=True)
    if uniq.size and (uniq[0] != n_vertices or uniq[-1] != n_vertices + uniq.size - 1):
        raise ValueError("midside nodes must be numbered n_vertices, n_vertices + 1, ...")
    return MultigridLayout(
        dofs_per_node=2,
        n_vertices=int(n_vertices),
        vertex_edges=_unique_edges(t6),
        midside_ends=ends[first],
        inner_steps=2,
        direct_limit=10_000,
        coarsest_nodes=1000,
    )


def curvature_modes(nodes: np.ndarray) -> np.ndarray:
    """Constant-curvature plate modes, (3 n, 3) float, dofs (w, theta_x, theta_y) per node.

    Columns: w = x^2 / 2, w = y^2 / 2, w = x y about the centroid of the nodes, scaled by the
    largest half-extent L (so w is at most L / 2 mm), with the slopes of fea.elements.bending's
    sign convention theta_x = dw/dy, theta_y = -dw/dx (radians).
    """
    xy = np.asarray(nodes, dtype=float)
    c = xy.mean(axis=0)
    x, y = xy[:, 0] - c[0], xy[:, 1] - c[1]
    s = max(float(np.abs(x).max(initial=0.0)), float(np.abs(y).max(initial=0.0)), 1e-300)
    m = np.zeros((xy.shape[0], 3, 3))
    m[:, 0, 0], m[:, 2, 0] = 0.5 * x * x / s, -x / s
    m[:, 0, 1], m[:, 1, 1] = 0.5 * y * y / s, y / s
    m[:, 0, 2], m[:, 1, 2], m[:, 2, 2] = x * y / s, x / s, -y / s
    return m.reshape(-1, 3)


def plate_layout(nodes: np.ndarray, triangles: np.ndarray) -> MultigridLayout:
    """Layout of DKT plate bending (w, theta_x, theta_y at each vertex)."""
    return MultigridLayout(
        dofs_per_node=3,
        n_vertices=int(np.asarray(nodes).shape[0]),
        vertex_edges=_unique_edges(triangles),
        extra_modes=curvature_modes(nodes),
        inner_steps=3,
        direct_limit=500_000,
    )


def quadratic_to_linear_prolongation(
    n_vertices: int, midside_ends: np.ndarray, dofs_per_node: int
) -> sp.csr_matrix:
    """Interpolation of a field given at the vertices to all nodes of a quadratic mesh.

    Returns (dofs_per_node * (n_vertices + k), dofs_per_node * n_vertices) CSR: identity on the
    vertices, 1/2 + 1/2 of the two end vertices at each of the k midside nodes. A field linear
    on each triangle is reproduced exactly (the midside node is the edge midpoint).
    """
    ends = np.asarray(midside_ends, dtype=np.int64).reshape(-1, 2)
    nv, k, d = int(n_vertices), ends.shape[0], int(dofs_per_node)
    rows = np.concatenate([np.arange(nv), nv + np.arange(k), nv + np.arange(k)])
    cols = np.concatenate([np.arange(nv), ends[:, 0], ends[:, 1]])
    vals = np.concatenate([np.ones(nv), np.full(2 * k, 0.5)])
    rows = (d * rows[:, None] + np.arange(d)).ravel()
    cols = (d * cols[:, None] + np.arange(d)).ravel()
    vals = np.repeat(vals, d)
    return sp.csr_matrix((vals, (rows, cols)), shape=(d * (nv + k), d * nv))


def _graph(n: int, edges: np.ndarray) -> sp.csr_matrix:
    e = np.asarray(edges, dtype=np.int64).reshape(-1, 2)
    g = sp.csr_matrix((np.ones(2 * len(e)), (np.r_[e[:, 0], e[:, 1]], np.r_[e[:, 1], e[:, 0]])),
                      shape=(n, n))
    g.sum_duplicates()
    g.data[:] = 1.0
    return g


def vertex_aggregates(
    n_vertices: int, vertex_edges: np.ndarray, coarsest: int = COARSEST_NODES
) -> list[np.ndarray]:
    """Aggregates of vertices, then of aggregates, until at most ``coarsest`` remain.

    Returns one (n_l,) int array per level: the aggregate of each node of level l (-1 for a node
    without neighbours, which no aggregate takes). Level 0's nodes are the vertices; the nodes
    of level l + 1 are the aggregates of level l, joined when any of their members are joined.
    Aggregation: pyamg's standard (greedy distance-one) aggregation on the graph.
    """
    from pyamg.aggregation.aggregate import standard_aggregation

    g = _graph(n_vertices, vertex_edges)
    out: list[np.ndarray] = []
    while g.shape[0] > coarsest:
        agg_op = standard_aggregation(g)[0].tocsr()
        if agg_op.shape[1] == 0 or 1.5 * agg_op.shape[1] > g.shape[0]:
            break  # no real coarsening left (a graph of isolated nodes)
        owner = np.full(g.shape[0], -1, dtype=np.int64)
        rows = np.repeat(np.arange(g.shape[0]), np.diff(agg_op.indptr))
        owner[rows] = agg_op.indices
        out.append(owner)
        coarse = (agg_op.T @ g @ agg_op).tocoo()
        keep = coarse.row != coarse.col
        g = _graph(agg_op.shape[1], np.column_stack([coarse.row[keep], coarse.col[keep]]))
    return out


@dataclass
class _Level:
    a: sp.csr_matrix
    p: sp.csr_matrix | None = None  # to this level from the next coarser one
    r: sp.csr_matrix | None = None


def _tentative(owner_of_dof: np.ndarray, n_agg: int, b: np.ndarray):
    """Tentative prolongator (n, c) CSR and coarse near-nullspace (c, r) from aggregates.

    Per aggregate a QR factorisation of b's rows (pyamg.fit_candidates); columns that are zero
    because an aggregate carries fewer independent modes than b has (a few supported unknowns)
    are dropped. Returns (T, b_coarse, owner of each coarse unknown).
    """
    from pyamg.aggregation.tentative import fit_candidates

    n, r = b.shape
    has = owner_of_dof >= 0
    agg_op = sp.csr_matrix((np.ones(int(has.sum())), (np.flatnonzero(has), owner_of_dof[has])),
                           shape=(n, n_agg))
    q, bc = fit_candidates(agg_op, np.ascontiguousarray(b, dtype=float), tol=1e-8)
    q = sp.csc_matrix(q)
    q.eliminate_zeros()
    keep = np.flatnonzero(np.diff(q.indptr) > 0)
    owner = np.repeat(np.arange(n_agg), r)[keep]
    return q[:, keep].tocsr(), bc.reshape(-1, r)[keep], owner


def _smoothed(a: sp.csr_matrix, t: sp.csr_matrix) -> sp.csr_matrix:
    """P = (I - omega D^-1 A) T with D the row sums of |A| (local Jacobi weights)."""
    d = _abs_row_sums(a)
    d[d == 0.0] = 1.0
    at = (a @ t).tocsr()
    at.data *= np.repeat(-_OMEGA / d, np.diff(at.indptr))
    return (t + at).tocsr()


def _abs_row_sums(a: sp.csr_matrix) -> np.ndarray:
    """Row sums of |A| without a copy of the matrix, (n,) float."""
    return np.bincount(np.repeat(np.arange(a.shape[0]), np.diff(a.indptr)),
                       weights=np.abs(a.data), minlength=a.shape[0])


@dataclass
class Hierarchy:
    """Levels of the multigrid and the cycle that applies it; see the module text."""

    levels: list[_Level]
    coarse_lu: object
    inner_steps: int

    @property
    def sizes(self) -> list[int]:
        """Unknowns on each level, finest first."""
        return [lv.a.shape[0] for lv in self.levels]

    def apply(self, r: np.ndarray) -> np.ndarray:
        """One cycle from a zero guess: an approximation of A^-1 r on the finest level."""
        return self._cycle(0, r)

    def _cycle(self, i: int, b: np.ndarray) -> np.ndarray:
        from pyamg.relaxation.relaxation import gauss_seidel

        lv = self.levels[i]
        if i == len(self.levels) - 1:
            return self.coarse_lu.solve(b)
        x = np.zeros_like(b)
        gauss_seidel(lv.a, x, b, sweep="forward")
        rc = lv.r @ (b - lv.a @ x)
        if self.inner_steps and i + 1 < len(self.levels) - 1:
            ec = self._inner(i + 1, rc)
        else:
            ec = self._cycle(i + 1, rc)
        x += lv.p @ ec
        gauss_seidel(lv.a, x, b, sweep="backward")
        return x

    def _inner(self, i: int, b: np.ndarray) -> np.ndarray:
        """inner_steps of flexible CG on level i, preconditioned by that level's cycle."""
        a = self.levels[i].a
        x = np.zeros_like(b)
        r = b.copy()
        p = ap = None
        pap = 1.0
        for _ in range(self.inner_steps):
            z = self._cycle(i, r)
            if p is not None:
                z -= (_dot(z, ap) / pap) * p
            p = z
            ap = a @ p
            pap = _dot(p, ap)
            if pap <= 0.0:
                break
            alpha = _dot(p, r) / pap
            x += alpha * p
            r -= alpha * ap
        return x


def _dot(a: np.ndarray, b: np.ndarray) -> float:
    """Inner product without threaded BLAS (see fea.solve)."""
    return float(np.einsum("i,i->", a, b))


def build_hierarchy(
    a_ff: sp.csr_matrix, free: np.ndarray, near_null: np.ndarray, layout: MultigridLayout
) -> Hierarchy:
    """Multigrid levels for the supported matrix ``a_ff`` on the unknowns ``free``.

    a_ff: (f, f) CSR symmetric positive definite, the rows and columns of ``free``.
    free: (f,) int sorted dof numbers (of the full numbering) solved for.
    near_null: (n_dofs, r) float rigid-body modes on the full numbering.
    """
    d = layout.dofs_per_node
    modes = np.asarray(near_null, dtype=float)
    if layout.extra_modes is not None:
        modes = np.hstack([modes, layout.extra_modes])
    modes = modes[free]
    node = np.asarray(free, dtype=np.int64) // d
    a = sp.csr_matrix(a_ff)
    levels: list[_Level] = []
    if layout.midside_ends is not None:
        nv = layout.n_vertices
        full = quadratic_to_linear_prolongation(nv, layout.midside_ends, d)
        vertex_free = free[free < d * nv]
        p = full[free][:, vertex_free].tocsr()
        levels.append(_Level(a, p, p.T.tocsr()))
        a = (levels[-1].r @ (a @ p)).tocsr()
        modes = modes[: vertex_free.size]  # free is sorted: the vertex dofs come first
        node = vertex_free // d
    owners = vertex_aggregates(layout.n_vertices, layout.vertex_edges, layout.coarsest_nodes)
    for owner_of_node in owners:
        t, modes, owner_next = _tentative(owner_of_node[node], int(owner_of_node.max()) + 1, modes)
        p = _smoothed(a, t)
        levels.append(_Level(a, p, p.T.tocsr()))
        a = (levels[-1].r @ (a @ p)).tocsr()
        node = owner_next
    levels.append(_Level(a))
    lu = spla.splu(a.tocsc(), permc_spec="MMD_AT_PLUS_A", diag_pivot_thresh=0.0,
                   options={"SymmetricMode": True})
    return Hierarchy(levels, lu, layout.inner_steps)
