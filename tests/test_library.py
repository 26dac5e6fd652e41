"""Tests of the bundled data libraries against the published values they cite."""

from __future__ import annotations

import math
from itertools import combinations

import pytest

from platewright.geometry.library import (
    check_laser_safe,
    clearance_hole_mm,
    clearance_sizes,
    get_material,
    get_motor,
    load_materials,
    load_motors,
)
from platewright.geometry.plate.features import motor_mount
from platewright.geometry.shop.machines import (
    MachineProfile,
    get_machine,
    kerf_for,
    load_machines,
    machine_from_mapping,
)

# ISO 273:1979 clearance holes, mm, (fine, medium, coarse), typed in from the standard's table
# as collected in REFERENCE.md.
ISO_273 = {
    "M2": (2.2, 2.4, 2.6),
    "M2.5": (2.7, 2.9, 3.1),
    "M3": (3.2, 3.4, 3.6),
    "M4": (4.3, 4.5, 4.8),
    "M5": (5.3, 5.5, 5.8),
    "M6": (6.4, 6.6, 7.0),
    "M8": (8.4, 9.0, 10.0),
}

SAFE = [
    "cast_acrylic", "extruded_acrylic", "polycarbonate", "birch_plywood", "mdf", "acetal",
    "hdpe", "aluminium_5052_h32", "aluminium_6061_t6", "mild_steel",
]


@pytest.mark.parametrize("size", sorted(ISO_273))
@pytest.mark.parametrize("k, series", list(enumerate(["fine", "medium", "coarse"])))
def test_iso_273_table(size: str, k: int, series: str) -> None:
    # source: ISO 273:1979 table, fine / medium / coarse series
    assert clearance_hole_mm(size, series) == pytest.approx(ISO_273[size][k], abs=1e-12)


def test_iso_273_default_series_is_medium_and_sizes_complete() -> None:
    # source: ISO 273:1979 (medium series: M3 -> 3.4 mm)
    assert clearance_hole_mm("M3") == pytest.approx(3.4)
    assert set(clearance_sizes()) == set(ISO_273)


def test_iso_273_bad_input_lists_valid() -> None:
    with pytest.raises(KeyError, match="M2.5"):
        clearance_hole_mm("M7")
    with pytest.raises(ValueError, match="fine, medium, coarse"):
        clearance_hole_mm("M3", "loose")


def _hole_centres(features, kind="mount_hole"):
    return [f.center_mm for f in features if f.kind == kind]


def _square_side_and_centre(points):
    """Side of the square whose four corners are ``points``: the four shortest of the six
    pairwise distances are the sides, the two longest the diagonals (side * sqrt 2)."""
    d = sorted(math.dist(a, b) for a, b in combinations(points, 2))
    cx = sum(p[0] for p in points) / 4.0
    cy = sum(p[1] for p in points) / 4.0
    return d, (cx, cy)


@pytest.mark.parametrize(
    "key, square_mm, pilot_mm",
    [
        ("nema17", 31.0, 22.0),   # NEMA ICS 16: 1.220 in hole square, 22 mm pilot
        ("nema23", 47.14, 38.1),  # NEMA ICS 16: 1.856 in hole square, 38.1 mm pilot
    ],
)
def test_nema_flange_measured_from_built_mount(key: str, square_mm: float, pilot_mm: float) -> None:
    centre = (40.0, -12.5)
    feats = motor_mount("m", centre, get_motor(key), angle_deg=17.0,
                        material=get_material("cast_acrylic"))
    pts = _hole_centres(feats)
    assert len(pts) == 4
    d, c = _square_side_and_centre(pts)
    # source: NEMA ICS 16 hole squares; the inch figures agree: 1.220 in = 30.99 mm,
    # 1.856 in = 47.14 mm (25.4 mm per inch, exact)
    for side in d[:4]:
        assert side == pytest.approx(square_mm, abs=0.01)
    for diag in d[4:]:
        assert diag == pytest.approx(square_mm * math.sqrt(2.0), abs=0.02)
    assert c == pytest.approx(centre, abs=1e-9)
    pilot = [f for f in feats if f.kind == "pilot"]
    assert len(pilot) == 1
    (pc, r) = pilot[0].contours[0].circle_center_radius()
    # source: NEMA ICS 16 pilot diameters (the boss: the nominal size of the pilot hole, which
    # then gets a fit allowance, see test_pilot_fit.py)
    assert 2.0 * r == pytest.approx(pilot_mm, abs=1e-9)
    assert pc == pytest.approx(centre, abs=1e-9)


def test_nema_inch_figures_match_mm() -> None:
    # source: NEMA ICS 16 gives the squares in inches; 1 in = 25.4 mm exactly (SI definition)
    assert 1.220 * 25.4 == pytest.approx(31.0, abs=0.02)
    assert 1.856 * 25.4 == pytest.approx(47.14, abs=0.01)
    holes17 = get_motor("nema17").holes
    # the holes take M3 screws (NEMA ICS 16), so their clearance is ISO 273 medium M3
    assert all(h[2] == pytest.approx(ISO_273["M3"][1]) for h in holes17)


def test_nema14_and_gearmotors_carry_cautions() -> None:
    motors = load_motors()
    # REFERENCE.md: sources disagree on the NEMA 14 hole square -> "check the motor drawing"
    assert "check the motor drawing" in motors["nema14"].caution
    for key in ("micro_gearmotor_12mm", "gearmotor_25mm", "gearmotor_37mm"):
        m = motors[key]
        assert m.kind == "gearmotor"
        assert "check your motor's datasheet" in m.caution
        assert "invented example" in m.sources["holes"]
    for key in ("gearmotor_25mm", "gearmotor_37mm"):
        s = motors[key].strap
        assert s is not None
        # the strap must pass outside the round body: slots beyond the body diameter
        assert s.spacing_mm - s.slot_width_mm > motors[key].body_mm[0]


def test_every_material_numeric_field_has_a_source() -> None:
    mats = load_materials()
    assert set(SAFE) <= set(mats)
    numeric = ["youngs_modulus_mpa", "poisson_ratio", "density_kg_m3", "strength_mpa",
               "typical_kerf_mm"]
    for key, m in mats.items():
        if not m.laser_safe:
            continue
        for f in numeric:
            assert math.isfinite(getattr(m, f)), (key, f)
            assert m.sources.get(f, "").strip(), f"{key}: no source for {f}"
        assert m.sources.get("fit_allowance_mm", "").strip(), key
        if m.min_web_mm is not None:
            assert m.sources.get("min_web_mm", "").strip(), key
        if m.orthotropic is not None:
            assert m.sources.get("orthotropic", "").strip(), key
        assert set(m.fit_allowance_mm) == {"press", "transition", "slide", "clearance"}
        # a press fit is smaller than a clearance fit (definition of the classes)
        assert m.fit_allowance_mm["press"] < 0 < m.fit_allowance_mm["clearance"]
        assert m.strength_kind in ("yield", "tensile", "modulus_of_rupture")


@pytest.mark.parametrize(
    "key, field, lo, hi",
    [
        # materials handbooks (CRC, Cardarelli): cast PMMA 1.18-1.19 g/cm3, 2.9-3.2 GPa
        ("cast_acrylic", "density_kg_m3", 1180, 1190),
        ("cast_acrylic", "youngs_modulus_mpa", 2900, 3200),
        # distributor datasheets: PC 1.20 g/cm3, 2.3-2.4 GPa, yield 60-62 MPa
        ("polycarbonate", "youngs_modulus_mpa", 2300, 2400),
        ("polycarbonate", "strength_mpa", 60, 62),
        # Engineering Plastics Handbook: POM 1.41 g/cm3, 2.5-3.0 GPa
        ("acetal", "density_kg_m3", 1410, 1410),
        ("acetal", "youngs_modulus_mpa", 2500, 3000),
        # sheet maker data: HDPE 0.94-0.97 g/cm3
        ("hdpe", "density_kg_m3", 940, 970),
        # Aluminum Association typical values
        ("aluminium_5052_h32", "youngs_modulus_mpa", 70300, 70300),
        ("aluminium_5052_h32", "strength_mpa", 193, 193),
        ("aluminium_6061_t6", "density_kg_m3", 2700, 2700),
        ("aluminium_6061_t6", "strength_mpa", 276, 276),
        # steel data sheets: 7.87 g/cm3, 200-205 GPa; ASTM A36 yield 250 MPa
        ("mild_steel", "density_kg_m3", 7870, 7870),
        ("mild_steel", "youngs_modulus_mpa", 200000, 205000),
        ("mild_steel", "strength_mpa", 250, 250),
        # Wood Handbook FPL-GTR-190 ch. 12: birch plywood 0.60-0.70 g/cm3, MOR 48-69 MPa
        ("birch_plywood", "density_kg_m3", 600, 700),
        ("birch_plywood", "strength_mpa", 48, 69),
        # Wood Handbook Table 12-6 / ANSI A208.2: MDF 0.50-0.88 g/cm3
        ("mdf", "density_kg_m3", 500, 880),
    ],
)
def test_material_values_within_published_ranges(key, field, lo, hi) -> None:
    assert lo - 1e-9 <= getattr(get_material(key), field) <= hi + 1e-9


def test_acrylic_press_allowance_and_plywood_grain() -> None:
    # REFERENCE.md bearing practice (common practice): acrylic about 0.2 mm under nominal
    assert get_material("cast_acrylic").fit_allowance_mm["press"] == pytest.approx(-0.2)
    ply = get_material("birch_plywood")
    assert ply.orthotropic is not None
    # Wood Handbook FPL-GTR-190 ch. 12: 8-10 GPa along face grain
    assert 8000 <= ply.orthotropic["E1_mpa"] <= 10000
    # REFERENCE.md: analyse with the weaker direction unless the grain is stated
    assert ply.youngs_modulus_mpa == pytest.approx(
        min(ply.orthotropic["E1_mpa"], ply.orthotropic["E2_mpa"])
    )


@pytest.mark.parametrize("key", ["pvc", "vinyl", "artificial_leather"])
def test_chlorine_plastics_refused_with_reason(key: str) -> None:
    # REFERENCE.md never-laser-cut list: chlorine / hydrogen chloride, toxic, corrodes machine
    m = get_material(key)
    assert m.laser_safe is False
    assert "chlorine" in m.refusal_reason.lower()
    assert "hydrogen chloride" in m.refusal_reason.lower()
    with pytest.raises(ValueError, match="chlorine"):
        check_laser_safe(m)


def test_warnings_for_hazardous_but_allowed_materials() -> None:
    # REFERENCE.md: PC > ~1 mm chars/ignites on CO2; HDPE melts/catches fire; glues: formaldehyde
    assert "1 mm" in get_material("polycarbonate").warning
    assert "fire" in get_material("hdpe").warning
    for key in ("birch_plywood", "mdf"):
        assert "formaldehyde" in get_material(key).warning
    check_laser_safe(get_material("cast_acrylic"))  # no exception for a safe material


def test_unknown_material_suggests_close_matches() -> None:
    with pytest.raises(KeyError, match="cast_acrylic"):
        get_material("cast_acryllic")


def test_library_copies_are_independent() -> None:
    a = load_materials()
    a["cast_acrylic"].fit_allowance_mm["press"] = 99.0
    del a["mdf"]
    b = load_materials()
    assert b["cast_acrylic"].fit_allowance_mm["press"] == pytest.approx(-0.2)
    assert "mdf" in b


def test_machine_profiles_load() -> None:
    machines = load_machines()
    assert {"example_co2_60w", "example_fibre_1kw"} <= set(machines)
    for key, m in machines.items():
        assert isinstance(m, MachineProfile)
        assert "measure your own" in m.notes
        assert m.bed_mm is not None and min(m.bed_mm) > 0
        # REFERENCE.md range of kerf across materials: 0.08-0.45 mm (common practice)
        assert m.kerf_mm is not None and 0.08 <= m.kerf_mm <= 0.45, key
        for rows in m.kerf_by_material.values():
            assert all(0.08 <= k <= 0.45 for _, k in rows)
    co2 = get_machine("example_co2_60w")
    # REFERENCE.md (common practice): 60 W CO2, 3 mm cast acrylic 10-15 mm/s
    speed = dict(co2.cut_speed_mm_s["cast_acrylic"])[3.0]
    assert 10.0 <= speed <= 15.0
    with pytest.raises(KeyError, match="example_co2_60w"):
        get_machine("example_co2_60")


def test_kerf_for_order_of_precedence() -> None:
    # values chosen in this test; the rule is the documented precedence of kerf_for
    m = machine_from_mapping({
        "kerf_mm": 0.31,
        "kerf_mm_by_material": {
            "cast_acrylic": [{"thickness_mm": 3.0, "kerf_mm": 0.17},
                             {"thickness_mm": 6.0, "kerf_mm": 0.26}],
            "mdf": [{"kerf_mm": 0.22}],
        },
    })
    assert kerf_for(m, "cast_acrylic", 6.0) == pytest.approx(0.26)
    assert kerf_for(m, "cast_acrylic", 3.0) == pytest.approx(0.17)
    # between two entries: linear interpolation (issue 9 item 11; was the profile default)
    assert kerf_for(m, "cast_acrylic", 5.0) == pytest.approx(0.17 + (0.26 - 0.17) * 2.0 / 3.0)
    assert kerf_for(m, "hdpe", 5.0) == pytest.approx(0.31)           # profile default
    assert kerf_for(m, "mdf", 9.0) == pytest.approx(0.22)            # any-thickness entry
    bare = machine_from_mapping({})
    assert kerf_for(bare, "mdf", 3.0) == get_material("mdf").typical_kerf_mm
    assert kerf_for(None, "hdpe", 3.0) == get_material("hdpe").typical_kerf_mm


def test_machine_from_mapping_rejects_bad_fields() -> None:
    with pytest.raises(ValueError, match="kerf_mm"):
        machine_from_mapping({"kerf_m": 0.2})
    with pytest.raises(ValueError, match="bed_mm"):
        machine_from_mapping({"bed_mm": [600, -1]})
    with pytest.raises(ValueError, match="kerf_mm"):
        machine_from_mapping({"kerf_mm": "wide"})
