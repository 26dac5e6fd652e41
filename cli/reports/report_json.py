"""report.json, schema_version 1: the public, scriptable contract (see DEVELOPERS.md)."""

from __future__ import annotations

from importlib.metadata import PackageNotFoundError, version
from typing import Any

from platewright.geometry.design.loader import Design
from platewright.geometry.plate.pipeline import BuildResult, BuiltPlate
from platewright.geometry.shop.costing import combine_estimates, estimate_plate

__all__ = ["SCHEMA_VERSION", "tool_version", "build_report", "plate_entry", "input_entries"]

SCHEMA_VERSION = 1


def tool_version() -> str:
    """Installed platewright version."""
    try:
        return version("platewright")
    except PackageNotFoundError:  # pragma: no cover - running from a bare checkout
        return "0+unknown"


def _r(x: float, nd: int = 6) -> float:
    return float(round(float(x), nd)) + 0.0  # no negative zero in the report


def _feature_entry(row: Any) -> dict[str, Any]:
    entry: dict[str, Any] = {"id": row.feature_id, "kind": row.kind,
                             "center_mm": [_r(row.center_mm[0]), _r(row.center_mm[1])]}
    entry.update({key: _r(value) for key, value in row.nominal.items()})
    if row.fit_class:
        entry["fit_class"] = row.fit_class
    entry["fit_allowance_mm"] = _r(row.fit_allowance_mm)
    entry.update({key: _r(value) for key, value in row.cut.items()})
    if row.note:
        entry["note"] = row.note
    return entry


def plate_entry(built: BuiltPlate, files: dict[str, str]) -> dict[str, Any]:
    """The report entry of one plate; ``files`` maps kind (dxf, svg, stl, glb) to relative paths."""
    p, m = built.plate, built.mass
    return {
        "name": p.name,
        "part_number": p.part_number,
        "quantity": p.quantity,
        "material": p.material.key,
        "thickness_mm": _r(p.thickness_mm),
        "kerf_mm": _r(p.kerf_mm),
        "kerf_source": p.kerf_source,
        "area_mm2": _r(m.area_mm2),
        "mass_g": _r(m.mass_g),
        "centroid_mm": [_r(m.centroid_mm[0]), _r(m.centroid_mm[1])],
        "second_moment_mm4": {k: _r(v, 3) for k, v in m.second_moment_mm4.items()},
        "inertia_g_mm2": {k: _r(v, 3) for k, v in m.inertia_g_mm2.items()},
        "bbox_mm": [_r(v) for v in built.bbox_mm],
        "cut_length_mm": _r(built.cut_length_mm),
        "pierce_count": built.pierce_count,
        "files": dict(files),
        "features": [_feature_entry(row) for row in built.dimensions],
        "findings": [
            {"level": f.level, "rule": f.rule, "features": list(f.features),
             "value": None if f.value is None else _r(f.value),
             "limit": None if f.limit is None else _r(f.limit), "message": f.message}
            for f in built.findings
        ],
    }


def input_entries(design: Design) -> list[dict[str, str]]:
    """The report's ``inputs``: role, path and sha256 of every file the design was read from."""
    return [{"role": f.role, "path": f.path, "sha256": f.sha256} for f in design.inputs]


def build_report(result: BuildResult, files: dict[str, dict[str, str]]) -> dict[str, Any]:
    """The whole report.json document for a build; ``files[plate name]`` as in ``plate_entry``."""
    d, t = result.design, result.total
    estimates = [estimate_plate(b, d.machine) for b in result.plates]
    job = combine_estimates(estimates, [max(1, b.plate.quantity) for b in result.plates],
                            machine=d.machine, include_setup=True)
    plates = [plate_entry(b, files.get(b.plate.name, {})) for b in result.plates]
    for entry, est in zip(plates, estimates):
        entry["cost"] = est.to_report()  # one plate, quantity 1, no set-up
    report = {
        "schema_version": SCHEMA_VERSION,
        "tool": {"name": "platewright", "version": tool_version()},
        "design": {"name": d.name, "file": str(d.source_path), "sha256": d.sha256},
        # what a rerun needs besides the tool version: every --set (and --machine) given, and
        # every file read with the sha256 of its bytes
        "overrides": list(d.overrides),
        "inputs": input_entries(d),
        "units": {"length": "mm", "mass": "g", "force": "N", "stress": "MPa", "time": "s"},
        "machine": {"key": d.machine.key, "name": d.machine.name,
                    "bed_mm": None if d.machine.bed_mm is None else [_r(v) for v in d.machine.bed_mm]},
        "material_cautions": list(d.warnings),
        "total_mass_g": _r(t.mass_g),
        "total_inertia_g_mm2": {k: _r(v, 3) for k, v in t.inertia_g_mm2.items()},
        "plates": plates,
        # every plate times its quantity, plus the machine's set-up time once
        "job": {"cost": job.to_report()},
    }
    return report
