"""The declarative schema of a design file: one table of field specs, used to validate and to
print the design-file reference (:func:`describe_schema`).

A spec says the type, the default, the valid range or values and the meaning of a field; the unit
is read from the field name's suffix (``_mm``, ``_deg``). Numbers may be written as expressions
over the named ``references`` (see :mod:`.expressions`). Validation collects every problem (path,
line, what is wrong, what is valid) and returns them together; nothing is raised here.

The spec types and the validation machinery live in :mod:`.schema_spec`; this module holds the
declared tables and the entry points :func:`validate_design`, :func:`allowed_keys` and
:func:`describe_schema`. To add a section later, add a :class:`Field` to ``DESIGN`` (or a
variant to ``FEATURE_TYPES``); ``load_cases`` and ``components`` are declared as lists of raw
mappings for now.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from typing import Any

from platewright.geometry.design.expressions import (
    MAX_EXPRESSION_CHARS,
    ExpressionError,
    resolve_references,
)
from platewright.geometry.design.spec import BAD, Context, Spec, suggest, unit_of
from platewright.geometry.design.spec_records import (
    AnyOf,
    Choice,
    Field,
    ListOf,
    Raw,
    Record,
    RefTable,
    Tagged,
    markdown_table,
)
from platewright.geometry.design.spec_values import (
    MAX_LIST_ITEMS,
    MAX_NAME_CHARS,
    Flag,
    Integer,
    Number,
    NumberList,
    NumberOrList,
    Point,
    PointList,
    Text,
)
from platewright.geometry.design.yamlsource import MAX_DEPTH, MAX_FILE_BYTES, LineMap, format_path
from platewright.geometry.errors import Problem

__all__ = [
    "DESIGN", "PLATE", "OUTLINE", "LABEL", "MACHINE", "FEATURE_TYPES", "FIT_CLASSES", "LIGHTENING",
    "KEEP_OUT_ROLES",
    "DEFAULT_LABEL_HEIGHT_MM", "Validated",
    "validate_design", "describe_schema", "allowed_keys",
    # re-exported from .schema_spec for the modules that import them from here
    "unit_of", "suggest",
]


FIT_CLASSES = ("press", "transition", "slide", "clearance")
#: Smallest size or corner radius (mm) other than 0: below it a contour degenerates in floating
#: point (a radius of 1e-308 mm divides by zero) and no machine could make it anyway.
MIN_SIZE_MM = 0.001
#: Limits on counts, refused before any geometry is built (a design that needs more is not a
#: chassis plate: split it). Holes count every contour a feature cuts: a fastener_array
#: counts rows x cols, a mount its holes and pilot.
MAX_PLATES = 100
MAX_FEATURES_PER_PLATE = 1000
MAX_HOLES_PER_PLATE = 1000
MAX_HOLES_PER_DESIGN = 5000
MAX_QUANTITY = 1000
MAX_ARRAY_SIDE = 1000
MAX_MOUNT_HOLES = 100
MAX_LOAD_CASES = 100
MAX_COMPONENTS = 1000
MAX_LABEL_CHARS = 200
#: File names that Windows reserves whatever the extension (compared ignoring case).
RESERVED_NAMES = frozenset({"con", "prn", "aux", "nul", *(f"com{i}" for i in range(1, 10)),
                            *(f"lpt{i}" for i in range(1, 10))})
_SIZE = Number(gt=0.0, le=5000.0, tiny=MIN_SIZE_MM)
_MM = Number(ge=-5000.0, le=5000.0)
_RADIUS_MM = Number(ge=0.0, le=5000.0, tiny=MIN_SIZE_MM)
_ANGLE = Number(ge=-360.0, le=360.0)
_AT = Field(Point(_MM), "position of the centre [x, y] in plate coordinates", required=True,
            position=True)
_ID = Field(Text(word=True), "feature id, unique on the plate (used by rules, loads, --set)",
            required=True)
_NOTE = Field(Text(), "free text kept with the feature (e.g. which bearing)", default="")
_FIT = Field(Text(FIT_CLASSES), "fit class; its allowance comes from the material library",
             required=True)
_PILOT_FIT = Field(Text(FIT_CLASSES), "fit class of the pilot hole over the motor's centring "
                   "boss; hole = boss + the material's allowance for the class (clearance: the "
                   "boss slips in, common practice)", default="clearance")
_SERIES = Field(Text(("fine", "medium", "coarse")), "ISO 273 clearance series", default="medium")
_SCREW = Field(Text(), "metric screw size, e.g. M3 (ISO 273 table, M2 to M8)", required=True)


def _feature(kind: str, title: str, checks: tuple = (), **fields: Field) -> Record:
    return Record(title, {"id": _ID, "type": Field(Text((kind,)), "feature type", required=True),
                          "at_mm": _AT, **fields, "note": _NOTE}, checks)


def _check_slotted(d: dict, ctx: Context, path: str) -> None:
    has_travel = d["travel_mm"] is not None
    has_angle = d["trim_deg"] is not None or d["span_mm"] is not None
    if has_travel == has_angle or (has_angle and (d["trim_deg"] is None or d["span_mm"] is None)):
        ctx.fail(path, "give either travel_mm, or both trim_deg and span_mm",
                 "travel_mm = span_mm * tan(trim_deg)")


_HOLE_SPEC = Record("mount hole", {
    "at_mm": Field(Point(_MM), "hole centre relative to the mount centre [x, y]", required=True),
    "diameter_mm": Field(_SIZE, "hole diameter", required=True)})

FEATURE_TYPES: dict[str, Record] = {
    "hole": _feature("hole", "round hole", diameter_mm=Field(_SIZE, "nominal diameter", required=True),
                     fit_allowance_mm=Field(Number(ge=-2.0, le=2.0),
                                            "signed allowance added to the diameter", default=0.0)),
    "bore": _feature("bore", "bearing or shaft bore", diameter_mm=Field(_SIZE, "nominal diameter (e.g. "
                     "the bearing's outside diameter)", required=True), fit=_FIT),
    "slotted_bore": _feature(
        "slotted_bore", "bore that can slide along a direction (alignment trim)", (_check_slotted,),
        diameter_mm=Field(_SIZE, "nominal bore diameter = slot width", required=True), fit=_FIT,
        travel_mm=Field(Number(gt=0.0, le=500.0), "slide travel (centre distance of the ends)"),
        trim_deg=Field(Number(gt=0.0, le=45.0), "trim angle swept end to end (with span_mm)"),
        span_mm=Field(_SIZE, "distance to the axle's other support (with trim_deg)"),
        direction_deg=Field(_ANGLE, "direction of travel from +x", default=0.0)),
    "slot": _feature("slot", "straight slot (stadium)",
                     length_mm=Field(_SIZE, "overall length", required=True),
                     width_mm=Field(_SIZE, "width", required=True),
                     angle_deg=Field(_ANGLE, "direction of the length from +x", default=0.0)),
    "cutout": _feature("cutout", "rectangular cut-out (cable pass-through)",
                       width_mm=Field(_SIZE, "size along x before rotation", required=True),
                       height_mm=Field(_SIZE, "size along y before rotation", required=True),
                       corner_radius_mm=Field(_RADIUS_MM, "corner radius", default=0.0),
                       angle_deg=Field(_ANGLE, "rotation from +x", default=0.0)),
    "fastener": _feature("fastener", "clearance hole for a screw", screw=_SCREW, series=_SERIES),
    "fastener_array": _feature("fastener_array",
        "rows x cols clearance holes (stand-offs)", screw=_SCREW, series=_SERIES,
        rows=Field(Integer(1, MAX_ARRAY_SIDE), "number of rows (along y)", required=True),
        cols=Field(Integer(1, MAX_ARRAY_SIDE), "number of columns (along x)", required=True),
        pitch_mm=Field(Point(Number(ge=0.0, le=5000.0, tiny=MIN_SIZE_MM)),
                       "hole pitch [along x, along y]", required=True),
        angle_deg=Field(_ANGLE, "rotation of the pattern from +x", default=0.0),
        centered=Field(Flag(), "true: at_mm is the pattern centre; false: the first hole",
                       default=True)),
    "motor_mount": _feature("motor_mount",
        "motor face: pilot hole over the centring boss and mounting holes from the motor library",
        motor=Field(Text(word=True), "motor pattern key from the library", required=True),
        angle_deg=Field(_ANGLE, "rotation of the pattern from +x", default=0.0),
        strap=Field(Flag(), "the motor lies on the plate: cut two clamp-strap slots INSTEAD of "
                    "the face pattern (no pilot, no mounting holes; round gearmotors)",
                    default=False),
        pilot_fit=_PILOT_FIT),
    "custom_mount": _feature("custom_mount",
        "your own mounting pattern",
        holes=Field(ListOf(_HOLE_SPEC, min_len=1, max_len=MAX_MOUNT_HOLES), "the holes",
                    required=True),
        pilot_diameter_mm=Field(_SIZE, "optional centring boss diameter; its hole gets pilot_fit"),
        angle_deg=Field(_ANGLE, "rotation of the pattern from +x", default=0.0),
        pilot_fit=_PILOT_FIT),
}

_RADIUS = Field(_RADIUS_MM, "corner radius", default=0.0)
OUTLINE = Choice({
    "rounded_rect": Record("rounded rectangle", {
        "at_mm": Field(Point(_MM), "centre [x, y]", default=[0.0, 0.0], position=True),
        "width_mm": Field(_SIZE, "size along x", required=True),
        "height_mm": Field(_SIZE, "size along y", required=True),
        "corner_radius_mm": _RADIUS,
        "angle_deg": Field(_ANGLE, "rotation from +x", default=0.0)}),
    "polygon": Record("polygon with filleted corners", {
        "points_mm": Field(PointList(3), "corners in order [[x, y], ...]", required=True,
                           position=True),
        "corner_radii_mm": Field(NumberOrList(_RADIUS_MM),
                                 "one radius for all corners, or one per corner", default=0.0)}),
    "around": Record("rectangle around given coordinates", {
        "x_mm": Field(NumberList(_MM), "x coordinates to enclose", required=True, position=True),
        "y_mm": Field(NumberList(_MM), "y coordinates to enclose", required=True, position=True),
        "margin_mm": Field(Number(ge=0.0, le=5000.0), "material beyond the outermost coordinates",
                           required=True),
        "corner_radius_mm": _RADIUS}),
})

#: Text height of an engraved label when the design does not give one (mm).
DEFAULT_LABEL_HEIGHT_MM = 3.0
LABEL = AnyOf(Flag(), Record("engraved label", {
    "at_mm": Field(Point(_MM), "text centre [x, y] (default: near the lower edge)"),
    "height_mm": Field(Number(gt=0.0, le=100.0), "text height",
                       default=DEFAULT_LABEL_HEIGHT_MM),
    "rotation_deg": Field(_ANGLE, "text rotation", default=0.0),
    "text": Field(Text(max_len=MAX_LABEL_CHARS), "text (default: name, part number, material, "
                  "kerf)"),
}))

def _check_plate_name(d: dict, ctx: Context, path: str) -> None:
    if d["name"].casefold() in RESERVED_NAMES:
        ctx.fail(format_path([path, "name"]), f"'{d['name']}' is a reserved device name on "
                 "Windows and cannot be a file name", "choose another plate name (not CON, PRN, "
                 "AUX, NUL, COM1-COM9, LPT1-LPT9, in any case)")


PLATE = Record("plate", {
    "name": Field(Text(word=True), "plate name, unique also ignoring case, not a reserved device "
                  "name such as CON or NUL (file names, --set paths)", required=True),
    "part_number": Field(Text(max_len=MAX_LABEL_CHARS), "part number for the label and the "
                         "report", default=""),
    "quantity": Field(Integer(1, MAX_QUANTITY), "how many to cut", default=1),
    "material": Field(Text(word=True), "material key for this plate (default: the design's)"),
    "thickness_mm": Field(Number(gt=0.0, le=50.0), "sheet thickness (default: the design's)"),
    "kerf_mm": Field(Number(ge=0.0, le=2.0), "kerf for this plate (default: design/machine)"),
    "outline": Field(OUTLINE, "the plate's outer contour", required=True),
    "features": Field(ListOf(Tagged("type", FEATURE_TYPES), unique="id",
                             max_len=MAX_FEATURES_PER_PLATE),
                      "holes, bores, slots, mounts and cut-outs", default=[]),
    "label": Field(LABEL, "engraved label: true, false, or settings", default=True),
}, (_check_plate_name,))

_AS_PROFILE = "as in a bundled machine profile file (templates/machines)"
MACHINE = Record("inline machine profile", {
    "name": Field(Text(), "machine name", default="inline machine"),
    "kind": Field(Text(), "machine kind, e.g. co2_laser", default=""),
    "notes": Field(Text(), "free text", default=""),
    "bed_mm": Field(Point(_SIZE), "usable bed size [x, y]"),
    "kerf_mm": Field(Number(ge=0.0, le=2.0), "default kerf of this machine"),
    "kerf_mm_by_material": Field(Spec(), "kerf by material key: list of {thickness_mm, kerf_mm}, "
                                 + _AS_PROFILE),
    "cut_speed_mm_s": Field(Spec(), "cut speed by material key: list of {thickness_mm, "
                            "speed_mm_s}, " + _AS_PROFILE),
    "pierce_s": Field(Number(ge=0.0), "time per pierce, s"),
    "pierce_s_by_material": Field(Spec(), "time per pierce by material key: list of "
                                  "{thickness_mm, pierce_s}, " + _AS_PROFILE),
    "setup_s": Field(Number(ge=0.0), "set-up time per job, s"),
    "fit_allowance_mm_by_material": Field(Spec(), "measured fit allowances by material key: list "
                                          "of {thickness_mm, press, transition, slide, clearance}, "
                                          + _AS_PROFILE),
    "travel_mm_s": Field(Number(gt=0.0), "rapid travel speed, mm/s"),
    "hourly_rate": Field(Number(ge=0.0), "machine cost per hour in `currency`"),
    "currency": Field(Text(), "currency code of hourly_rate and prices", default=""),
    "sheets": Field(Spec(), "stock sheets: list of {material, thickness_mm, size_mm, price}"),
    "sources": Field(Spec(), "field -> where its value comes from"),
})

_OPT_MM = Number(gt=0.0, le=500.0)
_ZONE = Record("solid zone (a box kept solid; open sides reach the plate edge)", {
    "plate": Field(Text(word=True), "plate name (default: every plate)"),
    "x_min_mm": Field(_MM, "left side of the box (default: open)"),
    "x_max_mm": Field(_MM, "right side of the box (default: open)"),
    "y_min_mm": Field(_MM, "lower side of the box (default: open)"),
    "y_max_mm": Field(_MM, "upper side of the box (default: open)"),
})
#: Keep-out roles of fea.lighten.keep_outs (geometry may not import fea: kept in step by a test).
KEEP_OUT_ROLES = ("bearing_seat", "press_fit", "shaft_bore", "fastener", "slot", "motor_face",
                  "cutout")
_KEEP_OUT = Record("keep-out of one feature (overrides the ring its role gives)", {
    "feature": Field(Text(), "feature id, or the id of a fastener array or mount (all its holes)",
                     required=True),
    "plate": Field(Text(word=True), "plate name (default: every plate with that feature)"),
    "role": Field(Text(KEEP_OUT_ROLES), "what the feature does; sets the default ring (see "
                  "`platewright lighten` in the README)"),
    "ring_mm": Field(_OPT_MM, "ring of solid material kept round the feature's edge"),
})
#: The ``lightening:`` section read by ``platewright lighten`` (fea.design_region).
LIGHTENING = Record("lightening (`platewright lighten`)", {
    "style": Field(Text(("organic", "pattern", "both")), "organic: free-form holes from the "
                   "optimised density; pattern: a regular array graded by it; both: compare",
                   default="organic"),
    "deflection_budget": Field(Number(ge=0.0, le=10.0), "stiffness budget as a share: every load "
                               "case may deflect at most (1 + budget) x the solid plate's, on top "
                               "of its own limits (e.g. 0.1; default: only the cases' limits)"),
    "budget_curve": Field(NumberList(Number(ge=0.0, le=10.0)), "budgets at which the report also "
                          "plots the continuous optimum's mass saving (e.g. [0.02, 0.05, 0.1, "
                          "0.2]; each costs one more optimisation, no finite-element check)"),
    "plates": Field(ListOf(Text(word=True), max_len=MAX_PLATES), "plates to lighten (default: "
                    "every plate with load cases)", default=[]),
    "edge_margin_mm": Field(_OPT_MM, "solid band along the outline (default: max(1.5 x "
                            "thickness, min_web_mm))"),
    "feature_ring_mm": Field(_OPT_MM, "one solid ring round every feature (default: by what "
                             "each feature does, see keep_outs)"),
    "min_web_mm": Field(_OPT_MM, "web between new holes and to every contour (default: max(2 x "
                        "thickness, the material's min web))"),
    "corner_radius_mm": Field(_OPT_MM, "smallest corner radius of a new hole (default: max("
                              "thickness, 1 mm))"),
    "min_hole_mm": Field(_OPT_MM, "smallest width of a new hole (default: max(3 x thickness, "
                         "2 x corner_radius_mm))"),
    "chord_tol_mm": Field(Number(gt=0.0, le=1.0), "largest distance of a hole's lines and arcs "
                          "from the traced shape", default=0.05),
    "solid_zones": Field(ListOf(_ZONE, max_len=MAX_PLATES), "boxes kept solid (no holes)", default=[]),
    "keep_outs": Field(ListOf(_KEEP_OUT, max_len=MAX_FEATURES_PER_PLATE), "per-feature role or ring width",
                       default=[]),
    "keep_footprints": Field(Flag(), "keep component footprints and load areas solid",
                             default=True),
    "pattern_shape": Field(Text(("round", "triangle", "slot", "grid")), "hole shape of the pattern "
                           "style", default="grid"),
    "pattern_pitch_mm": Field(_OPT_MM, "lattice pitch of the pattern style (default: bounding-"
                              "box diagonal / 12)"),
    "mesh_size_mm": Field(_OPT_MM, "element size of the optimisation mesh (default: bounding-"
                          "box diagonal / 45)"),
    "max_iter": Field(Integer(1, 1000), "optimiser iterations (at most)", default=30),
    "max_candidates": Field(Integer(1, 100), "verified candidates per style (each one finite-"
                            "element check of the holed plate)", default=7),
})

DESIGN = Record("design", {
    "name": Field(Text(), "design name", required=True),
    "notes": Field(Text(), "free text, ignored", default=""),
    "material": Field(Text(word=True), "material key from the library (plates may override)",
                      required=True),
    "thickness_mm": Field(Number(gt=0.0, le=50.0), "sheet thickness", required=True),
    "machine": Field(AnyOf(Text(), MACHINE), "bundled machine profile key, a profile file "
                     "(path relative to the design file; see `platewright machines`), or an "
                     "inline profile", default="example_co2_60w"),
    "kerf_mm": Field(Number(ge=0.0, le=2.0), "kerf for all plates (default: from the machine "
                     "profile for the material, else the material's typical kerf)"),
    "references": Field(RefTable(), "named dimensions; values may use other references",
                        default={}),
    "plates": Field(ListOf(PLATE, min_len=1, unique="name", max_len=MAX_PLATES, fold_case=True),
                    "the plates", required=True),
    "load_cases": Field(ListOf(Raw(), max_len=MAX_LOAD_CASES), "load cases for `platewright "
                        "check` (fields: see 'Load cases and components')", default=[]),
    "components": Field(ListOf(Raw(), max_len=MAX_COMPONENTS), "point masses carried by plates "
                        "(fields: see 'Load cases and components')", default=[]),
    "vehicle_mass_g": Field(Number(gt=0.0), "mass of the whole vehicle for collision cases, g "
                            "(default: all plates x quantity + all components)"),
    "lightening": Field(LIGHTENING, "settings of `platewright lighten` (default: all derived "
                        "from each plate)"),
})


@dataclass
class Validated:
    """Result of :func:`validate_design`.

    data: the normalised design (defaults filled, numbers evaluated to floats; an outline is
    ``{"kind": variant, **fields}``), or None when there were problems. references: name ->
    value; depends: name -> every reference it uses. refs_at: field path -> references its value
    used (closure). position_refs: record path -> references used by its position fields.
    """

    data: dict | None
    problems: list[Problem]
    references: dict[str, float]
    depends: dict[str, frozenset[str]]
    refs_at: dict[str, frozenset[str]]
    position_refs: dict[str, frozenset[str]]


def validate_design(tree: Any, lines: LineMap) -> Validated:
    """Validate a raw design tree (as parsed, overrides applied); collects every problem."""
    ctx = Context(lines, {}, {})
    if not isinstance(tree, Mapping):
        ctx.fail("", "the design file must be a mapping with at least 'name', 'material', "
                 "'thickness_mm' and 'plates'")
        return Validated(None, ctx.problems, {}, {}, {}, {})
    raw_refs = tree.get("references") or {}
    if RefTable().check(raw_refs, ctx, "references") is not BAD and not ctx.problems:
        try:
            values, depends = resolve_references(raw_refs)
            ctx.refs = {k: values[k] for k in raw_refs}
            ctx.depends = depends
        except ExpressionError as exc:
            ctx.fail(format_path(["references", exc.key]), exc.message, exc.hint)
    if ctx.problems:  # numbers cannot be checked against broken references
        return Validated(None, ctx.problems, {}, {}, {}, {})
    data = DESIGN.check(tree, ctx, "")
    ok = data is not BAD and not ctx.problems
    return Validated(data if ok else None, ctx.problems, ctx.refs, ctx.depends, ctx.refs_at,
                     ctx.position_refs)


def allowed_keys(tree: Any, parts: Sequence[str | int]) -> list[str] | None:
    """The keys the schema allows in the mapping at ``parts`` of ``tree``.

    ``parts`` has indices already resolved to ints. Returns None for an open mapping (any
    key allowed: ``references``) and [] where no mapping is expected.
    """
    spec: Spec = DESIGN
    node = tree
    for part in [*parts, None]:
        if isinstance(spec, AnyOf):
            spec = spec.mapping if isinstance(node, Mapping) else spec.scalar
        if isinstance(spec, Tagged):
            kind = node.get(spec.tag) if isinstance(node, Mapping) else None
            if kind not in spec.variants:
                return []
            spec = spec.variants[kind]
        if part is None:
            break
        if isinstance(spec, Record) and isinstance(part, str) and part in spec.fields:
            spec = spec.fields[part].spec
        elif isinstance(spec, ListOf) and isinstance(part, int):
            spec = spec.item
        elif isinstance(spec, Choice) and isinstance(part, str) and part in spec.variants:
            spec = spec.variants[part]
        else:
            return []
        node = node[part] if isinstance(node, (Mapping, list)) else None
    if isinstance(spec, Record):
        return list(spec.fields)
    if isinstance(spec, (RefTable, Raw)):
        return None
    return []


def describe_schema() -> str:
    """The design-file reference as markdown: every field with type, unit, default, meaning."""
    out = ["# Design file reference", "",
           "Lengths in mm, angles in degrees; the unit is in each field name. A number may be "
           "written as an expression over `references` names: `+ - * / **`, parentheses, "
           + ", ".join(f"`{k}()`" for k in ("min", "max", "abs", "sqrt", "sin_deg", "cos_deg",
                                            "tan_deg")) + " (degrees) and `pi`.", ""]
    queue: list[tuple[str, Record]] = [("", DESIGN)]
    seen: set[int] = set()
    while queue:
        where, rec = queue.pop(0)
        if id(rec) in seen:
            continue
        seen.add(id(rec))
        out += [f"## {rec.title}" + (f" (`{where}`)" if where else " (top level)"), ""]
        nested: list[tuple[str, Record]] = []
        markdown_table(rec, out, nested, f"{where}." if where else "")
        queue += nested
        if rec is PLATE:
            out += ["## outline variants (`plates[].outline`)", "",
                    "Write exactly one of these keys under `outline:`.", ""]
            for k, var in OUTLINE.variants.items():
                out += [f"### `{k}`: {var.title}", ""]
                markdown_table(var, out, [], f"plates[].outline.{k}.")
            out += ["## feature types (`plates[].features[]`)", "",
                    "Every feature has `id`, `type` and `at_mm`; the other fields depend on "
                    "`type`.", ""]
            for k, var in FEATURE_TYPES.items():
                out += [f"### `type: {k}`: {var.title}", ""]
                markdown_table(var, out, nested, f"plates[].features[] ({k}).")
                queue += nested
    out += ["## limits", "",
            "Refused before anything is built (exit 2), so a mistyped count cannot run for "
            "minutes: "
            f"a design file of at most {MAX_FILE_BYTES:,} bytes, lists and mappings nested at "
            f"most {MAX_DEPTH} deep, expressions of at most {MAX_EXPRESSION_CHARS} characters, "
            f"names (plates, feature ids, material keys) of at most {MAX_NAME_CHARS} characters, "
            f"at most {MAX_PLATES} plates, {MAX_FEATURES_PER_PLATE:,} feature entries per plate, "
            f"{MAX_HOLES_PER_PLATE:,} holes per plate and {MAX_HOLES_PER_DESIGN:,} in the design "
            "(a fastener_array counts rows x cols, a mount its holes and pilot), "
            f"`quantity` at most {MAX_QUANTITY:,}, `rows` and `cols` at most {MAX_ARRAY_SIDE:,}, "
            f"{MAX_MOUNT_HOLES} holes per custom mount, {MAX_LIST_ITEMS:,} points or coordinates "
            f"per list, {MAX_LOAD_CASES} load cases, {MAX_COMPONENTS:,} components, label text "
            f"and part numbers of at most {MAX_LABEL_CHARS} characters. Sizes and corner radii "
            f"other than 0 are at least {MIN_SIZE_MM:g} mm. Plate names must differ in more than "
            "upper and lower case and may not be a device name Windows reserves (CON, PRN, AUX, "
            "NUL, COM1-COM9, LPT1-LPT9): they become file names.", "",
            "## kerf", "",
            "Each plate's kerf comes from, in order: the plate's `kerf_mm`; the design's "
            "`kerf_mm`; the machine profile's `kerf_mm_by_material` entry for the material at "
            "the plate's thickness, else its entry without a thickness; when the profile has "
            "entries for the material at other thicknesses only, a thickness between two of them "
            "is interpolated linearly between the nearest thinner and thicker entry (warning "
            "`kerf_interpolated`: measure it) and a thickness outside their range is refused; a "
            "material the profile lists nothing for takes the profile's `kerf_mm`, else the "
            "material library's typical kerf. report.json records where each plate's kerf came "
            "from (`kerf_source`).", "",
            "## overrides", "",
            "`--set PATH=VALUE` changes one field before validation, e.g. "
            "`references.wheelbase_mm=180`, `plates[1].thickness_mm=4`, "
            "`plates.deck.features.left_bore.diameter_mm=8.1` (plates by `name`, features by "
            "`id`). The value is read as YAML. An absent optional section is created (e.g. "
            "`lightening.deflection_budget=0.1`). New references must be added in the file.", ""]
    return "\n".join(out).rstrip() + "\n"
