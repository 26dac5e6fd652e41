"""Bad design input, library level: every case raises DesignError whose problem names the field
path and the line (worked out in each test by searching the design text).

Refusing chlorine-bearing plastics follows REFERENCE.md "Never laser-cut" (PVC: chlorine and
hydrogen chloride, toxic and corrosive to the machine).
"""

from __future__ import annotations

import pytest

from platewright.geometry.design.loader import load_design, load_design_text
from platewright.geometry.errors import DesignError
from platewright.geometry.plate.build import build_plates

GOOD = """\
name: bad input test
material: cast_acrylic
thickness_mm: 3
kerf_mm: 0.2
references:
  wheelbase_mm: 160
plates:
  - name: deck
    outline: {rounded_rect: {width_mm: 200, height_mm: 100, corner_radius_mm: 5}}
    features:
      - {id: left, type: bore, at_mm: [-wheelbase_mm / 2, 20], diameter_mm: 22, fit: press}
      - {id: right, type: hole, at_mm: [50, 0], diameter_mm: 5}
      - {id: wire, type: slot, at_mm: [0, -30], length_mm: 20, width_mm: 4}
"""


def _line(text: str, needle: str) -> int:
    """1-based line of the first line of ``text`` containing ``needle``."""
    return next(i + 1 for i, t in enumerate(text.splitlines()) if needle in t)


def _fails(text: str, overrides=(), build: bool = False) -> list:
    with pytest.raises(DesignError) as info:
        d = load_design_text(text, "bad.yaml", overrides)
        if build:
            build_plates(d)
    assert "bad.yaml" in str(info.value) or overrides
    return info.value.problems


def test_the_good_design_is_good():
    assert len(build_plates(load_design_text(GOOD))[0].features) == 3


def test_malformed_yaml_gives_the_parser_line():
    text = GOOD.replace("diameter_mm: 5}", "diameter_mm: 5")  # unclosed flow mapping
    (p,) = _fails(text)
    assert "not valid YAML" in p.message
    # PyYAML notices the missing '}' at the next entry's '-'
    assert p.line == _line(text, "id: wire")


def test_duplicate_keys_are_an_error():
    text = GOOD.replace("thickness_mm: 3\n", "thickness_mm: 3\nthickness_mm: 4\n")
    (p,) = _fails(text)
    assert p.path == "thickness_mm" and "duplicate" in p.message
    assert p.line == _line(text, "thickness_mm: 4")


def test_unknown_key_with_did_you_mean():
    text = GOOD.replace("width_mm: 4}", "widht_mm: 4}")
    problems = _fails(text)
    p = next(p for p in problems if "unknown key" in p.message)
    assert p.path == "plates[0].features[2].widht_mm"
    assert p.line == _line(text, "id: wire")
    assert "did you mean 'width_mm'" in p.hint
    # the missing width is reported too: all problems are collected
    assert any(q.path == "plates[0].features[2].width_mm" and "missing" in q.message
               for q in problems)


def test_unknown_top_level_key():
    text = GOOD + "load_case: []\n"
    (p,) = _fails(text)
    assert p.path == "load_case" and "did you mean 'load_cases'" in p.hint
    assert p.line == _line(text, "load_case:")


def test_unknown_material_with_did_you_mean():
    text = GOOD.replace("material: cast_acrylic", "material: cast_acrylc")
    (p,) = _fails(text)
    assert p.path == "material" and p.line == 2
    assert "unknown material" in p.message and "did you mean 'cast_acrylic'" in p.hint


def test_pvc_is_refused_with_the_reason():
    text = GOOD.replace("material: cast_acrylic", "material: pvc")
    (p,) = _fails(text)
    assert p.path == "material" and p.line == 2
    assert "never be laser-cut" in p.message and "chlorine" in p.message.lower()


def test_pvc_is_refused_on_a_plate_too():
    text = GOOD.replace("  - name: deck\n", "  - name: deck\n    material: pvc\n")
    (p,) = _fails(text)
    assert p.path == "plates[0].material" and p.line == _line(text, "material: pvc")


@pytest.mark.parametrize(
    "old, new, path, needle",
    [
        ("thickness_mm: 3", "thickness_mm: 0", "thickness_mm", "thickness_mm: 0"),
        ("diameter_mm: 5}", "diameter_mm: -5}", "plates[0].features[1].diameter_mm", "id: right"),
        ("width_mm: 4}", "width_mm: 0}", "plates[0].features[2].width_mm", "id: wire"),
        ("height_mm: 100", "height_mm: -1", "plates[0].outline.rounded_rect.height_mm",
         "rounded_rect"),
        ("diameter_mm: 22", "diameter_mm: wheelbase_mm - 160",
         "plates[0].features[0].diameter_mm", "id: left"),
    ],
)
def test_zero_and_negative_sizes(old, new, path, needle):
    text = GOOD.replace(old, new)
    problems = _fails(text)
    p = next(p for p in problems if p.path == path)
    assert "out of range" in p.message and "> 0" in p.hint
    assert p.line == _line(text, needle)


def test_quantity_must_be_a_positive_whole_number():
    text = GOOD.replace("  - name: deck\n", "  - name: deck\n    quantity: 1.5\n")
    (p,) = _fails(text)
    assert p.path == "plates[0].quantity" and p.line == _line(text, "quantity")


def test_bore_bigger_than_the_plate():
    text = GOOD.replace("diameter_mm: 22", "diameter_mm: 150")
    problems = _fails(text, build=True)
    p = next(p for p in problems if "bigger than the plate" in p.message)
    assert p.path == "plates[0].features[0]" and p.line == _line(text, "id: left")


def test_feature_outside_the_outline():
    text = GOOD.replace("at_mm: [50, 0]", "at_mm: [150, 0]")
    (p,) = _fails(text, build=True)
    assert p.path == "plates[0].features[1]" and "outside the outline" in p.message
    assert p.line == _line(text, "id: right")


def test_duplicate_feature_ids():
    text = GOOD.replace("id: wire", "id: right")
    (p,) = _fails(text)
    assert p.path == "plates[0].features[2].id" and "duplicate" in p.message
    assert p.line == _line(text, "id: right, type: slot")


def test_feature_ids_are_plain_names_and_reserved_ids_are_refused():
    # generated sub-feature ids contain a dot ("grid.hole1"), so written ids may not
    text = GOOD.replace("id: wire", "id: grid.hole1")
    (p,) = _fails(text)
    assert p.path == "plates[0].features[2].id" and "not a valid name" in p.message
    # "outline" names the plate's outline feature
    text = GOOD.replace("id: wire", "id: outline")
    (p,) = _fails(text, build=True)
    assert p.path == "plates[0].features[2].id" and "reserved" in p.hint
    assert p.line == _line(text, "id: outline")


def test_kerf_larger_than_a_feature():
    text = GOOD.replace("diameter_mm: 5}", "diameter_mm: 0.15}")
    (p,) = _fails(text, build=True)
    assert p.path == "plates[0].features[1]" and "kerf" in p.message
    assert p.line == _line(text, "id: right")


def test_unknown_reference_with_did_you_mean():
    text = GOOD.replace("-wheelbase_mm / 2", "-wheelbse_mm / 2")
    (p,) = _fails(text)
    assert p.path == "plates[0].features[0].at_mm[0]" and p.line == _line(text, "id: left")
    assert "unknown reference 'wheelbse_mm'" in p.message
    assert "did you mean 'wheelbase_mm'" in p.hint


@pytest.mark.parametrize("expr", ["wheelbase_mm / (", "__import__('os')", "wheelbase_mm.real",
                                  "[1, 2]", "1 / 0", "10 ** 10000"])
def test_bad_expressions(expr):
    text = GOOD.replace("at_mm: [50, 0]", f'at_mm: ["{expr}", 0]')
    (p,) = _fails(text)
    assert p.path == "plates[0].features[1].at_mm[0]" and p.line == _line(text, "id: right")


def test_reference_cycle():
    text = GOOD.replace("  wheelbase_mm: 160\n",
                        "  wheelbase_mm: track_mm + 10\n  track_mm: wheelbase_mm - 10\n")
    (p,) = _fails(text)
    assert p.path.startswith("references.") and "cycle" in p.message
    assert p.line in (_line(text, "wheelbase_mm: track"), _line(text, "track_mm: wheel"))


@pytest.mark.parametrize(
    "override, expected_hint",
    [
        ("references.wheelbas_mm=170", "did you mean 'wheelbase_mm'"),
        ("plates.dekc.thickness_mm=4", "did you mean 'deck'"),
        ("plates.deck.features.lefft.diameter_mm=8", "did you mean 'left'"),
        ("plates[0].features[1].diamter_mm=8", "did you mean 'diameter_mm'"),
        ("plates[4].thickness_mm=4", "use 0 to 0"),
        ("thicknes_mm=4", "did you mean 'thickness_mm'"),
    ],
)
def test_bad_set_path(override, expected_hint):
    (p,) = _fails(GOOD, [override])
    assert p.path == f"--set {override}" and p.line is None
    assert expected_hint in p.hint


def test_set_without_equals_sign():
    (p,) = _fails(GOOD, ["thickness_mm"])
    assert "PATH=VALUE" in p.message


def test_bad_set_value_is_reported_at_its_field():
    (p,) = _fails(GOOD, ["plates.deck.features.right.diameter_mm=-1"])
    assert p.path == "plates[0].features[1].diameter_mm" and p.line is None
    assert "--set" in p.hint


def test_python_tags_are_refused():
    text = GOOD.replace("name: bad input test", "name: !!python/object/apply:os.system [ls]")
    (p,) = _fails(text)
    assert p.path == "name" and p.line == 1


def test_not_a_mapping():
    (p,) = _fails("- just\n- a list\n")
    assert "mapping" in p.message


def test_missing_file(tmp_path):
    with pytest.raises(DesignError) as info:
        load_design(tmp_path / "nope.yaml")
    assert "cannot read" in str(info.value)


def test_unknown_motor_and_screw(tmp_path):
    text = GOOD + (
        "      - {id: drive, type: motor_mount, at_mm: [40, 20], motor: nema_17}\n"
        "      - {id: foot, type: fastener, at_mm: [-40, -30], screw: M7}\n")
    problems = _fails(text, build=True)
    paths = {p.path: p for p in problems}
    assert paths["plates[0].features[3].motor"].line == _line(text, "id: drive")
    assert "did you mean 'nema17'" in paths["plates[0].features[3].motor"].hint
    assert paths["plates[0].features[4].screw"].line == _line(text, "id: foot")
