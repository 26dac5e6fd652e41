"""Property-based checks over random valid-looking designs (hypothesis).

For any design the loader accepts: the pipeline either builds it or refuses it with a DesignError
(never another exception); every cut path is a valid simple polygon; and offsetting each cut path
back by kerf/2 returns the as-cut part edge (the definition of kerf compensation in DESIGN.md),
checked with shapely's Hausdorff distance, a general-purpose reference implementation.

One exception is geometry, not error: a round beam cannot cut a sharp inside corner of a hole.
There the path offset back has a kerf/2 corner radius, so it differs from a sharp nominal corner by
(sqrt(2) - 1) kerf/2 at most (distance from a square corner to a quarter circle of that radius).
"""

from __future__ import annotations

import math

from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from platewright.geometry.design.loader import load_design_text
from platewright.geometry.errors import DesignError
from platewright.geometry.plate.offset import offset_contour
from platewright.geometry.plate.pipeline import build_design
from platewright.geometry.plate.region import to_polygon

TOL_MM = 0.02  # polyline view at 0.005 mm chord tolerance on both sides, plus margin


@st.composite
def designs(draw) -> str:
    width = draw(st.floats(40, 300))
    height = draw(st.floats(40, 200))
    radius = draw(st.floats(0, min(width, height) / 2 - 0.5))
    kerf = draw(st.floats(0.0, 0.5))
    thickness = draw(st.sampled_from([1.5, 3.0, 6.0]))
    material = draw(st.sampled_from(["cast_acrylic", "birch_plywood", "aluminium_5052_h32", "mdf"]))
    lines = [
        "name: random sled",
        f"material: {material}",
        f"thickness_mm: {thickness}",
        f"kerf_mm: {kerf:.4f}",
        "plates:",
        "  - name: p",
        "    outline:",
        f"      rounded_rect: {{width_mm: {width:.4f}, height_mm: {height:.4f}, "
        f"corner_radius_mm: {radius:.4f}}}",
        "    label: false",
        "    features:",
    ]
    n = draw(st.integers(0, 6))
    for i in range(n):
        x = draw(st.floats(-width / 2, width / 2))
        y = draw(st.floats(-height / 2, height / 2))
        kind = draw(st.sampled_from(["bore", "fastener", "slot", "cutout", "hole"]))
        if kind == "bore":
            d = draw(st.floats(1.0, 30.0))
            fit = draw(st.sampled_from(["press", "slide", "clearance", "transition"]))
            lines.append(f"      - {{id: f{i}, type: bore, at_mm: [{x:.4f}, {y:.4f}], "
                         f"diameter_mm: {d:.4f}, fit: {fit}}}")
        elif kind == "fastener":
            screw = draw(st.sampled_from(["M2", "M3", "M4", "M5"]))
            lines.append(f"      - {{id: f{i}, type: fastener, at_mm: [{x:.4f}, {y:.4f}], screw: {screw}}}")
        elif kind == "hole":
            d = draw(st.floats(0.5, 20.0))
            lines.append(f"      - {{id: f{i}, type: hole, at_mm: [{x:.4f}, {y:.4f}], diameter_mm: {d:.4f}}}")
        elif kind == "slot":
            w = draw(st.floats(1.0, 10.0))
            length = w + draw(st.floats(0.0, 40.0))
            a = draw(st.floats(0, 180))
            lines.append(f"      - {{id: f{i}, type: slot, at_mm: [{x:.4f}, {y:.4f}], "
                         f"length_mm: {length:.4f}, "
                         f"width_mm: {w:.4f}, angle_deg: {a:.3f}}}")
        else:
            w = draw(st.floats(2.0, 40.0))
            h = draw(st.floats(2.0, 40.0))
            r = draw(st.floats(0.0, min(w, h) / 2 - 0.01))
            lines.append(f"      - {{id: f{i}, type: cutout, at_mm: [{x:.4f}, {y:.4f}], width_mm: {w:.4f}, "
                         f"height_mm: {h:.4f}, corner_radius_mm: {r:.4f}}}")
    if n == 0:
        lines[-1] = "    features: []"
    return "\n".join(lines) + "\n"


@settings(max_examples=60, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(designs())
def test_random_designs_build_or_refuse_cleanly(text):
    try:
        result = build_design(load_design_text(text))
    except DesignError as exc:
        assert exc.problems, "a refusal must carry at least one problem"
        return
    for built in result.plates:
        kerf = built.plate.kerf_mm
        outer = [c for c in built.cut if c.layer == "outer"]
        assert len(outer) == 1 and built.cut[-1].layer == "outer"  # outline is cut last
        for c in built.cut:
            path_poly = to_polygon(c.path)
            assert path_poly.is_valid and path_poly.area > 0
            back = to_polygon(offset_contour(c.path, -kerf / 2))
            part = to_polygon(c.part_contour)
            feature = built.plate.feature(c.feature_id)
            allowed = TOL_MM
            if feature.kind == "cutout" and feature.dims.get("corner_radius_mm", 0.0) < kerf / 2:
                allowed += (math.sqrt(2.0) - 1.0) * kerf / 2
            assert back.hausdorff_distance(part) < allowed, (c.feature_id, text)
