"""Machine profile files: our format, field-named errors (path and line), atomic save, and
``--machine`` / ``machine:`` naming a file. Values here are invented for the tests; the rules
checked are the documented look-up order and the refusal of chlorine-bearing plastics
(REFERENCE.md, "Never laser-cut")."""

from __future__ import annotations

import argparse
import json
from pathlib import Path

import pytest

from platewright.cli.commands.machines import MachinesCommand
from platewright.cli.main import main
from platewright.geometry.errors import DesignError
from platewright.geometry.library import get_material
from platewright.geometry.shop.machine_files import (
    describe_machine_profile,
    load_profile_file,
    read_profile_text,
    save_profile,
    set_measured,
)
from platewright.geometry.shop.machines import (
    MACHINE_FIELDS,
    fit_allowances_for,
    get_machine,
    load_machines,
    machine_from_mapping,
    pierce_for,
    speed_for,
)

FULL = """\
name: shop cutter
kind: co2_laser
bed_mm: [500, 300]
kerf_mm: 0.2
kerf_mm_by_material:
  cast_acrylic:
    - {thickness_mm: 3, kerf_mm: 0.17}
cut_speed_mm_s:
  cast_acrylic:
    - {thickness_mm: 3, speed_mm_s: 11}
    - {speed_mm_s: 4}
pierce_s: 0.4
pierce_s_by_material:
  cast_acrylic:
    - {thickness_mm: 6, pierce_s: 1.5}
travel_mm_s: 250
setup_s: 240
hourly_rate: 30
currency: XXX
fit_allowance_mm_by_material:
  cast_acrylic:
    - {press: -0.25}
    - {thickness_mm: 3, press: -0.12, slide: 0.04}
sheets:
  - {material: cast_acrylic, thickness_mm: 3, size_mm: [600, 400], price: 20}
sources:
  kerf_mm: "measured"
"""


def test_profile_round_trip(tmp_path: Path):
    m = read_profile_text(FULL, "shop.yaml", "shop")
    save_profile(m, tmp_path / "shop.yaml")
    assert load_profile_file(tmp_path / "shop.yaml") == m
    assert not [p for p in tmp_path.iterdir() if p.name.startswith(".")]  # no temp file left
    for key, bundled in load_machines().items():
        save_profile(bundled, tmp_path / f"{key}.yaml")
        assert load_profile_file(tmp_path / f"{key}.yaml") == bundled


def test_lookups_follow_the_documented_order():
    m = read_profile_text(FULL, "shop.yaml", "shop")
    assert speed_for(m, "cast_acrylic", 3.0) == 11.0       # thickness entry
    assert speed_for(m, "cast_acrylic", 5.0) == 4.0        # any-thickness entry
    assert speed_for(m, "mdf", 3.0) is None                # no data
    assert pierce_for(m, "cast_acrylic", 6.0) == 1.5
    assert pierce_for(m, "cast_acrylic", 3.0) == 0.4       # profile default
    lib = get_material("cast_acrylic").fit_allowance_mm
    fits3 = fit_allowances_for(m, "cast_acrylic", 3.0)
    assert fits3["press"] == -0.12 and fits3["slide"] == 0.04      # measured, this thickness
    assert fits3["clearance"] == lib["clearance"]                  # library default kept
    assert fit_allowances_for(m, "cast_acrylic", 6.0)["press"] == -0.25
    assert fit_allowances_for(None, "cast_acrylic", 3.0) == lib


def test_set_measured_replaces_the_same_thickness():
    m = read_profile_text(FULL, "shop.yaml", "shop")
    new, changes = set_measured(m, "cast_acrylic", 3.0, 0.155, {"press": -0.1})
    assert dict(new.kerf_by_material["cast_acrylic"])[3.0] == 0.155
    assert len(new.kerf_by_material["cast_acrylic"]) == 1
    assert any("0.17 -> 0.155" in c for c in changes)
    new, _ = set_measured(m, "mdf", 6.0, 0.21)
    assert dict(new.kerf_by_material["mdf"])[6.0] == 0.21


@pytest.mark.parametrize("text, path, line, words", [
    ("name: a\ntravel_mm: 300\n", "travel_mm", 2, "did you mean 'travel_mm_s'"),
    ("name: a\ncut_speed_mm_s:\n  mdf:\n    - {thickness_mm: 3, speed_mm_s: -5}\n",
     "cut_speed_mm_s.mdf[0].speed_mm_s", 4, "greater than zero"),
    ("name: a\nbed_mm: big\n", "bed_mm", 2, "expected two numbers"),
    ("name: a\nsheets:\n  - {material: cast_acrylic, thickness_mm: 3, size_mm: [1, 1], prise: 2}\n",
     "sheets[0].prise", 3, "did you mean 'price'"),
    ("name: a\nkerf_mm_by_material:\n  cast_acrylc: 0.2\n", "kerf_mm_by_material.cast_acrylc", 3,
     "did you mean 'cast_acrylic'"),
    ("name: a\ncut_speed_mm_s:\n  pvc: 10\n", "cut_speed_mm_s.pvc", 3, "never be laser-cut"),
])
def test_bad_profiles_name_field_and_line(tmp_path: Path, text, path, line, words):
    f = tmp_path / "bad.yaml"
    f.write_text(text, encoding="utf-8")
    with pytest.raises(DesignError) as info:
        load_profile_file(f)
    (problem,) = info.value.problems
    assert problem.path == path and problem.line == line
    assert words in str(problem)
    assert info.value.source == str(f)


DESIGN = """\
name: Dune skimmer
material: cast_acrylic
thickness_mm: 3.0
machine: {machine}
plates:
  - name: deck
    outline:
      rounded_rect: {{width_mm: 120, height_mm: 80, corner_radius_mm: 5}}
    features:
      - {{id: rear, type: bore, at_mm: [-30, 0], diameter_mm: 22, fit: press}}
"""


def test_design_names_a_profile_file_relative_to_itself(tmp_path: Path, capsys):
    (tmp_path / "profiles").mkdir()
    (tmp_path / "profiles" / "shop.yaml").write_text(FULL, encoding="utf-8")
    design = tmp_path / "d.yaml"
    design.write_text(DESIGN.format(machine="profiles/shop.yaml"), encoding="utf-8")
    out = tmp_path / "out"
    assert main(["build", str(design), "-o", str(out), "-q"]) == 0
    report = json.loads((out / "report.json").read_text(encoding="utf-8"))
    assert report["machine"]["key"] == "shop"
    assert report["plates"][0]["kerf_mm"] == pytest.approx(0.17)   # the file's measured kerf
    # DESIGN.md: cut_diameter = nominal + fit_allowance - kerf, with the file's measured press
    # allowance for 3 mm: 22 - 0.12 - 0.17 = 21.71 (by hand)
    rear = next(f for f in report["plates"][0]["features"] if f["id"] == "rear")
    assert rear["fit_allowance_mm"] == pytest.approx(-0.12)
    assert rear["cut_diameter_mm"] == pytest.approx(21.71)
    # speed 11 mm/s from the file: cut time = cut length / 11 (by hand)
    cost = report["plates"][0]["cost"]
    assert cost["cut_time_s"] == pytest.approx(report["plates"][0]["cut_length_mm"] / 11.0, abs=1e-3)


def test_library_loader_resolves_a_profile_file_like_the_command_line(tmp_path: Path):
    # a Python user of load_design gets the same profile as `platewright build`
    from platewright.geometry.design.loader import load_design

    (tmp_path / "profiles").mkdir()
    (tmp_path / "profiles" / "shop.yaml").write_text(FULL, encoding="utf-8")
    design = tmp_path / "d.yaml"
    design.write_text(DESIGN.format(machine="profiles/shop.yaml"), encoding="utf-8")
    assert load_design(design).machine.key == "shop"
    design.write_text(DESIGN.format(machine="profiles/none.yaml"), encoding="utf-8")
    with pytest.raises(DesignError) as exc:
        load_design(design)
    assert exc.value.problems[0].path == "machine" and exc.value.problems[0].line == 4


def test_machine_option_takes_a_file_and_bad_file_refuses(tmp_path: Path, capsys, monkeypatch):
    monkeypatch.chdir(tmp_path)
    Path("shop.yaml").write_text(FULL, encoding="utf-8")
    Path("d.yaml").write_text(DESIGN.format(machine="example_co2_60w"), encoding="utf-8")
    assert main(["build", "d.yaml", "--machine", "shop.yaml", "-o", "out", "-q"]) == 0
    assert json.loads(Path("out/report.json").read_text(encoding="utf-8"))["machine"]["key"] == "shop"
    assert main(["build", "d.yaml", "--set", "machine=shop.yaml", "-o", "out", "-q"]) == 0
    capsys.readouterr()
    Path("bad.yaml").write_text("name: a\nhourly_rate: -3\n", encoding="utf-8")
    assert main(["build", "d.yaml", "--machine", "bad.yaml", "-o", "out2"]) == 2
    err = capsys.readouterr().err
    assert "hourly_rate (line 2)" in err and not Path("out2").exists()
    # the design's own machine: naming a bad file is refused too, with the design's line
    Path("d2.yaml").write_text(DESIGN.format(machine="missing/shop.yaml"), encoding="utf-8")
    assert main(["build", "d2.yaml", "-o", "out5"]) == 2
    assert "machine (line 4)" in capsys.readouterr().err and not Path("out5").exists()
    assert main(["build", "d.yaml", "--machine", "nothere.yaml", "-o", "out3"]) == 2
    assert main(["build", "d.yaml", "--machine", "example_co2_60", "-o", "out4"]) == 2
    assert not Path("out3").exists() and not Path("out4").exists()


def test_machines_command_and_reference(capsys):
    cmd = MachinesCommand()
    parser = argparse.ArgumentParser()
    cmd.add_arguments(parser)
    assert cmd.run(parser.parse_args([])) == 0
    assert "example_co2_60w" in capsys.readouterr().out
    assert cmd.run(parser.parse_args(["--show", "example_fibre_1kw"])) == 0
    assert "fibre" in capsys.readouterr().out
    ref = describe_machine_profile()
    for name in MACHINE_FIELDS:          # every field documented
        assert f"`{name}`" in ref
    with pytest.raises(DesignError):
        cmd.run(parser.parse_args(["--show", "no_such_machine"]))


def test_bundled_profiles_are_marked_examples():
    folder = Path(__file__).resolve().parents[1] / "templates" / "machines"
    for f in folder.glob("*.yaml"):
        assert "measure your own" in f.read_text(encoding="utf-8").lower(), f.name
    assert get_machine("example_co2_60w").setup_s is not None
    with pytest.raises(ValueError, match="setup_s"):
        machine_from_mapping({"setup_s": -1})
