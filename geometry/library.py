"""The bundled data libraries: materials, ISO 273 clearance holes, motor patterns.

Data live in YAML files under ``platewright.templates`` (each value with its source). Files are
parsed once (``functools.lru_cache``); every public loader hands out fresh copies of frozen
objects, so a caller can never change the cached library. Machine profiles live in
:mod:`.machines`.

Units: lengths mm, moduli and strength MPa, density kg/m^3.
"""

from __future__ import annotations

import copy
import difflib
import math
from collections.abc import Mapping
from dataclasses import dataclass
from functools import lru_cache
from importlib.resources import files
from typing import Any

import yaml

from platewright.geometry.model import Material

__all__ = [
    "StrapPattern",
    "MotorPattern",
    "load_materials",
    "get_material",
    "check_laser_safe",
    "clearance_hole_mm",
    "clearance_sizes",
    "load_motors",
    "get_motor",
]

TEMPLATES = "platewright.templates"
FIT_CLASSES = ("press", "transition", "slide", "clearance")
_STRENGTH_KINDS = ("yield", "tensile", "modulus_of_rupture")


@dataclass(frozen=True)
class StrapPattern:
    """Two strap slots either side of a round motor lying on the plate (mm).

    The slots lie at ``y = +-spacing_mm / 2`` from the motor axis (which runs along x), each
    ``slot_length_mm`` long along x and ``slot_width_mm`` wide.
    """

    slot_width_mm: float
    slot_length_mm: float
    spacing_mm: float


@dataclass(frozen=True)
class MotorPattern:
    """A motor face pattern relative to the shaft axis (mm).

    ``body_mm``: (x, y) outer size of the body (a round body gives its diameter twice).
    ``holes``: tuple of (x_mm, y_mm, diameter_mm); screw sizes are already resolved to ISO 273
    medium clearance unless the library gave a diameter. ``boss_diameter_mm``: the centring boss
    (pilot) as the source gives it (None: no boss, no pilot hole); the hole cut for it is this
    nominal size plus a fit allowance chosen by the mount (see
    :func:`~platewright.geometry.plate.features.motor_mount`). ``boss_height_mm``: how far the
    boss stands proud of the face (None when unknown). ``hole_screws``: the screw size per hole,
    or "" where a diameter was given.
    """

    key: str
    name: str
    kind: str
    body_mm: tuple[float, float]
    holes: tuple[tuple[float, float, float], ...]
    boss_diameter_mm: float | None
    shaft_mm: float
    strap: StrapPattern | None
    caution: str
    sources: dict[str, str]
    body_shape: str = "square"
    hole_screws: tuple[str, ...] = ()
    boss_height_mm: float | None = None


# ---------------------------------------------------------------------------------------------
# helpers


def _read_yaml(*parts: str) -> Any:
    node = files(TEMPLATES)
    for p in parts:
        node = node / p
    return yaml.safe_load(node.read_text(encoding="utf-8"))


def unknown_key_problem(kind: str, key: str, valid: list[str]) -> KeyError:
    close = difflib.get_close_matches(key, valid, n=3, cutoff=0.5)
    hint = f"; did you mean {', '.join(repr(c) for c in close)}?" if close else ""
    return KeyError(f"unknown {kind} {key!r}{hint} (valid: {', '.join(sorted(valid))})")


def read_number(where: str, value: Any, *, positive: bool = False, allow_zero: bool = False) -> float:
    if isinstance(value, bool) or not isinstance(value, (int, float)):
        raise ValueError(f"{where}: expected a number, got {value!r}")
    v = float(value)
    if not math.isfinite(v):
        raise ValueError(f"{where}: must be finite, got {value!r}")
    if positive and not (v > 0 or (allow_zero and v == 0)):
        need = "zero or more" if allow_zero else "greater than zero"
        raise ValueError(f"{where}: must be {need}, got {value!r}")
    return v


def read_pair(where: str, value: Any) -> tuple[float, float]:
    if not isinstance(value, (list, tuple)) or len(value) != 2:
        raise ValueError(f"{where}: expected two numbers [x, y] in mm, got {value!r}")
    return (
        read_number(f"{where}[0]", value[0], positive=True),
        read_number(f"{where}[1]", value[1], positive=True),
    )


# ---------------------------------------------------------------------------------------------
# materials


def _material(key: str, d: Mapping[str, Any]) -> Material:
    where = f"materials.{key}"
    laser_safe = bool(d.get("laser_safe", True))
    sources = {str(k): str(v) for k, v in (d.get("sources") or {}).items()}
    if not laser_safe:
        nan = float("nan")
        return Material(
            key=key, name=str(d.get("name", key)), youngs_modulus_mpa=nan, poisson_ratio=nan,
            density_kg_m3=nan, strength_mpa=nan, strength_kind="", typical_kerf_mm=nan,
            fit_allowance_mm={}, min_web_mm=None, laser_safe=False,
            refusal_reason=str(d["refusal_reason"]), warning=str(d.get("warning", "")),
            sources=sources,
        )
    kind = str(d["strength_kind"])
    if kind not in _STRENGTH_KINDS:
        raise ValueError(f"{where}.strength_kind: {kind!r} is not one of {_STRENGTH_KINDS}")
    fits = {str(k): read_number(f"{where}.fit_allowance_mm.{k}", v)
            for k, v in d["fit_allowance_mm"].items()}
    ortho = d.get("orthotropic")
    min_web = d.get("min_web_mm")
    return Material(
        key=key,
        name=str(d["name"]),
        youngs_modulus_mpa=read_number(f"{where}.youngs_modulus_mpa", d["youngs_modulus_mpa"],
                                   positive=True),
        poisson_ratio=read_number(f"{where}.poisson_ratio", d["poisson_ratio"]),
        density_kg_m3=read_number(f"{where}.density_kg_m3", d["density_kg_m3"], positive=True),
        strength_mpa=read_number(f"{where}.strength_mpa", d["strength_mpa"], positive=True),
        strength_kind=kind,
        typical_kerf_mm=read_number(f"{where}.typical_kerf_mm", d["typical_kerf_mm"], positive=True),
        fit_allowance_mm=fits,
        min_web_mm=None if min_web is None else read_number(f"{where}.min_web_mm", min_web,
                                                        positive=True),
        laser_safe=True,
        warning=str(d.get("warning", "")),
        orthotropic=None if ortho is None else {
            str(k): read_number(f"{where}.orthotropic.{k}", v) for k, v in ortho.items()
        },
        sources=sources,
    )


@lru_cache(maxsize=1)
def materials_cached() -> dict[str, Material]:
    raw = _read_yaml("materials.yaml")
    return {str(k): _material(str(k), v) for k, v in raw.items()}


def load_materials() -> dict[str, Material]:
    """All library materials by key, including refused ones (``laser_safe`` False).

    Refused materials carry NaN for their numeric fields and a ``refusal_reason``; callers must
    refuse them (see :func:`check_laser_safe`).
    """
    return copy.deepcopy(materials_cached())


def get_material(key: str) -> Material:
    """The library material ``key``; KeyError naming close matches and the valid keys."""
    cached = materials_cached()
    if key not in cached:
        raise unknown_key_problem("material", key, list(cached))
    return copy.deepcopy(cached[key])


def check_laser_safe(material: Material) -> None:
    """Raise ValueError with the reason when ``material`` must never be laser-cut."""
    if not material.laser_safe:
        raise ValueError(f"material {material.key!r} is refused: {material.refusal_reason}")


# ---------------------------------------------------------------------------------------------
# ISO 273 clearance holes


@lru_cache(maxsize=1)
def _iso273() -> tuple[tuple[str, ...], dict[str, dict[str, float]]]:
    raw = _read_yaml("fasteners.yaml")["iso_273_clearance_mm"]
    series = tuple(str(s) for s in raw["series"])
    sizes = {str(k): {s: float(v[s]) for s in series} for k, v in raw["sizes"].items()}
    return series, sizes


def clearance_sizes() -> tuple[str, ...]:
    """The screw sizes in the ISO 273 table, smallest first (e.g. ``"M3"``)."""
    return tuple(_iso273()[1])


def clearance_hole_mm(size: str, series: str = "medium") -> float:
    """ISO 273 clearance hole diameter (mm) for a metric screw ``size`` like ``"M3"``.

    ``series``: ``fine``, ``medium`` (default) or ``coarse``. KeyError for an unknown size and
    ValueError for an unknown series, each listing what is valid.
    """
    valid_series, sizes = _iso273()
    if series not in valid_series:
        raise ValueError(
            f"unknown clearance series {series!r} (valid: {', '.join(valid_series)})"
        )
    norm = size.strip().upper() if isinstance(size, str) else size
    if norm not in sizes:
        raise unknown_key_problem("screw size", str(size), list(sizes))
    return sizes[norm][series]


# ---------------------------------------------------------------------------------------------
# motors


def _motor(key: str, d: Mapping[str, Any]) -> MotorPattern:
    where = f"motors.{key}"
    holes: list[tuple[float, float, float]] = []
    screws: list[str] = []
    for i, h in enumerate(d["holes"]):
        hw = f"{where}.holes[{i}]"
        x = read_number(f"{hw}.x_mm", h["x_mm"])
        y = read_number(f"{hw}.y_mm", h["y_mm"])
        if "diameter_mm" in h:
            dia = read_number(f"{hw}.diameter_mm", h["diameter_mm"], positive=True)
            screws.append("")
        else:
            dia = clearance_hole_mm(str(h["screw"]), "medium")
            screws.append(str(h["screw"]))
        holes.append((x, y, dia))
    strap = None
    if d.get("strap") is not None:
        s = d["strap"]
        strap = StrapPattern(
            slot_width_mm=read_number(f"{where}.strap.slot_width_mm", s["slot_width_mm"],
                                  positive=True),
            slot_length_mm=read_number(f"{where}.strap.slot_length_mm", s["slot_length_mm"],
                                   positive=True),
            spacing_mm=read_number(f"{where}.strap.spacing_mm", s["spacing_mm"], positive=True),
        )
    boss = d.get("boss_diameter_mm")
    boss_height = d.get("boss_height_mm")
    return MotorPattern(
        key=key,
        name=str(d["name"]),
        kind=str(d["kind"]),
        body_mm=read_pair(f"{where}.body_mm", d["body_mm"]),
        holes=tuple(holes),
        boss_diameter_mm=None if boss is None else read_number(f"{where}.boss_diameter_mm",
                                                           boss, positive=True),
        shaft_mm=read_number(f"{where}.shaft_mm", d["shaft_mm"], positive=True),
        strap=strap,
        caution=str(d.get("caution", "")),
        sources={str(k): str(v) for k, v in (d.get("sources") or {}).items()},
        body_shape=str(d.get("body_shape", "square")),
        hole_screws=tuple(screws),
        boss_height_mm=None if boss_height is None else read_number(
            f"{where}.boss_height_mm", boss_height, positive=True),
    )


@lru_cache(maxsize=1)
def _motors_cached() -> dict[str, MotorPattern]:
    raw = _read_yaml("motors.yaml")
    return {str(k): _motor(str(k), v) for k, v in raw.items()}


def load_motors() -> dict[str, MotorPattern]:
    """All library motor patterns by key (``nema17``, ``gearmotor_25mm``, ...)."""
    return copy.deepcopy(_motors_cached())


def get_motor(key: str) -> MotorPattern:
    """The library motor pattern ``key``; KeyError naming close matches and the valid keys."""
    cached = _motors_cached()
    if key not in cached:
        raise unknown_key_problem("motor", key, list(cached))
    return copy.deepcopy(cached[key])
