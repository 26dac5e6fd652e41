"""Where each plate's kerf comes from, and thicknesses the machine profile has no entry for
(issue 9, item 11).

The stated rule (``platewright machines --fields`` and the field reference): plate kerf_mm, then
design kerf_mm, then the profile's entry for the material at this thickness, then its entry for
any thickness; when the profile has entries for the material at other thicknesses only, a
thickness between two of them is interpolated linearly (with a ``kerf_interpolated`` warning) and
one outside their range is refused; a material the profile lists nothing for takes the profile's
``kerf_mm``, else the material library's typical kerf. The expected kerfs are computed here from
the bundled profile file read with plain PyYAML.
"""

from __future__ import annotations

import json
from pathlib import Path

import pytest
import yaml

import platewright.templates as templates
from platewright.cli.main import main
from platewright.geometry.design.loader import load_design_text
from platewright.geometry.errors import DesignError
from platewright.geometry.library import get_material
from platewright.geometry.plate.pipeline import build_design
from platewright.geometry.shop.machines import machine_from_mapping

PROFILE = Path(templates.__file__).parent / "machines" / "example_co2_60w.yaml"
ROWS = {r["thickness_mm"]: r["kerf_mm"]
        for r in yaml.safe_load(PROFILE.read_text(encoding="utf-8"))["kerf_mm_by_material"][
            "cast_acrylic"]}

DESIGN = """\
name: kerf source test
material: cast_acrylic
thickness_mm: {t}
machine: example_co2_60w
plates:
  - name: deck
    outline: {{rounded_rect: {{width_mm: 120, height_mm: 80}}}}
    features:
      - {{id: hole, type: hole, at_mm: [0, 0], diameter_mm: 10}}
"""


def _line(text: str, needle: str) -> int:
    return next(i + 1 for i, t in enumerate(text.splitlines()) if needle in t)


def test_a_thickness_beyond_the_profile_table_is_refused(tmp_path, capsys):
    # 25 mm acrylic: the profile's cast_acrylic entries stop at 6 mm; its default kerf_mm is for
    # materials it has no entries for, not for an unmeasured thickness of one it has
    text = DESIGN.format(t=25)
    path = tmp_path / "d.yaml"
    path.write_text(text, encoding="utf-8")
    rc = main(["build", str(path), "-o", str(tmp_path / "out"), "-q"])
    err = capsys.readouterr().err
    assert rc == 2 and not (tmp_path / "out").exists()
    assert f"thickness_mm (line {_line(text, 'thickness_mm')})" in err
    assert f"{min(ROWS):g} to {max(ROWS):g} mm" in err and "example_co2_60w" in err


def test_a_plate_thickness_beyond_the_table_names_the_plate_field():
    text = DESIGN.format(t=3).replace("  - name: deck\n", "  - name: deck\n    thickness_mm: 8\n")
    with pytest.raises(DesignError) as info:
        build_design(load_design_text(text))
    (p,) = info.value.problems
    assert p.path == "plates[0].thickness_mm" and p.line == _line(text, "thickness_mm: 8")


def test_a_thickness_between_two_entries_is_interpolated_with_a_warning(tmp_path, capsys):
    (t0, k0), (t1, k1) = sorted(ROWS.items())[:2]
    t = t0 + 0.5 * (t1 - t0)
    expected = k0 + (k1 - k0) * (t - t0) / (t1 - t0)  # straight line between the two entries
    path = tmp_path / "d.yaml"
    path.write_text(DESIGN.format(t=t), encoding="utf-8")
    out = tmp_path / "out"
    assert main(["build", str(path), "-o", str(out), "-q"]) == 0
    plate = json.loads((out / "report.json").read_text())["plates"][0]
    assert plate["kerf_mm"] == pytest.approx(expected, abs=1e-6)
    assert plate["kerf_source"].startswith("interpolated")
    assert f"{t0:g} mm" in plate["kerf_source"] and f"{t1:g} mm" in plate["kerf_source"]
    warnings = [f for f in plate["findings"] if f["rule"] == "kerf_interpolated"]
    assert len(warnings) == 1 and warnings[0]["level"] == "warning"
    assert warnings[0]["value"] == pytest.approx(expected, abs=1e-6)


def test_report_says_where_every_kerf_came_from(tmp_path, capsys):
    text = DESIGN.format(t=3).replace(
        "      - {id: hole, type: hole, at_mm: [0, 0], diameter_mm: 10}\n",
        "      - {id: hole, type: hole, at_mm: [0, 0], diameter_mm: 10}\n"
        "  - name: side\n    kerf_mm: 0.13\n"
        "    outline: {rounded_rect: {width_mm: 50, height_mm: 50}}\n")
    path = tmp_path / "d.yaml"
    path.write_text(text, encoding="utf-8")
    out = tmp_path / "out"
    assert main(["build", str(path), "-o", str(out), "-q"]) == 0
    deck, side = json.loads((out / "report.json").read_text())["plates"]
    assert deck["kerf_mm"] == pytest.approx(ROWS[3.0])
    assert "example_co2_60w" in deck["kerf_source"] and "3 mm" in deck["kerf_source"]
    assert side["kerf_mm"] == pytest.approx(0.13)
    assert side["kerf_source"].startswith("plate kerf_mm")


def test_kerf_choice_rule_at_library_level():
    from platewright.geometry.shop.machines import KerfRangeError, kerf_choice

    # values chosen in this test
    m = machine_from_mapping({
        "kerf_mm": 0.31,
        "kerf_mm_by_material": {
            "cast_acrylic": [{"thickness_mm": 3.0, "kerf_mm": 0.17},
                             {"thickness_mm": 6.0, "kerf_mm": 0.26}],
            "mdf": [{"kerf_mm": 0.22}],
        },
    })
    assert kerf_choice(m, "cast_acrylic", 6.0).kerf_mm == pytest.approx(0.26)
    c = kerf_choice(m, "cast_acrylic", 5.0)
    assert c.interpolated and c.kerf_mm == pytest.approx(0.17 + (0.26 - 0.17) * 2.0 / 3.0)
    with pytest.raises(KerfRangeError):
        kerf_choice(m, "cast_acrylic", 2.0)
    with pytest.raises(KerfRangeError):
        kerf_choice(m, "cast_acrylic", 6.5)
    assert kerf_choice(m, "mdf", 9.0).kerf_mm == pytest.approx(0.22)          # any thickness
    hdpe = kerf_choice(m, "hdpe", 3.0)
    assert hdpe.kerf_mm == pytest.approx(0.31) and "default" in hdpe.source   # listed nothing
    bare = kerf_choice(machine_from_mapping({}), "mdf", 3.0)
    assert bare.kerf_mm == get_material("mdf").typical_kerf_mm and "material" in bare.source
