"""``platewright sweep``: every combination once, masses equal to single builds, resume after an
interruption, the same CSV from the Dask backend, and bad ranges refused with nothing written.

Independent checks: the cartesian product of the ranges (itertools.product); single builds of
each combination through the ordinary build pipeline; the outline of the four-wheel deck is a
rounded rectangle around the axle lines with a margin, so one more mm of wheelbase adds
(track + 2 margin) mm^2 of area and rho t times that in mass (area of a rectangle; holes and
corner arcs are unchanged); a bore's part diameter d adds rho t pi d^2 / 4 of removed mass;
Kirchhoff plate theory (Timoshenko and Woinowsky-Krieger, Theory of Plates and Shells):
deflection ~ 1 / t^3 under the same loads.
"""

from __future__ import annotations

import argparse
import csv
import io
import itertools
import json
import math
from pathlib import Path

import pytest
import yaml

from platewright.cli.commands.sweep import SweepCommand
from platewright.cli.sweep.engine import parse_vary, run_sweep, sweep_jobs, validate_sweep
from platewright.cli.sweep.outputs import sweep_csv
from platewright.geometry.design.loader import load_design
from platewright.geometry.errors import DesignError
from platewright.geometry.plate.build import list_templates
from platewright.geometry.plate.pipeline import build_design

TEMPLATES = {p.stem: p for p in list_templates()}
DECK = TEMPLATES["four_wheel_deck"]
MATERIALS = Path(DECK).parents[1] / "materials.yaml"
WHEELBASE = "references.wheelbase_mm"
BORE = "plates.deck.features.bore_front_left.diameter_mm"
VARY = [f"{WHEELBASE}=150:160:10", f"{BORE}=22:22.2:0.2"]

SLED = """\
name: Test sled
material: cast_acrylic
thickness_mm: 3.0
machine: example_co2_60w
kerf_mm: 0.2
plates:
  - name: deck
    outline:
      rounded_rect: {width_mm: 160, height_mm: 100, corner_radius_mm: 5}
    features:
      - {id: rear_left, type: bore, at_mm: [-60, 35], diameter_mm: 8, fit: press}
      - {id: rear_right, type: bore, at_mm: [-60, -35], diameter_mm: 8, fit: press}
      - {id: front_left, type: bore, at_mm: [60, 35], diameter_mm: 8, fit: press}
      - {id: front_right, type: bore, at_mm: [60, -35], diameter_mm: 8, fit: press}
components:
  - {id: box, plate: deck, at_mm: [0, 0], mass_g: 300, footprint_mm: [40, 30]}
load_cases:
  - name: carry
    plate: deck
    family: bending
    self_weight: false
    supports:
      - {at: bores, features: [rear_left, rear_right, front_left, front_right]}
    loads:
      - {type: component, component: box}
    limits: {max_deflection_mm: 0.02}
"""


def run_sweep_cli(argv: list[str]) -> int:
    """Run the sweep command as cli.main does (DesignError -> exit 2)."""
    cmd = SweepCommand()
    parser = argparse.ArgumentParser()
    cmd.add_arguments(parser)
    args = parser.parse_args(argv)
    try:
        return cmd.run(args)
    except DesignError:
        return 2


def deck_jobs():
    specs = [parse_vary(v) for v in VARY]
    design = validate_sweep(DECK, [], specs)
    return specs, sweep_jobs(design, [], specs)


def test_parse_vary_values():
    # inclusive ranges worked by hand; 0.1 steps must not drift (0.1 + 0.2 != 0.3 in binary)
    assert parse_vary("references.track_mm=100:130:10").values == (100.0, 110.0, 120.0, 130.0)
    assert parse_vary("x=0.1:0.3:0.1").values == (0.1, 0.2, 0.3)
    assert parse_vary("x=170:150:-10").values == (170.0, 160.0, 150.0)
    assert parse_vary("x=1:2:0.4").values == (1.0, 1.4, 1.8)  # STOP off the step: not reached
    assert parse_vary("x=5:5:1").values == (5.0,)


@pytest.mark.parametrize("text", ["x=1:2:0", "x=1:2:-1", "x=2:1:1", "x=a:2:1", "x=1:2",
                                  "x", "=1:2:1", "x=1:nan:1", "x=0:1e9:1"])
def test_parse_vary_refuses_bad_ranges(text):
    with pytest.raises(DesignError):
        parse_vary(text)


def test_two_by_two_sweep_matches_single_builds(tmp_path):
    specs, jobs = deck_jobs()
    out = run_sweep(jobs, tmp_path / "results")
    assert out.computed == 4 and out.reused == 0
    combos = list(itertools.product((150.0, 160.0), (22.0, 22.2)))
    assert [tuple(r["values"][s.path] for s in specs) for r in out.rows] == combos
    for row, (wb, d) in zip(out.rows, combos):
        single = build_design(load_design(DECK, overrides=[f"{WHEELBASE}={wb}", f"{BORE}={d}"]))
        assert row["status"] == "pass"
        assert row["total_mass_g"] == pytest.approx(single.total.mass_g, rel=1e-12)
        assert row["plates"]["deck"] == pytest.approx(single.plates[0].mass.mass_g, rel=1e-12)
    mat = yaml.safe_load(MATERIALS.read_text(encoding="utf-8"))["cast_acrylic"]
    rho_t = mat["density_kg_m3"] * 1e-6 * 4.0  # g/mm^3 times the deck's 4 mm
    m = {k: r["total_mass_g"] for k, r in zip(combos, out.rows)}
    # +10 mm wheelbase: a 10 x (140 + 2 x 35) mm strip more (track 140, margin 35 in the file)
    assert m[(160.0, 22.0)] - m[(150.0, 22.0)] == pytest.approx(rho_t * 10.0 * 210.0, rel=1e-9)
    press = mat["fit_allowance_mm"]["press"]
    hole = rho_t * math.pi / 4.0 * ((22.2 + press) ** 2 - (22.0 + press) ** 2)
    assert m[(150.0, 22.2)] - m[(150.0, 22.0)] == pytest.approx(-hole, rel=1e-9)


def test_interrupted_sweep_keeps_results_and_resumes(tmp_path):
    _, jobs = deck_jobs()
    results = tmp_path / "results"

    def stop_after_two(row, finished, total):
        if finished == 2:
            raise KeyboardInterrupt

    with pytest.raises(KeyboardInterrupt):
        run_sweep(jobs, results, on_result=stop_after_two)
    assert len(list(results.glob("*.json"))) == 2
    assert not list(results.glob(".*partial"))  # nothing half-written
    seen = []
    out = run_sweep(jobs, results, on_result=lambda row, k, n: seen.append(row["key"]))
    assert out.computed == 2 and out.reused == 2 and len(seen) == 2
    assert [r["key"] for r in out.rows] == [j.key for j in jobs]
    again = run_sweep(jobs, results)
    assert again.computed == 0 and again.reused == 4


def test_process_pool_and_dask_give_the_same_csv(tmp_path):
    pytest.importorskip("distributed")
    out = tmp_path / "sweep"
    argv = [str(DECK), "--vary", VARY[0], "--vary", VARY[1], "--jobs", "2", "-q", "-o", str(out)]
    assert run_sweep_cli(argv) == 0
    local_csv = (out / "sweep.csv").read_text(encoding="utf-8")
    rows = list(csv.DictReader(io.StringIO(local_csv)))
    assert len(rows) == 4 and {r["status"] for r in rows} == {"pass"}
    assert (out / "plots" / "mass_vs_deflection.png").read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    assert "data:image/png;base64," in (out / "sweep.html").read_text(encoding="utf-8")
    specs, jobs = deck_jobs()
    dask_out = run_sweep(jobs, tmp_path / "dask-results", backend="dask", workers=1,
                         dask_processes=False, timeout_s=60.0)
    assert dask_out.computed == 4
    assert sweep_csv([s.path for s in specs], dask_out.rows) == local_csv


def test_checked_sweep_reports_deflection_per_case(tmp_path):
    design = tmp_path / "sled.yaml"
    design.write_text(SLED, encoding="utf-8")
    out = tmp_path / "sweep"
    assert run_sweep_cli([str(design), "--vary", "thickness_mm=3:6:3", "--check", "--jobs", "1",
                          "-q", "-o", str(out)]) == 0
    rows = list(csv.DictReader(io.StringIO((out / "sweep.csv").read_text(encoding="utf-8"))))
    d3, d6 = (float(r["max_deflection_mm:deck/carry"]) for r in rows)
    assert d3 / d6 == pytest.approx(8.0, rel=1e-3)  # Kirchhoff: w ~ 1 / t^3
    # the 0.02 mm limit set in the test design: about 0.054 mm at 3 mm fails, 1/8 of it passes
    assert [r["status"] for r in rows] == ["fail", "pass"]
    assert [r["passes:deck/carry"] for r in rows] == ["false", "true"]
    assert rows[0]["limit_mm:deck/carry"] == "0.02"


@pytest.mark.parametrize("vary", [
    f"{WHEELBASE}=150:160:0",            # step 0
    f"{WHEELBASE}=150:160:-10",          # wrong sign
    f"{WHEELBASE}=150:wide:10",          # not a number
    "references.wheelbase_mmm=150:160:10",  # unknown path
    "plates.deck.features.nope.diameter_mm=1:2:1",  # unknown feature
    "plates.deck.outline=1:2:1",         # a field that does not take a number
])
def test_bad_vary_exits_2_and_writes_nothing(tmp_path, vary):
    out = tmp_path / "sweep"
    assert run_sweep_cli([str(DECK), "--vary", vary, "-q", "-o", str(out)]) == 2
    assert not out.exists()
    assert list(tmp_path.iterdir()) == []


def test_refused_combinations_are_rows_with_the_reason(tmp_path):
    # a 30 mm bore in a deck whose bores sit 35 mm from the edge: fine; a 80 mm one overlaps
    # the outline and the other features, which the build refuses
    out = tmp_path / "sweep"
    assert run_sweep_cli([str(DECK), "--vary", f"{BORE}=22:80:58", "--jobs", "1", "-q",
                          "-o", str(out)]) == 0
    rows = list(csv.DictReader(io.StringIO((out / "sweep.csv").read_text(encoding="utf-8"))))
    assert [r["status"] for r in rows] == ["pass", "refused"]
    assert rows[0]["error"] == "" and rows[1]["error"] != ""
    manifest = json.loads((out / "sweep.json").read_text(encoding="utf-8"))
    assert manifest["combinations"] == 2
