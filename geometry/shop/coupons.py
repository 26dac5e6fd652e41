"""Calibration coupon: a small test plate that measures a cutter's kerf and the fits it gives.

The coupon (all sizes nominal, mm; the cut paths get the usual kerf compensation with the kerf
the coupon is cut with, ``kerf_used_mm``):

- a ladder of round holes stepped around the chosen bore ``bore_mm`` (``bore - span`` ...
  ``bore + span`` in ``step`` steps), each with its nominal diameter engraved below it: try the
  bearing or axle in each and note which one gives the fit you want;
- a comb of rectangular slots of stepped nominal widths around the sheet thickness (a tab of
  the same stock tells the slot fit), each width engraved below it;
- a square hole of side ``square_mm``: the square that drops out and the hole it leaves were
  cut on the same path, so ``kerf = (hole size - part size) / 2``;
- the coupon's own rectangular outline, of known nominal size.

Engraved text is on the engraving layer (cut first). Nothing here is written to disk: the
writers and the measuring sheet live in the command line layer.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from platewright.geometry.model import CutContour, Engraving, Feature, Material, Plate
from platewright.geometry.plate.cutpaths import cut_paths
from platewright.geometry.plate.features import cutout, round_hole
from platewright.geometry.plate.outlines import rounded_rect_outline

__all__ = [
    "Coupon",
    "coupon_steps",
    "build_coupon",
    "COUPON_FIT_CLASSES",
]

#: Fit classes the measuring template asks about (the material library's names).
COUPON_FIT_CLASSES = ("press", "transition", "slide", "clearance")
#: Engraved text height, mm (common practice: below about 2 mm laser text becomes hard to read).
TEXT_HEIGHT_MM = 2.5
#: Layout estimate of a text character's width per unit height (a layout margin only).
_CHAR_WIDTH = 0.7


@dataclass(frozen=True)
class Coupon:
    """A built coupon: the plate, its cut paths, and what was designed.

    ``holes``: (feature id, nominal diameter mm) in ladder order; ``slots``: (feature id,
    nominal width mm); ``square_id`` and ``square_mm`` the kerf square; ``outline_mm`` the
    nominal outline size (x, y); ``kerf_used_mm`` the kerf the paths are compensated with;
    ``bore_mm`` the nominal bore the ladder is stepped around.
    """

    plate: Plate
    cut: tuple[CutContour, ...]
    bore_mm: float
    kerf_used_mm: float
    holes: tuple[tuple[str, float], ...]
    slots: tuple[tuple[str, float], ...]
    square_id: str
    square_mm: float
    outline_mm: tuple[float, float]
    slot_length_mm: float


def coupon_steps(center_mm: float, span_mm: float, step_mm: float) -> tuple[float, ...]:
    """Sizes ``center - span`` ... ``center + span`` in steps of ``step`` (mm), rounded to
    0.001 mm; ValueError unless step > 0, span >= 0 and span / step is a whole number of steps
    (within 1e-9)."""
    if not (math.isfinite(step_mm) and step_mm > 0):
        raise ValueError(f"step_mm: must be greater than zero, got {step_mm!r}")
    if not (math.isfinite(span_mm) and span_mm >= 0):
        raise ValueError(f"span_mm: must be zero or more, got {span_mm!r}")
    n_half = span_mm / step_mm
    if abs(n_half - round(n_half)) > 1e-9:
        raise ValueError(f"span_mm: {span_mm:g} is not a whole number of {step_mm:g} mm steps")
    n = int(round(n_half))
    if n > 20:
        raise ValueError(f"span_mm/step_mm: {2 * n + 1} holes is too many (at most 41)")
    return tuple(round(center_mm + k * step_mm, 3) for k in range(-n, n + 1))


def _label(fid: str, value: float, at: tuple[float, float]) -> Engraving:
    return Engraving(f"{fid}.label", f"{value:.2f}", at, TEXT_HEIGHT_MM)


def _text_width(text: str) -> float:
    return len(text) * _CHAR_WIDTH * TEXT_HEIGHT_MM


def build_coupon(material: Material, thickness_mm: float, bore_mm: float, kerf_used_mm: float, *,
                 span_mm: float = 0.3, step_mm: float = 0.1,
                 slot_widths_mm: tuple[float, ...] | None = None,
                 square_mm: float = 20.0, name: str = "coupon") -> Coupon:
    """The coupon plate for ``material`` at ``thickness_mm``, hole ladder around ``bore_mm``.

    ``kerf_used_mm``: kerf the cut paths are compensated with (record it: calibration needs it).
    ``slot_widths_mm``: nominal slot widths; default thickness - 0.2 ... thickness + 0.2 in
    0.1 mm steps. ``square_mm``: side of the kerf square. Raises ValueError for sizes that
    cannot be cut (a hole or slot the kerf closes, a refused material).
    """
    if not material.laser_safe:
        raise ValueError(f"material {material.key!r} must never be laser-cut: "
                         f"{material.refusal_reason}")
    for label, v in (("thickness_mm", thickness_mm), ("bore_mm", bore_mm),
                     ("square_mm", square_mm)):
        if not (math.isfinite(v) and v > 0):
            raise ValueError(f"{label}: must be greater than zero, got {v!r}")
    if not (math.isfinite(kerf_used_mm) and kerf_used_mm >= 0):
        raise ValueError(f"kerf_used_mm: must be zero or more, got {kerf_used_mm!r}")
    diameters = coupon_steps(bore_mm, span_mm, step_mm)
    if diameters[0] <= kerf_used_mm:
        raise ValueError(f"bore_mm/span_mm: the smallest hole ({diameters[0]:g} mm) is not larger "
                         f"than the kerf {kerf_used_mm:g} mm")
    widths = slot_widths_mm if slot_widths_mm is not None else coupon_steps(thickness_mm, 0.2, 0.1)
    if not widths or min(widths) <= kerf_used_mm:
        raise ValueError(f"slot_widths_mm: every slot must be wider than the kerf {kerf_used_mm:g} mm")

    margin = max(4.0, 1.5 * thickness_mm)           # edge distance, common practice >= 1.5 t
    gap = max(3.0, 2.0 * thickness_mm)              # web between features, common practice >= t
    text_gap = 1.0 + TEXT_HEIGHT_MM
    dmax = max(diameters)
    hole_pitch = max(dmax + gap, _text_width(f"{dmax:.2f}") + 1.5)
    slot_len = max(10.0, 3.0 * thickness_mm)
    slot_pitch = max(max(widths) + gap, _text_width(f"{max(widths):.2f}") + 1.5)

    ladder_w = hole_pitch * len(diameters)
    comb_w = slot_pitch * len(widths)
    row_w = max(ladder_w, comb_w)
    tag = f"{thickness_mm:g}mm k{kerf_used_mm:.2f}"
    col_w = max(square_mm, _text_width(tag), _text_width(f"kerf {square_mm:g}"))
    width = margin + row_w + gap + col_w + margin
    hole_row_h = dmax + text_gap + TEXT_HEIGHT_MM
    slot_row_h = slot_len + text_gap + TEXT_HEIGHT_MM
    top = max(margin, dmax)                         # hole to edge >= d (common practice)
    height = max(margin + slot_row_h + gap + hole_row_h + top,
                 margin + square_mm + 2.0 * (text_gap + TEXT_HEIGHT_MM) + margin)
    width, height = math.ceil(width), math.ceil(height)   # a whole-mm outline is easy to measure

    x0, y0 = -width / 2.0, -height / 2.0
    outline = rounded_rect_outline("outline", (0.0, 0.0), width, height, 0.0)
    feats: list[Feature] = []
    engr: list[Engraving] = []
    holes: list[tuple[str, float]] = []
    slots: list[tuple[str, float]] = []

    yh = y0 + margin + slot_row_h + gap + TEXT_HEIGHT_MM + text_gap + dmax / 2.0
    for i, d in enumerate(diameters):
        fid = f"hole{i + 1}"
        cx = x0 + margin + hole_pitch * (i + 0.5)
        feats.append(round_hole(fid, (cx, yh), d, note=f"coupon hole {d:.2f} mm"))
        engr.append(_label(fid, d, (cx, yh - dmax / 2.0 - text_gap)))
        holes.append((fid, d))
    ys = y0 + margin + TEXT_HEIGHT_MM + text_gap + slot_len / 2.0
    for j, w in enumerate(widths):
        fid = f"slot{j + 1}"
        cx = x0 + margin + slot_pitch * (j + 0.5)
        feats.append(cutout(fid, (cx, ys), float(w), slot_len))
        engr.append(_label(fid, float(w), (cx, ys - slot_len / 2.0 - text_gap)))
        slots.append((fid, float(w)))
    sx = x0 + margin + row_w + gap + col_w / 2.0
    sy = y0 + height - margin - square_mm / 2.0
    feats.append(cutout("square", (sx, sy), square_mm, square_mm))
    engr.append(Engraving("square.label", f"kerf {square_mm:g}", (sx, sy - square_mm / 2.0 - text_gap),
                          TEXT_HEIGHT_MM))
    engr.append(Engraving("coupon.label", tag,
                          (sx, sy - square_mm / 2.0 - 2.0 * text_gap - TEXT_HEIGHT_MM),
                          TEXT_HEIGHT_MM))

    plate = Plate(name=name, material=material, thickness_mm=float(thickness_mm),
                  kerf_mm=float(kerf_used_mm), outline=outline, features=tuple(feats),
                  engravings=tuple(engr), part_number="", quantity=1)
    return Coupon(
        plate=plate, cut=tuple(cut_paths(plate)), bore_mm=float(bore_mm),
        kerf_used_mm=float(kerf_used_mm), holes=tuple(holes), slots=tuple(slots),
        square_id="square", square_mm=float(square_mm), outline_mm=(float(width), float(height)),
        slot_length_mm=float(slot_len),
    )
