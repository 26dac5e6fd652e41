"""Stated limits on counts (issue 9, item 8) and plate names that collide as file names (item 14).

Counts beyond the limits are refused while loading, before any geometry is built (the loader
raises, the builder is never reached); a refusal prints a capped number of problems and says how
many more there are. Plate names differing only in case, and the device names Windows reserves
(CON, PRN, AUX, NUL, COM1-COM9, LPT1-LPT9: Microsoft's documentation "Naming Files, Paths, and
Namespaces", from memory), are refused.
"""

from __future__ import annotations

import pytest

import platewright.cli.main as cli_main
from platewright.cli.main import main
from platewright.geometry.design import schema
from platewright.geometry.design.loader import load_design_text
from platewright.geometry.errors import DesignError

HEAD = """\
name: limits test
material: cast_acrylic
thickness_mm: 3
kerf_mm: 0.2
machine: {name: big bed, bed_mm: [3000, 3000], kerf_mm: 0.2}
plates:
"""


def _plate(name: str = "deck", extra: str = "", features: str = "") -> str:
    return (f"  - name: {name}\n{extra}    outline: {{rounded_rect: {{width_mm: 2000, "
            f"height_mm: 2000}}}}\n    features:\n{features or '      []'}\n")


def _line(text: str, needle: str) -> int:
    return next(i + 1 for i, t in enumerate(text.splitlines()) if needle in t)


def _problems(text: str) -> list:
    with pytest.raises(DesignError) as info:
        load_design_text(text, "limits.yaml")  # loading only: no geometry is built
    return info.value.problems


def test_a_huge_quantity_is_refused_while_loading():
    text = HEAD + _plate(extra="    quantity: 100000000\n")
    (p,) = _problems(text)
    assert p.path == "plates[0].quantity" and p.line == _line(text, "quantity")
    assert f"{schema.MAX_QUANTITY:,}" in p.hint


def test_a_ten_thousand_square_fastener_array_is_refused_while_loading():
    grid = ("      - {id: grid, type: fastener_array, at_mm: [0, 0], screw: M3, rows: 10000,\n"
            "         cols: 10000, pitch_mm: [0.1, 0.1]}\n")
    text = HEAD + _plate(features=grid)
    paths = {p.path for p in _problems(text)}
    assert {"plates[0].features[0].rows", "plates[0].features[0].cols"} <= paths


def test_holes_per_plate_are_counted_through_arrays_and_mounts():
    # 40 x 30 = 1200 array holes, more than the per-plate limit although each side is allowed
    grid = ("      - {id: grid, type: fastener_array, at_mm: [0, 0], screw: M3, rows: 40,\n"
            "         cols: 30, pitch_mm: [20, 20]}\n")
    assert 40 * 30 > schema.MAX_HOLES_PER_PLATE and 40 <= schema.MAX_ARRAY_SIDE
    text = HEAD + _plate(features=grid)
    (p,) = _problems(text)
    assert p.path == "plates[0].features" and "1,200 holes" in p.message
    assert p.line == _line(text, "features:")


def test_holes_of_the_whole_design_are_limited():
    per_plate = schema.MAX_HOLES_PER_PLATE  # allowed on each plate
    rows = per_plate // 25
    grid = (f"      - {{id: grid, type: fastener_array, at_mm: [0, 0], screw: M3, rows: {rows},\n"
            f"         cols: 25, pitch_mm: [20, 20]}}\n")
    n_plates = schema.MAX_HOLES_PER_DESIGN // (rows * 25) + 1
    text = HEAD + "".join(_plate(f"p{i}", features=grid) for i in range(n_plates))
    (p,) = _problems(text)
    assert p.path == "plates" and f"{n_plates * rows * 25:,} holes" in p.message


def test_too_many_feature_entries_and_plates_are_refused():
    hole = "      - {{id: h{i}, type: hole, at_mm: [0, 0], diameter_mm: 5}}\n"
    n = schema.MAX_FEATURES_PER_PLATE + 1
    text = HEAD + _plate(features="".join(hole.format(i=i) for i in range(n)))
    (p,) = _problems(text)
    assert p.path == "plates[0].features" and f"{n} entries" in p.message
    text = HEAD + "".join(_plate(f"p{i}") for i in range(schema.MAX_PLATES + 1))
    (p,) = _problems(text)
    assert p.path == "plates" and "too many" in p.message


def test_the_printed_problems_are_capped_with_a_count_of_the_rest(tmp_path, capsys):
    # every feature carries one unknown key: exactly one problem each
    shown_at_most = cli_main.MAX_PROBLEMS_SHOWN
    n = shown_at_most + 15
    feats = "".join(f"      - {{id: h{i}, type: hole, at_mm: [{i}, 0], diameter_mm: 5, "
                    "colour: red}\n" for i in range(n))
    path = tmp_path / "d.yaml"
    path.write_text(HEAD + _plate(features=feats), encoding="utf-8")
    rc = main(["build", str(path), "-o", str(tmp_path / "out"), "-q"])
    err = capsys.readouterr().err.splitlines()
    assert rc == 2
    shown = [line for line in err if "unknown key 'colour'" in line]
    assert len(shown) == shown_at_most
    assert err[-1].strip().startswith("... and 15 more problems")


def test_overlapping_hole_grid_prints_a_short_refusal(tmp_path, capsys):
    # 20 x 20 M3 holes at 2 mm pitch all overlap their neighbours: thousands of findings
    grid = ("      - {id: grid, type: fastener_array, at_mm: [0, 0], screw: M3, rows: 20,\n"
            "         cols: 20, pitch_mm: [2, 2]}\n")
    path = tmp_path / "d.yaml"
    path.write_text(HEAD + _plate(features=grid), encoding="utf-8")
    rc = main(["build", str(path), "-o", str(tmp_path / "out"), "-q"])
    err = capsys.readouterr().err.splitlines()
    assert rc == 2 and len(err) == cli_main.MAX_PROBLEMS_SHOWN + 2
    assert "more problems" in err[-1]


# -- plate names that collide as file names -------------------------------------------------------


def test_plate_names_differing_only_in_case_are_refused():
    text = HEAD + _plate("rail_left") + _plate("Rail_Left")
    (p,) = _problems(text)
    assert p.path == "plates[1].name" and p.line == _line(text, "Rail_Left")
    assert "rail_left" in p.message and "case" in p.message


@pytest.mark.parametrize("name", ["CON", "nul", "Prn", "aux", "COM1", "lpt9"])
def test_reserved_device_names_are_refused(name):
    text = HEAD + _plate(name)
    (p,) = _problems(text)
    assert p.path == "plates[0].name" and p.line == _line(text, f"name: {name}")
    assert "reserved" in p.message


@pytest.mark.parametrize("name", ["CONSOLE", "com10", "nully", "lpt"])
def test_names_that_only_start_like_a_device_are_allowed(name):
    assert load_design_text(HEAD + _plate(name)).plates[0].name == name
