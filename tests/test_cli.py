"""The command line as a user meets it: exit statuses, messages that name the field, atomic output.

Specification (DESIGN.md, command-line shape): exit 0 done, 2 refused with nothing written; an
earlier good output folder survives a failed run.
"""

from __future__ import annotations

import json
from pathlib import Path

import ezdxf
import pytest

from platewright.cli.main import main

GOOD = """\
name: Test sled
material: cast_acrylic
thickness_mm: 3.0
machine: example_co2_60w
kerf_mm: 0.2
references:
  wheelbase_mm: 120
plates:
  - name: deck
    outline:
      rounded_rect: {width_mm: 200, height_mm: 100, corner_radius_mm: 5}
    features:
      - {id: rear, type: bore, at_mm: [-wheelbase_mm / 2, 0], diameter_mm: 22, fit: press}
      - {id: front, type: bore, at_mm: [wheelbase_mm / 2, 0], diameter_mm: 22, fit: press}
      - {id: mount, type: fastener, at_mm: [0, 30], screw: M3}
"""


def write(tmp_path: Path, text: str, name: str = "design.yaml") -> Path:
    p = tmp_path / name
    p.write_text(text, encoding="utf-8")
    return p


def run(args: list[str], capsys) -> tuple[int, str, str]:
    rc = main(args)
    out, err = capsys.readouterr()
    return rc, out, err


def test_build_writes_every_output(tmp_path, capsys):
    out = tmp_path / "out"
    rc, stdout, _ = run(["build", str(write(tmp_path, GOOD)), "-o", str(out)], capsys)
    assert rc == 0
    for rel in ("report.json", "report.html", "plates/deck.dxf", "plates/deck.svg",
                "plates/deck.stl", "plates/deck.glb"):
        assert (out / rel).is_file(), rel
    report = json.loads((out / "report.json").read_text())
    assert report["schema_version"] == 1 and report["tool"]["name"] == "platewright"
    assert [p["name"] for p in report["plates"]] == ["deck"]
    assert "deck" in stdout and "Test sled" in stdout
    # every relative path in files resolves inside the folder (contract: relative to report.json)
    for rel in report["plates"][0]["files"].values():
        assert (out / rel).is_file()
    doc = ezdxf.readfile(out / "plates/deck.dxf")
    assert doc.header["$INSUNITS"] == 4  # millimetres (DXF reference, $INSUNITS code 4)
    html = (out / "report.html").read_text()
    assert "chlorine" in html and "<svg" in html and "confirm" in html.lower()


def test_build_without_design_builds_the_bundled_example(tmp_path, capsys, monkeypatch):
    monkeypatch.chdir(tmp_path)
    rc, stdout, _ = run(["build"], capsys)
    assert rc == 0
    reports = list((tmp_path / "platewright-out").glob("*/report.json"))
    assert len(reports) == 1


def test_set_override_moves_reference_features(tmp_path, capsys):
    design = write(tmp_path, GOOD)
    a, b = tmp_path / "a", tmp_path / "b"
    assert run(["build", str(design), "-o", str(a)], capsys)[0] == 0
    assert run(["build", str(design), "-o", str(b), "--set", "references.wheelbase_mm=150"],
               capsys)[0] == 0

    def centres(folder):
        rep = json.loads((folder / "report.json").read_text())
        return {f["id"]: f["center_mm"] for f in rep["plates"][0]["features"]}

    ca, cb = centres(a), centres(b)
    # front/rear bores are at +-wheelbase/2: they move by 15 mm each way; the screw hole stays
    assert cb["front"][0] - ca["front"][0] == pytest.approx(15.0)
    assert cb["rear"][0] - ca["rear"][0] == pytest.approx(-15.0)
    assert cb["mount"] == ca["mount"]


BAD_CASES = {
    # class of bad input: (design text, words the message must contain)
    "malformed_yaml": (GOOD.replace("plates:", "plates: [", 1), ["line"]),
    "unknown_key": (GOOD.replace("thickness_mm: 3.0", "thicknes_mm: 3.0"), ["thicknes_mm", "thickness_mm"]),
    "unknown_material": (GOOD.replace("cast_acrylic", "cast_acrylc"), ["material", "cast_acrylic"]),
    "refused_material": (GOOD.replace("cast_acrylic", "pvc"), ["material", "chlorine"]),
    "zero_size": (GOOD.replace("diameter_mm: 22, fit: press}\n      - {id: front",
                               "diameter_mm: 0, fit: press}\n      - {id: front"), ["diameter_mm"]),
    "negative_size": (GOOD.replace("height_mm: 100", "height_mm: -100"), ["height_mm"]),
    "bore_bigger_than_plate": (GOOD.replace("diameter_mm: 22, fit: press}\n      - {id: front",
                                            "diameter_mm: 150, fit: press}\n      - {id: front"), ["rear"]),
    "overlapping_features": (GOOD.replace("[0, 30], screw: M3", "[wheelbase_mm / 2 + 5, 0], screw: M3"),
                             ["overlap"]),
    "kerf_larger_than_feature": (GOOD.replace("kerf_mm: 0.2", "kerf_mm: 3.5"), ["kerf"]),
}


@pytest.mark.parametrize("case", sorted(BAD_CASES))
def test_bad_input_is_refused_with_status_2_and_nothing_written(case, tmp_path, capsys):
    text, words = BAD_CASES[case]
    out = tmp_path / "out"
    rc, _, err = run(["build", str(write(tmp_path, text)), "-o", str(out)], capsys)
    assert rc == 2, err
    for w in words:
        assert w.lower() in err.lower(), (case, w, err)
    assert not out.exists()
    assert [p.name for p in tmp_path.iterdir()] == ["design.yaml"]  # no temporary leftovers


def test_failed_run_leaves_earlier_output_untouched(tmp_path, capsys):
    out = tmp_path / "out"
    design = write(tmp_path, GOOD)
    assert run(["build", str(design), "-o", str(out)], capsys)[0] == 0
    before = {p.relative_to(out): p.read_bytes() for p in out.rglob("*") if p.is_file()}
    design.write_text(GOOD.replace("cast_acrylic", "pvc"))
    assert run(["build", str(design), "-o", str(out)], capsys)[0] == 2
    after = {p.relative_to(out): p.read_bytes() for p in out.rglob("*") if p.is_file()}
    assert after == before


def test_rebuild_replaces_its_own_output_but_never_a_foreign_folder(tmp_path, capsys):
    design = write(tmp_path, GOOD)
    out = tmp_path / "out"
    assert run(["build", str(design), "-o", str(out)], capsys)[0] == 0
    assert run(["build", str(design), "-o", str(out)], capsys)[0] == 0
    foreign = tmp_path / "mine"
    foreign.mkdir()
    (foreign / "notes.txt").write_text("keep me")
    rc, _, err = run(["build", str(design), "-o", str(foreign)], capsys)
    assert rc == 2 and "not replaced" in err
    assert (foreign / "notes.txt").read_text() == "keep me"


def test_missing_design_file_is_refused(tmp_path, capsys):
    rc, _, err = run(["build", str(tmp_path / "nope.yaml")], capsys)
    assert rc == 2 and "nope.yaml" in err


def test_fields_prints_the_reference_with_units(capsys):
    rc, out, _ = run(["fields"], capsys)
    assert rc == 0 and "thickness_mm" in out and "kerf_mm" in out


def test_starters_lists_and_copies(tmp_path, capsys):
    rc, out, _ = run(["starters"], capsys)
    assert rc == 0
    names = [line.split()[0] for line in out.splitlines() if line.strip()]
    assert len(names) >= 3
    dest = tmp_path / "mine.yaml"
    assert run(["starters", "--copy", names[0], str(dest)], capsys)[0] == 0
    assert run(["build", str(dest), "-o", str(tmp_path / "o")], capsys)[0] == 0


def test_materials_lists_refused_ones(capsys):
    rc, out, _ = run(["materials"], capsys)
    assert rc == 0 and "pvc" in out and "REFUSED" in out


def test_materials_lists_poissons_ratio(capsys):
    from platewright.geometry.library import load_materials

    rc, out, _ = run(["materials"], capsys)
    rows = {line.split()[0]: line for line in out.splitlines() if line.strip()}
    for key, m in load_materials().items():
        if m.laser_safe:
            assert f"nu {m.poisson_ratio:4.2f}" in rows[key]
