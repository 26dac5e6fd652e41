"""Motor pilot holes get a fit class like every other fit (issue 9, item 1).

The pilot hole clears the motor's centring boss. NEMA ICS 16 gives the NEMA 17 boss as 22 mm
(REFERENCE.md); a hole cut to finish at exactly 22.000 mm is line-to-line and the boss does not
go in. The expected sizes below are worked by hand: finished hole = boss + the material's
allowance for the fit class (the material library's value, read from the library data), cut path
= finished - kerf (DESIGN.md's kerf rule).
"""

from __future__ import annotations

import pytest

from platewright.geometry.design.loader import load_design_text
from platewright.geometry.errors import DesignError
from platewright.geometry.library import get_material
from platewright.geometry.plate.pipeline import build_design

#: NEMA ICS 16: NEMA 17 pilot (centring boss) 22 mm x 2 mm (REFERENCE.md).
NEMA17_BOSS_MM = 22.0

_DESIGN = """\
name: pilot fit
material: cast_acrylic
thickness_mm: 3
kerf_mm: 0.2
plates:
  - name: p
    outline: {rounded_rect: {width_mm: 120, height_mm: 80}}
    label: false
    features:
      - {id: m, type: motor_mount, at_mm: [-25, 0], motor: nema17%s}
      - {id: k, type: custom_mount, at_mm: [30, 0], pilot_diameter_mm: 10%s,
         holes: [{at_mm: [12, 0], diameter_mm: 3}]}
"""


def _built(extra_m: str = "", extra_k: str = ""):
    return build_design(load_design_text(_DESIGN % (extra_m, extra_k))).plates[0]


def _row(built, fid):
    return next(r for r in built.dimensions if r.feature_id == fid)


def test_nema17_pilot_defaults_to_a_clearance_fit_and_reports_the_finished_size() -> None:
    built = _built()
    pilot = built.plate.feature("m.pilot")
    allowance = get_material("cast_acrylic").fit_allowance_mm["clearance"]
    assert allowance > 0.0  # a clearance fit opens the hole (materials.yaml, common practice)
    assert pilot.fit_class == "clearance"
    assert pilot.fit_allowance_mm == pytest.approx(allowance)
    row = _row(built, "m.pilot")
    # nominal = the boss; finished = boss + allowance, measured from the as-cut part edge;
    # cut path = finished - kerf (0.2 mm), measured from the cutter path
    assert row.nominal["nominal_diameter_mm"] == pytest.approx(NEMA17_BOSS_MM)
    assert row.cut["finished_diameter_mm"] == pytest.approx(NEMA17_BOSS_MM + allowance, abs=1e-9)
    assert row.cut["cut_diameter_mm"] == pytest.approx(NEMA17_BOSS_MM + allowance - 0.2, abs=1e-9)
    # the point of the issue: the finished hole is larger than the boss, not line-to-line
    assert row.cut["finished_diameter_mm"] > NEMA17_BOSS_MM + 0.05


def test_pilot_fit_can_be_chosen_per_mount() -> None:
    built = _built(", pilot_fit: slide", ", pilot_fit: transition")
    slide = get_material("cast_acrylic").fit_allowance_mm["slide"]
    transition = get_material("cast_acrylic").fit_allowance_mm["transition"]
    m, k = built.plate.feature("m.pilot"), built.plate.feature("k.pilot")
    assert (m.fit_class, m.fit_allowance_mm) == ("slide", pytest.approx(slide))
    assert (k.fit_class, k.fit_allowance_mm) == ("transition", pytest.approx(transition))
    assert _row(built, "k.pilot").cut["finished_diameter_mm"] == pytest.approx(10.0 + transition)


def test_custom_mount_pilot_is_a_clearance_fit_too() -> None:
    built = _built()
    k = built.plate.feature("k.pilot")
    assert k.fit_class == "clearance"
    assert k.fit_allowance_mm == pytest.approx(
        get_material("cast_acrylic").fit_allowance_mm["clearance"])


def test_unknown_pilot_fit_is_refused_naming_the_field() -> None:
    with pytest.raises(DesignError) as exc:
        load_design_text(_DESIGN % (", pilot_fit: loose", ""))
    text = str(exc.value)
    assert "pilot_fit" in text and "clearance" in text


def test_mount_holes_are_unchanged_iso_273_clearance() -> None:
    # the mounting holes already are ISO 273 medium clearance holes (M3: 3.4 mm) and carry no
    # extra fit: only the pilot gets one
    built = _built()
    hole = built.plate.feature("m.hole1")
    assert hole.dims["nominal_diameter_mm"] == pytest.approx(3.4)
    assert hole.fit_allowance_mm == 0.0
