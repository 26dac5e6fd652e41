"""Plate assembly: a validated :class:`~.design.Design` -> :class:`~.model.Plate` objects.

Each plate gets its material, thickness (mm), kerf (mm; plate ``kerf_mm`` > design ``kerf_mm``
> machine profile for the material and thickness (entry, interpolation or refusal: see
``machines.kerf_choice``) > the material's typical kerf) and where it came from, the outline
feature, the inner features (each with ``source_path``, ``source_line`` and ``refs``) and the
engraved label, fitted inside the material clear of every cut (:mod:`.labels`). Input that
cannot make a plate raises DesignError: a feature outside the outline or bigger than the plate,
duplicate feature ids, a kerf at least as large as a feature. Detailed manufacturability (webs,
edge distances) is checked later by the rules stage.
"""

from __future__ import annotations

import dataclasses
import re
from pathlib import Path

from shapely.geometry import Point as ShapelyPoint
from shapely.geometry import Polygon

from platewright.geometry import library
from platewright.geometry.design.loader import Design, FeatureSpec, OutlineSpec, PlateSpec
from platewright.geometry.design.schema import suggest
from platewright.geometry.errors import DesignError, Problem
from platewright.geometry.model import Feature, Plate
from platewright.geometry.plate import features as fb
from platewright.geometry.plate import outlines
from platewright.geometry.plate.curves import Contour
from platewright.geometry.plate.labels import LabelRequest, default_label_texts, fit_label
from platewright.geometry.shop import machines
from platewright.geometry.tolerances import CHORD_TOL_MM

__all__ = ["build_plates", "build_plate", "plate_kerf", "plate_kerf_mm", "bundled_example_path",
           "list_templates", "with_measured_fits", "OUTLINE_ID", "LABEL_ID"]

#: Feature id of every plate's outline, and of its engraved label.
OUTLINE_ID = "outline"
LABEL_ID = "label"
_FIELD_PREFIX = re.compile(r"^([a-z_]+)(\[\d+\])?(\.[a-z_]+)?:\s*")
_EXAMPLE = "two_wheel_base.yaml"


def _designs_folder() -> Path:
    import platewright.templates as templates

    return Path(templates.__file__).resolve().parent / "designs"


def bundled_example_path() -> Path:
    """The bundled example design (used by ``platewright build`` with no design file)."""
    return _designs_folder() / _EXAMPLE


def list_templates() -> list[Path]:
    """The bundled starter designs, sorted by file name."""
    return sorted(_designs_folder().glob("*.yaml"))


def plate_kerf(design: Design, spec: PlateSpec) -> machines.KerfChoice:
    """The kerf (mm) for a plate and where it came from: plate override, design override, else
    the machine profile's rule (:func:`~platewright.geometry.shop.machines.kerf_choice`).
    DesignError on the thickness field when the profile has no entry at or around the
    plate's thickness for its material."""
    if spec.kerf_mm is not None:
        return machines.KerfChoice(spec.kerf_mm, "plate kerf_mm")
    if design.kerf_mm is not None:
        return machines.KerfChoice(design.kerf_mm, "design kerf_mm")
    try:
        return machines.kerf_choice(design.machine, spec.material.key, spec.thickness_mm)
    except machines.KerfRangeError as exc:
        own = f"{spec.path}.thickness_mm"
        path = own if (own in design.lines.lines or design.lines.is_overridden(own)) \
            else "thickness_mm"
        raise DesignError(Problem(path, str(exc), design.line_of(path),
                                  "measure the kerf (`platewright coupon`) and add a "
                                  "kerf_mm_by_material entry to the profile, or set kerf_mm on "
                                  "the plate or the design"), design.source_path) from None


def plate_kerf_mm(design: Design, spec: PlateSpec) -> float:
    """The kerf (mm) for a plate: plate override, design override, machine profile, material
    (see :func:`plate_kerf`)."""
    return plate_kerf(design, spec).kerf_mm


def _outline(spec: OutlineSpec) -> Feature:
    p = spec.params
    if spec.kind == "rounded_rect":
        f = outlines.rounded_rect_outline(OUTLINE_ID, p["at_mm"], p["width_mm"], p["height_mm"],
                                          p["corner_radius_mm"], p["angle_deg"])
    elif spec.kind == "polygon":
        f = outlines.polygon_outline(OUTLINE_ID, p["points_mm"], p["corner_radii_mm"])
    else:  # around: a rectangle enclosing the given coordinates plus the margin
        x0, x1 = min(p["x_mm"]) - p["margin_mm"], max(p["x_mm"]) + p["margin_mm"]
        y0, y1 = min(p["y_mm"]) - p["margin_mm"], max(p["y_mm"]) + p["margin_mm"]
        f = outlines.rounded_rect_outline(OUTLINE_ID, ((x0 + x1) / 2, (y0 + y1) / 2), x1 - x0,
                                          y1 - y0, p["corner_radius_mm"])
    return dataclasses.replace(f, refs=spec.refs, source_path=spec.path, source_line=spec.line)


def _features(spec: FeatureSpec, plate: PlateSpec) -> tuple[Feature, ...]:
    p, fid, at, refs = spec.params, spec.id, spec.params["at_mm"], spec.refs
    mat = plate.material
    t = spec.type
    if t == "hole":
        out: tuple[Feature, ...] = (fb.round_hole(fid, at, p["diameter_mm"],
                                                  fit_allowance_mm=p["fit_allowance_mm"],
                                                  note=p["note"], refs=refs),)
    elif t == "bore":
        out = (fb.bore(fid, at, p["diameter_mm"], p["fit"], mat, note=p["note"], refs=refs),)
    elif t == "slotted_bore":
        out = (fb.slotted_bore(fid, at, p["diameter_mm"], p["fit"], mat, travel_mm=p["travel_mm"],
                               trim_deg=p["trim_deg"], span_mm=p["span_mm"],
                               direction_deg=p["direction_deg"], note=p["note"], refs=refs),)
    elif t == "slot":
        out = (fb.slot(fid, at, p["length_mm"], p["width_mm"], p["angle_deg"], refs=refs),)
    elif t == "cutout":
        out = (fb.cutout(fid, at, p["width_mm"], p["height_mm"], p["corner_radius_mm"],
                         p["angle_deg"], refs=refs),)
    elif t == "fastener":
        out = (fb.fastener_hole(fid, at, p["screw"], p["series"], refs=refs),)
    elif t == "fastener_array":
        out = fb.fastener_array(fid, at, p["rows"], p["cols"], p["pitch_mm"][0],
                                p["pitch_mm"][1], p["screw"], p["series"], p["angle_deg"],
                                p["centered"], refs=refs)
    elif t == "motor_mount":
        out = fb.motor_mount(fid, at, library.get_motor(p["motor"]), p["angle_deg"], p["strap"],
                             refs=refs, material=mat, pilot_fit=p["pilot_fit"])
    elif t == "custom_mount":
        holes = [(h["at_mm"][0], h["at_mm"][1], h["diameter_mm"]) for h in p["holes"]]
        out = fb.custom_mount(fid, at, holes, p["pilot_diameter_mm"], p["angle_deg"], refs=refs,
                              material=mat, pilot_fit=p["pilot_fit"])
    else:  # the schema admits only the types above
        raise ValueError(f"type: unknown feature type '{t}'")
    note = p.get("note", "")
    return tuple(dataclasses.replace(f, refs=refs, source_path=spec.path, source_line=spec.line,
                                     note=f.note or note) for f in out)


def _problem(exc: Exception, path: str, design: Design, params: dict) -> Problem:
    """A builder's ValueError/KeyError as a Problem on the field it names (when it does)."""
    text = str(exc.args[0]) if isinstance(exc, KeyError) and exc.args else str(exc)
    m = _FIELD_PREFIX.match(text)
    if m and m.group(1) in params:
        path = f"{path}.{m.group(1)}{m.group(2) or ''}"
        text = text[m.end():]
    return Problem(path, text, design.line_of(path))


def _polygon(contour: Contour) -> Polygon:
    return Polygon(contour.to_points(CHORD_TOL_MM))


def _size_mm(f: Feature) -> tuple[str, float] | None:
    """The smallest as-cut size of a feature (nominal + fit allowance), with its name."""
    sizes = [(k, v) for k, v in f.dims.items()
             if k in ("nominal_diameter_mm", "nominal_width_mm", "width_mm", "height_mm")]
    if not sizes:
        return None
    name, v = min(sizes, key=lambda kv: kv[1])
    return name, v + f.fit_allowance_mm


def _check(design: Design, plate: Plate, spec: PlateSpec, problems: list[Problem]) -> None:
    outline = _polygon(plate.outline.contours[0])
    ox0, oy0, ox1, oy1 = outline.bounds
    seen: dict[str, Feature | None] = {OUTLINE_ID: None, LABEL_ID: None}
    for f in plate.features:
        where = f.source_path
        if f.id in seen:
            prev = seen[f.id]
            other = prev.source_path if prev is not None else "a reserved id"
            problems.append(Problem(f"{where}.id", f"duplicate feature id '{f.id}' (also "
                                    f"{other})", f.source_line, "every feature id must be "
                                    "unique on the plate ('outline' and 'label' are reserved)"))
        seen[f.id] = f
        for c in f.contours:
            poly = _polygon(c)
            if outline.contains(poly):
                continue
            x0, y0, x1, y1 = poly.bounds
            if poly.area >= outline.area or x1 - x0 >= ox1 - ox0 or y1 - y0 >= oy1 - oy0:
                msg = (f"'{f.id}' ({x1 - x0:.1f} x {y1 - y0:.1f} mm) is bigger than the plate "
                       f"({ox1 - ox0:.1f} x {oy1 - oy0:.1f} mm)")
            elif outline.intersects(poly):
                msg = f"'{f.id}' at ({f.center_mm[0]:g}, {f.center_mm[1]:g}) crosses the outline"
            else:
                msg = f"'{f.id}' at ({f.center_mm[0]:g}, {f.center_mm[1]:g}) lies outside the outline"
            problems.append(Problem(where, msg, f.source_line,
                                    f"the plate spans x {ox0:g} to {ox1:g}, y {oy0:g} to {oy1:g} mm"))
            break
        size = _size_mm(f)
        if size is not None and plate.kerf_mm >= size[1]:
            problems.append(Problem(where, f"kerf {plate.kerf_mm:g} mm is not smaller than "
                                    f"'{f.id}' ({size[0]} {size[1]:g} mm incl. fit)",
                                    f.source_line, "make the feature larger or check kerf_mm"))
    lab = spec.label
    if lab is not None and lab.at_mm is not None:
        at = (float(lab.at_mm[0]), float(lab.at_mm[1]))
        if not outline.contains(ShapelyPoint(at)):
            path = f"{spec.path}.label"
            problems.append(Problem(path, f"label at {at} lies outside the outline",
                                    design.line_of(path)))


def _label(spec: PlateSpec, outline: Feature, kerf: float) -> LabelRequest | None:
    """The label the design asks for (fitted to the plate by :func:`.labels.fit_label`)."""
    lab = spec.label
    if lab is None:
        return None
    if lab.text is None:
        texts = default_label_texts(spec.name, spec.part_number,
                                    f"{spec.material.key} {spec.thickness_mm:g} mm",
                                    f"kerf {kerf:.2f} mm")
    else:
        texts = (lab.text,)
    if lab.at_mm is not None:
        anchors = ((float(lab.at_mm[0]), float(lab.at_mm[1])),)
    else:  # near the lower edge (the default), near the upper edge, the middle; centred in x
        x0, y0, x1, y1 = outline.contours[0].bbox()
        inset = 1.5 * lab.height_mm + spec.thickness_mm
        cx = (x0 + x1) / 2.0
        anchors = ((cx, y0 + inset), (cx, y1 - inset), (cx, (y0 + y1) / 2.0))
    return LabelRequest(LABEL_ID, texts, lab.height_mm, lab.rotation_deg, anchors)


def build_plate(design: Design, spec: PlateSpec) -> Plate:
    """Build one plate of ``design``; DesignError (every problem of the plate) if it cannot."""
    problems: list[Problem] = []
    try:
        outline = _outline(spec.outline)
    except (ValueError, KeyError) as exc:
        raise DesignError(_problem(exc, spec.outline.path, design, spec.outline.params),
                          design.source_path) from exc
    feats: list[Feature] = []
    for fs in spec.features:
        try:
            feats.extend(_features(fs, spec))
        except KeyError as exc:
            if fs.type == "motor_mount":
                motors = sorted(library.load_motors())
                problems.append(Problem(f"{fs.path}.motor", f"unknown motor "
                                        f"'{fs.params['motor']}'", design.line_of(
                                            f"{fs.path}.motor"), suggest(fs.params["motor"],
                                                                         motors)))
            else:
                problems.append(_problem(exc, fs.path, design, fs.params))
        except ValueError as exc:
            problems.append(_problem(exc, fs.path, design, fs.params))
    choice = plate_kerf(design, spec)
    kerf = choice.kerf_mm
    plate = Plate(name=spec.name, material=spec.material, thickness_mm=spec.thickness_mm,
                  kerf_mm=kerf, outline=outline, features=tuple(feats),
                  part_number=spec.part_number, quantity=spec.quantity, source_path=spec.path,
                  kerf_source=choice.source)
    _check(design, plate, spec, problems)
    if problems:
        raise DesignError(problems, design.source_path)
    request = _label(spec, outline, kerf)
    return plate if request is None else fit_label(plate, request)


def build_plates(design: Design) -> list[Plate]:
    """Every plate of ``design`` in file order; DesignError lists the problems of all plates.

    Fit allowances measured on the design's machine (its profile) override the library's."""
    design = with_measured_fits(design)
    plates: list[Plate] = []
    problems: list[Problem] = []
    for spec in design.plates:
        try:
            plates.append(build_plate(design, spec))
        except DesignError as exc:
            problems += exc.problems
    if problems:
        raise DesignError(problems, design.source_path)
    return plates


def with_measured_fits(design: Design) -> Design:
    """``design`` with each plate's material fit allowances (signed mm) overlaid by the measured
    ones its machine profile holds for that material and thickness
    (:func:`~platewright.geometry.shop.machines.fit_allowances_for`); unchanged when it holds none.
    Idempotent."""
    if not design.machine.fit_allowance_by_material:
        return design
    plates = []
    for spec in design.plates:
        fits = machines.fit_allowances_for(design.machine, spec.material.key, spec.thickness_mm)
        if fits != spec.material.fit_allowance_mm:
            spec = dataclasses.replace(spec, material=dataclasses.replace(
                spec.material, fit_allowance_mm=fits))
        plates.append(spec)
    return dataclasses.replace(design, plates=tuple(plates))
