"""Checks of parsed load cases and components against the plates they name.

Feature names, points, edge regions and pressure areas are resolved on the plate's geometry (mm);
family rules (which force and moment components a bending or in_plane case takes) are checked
without it. Every problem goes to the reader's list with its field path and a hint.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence

import numpy as np
import shapely

from platewright.fea.loadcases.reader import Reader
from platewright.fea.loadcases.types import Box, Component, LoadCase, feature_names, resolve_feature
from platewright.geometry.model import Feature, Plate

__all__: list[str] = []


def _names_hint(plate: Plate) -> str:
    names = sorted(feature_names(plate))
    shown = ", ".join(names[:40]) + (" ..." if len(names) > 40 else "")
    return f"features of plate '{plate.name}': {shown}"


def _spans(features: Sequence[Feature]) -> tuple[np.ndarray, str]:
    pts = np.vstack([c.to_points(0.05) for f in features for c in f.contours])
    lo, hi = pts.min(axis=0), pts.max(axis=0)
    return pts, f"spans x {lo[0]:g}..{hi[0]:g} mm, y {lo[1]:g}..{hi[1]:g} mm"


class _Checker:
    """Cross-checks a parsed case against its plate's geometry."""

    def __init__(self, rd: Reader, plate: Plate) -> None:
        self.rd, self.plate = rd, plate
        self.names = feature_names(plate)
        outline = plate.outline.contours[0].to_points(0.05)
        self.outline = shapely.Polygon(outline)

    def feature(self, name: str | None, path: str, holes_only: bool = False) -> bool:
        if name is None:
            return True
        if name not in self.names:
            self.rd.fail(path, f"plate '{self.plate.name}' has no feature '{name}'",
                         _names_hint(self.plate))
            return False
        if holes_only and name == self.plate.outline.id:
            self.rd.fail(path, f"'{name}' is the outline, not a hole",
                         "hold an edge with {at: edge, feature: ..., condition: ...}")
            return False
        return True

    def point(self, p: tuple[float, float] | None, path: str) -> None:
        if p is not None and self.outline.distance(shapely.Point(p)) > 1e-6:
            _, spans = _spans([self.plate.outline])
            self.rd.fail(path, f"point [{p[0]:g}, {p[1]:g}] lies outside plate '{self.plate.name}'",
                         f"the outline {spans}")

    def region(self, box: Box | None, feature: str | None, path: str) -> None:
        if box is None or not self.feature(feature, path.rsplit(".", 1)[0] + ".feature"):
            return
        _, plate_span = _spans([self.plate.outline])
        pts, spans = _spans(resolve_feature(self.plate, feature))
        x0, y0, x1, y1 = self.outline.bounds
        if box.x_min_mm > x1 or box.x_max_mm < x0 or box.y_min_mm > y1 or box.y_max_mm < y0:
            self.rd.fail(path, f"region {box.describe()} lies outside plate '{self.plate.name}'",
                         f"the outline {plate_span}")
        elif not box.contains(pts).any():
            self.rd.fail(path, f"region {box.describe()} selects no part of feature "
                         f"'{feature or self.plate.outline.id}'", f"that feature {spans}")

    def area(self, box: Box | None, path: str) -> None:
        if box is None:
            return
        x0, y0, x1, y1 = self.outline.bounds
        clip = shapely.box(max(box.x_min_mm, x0 - 1), max(box.y_min_mm, y0 - 1),
                           min(box.x_max_mm, x1 + 1), min(box.y_max_mm, y1 + 1))
        if clip.is_empty or not clip.intersects(self.outline) or \
                clip.intersection(self.outline).area <= 0.0:
            _, spans = _spans([self.plate.outline])
            self.rd.fail(path, f"region {box.describe()} lies outside plate '{self.plate.name}'",
                         f"the outline {spans}")


def check_component(rd: Reader, c: Component) -> bool:
    before = len(rd.problems)
    if (c.at_mm is None) == (c.feature is None):
        rd.fail(c.path, "a component needs exactly one of 'at_mm' and 'feature'")
    if c.footprint_mm is not None and (c.at_mm is None or min(c.footprint_mm) <= 0):
        rd.fail(f"{c.path}.footprint_mm", "footprint_mm needs at_mm and two positive sizes")
    if rd.plates is not None:
        plate = rd.plates.get(c.plate)
        if plate is None:
            rd.fail(f"{c.path}.plate", f"no plate '{c.plate}'", "plates: " + ", ".join(rd.plates))
        else:
            chk = _Checker(rd, plate)
            chk.feature(c.feature, f"{c.path}.feature", holes_only=True)
            chk.point(c.at_mm, f"{c.path}.at_mm")
    return len(rd.problems) == before


def _check_family(rd: Reader, case: LoadCase, comps: Mapping[str, Component], clean: bool
                  ) -> None:
    bending = case.family == "bending"
    for ld in case.loads:
        fx, fy, fz = ld.force_n
        mx, my, mz = ld.moment_n_mm
        if ld.type in ("force", "edge") and (bool(fx or fy) if bending else bool(fz)):
            rd.fail(f"{ld.path}.force_n", f"a {case.family} case takes only "
                    f"{'Fz' if bending else 'Fx and Fy'}", "put the other components in "
                    f"{'an in_plane' if bending else 'a bending'} case")
        if ld.type == "moment" and (bool(mz) if bending else bool(mx or my)):
            rd.fail(f"{ld.path}.moment_n_mm", f"a {case.family} case takes only "
                    f"{'Mx and My' if bending else 'Mz'}", "put the other components in "
                    f"{'an in_plane' if bending else 'a bending'} case")
        if ld.type == "pressure" and not bending:
            rd.fail(f"{ld.path}.type", "a pressure acts across the plate: use family: bending")
        if ld.type == "component":
            comp = comps.get(ld.component or "")
            if comp is None:
                rd.fail(f"{ld.path}.component", f"no component '{ld.component}'",
                        "components: " + (", ".join(comps) or "(none defined)"))
            elif comp.plate != case.plate:
                rd.fail(f"{ld.path}.component", f"component '{comp.id}' sits on plate "
                        f"'{comp.plate}', not on '{case.plate}'")
    for s in case.supports:
        if bending and s.directions != ("x", "y"):
            rd.fail(f"{s.path}.directions", "directions choose in-plane displacements",
                    "drop directions in a bending case, or use family: in_plane")
    if bending and case.collision is not None:
        rd.fail(f"{case.path}.collision", "a collision loads the plate in its plane",
                "use family: in_plane")
    if bending and case.g_direction is not None:
        rd.fail(f"{case.path}.g_direction", "in bending the weights act along -z",
                "drop g_direction, or use family: in_plane")
    weights = case.self_weight or any(ld.type == "component" for ld in case.loads)
    if not bending and weights and case.g_direction is None:
        rd.fail(f"{case.path}.g_direction", "an in_plane case with weights needs g_direction",
                "e.g. g_direction: [1, 0]; or self_weight: false and no component loads")
    if clean and not case.loads and not case.self_weight and case.collision is None:
        rd.fail(case.path, f"nothing loads case '{case.name}'",
                "add loads, self_weight: true or a collision")


def check_case(rd: Reader, case: LoadCase, comps: Mapping[str, Component], clean: bool = True
                ) -> bool:
    before = len(rd.problems)
    _check_family(rd, case, comps, clean)
    if rd.plates is None:
        return len(rd.problems) == before
    plate = rd.plates.get(case.plate)
    if plate is None:
        rd.fail(f"{case.path}.plate", f"no plate '{case.plate}'", "plates: " + ", ".join(rd.plates))
        return False
    chk = _Checker(rd, plate)
    for s in case.supports:
        if s.at == "bores":
            for j, name in enumerate(s.features):
                chk.feature(name, f"{s.path}.features[{j}]" if len(s.features) > 1 or
                            s.features != (name,) else f"{s.path}.features", holes_only=True)
        elif s.at == "mount":
            chk.feature(s.features[0], f"{s.path}.feature", holes_only=True)
        elif s.at == "edge":
            feat = s.features[0] if s.features else None
            if chk.feature(feat, f"{s.path}.feature"):
                chk.region(s.region, feat, f"{s.path}.region_mm")
        else:
            for j, p in enumerate(s.points_mm):
                chk.point(p, f"{s.path}.points_mm[{j}]")
    for ld in case.loads:
        if ld.type in ("force", "moment"):
            chk.feature(ld.feature, f"{ld.path}.feature")
            chk.point(ld.at_mm, f"{ld.path}.at_mm")
        elif ld.type == "edge" and chk.feature(ld.feature, f"{ld.path}.feature"):
            chk.region(ld.region, ld.feature, f"{ld.path}.region_mm")
        elif ld.type == "pressure":
            chk.area(ld.region, f"{ld.path}.region_mm")
    col = case.collision
    if col is not None and chk.feature(col.feature, f"{col.path}.feature"):
        chk.region(col.region, col.feature, f"{col.path}.region_mm")
    return len(rd.problems) == before
