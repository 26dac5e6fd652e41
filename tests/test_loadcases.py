"""The load-case and component schema (fea.loadcases) and the refusals of the analysis: every
bad-input rule gives a DesignError naming the field path, the design-file line and what is valid.
The designs are invented test data."""

from __future__ import annotations

import dataclasses
import math
from types import SimpleNamespace

import pytest
import yaml
from hypothesis import given, settings
from hypothesis import strategies as st
from plate_factory import make_plate, rect_contour

from platewright.fea.analysis import analyse_design
from platewright.fea.loadcases.parse import describe_load_cases, parse_loads
from platewright.geometry.design.loader import load_design_text
from platewright.geometry.errors import DesignError
from platewright.geometry.plate.build import build_plates

BASE = """\
name: load case test rig
material: cast_acrylic
thickness_mm: 3.0
references:
  deck_length_mm: 160
plates:
  - name: deck
    outline:
      rounded_rect: {width_mm: deck_length_mm, height_mm: 120, corner_radius_mm: 8}
    features:
      - {id: post_a, type: hole, at_mm: [-60, 40], diameter_mm: 3.4}
      - {id: post_b, type: hole, at_mm: [-60, -40], diameter_mm: 3.4}
      - {id: drive, type: motor_mount, at_mm: [40, 0], motor: nema17}
  - name: lid
    outline:
      rounded_rect: {width_mm: 60, height_mm: 40, corner_radius_mm: 4}
"""

GOOD = """\
components:
  - {id: battery, plate: deck, at_mm: ["deck_length_mm / 8", -10], mass_g: 420,
     footprint_mm: [70, 35]}
  - {id: stepper, plate: deck, feature: drive, mass_g: 280}
load_cases:
  - name: carry_3g
    plate: deck
    family: bending
    g_factor: 3.0
    supports:
      - {at: bores, features: [post_a, post_b], mode: rigid}
      - {at: mount, feature: drive, mode: elastic, stiffness_n_per_mm: 2000}
      - {at: edge, feature: outline, condition: clamped, region_mm: {x_min: 79}}
    loads:
      - {type: component, component: battery}
      - {type: component, component: stepper}
      - {type: force, feature: drive, force_n: [0, 0, -5]}
      - {type: moment, feature: drive, moment_n_mm: [40, 0, 0]}
      - {type: edge, feature: outline, region_mm: {x_min: 79}, force_n: [0, 0, -2]}
      - {type: pressure, pressure_mpa: 0.001, region_mm: {x_max: 0}}
    limits: {max_deflection_mm: 0.5, span_ratio: 300, min_safety_factor: 2.0}
  - name: bump
    plate: deck
    family: in_plane
    supports:
      - {at: bores, features: [post_a, post_b]}
      - {at: points, points_mm: [[0, 0]]}
    loads:
      - {type: force, at_mm: [10, 0], force_n: [5, 0]}
      - {type: moment, feature: drive, moment_n_mm: [0, 0, 400]}
    collision: {speed_m_s: 1.5, bumper_stiffness_n_per_mm: 40, region_mm: {x_min: 79},
                direction: [-3, 0]}
    mesh_size_mm: 6
"""


def _load(extra: str):
    design = load_design_text(BASE + extra, "rig.yaml")
    return design, build_plates(design)


def _problems(extra: str) -> list:
    design, plates = _load(extra)
    with pytest.raises(DesignError) as info:
        parse_loads(design, plates)
    return info.value.problems


def _line(text: str, marker: str) -> int:
    """1-based line of the first line of BASE + text containing ``marker`` (worked here)."""
    for i, line in enumerate((BASE + text).splitlines(), start=1):
        if marker in line:
            return i
    raise AssertionError(marker)


def _case(body: str) -> str:
    """One bending case on the deck with the given extra YAML lines (4-space indented)."""
    return ("load_cases:\n  - name: probe\n    plate: deck\n    family: bending\n"
            "    supports:\n      - {at: bores, features: [post_a, post_b]}\n" + body)


def test_good_design_parses_into_typed_cases():
    design, plates = _load(GOOD)
    li = parse_loads(design, plates)
    assert [c.id for c in li.components] == ["battery", "stepper"]
    assert li.component("battery").at_mm == (20.0, -10.0)  # 160 / 8, expression evaluated
    carry, bump = li.cases
    assert carry.self_weight is True and carry.g_factor == 3.0  # bending default: self-weight
    assert bump.self_weight is False and bump.g_direction is None  # in_plane default
    assert bump.loads[0].force_n == (5.0, 0.0, 0.0)  # [Fx, Fy] padded with Fz = 0
    assert bump.collision.direction == (-1.0, 0.0)  # normalised
    assert carry.supports[1].stiffness_n_per_mm == 2000.0
    assert carry.limits.span_ratio == 300.0 and carry.limits.span_mm is None
    assert carry.supports[2].region.x_min_mm == 79.0 and math.isinf(
        carry.supports[2].region.x_max_mm)


def test_good_design_analyses_in_equilibrium():
    design, plates = _load(GOOD)
    res = analyse_design(design, plates, size_mm=8.0)
    assert [p.plate for p in res] == ["deck"]
    assert all(c.equilibrium_residual < 1e-9 for c in res[0].cases)


def test_unknown_feature_names_path_line_and_valid_names():
    text = GOOD.replace("features: [post_a, post_b], mode: rigid", "features: [post_a, post_c]")
    (p,) = _problems(text)
    assert p.path == "load_cases[0].supports[0].features[1]"
    assert p.line == _line(text, "post_c")
    assert "post_c" in p.message
    for name in ("post_a", "post_b", "drive", "outline"):
        assert name in p.hint


def test_region_selecting_nothing_and_region_outside_plate_are_refused():
    text = _case("    loads:\n      - {type: edge, region_mm: {x_min: -10, x_max: 10, y_min: -10,"
                 " y_max: 10}, force_n: [0, 0, -1]}\n"
                 "      - {type: edge, region_mm: {x_min: 500}, force_n: [0, 0, -1]}\n"
                 "      - {type: pressure, pressure_mpa: 0.01, region_mm: {y_min: 300}}\n")
    probs = _problems(text)
    assert [p.path for p in probs] == [f"load_cases[0].loads[{i}].region_mm" for i in range(3)]
    assert "selects no part of feature 'outline'" in probs[0].message
    assert "outside plate 'deck'" in probs[1].message and "x -80..80" in probs[1].hint
    assert "outside plate 'deck'" in probs[2].message
    assert probs[0].line == _line(text, "x_min: -10")


def test_limits_with_the_wrong_unit_say_which_unit():
    text = _case("    limits: {max_deflection: 0.5, span_ratio: 300}\n")
    (p,) = _problems(text)
    assert p.path == "load_cases[0].limits.max_deflection"
    assert "max_deflection_mm" in p.hint and "mm" in p.hint
    text = _case('    limits: {max_deflection_mm: "0.5 in"}\n')
    (p,) = _problems(text)
    assert "in mm" in p.message
    assert "12.7 mm" in p.hint  # 0.5 in x 25.4 mm/in (the inch is 25.4 mm exactly, 1959)
    text = _case("    limits: {max_deflection_in: 0.02}\n")
    (p,) = _problems(text)
    assert "max_deflection_mm" in p.hint


def test_each_family_refuses_loads_of_the_other():
    text = _case("    loads:\n      - {type: force, feature: drive, force_n: [3, 0, -5]}\n"
                 "      - {type: moment, feature: drive, moment_n_mm: [0, 0, 10]}\n"
                 "    collision: {speed_m_s: 1, bumper_stiffness_n_per_mm: 10, direction: [1, 0]}\n")
    probs = _problems(text)
    assert {p.path for p in probs} == {"load_cases[0].loads[0].force_n",
                                       "load_cases[0].loads[1].moment_n_mm",
                                       "load_cases[0].collision"}
    text = GOOD.replace("      - {type: force, at_mm: [10, 0], force_n: [5, 0]}",
                        "      - {type: pressure, pressure_mpa: 0.001}\n"
                        "      - {type: component, component: battery}")
    probs = _problems(text)
    assert {p.path for p in probs} == {"load_cases[1].loads[0].type", "load_cases[1].g_direction"}


def test_component_and_support_rules():
    text = ("components:\n  - {id: cell, plate: lid, at_mm: [0, 0], mass_g: 50}\n"
            "  - {id: far, plate: deck, at_mm: [500, 0], mass_g: 50}\n"
            "  - {id: both, plate: deck, at_mm: [0, 0], feature: drive, mass_g: 5}\n"
            + _case("      - {at: mount, feature: drive, mode: elastic}\n"
                    "      - {at: edge, feature: outline}\n"
                    "      - {at: points, points_mm: [[0, 90]]}\n"
                    "    loads:\n      - {type: component, component: cell}\n"
                    "      - {type: component, component: nothing}\n"
                    "      - {type: force, feature: drive, at_mm: [0, 0], force_n: [0, 0, 1]}\n"))
    probs = {p.path: p for p in _problems(text)}
    assert "outside plate 'deck'" in probs["components[1].at_mm"].message
    assert "exactly one" in probs["components[2]"].message
    assert "stiffness_n_per_mm" in probs["load_cases[0].supports[1]"].message
    assert "condition" in probs["load_cases[0].supports[2]"].message
    assert "outside" in probs["load_cases[0].supports[3].points_mm[0]"].message
    assert "plate 'lid'" in probs["load_cases[0].loads[0].component"].message
    assert "cell" in probs["load_cases[0].loads[1].component"].hint
    assert "exactly one" in probs["load_cases[0].loads[2]"].message


def test_unknown_plate_duplicate_names_and_empty_cases():
    text = ("load_cases:\n"
            "  - {name: a, plate: hull, family: bending, supports: [{at: points, "
            "points_mm: [[0, 0]]}]}\n"
            "  - {name: b, plate: deck, family: in_plane, supports: [{at: points, "
            "points_mm: [[0, 0]]}]}\n"
            "  - {name: b, plate: deck, family: bending, supports: []}\n")
    probs = {p.path: p for p in _problems(text)}
    assert "deck" in probs["load_cases[0].plate"].hint and "lid" in probs["load_cases[0].plate"].hint
    assert "nothing loads" in probs["load_cases[1]"].message
    assert "duplicate" in probs["load_cases[2].name"].message


def test_oversized_mesh_is_refused_with_the_estimate():
    design, plates = _load(_case("    mesh_size_mm: 0.02\n"))
    with pytest.raises(DesignError) as info:
        analyse_design(design, plates)
    (p,) = info.value.problems
    assert p.path == "load_cases[0].mesh_size_mm"
    assert p.line == _line(_case("    mesh_size_mm: 0.02\n"), "mesh_size_mm: 0.02")
    assert "MB" in p.message and "unknowns" in p.message and "mesh_size_mm" in p.hint


@pytest.mark.parametrize(
    ("family", "supports", "motion"),
    [
        ("bending", "[{at: points, points_mm: [[0, 0]]}]", "rotation about"),
        # Pinned along one straight edge: the plate can turn about that edge (the y axis).
        ("bending", "[{at: edge, condition: pinned, region_mm: {x_max: -80}}]",
         "rotation about y"),
        ("in_plane", "[{at: points, points_mm: [[0, 0]]}]", "rotation about z"),
    ],
)
def test_under_supported_case_names_the_free_motion(family, supports, motion):
    text = (f"load_cases:\n  - name: wobbly\n    plate: deck\n    family: {family}\n"
            f"    g_direction: [1, 0]\n    supports: {supports}\n    mesh_size_mm: 10\n")
    if family == "bending":
        text = text.replace("    g_direction: [1, 0]\n", "")
    design, plates = _load(text)
    with pytest.raises(DesignError) as info:
        analyse_design(design, plates)
    (p,) = info.value.problems
    assert p.path == "load_cases[0].supports" and "wobbly" in p.message
    assert motion in p.message
    assert p.line == _line(text, "supports:")


def test_refused_material_is_not_analysed():
    # Chlorine-bearing plastics must never be laser-cut (REFERENCE.md, "Never laser-cut").
    plate = make_plate(rect_contour(50, 50), name="sheet")
    plate = dataclasses.replace(plate, material=dataclasses.replace(
        plate.material, laser_safe=False, refusal_reason="chlorine-bearing: toxic fumes"))
    design = load_design_text(BASE, "rig.yaml")
    design = dataclasses.replace(design, load_cases=tuple(yaml.safe_load(
        "- {name: c, plate: sheet, family: bending, supports: [{at: edge, condition: pinned}]}")))
    with pytest.raises(DesignError, match="refused: chlorine"):
        analyse_design(design, [plate])


def test_reference_text_documents_every_field_with_units():
    text = describe_load_cases()
    for name in ("components:", "vehicle_mass_g", "g_factor", "self_weight", "g_direction",
                 "stiffness_n_per_mm", "condition", "region_mm", "force_n", "moment_n_mm",
                 "pressure_mpa", "speed_m_s", "bumper_stiffness_n_per_mm", "direction",
                 "max_deflection_mm", "span_ratio", "min_safety_factor", "mesh_size_mm",
                 "grain_deg", "footprint_mm", "at_mm"):
        assert f"`{name}`" in text or name in text
    assert "| `mass_g` | g | required |" in text
    assert "v sqrt(k m)" in text and "ESTIMATES" in text


_SCALARS = st.one_of(st.none(), st.booleans(), st.integers(-5, 500), st.floats(allow_nan=True),
                     st.sampled_from(["outline", "post_a", "bores", "edge", "bending", "in_plane",
                                      "0.5 in", "rigid", "elastic", "x", "force", "pressure"]))
_VALUES = st.recursive(_SCALARS, lambda inner: st.lists(inner, max_size=3) | st.dictionaries(
    st.sampled_from(["at", "type", "features", "feature", "force_n", "region_mm", "x_min",
                     "mode", "points_mm", "condition", "pressure_mpa", "speed_m_s"]),
    inner, max_size=4), max_leaves=12)
_CASE_KEYS = st.sampled_from(["name", "plate", "family", "g_factor", "self_weight", "supports",
                              "loads", "collision", "limits", "mesh_size_mm", "g_direction"])


@settings(max_examples=60, deadline=None)
@given(st.dictionaries(_CASE_KEYS, _VALUES, max_size=8))
def test_any_malformed_case_gives_design_error_not_a_crash(raw):
    # Robustness (common practice for input parsers): whatever the mapping holds, the parser
    # either accepts it or raises DesignError with located problems - never another exception.
    plate = make_plate(rect_contour(100, 60), name="deck")
    design = SimpleNamespace(load_cases=[raw], components=[], references={},
                             line_of=lambda _p: None)
    try:
        parse_loads(design, [plate])
    except DesignError as exc:
        assert exc.problems and all(p.path.startswith("load_cases[0]") for p in exc.problems)


def test_mesh_finer_than_estimated_is_refused_after_meshing():
    # Small holes make the mesher refine locally, beyond the uniform estimate
    # 2 A / (sqrt(3) h^2) vertices (node density of equilateral triangles of side h): the
    # mesher's refined estimate (or the actual count) is checked against the limit too.
    from plate_factory import round_hole

    from platewright.fea.analysis import BYTES_PER_DOF, analyse_plate

    holes = tuple(round_hole(f"h{i}", (x, y), 2.0) for i, (x, y) in
                  enumerate([(-30, -30), (30, -30), (-30, 30), (30, 30)]))
    plate = make_plate(rect_contour(100, 100), holes, name="sheet")
    design = SimpleNamespace(load_cases=[{"name": "c", "plate": "sheet", "family": "bending",
                                          "supports": [{"at": "edge", "condition": "pinned"}]}],
                             components=[], references={}, line_of=lambda _p: None)
    cases = parse_loads(design, [plate]).cases
    area = 100 * 100 - 4 * math.pi
    uniform = 2 * area / (math.sqrt(3) * 10.0**2) * 3 * BYTES_PER_DOF
    with pytest.raises(DesignError) as info:
        analyse_plate(plate, cases, size_mm=10.0, memory_limit_bytes=int(1.2 * uniform))
    (p,) = info.value.problems
    assert p.path == "load_cases[0].mesh_size_mm"
    assert "nodes" in p.message and "MB" in p.message and "mesh_size_mm" in p.hint
