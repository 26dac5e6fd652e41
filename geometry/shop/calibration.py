"""From coupon measurements to kerf and fit allowances (our measurement file format).

A coupon (:mod:`.coupons`) is cut with its paths compensated by ``kerf_used_mm`` (k0). Written
``k`` for the true kerf of the machine, every estimate below follows from "the cutter removes a
strip k wide centred on its path" (all sizes in mm):

- square hole of nominal side S: hole and drop-out part share one path of side ``S - k0``; the
  hole comes out ``S - k0 + k`` and the part ``S - k0 - k``, so ``k = (hole - part) / 2``
  (one estimate along x, one along y);
- slot of nominal width w: its path is ``w - k0`` wide and the slot comes out ``w - k0 + k``,
  so ``k = measured - (w - k0)``;
- the outline of nominal size L: its path is ``L + k0`` and the part comes out ``L + k0 - k``,
  so ``k = L + k0 - measured`` (one estimate along x, one along y).

The kerf is the mean of every estimate given. Fits: a ladder hole of nominal diameter h was
cut on a path ``h - k0`` and came out ``h - k0 + k``. A design bore of nominal D with allowance
a is cut, with the new kerf, on ``D + a - k`` and comes out ``D + a``. The same physical hole
needs ``a = h - D + (k - k0)``: the allowance of a fit class is the nominal of the hole that gave
that fit, minus the bore nominal, plus the kerf correction.
"""

from __future__ import annotations

import difflib
import math
from collections.abc import Mapping
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import yaml

from platewright.geometry.design.schema import suggest
from platewright.geometry.design.yamlsource import LineMap, parse_yaml
from platewright.geometry.errors import DesignError, Problem
from platewright.geometry.library import load_materials
from platewright.geometry.shop.coupons import COUPON_FIT_CLASSES, Coupon

__all__ = [
    "Measurements",
    "Calibration",
    "kerf_from_square",
    "kerf_from_slot",
    "kerf_from_outline",
    "fit_allowance",
    "derive_calibration",
    "measurement_template",
    "read_measurements",
    "load_measurements",
]

#: A measured kerf beyond this is a measuring mistake, not a kerf (mm).
MAX_KERF_MM = 2.0
#: Spread of the kerf estimates above which the result gets a warning note (mm, common practice:
#: calipers read to 0.02 mm; estimates 0.05 mm apart mean something was misread).
SPREAD_WARN_MM = 0.05


def kerf_from_square(hole_mm: float, part_mm: float) -> float:
    """Kerf (mm) from a square hole and the square part cut on the same path: (hole - part) / 2."""
    return (hole_mm - part_mm) / 2.0


def kerf_from_slot(measured_mm: float, nominal_mm: float, kerf_used_mm: float) -> float:
    """Kerf (mm) from a slot: measured width - path width, path width = nominal - kerf used."""
    return measured_mm - (nominal_mm - kerf_used_mm)


def kerf_from_outline(measured_mm: float, nominal_mm: float, kerf_used_mm: float) -> float:
    """Kerf (mm) from the outline: path size - measured, path size = nominal + kerf used."""
    return nominal_mm + kerf_used_mm - measured_mm


def fit_allowance(hole_nominal_mm: float, bore_mm: float, kerf_mm: float,
                  kerf_used_mm: float) -> float:
    """Signed fit allowance (mm): ``hole nominal - bore nominal + (kerf - kerf used)``."""
    return hole_nominal_mm - bore_mm + (kerf_mm - kerf_used_mm)


@dataclass(frozen=True)
class Measurements:
    """What the coupon was and what the user measured (mm). None = not measured.

    ``holes_mm`` / ``slots_mm``: nominal sizes on the coupon; ``slot_widths_mm``: nominal width
    -> measured width; ``square_hole_mm`` / ``square_part_mm`` / ``outline_measured_mm``:
    (along x, along y); ``fits``: fit class -> nominal diameter of the hole that gave it.
    ``machine``: the profile key or file the coupon was cut for.
    """

    material: str
    thickness_mm: float
    bore_mm: float
    kerf_used_mm: float
    machine: str
    square_mm: float
    outline_mm: tuple[float, float]
    holes_mm: tuple[float, ...]
    slots_mm: tuple[float, ...]
    square_hole_mm: tuple[float | None, float | None] = (None, None)
    square_part_mm: tuple[float | None, float | None] = (None, None)
    outline_measured_mm: tuple[float | None, float | None] = (None, None)
    slot_widths_mm: dict[float, float] = field(default_factory=dict)
    fits: dict[str, float] = field(default_factory=dict)


@dataclass(frozen=True)
class Calibration:
    """Result: ``kerf_mm`` (mean of ``kerf_estimates``: (label, kerf mm) pairs), the spread
    (max - min, mm), ``fit_allowance_mm`` (fit class -> signed mm) and notes."""

    material: str
    thickness_mm: float
    kerf_mm: float
    kerf_estimates: tuple[tuple[str, float], ...]
    spread_mm: float
    fit_allowance_mm: dict[str, float]
    notes: tuple[str, ...] = ()


def derive_calibration(m: Measurements) -> Calibration:
    """Kerf and fit allowances from measurements (formulas in the module docstring).

    Raises DesignError (path ``measured`` / ``fits``) when nothing was measured or the result
    cannot be a kerf (negative, or above 2 mm).
    """
    est: list[tuple[str, float]] = []
    notes: list[str] = []
    for axis, h, p in zip("xy", m.square_hole_mm, m.square_part_mm):
        if h is not None and p is not None:
            est.append((f"square {axis}", kerf_from_square(h, p)))
            path = m.square_mm - m.kerf_used_mm
            if abs((h + p) / 2.0 - path) > 0.25:
                notes.append(f"square {axis}: mean of hole and part {(h + p) / 2.0:.3f} mm is far "
                             f"from the path size {path:.3f} mm: check the measurement and the "
                             "cut file's scale")
    for w, measured in sorted(m.slot_widths_mm.items()):
        est.append((f"slot {w:.2f}", kerf_from_slot(measured, w, m.kerf_used_mm)))
    for axis, nominal, measured in zip("xy", m.outline_mm, m.outline_measured_mm):
        if measured is not None:
            est.append((f"outline {axis}", kerf_from_outline(measured, nominal, m.kerf_used_mm)))
    if not est:
        raise DesignError(Problem("measured", "no measurements to derive a kerf from",
                                  hint="fill in at least the square hole and part, a slot width "
                                       "or the outline size"))
    k = sum(v for _, v in est) / len(est)
    spread = max(v for _, v in est) - min(v for _, v in est)
    if not 0.0 <= k <= MAX_KERF_MM:
        raise DesignError(Problem("measured", f"the measurements give a kerf of {k:.3f} mm",
                                  hint=f"a kerf lies between 0 and {MAX_KERF_MM:g} mm: check "
                                       "which value is the hole and which the part"))
    if spread > SPREAD_WARN_MM:
        notes.append(f"kerf estimates spread {spread:.3f} mm (more than {SPREAD_WARN_MM:g}): "
                     "measure again, or kerf differs along x and y")
    fits = {cls: fit_allowance(h, m.bore_mm, k, m.kerf_used_mm) for cls, h in m.fits.items()}
    return Calibration(m.material, m.thickness_mm, k, tuple(est), spread, fits, tuple(notes))


def measurement_template(coupon: Coupon, machine: str) -> str:
    """The measurements file to fill in (YAML text) for ``coupon`` cut on ``machine``."""
    p = coupon.plate
    head = {
        "material": p.material.key, "thickness_mm": p.thickness_mm, "bore_mm": coupon.bore_mm,
        "kerf_used_mm": coupon.kerf_used_mm, "machine": machine, "square_mm": coupon.square_mm,
        "outline_mm": list(coupon.outline_mm), "holes_mm": [d for _, d in coupon.holes],
        "slots_mm": [w for _, w in coupon.slots],
    }
    lines = [
        "# platewright coupon measurements (mm, calipers). Fill in what you measured; leave null",
        "# what you did not. Then run: platewright coupon --measured THIS_FILE "
        "--machine-file PROFILE.yaml",
        "coupon:            # what was cut: do not change",
        *("  " + ln for ln in yaml.safe_dump(head, sort_keys=False,
                                              default_flow_style=None).splitlines()),
        "measured:",
        "  square_hole_mm: [null, null]   # the square hole left in the coupon [along x, along y]",
        "  square_part_mm: [null, null]   # the square that dropped out of it [along x, along y]",
        "  outline_mm: [null, null]       # the whole coupon [along x, along y]",
        "  slots:                         # each slot's width, measured across (engraved nominal)",
        *(f"    - {{nominal_mm: {w:.2f}, measured_mm: null}}" for _, w in coupon.slots),
        "fits:   # for each fit you want: the engraved size of the hole that gave it (null: none)",
        "  press: null          # the part had to be pressed in and stays without glue",
        "  transition: null     # goes in by hand with firm pressure, no play",
        "  slide: null          # slides in freely with no felt play",
        "  clearance: null      # loose: drops in",
    ]
    return "\n".join(lines) + "\n"


class _Reader:
    def __init__(self, lines: LineMap, source: str) -> None:
        self.lines, self.source = lines, source
        self.problems: list[Problem] = []

    def fail(self, path: str, message: str, hint: str = "") -> None:
        self.problems.append(Problem(path, message, self.lines.line_of(path), hint))

    def mapping(self, d: Any, path: str, keys: tuple[str, ...]) -> Mapping:
        if not isinstance(d, Mapping):
            self.fail(path, "expected a mapping")
            return {}
        for k in d:
            if k not in keys:
                close = difflib.get_close_matches(str(k), keys, n=1)
                self.fail(f"{path}.{k}" if path else str(k), f"unknown field {k!r}",
                          f"did you mean {close[0]!r}?" if close else "valid: " + ", ".join(keys))
        return d

    def number(self, v: Any, path: str, *, optional: bool = False) -> float | None:
        if v is None and optional:
            return None
        if isinstance(v, bool) or not isinstance(v, (int, float)) or not math.isfinite(v) or v <= 0:
            self.fail(path, f"expected a number greater than zero{' or null' if optional else ''}, "
                      f"got {v!r}")
            return None
        return float(v)

    def pair(self, v: Any, path: str, optional: bool) -> tuple[float | None, float | None]:
        if not isinstance(v, list) or len(v) != 2:
            self.fail(path, f"expected [x, y], got {v!r}")
            return (None, None)
        return (self.number(v[0], f"{path}[0]", optional=optional),
                self.number(v[1], f"{path}[1]", optional=optional))

    def numbers(self, v: Any, path: str) -> tuple[float, ...]:
        if not isinstance(v, list) or not v:
            self.fail(path, "expected a list of sizes")
            return ()
        out = [self.number(x, f"{path}[{i}]") for i, x in enumerate(v)]
        return tuple(x for x in out if x is not None)


def _near(value: float, known: tuple[float, ...]) -> float | None:
    for k in known:
        if abs(k - value) <= 1e-6:
            return k
    return None


def read_measurements(text: str, source: str = "<measurements>") -> Measurements:
    """Parse a filled-in measurements file; DesignError listing every problem (path + line)."""
    tree = parse_yaml(text, source)
    r = _Reader(tree.lines, source)
    top = r.mapping(tree.data, "", ("coupon", "measured", "fits"))
    c = r.mapping(top.get("coupon"), "coupon", ("material", "thickness_mm", "bore_mm",
                                                 "kerf_used_mm", "machine", "square_mm",
                                                 "outline_mm", "holes_mm", "slots_mm"))
    meas = r.mapping(top.get("measured") or {}, "measured",
                     ("square_hole_mm", "square_part_mm", "outline_mm", "slots"))
    fits_raw = r.mapping(top.get("fits") or {}, "fits", COUPON_FIT_CLASSES)
    kerf_used = c.get("kerf_used_mm")
    if isinstance(kerf_used, bool) or not isinstance(kerf_used, (int, float)) or kerf_used < 0:
        r.fail("coupon.kerf_used_mm", f"expected a number zero or more, got {kerf_used!r}")
        kerf_used = 0.0
    holes = r.numbers(c.get("holes_mm"), "coupon.holes_mm")
    slots = r.numbers(c.get("slots_mm"), "coupon.slots_mm")
    outline = r.pair(c.get("outline_mm"), "coupon.outline_mm", optional=False)
    widths: dict[float, float] = {}
    for i, s in enumerate(meas.get("slots") or []):
        sp = f"measured.slots[{i}]"
        s = r.mapping(s, sp, ("nominal_mm", "measured_mm"))
        nominal = r.number(s.get("nominal_mm"), f"{sp}.nominal_mm")
        measured = r.number(s.get("measured_mm"), f"{sp}.measured_mm", optional=True)
        if nominal is None or measured is None:
            continue
        known = _near(nominal, slots)
        if known is None:
            r.fail(f"{sp}.nominal_mm", f"no slot of {nominal:g} mm on this coupon",
                   "valid: " + ", ".join(f"{w:.2f}" for w in slots))
        else:
            widths[known] = measured
    fits: dict[str, float] = {}
    for cls, v in fits_raw.items():
        h = r.number(v, f"fits.{cls}", optional=True)
        if h is None:
            continue
        known = _near(h, holes)
        if known is None:
            r.fail(f"fits.{cls}", f"no hole of {h:g} mm on this coupon",
                   "give the engraved size of one hole: " + ", ".join(f"{d:.2f}" for d in holes))
        else:
            fits[str(cls)] = known
    material = c.get("material")
    mats = load_materials()
    if not isinstance(material, str) or material not in mats:
        r.fail("coupon.material", f"unknown material {material!r}",
               suggest(str(material), sorted(mats)))
    elif not mats[material].laser_safe:
        r.fail("coupon.material", f"material {material!r} must never be laser-cut: "
               f"{mats[material].refusal_reason}")
    thickness = r.number(c.get("thickness_mm"), "coupon.thickness_mm")
    bore = r.number(c.get("bore_mm"), "coupon.bore_mm")
    square = r.number(c.get("square_mm"), "coupon.square_mm")
    pairs = {k: r.pair(meas.get(k, [None, None]), f"measured.{k}", optional=True)
             for k in ("square_hole_mm", "square_part_mm", "outline_mm")}
    if r.problems:
        raise DesignError(r.problems, source)
    return Measurements(
        material=str(material), thickness_mm=thickness, bore_mm=bore,  # type: ignore[arg-type]
        kerf_used_mm=float(kerf_used), machine=str(c.get("machine") or ""),
        square_mm=square, outline_mm=outline,  # type: ignore[arg-type]
        holes_mm=holes, slots_mm=slots, square_hole_mm=pairs["square_hole_mm"],
        square_part_mm=pairs["square_part_mm"], outline_measured_mm=pairs["outline_mm"],
        slot_widths_mm=widths, fits=fits,
    )


def load_measurements(path: str | Path) -> Measurements:
    """:func:`read_measurements` of the file at ``path`` (DesignError if unreadable)."""
    p = Path(path)
    try:
        text = p.read_text(encoding="utf-8")
    except (OSError, UnicodeDecodeError) as exc:
        raise DesignError(Problem("--measured", f"cannot read the measurements file: {exc}"),
                          str(p)) from exc
    return read_measurements(text, str(p))
