"""Loading design files: starter designs, line map, expressions, overrides, the field reference.

Expected values are worked in the tests from the design text or from independent references
(Python's own arithmetic, hashlib, closed-form trigonometry, the machine profile file read with
plain PyYAML); none is taken from the code under test.
"""

from __future__ import annotations

import hashlib
import math
import re
from pathlib import Path

import pytest
import yaml
from hypothesis import given, settings
from hypothesis import strategies as st

from platewright.fea.loadcases.parse import describe_load_cases
from platewright.geometry.design import schema
from platewright.geometry.design.expressions import evaluate, resolve_references
from platewright.geometry.design.loader import load_design, load_design_text
from platewright.geometry.design.overrides import apply_overrides, split_path
from platewright.geometry.design.schema import describe_schema
from platewright.geometry.design.yamlsource import parse_yaml
from platewright.geometry.errors import DesignError
from platewright.geometry.plate.build import bundled_example_path, list_templates, plate_kerf_mm

STARTERS = {p.stem: p for p in list_templates()}
MACHINE_FILE = Path(bundled_example_path()).parent.parent / "machines" / "example_co2_60w.yaml"

MINIMAL = """\
name: test plate
material: cast_acrylic
thickness_mm: 3
references:
  wheelbase_mm: 160
  half_mm: wheelbase_mm / 2
plates:
  - name: deck
    outline: {rounded_rect: {width_mm: wheelbase_mm + 60, height_mm: 100}}
    features:
      - {id: rear, type: hole, at_mm: [-half_mm, 0], diameter_mm: 5}
      - {id: mid, type: hole, at_mm: [0, 20], diameter_mm: 5}
"""


def test_there_are_three_starter_designs_and_the_example_is_one_of_them():
    assert set(STARTERS) == {"two_wheel_base", "four_wheel_deck", "side_rails"}
    assert bundled_example_path() in STARTERS.values()


@pytest.mark.parametrize("stem", sorted(STARTERS))
def test_each_starter_design_loads(stem):
    path = STARTERS[stem]
    raw = yaml.safe_load(path.read_text(encoding="utf-8"))  # plain PyYAML as the reference
    d = load_design(path)
    assert d.name == raw["name"]
    assert [p.name for p in d.plates] == [p["name"] for p in raw["plates"]]
    assert d.material == raw["material"] and d.thickness_mm == float(raw["thickness_mm"])
    # sha256 of the file's bytes, computed independently with hashlib
    assert d.sha256 == hashlib.sha256(path.read_bytes()).hexdigest()
    # every reference written as a plain number keeps its value
    for key, value in raw["references"].items():
        if isinstance(value, (int, float)):
            assert d.references[key] == float(value)
    # first line is a one-line description (the starters command lists it)
    assert path.read_text(encoding="utf-8").startswith("# ")


def test_four_wheel_references_follow_the_wheelbase():
    d = load_design(STARTERS["four_wheel_deck"])
    wb = d.references["wheelbase_mm"]
    # worked from the file: rear_axle_x_mm = -wheelbase_mm / 2, bumper = front axle + 22
    assert d.references["rear_axle_x_mm"] == pytest.approx(-wb / 2)
    assert d.references["front_axle_x_mm"] == pytest.approx(wb / 2)
    assert d.references["bumper_x_mm"] == pytest.approx(wb / 2 + 22)
    assert d.reference_depends["bumper_x_mm"] == {"front_axle_x_mm", "wheelbase_mm"}


def test_line_map_points_at_the_written_lines():
    tree = parse_yaml(MINIMAL)
    lines = MINIMAL.splitlines()
    # the line of each key, found by searching the text (1-based)
    def line_with(s):
        return next(i + 1 for i, t in enumerate(lines) if s in t)
    assert tree.lines.line_of("plates[0].features[1]") == line_with("id: mid")
    assert tree.lines.line_of("plates[0].features[1].diameter_mm") == line_with("id: mid")
    assert tree.lines.line_of("references.half_mm") == line_with("half_mm:")
    assert tree.lines.line_of("plates[0].name") == line_with("- name: deck")
    d = load_design_text(MINIMAL)
    assert d.line_of("thickness_mm") == line_with("thickness_mm")
    assert d.plates[0].features[0].line == line_with("id: rear")


@pytest.mark.parametrize(
    "text, expected",
    [
        ("1 + 2 * 3", 7.0),  # operator precedence, worked by hand
        ("-(2 ** 3) / 4", -2.0),
        ("sqrt(2) ** 2", 2.0),
        ("sin_deg(30)", 0.5),  # closed form: sin 30 deg = 1/2
        ("cos_deg(60)", 0.5),  # cos 60 deg = 1/2
        ("tan_deg(45)", 1.0),  # tan 45 deg = 1
        ("max(1, wb_mm / 2, 3) - min(4, 5)", 76.0),
        ("abs(-wb_mm)", 160.0),
        ("2 * pi", 2 * math.pi),
    ],
)
def test_expression_values_worked_by_hand(text, expected):
    result = evaluate(text, {"wb_mm": 160.0})
    assert result.value == pytest.approx(expected, rel=1e-12, abs=1e-12)


def test_expression_reports_the_references_it_uses():
    assert evaluate("a_mm + 2 * b_mm - 3", {"a_mm": 1, "b_mm": 2, "c_mm": 3}).refs == {
        "a_mm", "b_mm"}
    assert evaluate(12.5, {"a_mm": 1}).refs == frozenset()


_atoms = st.one_of(st.integers(-50, 50).map(str), st.sampled_from(["x_mm", "y_mm"]))


@st.composite
def _arith(draw, depth=3):
    if depth == 0 or draw(st.booleans()):
        return draw(_atoms)
    op = draw(st.sampled_from(["+", "-", "*"]))
    return f"({draw(_arith(depth=depth - 1))} {op} {draw(_arith(depth=depth - 1))})"


@settings(max_examples=60, deadline=None)
@given(_arith())
def test_expressions_agree_with_python_arithmetic(text):
    # reference: Python's own evaluator on the same text with the same names
    names = {"x_mm": 3.5, "y_mm": -2.25}
    expected = eval(text, {"__builtins__": {}}, dict(names))  # noqa: S307 - test reference only
    assert evaluate(text, names).value == pytest.approx(expected, rel=1e-12, abs=1e-9)


def test_references_may_be_written_in_any_order():
    values, depends = resolve_references({"c_mm": "b_mm + 1", "b_mm": "a_mm * 2", "a_mm": 5})
    assert values == {"a_mm": 5.0, "b_mm": 10.0, "c_mm": 11.0}  # worked by hand
    assert depends["c_mm"] == {"a_mm", "b_mm"}


def test_override_by_name_and_by_index_give_the_same_design():
    by_name = load_design_text(MINIMAL, overrides=["plates.deck.features.mid.diameter_mm=6"])
    by_index = load_design_text(MINIMAL, overrides=["plates[0].features[1].diameter_mm=6"])
    assert by_name.plates[0].features[1].params["diameter_mm"] == 6.0
    assert by_index.plates[0].features[1].params == by_name.plates[0].features[1].params


def test_override_values_are_read_as_yaml_and_expressions_still_work():
    d = load_design_text(MINIMAL, overrides=["references.wheelbase_mm=180",
                                             "thickness_mm=4", "material=birch_plywood"])
    assert d.references["half_mm"] == 90.0  # 180 / 2
    assert d.thickness_mm == 4.0 and d.material == "birch_plywood"
    assert d.line_of("thickness_mm") is None  # the file line no longer applies
    d = load_design_text(MINIMAL, overrides=["plates[0].features[1].at_mm=[wheelbase_mm / 4, 1]"])
    assert d.plates[0].features[1].params["at_mm"] == (40.0, 1.0)
    assert d.plates[0].features[1].refs == ("wheelbase_mm",)


def test_override_may_add_a_field_the_schema_allows():
    d = load_design_text(MINIMAL, overrides=["plates.deck.kerf_mm=0.1", "kerf_mm=0.3"])
    assert d.plates[0].kerf_mm == 0.1 and d.kerf_mm == 0.3


def test_overrides_do_not_change_the_parsed_tree():
    tree = parse_yaml(MINIMAL)
    apply_overrides(tree.data, ["thickness_mm=9"])
    assert tree.data["thickness_mm"] == 3


def test_split_path():
    assert split_path("plates[1].features.left_bore.diameter_mm") == [
        "plates", 1, "features", "left_bore", "diameter_mm"]


def test_kerf_precedence_plate_then_design_then_machine_profile():
    # the machine profile file read with plain PyYAML is the reference for the profile kerf
    prof = yaml.safe_load(MACHINE_FILE.read_text(encoding="utf-8"))
    rows = prof["kerf_mm_by_material"]["cast_acrylic"]
    at3 = next(r["kerf_mm"] for r in rows if r.get("thickness_mm") == 3.0)
    base = MINIMAL.replace("thickness_mm: 3\n", "thickness_mm: 3\nmachine: example_co2_60w\n")
    d = load_design_text(base)
    assert plate_kerf_mm(d, d.plates[0]) == at3
    d = load_design_text(base, overrides=["kerf_mm=0.31"])
    assert plate_kerf_mm(d, d.plates[0]) == 0.31
    d = load_design_text(base, overrides=["kerf_mm=0.31", "plates.deck.kerf_mm=0.12"])
    assert plate_kerf_mm(d, d.plates[0]) == 0.12


def test_inline_machine_profile():
    text = MINIMAL + "machine: {name: shop laser, bed_mm: [300, 200], kerf_mm: 0.15}\n"
    d = load_design_text(text)
    assert d.machine.bed_mm == (300.0, 200.0) and d.machine.kerf_mm == 0.15
    assert plate_kerf_mm(d, d.plates[0]) == 0.15


def test_load_cases_and_components_are_kept_as_written_with_lines():
    text = MINIMAL + "load_cases:\n  - {name: drop, at: rear}\ncomponents:\n  - {name: battery}\n"
    d = load_design_text(text)
    assert d.load_cases == ({"name": "drop", "at": "rear"},)
    assert d.components == ({"name": "battery"},)
    lines = text.splitlines()
    assert d.line_of("load_cases[0].at") == lines.index("  - {name: drop, at: rear}") + 1


def _all_records():
    recs = [schema.DESIGN, schema.PLATE, schema.MACHINE, schema.LABEL.mapping,
            *schema.OUTLINE.variants.values(), *schema.FEATURE_TYPES.values()]
    return recs


def test_describe_schema_lists_every_field_with_unit_and_default():
    text = describe_schema()
    rows = {}
    for line in text.splitlines():
        m = re.match(r"\| `([a-z_]+)` \| (.*?) \| (.*?) \| (.*?) \| (.*) \|$", line)
        if m:
            rows.setdefault(m.group(1), []).append(m.groups()[1:])
    for rec in _all_records():
        for name, field in rec.fields.items():
            assert name in rows, name
            units = {r[1] for r in rows[name]}
            # the unit column follows the name's suffix, written out here by hand
            want = ("mm" if name.endswith("_mm") else "degrees" if name.endswith("_deg")
                    else "mm/s" if name.endswith("_mm_s") else "s" if name.endswith("_s")
                    else "g" if name.endswith("_g")
                    else "-")
            assert want in units, (name, units)
            assert all(r[3].strip() for r in rows[name]), name  # a meaning for every row
            if field.required:
                assert any(r[2] == "required" for r in rows[name]), name


def test_describe_schema_covers_every_key_used_in_the_starters():
    # independent of the schema objects: walk the starter files with plain PyYAML
    # `platewright fields` prints both references: the design file and its load cases
    text = describe_schema() + describe_load_cases()
    documented = set(re.findall(r"\| `([a-z_]+)` \|", text))
    documented |= set(re.findall(r"`([a-z_]+)`", text))

    def keys(node, skip=False):
        if isinstance(node, dict):
            for k, v in node.items():
                if not skip:
                    yield k
                yield from keys(v, skip=(k == "references"))
        elif isinstance(node, list):
            for v in node:
                yield from keys(v)

    for path in STARTERS.values():
        used = set(keys(yaml.safe_load(path.read_text(encoding="utf-8"))))
        assert used <= documented, used - documented


def test_override_creates_an_absent_optional_section():
    # MINIMAL has no `lightening:` section; --set may create it (a sweep varies it too).
    d = load_design_text(MINIMAL, overrides=["lightening.deflection_budget=0.1"])
    tree = apply_overrides(parse_yaml(MINIMAL).data, ["lightening.deflection_budget=0.1"])
    assert tree["lightening"] == {"deflection_budget": 0.1} and d.name
    # a misspelt section or field is still refused with a hint
    for bad, hint in (("lightning.deflection_budget=0.1", "lightening"),
                      ("lightening.deflection_budgt=0.1", "deflection_budget")):
        with pytest.raises(DesignError) as err:
            load_design_text(MINIMAL, overrides=[bad])
        assert hint in str(err.value)
    with pytest.raises(DesignError) as err:  # the value is still checked by the schema
        load_design_text(MINIMAL, overrides=["lightening.deflection_budget=-1"])
    assert "deflection_budget" in str(err.value)
