"""Cut time and cost of a job from a machine profile: an estimate to quote, not a promise.

The model (all of it, so a user can check it by hand):

- cut time = cut length (mm) / cut speed (mm/s) for the material and thickness;
- pierce time = pierces x seconds per pierce (one pierce per closed contour);
- travel: straight rapid moves from ``start_mm`` to the first vertex of each contour in cut
  order (a closed contour ends where it starts), then from the last one back to ``start_mm``;
  travel time = travel length / rapid speed (acceleration is ignored);
- set-up time once per job (``include_setup``), never per plate;
- machine cost = total time (h) x hourly rate;
- material cost = footprint area / sheet area x sheet price, where the footprint is the area
  inside the outline cut paths (holes included: their material is scrap) and the sheet is the
  profile's cheapest-per-area stock of that material and thickness. Nesting waste is not counted.

Quote the result as +-20 % (:data:`QUOTE_BAND`, common practice): real speeds change with power,
focus and material batch. Missing data (no cut speed for the material, no rapid speed, no rate,
no sheet) gives None for the figures it touches and a note saying what to add to the profile;
it never raises. Engraving time is not included.

Units: lengths mm, times s, costs in the profile's ``currency``.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass, replace
from typing import Any

from platewright.geometry.plate.curves import Contour
from platewright.geometry.plate.pipeline import BuiltPlate
from platewright.geometry.shop.machines import MachineProfile, pierce_for, sheet_for, speed_for

__all__ = [
    "QUOTE_BAND",
    "CutEstimate",
    "estimate_cut",
    "estimate_plate",
    "material_cost",
    "footprint_area_mm2",
    "travel_length_mm",
    "combine_estimates",
]

#: Relative band to quote a time or cost with (common practice: +-20 %).
QUOTE_BAND = 0.20


@dataclass(frozen=True)
class CutEstimate:
    """Time (s) and cost (``currency``) of cutting a set of contours.

    ``cut_length_mm`` total path length, ``pierces`` count, ``travel_mm`` rapid travel length.
    Times in s; ``cut_time_s``, ``pierce_time_s``, ``travel_time_s``, ``total_time_s`` and
    ``machine_cost`` are None when the profile lacks the data (``notes`` say what is missing);
    ``material_cost`` is None without a priced sheet. ``setup_time_s`` is 0 unless set-up is
    included. ``total_time_s`` = cut + pierce + travel + set-up.
    """

    cut_length_mm: float
    pierces: int
    travel_mm: float
    cut_time_s: float | None
    pierce_time_s: float | None
    travel_time_s: float | None
    setup_time_s: float
    total_time_s: float | None
    machine_cost: float | None
    material_cost: float | None
    currency: str
    notes: tuple[str, ...] = ()

    @property
    def total_time_range_s(self) -> tuple[float, float] | None:
        """(low, high) total time, s, with the +-20 % quote band; None when unknown."""
        t = self.total_time_s
        return None if t is None else (t * (1.0 - QUOTE_BAND), t * (1.0 + QUOTE_BAND))

    @property
    def total_cost(self) -> float | None:
        """Machine cost + material cost, None when either is unknown."""
        if self.machine_cost is None or self.material_cost is None:
            return None
        return self.machine_cost + self.material_cost

    def to_report(self) -> dict[str, Any]:
        """The report.json form (``cost`` entry): every field plus the quote band."""

        def r(x: float | None, nd: int = 3) -> float | None:
            return None if x is None else float(round(x, nd)) + 0.0

        rng = self.total_time_range_s
        return {
            "cut_length_mm": r(self.cut_length_mm), "pierces": self.pierces,
            "travel_mm": r(self.travel_mm), "cut_time_s": r(self.cut_time_s),
            "pierce_time_s": r(self.pierce_time_s), "travel_time_s": r(self.travel_time_s),
            "setup_time_s": r(self.setup_time_s), "total_time_s": r(self.total_time_s),
            "total_time_range_s": None if rng is None else [r(rng[0]), r(rng[1])],
            "machine_cost": r(self.machine_cost, 2), "material_cost": r(self.material_cost, 2),
            "total_cost": r(self.total_cost, 2), "currency": self.currency,
            "quote_band": QUOTE_BAND, "notes": list(self.notes),
        }


def travel_length_mm(contours_in_cut_order: Sequence[Contour],
                     start_mm: tuple[float, float] = (0.0, 0.0)) -> float:
    """Rapid travel (mm): start -> first vertex of each contour in order -> back to start."""
    if not contours_in_cut_order:
        return 0.0
    x, y = float(start_mm[0]), float(start_mm[1])
    total = 0.0
    for c in contours_in_cut_order:
        px, py = float(c.vertices[0, 0]), float(c.vertices[0, 1])
        total += math.hypot(px - x, py - y)
        x, y = px, py
    return total + math.hypot(start_mm[0] - x, start_mm[1] - y)


def footprint_area_mm2(contours: Sequence[Contour]) -> float:
    """Area (mm^2) inside the counter-clockwise contours (outlines); holes are not subtracted."""
    return float(sum(c.signed_area() for c in contours if c.is_ccw()))


def material_cost(area_mm2: float, machine: MachineProfile, material_key: str,
                  thickness_mm: float) -> float | None:
    """Area share of the sheet price: ``area_mm2 / (sheet x * sheet y) * price``.

    The sheet is the profile's cheapest-per-area priced stock of the material and thickness (mm);
    None when the profile has no priced sheet of it.
    """
    sheet = sheet_for(machine, material_key, thickness_mm)
    if sheet is None or sheet.price is None:
        return None
    return float(area_mm2) / (sheet.size_mm[0] * sheet.size_mm[1]) * sheet.price


def _what(material_key: str, thickness_mm: float) -> str:
    return f"{material_key} {thickness_mm:g} mm"


def estimate_cut(contours_in_cut_order: Sequence[Contour], machine: MachineProfile,
                 material_key: str, thickness_mm: float, *,
                 start_mm: tuple[float, float] = (0.0, 0.0),
                 include_setup: bool = False) -> CutEstimate:
    """Estimate cutting ``contours_in_cut_order`` (cut paths, mm) on ``machine``.

    See the module docstring for the model. The material cost uses the footprint of the
    counter-clockwise contours. ``include_setup`` adds the profile's ``setup_s`` once.
    """
    notes: list[str] = []
    what = _what(material_key, thickness_mm)
    length = float(sum(c.length() for c in contours_in_cut_order))
    pierces = len(contours_in_cut_order)
    travel = travel_length_mm(contours_in_cut_order, start_mm)

    speed = speed_for(machine, material_key, thickness_mm)
    cut_s = None if speed is None else length / speed
    if speed is None:
        notes.append(f"no cut speed for {what} in profile '{machine.key}': add "
                     f"cut_speed_mm_s.{material_key} (measure it)")
    pierce = pierce_for(machine, material_key, thickness_mm)
    pierce_s = None if pierce is None else pierces * pierce
    if pierce is None:
        notes.append(f"no pierce time for {what}: add pierce_s or pierce_s_by_material")
    rapid = machine.travel_mm_s
    travel_s = None if rapid is None else travel / rapid
    if rapid is None:
        notes.append("no rapid speed: add travel_mm_s")
    setup = 0.0
    if include_setup:
        if machine.setup_s is None:
            notes.append("no set-up time: add setup_s (counted as 0)")
        else:
            setup = machine.setup_s
    parts = (cut_s, pierce_s, travel_s)
    total = None if any(p is None for p in parts) else sum(parts) + setup  # type: ignore[arg-type]

    rate = machine.hourly_rate
    mcost = None if total is None or rate is None else total / 3600.0 * rate
    if rate is None:
        notes.append("no hourly rate: add hourly_rate")
    matcost = material_cost(footprint_area_mm2(contours_in_cut_order), machine, material_key,
                            thickness_mm)
    if matcost is None:
        notes.append(f"no priced sheet of {what}: add it under sheets")
    return CutEstimate(
        cut_length_mm=length, pierces=pierces, travel_mm=travel, cut_time_s=cut_s,
        pierce_time_s=pierce_s, travel_time_s=travel_s, setup_time_s=setup, total_time_s=total,
        machine_cost=mcost, material_cost=matcost, currency=machine.currency, notes=tuple(notes),
    )


def estimate_plate(built: BuiltPlate, machine: MachineProfile) -> CutEstimate:
    """Estimate one built plate (quantity 1, no set-up), cutting its paths in their ``order``
    from the plate origin; engraving time is not included."""
    cut = sorted(built.cut, key=lambda c: c.order)
    p = built.plate
    est = estimate_cut([c.path for c in cut], machine, p.material.key, p.thickness_mm)
    if p.engravings:
        est = _with_note(est, "engraving time not included")
    return est


def _with_note(est: CutEstimate, note: str) -> CutEstimate:
    return replace(est, notes=(*est.notes, note))


def _sum(values: Sequence[float | None]) -> float | None:
    return None if any(v is None for v in values) else float(sum(values))  # type: ignore[arg-type]


def combine_estimates(estimates: Sequence[CutEstimate], quantities: Sequence[int] | None = None,
                      *, machine: MachineProfile | None = None,
                      include_setup: bool = True) -> CutEstimate:
    """One job from several estimates: each times its quantity (default 1), summed, plus the
    ``machine``'s set-up time once when ``include_setup`` (its cost at the hourly rate).

    A figure is None when it is None in any part. Notes are merged without repeats. Travel
    between parts is the sum of each part's own travel (no nesting of the job).
    """
    qty = list(quantities) if quantities is not None else [1] * len(estimates)
    if len(qty) != len(estimates):
        raise ValueError("quantities: one per estimate")
    if any(q < 0 for q in qty):
        raise ValueError("quantities: must be zero or more")

    def total(name: str) -> float | None:
        return _sum([None if getattr(e, name) is None else getattr(e, name) * q
                     for e, q in zip(estimates, qty)])

    notes: list[str] = []
    for e in estimates:
        notes.extend(n for n in e.notes if n not in notes)
    job_setup = 0.0
    if include_setup and machine is not None:
        if machine.setup_s is None:
            notes.append("no set-up time: add setup_s (counted as 0)")
        else:
            job_setup = machine.setup_s
    setup_cost = 0.0
    if machine is not None and machine.hourly_rate is not None:
        setup_cost = job_setup / 3600.0 * machine.hourly_rate
    times = total("total_time_s")
    mcost = total("machine_cost")
    currencies = {e.currency for e in estimates}
    if machine is not None:
        currencies.add(machine.currency)
    if len(currencies) > 1:
        notes.append("estimates in different currencies: " + ", ".join(sorted(currencies)))
    return CutEstimate(
        cut_length_mm=float(total("cut_length_mm") or 0.0),
        pierces=int(sum(e.pierces * q for e, q in zip(estimates, qty))),
        travel_mm=float(total("travel_mm") or 0.0),
        cut_time_s=total("cut_time_s"), pierce_time_s=total("pierce_time_s"),
        travel_time_s=total("travel_time_s"),
        setup_time_s=float(sum(e.setup_time_s * q for e, q in zip(estimates, qty)) + job_setup),
        total_time_s=None if times is None else times + job_setup,
        machine_cost=None if mcost is None else mcost + setup_cost,
        material_cost=total("material_cost"),
        currency=sorted(currencies)[0] if len(currencies) == 1 else "",
        notes=tuple(notes),
    )
