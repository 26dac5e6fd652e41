"""Field tables of the ``components:`` and ``load_cases:`` sections and their reference text.

One :class:`Spec` per field (kind, meaning, unit, default, bounds, choices) drives both the
reader (:mod:`.loadcase_reader`) and :func:`describe_load_cases`, so the documentation cannot
drift from the parser. Also the unit hints given when a number is written with a unit.
"""

from __future__ import annotations

import difflib
import re
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from typing import Any

from platewright.fea.loadcases.types import FAMILIES

__all__ = ["describe_load_cases"]


@dataclass(frozen=True)
class Spec:
    """One field: kind (number, vector, flag, text, names, region, points, list, mapping), meaning,
    unit, default, bounds (gt, ge), choices, allowed vector lengths."""

    kind: str
    doc: str
    unit: str = ""
    default: Any = None
    required: bool = False
    choices: tuple[str, ...] = ()
    gt: float | None = None
    ge: float | None = None
    lengths: tuple[int, ...] = (2,)


_REGION_DOC = ("box {`x_min`, `x_max`, `y_min`, `y_max`} in mm selecting part of it "
               "(sides may be left open)")

COMPONENT = {
    "id": Spec("text", "name used by `{type: component}` loads", required=True),
    "plate": Spec("text", "plate that carries it", required=True),
    "mass_g": Spec("number", "mass", "g", required=True, gt=0.0),
    "at_mm": Spec("vector", "position [x, y] (give at_mm or feature)", "mm"),
    "feature": Spec("text", "feature whose holes carry it (e.g. a motor mount)"),
    "footprint_mm": Spec("vector", "[length along x, width along y] centred on at_mm; the weight "
                          "is spread over it (default: a point load)", "mm"),
}
CASE = {
    "name": Spec("text", "name of the case in reports", required=True),
    "plate": Spec("text", "plate analysed", required=True),
    "family": Spec("text", "bending: loads across the plate (Kirchhoff plate); in_plane: loads "
                    "in its plane (plane stress)", required=True, choices=FAMILIES),
    "g_factor": Spec("number", "multiplies component weights and self-weight (in multiples "
                      "of gravity, e.g. 3 for a hard landing)", default=1.0, ge=0.0),
    "self_weight": Spec("flag", "include the plate's own weight (default: true in bending; in "
                         "in_plane true when g_direction is given)"),
    "g_direction": Spec("vector", "in_plane only: direction [x, y] in which the weights act, "
                         "e.g. [1, 0] for hard braking when x points forward"),
    "supports": Spec("list", "how the plate is held (list, see Supports)", required=True),
    "loads": Spec("list", "what loads it (list, see Loads)", default=[]),
    "collision": Spec("mapping", "in_plane only: a bump (see Collision)"),
    "limits": Spec("mapping", "pass/fail limits (see Limits)"),
    "mesh_size_mm": Spec("number", "target element size (default: from the plate size)", "mm",
                          gt=0.0),
    "grain_deg": Spec("number", "face grain direction from +x for sheets with orthotropic data "
                       "(default: along x)", "degrees"),
    "error_target_pct": Spec("number", "target of the estimated discretisation error of the "
                              "largest deflection and of the design stress: the mesh is refined "
                              "(first everywhere, then where the design stress stands) until "
                              "both estimates are below it or max_refinements is used up", "%",
                              default=1.0, gt=0.0),
    "max_refinements": Spec("number", "largest number of refinement passes after the first "
                             "solve (0: solve once; the deflection's error is then not "
                             "estimated)", default=4, ge=0.0),
    "exclusion_radius_mm": Spec("number", "radius of the disc around each singular point (a "
                                 "sharp inside corner, the end of a held stretch of edge, a "
                                 "point support or point load) that the design stress leaves "
                                 "out (default: the sheet thickness)", "mm", gt=0.0),
}
SUPPORT = {
    "at": Spec("text", "bores: the rims of holes; mount: every hole of a mount; edge: an edge "
                "or part of it; points: single points", required=True,
                choices=("bores", "mount", "edge", "points")),
    "features": Spec("names", "feature names (bores)"),
    "feature": Spec("text", "feature name (mount, edge; edge default: the outline)"),
    "mode": Spec("text", "rigid: rim held (bending: no deflection; in_plane: no movement); "
                  "elastic: rim on springs", default="rigid",
                  choices=("rigid", "elastic")),
    "stiffness_n_per_mm": Spec("number", "elastic: stiffness of EACH named bore or mount "
                                "(vertical in bending; each in-plane direction in in_plane)",
                                "N/mm", gt=0.0),
    "rotational_stiffness_n_mm_per_rad": Spec("number", "elastic, bending: tilt stiffness of "
                                               "each named bore or mount", "N mm/rad",
                                               default=0.0, ge=0.0),
    "condition": Spec("text", "clamped: no deflection, no slope; pinned: no deflection (in "
                       "in_plane both hold the directions given); symmetry (edge): a mirror "
                       "line on a straight edge along x or y - bending: no slope across it, "
                       "in_plane: no movement across it", choices=("clamped", "pinned",
                                                                   "symmetry")),
    "directions": Spec("names", "in_plane: the displacement components held, [x], [y] or "
                        "[x, y] (default both); one of them makes a roller that slides along "
                        "the other"),
    "region_mm": Spec("region", "part of the edge: " + _REGION_DOC),
    "points_mm": Spec("points", "support points [[x, y], ...] (a mesh node is placed at each)",
                      "mm"),
}
SUPPORT_KEYS = {
    "bores": ("at", "features", "feature", "mode", "stiffness_n_per_mm",
              "rotational_stiffness_n_mm_per_rad", "directions"),
    "mount": ("at", "feature", "mode", "stiffness_n_per_mm", "rotational_stiffness_n_mm_per_rad",
              "directions"),
    "edge": ("at", "feature", "condition", "region_mm", "directions"),
    "points": ("at", "points_mm", "condition", "directions"),
}
LOAD = {
    "type": Spec("text", "what kind of load", required=True,
                  choices=("component", "force", "moment", "edge", "pressure")),
    "component": Spec("text", "component id: its weight x g_factor"),
    "feature": Spec("text", "feature the load is spread on (force, moment; edge default: the "
                     "outline)"),
    "at_mm": Spec("vector", "force: point [x, y] instead of a feature (a mesh node is placed "
                   "there; the report says where the force went)", "mm"),
    "force_n": Spec("vector", "total force [Fx, Fy, Fz] (or [Fx, Fy]); bending uses Fz, "
                     "in_plane Fx, Fy", "N", lengths=(2, 3)),
    "moment_n_mm": Spec("vector", "moment [Mx, My, Mz] (right-hand rule); bending uses Mx, My, "
                         "in_plane Mz", "N mm", lengths=(3,)),
    "region_mm": Spec("region", "edge: part of the edge; pressure: the loaded area: "
                       + _REGION_DOC),
    "pressure_mpa": Spec("number", "bending: area load, positive pressing down (-z)", "MPa"),
}
LOAD_KEYS = {
    "component": ("type", "component"),
    "force": ("type", "feature", "at_mm", "force_n"),
    "moment": ("type", "feature", "moment_n_mm"),
    "edge": ("type", "feature", "region_mm", "force_n"),
    "pressure": ("type", "pressure_mpa", "region_mm"),
}
COLLISION = {
    "speed_m_s": Spec("number", "impact speed", "m/s", required=True, gt=0.0),
    "bumper_stiffness_n_per_mm": Spec("number", "stiffness of the bumper", "N/mm", required=True,
                                       gt=0.0),
    "feature": Spec("text", "edge hit (default: the outline)"),
    "region_mm": Spec("region", "part of that edge: " + _REGION_DOC),
    "direction": Spec("vector", "direction [x, y] of the force on the plate, e.g. [-1, 0] for a "
                       "head-on hit when x points forward", required=True),
    "vehicle_mass_g": Spec("number", "mass that hits (default: all plates x quantity + all "
                            "components)", "g", gt=0.0),
}
LIMITS = {
    "max_deflection_mm": Spec("number", "largest allowed deflection", "mm", gt=0.0),
    "span_ratio": Spec("number", "N in deflection <= span / N (e.g. 300)", gt=0.0),
    "span_mm": Spec("number", "span for span_ratio (default: twice the largest distance from "
                     "any point to the nearest support)", "mm", gt=0.0),
    "min_safety_factor": Spec("number", "strength / max von Mises must reach this", gt=0.0),
    "max_von_mises_mpa": Spec("number", "largest allowed von Mises stress", "MPa", gt=0.0),
}

# Conversions to the unit a field expects, for hints only (exact by definition unless noted).
_TO_UNIT = {
    "mm": {"mm": 1.0, "cm": 10.0, "m": 1000.0, "in": 25.4, "inch": 25.4, '"': 25.4, "ft": 304.8},
    "g": {"g": 1.0, "kg": 1000.0, "lb": 453.59237, "oz": 28.349523125},
    "N": {"n": 1.0, "kn": 1000.0, "lbf": 4.4482216152605},
    "MPa": {"mpa": 1.0, "pa": 1e-6, "kpa": 1e-3, "gpa": 1e3, "psi": 6.894757293168e-3},
    "m/s": {"m/s": 1.0, "km/h": 1.0 / 3.6, "mph": 0.44704},
    "N/mm": {"n/mm": 1.0, "n/m": 1e-3, "kn/m": 1.0, "lbf/in": 4.4482216152605 / 25.4},
}
NUMBER_WITH_UNIT = re.compile(
    r"^\s*([-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?)\s*([A-Za-z\"/]+)\s*$")


def unit_hint(value: float, unit_text: str, unit: str) -> str:
    table = _TO_UNIT.get(unit, {})
    factor = table.get(unit_text) or table.get(unit_text.lower())
    if factor is None:
        return f"give the number in {unit}" if unit else "give a plain number"
    return f"{value:g} {unit_text} = {value * factor:.6g} {unit}"


def key_hint(key: str, keys: Sequence[str], table: Mapping[str, Spec]) -> str:
    """Hint for an unknown key: the unit the name must carry, or a near match."""
    for k in keys:
        unit = table[k].unit if k in table else ""
        if unit and k.startswith(key + "_"):
            return f"the unit goes in the field name: write '{k}' (value in {unit})"
        if unit and key != k and "_" in key and key.rsplit("_", 1)[0] == k.rsplit("_", 1)[0]:
            return f"this field is '{k}', in {unit}: convert the value and rename the field"
    close = difflib.get_close_matches(key, list(keys), n=1, cutoff=0.6)
    return f"did you mean '{close[0]}'?" if close else "valid: " + ", ".join(keys)


def _table(title: str, fields: Mapping[str, Spec], note: str = "") -> str:
    rows = [f"### {title}", "", note, ""] if note else [f"### {title}", ""]
    rows += ["| field | unit | default | meaning |", "|---|---|---|---|"]
    for name, s in fields.items():
        default = "required" if s.required else ("-" if s.default is None else f"`{s.default}`")
        choices = f" ({' / '.join(s.choices)})" if s.choices else ""
        unit = s.unit or ("mm" if s.kind == "region" else "-")
        rows.append(f"| `{name}` | {unit} | {default} | {s.doc}{choices} |")
    return "\n".join(rows) + "\n"


def describe_load_cases() -> str:
    """Markdown reference of the ``components:`` and ``load_cases:`` sections (every field, its
    unit and default), as ``platewright`` prints it."""
    support_use = "; ".join(f"`at: {k}` takes {', '.join(v[1:])}" for k, v in SUPPORT_KEYS.items())
    load_use = "; ".join(f"`type: {k}` takes {', '.join(v[1:])}" for k, v in LOAD_KEYS.items())
    parts = [
        "## Load cases and components\n",
        "Each load case analyses one plate with finite elements: `bending` for loads across the "
        "plate (weights, pressures, vertical forces; thin-plate Kirchhoff theory) or `in_plane` "
        "for loads in its plane (pulls, bumps, braking; plane stress). Plate coordinates: x "
        "along the vehicle (forward +), y across, z up. Weights use g = 9.80665 m/s^2.\n",
        "Features are named by their id; a mount (e.g. `drive_left`) also names all its holes "
        "together, without the pilot clearance hole. Numbers may be expressions over "
        "`references`; write them in the unit the field name gives, without a unit.\n",
        "Results are finite-element ESTIMATES of an ideal, linear-elastic plate: they leave out "
        "fastener slip, stress raisers at cut edges, creep, impact and material scatter. Confirm "
        "any part whose failure could hurt someone by testing it.\n",
        _table("Components (`components:`)", COMPONENT),
        "A top-level `vehicle_mass_g` (g) sets the mass of the vehicle for every collision "
        "(default: every plate times its quantity plus every component).\n",
        _table("Load case (`load_cases:`)", CASE),
        _table("Supports (`supports:`)", SUPPORT, support_use + ". A case whose supports let "
               "the plate move as a rigid body is refused, naming the free motion."),
        _table("Loads (`loads:`)", LOAD, load_use + ". Forces and moments on a feature are "
               "spread over its edges; the total is exact."),
        _table("Collision (`collision:`)", COLLISION, "Peak force F = v sqrt(k m) from the "
               "energy balance of a linear spring (m v^2 / 2 = F^2 / (2 k)); the bumper travel "
               "F / k is reported. The force is spread along the given edge."),
        _table("Limits (`limits:`)", LIMITS, "Safety factor = material strength / largest von "
               "Mises stress. A case passes when every limit it sets is met."),
    ]
    return "\n".join(parts)
