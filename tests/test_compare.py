"""``platewright compare``: the planted changes are found exactly, and the numbers follow closed forms.

Independent checks: mass of a circular hole rho t pi d^2 / 4 and its polar moment m r^2 / 2 plus
the parallel-axis term m d^2 (any statics text, e.g. Meriam and Kraige, Engineering Mechanics:
Dynamics, table of mass moments of inertia); the cut-path rule cut = nominal + allowance - kerf
(DESIGN.md), so a change of nominal size passes unchanged to the cut path; Kirchhoff plate
theory (Timoshenko and Woinowsky-Krieger, Theory of Plates and Shells): bending deflection goes
as 1 / D with D = E t^3 / (12 (1 - nu^2)), and bending stress as M / t^2, so with the same
loads doubling the thickness divides the deflection by 8 and multiplies the safety factor by 4.
"""

from __future__ import annotations

import argparse
import json
import math
import xml.etree.ElementTree as ET
from pathlib import Path

import pytest
import yaml

from platewright.cli.commands.compare import CompareCommand, load_side
from platewright.cli.main import main
from platewright.geometry.compare import compare_reports
from platewright.geometry.errors import DesignError
from platewright.geometry.plate.build import list_templates

TEMPLATES = {p.stem: p for p in list_templates()}
DECK = TEMPLATES["four_wheel_deck"]
MATERIALS = Path(TEMPLATES["four_wheel_deck"]).parents[1] / "materials.yaml"

# Three planted changes on the four-wheel deck (wheelbase 160, track 140: the front-left bore
# sits at (80, 70) in the design file): move one bore 5 mm forward, resize another, rename a
# cut-out (which removes one id and adds another).
PLANTED = [
    "plates.deck.features.bore_front_left.at_mm=[85, 70]",
    "plates.deck.features.bore_rear_right.diameter_mm=22.4",
    "plates.deck.features.cable_left.id=cable_port",
]

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
    limits: {max_deflection_mm: 1.0, min_safety_factor: 2.0}
"""


def run_compare(argv: list[str]) -> int:
    """Run the compare command as cli.main does (DesignError -> exit 2)."""
    cmd = CompareCommand()
    parser = argparse.ArgumentParser()
    cmd.add_arguments(parser)
    args = parser.parse_args(argv)
    try:
        return cmd.run(args)
    except DesignError:
        return 2


def acrylic() -> dict:
    return yaml.safe_load(MATERIALS.read_text(encoding="utf-8"))["cast_acrylic"]


@pytest.fixture(scope="module")
def planted():
    a = load_side(DECK, [], False, "A")
    b = load_side(DECK, PLANTED, False, "B")
    return a, b, compare_reports(a.report, b.report)


def test_finds_exactly_the_planted_changes(planted):
    _, _, cmp = planted
    assert cmp.plates_added == () and cmp.plates_removed == ()
    deck = cmp.plate("deck")
    assert deck.ids("moved") == ["bore_front_left"]
    assert deck.ids("resized") == ["bore_rear_right"]
    assert deck.ids("removed") == ["cable_left"]
    assert deck.ids("added") == ["cable_port"]
    assert deck.ids("rotated") == []
    assert deck.properties == {}
    moved = next(f for f in deck.features if f.change == "moved")
    # planted: (80, 70) -> (85, 70), a 5 mm move (worked by hand)
    assert moved.center_a_mm == pytest.approx((80.0, 70.0), abs=1e-9)
    assert moved.center_b_mm == pytest.approx((85.0, 70.0), abs=1e-9)
    assert moved.distance_mm == pytest.approx(5.0, abs=1e-9)
    (size,) = next(f for f in deck.features if f.change == "resized").sizes
    assert size["size"] == "diameter"
    assert (size["nominal_a_mm"], size["nominal_b_mm"]) == pytest.approx((22.0, 22.4))
    # cut = nominal + allowance - kerf (DESIGN.md): same allowance and kerf, so the cut path
    # grows by the nominal change, 0.4 mm
    assert size["cut_b_mm"] - size["cut_a_mm"] == pytest.approx(0.4, abs=1e-6)


def test_mass_and_inertia_changes_follow_the_closed_forms(planted):
    _, _, cmp = planted
    deck = cmp.plate("deck")
    mat = acrylic()
    rho_g_mm3 = mat["density_kg_m3"] * 1e-6  # kg/m^3 -> g/mm^3
    t = 4.0  # thickness_mm of the four-wheel deck design file
    press = mat["fit_allowance_mm"]["press"]
    d_a, d_b = 22.0 + press, 22.4 + press  # as-cut part diameters of the resized bore
    disc = lambda d: rho_g_mm3 * t * math.pi * d**2 / 4.0  # noqa: E731  mass of a disc, g
    expected_dm = -(disc(d_b) - disc(d_a))
    # report masses are rounded to 1e-6 g on each side
    assert deck.mass_delta_g == pytest.approx(expected_dm, abs=2e-6)
    assert cmp.total_mass_b_g - cmp.total_mass_a_g == pytest.approx(expected_dm, abs=2e-6)
    # polar moment about the origin: J_O = Izz_c + m |c|^2 (parallel axes). Moving a hole of
    # mass m_h from r1 to r2 changes J_O by -m_h (|r2|^2 - |r1|^2); resizing a hole at distance
    # s changes it by -(m_b (R_b^2 / 2 + s^2) - m_a (R_a^2 / 2 + s^2)).
    m_move = disc(22.0 + press)
    dj_move = -m_move * ((85.0**2 + 70.0**2) - (80.0**2 + 70.0**2))
    s2 = 80.0**2 + 70.0**2
    dj_resize = -(disc(d_b) * ((d_b / 2) ** 2 / 2 + s2) - disc(d_a) * ((d_a / 2) ** 2 / 2 + s2))

    def j_origin(izz: float, m: float, c: tuple[float, float]) -> float:
        return izz + m * (c[0] ** 2 + c[1] ** 2)

    got = (j_origin(deck.inertia_b_g_mm2["Izz"], deck.mass_b_g, deck.centroid_b_mm)
           - j_origin(deck.inertia_a_g_mm2["Izz"], deck.mass_a_g, deck.centroid_a_mm))
    assert got == pytest.approx(dj_move + dj_resize, rel=1e-4)


def test_identical_sides_have_no_changes():
    a = load_side(DECK, [], False, "A")
    cmp = compare_reports(a.report, a.report)
    assert not cmp.has_changes
    assert cmp.plate("deck").features == ()


def test_refuses_a_document_that_is_not_a_report():
    with pytest.raises(ValueError):
        compare_reports({"schema_version": 1, "plates": []}, {"hello": 1})


def test_command_writes_json_html_and_overlay(tmp_path):
    out = tmp_path / "cmp"
    argv = [str(DECK), str(DECK), "--no-check", "-q", "-o", str(out)]
    for s in PLANTED:
        argv += ["--set-b", s]
    assert run_compare(argv) == 0
    doc = json.loads((out / "compare.json").read_text(encoding="utf-8"))
    deck = doc["plates"][0]
    assert [f["id"] for f in deck["features_moved"]] == ["bore_front_left"]
    assert [f["id"] for f in deck["features_resized"]] == ["bore_rear_right"]
    assert [f["id"] for f in deck["features_removed"]] == ["cable_left"]
    assert [f["id"] for f in deck["features_added"]] == ["cable_port"]
    assert deck["mass_g"]["delta"] == pytest.approx(deck["mass_g"]["b"] - deck["mass_g"]["a"])
    # the overlay: both sides present, changed features drawn wide on the side(s) they exist on
    root = ET.fromstring((out / doc["overlays"]["deck"]).read_text(encoding="utf-8"))
    ns = "{http://www.w3.org/2000/svg}"
    wide = {(g.get("id")[:1], e.get("data-feature")) for g in root.iter(f"{ns}g")
            if g.get("id", "").startswith(("a-", "b-")) for e in g if e.get("class") == "changed"}
    assert wide == {("a", "bore_front_left"), ("b", "bore_front_left"), ("a", "bore_rear_right"),
                    ("b", "bore_rear_right"), ("a", "cable_left"), ("b", "cable_port")}
    html = (out / "compare.html").read_text(encoding="utf-8")
    assert html.count("<svg") == 1 and "cable_port" in html
    # rerunning into our own folder replaces it; a foreign non-empty folder is refused
    assert run_compare(argv) == 0
    foreign = tmp_path / "foreign"
    foreign.mkdir()
    (foreign / "notes.txt").write_text("keep", encoding="utf-8")
    assert run_compare([str(DECK), str(DECK), "--no-check", "-q", "-o", str(foreign)]) == 2
    assert sorted(p.name for p in foreign.iterdir()) == ["notes.txt"]


def test_folders_with_results_compare_deflection_and_safety_factor(tmp_path):
    design = tmp_path / "sled.yaml"
    design.write_text(SLED, encoding="utf-8")
    assert main(["check", str(design), "-q", "-o", str(tmp_path / "thin")]) == 0
    assert main(["check", str(design), "-q", "--set", "thickness_mm=6",
                 "-o", str(tmp_path / "thick")]) == 0
    out = tmp_path / "cmp"
    assert run_compare([str(tmp_path / "thin"), str(tmp_path / "thick"), "-q", "-o", str(out)]) == 0
    doc = json.loads((out / "compare.json").read_text(encoding="utf-8"))
    deck = doc["plates"][0]
    assert deck["properties"] == {"thickness_mm": {"a": 3.0, "b": 6.0}}
    assert deck["features_moved"] == deck["features_resized"] == deck["features_added"] == []
    (case,) = deck["load_cases"]
    d, sf = case["max_deflection_mm"], case["safety_factor"]
    # Kirchhoff plate theory: deflection ~ 1 / t^3, stress ~ 1 / t^2 (same loads, same supports).
    # The design stress leaves out a disc of one sheet thickness round each singular point, so
    # the two sheets are read at slightly different points: 1 % on the stress ratio.
    assert d["a"] / d["b"] == pytest.approx(8.0, rel=1e-3)
    assert sf["b"] / sf["a"] == pytest.approx(4.0, rel=1e-2)
    assert d["delta"] == pytest.approx(d["b"] - d["a"], rel=1e-9)
    # mass: rho t A, so doubling t doubles the mass
    assert deck["mass_g"]["b"] == pytest.approx(2.0 * deck["mass_g"]["a"], rel=1e-9)
