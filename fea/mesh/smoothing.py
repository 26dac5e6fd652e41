"""Smoothing of a conforming triangle mesh: distmesh truss forces, Lawson flips, angle clean-up.

Method (boundary nodes fixed throughout, so the mesh stays conforming):

1. the truss-force iteration of P.-O. Persson and G. Strang, "A simple mesh generator in MATLAB",
   SIAM Review 46 (2004) 329-345: every edge is a bar pushing its ends apart when shorter than its
   rest length, and the interior nodes move with the net force;
2. instead of a full re-triangulation the connectivity is made Delaunay again by Lawson edge flips
   (:func:`.mesh.flip_to_delaunay`) whenever nodes have moved far; boundary edges are never
   flipped;
3. a short optimisation-based clean-up of the interior corners of triangles still below 20
   degrees (moves accepted only when the worst angle around the node improves).

All lengths in mm. Vectorised numpy: loops are over iterations and rounds only.
"""

from __future__ import annotations

import math

import numpy as np
import shapely
from scipy.spatial import cKDTree

from platewright.fea.mesh.sizing import SizeField
from platewright.fea.mesh.triangles import flip_to_delaunay, triangle_angles_deg, triangle_areas_mm2

__all__ = ["smooth_interior"]

#: distmesh constants (Persson and Strang 2004): internal pressure, step, retriangulation
#: trigger (in local sizes), iterations.
_FSCALE = 1.2
_DELTAT = 0.2
_RETRI_TOL = 0.3
_MAX_STEP = 0.1
_SMOOTH_ITERS = 25
_SETTLED_TOL = 1e-3
#: Angle target of the clean-up pass, degrees, and its number of rounds.
_ANGLE_TARGET_DEG = 20.0
_CLEANUP_ROUNDS = 8


def _unique_int(a: np.ndarray) -> np.ndarray:
    """Sorted unique values of an int array (a sort is faster here than np.unique's hashing)."""
    s = np.sort(a, axis=None)
    if len(s) == 0:
        return s
    return s[np.concatenate([[True], s[1:] != s[:-1]])]


def _unique_bars(tri: np.ndarray) -> np.ndarray:
    e = np.vstack([tri[:, [0, 1]], tri[:, [1, 2]], tri[:, [2, 0]]])
    e.sort(axis=1)
    n = int(tri.max()) + 1
    key = _unique_int(e[:, 0] * n + e[:, 1])
    return np.column_stack([key // n, key % n])


def _untangle(p: np.ndarray, p_ok: np.ndarray, tri: np.ndarray) -> np.ndarray:
    """Move the corners of inverted triangles back to their last valid positions."""
    for _ in range(50):
        bad = triangle_areas_mm2(p, tri) <= 0.0
        if not bad.any():
            return p
        back = _unique_int(tri[bad])
        p[back] = p_ok[back]
    return p_ok.copy()


def _bar_forces(p: np.ndarray, bars: np.ndarray, h: np.ndarray, scale: float) -> np.ndarray:
    """distmesh node forces: repulsive bars of rest length scale * h, summed per node (n, 2)."""
    vec = p[bars[:, 0]] - p[bars[:, 1]]
    length = np.hypot(vec[:, 0], vec[:, 1])
    hbar = 0.5 * (h[bars[:, 0]] + h[bars[:, 1]])
    force = np.maximum(scale * hbar - length, 0.0) / length
    n = len(p)
    ftot = np.empty((n, 2))
    for c in range(2):
        f = force * vec[:, c]
        ftot[:, c] = np.bincount(bars[:, 0], f, n) - np.bincount(bars[:, 1], f, n)
    return ftot


def _grow(mask: np.ndarray, bars: np.ndarray, rings: int) -> np.ndarray:
    """Node mask grown by ``rings`` layers of bar neighbours."""
    m = mask.copy()
    for _ in range(rings):
        hit = m[bars[:, 0]] | m[bars[:, 1]]
        m[bars[hit].ravel()] = True
    return m


def _worst_with(p: np.ndarray, tri: np.ndarray, pv: np.ndarray, pt: np.ndarray,
                new: np.ndarray, n: int) -> np.ndarray:
    """Smallest angle at each node of ``pv`` (pairs ``pv``/``pt``: node, incident triangle) with
    the nodes placed at ``new`` ((n, 2), only rows of ``pv`` used): (n,) float degrees."""
    corners = p[tri[pt]]
    own = tri[pt] == pv[:, None]
    corners[own] = new[pv]
    a = corners[:, 1] - corners[:, 0]
    b = corners[:, 2] - corners[:, 0]
    area2 = a[:, 0] * b[:, 1] - a[:, 1] * b[:, 0]
    sub = np.arange(3)[None, :].repeat(len(pt), axis=0)
    ang = triangle_angles_deg(corners.reshape(-1, 2), sub + 3 * np.arange(len(pt))[:, None])
    tmin = np.where(area2 > 0.0, ang.min(axis=1), -1.0)
    worst = np.full(n, 360.0)
    np.minimum.at(worst, pv, tmin)
    return worst


def _clean_up(p: np.ndarray, tri: np.ndarray, nb: int) -> tuple[np.ndarray, np.ndarray]:
    """Optimisation-based smoothing of the interior corners of triangles below the target angle.

    Each such node tries positions a quarter, half, three quarters and all the way towards the
    centroid of its neighbours and towards the apex of the equilateral triangle on the opposite
    edge of its worst triangle, and takes the one with the largest smallest angle around it,
    if that beats the current one (smoothing accepted only when the local quality improves:
    L. A. Freitag and C. Ollivier-Gooch, IJNME 40 (1997) 3979-4002). Nodes sharing a triangle
    never move in the same round. Edges are flipped back to Delaunay after each round.
    """
    n = len(p)
    m = len(tri)
    pv_all = tri.ravel()
    pt_all = np.repeat(np.arange(m), 3)
    for _ in range(_CLEANUP_ROUNDS):
        tmin = triangle_angles_deg(p, tri).min(axis=1)
        bad = tmin < _ANGLE_TARGET_DEG
        if not bad.any():
            break
        cand = np.zeros(n, dtype=bool)
        cand[tri[bad].ravel()] = True
        cand[:nb] = False
        if not cand.any():
            break
        pv_all = tri.ravel()
        sel = cand[pv_all]
        pv, pt = pv_all[sel], pt_all[sel]
        # Worst incident triangle of each candidate and its edge opposite the node.
        worst_t = np.full(n, -1, dtype=np.int64)
        order = np.lexsort((-tmin[pt], pv))  # per node, worst triangle last
        last = np.concatenate([pv[order][1:] != pv[order][:-1], [True]])
        worst_t[pv[order][last]] = pt[order][last]
        idx = np.flatnonzero(cand)
        wt = tri[worst_t[idx]]
        k = np.argmax(wt == idx[:, None], axis=1)
        ea = p[wt[np.arange(len(idx)), (k + 1) % 3]]
        eb = p[wt[np.arange(len(idx)), (k + 2) % 3]]
        d = eb - ea
        apex = 0.5 * (ea + eb) + (math.sqrt(3.0) / 2.0) * np.column_stack([-d[:, 1], d[:, 0]])
        bars = _unique_bars(tri)
        deg = np.bincount(bars.ravel(), minlength=n).astype(float)
        cen = np.empty((n, 2))
        for c in range(2):
            cen[:, c] = (np.bincount(bars[:, 0], p[bars[:, 1], c], n)
                         + np.bincount(bars[:, 1], p[bars[:, 0], c], n)) / np.maximum(deg, 1.0)
        best = _worst_with(p, tri, pv, pt, p, n)
        best_pos = p.copy()
        for target in (cen[idx], apex):
            for t in (0.25, 0.5, 0.75, 1.0):
                trial = p.copy()
                trial[idx] = p[idx] + t * (target - p[idx])
                w = _worst_with(p, tri, pv, pt, trial, n)
                better = w > best + 1e-9
                best = np.where(better, w, best)
                best_pos[better] = trial[better]
        moving = cand & (best_pos != p).any(axis=1)
        if not moving.any():
            break
        # Independent set: a node moves only if it has the lowest index among moving nodes in
        # every triangle around it.
        low = np.full(m, n, dtype=np.int64)
        np.minimum.at(low, pt, np.where(moving[pv], pv, n))
        ok = np.ones(n, dtype=bool)
        np.logical_and.at(ok, pv, low[pt] == pv)
        go = moving & ok
        p = p.copy()
        p[go] = best_pos[go]
        tri = flip_to_delaunay(p, tri)
    return p, tri


def smooth_interior(
    nodes_mm: np.ndarray,
    triangles: np.ndarray,
    n_fixed: int,
    boundary_points_mm: np.ndarray,
    polygon: shapely.Polygon,
    field: SizeField,
) -> tuple[np.ndarray, np.ndarray]:
    """distmesh truss-force smoothing of the interior nodes, then the angle clean-up pass.

    ``nodes_mm``: (n, 2) float, mm; the first ``n_fixed`` are boundary nodes and never move.
    ``triangles``: (m, 3) int, counter-clockwise, a conforming triangulation of ``polygon``.
    ``boundary_points_mm``: (k, 2) float, mm, points along the boundary edges; interior nodes
    near the boundary are not moved closer to them than 0.3 local sizes, nor out of
    ``polygon`` (prepared for point tests). ``field``: the element size field, mm.
    Returns (nodes (n, 2) float mm, triangles (m', 3) int): same nodes in the same order, boundary
    edges kept. The inputs are not modified.

    After each stage the connectivity is made Delaunay again by edge flips
    (:func:`.mesh.flip_to_delaunay`) once nodes have moved ``_RETRI_TOL`` local sizes, which
    keeps every boundary edge in place. Each stage between flips moves only the nodes that feel
    a force at its start (and two rings of their neighbours); lattice nodes in balance stay put.
    Bar rest lengths use the distmesh scaling ``_FSCALE * h * sqrt(sum L^2 / sum h^2)`` over all
    bars.
    """
    poly = polygon
    nb = int(n_fixed)
    p = np.array(nodes_mm, dtype=float)
    tri = np.array(triangles, dtype=np.int64)
    if nb == len(p):
        return p, tri
    btree = cKDTree(boundary_points_mm)
    iters = 0
    h = field(p)
    nodes_free = np.zeros(0, dtype=np.int64)
    while iters < _SMOOTH_ITERS:
        if len(nodes_free):
            h[nodes_free] = field(p[nodes_free])
        cap = _MAX_STEP * h
        bars = _unique_bars(tri)
        length = np.hypot(*(p[bars[:, 0]] - p[bars[:, 1]]).T)
        hbar = 0.5 * (h[bars[:, 0]] + h[bars[:, 1]])
        scale = _FSCALE * math.sqrt(np.sum(length**2) / np.sum(hbar**2))
        step = _DELTAT * _bar_forces(p, bars, h, scale)
        step[:nb] = 0.0
        free = _grow(np.hypot(*step.T) > _SETTLED_TOL * h, bars, 2)
        free[:nb] = False
        if not free.any():
            break
        sub = bars[free[bars[:, 0]] | free[bars[:, 1]]]
        nodes_free = np.flatnonzero(free)
        p_tri = p.copy()
        db, _ = btree.query(p[nodes_free])
        near = nodes_free[db < 1.5 * h[nodes_free]]
        while iters < _SMOOTH_ITERS:
            if iters > 0 or len(sub) != len(bars):
                step = _DELTAT * _bar_forces(p, sub, h, scale)
            step[~free] = 0.0
            mag = np.hypot(step[:, 0], step[:, 1])
            step *= np.where(mag > cap, cap / np.maximum(mag, 1e-300), 1.0)[:, None]
            new = p + step
            if len(near):
                q = new[near]
                dq, _ = btree.query(q)
                bad = (dq < 0.3 * h[near]) | ~shapely.contains_xy(poly, q[:, 0], q[:, 1])
                new[near[bad]] = p[near[bad]]
            p = new
            iters += 1
            if (np.hypot(*(p - p_tri).T) / h).max() > _RETRI_TOL:
                break
        p = _untangle(p, p_tri, tri)
        moved = _grow(np.hypot(*(p - p_tri).T) > 0.0, bars, 1)
        sel = moved[tri].any(axis=1)
        tri[sel] = flip_to_delaunay(p, tri[sel])
    tri = flip_to_delaunay(p, tri)
    p, tri = _clean_up(p, tri, nb)
    return p, tri
