"""Machine profile files (platewright's own YAML format): load with field-named errors (path and
line), save and update atomically, resolve ``--machine`` / ``machine:`` values, and the field
reference (:func:`describe_machine_profile`).

Units: lengths mm, speeds mm/s, times s, rates and prices in the profile's ``currency``.
"""

from __future__ import annotations

import dataclasses
import hashlib
import os
from collections.abc import Mapping
from pathlib import Path
from typing import Any

import yaml

from platewright.geometry.design.schema import suggest
from platewright.geometry.design.yamlsource import parse_yaml, read_input_file
from platewright.geometry.errors import DesignError, Problem
from platewright.geometry.shop.machines import (
    MachineProfile,
    ProfileFieldError,
    get_machine,
    load_machines,
    machine_from_mapping,
)
from platewright.geometry.writers.atomic import write_atomic

__all__ = [
    "PROFILE_FIELDS_DOC",
    "describe_machine_profile",
    "PROFILE_SUFFIXES",
    "is_profile_path",
    "load_profile_file",
    "read_profile_file",
    "read_profile_text",
    "profile_to_mapping",
    "save_profile",
    "resolve_machine",
    "resolve_machine_source",
    "set_measured",
]

#: (field, unit, default, meaning) of every profile field, in file order.
PROFILE_FIELDS_DOC: tuple[tuple[str, str, str, str], ...] = (
    ("name", "-", "the file name", "machine name shown in reports"),
    ("kind", "-", '""', "machine kind, free text, e.g. co2_laser, fibre_laser, router"),
    ("notes", "-", '""', "free text; bundled examples say \"example values: measure your own\""),
    ("bed_mm", "mm", "none (no bed-size check)", "usable bed [x, y]"),
    ("kerf_mm", "mm", "the material's typical kerf",
     "default kerf of this machine, for materials kerf_mm_by_material does not list"),
    ("kerf_mm_by_material", "mm", "none",
     "material key -> list of {thickness_mm, kerf_mm}; omit thickness_mm for any thickness. "
     "Measured values (`platewright coupon --measured`) go here and override every default"),
    ("cut_speed_mm_s", "mm/s", "none (no cut time)",
     "material key -> list of {thickness_mm, speed_mm_s}"),
    ("pierce_s", "s", "none (no pierce time)", "time per pierce for any material"),
    ("pierce_s_by_material", "s", "pierce_s",
     "material key -> list of {thickness_mm, pierce_s}"),
    ("travel_mm_s", "mm/s", "none (no travel time)", "rapid travel speed between contours"),
    ("setup_s", "s", "none (counted as 0)", "set-up time, once per job (loading, focus, framing)"),
    ("hourly_rate", "currency/h", "none (no machine cost)", "machine cost per hour"),
    ("currency", "-", '""', "currency code of hourly_rate and prices (ISO 4217, e.g. XXX for none)"),
    ("fit_allowance_mm_by_material", "mm", "the material library's fit_allowance_mm",
     "material key -> list of {thickness_mm, press, transition, slide, clearance}: signed "
     "allowances added to a nominal diameter or width before kerf; measured with a coupon"),
    ("sheets", "mm, currency", "none (no material cost)",
     "stock sheets: list of {material, thickness_mm, size_mm: [x, y], price}"),
    ("sources", "-", "{}", "field -> where its value comes from"),
)


def describe_machine_profile() -> str:
    """The machine profile file reference as markdown (every field, its unit and default)."""
    rows = ["# Machine profile files", "",
            "A profile is a YAML mapping; every field is optional. Bundled examples live in "
            "`templates/machines/` (`platewright machines`); they hold example values: measure "
            "your own. Give your own file with `--machine PATH.yaml` or `machine: PATH.yaml` in "
            "a design (relative to the design file).", "",
            "| field | unit | default | meaning |", "|---|---|---|---|"]
    rows += [f"| `{f}` | {u} | {d} | {m} |" for f, u, d, m in PROFILE_FIELDS_DOC]
    rows += ["", "Look-ups for a material and thickness take the entry for that thickness "
             "(to 1e-6 mm), else the material's entry without thickness, else the default above.",
             "Kerf is stricter: when `kerf_mm_by_material` has entries for the material at other "
             "thicknesses only, a thickness between two of them is interpolated linearly (with a "
             "`kerf_interpolated` warning) and one outside their range is refused; `kerf_mm` "
             "applies to materials the table does not list.",
             "Profile files must end in .yaml or .yml; problems in one are reported against the "
             "profile file and its own lines.",
             "Cut time estimates are quoted +-20 % (common practice)."]
    return "\n".join(rows) + "\n"


def is_profile_path(value: str) -> bool:
    """True when a ``--machine`` / ``machine:`` value names a file rather than a bundled key."""
    return value.endswith((".yaml", ".yml")) or "/" in value or os.sep in value


#: File name endings of machine profile files; other files are never read as profiles.
PROFILE_SUFFIXES = (".yaml", ".yml")


def read_profile_text(text: str, source: str, key: str) -> MachineProfile:
    """A profile from YAML text; DesignError with the field path and line of a bad field."""
    tree = parse_yaml(text, source)
    if tree.data is None:
        raise DesignError(Problem("", "the profile file is empty", 1, "see describe_machine_profile"),
                          source)
    if not isinstance(tree.data, Mapping):
        what = "a list" if isinstance(tree.data, list) else "a single value"
        raise DesignError(Problem("", f"a machine profile holds a mapping of profile fields "
                                  f"(name, bed_mm, kerf_mm, ...); this file holds {what}", 1,
                                  "see `platewright machines --fields`"), source)
    try:
        return machine_from_mapping(tree.data, key=key)
    except ProfileFieldError as exc:
        raise DesignError(Problem(exc.path, exc.problem, tree.lines.line_of(exc.path), exc.hint),
                          source) from None


def read_profile_file(path: str | Path, key: str | None = None) -> tuple[MachineProfile, str]:
    """The profile in the file at ``path`` (key: ``key`` or the file stem) and the sha256 (hex)
    of the file's bytes. DesignError for a missing or unreadable file, bad YAML, or a bad field
    (path + line)."""
    p = Path(path)
    raw = read_input_file(p, "machine profile")
    try:
        text = raw.decode("utf-8")
    except UnicodeDecodeError as exc:
        raise DesignError(Problem("", f"the machine profile is not UTF-8 text (byte {exc.start})"),
                          str(p)) from exc
    return read_profile_text(text, str(p), key or p.stem), hashlib.sha256(raw).hexdigest()


def load_profile_file(path: str | Path, key: str | None = None) -> MachineProfile:
    """The profile in the file at ``path`` (key: ``key`` or the file stem).

    DesignError for a missing or unreadable file, bad YAML, or a bad field (path + line).
    """
    return read_profile_file(path, key)[0]


def _rows(table: Mapping[str, tuple], value_key: str) -> dict[str, list[dict[str, Any]]]:
    out: dict[str, list[dict[str, Any]]] = {}
    for mat, rows in table.items():
        out[mat] = [({} if t is None else {"thickness_mm": t}) | {value_key: v} for t, v in rows]
    return out


def profile_to_mapping(profile: MachineProfile) -> dict[str, Any]:
    """The file mapping of ``profile`` (fields left at their defaults are omitted)."""
    d: dict[str, Any] = {"name": profile.name}
    if profile.kind:
        d["kind"] = profile.kind
    if profile.notes:
        d["notes"] = profile.notes
    if profile.bed_mm is not None:
        d["bed_mm"] = list(profile.bed_mm)
    if profile.kerf_mm is not None:
        d["kerf_mm"] = profile.kerf_mm
    if profile.kerf_by_material:
        d["kerf_mm_by_material"] = _rows(profile.kerf_by_material, "kerf_mm")
    if profile.cut_speed_mm_s:
        d["cut_speed_mm_s"] = _rows(profile.cut_speed_mm_s, "speed_mm_s")
    for name in ("pierce_s",):
        if getattr(profile, name) is not None:
            d[name] = getattr(profile, name)
    if profile.pierce_s_by_material:
        d["pierce_s_by_material"] = _rows(profile.pierce_s_by_material, "pierce_s")
    for name in ("travel_mm_s", "setup_s", "hourly_rate"):
        if getattr(profile, name) is not None:
            d[name] = getattr(profile, name)
    if profile.currency:
        d["currency"] = profile.currency
    if profile.fit_allowance_by_material:
        d["fit_allowance_mm_by_material"] = {
            mat: [({} if t is None else {"thickness_mm": t}) | dict(fits) for t, fits in rows]
            for mat, rows in profile.fit_allowance_by_material.items()}
    if profile.sheets:
        d["sheets"] = [{"material": s.material, "thickness_mm": s.thickness_mm,
                        "size_mm": list(s.size_mm), **({} if s.price is None else {"price": s.price})}
                       for s in profile.sheets]
    if profile.sources:
        d["sources"] = dict(profile.sources)
    return d


_HEADER = ("# platewright machine profile (field reference: `platewright machines --fields`).\n"
           "# Values are only as good as their measurement: measure your own machine.\n")


def save_profile(profile: MachineProfile, path: str | Path) -> None:
    """Write ``profile`` to ``path`` atomically (a temporary file in the same folder, then an
    atomic rename): a reader sees the old file or the new one, never half of one. Comments of
    an earlier file are not kept."""
    p = Path(path)
    text = _HEADER + yaml.safe_dump(profile_to_mapping(profile), sort_keys=False,
                                    default_flow_style=None, allow_unicode=True, width=100)
    machine_from_mapping(yaml.safe_load(text), key=profile.key)  # never write what cannot load
    p.parent.mkdir(parents=True, exist_ok=True)
    write_atomic(p, text, sync=True)  # keeps the permission bits of the file it replaces


def set_measured(profile: MachineProfile, material_key: str, thickness_mm: float,
                 kerf_mm: float | None = None,
                 fit_allowance_mm: Mapping[str, float] | None = None) -> tuple[MachineProfile,
                                                                               list[str]]:
    """``profile`` with a measured kerf and fit allowances (signed mm) stored for this material
    and thickness (replacing an entry of the same thickness), and the list of changes made."""
    d = profile_to_mapping(profile)
    changes: list[str] = []
    what = f"{material_key} {thickness_mm:g} mm"

    def entry(table: str) -> dict[str, Any]:
        rows = d.setdefault(table, {}).setdefault(material_key, [])
        for row in rows:
            t = row.get("thickness_mm")
            if t is not None and abs(t - thickness_mm) <= 1e-6:
                return row
        row = {"thickness_mm": float(thickness_mm)}
        rows.append(row)
        return row

    if kerf_mm is not None:
        row = entry("kerf_mm_by_material")
        old = row.get("kerf_mm")
        row["kerf_mm"] = round(float(kerf_mm), 4)
        changes.append(f"kerf {what}: {'-' if old is None else f'{old:g}'} -> {row['kerf_mm']:g} mm")
    if fit_allowance_mm:
        row = entry("fit_allowance_mm_by_material")
        for cls, a in fit_allowance_mm.items():
            old = row.get(cls)
            row[cls] = round(float(a), 4)
            changes.append(f"fit {cls} {what}: {'-' if old is None else f'{old:+g}'} -> "
                           f"{row[cls]:+g} mm")
    return machine_from_mapping(d, key=profile.key), changes


def resolve_machine_source(value: str, base_dir: str | Path | None = None,
                           field: str = "--machine", line: int | None = None
                           ) -> tuple[MachineProfile, Path | None, str | None]:
    """A bundled profile key or a profile file path (relative paths from ``base_dir``, default
    the working folder): the profile, and for a file its path and the sha256 of its bytes
    (None, None for a bundled key). DesignError naming ``field`` (at ``line``) for an unknown
    key, a file that does not end in .yaml / .yml or does not exist; a bad profile file gives
    problems whose ``source`` is the profile file (with its own lines), each saying which field
    named it."""
    if is_profile_path(value):
        p = Path(value)
        if p.suffix.lower() not in PROFILE_SUFFIXES:
            raise DesignError(Problem(field, f"'{value}' is not a machine profile file", line,
                                      "profile files end in .yaml or .yml; or give a bundled "
                                      "key (`platewright machines`)"))
        if not p.is_absolute() and base_dir is not None:
            p = Path(base_dir) / p
        if not p.exists():
            raise DesignError(Problem(field, f"no machine profile file '{p}'", line,
                                      "give a bundled key (`platewright machines`) or a file"))
        try:
            profile, digest = read_profile_file(p)
        except DesignError as exc:
            named = f"{field} (line {line})" if line is not None else field
            raise DesignError([dataclasses.replace(
                q, source=q.source or exc.source or str(p),
                hint=(f"{q.hint}; " if q.hint else "") + f"profile named by {named}")
                for q in exc.problems], exc.source) from None
        return profile, p, digest
    try:
        return get_machine(value), None, None
    except KeyError:
        raise DesignError(Problem(field, f"unknown machine profile '{value}'", line,
                                  suggest(value, sorted(load_machines()))
                                  + "; or give a profile file PATH.yaml")) from None


def resolve_machine(value: str, base_dir: str | Path | None = None,
                    field: str = "--machine", line: int | None = None) -> MachineProfile:
    """A bundled profile key or a profile file path (relative paths from ``base_dir``, default
    the working folder). DesignError naming ``field`` for an unknown key or a bad file."""
    return resolve_machine_source(value, base_dir, field, line)[0]
