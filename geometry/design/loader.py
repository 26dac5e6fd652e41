"""The validated design: :class:`Design` and the loaders :func:`load_design` and
:func:`load_design_text`.

Loading runs: YAML with lines -> ``--set`` overrides on the raw tree -> schema validation
(expressions evaluated against ``references``) -> library look-ups (materials, refused
materials, machine profile). Every problem is collected and raised as one DesignError.

Units: lengths mm, angles degrees (as in the file).
"""

from __future__ import annotations

import hashlib
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from platewright.geometry import library
from platewright.geometry.design.overrides import apply_overrides
from platewright.geometry.design.schema import (
    DEFAULT_LABEL_HEIGHT_MM,
    MAX_HOLES_PER_DESIGN,
    MAX_HOLES_PER_PLATE,
    suggest,
    validate_design,
)
from platewright.geometry.design.yamlsource import (
    MAX_FILE_BYTES,
    LineMap,
    format_path,
    parse_yaml,
    read_input_file,
)
from platewright.geometry.errors import DesignError, Problem
from platewright.geometry.model import Material
from platewright.geometry.shop import machines
from platewright.geometry.shop.machine_files import is_profile_path, resolve_machine_source
from platewright.geometry.shop.machines import MachineProfile

__all__ = [
    "Design",
    "InputFile",
    "PlateSpec",
    "OutlineSpec",
    "FeatureSpec",
    "LabelSpec",
    "load_design",
    "load_design_text",
    "MAX_DESIGN_BYTES",
    "hole_count",
]

#: Largest design file read, bytes.
MAX_DESIGN_BYTES = MAX_FILE_BYTES


@dataclass(frozen=True)
class OutlineSpec:
    """A plate outline as validated: ``kind`` (rounded_rect | polygon | around) and its fields
    (floats in mm / degrees, points as (x, y) tuples). ``refs``: references its position uses."""

    kind: str
    params: dict[str, Any]
    path: str
    line: int | None
    refs: tuple[str, ...] = ()


@dataclass(frozen=True)
class FeatureSpec:
    """One feature entry as validated: ``id``, ``type`` and its fields (``params``, including
    ``at_mm`` as an (x, y) tuple in mm). ``refs``: references its position depends on
    (directly or through other references), sorted."""

    id: str
    type: str
    params: dict[str, Any]
    path: str
    line: int | None
    refs: tuple[str, ...] = ()


@dataclass(frozen=True)
class LabelSpec:
    """Engraved label settings: centre (mm, None = automatic), text height (mm), rotation
    (degrees), text (None = automatic: name, part number, material, kerf)."""

    at_mm: tuple[float, float] | None
    height_mm: float
    rotation_deg: float
    text: str | None


@dataclass(frozen=True)
class PlateSpec:
    """One validated plate: material (resolved from the library), thickness (mm), kerf override
    (mm, None = from design/machine/material), outline, features, label (None = no label)."""

    name: str
    part_number: str
    quantity: int
    material: Material
    thickness_mm: float
    kerf_mm: float | None
    outline: OutlineSpec
    features: tuple[FeatureSpec, ...]
    label: LabelSpec | None
    path: str
    line: int | None


@dataclass(frozen=True)
class InputFile:
    """A file a design was read from: ``role`` (``design`` or ``machine_profile``), ``path`` as
    it was opened (relative to the working folder, or absolute) and ``sha256`` of its bytes."""

    role: str
    path: str
    sha256: str


@dataclass(frozen=True)
class Design:
    """A validated, immutable design.

    ``sha256`` of the file bytes (of the UTF-8 text for :func:`load_design_text`); ``material``
    the design's material key; ``thickness_mm``; ``machine`` the profile in use; ``kerf_mm`` the
    design-wide kerf override (mm) or None; ``references`` name -> value (file order);
    ``reference_depends`` name -> every reference it uses; ``load_cases`` and ``components``
    the raw entries of those sections; ``vehicle_mass_g`` the mass for collision cases (g) or
    None; ``warnings`` material cautions for the materials in use;
    ``overrides`` the ``--set`` texts applied; ``inputs`` every file read (the design file,
    a machine profile file), so the build can be reproduced.
    """

    name: str
    source_path: str
    sha256: str
    material: str
    thickness_mm: float
    machine: MachineProfile
    kerf_mm: float | None
    references: dict[str, float]
    plates: tuple[PlateSpec, ...]
    load_cases: tuple[dict[str, Any], ...] = ()
    vehicle_mass_g: float | None = None
    components: tuple[dict[str, Any], ...] = ()
    reference_depends: dict[str, frozenset[str]] = field(default_factory=dict)
    warnings: tuple[str, ...] = ()
    overrides: tuple[str, ...] = ()
    inputs: tuple[InputFile, ...] = ()
    lines: LineMap = field(default_factory=LineMap, repr=False, compare=False)

    def line_of(self, path: str) -> int | None:
        """1-based line in the design file of a field path such as ``plates[0].features[2]``
        (or of its closest enclosing field); None when unknown or set by an override."""
        return self.lines.line_of(path)

    def plate(self, name: str) -> PlateSpec:
        """The plate spec called ``name``; KeyError if absent."""
        for p in self.plates:
            if p.name == name:
                return p
        raise KeyError(name)


class _Resolver:
    """Library look-ups with collected problems."""

    def __init__(self, lines: LineMap, base_dir: Path | None = None) -> None:
        self.lines = lines
        self.base_dir = base_dir
        self.problems: list[Problem] = []
        self.warnings: list[str] = []
        self.files: list[InputFile] = []
        self._materials: dict[str, Material] | None = None

    def fail(self, path: str, message: str, hint: str = "") -> None:
        if self.lines.is_overridden(path):
            hint = f"{hint} (value from --set)" if hint else "value from --set"
        self.problems.append(Problem(path, message, self.lines.line_of(path), hint))

    def material(self, key: str, path: str) -> Material | None:
        if self._materials is None:
            self._materials = library.load_materials()
        mat = self._materials.get(key)
        if mat is None:
            self.fail(path, f"unknown material '{key}'", suggest(key, sorted(self._materials)))
            return None
        if not mat.laser_safe:
            self.fail(path, f"material '{key}' ({mat.name}) must never be laser-cut: "
                      f"{mat.refusal_reason}", "choose another material")
            return None
        caution = f"{mat.name}: {mat.warning}"
        if mat.warning and caution not in self.warnings:
            self.warnings.append(caution)
        return mat

    def machine(self, value: Any, path: str) -> MachineProfile | None:
        if isinstance(value, str) and is_profile_path(value):
            # a profile file: relative to the design file, or to the working folder for --set
            base = None if self.lines.is_overridden(path) else self.base_dir
            try:
                profile, file, digest = resolve_machine_source(value, base, path,
                                                               self.lines.line_of(path))
            except DesignError as exc:
                self.problems.extend(exc.problems)
                return None
            if file is not None and digest is not None:
                self.files.append(InputFile("machine_profile", str(file), digest))
            return profile
        try:
            if isinstance(value, Mapping):
                return machines.machine_from_mapping({k: v for k, v in value.items()
                                                      if v is not None and v != ""})
            return machines.get_machine(value)
        except KeyError:
            keys = sorted(machines.load_machines())
            self.fail(path, f"unknown machine profile '{value}'", suggest(str(value), keys)
                      + "; or give an inline mapping {name, bed_mm, kerf_mm}")
        except ValueError as exc:
            self.fail(path, str(exc))
        return None


def _tuple_points(params: dict[str, Any]) -> dict[str, Any]:
    out = dict(params)
    for key, v in params.items():
        if key.endswith("_mm") and isinstance(v, list) and len(v) == 2 and all(
            isinstance(c, float) for c in v
        ):
            out[key] = (v[0], v[1])
    return out


def _plate(d: dict, i: int, top: dict, top_material: Material | None, res: _Resolver,
           val: Any) -> PlateSpec | None:
    path = format_path(["plates", i])
    if d["material"] is not None:
        material = res.material(d["material"], f"{path}.material")
    else:
        material = top_material
    out_raw = d["outline"]
    kind = out_raw["kind"]
    opath = f"{path}.outline.{kind}"
    outline = OutlineSpec(kind, _tuple_points({k: v for k, v in out_raw.items() if k != "kind"}),
                          opath, res.lines.line_of(opath),
                          tuple(sorted(val.position_refs.get(opath, ()))))
    feats = []
    for j, f in enumerate(d["features"]):
        fpath = format_path(["plates", i, "features", j])
        params = _tuple_points({k: v for k, v in f.items() if k not in ("id", "type")})
        feats.append(FeatureSpec(f["id"], f["type"], params, fpath, res.lines.line_of(fpath),
                                 tuple(sorted(val.position_refs.get(fpath, ())))))
    lab = d["label"]
    label = None
    if lab is True:
        label = LabelSpec(None, DEFAULT_LABEL_HEIGHT_MM, 0.0, None)
    elif isinstance(lab, dict):
        at = lab["at_mm"]
        label = LabelSpec(None if at is None else (at[0], at[1]), lab["height_mm"],
                          lab["rotation_deg"], lab["text"])
    if material is None:
        return None
    return PlateSpec(
        name=d["name"], part_number=d["part_number"], quantity=d["quantity"], material=material,
        thickness_mm=d["thickness_mm"] if d["thickness_mm"] is not None else top["thickness_mm"],
        kerf_mm=d["kerf_mm"], outline=outline, features=tuple(feats), label=label, path=path,
        line=res.lines.line_of(path))


def hole_count(spec: PlateSpec) -> int:
    """How many inner contours the plate's features cut: a fastener_array counts rows x cols,
    a mount its holes plus the pilot (a strap mount two slots), every other feature one."""
    motors = None
    n = 0
    for f in spec.features:
        p = f.params
        if f.type == "fastener_array":
            n += p["rows"] * p["cols"]
        elif f.type == "custom_mount":
            n += len(p["holes"]) + (p["pilot_diameter_mm"] is not None)
        elif f.type == "motor_mount":
            motors = library.load_motors() if motors is None else motors
            m = motors.get(p["motor"])
            if m is None:  # unknown motor: refused when the plate is built
                n += 1
            else:
                n += 2 if p["strap"] else len(m.holes) + (m.boss_diameter_mm is not None)
        else:
            n += 1
    return n


def _check_counts(plates: Sequence[PlateSpec], res: _Resolver) -> None:
    """Refuse plates and designs with more holes than MAX_HOLES_PER_PLATE / _PER_DESIGN."""
    total = 0
    for spec in plates:
        n = hole_count(spec)
        total += n
        if n > MAX_HOLES_PER_PLATE:
            res.fail(f"{spec.path}.features", f"plate '{spec.name}' would cut {n:,} holes",
                     f"at most {MAX_HOLES_PER_PLATE:,} per plate (a fastener_array counts rows x "
                     "cols, a mount its holes)")
    if total > MAX_HOLES_PER_DESIGN:
        res.fail("plates", f"the design would cut {total:,} holes",
                 f"at most {MAX_HOLES_PER_DESIGN:,} in all plates together")


def _design(tree: Any, lines: LineMap, source_path: str, sha256: str,
            overrides: Sequence[str], base_dir: Path | None = None) -> Design:
    val = validate_design(tree, lines)
    if val.data is None:
        raise DesignError(val.problems, source_path)
    top = val.data
    res = _Resolver(lines, base_dir)
    top_material = res.material(top["material"], "material")
    machine = res.machine(top["machine"], "machine")
    plates = [_plate(p, i, top, top_material, res, val) for i, p in enumerate(top["plates"])]
    _check_counts([p for p in plates if p is not None], res)
    if res.problems or machine is None:
        raise DesignError(res.problems, source_path)
    return Design(
        name=top["name"], source_path=source_path, sha256=sha256, material=top["material"],
        thickness_mm=top["thickness_mm"], machine=machine, kerf_mm=top["kerf_mm"],
        references=dict(val.references), plates=tuple(p for p in plates if p is not None),
        load_cases=tuple(top["load_cases"]), components=tuple(top["components"]),
        vehicle_mass_g=top.get("vehicle_mass_g"),
        reference_depends=dict(val.depends), warnings=tuple(res.warnings),
        overrides=tuple(overrides),
        inputs=(InputFile("design", source_path, sha256), *res.files), lines=lines)


def load_design_text(text: str, name: str = "<text>", overrides: Sequence[str] = ()) -> Design:
    """Load a design from YAML text (``name`` stands for the file in messages).

    Raises DesignError listing every problem (field path, line, what is valid).
    """
    tree = parse_yaml(text, name)
    data = apply_overrides(tree.data, overrides, tree.lines) if overrides else tree.data
    digest = hashlib.sha256(text.encode("utf-8")).hexdigest()
    return _design(data, tree.lines, name, digest, overrides)


def load_design(path: str | Path, overrides: Sequence[str] = ()) -> Design:
    """Load and validate the design file at ``path``, applying ``--set`` overrides first.

    ``Design.sha256`` is the hash of the file's bytes. Raises DesignError (a missing or
    unreadable file, not a regular file or larger than MAX_DESIGN_BYTES, not UTF-8, bad YAML,
    bad fields, refused material, ...).
    """
    p = Path(path)
    raw = read_input_file(p, "design file")
    try:
        text = raw.decode("utf-8")
    except UnicodeDecodeError as exc:
        raise DesignError(Problem("", f"the design file is not UTF-8 text (byte {exc.start})"),
                          str(p)) from exc
    tree = parse_yaml(text, str(p))
    data = apply_overrides(tree.data, overrides, tree.lines) if overrides else tree.data
    return _design(data, tree.lines, str(p), hashlib.sha256(raw).hexdigest(), overrides,
                   base_dir=p.parent)
