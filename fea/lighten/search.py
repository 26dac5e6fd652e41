"""Candidate hole sets of the lightening search and their verification by real-geometry FE.

Used by :func:`.lighten.lighten_plate` (the pipeline and the search loop; its module text gives
the method). Here: the distinct hole sets at the search levels (shares of the design region,
0..1) ordered by hole area, sets made on demand between two neighbours (halving the level, or
shrinking the holes of the failing set evenly), the rules that drop a new hole, and ``SearchJob``
that turns a hole set into a plate WITH the holes and re-analyses it (fea.analysis).

Lengths mm, areas mm^2, masses g; utilisation and levels are dimensionless.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Sequence
from dataclasses import dataclass, replace
from typing import Any

import numpy as np
import shapely

from platewright.fea.analysis import analyse_plate
from platewright.fea.lighten.design_region import DesignRegion
from platewright.fea.lighten.patterns import Layout, pattern_holes
from platewright.fea.lighten.tracing import LIGHTENING_KIND, holes_from_density
from platewright.fea.loadcases.parse import Component, LoadCase
from platewright.fea.results import PlateAnalysis
from platewright.geometry.errors import DesignError
from platewright.geometry.model import Feature, Plate
from platewright.geometry.plate.rules import check_plate

__all__ = ["with_holes", "RULES_FOR_NEW_HOLES"]

Progress = Callable[[str], None]
#: Warnings that disqualify a new hole (errors always do).
RULES_FOR_NEW_HOLES = ("web", "edge_distance", "feature_size")
#: Number of search levels (shares of the design region) turned into hole sets.
_LEVELS = 16
#: Element size of the one retry when a holed plate does not mesh, share of the usual size.
_RETRY_SIZE = 0.7


def with_holes(plate: Plate, holes: Sequence[Feature]) -> Plate:
    """``plate`` with ``holes`` added after its own features (nothing else changes)."""
    return replace(plate, features=tuple(plate.features) + tuple(holes))


def _bad_holes(plate: Plate) -> set[str]:
    """Ids of lightening holes named by an error, or by a web/edge/size warning."""
    new = {f.id for f in plate.features if f.kind == LIGHTENING_KIND}
    bad: set[str] = set()
    for f in check_plate(plate):
        if f.level == "error" or f.rule in RULES_FOR_NEW_HOLES:
            bad |= new.intersection(f.features)
    return bad


def _renumber(holes: Sequence[Feature]) -> tuple[Feature, ...]:
    return tuple(replace(h, id=f"lighten{i + 1}") for i, h in enumerate(holes))


def limit_utilisation(analysis: PlateAnalysis) -> float:
    """Worst use of any limit over every case: value / limit (limit / value for a safety
    factor); at most 1 when every limit is met (dimensionless)."""
    worst = 0.0
    for case in analysis.cases:
        for chk in case.checks:
            if chk.value is None or chk.limit is None:
                continue
            if chk.name == "min_safety_factor":
                worst = max(worst, chk.limit / chk.value if chk.value > 0 else math.inf)
            elif chk.limit > 0:
                worst = max(worst, chk.value / chk.limit)
    return worst


@dataclass
class SearchJob:
    plate: Plate
    cases: tuple[LoadCase, ...]
    components: tuple[Component, ...]
    vehicle_mass_g: float
    size_mm: float | None
    method: str
    progress: Progress | None

    def say(self, text: str) -> None:
        if self.progress is not None:
            self.progress(text)

    def verify(self, holes: Sequence[Feature]) -> tuple[tuple[Feature, ...], Plate, PlateAnalysis | None]:
        """Holes kept after the rules, the plate with them, and its analysis (None: no holes)."""
        kept = _renumber(holes)
        for _ in range(4):
            if not kept:
                return (), self.plate, None
            candidate = with_holes(self.plate, kept)
            try:
                bad = _bad_holes(candidate)
            except (DesignError, ValueError):
                bad = {h.id for h in kept}
            if not bad:
                break
            kept = _renumber([h for h in kept if h.id not in bad])
        else:
            return (), self.plate, None
        try:
            analysis = analyse_plate(candidate, self.cases, components=self.components,
                                     vehicle_mass_g=self.vehicle_mass_g, size_mm=self.size_mm,
                                     method=self.method)
        except RuntimeError:
            # The mesher's boundary recovery fails on some holed plates at the usual element
            # size; one retry on a finer mesh (a finer mesh deflects a little more, so the check
            # stays on the safe side)
            try:
                analysis = analyse_plate(candidate, self.cases, components=self.components,
                                         vehicle_mass_g=self.vehicle_mass_g,
                                         size_mm=_RETRY_SIZE * self._size_mm(), method=self.method)
            except (DesignError, ValueError, RuntimeError):
                return (), self.plate, None
        except (DesignError, ValueError):
            return (), self.plate, None  # the holed plate could not be meshed or solved
        return kept, candidate, analysis

    def _size_mm(self) -> float:
        """The smallest element size the verifying analyses use, mm (as fea.analysis picks it:
        the given size, else each case's, else the outline's bounding-box diagonal / 40)."""
        if self.size_mm:
            return float(self.size_mm)
        x0, y0, x1, y1 = self.plate.outline.contours[0].bbox()
        default = math.hypot(x1 - x0, y1 - y0) / 40.0
        return min(float(c.mesh_size_mm or default) for c in self.cases)


def hole_sets(style: str, nodes: np.ndarray, tris: np.ndarray, dens: np.ndarray,
               region: DesignRegion, to_threshold: Callable[[float], float],
               levels: Sequence[float] | None = None,
               mirrors: Sequence[tuple[float, float, float, float]] = (),
               layout: Layout | None = None) -> list[tuple[float, float, Any]]:
    """The distinct hole sets at the search ``levels`` (default 1/16, 2/16, ... 1), as (level,
    hole area mm^2, holes), ordered by hole area. Organic holes are shapely polygons (contours
    are fitted only for the sets that get verified); pattern holes are Features."""
    out: dict[tuple, tuple[float, float, Any]] = {}
    if levels is None:
        levels = list(np.arange(1, _LEVELS + 1) / _LEVELS)
    traced: set[float] = set()
    for level in levels:
        thr = to_threshold(float(level))
        if thr in traced:  # levels past the densest element share one threshold: one set
            continue
        traced.add(thr)
        if style == "organic":
            holes: Any = holes_from_density(nodes, tris, dens, region, thr, mirrors)
            area = float(sum(p.area for p in holes))
            key = tuple((round(p.centroid.x, 3), round(p.centroid.y, 3), round(p.area, 2))
                        for p in holes)
        else:
            holes = pattern_holes(region, nodes, tris, dens, thr, layout, mirrors)
            area = float(sum(-h.contours[0].signed_area() for h in holes))
            key = tuple((round(h.center_mm[0], 3), round(h.center_mm[1], 3), round(area, 2))
                        for h in holes)
        if holes and key not in out:
            out[key] = (float(level), area, holes)
    return sorted(out.values(), key=lambda t: (t[1], t[0]))


def refine_hole_sets(sets: list[tuple[float, float, Any]], lo: int, hi: int, style: str,
            nodes: np.ndarray, tris: np.ndarray, dens: np.ndarray, region: DesignRegion,
            to_threshold: Callable[[float], float],
            mirrors: Sequence[tuple[float, float, float, float]] = (),
            layout: Layout | None = None) -> bool:
    """Insert at ``hi`` the hole set of a level halfway between sets ``lo`` and ``hi`` (the
    bracket ends; -1 and len(sets) stand for levels 0 and 1) when it differs from both;
    halves the level gap up to 4 times. Returns whether a set was inserted."""
    l0 = sets[lo][0] if lo >= 0 else 0.0
    l1 = sets[hi][0] if hi < len(sets) else 1.0
    a0 = sets[lo][1] if lo >= 0 else 0.0
    a1 = sets[hi][1] if hi < len(sets) else math.inf
    for _ in range(4):
        mid = 0.5 * (l0 + l1)
        if l1 - l0 < 1.0 / 256.0:
            return False
        found = hole_sets(style, nodes, tris, dens, region, to_threshold, (mid,), mirrors, layout)
        if found and a0 + 1e-6 < found[0][1] < a1 - 1e-6:
            sets.insert(hi, found[0])
            return True
        if found and found[0][1] >= a1 - 1e-6:
            l1 = mid
        else:
            l0 = mid
    if style != "organic" or hi >= len(sets):
        return False
    # No level gives a set in between: shrink the holes of the failing set instead.
    level, _, polys = sets[hi]
    for frac in (0.5, 0.25, 0.75):
        want = a0 + frac * (a1 - a0)
        shrunk = _shrunk(polys, region, want)
        area = float(sum(p.area for p in shrunk))
        if shrunk and a0 + 1e-6 < area < a1 - 1e-6:
            sets.insert(hi, (level, area, shrunk))
            return True
    return False


def _shrunk(polys: list[shapely.Polygon], region: DesignRegion, want_mm2: float
            ) -> list[shapely.Polygon]:
    """The holes ``polys`` eroded evenly (bisection on the offset) to about ``want_mm2`` of
    hole area, re-opened with the corner radius and without holes below the minimum size."""
    s = region.settings
    r, dmin = float(s.corner_radius_mm), float(s.min_hole_mm)

    def make(off: float) -> list[shapely.Polygon]:
        out = []
        for p in polys:
            q = p.buffer(-off, quad_segs=16).buffer(-r, quad_segs=16).buffer(r, quad_segs=16)
            for g in getattr(q, "geoms", [q]):
                if isinstance(g, shapely.Polygon) and not g.is_empty and not g.interiors \
                        and not g.buffer(-0.499 * dmin).is_empty:
                    out.append(g)
        return sorted(out, key=lambda g: (round(g.centroid.x, 6), round(g.centroid.y, 6)))

    lo, hi = 0.0, max(p.bounds[2] - p.bounds[0] for p in polys)
    best: list[shapely.Polygon] = []
    for _ in range(12):
        mid = 0.5 * (lo + hi)
        cand = make(mid)
        if sum(g.area for g in cand) > want_mm2:
            lo = mid
        else:
            hi, best = mid, cand
    return best


def failing_cases(analysis: PlateAnalysis) -> str:
    return ",".join(c.name for c in analysis.cases if not c.passes)
