"""Inner features of a plate: holes, bores, slots, cutouts, fastener arrays and motor mounts.

Every builder returns NOMINAL geometry (before fit allowance and kerf) as a `Feature` or a tuple
of them; hole contours run clockwise (material on the left). Lengths mm, angles degrees,
positions in plate coordinates. Sub-features get ids ``f"{fid}.hole1"``, ``f"{fid}.pilot"``,
``f"{fid}.strap1"``. Invalid sizes raise ValueError saying what is wrong and what is valid.
"""

from __future__ import annotations

import math
from collections.abc import Sequence

from platewright.geometry.library import MotorPattern, clearance_hole_mm
from platewright.geometry.model import Feature, Material
from platewright.geometry.plate.curves import circle
from platewright.geometry.plate.outlines import (
    check_finite,
    check_point,
    check_positive,
    rounded_rect_contour,
    stadium_contour,
)

__all__ = [
    "round_hole",
    "bore",
    "slotted_bore",
    "slot",
    "cutout",
    "fastener_hole",
    "fastener_array",
    "motor_mount",
    "custom_mount",
]


def _rotate(x: float, y: float, angle_deg: float) -> tuple[float, float]:
    a = math.radians(angle_deg)
    c, s = math.cos(a), math.sin(a)
    return x * c - y * s, x * s + y * c


def _fit(fit_class: str, material: Material) -> float:
    fits = material.fit_allowance_mm
    if fit_class not in fits:
        valid = ", ".join(fits) if fits else "none (the material has no fit allowances)"
        raise ValueError(
            f"fit_class: {fit_class!r} is not defined for material {material.key!r} "
            f"(valid: {valid})"
        )
    return float(fits[fit_class])


def round_hole(
    fid: str,
    center_mm: tuple[float, float],
    diameter_mm: float,
    kind: str = "hole",
    fit_allowance_mm: float = 0.0,
    fit_class: str = "",
    note: str = "",
    refs: Sequence[str] = (),
) -> Feature:
    """A round hole of nominal ``diameter_mm`` at ``center_mm`` (mm), one clockwise circle.

    ``fit_allowance_mm`` (signed, mm) is recorded for the cut stage, not applied here.
    """
    c = check_point("center_mm", center_mm)
    d = check_positive("diameter_mm", diameter_mm)
    allowance = check_finite("fit_allowance_mm", fit_allowance_mm)
    if d + allowance <= 0:
        raise ValueError(
            f"fit_allowance_mm: {allowance} leaves no hole of nominal diameter {d} mm "
            f"(valid: more than {-d})"
        )
    dims = {"nominal_diameter_mm": d}
    if fit_class:
        dims["fit_allowance_mm"] = allowance
    return Feature(
        id=fid, kind=kind, center_mm=c, contours=(circle(c, d / 2.0, ccw=False),),
        fit_allowance_mm=allowance, fit_class=fit_class, dims=dims, refs=tuple(refs), note=note,
    )


def bore(
    fid: str,
    center_mm: tuple[float, float],
    diameter_mm: float,
    fit_class: str,
    material: Material,
    note: str = "",
    refs: Sequence[str] = (),
) -> Feature:
    """A bore (kind ``bore``) for a bearing, bush or shaft; allowance from ``material``.

    ``fit_class``: one of the material's fit classes (press, transition, slide, clearance).
    """
    return round_hole(
        fid, center_mm, diameter_mm, kind="bore", fit_allowance_mm=_fit(fit_class, material),
        fit_class=fit_class, note=note, refs=refs,
    )


def slotted_bore(
    fid: str,
    center_mm: tuple[float, float],
    diameter_mm: float,
    fit_class: str,
    material: Material,
    *,
    travel_mm: float | None = None,
    trim_deg: float | None = None,
    span_mm: float | None = None,
    direction_deg: float = 0.0,
    note: str = "",
    refs: Sequence[str] = (),
) -> Feature:
    """A bore that can slide along ``direction_deg`` (kind ``slot``), for trimming an axle.

    Give either ``travel_mm`` (centre-to-centre slide, mm) or ``trim_deg`` with ``span_mm``: the
    axle pivots about its other support ``span_mm`` away and sweeps ``trim_deg`` from one end of
    the slot to the other, so ``travel_mm = span_mm * tan(trim_deg)``; trim_deg in (0, 45].
    The slot is a stadium of width ``diameter_mm`` (the fit allowance applies to the width) and
    centre distance ``travel_mm``, centred on ``center_mm``.
    """
    if (travel_mm is None) == (trim_deg is None):
        raise ValueError(
            "slotted_bore: give exactly one of travel_mm or trim_deg (with span_mm)"
        )
    dims: dict[str, float] = {}
    if trim_deg is not None:
        t = check_finite("trim_deg", trim_deg)
        if not 0.0 < t <= 45.0:
            raise ValueError(f"trim_deg: must be in (0, 45] degrees, got {trim_deg!r}")
        if span_mm is None:
            raise ValueError("span_mm: required with trim_deg (distance to the pivot support)")
        span = check_positive("span_mm", span_mm)
        travel = span * math.tan(math.radians(t))
        dims.update(trim_deg=t, span_mm=span)
    else:
        if span_mm is not None:
            raise ValueError("span_mm: only used with trim_deg; give travel_mm or trim_deg")
        travel = check_positive("travel_mm", travel_mm)  # type: ignore[arg-type]
    c = check_point("center_mm", center_mm)
    d = check_positive("diameter_mm", diameter_mm)
    ang = check_finite("direction_deg", direction_deg)
    allowance = _fit(fit_class, material)
    if d + allowance <= 0:
        raise ValueError(f"fit_class: {fit_class!r} allowance {allowance} mm leaves no slot")
    contour = stadium_contour(c, d + travel, d, ang).reversed()
    dims = {"nominal_width_mm": d, "length_mm": d + travel, "travel_mm": travel,
            "fit_allowance_mm": allowance, "direction_deg": ang, **dims}
    return Feature(
        id=fid, kind="slot", center_mm=c, contours=(contour,), fit_allowance_mm=allowance,
        fit_class=fit_class, dims=dims, refs=tuple(refs), note=note,
    )


def slot(
    fid: str,
    center_mm: tuple[float, float],
    length_mm: float,
    width_mm: float,
    angle_deg: float = 0.0,
    kind: str = "slot",
    refs: Sequence[str] = (),
) -> Feature:
    """A stadium slot of overall ``length_mm`` and ``width_mm`` (mm), long axis at ``angle_deg``."""
    c = check_point("center_mm", center_mm)
    contour = stadium_contour(c, length_mm, width_mm, angle_deg).reversed()
    return Feature(
        id=fid, kind=kind, center_mm=c, contours=(contour,),
        dims={"nominal_width_mm": float(width_mm), "length_mm": float(length_mm),
              "angle_deg": float(angle_deg)},
        refs=tuple(refs),
    )


def cutout(
    fid: str,
    center_mm: tuple[float, float],
    width_mm: float,
    height_mm: float,
    corner_radius_mm: float = 0.0,
    angle_deg: float = 0.0,
    refs: Sequence[str] = (),
) -> Feature:
    """A rounded-rectangle hole (kind ``cutout``), ``width_mm`` x ``height_mm``, turned by
    ``angle_deg`` about its centre; clockwise contour."""
    c = check_point("center_mm", center_mm)
    contour = rounded_rect_contour(c, width_mm, height_mm, corner_radius_mm, angle_deg)
    return Feature(
        id=fid, kind="cutout", center_mm=c, contours=(contour.reversed(),),
        dims={"width_mm": float(width_mm), "height_mm": float(height_mm),
              "corner_radius_mm": float(corner_radius_mm), "angle_deg": float(angle_deg)},
        refs=tuple(refs),
    )


def fastener_hole(
    fid: str,
    center_mm: tuple[float, float],
    screw: str,
    series: str = "medium",
    refs: Sequence[str] = (),
) -> Feature:
    """An ISO 273 clearance hole (kind ``hole``) for a metric ``screw`` such as ``"M3"``."""
    try:
        d = clearance_hole_mm(screw, series)
    except KeyError as exc:
        raise ValueError(f"screw: {exc.args[0]}") from None
    except ValueError as exc:
        raise ValueError(f"series: {exc}") from None
    return round_hole(fid, center_mm, d, kind="hole",
                      note=f"{screw} clearance, ISO 273 {series}", refs=refs)


def fastener_array(
    fid: str,
    origin_mm: tuple[float, float],
    rows: int,
    cols: int,
    pitch_x_mm: float,
    pitch_y_mm: float,
    screw: str,
    series: str = "medium",
    angle_deg: float = 0.0,
    centered: bool = True,
    refs: Sequence[str] = (),
) -> tuple[Feature, ...]:
    """A ``rows`` x ``cols`` grid of ISO 273 clearance holes (stand-off patterns), mm.

    Columns step ``pitch_x_mm`` along x, rows ``pitch_y_mm`` along y, before turning the grid by
    ``angle_deg`` about ``origin_mm``. ``centered``: the grid's centre is at ``origin_mm``;
    otherwise the first hole is. Ids ``f"{fid}.hole1"`` ... row by row.
    """
    o = check_point("origin_mm", origin_mm)
    for name, n in (("rows", rows), ("cols", cols)):
        if isinstance(n, bool) or not isinstance(n, int) or n < 1:
            raise ValueError(f"{name}: must be a whole number 1 or more, got {n!r}")
    px = check_positive("pitch_x_mm", pitch_x_mm) if cols > 1 else 0.0
    py = check_positive("pitch_y_mm", pitch_y_mm) if rows > 1 else 0.0
    ang = check_finite("angle_deg", angle_deg)
    x0 = -(cols - 1) * px / 2.0 if centered else 0.0
    y0 = -(rows - 1) * py / 2.0 if centered else 0.0
    out = []
    for r in range(rows):
        for k in range(cols):
            dx, dy = _rotate(x0 + k * px, y0 + r * py, ang)
            out.append(fastener_hole(f"{fid}.hole{len(out) + 1}", (o[0] + dx, o[1] + dy),
                                     screw, series, refs))
    return tuple(out)


def _mount(
    fid: str,
    center_mm: tuple[float, float],
    holes: Sequence[tuple[float, float, float]],
    pilot_diameter_mm: float | None,
    angle_deg: float,
    refs: Sequence[str],
    note: str,
    pilot_fit: str = "clearance",
    material: Material | None = None,
) -> list[Feature]:
    c = check_point("center_mm", center_mm)
    ang = check_finite("angle_deg", angle_deg)
    out: list[Feature] = []
    if pilot_diameter_mm is not None:
        boss = check_positive("pilot_diameter_mm", pilot_diameter_mm)
        if material is None:
            raise ValueError("material: needed for the pilot hole's fit allowance "
                             f"(pilot_fit {pilot_fit!r})")
        try:
            allowance = _fit(pilot_fit, material)
        except ValueError as exc:
            raise ValueError(str(exc).replace("fit_class:", "pilot_fit:", 1)) from None
        what = f"clears the {boss:g} mm boss, {pilot_fit} fit"
        out.append(round_hole(
            f"{fid}.pilot", c, boss, kind="pilot", fit_allowance_mm=allowance,
            fit_class=pilot_fit, note=f"{note}; {what}" if note else what, refs=refs,
        ))
    for i, h in enumerate(holes):
        try:
            x, y, d = h
        except (TypeError, ValueError):
            raise ValueError(f"holes[{i}]: expected (x_mm, y_mm, diameter_mm), got {h!r}") from None
        x = check_finite(f"holes[{i}].x_mm", x)
        y = check_finite(f"holes[{i}].y_mm", y)
        d = check_positive(f"holes[{i}].diameter_mm", d)
        dx, dy = _rotate(x, y, ang)
        out.append(round_hole(f"{fid}.hole{i + 1}", (c[0] + dx, c[1] + dy), d,
                              kind="mount_hole", note=note, refs=refs))
    return out


def motor_mount(
    fid: str,
    center_mm: tuple[float, float],
    motor: MotorPattern,
    angle_deg: float = 0.0,
    strap: bool = False,
    refs: Sequence[str] = (),
    *,
    material: Material | None = None,
    pilot_fit: str = "clearance",
) -> tuple[Feature, ...]:
    """Features to mount ``motor`` with its shaft axis at ``center_mm`` (mm).

    ``strap=False`` (face mount, the plate across the shaft): a ``pilot`` hole for the centring
    boss and the ``mount_hole`` pattern turned by ``angle_deg``. The pilot's nominal diameter is
    the boss (``motor.boss_diameter_mm``); its fit allowance is the ``material``'s allowance for
    the ``pilot_fit`` class (default ``clearance``, so the boss is never line-to-line with its
    hole; ValueError when ``material`` is missing or lacks the class). ``strap=True`` (the motor
    lies on the plate, its axis along ``angle_deg`` through ``center_mm``): two ``strap_slot``
    features either side of the body INSTEAD of the face pattern; ValueError if the pattern has
    no strap. The motor's caution text goes in every feature's ``note``.
    """
    note = f"{motor.name}: {motor.caution}" if motor.caution else motor.name
    if not strap:
        return tuple(_mount(fid, center_mm, motor.holes, motor.boss_diameter_mm, angle_deg,
                            refs, note, pilot_fit, material))
    if motor.strap is None:
        raise ValueError(f"strap: motor {motor.key!r} has no strap pattern "
                         "(strap mounts exist for round gearmotors)")
    c = check_point("center_mm", center_mm)
    ang = check_finite("angle_deg", angle_deg)
    s = motor.strap
    out = []
    for i, side in enumerate((1.0, -1.0)):
        dx, dy = _rotate(0.0, side * s.spacing_mm / 2.0, ang)
        f = slot(f"{fid}.strap{i + 1}", (c[0] + dx, c[1] + dy), s.slot_length_mm,
                 s.slot_width_mm, ang, kind="strap_slot", refs=refs)
        out.append(Feature(id=f.id, kind=f.kind, center_mm=f.center_mm, contours=f.contours,
                           dims=f.dims, refs=f.refs, note=note))
    return tuple(out)


def custom_mount(
    fid: str,
    center_mm: tuple[float, float],
    holes: Sequence[tuple[float, float, float]],
    pilot_diameter_mm: float | None = None,
    angle_deg: float = 0.0,
    refs: Sequence[str] = (),
    *,
    material: Material | None = None,
    pilot_fit: str = "clearance",
) -> tuple[Feature, ...]:
    """A user-given mount: ``holes`` as (x_mm, y_mm, diameter_mm) relative to ``center_mm``,
    turned by ``angle_deg``, plus an optional pilot hole over a boss of ``pilot_diameter_mm``
    with the ``material``'s allowance for the ``pilot_fit`` class (as in :func:`motor_mount`)."""
    if len(holes) == 0 and pilot_diameter_mm is None:
        raise ValueError("holes: give at least one hole or a pilot_diameter_mm")
    return tuple(_mount(fid, center_mm, holes, pilot_diameter_mm, angle_deg, refs, "",
                        pilot_fit, material))
