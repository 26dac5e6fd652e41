"""Cutting machine profiles: bundled ones (``templates/machines/*.yaml``) and inline ones from a
design file, and the kerf a profile gives for a material and thickness (:func:`kerf_for`).

Profile files are parsed once (``functools.lru_cache``); the loaders hand out fresh copies, so a
caller can never change the cached profiles. The bundled values are examples: measure your own.

Units: lengths mm, speeds mm/s, times s, ``hourly_rate`` in the profile's ``currency`` per hour.
"""

from __future__ import annotations

import copy
import difflib
from collections.abc import Mapping
from dataclasses import dataclass, field
from functools import lru_cache
from importlib.resources import files
from typing import Any

import yaml

# the checked-number and unknown-key helpers are shared with the other bundled libraries
from .library import _TEMPLATES, _number, _pair, _unknown_key, get_material

__all__ = [
    "SheetStock",
    "MachineProfile",
    "load_machines",
    "get_machine",
    "machine_from_mapping",
    "kerf_for",
]

_THICKNESS_MATCH_MM = 1e-6


@dataclass(frozen=True)
class SheetStock:
    """One stock sheet a shop holds: material key, thickness (mm), size (x, y) mm, price each."""

    material: str
    thickness_mm: float
    size_mm: tuple[float, float]
    price: float | None = None


@dataclass(frozen=True)
class MachineProfile:
    """A cutting machine profile (example values in the bundled files: measure your own).

    ``bed_mm``: (x, y) usable bed, None when unknown. ``kerf_mm``: default kerf, None when the
    material's typical kerf should be used. ``kerf_by_material``: material key -> tuple of
    (thickness_mm or None for any thickness, kerf_mm). ``cut_speed_mm_s``: the same shape with
    speeds in mm/s. ``pierce_s`` s per pierce, ``travel_mm_s`` rapid speed, ``hourly_rate`` in
    ``currency`` per hour.
    """

    key: str
    name: str
    bed_mm: tuple[float, float] | None
    kerf_mm: float | None
    kerf_by_material: dict[str, tuple[tuple[float | None, float], ...]]
    kind: str = ""
    cut_speed_mm_s: dict[str, tuple[tuple[float | None, float], ...]] = field(
        default_factory=dict
    )
    pierce_s: float | None = None
    travel_mm_s: float | None = None
    hourly_rate: float | None = None
    currency: str = ""
    sheets: tuple[SheetStock, ...] = ()
    notes: str = ""
    sources: dict[str, str] = field(default_factory=dict)


_MACHINE_KEYS = (
    "name", "kind", "notes", "bed_mm", "kerf_mm", "kerf_mm_by_material", "cut_speed_mm_s",
    "pierce_s", "travel_mm_s", "hourly_rate", "currency", "sheets", "sources",
)


def _table(where: str, raw: Any, value_key: str) -> dict[str, tuple[tuple[float | None, float],
                                                                   ...]]:
    if raw is None:
        return {}
    if not isinstance(raw, Mapping):
        raise ValueError(f"{where}: expected a mapping material -> list of entries")
    out: dict[str, tuple[tuple[float | None, float], ...]] = {}
    for mat, entries in raw.items():
        mw = f"{where}.{mat}"
        if isinstance(entries, (int, float)) and not isinstance(entries, bool):
            entries = [{value_key: entries}]
        if not isinstance(entries, list):
            raise ValueError(f"{mw}: expected a number or a list of "
                             f"{{thickness_mm, {value_key}}} entries")
        rows: list[tuple[float | None, float]] = []
        for i, e in enumerate(entries):
            if not isinstance(e, Mapping) or value_key not in e:
                raise ValueError(f"{mw}[{i}]: expected {{thickness_mm, {value_key}}}, got {e!r}")
            t = e.get("thickness_mm")
            rows.append((
                None if t is None else _number(f"{mw}[{i}].thickness_mm", t, positive=True),
                _number(f"{mw}[{i}].{value_key}", e[value_key], positive=True),
            ))
        out[str(mat)] = tuple(rows)
    return out


def machine_from_mapping(d: Mapping[str, Any], key: str = "inline") -> MachineProfile:
    """A machine profile from a mapping (an inline ``machine:`` block or a profile file).

    Every field is optional; unknown fields raise ValueError naming the valid ones. Numbers are
    checked (lengths mm, speeds mm/s, times s must be positive).
    """
    if not isinstance(d, Mapping):
        raise ValueError(f"machine: expected a mapping, got {type(d).__name__}")
    unknown = [k for k in d if k not in _MACHINE_KEYS]
    if unknown:
        close = difflib.get_close_matches(str(unknown[0]), _MACHINE_KEYS, n=1)
        hint = f"; did you mean {close[0]!r}?" if close else ""
        raise ValueError(f"machine: unknown field {unknown[0]!r}{hint} "
                         f"(valid: {', '.join(_MACHINE_KEYS)})")

    def opt(name: str, allow_zero: bool = False) -> float | None:
        v = d.get(name)
        return None if v is None else _number(f"machine.{name}", v, positive=True,
                                              allow_zero=allow_zero)

    sheets = []
    for i, s in enumerate(d.get("sheets") or []):
        sw = f"machine.sheets[{i}]"
        if not isinstance(s, Mapping):
            raise ValueError(f"{sw}: expected a mapping {{material, thickness_mm, size_mm, price}}")
        price = s.get("price")
        sheets.append(SheetStock(
            material=str(s["material"]),
            thickness_mm=_number(f"{sw}.thickness_mm", s["thickness_mm"], positive=True),
            size_mm=_pair(f"{sw}.size_mm", s["size_mm"]),
            price=None if price is None else _number(f"{sw}.price", price, positive=True,
                                                     allow_zero=True),
        ))
    bed = d.get("bed_mm")
    return MachineProfile(
        key=key,
        name=str(d.get("name", key)),
        bed_mm=None if bed is None else _pair("machine.bed_mm", bed),
        kerf_mm=opt("kerf_mm", allow_zero=True),
        kerf_by_material=_table("machine.kerf_mm_by_material", d.get("kerf_mm_by_material"),
                                "kerf_mm"),
        kind=str(d.get("kind", "")),
        cut_speed_mm_s=_table("machine.cut_speed_mm_s", d.get("cut_speed_mm_s"), "speed_mm_s"),
        pierce_s=opt("pierce_s", allow_zero=True),
        travel_mm_s=opt("travel_mm_s"),
        hourly_rate=opt("hourly_rate", allow_zero=True),
        currency=str(d.get("currency", "")),
        sheets=tuple(sheets),
        notes=str(d.get("notes", "")),
        sources={str(k): str(v) for k, v in (d.get("sources") or {}).items()},
    )


@lru_cache(maxsize=1)
def _machines_cached() -> dict[str, MachineProfile]:
    out: dict[str, MachineProfile] = {}
    folder = files(_TEMPLATES) / "machines"
    for entry in sorted(folder.iterdir(), key=lambda p: p.name):
        if entry.name.endswith(".yaml"):
            key = entry.name[: -len(".yaml")]
            out[key] = machine_from_mapping(yaml.safe_load(entry.read_text(encoding="utf-8")),
                                            key=key)
    return out


def load_machines() -> dict[str, MachineProfile]:
    """All bundled machine profiles by key (the file name without ``.yaml``)."""
    return copy.deepcopy(_machines_cached())


def get_machine(key: str) -> MachineProfile:
    """The bundled machine profile ``key``; KeyError naming close matches and the valid keys."""
    cached = _machines_cached()
    if key not in cached:
        raise _unknown_key("machine", key, list(cached))
    return copy.deepcopy(cached[key])


def kerf_for(machine: MachineProfile | None, material_key: str, thickness_mm: float) -> float:
    """Kerf (mm) to use for a material key and sheet thickness (mm).

    Order: the profile's entry for this material and thickness (matched to 1e-6 mm), then its
    any-thickness entry for the material, then the profile default ``kerf_mm``, then the
    material's ``typical_kerf_mm`` from the library.
    """
    if machine is not None:
        rows = machine.kerf_by_material.get(material_key, ())
        for t, k in rows:
            if t is not None and abs(t - thickness_mm) <= _THICKNESS_MATCH_MM:
                return k
        for t, k in rows:
            if t is None:
                return k
        if machine.kerf_mm is not None:
            return machine.kerf_mm
    return get_material(material_key).typical_kerf_mm
