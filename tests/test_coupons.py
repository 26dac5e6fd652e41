"""Calibration coupon geometry and the arithmetic from measured sizes to kerf and fit allowances.

Sources: REFERENCE.md (common practice) "kerf = (hole size - part size)/2 for a square cut from a
hole of the same path"; the kerf model of DESIGN.md (the cutter removes a strip `kerf` wide
centred on its path; `cut_diameter = nominal + fit_allowance - kerf`). The worked example below
is done by hand in the comments.
"""

from __future__ import annotations

import json
from pathlib import Path

import ezdxf
import pytest

from platewright.cli import main as cli_main
from platewright.geometry.errors import DesignError
from platewright.geometry.library import get_material
from platewright.geometry.shop.calibration import (
    Measurements,
    derive_calibration,
    fit_allowance,
    kerf_from_outline,
    kerf_from_slot,
    kerf_from_square,
    measurement_template,
    read_measurements,
)
from platewright.geometry.shop.coupons import build_coupon, coupon_steps
from platewright.geometry.shop.machine_files import load_profile_file


def test_kerf_formulas_worked_example():
    # kerf used to cut (k0) 0.20; true kerf 0.16 (invented example, by hand):
    # square S = 20: path 19.80, hole 19.80 + 0.16 = 19.96, part 19.80 - 0.16 = 19.64
    assert kerf_from_square(19.96, 19.64) == pytest.approx(0.16)
    # slot w = 3.00: path 2.80, slot 2.80 + 0.16 = 2.96
    assert kerf_from_slot(2.96, 3.00, 0.20) == pytest.approx(0.16)
    # outline 136: path 136.20, part 136.20 - 0.16 = 136.04
    assert kerf_from_outline(136.04, 136.0, 0.20) == pytest.approx(0.16)
    # hole 7.90 gave a press fit on an 8.00 bore: it came out 7.90 - 0.20 + 0.16 = 7.86;
    # a bore D = 8 with allowance a cut with kerf 0.16 comes out 8 + a -> a = -0.14
    assert fit_allowance(7.90, 8.00, 0.16, 0.20) == pytest.approx(-0.14)


def _measured(**kw) -> Measurements:
    base = dict(material="cast_acrylic", thickness_mm=3.0, bore_mm=8.0, kerf_used_mm=0.2,
                machine="example_co2_60w", square_mm=20.0, outline_mm=(136.0, 50.0),
                holes_mm=(7.7, 7.8, 7.9, 8.0, 8.1, 8.2, 8.3), slots_mm=(2.8, 2.9, 3.0, 3.1, 3.2))
    base.update(kw)
    return Measurements(**base)


def test_calibration_averages_estimates_worked_by_hand():
    m = _measured(square_hole_mm=(19.96, 19.98), square_part_mm=(19.64, 19.64),
                  slot_widths_mm={3.0: 2.97}, outline_measured_mm=(136.05, None),
                  fits={"press": 7.9, "slide": 8.1})
    cal = derive_calibration(m)
    # by hand: square x (19.96-19.64)/2 = 0.16; square y (19.98-19.64)/2 = 0.17;
    # slot 2.97 - (3.00 - 0.20) = 0.17; outline x 136 + 0.20 - 136.05 = 0.15
    assert [k for _, k in cal.kerf_estimates] == pytest.approx([0.16, 0.17, 0.17, 0.15])
    # mean (0.16 + 0.17 + 0.17 + 0.15) / 4 = 0.1625; spread 0.17 - 0.15 = 0.02
    assert cal.kerf_mm == pytest.approx(0.1625)
    assert cal.spread_mm == pytest.approx(0.02)
    # press: 7.90 - 8.00 + (0.1625 - 0.20) = -0.1375; slide: 8.10 - 8.00 - 0.0375 = 0.0625
    assert cal.fit_allowance_mm == pytest.approx({"press": -0.1375, "slide": 0.0625})


def test_calibration_refuses_nonsense():
    with pytest.raises(DesignError, match="no measurements"):
        derive_calibration(_measured())
    with pytest.raises(DesignError, match="kerf of"):   # hole and part swapped: negative kerf
        derive_calibration(_measured(square_hole_mm=(19.64, None), square_part_mm=(19.96, None)))


def test_coupon_steps():
    # D - 0.3 ... D + 0.3 in 0.1 steps: 7 sizes; in 0.05 steps: 13 (counted by hand)
    assert coupon_steps(8.0, 0.3, 0.1) == pytest.approx((7.7, 7.8, 7.9, 8.0, 8.1, 8.2, 8.3))
    assert len(coupon_steps(22.0, 0.3, 0.05)) == 13
    with pytest.raises(ValueError, match="whole number"):
        coupon_steps(8.0, 0.25, 0.1)


def test_coupon_geometry_as_designed():
    k0 = 0.2
    c = build_coupon(get_material("cast_acrylic"), 3.0, 8.0, k0)
    p = c.plate
    assert [d for _, d in c.holes] == pytest.approx([7.7, 7.8, 7.9, 8.0, 8.1, 8.2, 8.3])
    texts = {e.id: e for e in p.engravings}
    paths = {cc.feature_id: cc.path for cc in c.cut}
    for fid, d in c.holes:
        f = p.feature(fid)
        (cx, cy), r = f.contours[0].circle_center_radius()
        assert 2 * r == pytest.approx(d, abs=1e-12)                 # nominal as designed
        assert 2 * paths[fid].circle_center_radius()[1] == pytest.approx(d - k0)  # d - kerf
        label = texts[f"{fid}.label"]
        assert label.text == f"{d:.2f}"                               # engraved nominal size
        assert abs(label.position_mm[0] - cx) < 1e-9 and label.position_mm[1] < cy - r
    for fid, w in c.slots:
        x0, y0, x1, y1 = p.feature(fid).contours[0].bbox()
        assert x1 - x0 == pytest.approx(w)
        px0, _, px1, _ = paths[fid].bbox()
        assert px1 - px0 == pytest.approx(w - k0)                     # hole path: width - kerf
        assert texts[f"{fid}.label"].text == f"{w:.2f}"
    # slot widths default: thickness - 0.2 ... + 0.2 in 0.1 mm steps
    assert [w for _, w in c.slots] == pytest.approx([2.8, 2.9, 3.0, 3.1, 3.2])
    x0, y0, x1, y1 = p.feature("square").contours[0].bbox()
    assert (x1 - x0, y1 - y0) == pytest.approx((20.0, 20.0))
    ox0, oy0, ox1, oy1 = p.outline.contours[0].bbox()
    assert (ox1 - ox0, oy1 - oy0) == pytest.approx(c.outline_mm)
    # every feature lies inside the outline
    for f in p.features:
        fx0, fy0, fx1, fy1 = f.contours[0].bbox()
        assert ox0 < fx0 and fx1 < ox1 and oy0 < fy0 and fy1 < oy1
    with pytest.raises(ValueError, match="never be laser-cut"):
        build_coupon(get_material("pvc"), 3.0, 8.0, k0)


@pytest.fixture()
def run_cli(capsys):

    def run(args: list[str]) -> tuple[int, str, str]:
        rc = cli_main.main(args)
        out, err = capsys.readouterr()
        return rc, out, err

    return run


def test_coupon_command_writes_cut_ready_files(tmp_path: Path, run_cli):
    out = tmp_path / "c"
    rc, stdout, _ = run_cli(["coupon", "--bore-mm", "22", "--step-mm", "0.05", "-o", str(out)])
    assert rc == 0, stdout
    names = {p.name for p in out.iterdir()}
    assert {"coupon.dxf", "coupon.svg", "measuring_sheet.html", "measurements.yaml",
            "report.json"} <= names
    doc = ezdxf.readfile(out / "coupon.dxf")
    circles = doc.modelspace().query("CIRCLE")
    # 13 holes 21.70 ... 22.30, cut paths d - 0.2 (kerf of the example profile for 3 mm acrylic)
    assert len(circles) == 13
    assert sorted(round(2 * e.dxf.radius, 6) for e in circles)[0] == pytest.approx(21.7 - 0.2)
    # the same layer rules as every plate (geometry/dxf_writer.py): holes inner, outline outer
    assert {e.dxf.layer for e in circles} == {"PW_CUT_INNER"}
    outer = [e for e in doc.modelspace().query("LWPOLYLINE") if e.dxf.layer == "PW_CUT_OUTER"]
    assert len(outer) == 1
    texts = {e.dxf.text for e in doc.modelspace().query("TEXT") if e.dxf.layer == "PW_ENGRAVE"}
    assert {"21.70", "22.00", "22.30", "2.80", "3.20"} <= texts
    sheet = (out / "measuring_sheet.html").read_text(encoding="utf-8")
    assert "calipers" in sheet and "(hole − part) / 2" in sheet
    report = json.loads((out / "report.json").read_text(encoding="utf-8"))
    assert report["tool"]["name"] == "platewright" and report["kind"] == "coupon"
    # the same folder may be written again (it is ours)
    assert run_cli(["coupon", "-o", str(out), "-q"])[0] == 0


def test_coupon_refuses_pvc_and_writes_nothing(tmp_path: Path, run_cli):
    out = tmp_path / "c"
    rc, _, err = run_cli(["coupon", "--material", "pvc", "-o", str(out)])
    assert rc == 2 and "never be laser-cut" in err and not out.exists()


def test_measured_round_trip_updates_profile(tmp_path: Path, run_cli):
    out = tmp_path / "c"
    assert run_cli(["coupon", "-o", str(out), "-q"])[0] == 0
    text = (out / "measurements.yaml").read_text(encoding="utf-8")
    text = text.replace("square_hole_mm: [null, null]", "square_hole_mm: [19.96, 19.96]")
    text = text.replace("square_part_mm: [null, null]", "square_part_mm: [19.64, 19.64]")
    text = text.replace("press: null", "press: 7.9")
    measured = tmp_path / "m.yaml"
    measured.write_text(text, encoding="utf-8")
    # a bundled profile is never changed: --machine-file is required
    profile = tmp_path / "my_laser.yaml"
    rc, _, err = run_cli(["coupon", "--measured", str(measured)])
    assert rc == 2 and "--machine-file" in err and not profile.exists()
    rc, stdout, _ = run_cli(["coupon", "--measured", str(measured), "--machine-file", str(profile)])
    assert rc == 0, stdout
    m = load_profile_file(profile)
    # square (19.96 - 19.64) / 2 = 0.16 (by hand); press 7.9 - 8 + (0.16 - 0.2) = -0.14
    assert dict(m.kerf_by_material["cast_acrylic"])[3.0] == pytest.approx(0.16)
    assert dict(m.fit_allowance_by_material["cast_acrylic"])[3.0]["press"] == pytest.approx(-0.14)
    assert "kerf cast_acrylic 3 mm" in stdout
    # a bad profile file is refused (exit 2) and left as it was
    bad = tmp_path / "bad.yaml"
    bad.write_text("name: a\ntravel_mm_s: -1\n", encoding="utf-8")
    rc, _, err = run_cli(["coupon", "--measured", str(measured), "--machine-file", str(bad)])
    assert rc == 2 and "travel_mm_s (line 2)" in err
    assert bad.read_text(encoding="utf-8") == "name: a\ntravel_mm_s: -1\n"


def test_measurement_file_errors_name_field_and_line(tmp_path: Path):
    c = build_coupon(get_material("cast_acrylic"), 3.0, 8.0, 0.2)
    text = measurement_template(c, "example_co2_60w")
    bad = text.replace("press: null", "press: 7.95").replace("measured:", "measured:\n  squre_hole_mm: 1")
    with pytest.raises(DesignError) as info:
        read_measurements(bad, "m.yaml")
    by_path = {p.path: p for p in info.value.problems}
    assert "did you mean 'square_hole_mm'" in by_path["measured.squre_hole_mm"].hint
    lines = bad.splitlines()
    assert lines[by_path["measured.squre_hole_mm"].line - 1].strip().startswith("squre_hole_mm")
    assert "no hole of 7.95" in by_path["fits.press"].message
    assert lines[by_path["fits.press"].line - 1].strip().startswith("press")
