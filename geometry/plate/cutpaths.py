"""Fit- and kerf-compensated cut paths of a plate.

Two steps, both exact offsets (see :mod:`.offset`):

1. the as-cut part edge: each nominal contour moved by ``fit_allowance_mm / 2`` into the
   material (the allowance is a signed amount added to a diameter or width, so a positive
   allowance makes a hole bigger);
2. the path of the cutter's centre: the part edge moved ``kerf_mm / 2`` into the scrap.

So a hole is cut on a path of diameter ``nominal + fit_allowance - kerf`` and the outline on a
path ``kerf`` larger than the part. Inner contours are cut first, the outline last (a freed part
drops and shifts). All lengths in mm.
"""

from __future__ import annotations

import math

from platewright.geometry.errors import DesignError, Problem
from platewright.geometry.model import CutContour, Feature, Plate
from platewright.geometry.plate.curves import Contour
from platewright.geometry.plate.offset import OffsetError, offset_contour

__all__ = ["part_contours", "cut_paths"]


def _features(plate: Plate) -> list[Feature]:
    return [plate.outline, *plate.features]


def part_contours(plate: Plate) -> list[tuple[str, Contour]]:
    """``(feature_id, as-cut part contour)`` for every contour of every feature, outline first.

    Each nominal contour is offset by ``-fit_allowance_mm / 2`` (mm). Raises DesignError (path =
    feature id) when a feature vanishes under its allowance.
    """
    out: list[tuple[str, Contour]] = []
    problems: list[Problem] = []
    for f in _features(plate):
        for c in f.contours:
            try:
                out.append((f.id, offset_contour(c, -f.fit_allowance_mm / 2.0)))
            except OffsetError as exc:
                problems.append(
                    Problem(
                        path=f.id,
                        message=f"fit allowance {f.fit_allowance_mm:g} mm larger than feature: {exc}",
                        line=f.source_line,
                        hint="use a smaller allowance or a bigger feature",
                    )
                )
    if problems:
        raise DesignError(problems, source=plate.source_path)
    return out


def _tour(starts: list[tuple[float, float]]) -> list[int]:
    """Indices of ``starts`` (mm) in nearest-neighbour order from the origin (ties: input order)."""
    left = list(range(len(starts)))
    order: list[int] = []
    x, y = 0.0, 0.0
    while left:
        k = min(left, key=lambda i: math.hypot(starts[i][0] - x, starts[i][1] - y))
        left.remove(k)
        order.append(k)
        x, y = starts[k]
    return order


def cut_paths(plate: Plate) -> list[CutContour]:
    """The cutter-centre paths of ``plate``, in cut order (mm).

    Every part contour is offset by ``+kerf_mm / 2`` into the scrap. Inner contours (layer
    ``inner``, every contour except the outline's counter-clockwise ones) come first in a
    nearest-neighbour tour of their start points from the origin, then the outline (layer
    ``outer``); ``order`` runs 0..n-1. Raises DesignError (path = feature id) listing every
    feature that kerf or allowance makes impossible to cut.
    """
    parts = part_contours(plate)
    half_kerf = plate.kerf_mm / 2.0
    inner: list[tuple[str, Contour, Contour]] = []
    outer: list[tuple[str, Contour, Contour]] = []
    problems: list[Problem] = []
    lines = {f.id: f.source_line for f in _features(plate)}
    for fid, part in parts:
        try:
            path = offset_contour(part, half_kerf)
        except OffsetError as exc:
            problems.append(
                Problem(
                    path=fid,
                    message=f"kerf {plate.kerf_mm:g} mm larger than feature: {exc}",
                    line=lines.get(fid),
                    hint="enlarge the feature or check the machine's kerf",
                )
            )
            continue
        is_outer = fid == plate.outline.id and part.is_ccw()
        (outer if is_outer else inner).append((fid, path, part))
    if problems:
        raise DesignError(problems, source=plate.source_path)
    starts = [(float(p.vertices[0, 0]), float(p.vertices[0, 1])) for _, p, _ in inner]
    ordered = [inner[i] for i in _tour(starts)]
    out: list[CutContour] = []
    for layer, group in (("inner", ordered), ("outer", outer)):
        for fid, path, part in group:
            out.append(CutContour(fid, layer, len(out), path, part))
    return out
