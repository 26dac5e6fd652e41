"""Cut time and cost estimates (geometry/costing.py) against arithmetic worked by hand here.

The time model checked is the one REFERENCE.md states (common practice): job time = cut length /
speed + pierces x pierce time + rapid travel / rapid speed + set-up; quote +-20 %.
Perimeters are closed-form: a rectangle 2 (w + h), a circle pi d.
"""

from __future__ import annotations

import json
import math

import numpy as np
import pytest

from platewright.cli.main import main
from platewright.geometry.library import get_material
from platewright.geometry.model import Plate
from platewright.geometry.plate.curves import Contour, circle
from platewright.geometry.plate.cutpaths import cut_paths
from platewright.geometry.plate.features import round_hole
from platewright.geometry.plate.mass import mass_properties
from platewright.geometry.plate.outlines import rounded_rect_outline
from platewright.geometry.plate.pipeline import BuiltPlate
from platewright.geometry.shop.costing import (
    QUOTE_BAND,
    combine_estimates,
    estimate_cut,
    estimate_plate,
    material_cost,
)
from platewright.geometry.shop.machines import get_machine, machine_from_mapping

# invented round numbers chosen for this test (not a real machine)
SHOP = machine_from_mapping({
    "name": "test cutter", "currency": "XXX", "hourly_rate": 36.0, "setup_s": 120.0,
    "cut_speed_mm_s": {"cast_acrylic": [{"thickness_mm": 3.0, "speed_mm_s": 10.0}]},
    "pierce_s": 0.5, "travel_mm_s": 100.0,
    "sheets": [{"material": "cast_acrylic", "thickness_mm": 3.0, "size_mm": [600, 400],
                "price": 24.0}],
}, key="shop")


def _square_and_circle() -> list[Contour]:
    square = Contour(np.array([[10.0, 0.0], [20.0, 0.0], [20.0, 10.0], [10.0, 10.0]]))
    return [square, circle((40.0, 0.0), 5.0)]   # circle() starts at (centre x + r, y) = (45, 0)


def test_time_and_cost_by_hand():
    est = estimate_cut(_square_and_circle(), SHOP, "cast_acrylic", 3.0)
    # by hand: cut length 4 x 10 + pi x 10 = 40 + 10 pi mm
    assert est.cut_length_mm == pytest.approx(40.0 + 10.0 * math.pi)
    # travel (0,0)->(10,0)->(45,0)->(0,0): 10 + 35 + 45 = 90 mm
    assert est.travel_mm == pytest.approx(90.0)
    assert est.pierces == 2
    assert est.cut_time_s == pytest.approx((40.0 + 10.0 * math.pi) / 10.0)
    assert est.pierce_time_s == pytest.approx(2 * 0.5)
    assert est.travel_time_s == pytest.approx(90.0 / 100.0)
    total = 4.0 + math.pi + 1.0 + 0.9
    assert est.total_time_s == pytest.approx(total)
    assert est.setup_time_s == 0.0
    # 36 per hour = 0.01 per second
    assert est.machine_cost == pytest.approx(total * 0.01)
    # footprint 10 x 10 + pi 5^2 mm^2, sheet 600 x 400 mm at 24: 1e-4 per mm^2
    assert est.material_cost == pytest.approx((100.0 + 25.0 * math.pi) * 1e-4)
    assert est.currency == "XXX"
    # quote band +-20 % (REFERENCE.md, common practice)
    assert QUOTE_BAND == 0.20
    assert est.total_time_range_s == pytest.approx((0.8 * total, 1.2 * total))


def test_setup_is_added_once_and_start_point_moves_travel():
    est = estimate_cut(_square_and_circle(), SHOP, "cast_acrylic", 3.0, include_setup=True,
                       start_mm=(10.0, 0.0))
    # from (10,0): 0 + 35 + 35 = 70 mm of travel; set-up 120 s once
    assert est.travel_mm == pytest.approx(70.0)
    assert est.setup_time_s == 120.0
    assert est.total_time_s == pytest.approx(4.0 + math.pi + 1.0 + 0.7 + 120.0)


def test_missing_speed_is_a_note_not_a_crash():
    est = estimate_cut(_square_and_circle(), SHOP, "birch_plywood", 3.0)
    assert est.cut_time_s is None and est.total_time_s is None and est.machine_cost is None
    assert est.cut_length_mm == pytest.approx(40.0 + 10.0 * math.pi)
    assert any("no cut speed" in n and "birch_plywood" in n for n in est.notes)
    assert any("no priced sheet" in n for n in est.notes)
    assert est.material_cost is None
    bare = machine_from_mapping({})
    est = estimate_cut(_square_and_circle(), bare, "cast_acrylic", 3.0, include_setup=True)
    assert est.total_time_s is None and len(est.notes) >= 4


def test_material_cost_is_the_area_share():
    # 600 x 400 sheet at 24: a 60 x 40 part is 1/100 of it -> 0.24 (by hand)
    assert material_cost(2400.0, SHOP, "cast_acrylic", 3.0) == pytest.approx(0.24)
    assert material_cost(2400.0, SHOP, "cast_acrylic", 6.0) is None


def test_plate_cut_length_rectangle_and_circles_with_kerf():
    w, h, d1, d2, k = 100.0, 60.0, 8.0, 3.0, 0.2
    mat = get_material("cast_acrylic")
    plate = Plate("p", mat, 3.0, k, rounded_rect_outline("outline", (0.0, 0.0), w, h),
                  (round_hole("a", (20.0, 0.0), d1), round_hole("b", (-20.0, 10.0), d2)))
    cut = tuple(cut_paths(plate))
    built = BuiltPlate(plate, cut, (), mass_properties(plate), ())
    est = estimate_plate(built, SHOP)
    # by hand, kerf strip k centred on the path (DESIGN.md): the outline path is the rectangle
    # offset out by k/2 (sides 2 (w + h) plus four quarter arcs of radius k/2 = pi k); a hole path
    # is its circle offset in by k/2 (pi (d - k))
    expected = 2.0 * (w + h) + math.pi * k + math.pi * (d1 - k) + math.pi * (d2 - k)
    assert est.cut_length_mm == pytest.approx(expected, rel=1e-12)
    assert est.pierces == 3
    assert est.setup_time_s == 0.0
    # footprint of the outline path: (w + k)(h + k) minus the four corner squares (k/2)^2 plus
    # the quarter circles: (w + k)(h + k) - (4 - pi) (k/2)^2
    area = (w + k) * (h + k) - (4.0 - math.pi) * (k / 2.0) ** 2
    assert est.material_cost == pytest.approx(area * 1e-4)


def test_combine_counts_quantities_and_one_setup():
    a = estimate_cut(_square_and_circle(), SHOP, "cast_acrylic", 3.0)
    job = combine_estimates([a, a], [2, 1], machine=SHOP)
    t = 4.0 + math.pi + 1.0 + 0.9
    assert job.total_time_s == pytest.approx(3 * t + 120.0)      # 3 parts + set-up once
    assert job.pierces == 6
    assert job.machine_cost == pytest.approx((3 * t + 120.0) * 0.01)
    assert job.material_cost == pytest.approx(3 * (100.0 + 25.0 * math.pi) * 1e-4)
    with pytest.raises(ValueError):
        combine_estimates([a], [1, 2])


def test_build_report_carries_cost(tmp_path, capsys):
    out = tmp_path / "out"
    assert main(["build", "-o", str(out)]) == 0
    assert "estimate: cut time about" in capsys.readouterr().out
    report = json.loads((out / "report.json").read_text(encoding="utf-8"))
    machine = get_machine(report["machine"]["key"])
    job = report["job"]["cost"]
    per_plate = sum(p["cost"]["total_time_s"] * p["quantity"] for p in report["plates"])
    # job = every plate x quantity + the profile's set-up once (the model stated above)
    assert job["total_time_s"] == pytest.approx(per_plate + machine.setup_s, abs=0.01)
    for p in report["plates"]:
        c = p["cost"]
        assert c["cut_length_mm"] == pytest.approx(p["cut_length_mm"], abs=1e-3)
        assert c["pierces"] == p["pierce_count"]
        assert c["setup_time_s"] == 0.0
    html = (out / "report.html").read_text(encoding="utf-8")
    assert "Cut time and cost" in html
