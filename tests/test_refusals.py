"""No false refusals: well-supported plates solve at every mesh size, true mechanisms are still
refused with the free motion and the support or part that leaves it free named.

Outside checks name their source beside them."""

from __future__ import annotations

from types import SimpleNamespace

import pytest
from plate_factory import make_plate, rect_contour

from platewright.fea.analysis import analyse_design
from platewright.geometry.errors import DesignError

#: Cast-acrylic-like test sheet of plate_factory: E = 3000 MPa, nu = 0.37; 3 mm thick here.
E_MPA, NU, T_MM = 3000.0, 0.37, 3.0
Q_MPA = 1e-3


def _design(cases: list[dict]) -> SimpleNamespace:
    """A stand-in for a loaded Design: only the fields the load-case parser reads."""
    return SimpleNamespace(load_cases=cases, components=[], references={},
                           line_of=lambda _path: None, source_path="test")


def _shelf_cases(plate_name: str) -> list[dict]:
    # The same shelf clamped along a long edge (reach 120 mm) and along a short edge (reach
    # 200 mm: the worse conditioned of the two, refused at 0.8 mm before the fix).
    load = [{"type": "pressure", "pressure_mpa": Q_MPA}]
    return [{"name": edge, "plate": plate_name, "family": "bending", "self_weight": False,
             "supports": [{"at": "edge", "condition": "clamped", "region_mm": region}],
             "loads": load, "max_refinements": 0}
            for edge, region in (("long_edge", {"y_max": 0}), ("short_edge", {"x_max": 0}))]


@pytest.mark.parametrize("size_mm", [2.0, 1.05, 0.8])
def test_clamped_shelf_solves_at_every_mesh_size(size_mm):
    plate = make_plate(rect_contour(200.0, 120.0, (100.0, 60.0)), thickness_mm=T_MM,
                       name="shelf")
    long_edge, short_edge = analyse_design(_design(_shelf_cases("shelf")), [plate],
                                           size_mm=size_mm, method="direct")[0].cases
    for case, reach in ((long_edge, 120.0), (short_edge, 200.0)):
        # A cantilever plate under uniform load lies between a narrow beam, tip deflection
        # q L^4 / (8 E I / b) with I / b = t^3 / 12, and a strip held flat across, stiffer by
        # 1 / (1 - nu^2) (Timoshenko, Strength of Materials; Timoshenko and Woinowsky-Krieger,
        # Theory of Plates and Shells, ch. 1).
        beam = Q_MPA * reach**4 / (8 * E_MPA * T_MM**3 / 12)
        assert (1 - NU**2) * beam < case.max_deflection_mm < beam
        assert case.solver_backward_error < 1e-12


def test_plate_held_at_one_point_is_refused_naming_the_motion_and_the_support():
    plate = make_plate(rect_contour(100.0, 60.0), thickness_mm=T_MM, name="shelf")
    case = {"name": "wobbly", "plate": "shelf", "family": "bending",
            "supports": [{"at": "points", "points_mm": [[10.0, 5.0]]}]}
    with pytest.raises(DesignError) as info:
        analyse_design(_design([case]), [plate], size_mm=10.0)
    (p,) = info.value.problems
    assert p.path == "load_cases[0].supports"
    assert "rotation about x" in p.message and "rotation about y" in p.message
    # The support that leaves the motion free is named by where it acts.
    assert "one point" in p.message and "[10, 5]" in p.message


def test_plate_held_along_one_line_names_the_line():
    plate = make_plate(rect_contour(100.0, 60.0), thickness_mm=T_MM, name="shelf")
    case = {"name": "hinge", "plate": "shelf", "family": "bending",
            "supports": [{"at": "points", "points_mm": [[-40.0, 0.0], [40.0, 0.0]]}]}
    with pytest.raises(DesignError) as info:
        analyse_design(_design([case]), [plate], size_mm=10.0)
    (p,) = info.value.problems
    assert "rotation about x" in p.message and "one line" in p.message
