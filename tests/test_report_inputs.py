"""report.json records what a rerun needs: every ``--set`` override and every file read with the
sha256 of its bytes (the design file, a machine profile file). Additive: schema_version stays 1.

Independent check: hashlib.sha256 of the files' bytes, computed here.
"""

from __future__ import annotations

import hashlib
import json
from pathlib import Path

from platewright.cli.main import main

PROFILE = """\
name: shop cutter
bed_mm: [500, 300]
kerf_mm: 0.18
"""

DESIGN = """\
name: Inputs sled
material: cast_acrylic
thickness_mm: 3.0
machine: {machine}
references:
  wheelbase_mm: 80
plates:
  - name: deck
    outline:
      rounded_rect: {{width_mm: 140, height_mm: 80, corner_radius_mm: 5}}
    features:
      - {{id: rear, type: bore, at_mm: [-wheelbase_mm / 2, 0], diameter_mm: 22, fit: press}}
"""


def sha(path: Path) -> str:
    return hashlib.sha256(path.read_bytes()).hexdigest()


def report_of(folder: Path) -> dict:
    return json.loads((folder / "report.json").read_text(encoding="utf-8"))


def test_overrides_and_the_machine_file_are_recorded(tmp_path: Path, capsys, monkeypatch):
    monkeypatch.chdir(tmp_path)
    Path("shop.yaml").write_text(PROFILE, encoding="utf-8")
    Path("d.yaml").write_text(DESIGN.format(machine="example_co2_60w"), encoding="utf-8")
    sets = ["references.wheelbase_mm=90", "plates.deck.features.rear.diameter_mm=21.9"]
    args = ["build", "d.yaml", "-o", "out", "-q", "--machine", "shop.yaml"]
    for s in sets:
        args += ["--set", s]
    assert main(args) == 0
    report = report_of(tmp_path / "out")
    assert report["schema_version"] == 1
    assert report["overrides"] == [*sets, "machine=shop.yaml"]
    assert report["inputs"] == [
        {"role": "design", "path": "d.yaml", "sha256": sha(Path("d.yaml"))},
        {"role": "machine_profile", "path": "shop.yaml", "sha256": sha(Path("shop.yaml"))},
    ]
    # the recorded overrides rebuild the same plate
    assert main(["build", "d.yaml", "-o", "again", "-q",
                 *[a for o in report["overrides"] for a in ("--set", o)]]) == 0
    again = report_of(tmp_path / "again")
    assert again["plates"][0]["features"] == report["plates"][0]["features"]


def test_a_profile_named_in_the_design_is_recorded_where_it_was_read(tmp_path: Path, capsys):
    (tmp_path / "profiles").mkdir()
    profile = tmp_path / "profiles" / "shop.yaml"
    profile.write_text(PROFILE, encoding="utf-8")
    design = tmp_path / "d.yaml"
    design.write_text(DESIGN.format(machine="profiles/shop.yaml"), encoding="utf-8")
    assert main(["build", str(design), "-o", str(tmp_path / "out"), "-q"]) == 0
    report = report_of(tmp_path / "out")
    assert report["overrides"] == []
    assert [(i["role"], Path(i["path"]).resolve(), i["sha256"]) for i in report["inputs"]] == [
        ("design", design.resolve(), sha(design)), ("machine_profile", profile.resolve(), sha(profile))]


def test_a_bundled_machine_adds_no_file(tmp_path: Path, capsys):
    design = tmp_path / "d.yaml"
    design.write_text(DESIGN.format(machine="example_co2_60w"), encoding="utf-8")
    assert main(["build", str(design), "-o", str(tmp_path / "out"), "-q"]) == 0
    assert [i["role"] for i in report_of(tmp_path / "out")["inputs"]] == ["design"]


def test_nest_and_sweep_record_their_inputs_too(tmp_path: Path, capsys, monkeypatch):
    monkeypatch.chdir(tmp_path)
    Path("d.yaml").write_text(DESIGN.format(machine="example_co2_60w"), encoding="utf-8")
    design_entry = {"role": "design", "path": "d.yaml", "sha256": sha(Path("d.yaml"))}
    assert main(["nest", "d.yaml", "--sheet", "300x200", "-o", "nest", "-q",
                 "--set", "references.wheelbase_mm=90"]) == 0
    nest = json.loads(Path("nest/nest.json").read_text(encoding="utf-8"))
    assert nest["overrides"] == ["references.wheelbase_mm=90"]
    assert nest["inputs"] == [design_entry]
    assert main(["sweep", "d.yaml", "--vary", "references.wheelbase_mm=80:90:10", "--jobs", "1",
                 "-o", "sweep", "-q"]) in (0, 1)
    sweep = json.loads(Path("sweep/sweep.json").read_text(encoding="utf-8"))
    assert sweep["inputs"] == [design_entry]
