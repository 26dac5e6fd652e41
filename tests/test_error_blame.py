"""Refusals name the file, field and line they are about (issue 9, item 10).

A bad machine profile is blamed on the profile file with the profile's own line, and the design's
``machine`` field that pointed there is named; rule refusals (overlap, web, bed size) give the
feature's line; ``--mesh-size-mm`` is validated as an option. Expected lines are found here by
searching the texts.
"""

from __future__ import annotations

from pathlib import Path

from platewright.cli.main import main

DESIGN = """\
name: blame test
material: cast_acrylic
thickness_mm: 3
kerf_mm: 0.2
machine: {machine}
plates:
  - name: deck
    outline:
      rounded_rect: {{width_mm: 100, height_mm: 80}}
    features:
      - {{id: left, type: hole, at_mm: [-20, 0], diameter_mm: 10}}
      - {{id: right, type: hole, at_mm: [20, 0], diameter_mm: 10}}
"""


def _line(text: str, needle: str) -> int:
    return next(i + 1 for i, t in enumerate(text.splitlines()) if needle in t)


def _run(tmp_path: Path, capsys, text: str, *extra: str, command: str = "build",
         folder: str = "") -> str:
    design = tmp_path / folder / "design.yaml"
    design.parent.mkdir(parents=True, exist_ok=True)
    design.write_text(text, encoding="utf-8")
    out = tmp_path / "out"
    rc = main([command, str(design), "-o", str(out), "-q", *extra])
    err = capsys.readouterr().err
    assert rc == 2, err
    assert "Traceback" not in err and not out.exists()
    return err


def test_a_bad_profile_field_is_blamed_on_the_profile_file(tmp_path, capsys):
    profile_text = "name: shop laser\nbed_mm: [600, 400]\nkerf_mm: -1\n"
    (tmp_path / "profiles").mkdir()
    profile = tmp_path / "profiles" / "shop.yaml"
    profile.write_text(profile_text, encoding="utf-8")
    text = DESIGN.format(machine="profiles/shop.yaml")
    err = _run(tmp_path, capsys, text)
    # the profile's own line, prefixed by the profile file, not by the design file
    assert f"{profile}: kerf_mm (line {_line(profile_text, 'kerf_mm')})" in err
    assert "design.yaml: kerf_mm" not in err
    # and the design field that named the profile, with its line
    assert f"machine (line {_line(text, 'machine:')}" in err


def test_a_profile_path_to_a_non_profile_file_is_refused_by_name(tmp_path, capsys):
    # a system-like file three folders up from the design (written here, not the real one)
    (tmp_path / "etc").mkdir()
    (tmp_path / "etc" / "passwd").write_text("root:x:0:0:root:/root:/bin/sh\n", encoding="utf-8")
    text = DESIGN.format(machine="../../../etc/passwd")
    err = _run(tmp_path, capsys, text, folder="a/b/c")
    assert "expected a mapping, got str" not in err
    assert f"machine (line {_line(text, 'machine:')})" in err
    assert ".yaml" in err


def test_a_profile_that_is_not_a_mapping_names_the_profile(tmp_path, capsys):
    (tmp_path / "p.yaml").write_text("just some text\n", encoding="utf-8")
    text = DESIGN.format(machine="p.yaml")
    err = _run(tmp_path, capsys, text)
    assert f"{tmp_path / 'p.yaml'}:" in err and "mapping" in err
    assert f"machine (line {_line(text, 'machine:')}" in err


def test_overlap_refusal_gives_the_feature_line(tmp_path, capsys):
    text = DESIGN.format(machine="example_co2_60w").replace("[20, 0], diameter_mm: 10",
                                                            "[-15, 0], diameter_mm: 10")
    err = _run(tmp_path, capsys, text)
    assert "feature_overlap" in err
    assert f"plates[0].features[0] (line {_line(text, 'id: left')})" in err


def test_web_refusal_gives_the_feature_line(tmp_path, capsys):
    # 10 mm holes with centres 10.2 mm apart leave a 0.2 mm web (error limit: max(t/2, kerf))
    text = DESIGN.format(machine="example_co2_60w").replace("[20, 0], diameter_mm: 10",
                                                            "[-9.8, 0], diameter_mm: 10")
    err = _run(tmp_path, capsys, text)
    assert "web" in err
    assert f"plates[0].features[0] (line {_line(text, 'id: left')})" in err


def test_bed_refusal_gives_the_outline_line(tmp_path, capsys):
    text = DESIGN.format(machine="{name: tiny, bed_mm: [50, 50], kerf_mm: 0.2}")
    err = _run(tmp_path, capsys, text)
    assert "bed_size" in err
    assert f"plates[0].outline.rounded_rect (line {_line(text, 'rounded_rect')})" in err


def test_a_huge_mesh_size_option_is_refused_as_an_option(tmp_path, capsys):
    text = DESIGN.format(machine="example_co2_60w") + """\
load_cases:
  - name: push
    plate: deck
    family: bending
    supports:
      - {at: bores, features: [left]}
    loads:
      - {type: force, feature: right, force_n: [0, 0, -1]}
"""
    err = _run(tmp_path, capsys, text, "--mesh-size-mm", "1e6", command="check")
    assert "--mesh-size-mm" in err
    assert "linearring" not in err.lower() and "load_cases[0].mesh_size_mm" not in err
