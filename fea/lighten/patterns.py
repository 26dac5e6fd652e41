"""The regular lightening style: an array of round, slot or triangular holes graded by density,
or a regular rib grid across the optimised voids.

Sites lie on a lattice centred on the design region's bounding box (so a plate symmetric about
that centre gets a symmetric array) with pitch ``p = settings.pattern_pitch_mm`` (raised where
needed so the largest hole is 1.5 x ``min_hole_mm``, see :func:`effective_pitch_mm`):

- ``round``: a triangular (hexagonal-packing) lattice, one circle per site, diameter at most
  ``p - web`` (the web between neighbours is then at least ``web``);
- ``slot``: rows of stadium slots along x, ``p`` apart along x and ``max(width + web, p / 2)``
  apart along y, length at most ``p - web``;
- ``triangle``: the triangles of a triangular lattice of side ``p`` (alternately pointing up
  and down, so the webs form a truss of equilateral triangles), each hole concentric with its
  cell, with an inscribed radius at most ``p / (2 sqrt 3) - web / 2`` (two neighbours share an
  edge of the lattice, so the web between them is at least ``web``), corners filleted with the
  corner radius.

- ``grid``: a rib grid (an isogrid: straight ribs one web wide on a triangular lattice of side
  ``p``) laid across the free-form holes of the organic style at the same threshold; each hole
  is the part of a lattice triangle, inset by half a web, inside those holes, corners opened
  with the corner radius and pieces narrower than ``min_hole_mm`` dropped. Its holes follow the
  optimised layout; the ribs are regular.

Grading (round, slot, triangle): the density ``rho`` at a site is the area-weighted mean of the
element densities within ``p / 2``; a site gets a hole when ``rho < level``, of size fraction
``f = min(1, 2 (level - rho) / level)`` between the smallest (``min_hole_mm``) and the largest
size. A hole must lie inside the design region (the ring round every feature, the outline band
and the solid zones stay solid); a round hole is also shrunk to keep the edge-distance rule
``max(1.5 t, d)`` to the outline (common practice). Lengths mm.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
import shapely
from scipy.spatial import cKDTree

from platewright.fea.lighten.design_region import DesignRegion
from platewright.fea.lighten.tracing import LIGHTENING_KIND, hole_features, holes_from_density
from platewright.geometry.model import Feature
from platewright.geometry.plate.features import round_hole, slot
from platewright.geometry.plate.outlines import polygon_outline

__all__ = ["Layout", "effective_pitch_mm", "lattice_sites", "site_densities", "pattern_holes",
           "choose_layout"]

_SQRT3 = math.sqrt(3.0)
#: Pitches tried by :func:`choose_layout`, as multiples of the effective pitch.
_PITCH_SCALES = (1.0, 1.15, 1.3, 1.5, 1.75)


@dataclass(frozen=True)
class Layout:
    """A lattice of the regular style: pitch (mm) and a shift along x as a share of the pitch
    (0 or 0.5, both keep a lattice centred on the region mirror-symmetric)."""

    pitch_mm: float
    x_shift: float = 0.0


def effective_pitch_mm(region: DesignRegion, shape: str) -> float:
    """The lattice pitch used for ``shape``, mm: the settings' pitch, raised where needed so the
    largest hole is at least 1.5 x ``min_hole_mm`` wide with a web between neighbours."""
    s = region.settings
    p, web, dmin = float(s.pattern_pitch_mm), float(s.min_web_mm), float(s.min_hole_mm)
    if shape in ("triangle", "grid"):
        return max(p, 2.0 * _SQRT3 * (0.75 * dmin + web / 2.0))
    return max(p, 1.5 * dmin + web)


def lattice_sites(region: DesignRegion, shape: str, layout: Layout | None = None
                  ) -> list[tuple[float, float, bool]]:
    """Candidate sites (x mm, y mm, points_up) of the lattice for ``shape``, rows from the
    bottom. ``points_up`` matters for triangles only. layout: pitch and shift (default: the
    effective pitch, centred)."""
    s = region.settings
    p = layout.pitch_mm if layout is not None else effective_pitch_mm(region, shape)
    x0, y0, x1, y1 = region.material.bounds
    cx, cy = (x0 + x1) / 2.0, (y0 + y1) / 2.0
    if layout is not None:
        cx += layout.x_shift * p
    nx = int(math.ceil((x1 - x0) / p)) + 2
    sites: list[tuple[float, float, bool]] = []
    if shape == "slot":
        width = max(float(s.min_hole_mm), 0.3 * p)
        dy = max(width + float(s.min_web_mm), p / 2.0)
        ny = int(math.ceil((y1 - y0) / dy)) + 2
        for k in range(-ny, ny + 1):
            shift = 0.5 * p * (abs(k) % 2)
            for j in range(-nx, nx + 1):
                sites.append((cx + shift + j * p, cy + k * dy, True))
        return sites
    dy = p * _SQRT3 / 2.0
    ny = int(math.ceil((y1 - y0) / dy)) + 2
    for k in range(-ny, ny + 1):
        if shape == "round":
            shift = 0.5 * p * (abs(k) % 2)
            for j in range(-nx, nx + 1):
                sites.append((cx + shift + j * p, cy + k * dy, True))
        else:
            # row k of triangles spans y in [cy + (k - 1/2) dy, cy + (k + 1/2) dy]; centroids of
            # up-triangles sit a third of the height above the row bottom, down-triangles two
            # thirds; the lattice is mirror-symmetric about x = cx and y = cy.
            base = cy + (k - 0.5) * dy
            shift = 0.5 * p * (abs(k) % 2)
            for j in range(-2 * nx, 2 * nx + 1):
                up = (j % 2 == 0) == (k % 2 == 0)
                x = cx + shift + j * p / 2.0
                y = base + (dy / 3.0 if up else 2.0 * dy / 3.0)
                sites.append((x, y, up))
    return sites


def site_densities(sites_xy: np.ndarray, nodes: np.ndarray, triangles: np.ndarray,
                   densities: np.ndarray, radius_mm: float) -> np.ndarray:
    """Area-weighted mean element density within ``radius_mm`` of each site.

    sites_xy: (k, 2) float mm; nodes: (n, 2) float mm; triangles: (m, 3) int; densities: (m,)
    float. Sites with no element centroid in reach get 1 (solid). Returns (k,) float.
    """
    p = nodes[triangles]
    cent = p.mean(axis=1)
    area = 0.5 * np.abs((p[:, 1, 0] - p[:, 0, 0]) * (p[:, 2, 1] - p[:, 0, 1])
                        - (p[:, 2, 0] - p[:, 0, 0]) * (p[:, 1, 1] - p[:, 0, 1]))
    tree = cKDTree(cent)
    out = np.ones(len(sites_xy))
    for i, near in enumerate(tree.query_ball_point(np.asarray(sites_xy, float), radius_mm)):
        if near:
            out[i] = float(np.average(densities[near], weights=area[near]))
    return out


def _triangle(x: float, y: float, up: bool, inradius: float) -> np.ndarray:
    """Corners (3, 2) of an equilateral triangle of inscribed radius ``inradius`` (mm),
    counter-clockwise, centred on (x, y)."""
    circ = 2.0 * inradius
    angles = np.radians([90.0, 210.0, 330.0] if up else [270.0, 30.0, 150.0])
    return np.column_stack([x + circ * np.cos(angles), y + circ * np.sin(angles)])


def pattern_holes(region: DesignRegion, nodes: np.ndarray, triangles: np.ndarray,
                  densities: np.ndarray, level: float, layout: Layout | None = None,
                  mirrors: Sequence[tuple[float, float, float, float]] = ()
                  ) -> tuple[Feature, ...]:
    """The graded array (see the module text) at the density threshold ``level`` (0: no holes;
    a site whose density is below it gets a hole).

    nodes (n, 2) float mm, triangles (m, 3) int, densities (m,) float: the optimised field.
    Returns Features of kind ``lightening`` with exact contours, ids ``lighten1``... in site
    order (rows from the bottom, left to right). layout: the lattice (default: the effective
    pitch, centred; see :func:`choose_layout`).
    """
    s = region.settings
    shape = s.pattern_shape
    if level <= 0.0 or region.free.is_empty:
        return ()
    p = layout.pitch_mm if layout is not None else effective_pitch_mm(region, shape)
    if shape == "grid":
        return _grid_holes(region, nodes, triangles, densities, level, p,
                           layout.x_shift if layout is not None else 0.0, mirrors)
    web = float(s.min_web_mm)
    dmin, r = float(s.min_hole_mm), float(s.corner_radius_mm)
    sites = lattice_sites(region, shape, layout)
    xy = np.array([(x, y) for x, y, _ in sites])
    inside = shapely.contains_xy(region.free, xy[:, 0], xy[:, 1])
    sites = [st for st, ok in zip(sites, inside) if ok]
    if not sites:
        return ()
    xy = np.array([(x, y) for x, y, _ in sites])
    rho = site_densities(xy, nodes, triangles, np.asarray(densities, float), p / 2.0)
    free = region.free
    boundary = region.free.boundary
    outline = region.material.exterior
    thick = region.thickness_mm
    out: list[Feature] = []
    for (x, y, up), rh in zip(sites, rho):
        if rh >= level:
            continue
        f = min(1.0, 2.0 * (level - rh) / level)
        fid = f"lighten{len(out) + 1}"
        pt = shapely.Point(x, y)
        room = float(boundary.distance(pt))
        if shape == "round":
            d = dmin + f * (p - web - dmin)
            edge = float(outline.distance(pt))
            d = min(d, 2.0 * room - 1e-3, 2.0 * edge / 3.0 - 1e-3, 2.0 * (edge - 1.5 * thick) - 1e-3)
            if d < dmin:
                continue
            out.append(round_hole(fid, (x, y), d, kind=LIGHTENING_KIND,
                                  note="lightening hole (finite-element estimate: confirm by test)"))
        elif shape == "slot":
            width = max(dmin, 0.3 * p)
            length = width + f * (p - web - width)
            feat = None
            while length >= width:
                cand = slot(fid, (x, y), length, width, kind=LIGHTENING_KIND)
                poly = shapely.Polygon(cand.contours[0].to_points(0.02))
                if free.contains(poly):
                    feat = cand
                    break
                length -= 0.25 * width
            if feat is not None:
                out.append(feat)
        else:
            rin_max = p / (2.0 * _SQRT3) - web / 2.0
            rin = dmin / 2.0 + f * (rin_max - dmin / 2.0)
            if rin < dmin / 2.0 or rin <= r:
                continue
            corners = _triangle(x, y, up, rin)
            contour = polygon_outline(fid, [tuple(c) for c in corners], r).contours[0].reversed()
            poly = shapely.Polygon(contour.to_points(0.02))
            if not free.contains(poly):
                continue
            out.append(Feature(id=fid, kind=LIGHTENING_KIND, center_mm=(x, y), contours=(contour,),
                               dims={"inscribed_diameter_mm": 2.0 * rin, "corner_radius_mm": r},
                               note="lightening hole (finite-element estimate: confirm by test)"))
    return tuple(out)


def choose_layout(region: DesignRegion, nodes: np.ndarray, triangles: np.ndarray,
                  densities: np.ndarray, level: float,
                  mirrors: Sequence[tuple[float, float, float, float]] = ()) -> Layout:
    """The lattice (pitch from ``_PITCH_SCALES`` x the effective pitch, shift 0 or half a
    pitch) whose holes at the density threshold ``level`` cover the most area: the array is
    fitted to where the optimiser put its voids before any finite-element check is made.
    Ties go to the smaller pitch, then no shift (deterministic)."""
    shape = region.settings.pattern_shape
    base = effective_pitch_mm(region, shape)
    best, best_area = Layout(base), -1.0
    voids = holes_from_density(nodes, triangles, densities, region, level, mirrors) \
        if shape == "grid" else []
    for scale in _PITCH_SCALES:
        for shift in (0.0, 0.5):
            lay = Layout(base * scale, shift)
            holes = _grid_in(region, voids, lay.pitch_mm, shift) if shape == "grid" else \
                pattern_holes(region, nodes, triangles, densities, level, lay, mirrors)
            area = float(sum(-h.contours[0].signed_area() for h in holes))
            if area > best_area * (1.0 + 1e-9):
                best, best_area = lay, area
    return best


def _grid_cells(region: DesignRegion, pitch: float, x_shift: float) -> list[shapely.Polygon]:
    """The triangles of side ``pitch`` of a lattice centred on the region (mirror-symmetric
    about its centre lines), each inset by half a web, that meet the design region."""
    web = float(region.settings.min_web_mm)
    x0, y0, x1, y1 = region.material.bounds
    cx, cy = (x0 + x1) / 2.0 + x_shift * pitch, (y0 + y1) / 2.0
    h = pitch * _SQRT3 / 2.0
    nx = int(math.ceil((x1 - x0) / pitch)) + 2
    ny = int(math.ceil((y1 - y0) / h)) + 2
    cells = []
    for k in range(-ny, ny):
        # rows [cy + k h, cy + (k + 1) h]: row k and row -k - 1 are mirror images about y = cy,
        # an up triangle of one facing a down triangle of the other
        yb = cy + k * h
        for j in range(-2 * nx, 2 * nx + 1):
            xc = cx + j * pitch / 2.0
            if ((j + k) % 2 == 0) if k >= 0 else ((j - k - 1) % 2 == 1):
                pts = [(xc - pitch / 2, yb), (xc + pitch / 2, yb), (xc, yb + h)]
            else:
                pts = [(xc - pitch / 2, yb + h), (xc + pitch / 2, yb + h), (xc, yb)]
            cell = shapely.Polygon(pts)
            if cell.intersects(region.free):
                # half a web, plus the chord tolerance the fitted contour may take back
                inset = cell.buffer(-web / 2.0 - float(region.settings.chord_tol_mm),
                                    join_style="mitre")
                if not inset.is_empty:
                    cells.append(inset)
    return cells


def _grid_holes(region: DesignRegion, nodes: np.ndarray, triangles: np.ndarray,
                densities: np.ndarray, level: float, pitch: float, x_shift: float,
                mirrors: Sequence[tuple[float, float, float, float]]) -> tuple[Feature, ...]:
    """The ``grid`` shape (see the module text) at the density threshold ``level``."""
    return _grid_in(region, holes_from_density(nodes, triangles, densities, region, level,
                                               mirrors), pitch, x_shift)


def _grid_in(region: DesignRegion, voids: Sequence[shapely.Polygon], pitch: float,
             x_shift: float) -> tuple[Feature, ...]:
    """The rib grid of ``pitch`` across the free-form holes ``voids``."""
    s = region.settings
    r, dmin = float(s.corner_radius_mm), float(s.min_hole_mm)
    if not voids:
        return ()
    # clear of the design region's edge by twice the chord tolerance: the fitted contours stay
    # out of the keep-outs, and no piece runs within a hair of the outline band (meshes of such
    # near-coincident rings were seen to fail)
    void = shapely.intersection(shapely.union_all(voids), region.free.buffer(
        -2.0 * float(s.chord_tol_mm), quad_segs=16))
    pieces = []
    for cell in _grid_cells(region, pitch, x_shift):
        if not cell.intersects(void):
            continue
        q = shapely.intersection(cell, void).buffer(-r, quad_segs=16).buffer(r, quad_segs=16)
        for g in getattr(q, "geoms", [q]):
            if isinstance(g, shapely.Polygon) and not g.is_empty and not g.interiors \
                    and not g.buffer(-0.499 * dmin).is_empty:
                pieces.append(g)
    pieces.sort(key=lambda g: (round(g.centroid.y, 6), round(g.centroid.x, 6)))
    return hole_features(pieces, float(s.chord_tol_mm))
