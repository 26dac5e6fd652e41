"""Cutting machine profiles: bundled ones (``templates/machines/*.yaml``) and inline ones from a
design file, and what a profile gives for a material and thickness: kerf (:func:`kerf_for`),
cut speed (:func:`speed_for`), pierce time (:func:`pierce_for`), fit allowances
(:func:`fit_allowances_for`) and stock sheet (:func:`sheet_for`).

Profile files are parsed once (``functools.lru_cache``); the loaders hand out fresh copies, so a
caller can never change the cached profiles. The bundled values are examples: measure your own.
Profile files given by path are read by :mod:`.machine_files`.

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
from platewright.geometry.library import (
    FIT_CLASSES,
    TEMPLATES,
    get_material,
    materials_cached,
    read_number,
    read_pair,
    unknown_key_problem,
)

__all__ = [
    "SheetStock",
    "MachineProfile",
    "ProfileFieldError",
    "MACHINE_FIELDS",
    "load_machines",
    "get_machine",
    "machine_from_mapping",
    "kerf_for",
    "kerf_choice",
    "KerfChoice",
    "KerfRangeError",
    "KERF_INTERPOLATED",
    "speed_for",
    "pierce_for",
    "fit_allowances_for",
    "sheet_for",
]

_THICKNESS_MATCH_MM = 1e-6
#: Largest fit allowance a profile may store (mm): beyond this a measurement has gone wrong.
MAX_FIT_ALLOWANCE_MM = 1.0

Table = dict[str, tuple[tuple[float | None, float], ...]]


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
    speeds in mm/s; ``pierce_s_by_material`` the same shape with seconds per pierce. ``pierce_s``
    default s per pierce, ``travel_mm_s`` rapid speed, ``setup_s`` set-up time per job (s),
    ``hourly_rate`` in ``currency`` per hour. ``fit_allowance_by_material``: material key ->
    tuple of (thickness_mm or None, {fit class: signed allowance mm}), measured values that
    override the material library's allowances.
    """

    key: str
    name: str
    bed_mm: tuple[float, float] | None
    kerf_mm: float | None
    kerf_by_material: Table
    kind: str = ""
    cut_speed_mm_s: Table = field(default_factory=dict)
    pierce_s: float | None = None
    travel_mm_s: float | None = None
    hourly_rate: float | None = None
    currency: str = ""
    sheets: tuple[SheetStock, ...] = ()
    notes: str = ""
    sources: dict[str, str] = field(default_factory=dict)
    pierce_s_by_material: Table = field(default_factory=dict)
    setup_s: float | None = None
    fit_allowance_by_material: dict[str, tuple[tuple[float | None, dict[str, float]], ...]] = field(
        default_factory=dict
    )


class ProfileFieldError(ValueError):
    """A bad field in a machine profile: ``path`` (dotted field path inside the profile, e.g.
    ``cut_speed_mm_s.cast_acrylic[0].speed_mm_s``), ``problem`` and a ``hint``."""

    def __init__(self, path: str, problem: str, hint: str = "") -> None:
        self.path = path
        self.problem = problem
        self.hint = hint
        text = f"machine.{path}: {problem}" if path else f"machine: {problem}"
        super().__init__(f"{text}; {hint}" if hint else text)


#: Every field of a profile, in file order.
MACHINE_FIELDS = (
    "name", "kind", "notes", "bed_mm", "kerf_mm", "kerf_mm_by_material", "cut_speed_mm_s",
    "pierce_s", "pierce_s_by_material", "travel_mm_s", "setup_s", "hourly_rate", "currency",
    "fit_allowance_mm_by_material", "sheets", "sources",
)
_SHEET_FIELDS = ("material", "thickness_mm", "size_mm", "price")


def _did_you_mean(word: str, valid: tuple[str, ...] | list[str]) -> str:
    close = difflib.get_close_matches(str(word), list(valid), n=1, cutoff=0.6)
    listing = f"valid: {', '.join(valid)}"
    return f"did you mean {close[0]!r}? ({listing})" if close else listing


def _checked(fn, *args, **kwargs):
    """Call a library number check; turn its 'where: problem' ValueError into a field error."""
    try:
        return fn(*args, **kwargs)
    except ValueError as exc:
        where, _, problem = str(exc).partition(": ")
        raise ProfileFieldError(where, problem or str(exc)) from None


def _material_key(path: str, key: Any) -> str:
    mats = materials_cached()  # read only here
    key = str(key)
    if key not in mats:
        raise ProfileFieldError(path, f"unknown material {key!r}", _did_you_mean(key, sorted(mats)))
    if not mats[key].laser_safe:
        raise ProfileFieldError(path, f"material {key!r} must never be laser-cut: "
                                f"{mats[key].refusal_reason}", "remove this entry")
    return key


def _rows(where: str, raw: Any, value_key: str) -> list[tuple[int, Any, Mapping]]:
    if not isinstance(raw, Mapping):
        raise ProfileFieldError(where, "expected a mapping material -> list of entries")
    out = []
    for mat, entries in raw.items():
        mw = f"{where}.{mat}"
        key = _material_key(mw, mat)
        if isinstance(entries, (int, float)) and not isinstance(entries, bool):
            entries = [{value_key: entries}]
        if not isinstance(entries, list):
            raise ProfileFieldError(mw, f"expected a number or a list of {{thickness_mm, "
                                    f"{value_key}}} entries, got {entries!r}")
        for i, e in enumerate(entries):
            if not isinstance(e, Mapping):
                raise ProfileFieldError(f"{mw}[{i}]", f"expected {{thickness_mm, {value_key}}}, "
                                        f"got {e!r}")
            out.append((i, key, e))
    return out


def _thickness(path: str, e: Mapping) -> float | None:
    t = e.get("thickness_mm")
    return None if t is None else _checked(read_number, f"{path}.thickness_mm", t, positive=True)


def _table(where: str, raw: Any, value_key: str, allow_zero: bool = False) -> Table:
    if raw is None:
        return {}
    out: dict[str, list[tuple[float | None, float]]] = {}
    for i, mat, e in _rows(where, raw, value_key):
        ew = f"{where}.{mat}[{i}]"
        for k in e:
            if k not in ("thickness_mm", value_key):
                raise ProfileFieldError(f"{ew}.{k}", f"unknown field {k!r}",
                                        _did_you_mean(k, ("thickness_mm", value_key)))
        if value_key not in e:
            raise ProfileFieldError(ew, f"missing {value_key}")
        out.setdefault(mat, []).append((
            _thickness(ew, e),
            _checked(read_number, f"{ew}.{value_key}", e[value_key], positive=True,
                     allow_zero=allow_zero),
        ))
    return {k: tuple(v) for k, v in out.items()}


def _fit_table(where: str, raw: Any) -> dict[str, tuple[tuple[float | None, dict[str, float]], ...]]:
    if raw is None:
        return {}
    out: dict[str, list[tuple[float | None, dict[str, float]]]] = {}
    valid = ("thickness_mm", *FIT_CLASSES)
    for i, mat, e in _rows(where, raw, "press"):
        ew = f"{where}.{mat}[{i}]"
        fits: dict[str, float] = {}
        for k, v in e.items():
            if k == "thickness_mm":
                continue
            if k not in FIT_CLASSES:
                raise ProfileFieldError(f"{ew}.{k}", f"unknown field {k!r}", _did_you_mean(k, valid))
            a = _checked(read_number, f"{ew}.{k}", v)
            if abs(a) > MAX_FIT_ALLOWANCE_MM:
                raise ProfileFieldError(f"{ew}.{k}", f"allowance {a:g} mm is larger than "
                                        f"{MAX_FIT_ALLOWANCE_MM:g} mm", "check the measurement")
            fits[str(k)] = a
        if not fits:
            raise ProfileFieldError(ew, "no fit class given", f"valid: {', '.join(FIT_CLASSES)}")
        out.setdefault(mat, []).append((_thickness(ew, e), fits))
    return {k: tuple(v) for k, v in out.items()}


def _sheets(raw: Any) -> tuple[SheetStock, ...]:
    if raw is None:
        return ()
    if not isinstance(raw, list):
        raise ProfileFieldError("sheets", f"expected a list of {{{', '.join(_SHEET_FIELDS)}}}")
    out = []
    for i, s in enumerate(raw):
        sw = f"sheets[{i}]"
        if not isinstance(s, Mapping):
            raise ProfileFieldError(sw, f"expected a mapping {{{', '.join(_SHEET_FIELDS)}}}")
        for k in s:
            if k not in _SHEET_FIELDS:
                raise ProfileFieldError(f"{sw}.{k}", f"unknown field {k!r}",
                                        _did_you_mean(k, _SHEET_FIELDS))
        for k in ("material", "thickness_mm", "size_mm"):
            if k not in s:
                raise ProfileFieldError(sw, f"missing {k}")
        price = s.get("price")
        out.append(SheetStock(
            material=_material_key(f"{sw}.material", s["material"]),
            thickness_mm=_checked(read_number, f"{sw}.thickness_mm", s["thickness_mm"], positive=True),
            size_mm=_checked(read_pair, f"{sw}.size_mm", s["size_mm"]),
            price=None if price is None else _checked(read_number, f"{sw}.price", price,
                                                      positive=True, allow_zero=True),
        ))
    return tuple(out)


def _text(d: Mapping[str, Any], name: str, default: str) -> str:
    v = d.get(name, default)
    if v is None:
        return default
    if not isinstance(v, (str, int, float)) or isinstance(v, bool):
        raise ProfileFieldError(name, f"expected text, got {v!r}")
    return str(v)


def machine_from_mapping(d: Mapping[str, Any], key: str = "inline") -> MachineProfile:
    """A machine profile from a mapping (an inline ``machine:`` block or a profile file).

    Every field is optional (see :func:`platewright.geometry.shop.machine_files.describe_machine_profile`).
    Unknown fields, unknown or refused material keys, and bad numbers (lengths mm, speeds mm/s,
    times s: positive; rates, prices: zero or more) raise :class:`ProfileFieldError` (a
    ValueError) naming the field path and what is valid.
    """
    if not isinstance(d, Mapping):
        raise ProfileFieldError("", f"expected a mapping, got {type(d).__name__}")
    for k in d:
        if k not in MACHINE_FIELDS:
            raise ProfileFieldError(str(k), f"unknown field {k!r}", _did_you_mean(k, MACHINE_FIELDS))

    def opt(name: str, allow_zero: bool = False) -> float | None:
        v = d.get(name)
        return None if v is None else _checked(read_number, name, v, positive=True,
                                               allow_zero=allow_zero)

    bed = d.get("bed_mm")
    sources = d.get("sources") or {}
    if not isinstance(sources, Mapping):
        raise ProfileFieldError("sources", "expected a mapping field -> where its value comes from")
    return MachineProfile(
        key=key,
        name=_text(d, "name", key),
        bed_mm=None if bed is None else _checked(read_pair, "bed_mm", bed),
        kerf_mm=opt("kerf_mm", allow_zero=True),
        kerf_by_material=_table("kerf_mm_by_material", d.get("kerf_mm_by_material"), "kerf_mm",
                                allow_zero=True),
        kind=_text(d, "kind", ""),
        cut_speed_mm_s=_table("cut_speed_mm_s", d.get("cut_speed_mm_s"), "speed_mm_s"),
        pierce_s=opt("pierce_s", allow_zero=True),
        travel_mm_s=opt("travel_mm_s"),
        hourly_rate=opt("hourly_rate", allow_zero=True),
        currency=_text(d, "currency", ""),
        sheets=_sheets(d.get("sheets")),
        notes=_text(d, "notes", ""),
        sources={str(k): str(v) for k, v in sources.items()},
        pierce_s_by_material=_table("pierce_s_by_material", d.get("pierce_s_by_material"),
                                    "pierce_s", allow_zero=True),
        setup_s=opt("setup_s", allow_zero=True),
        fit_allowance_by_material=_fit_table("fit_allowance_mm_by_material",
                                             d.get("fit_allowance_mm_by_material")),
    )


@lru_cache(maxsize=1)
def _machines_cached() -> dict[str, MachineProfile]:
    out: dict[str, MachineProfile] = {}
    folder = files(TEMPLATES) / "machines"
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
        raise unknown_key_problem("machine", key, list(cached))
    return copy.deepcopy(cached[key])


def _lookup(rows, thickness_mm: float):
    """The entry for this thickness (matched to 1e-6 mm), else the any-thickness one, else None."""
    for t, v in rows:
        if t is not None and abs(t - thickness_mm) <= _THICKNESS_MATCH_MM:
            return v
    for t, v in rows:
        if t is None:
            return v
    return None


#: First word of a KerfChoice.source that was interpolated between two profile entries.
KERF_INTERPOLATED = "interpolated"


@dataclass(frozen=True)
class KerfChoice:
    """The kerf (mm) for a material and thickness, and where it came from (``source``, text
    for the report). ``interpolated``: between two profile entries (the caller warns)."""

    kerf_mm: float
    source: str
    interpolated: bool = False


class KerfRangeError(ValueError):
    """The profile has kerf entries for the material, but none at or around this thickness.

    ``low_mm`` / ``high_mm``: the thinnest and thickest entry of the material."""

    def __init__(self, machine_key: str, material_key: str, thickness_mm: float, low_mm: float,
                 high_mm: float) -> None:
        self.machine_key, self.material_key = machine_key, material_key
        self.thickness_mm, self.low_mm, self.high_mm = thickness_mm, low_mm, high_mm
        span = f"{low_mm:g} mm" if low_mm == high_mm else f"{low_mm:g} to {high_mm:g} mm"
        super().__init__(f"machine profile '{machine_key}' has kerf entries for {material_key} "
                         f"at {span} only, not {thickness_mm:g} mm")


def kerf_choice(machine: MachineProfile | None, material_key: str,
                thickness_mm: float) -> KerfChoice:
    """Kerf (mm) for a material key and sheet thickness (mm), with where it came from.

    The rule, in order:

    1. the profile's entry for the material at this thickness (to 1e-6 mm);
    2. the profile's entry for the material without a thickness (any thickness);
    3. when the profile has entries for the material at other thicknesses only: a thickness
       between two of them is interpolated linearly between the nearest thinner and thicker
       entry (``interpolated`` set: the caller warns); outside their range
       :class:`KerfRangeError` (kerf does not follow thickness closely enough to extrapolate:
       measure it);
    4. a material the profile has no entries for: the profile's default ``kerf_mm``;
    5. else the material library's ``typical_kerf_mm``.
    """
    if machine is not None:
        rows = machine.kerf_by_material.get(material_key, ())
        where = f"machine profile '{machine.key}'"
        for t, k in rows:
            if t is not None and abs(t - thickness_mm) <= _THICKNESS_MATCH_MM:
                return KerfChoice(k, f"{where}: {material_key} {t:g} mm entry")
        for t, k in rows:
            if t is None:
                return KerfChoice(k, f"{where}: {material_key} entry for any thickness")
        table = sorted((t, k) for t, k in rows if t is not None)
        if table:
            below = [(t, k) for t, k in table if t < thickness_mm]
            above = [(t, k) for t, k in table if t > thickness_mm]
            if not below or not above:
                raise KerfRangeError(machine.key, material_key, thickness_mm, table[0][0],
                                     table[-1][0])
            (t0, k0), (t1, k1) = below[-1], above[0]
            kerf = k0 + (k1 - k0) * (thickness_mm - t0) / (t1 - t0)
            return KerfChoice(kerf, f"{KERF_INTERPOLATED} from {where}: {material_key} "
                              f"{t0:g} mm ({k0:g} mm) and {t1:g} mm ({k1:g} mm)", True)
        if machine.kerf_mm is not None:
            return KerfChoice(machine.kerf_mm, f"{where}: default kerf_mm")
    return KerfChoice(get_material(material_key).typical_kerf_mm,
                      f"material library: {material_key} typical_kerf_mm")


def kerf_for(machine: MachineProfile | None, material_key: str, thickness_mm: float) -> float:
    """Kerf (mm) to use for a material key and sheet thickness (mm): the value of
    :func:`kerf_choice` (see its rule); KerfRangeError outside the profile's entries."""
    return kerf_choice(machine, material_key, thickness_mm).kerf_mm


def speed_for(machine: MachineProfile, material_key: str, thickness_mm: float) -> float | None:
    """Cut speed (mm/s) for the material and thickness (mm): the matching entry, else the
    material's any-thickness entry, else None (no data: the caller says so)."""
    return _lookup(machine.cut_speed_mm_s.get(material_key, ()), thickness_mm)


def pierce_for(machine: MachineProfile, material_key: str, thickness_mm: float) -> float | None:
    """Seconds per pierce for the material and thickness (mm): matching entry, any-thickness
    entry, the profile default ``pierce_s``, else None."""
    p = _lookup(machine.pierce_s_by_material.get(material_key, ()), thickness_mm)
    return machine.pierce_s if p is None else p


def fit_allowances_for(machine: MachineProfile | None, material_key: str,
                       thickness_mm: float) -> dict[str, float]:
    """Fit allowances (signed mm, by fit class) for a material and thickness (mm).

    The material library's ``fit_allowance_mm`` with the profile's measured entries laid over
    it: first the material's any-thickness entry, then the entry for this thickness.
    """
    out = dict(get_material(material_key).fit_allowance_mm)
    if machine is None:
        return out
    rows = machine.fit_allowance_by_material.get(material_key, ())
    for t, fits in rows:
        if t is None:
            out.update(fits)
    for t, fits in rows:
        if t is not None and abs(t - thickness_mm) <= _THICKNESS_MATCH_MM:
            out.update(fits)
    return out


def sheet_for(machine: MachineProfile, material_key: str, thickness_mm: float) -> SheetStock | None:
    """The priced stock sheet of this material and thickness (mm) with the lowest price per
    area; an unpriced one when none has a price; None when the profile holds no such sheet."""
    match = [s for s in machine.sheets if s.material == material_key
             and abs(s.thickness_mm - thickness_mm) <= _THICKNESS_MATCH_MM]
    if not match:
        return None
    priced = [s for s in match if s.price is not None]
    if not priced:
        return match[0]
    return min(priced, key=lambda s: s.price / (s.size_mm[0] * s.size_mm[1]))  # type: ignore[operator]
