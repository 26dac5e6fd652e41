"""``platewright coupon``: write a calibration coupon (DXF, SVG, measuring sheet, measurements
template), or read the filled-in measurements and store kerf and fit allowances in a profile file.
"""

from __future__ import annotations

import argparse
import dataclasses
import html
import json
from datetime import date
from pathlib import Path

from platewright.cli.commands.base import Command
from platewright.cli.outputs import staged_output
from platewright.cli.reports.report_json import SCHEMA_VERSION, tool_version
from platewright.cli.reports.safety import SAFETY_NOTES
from platewright.geometry.design.schema import suggest
from platewright.geometry.errors import DesignError, Problem
from platewright.geometry.library import load_materials
from platewright.geometry.shop.calibration import (
    Calibration,
    derive_calibration,
    load_measurements,
    measurement_template,
)
from platewright.geometry.shop.coupons import Coupon, build_coupon
from platewright.geometry.shop.machine_files import (
    is_profile_path,
    load_profile_file,
    resolve_machine,
    save_profile,
    set_measured,
)
from platewright.geometry.shop.machines import KerfRangeError, ProfileFieldError, kerf_for
from platewright.geometry.writers.dxf import write_plate_dxf
from platewright.geometry.writers.svg import plate_svg_string

__all__ = ["CouponCommand", "measuring_sheet_html"]

_OPTION_OF = {"thickness_mm": "--thickness-mm", "bore_mm": "--bore-mm", "span_mm": "--span-mm",
              "step_mm": "--step-mm", "square_mm": "--square-mm", "kerf_used_mm": "--kerf-mm",
              "slot_widths_mm": "--thickness-mm", "material": "--material"}


class CouponCommand(Command):
    """Write a calibration coupon, or (``--measured``) store what it measured in a profile."""

    name = "coupon"
    help = ("write a calibration coupon (hole ladder, slot comb, kerf square) with a measuring "
            "sheet; with --measured FILE store the measured kerf and fits in a machine profile file")

    def add_arguments(self, parser: argparse.ArgumentParser) -> None:
        parser.add_argument("--material", default="cast_acrylic", metavar="KEY",
                            help="material key (default cast_acrylic; `platewright materials`)")
        parser.add_argument("--thickness-mm", type=float, default=3.0, metavar="T",
                            help="sheet thickness, mm (default 3)")
        parser.add_argument("--bore-mm", type=float, default=8.0, metavar="D",
                            help="nominal bore the hole ladder steps around: your bearing's outside "
                                 "or your axle's diameter, mm (default 8)")
        parser.add_argument("--span-mm", type=float, default=0.3, metavar="MM",
                            help="ladder from D - span to D + span (default 0.3)")
        parser.add_argument("--step-mm", type=float, default=0.1, metavar="MM",
                            help="ladder step, mm (default 0.1; 0.05 for finer fits)")
        parser.add_argument("--square-mm", type=float, default=20.0, metavar="MM",
                            help="side of the kerf square, mm (default 20)")
        parser.add_argument("--machine", default="example_co2_60w", metavar="KEY|FILE",
                            help="machine profile key or file (default example_co2_60w)")
        parser.add_argument("--kerf-mm", type=float, metavar="K",
                            help="kerf to compensate the coupon with (default: from the profile)")
        parser.add_argument("-o", "--output", type=Path, metavar="OUTDIR",
                            help="output folder (default platewright-out/coupon-<material>-<T>mm)")
        parser.add_argument("--measured", type=Path, metavar="FILE",
                            help="read a filled-in measurements file and update a profile file")
        parser.add_argument("--machine-file", type=Path, metavar="PROFILE.yaml",
                            help="profile file to update with --measured (created from the "
                                 "coupon's bundled profile when missing)")
        parser.add_argument("-q", "--quiet", action="store_true", help="no terminal summary")

    def run(self, args: argparse.Namespace) -> int:
        if args.measured is not None:
            return self._calibrate(args)
        return self._write(args)

    # -- writing a coupon -----------------------------------------------------------------------

    def _write(self, args: argparse.Namespace) -> int:
        materials = load_materials()
        mat = materials.get(args.material)
        if mat is None:
            raise DesignError(Problem("--material", f"unknown material '{args.material}'",
                                      hint=suggest(args.material, sorted(materials))))
        if not mat.laser_safe:
            raise DesignError(Problem("--material", f"material '{mat.key}' ({mat.name}) must never "
                                      f"be laser-cut: {mat.refusal_reason}", hint="choose another"))
        profile = resolve_machine(args.machine, None, "--machine")
        try:
            kerf = args.kerf_mm if args.kerf_mm is not None else kerf_for(profile, mat.key,
                                                                           args.thickness_mm)
        except KerfRangeError as exc:
            raise DesignError(Problem("--thickness-mm", str(exc), hint="give --kerf-mm (your "
                                      "best guess: the coupon measures the real kerf)")) from None
        try:
            coupon = build_coupon(mat, args.thickness_mm, args.bore_mm, kerf, span_mm=args.span_mm,
                                  step_mm=args.step_mm, square_mm=args.square_mm)
        except ValueError as exc:
            field, _, problem = str(exc).partition(": ")
            option = _OPTION_OF.get(field.split("/")[0], field)
            raise DesignError(Problem(option, problem or str(exc))) from None
        w, h = coupon.outline_mm
        if profile.bed_mm is not None and not (
                (w <= profile.bed_mm[0] and h <= profile.bed_mm[1])
                or (h <= profile.bed_mm[0] and w <= profile.bed_mm[1])):
            raise DesignError(Problem("--bore-mm", f"the coupon ({w:g} x {h:g} mm) does not fit the "
                                      f"bed of '{profile.key}'", hint="use a smaller span or bore"))
        outdir = args.output or Path("platewright-out") / f"coupon-{mat.key}-{args.thickness_mm:g}mm"
        svg = plate_svg_string(coupon.plate, list(coupon.cut))
        machine_ref = args.machine if not is_profile_path(args.machine) else str(
            Path(args.machine).absolute())
        files = {"dxf": "coupon.dxf", "svg": "coupon.svg", "sheet": "measuring_sheet.html",
                 "measurements": "measurements.yaml"}
        inputs = [args.machine] if is_profile_path(args.machine) else []
        with staged_output(outdir, protect=inputs) as tmp:
            write_plate_dxf(coupon.plate, list(coupon.cut), tmp / files["dxf"])
            (tmp / files["svg"]).write_text(svg, encoding="utf-8")
            (tmp / files["sheet"]).write_text(measuring_sheet_html(coupon, svg, profile.name),
                                              encoding="utf-8")
            (tmp / files["measurements"]).write_text(measurement_template(coupon, machine_ref),
                                                     encoding="utf-8")
            (tmp / "report.json").write_text(json.dumps(_coupon_report(coupon, profile.key, files),
                                                        indent=2), encoding="utf-8")
        if not args.quiet:
            print(f"coupon {w:g} x {h:g} mm, {mat.key} {args.thickness_mm:g} mm, cut with kerf "
                  f"{kerf:g} mm on '{profile.key}'")
            print(f"  holes: {', '.join(f'{d:.2f}' for _, d in coupon.holes)} mm")
            print(f"  slots: {', '.join(f'{s:.2f}' for _, s in coupon.slots)} mm; "
                  f"kerf square {coupon.square_mm:g} mm")
            print(f"written to {outdir} (coupon.dxf, coupon.svg, measuring_sheet.html, "
                  "measurements.yaml)")
            print("Cut safely: fume extraction on, never unattended.")
        return 0

    # -- storing measurements ---------------------------------------------------------------------

    def _calibrate(self, args: argparse.Namespace) -> int:
        m = load_measurements(args.measured)
        cal = derive_calibration(m)
        target = args.machine_file
        if target is None:
            if not is_profile_path(m.machine):
                raise DesignError(Problem("--machine-file", f"the coupon was cut for the bundled "
                                          f"profile '{m.machine}', which is not changed",
                                          hint="give --machine-file PROFILE.yaml (created from "
                                               "the bundled profile when missing)"))
            target = Path(m.machine)
            if not target.is_absolute():
                target = args.measured.parent / target
        if target.exists():
            profile = load_profile_file(target)
        else:
            base = resolve_machine(m.machine or "example_co2_60w", args.measured.parent,
                                   "coupon.machine")
            profile = dataclasses.replace(base, key=target.stem,
                                          name=f"{target.stem} (measured, from {base.name})")
        try:
            new, changes = set_measured(profile, cal.material, cal.thickness_mm, cal.kerf_mm,
                                        cal.fit_allowance_mm)
        except ProfileFieldError as exc:
            raise DesignError(Problem(exc.path, exc.problem, hint=exc.hint), str(target)) from None
        sources = dict(new.sources)
        sources[f"measured {cal.material} {cal.thickness_mm:g} mm"] = (
            f"platewright coupon, {date.today().isoformat()}: kerf from {len(cal.kerf_estimates)} "
            f"estimates (spread {cal.spread_mm:.3f} mm)")
        new = dataclasses.replace(new, sources=sources)
        save_profile(new, target)
        if not args.quiet:
            print(_calibration_text(cal, changes, target))
        return 0


def _calibration_text(cal: Calibration, changes: list[str], target: Path) -> str:
    lines = [f"kerf {cal.material} {cal.thickness_mm:g} mm: {cal.kerf_mm:.3f} mm "
             f"(mean of {len(cal.kerf_estimates)}, spread {cal.spread_mm:.3f} mm)"]
    lines += [f"  {label}: {k:.3f} mm" for label, k in cal.kerf_estimates]
    lines += [f"  fit {c}: {a:+.3f} mm" for c, a in cal.fit_allowance_mm.items()]
    lines += [f"  note: {n}" for n in cal.notes]
    lines.append(f"updated {target}:")
    lines += [f"  {c}" for c in changes]
    return "\n".join(lines)


def _coupon_report(coupon: Coupon, machine: str, files: dict[str, str]) -> dict:
    p = coupon.plate
    return {
        "schema_version": SCHEMA_VERSION, "tool": {"name": "platewright", "version": tool_version()},
        "kind": "coupon", "units": {"length": "mm"},
        "coupon": {"material": p.material.key, "thickness_mm": p.thickness_mm,
                   "bore_mm": coupon.bore_mm, "kerf_used_mm": coupon.kerf_used_mm,
                   "machine": machine, "outline_mm": list(coupon.outline_mm),
                   "square_mm": coupon.square_mm,
                   "holes": [{"id": i, "nominal_diameter_mm": d} for i, d in coupon.holes],
                   "slots": [{"id": i, "nominal_width_mm": w} for i, w in coupon.slots]},
        "files": files,
    }


def _e(x: object) -> str:
    return html.escape(str(x))


def measuring_sheet_html(coupon: Coupon, svg: str, machine_name: str) -> str:
    """The measuring sheet (self-contained HTML): what was cut and how to measure it."""
    p, k0 = coupon.plate, coupon.kerf_used_mm
    hole_rows = "".join(f"<tr><td>{_e(i)}</td><td>{d:.2f}</td><td>{d - k0:.3f}</td></tr>"
                        for i, d in coupon.holes)
    slot_rows = "".join(f"<tr><td>{_e(i)}</td><td>{w:.2f}</td><td>{w - k0:.3f}</td></tr>"
                        for i, w in coupon.slots)
    w, h = coupon.outline_mm
    safety = "".join(f"<li>{_e(s)}</li>" for s in SAFETY_NOTES[:3])
    return f"""<!DOCTYPE html>
<html lang="en"><head><meta charset="utf-8"><title>Calibration coupon - platewright</title>
<style>body{{font-family:system-ui,sans-serif;max-width:60rem;margin:2rem auto;line-height:1.45}}
table{{border-collapse:collapse}} td,th{{border:1px solid #c9d3dc;padding:.2rem .5rem;text-align:right}}
.caution{{background:#fff6e0;border-left:6px solid #d98c00;padding:.5rem 1rem}}
.drawing svg{{max-width:100%;height:auto}} code{{background:#eef2f5;padding:0 .2rem}}</style></head>
<body>
<h1>Calibration coupon: {_e(p.material.name)}, {p.thickness_mm:g} mm</h1>
<p>Machine {_e(machine_name)}; cut paths compensated with kerf <strong>{k0:g} mm</strong>
(recorded in measurements.yaml: do not change it). Outline {w:g} × {h:g} mm, kerf square
{coupon.square_mm:g} mm, hole ladder around {coupon.bore_mm:g} mm. All sizes in mm.</p>
<div class="caution"><ul>{safety}</ul></div>
<div class="drawing">{svg}</div>
<h2>How to measure</h2>
<ol>
<li>Cut coupon.dxf (or .svg) at 1:1 in millimetres; the engraving layer first. Check the outline
is about {w:g} × {h:g} mm: if it is 25.4 times off, the importer ignored the units.</li>
<li>Let the part cool; remove the square that dropped out of the square hole. Use calipers (0.02 mm
reading), measure away from the corners and on the top face. Measure each size along x and along y,
twice, and write the mean.</li>
<li><strong>Square:</strong> the hole's inside width with the inside jaws, the dropped-out square's
width with the outside jaws. Both came from the same path, so kerf = (hole − part) / 2.</li>
<li><strong>Outline:</strong> the whole coupon along x and y (kerf = nominal + {k0:g} − measured).</li>
<li><strong>Slots:</strong> each slot's width across, with the inside jaws
(kerf = measured − (nominal − {k0:g})). A tab of the same sheet shows which slot holds it.</li>
<li><strong>Holes:</strong> try your bearing or axle in each hole. For each fit you want (press,
transition, slide, clearance) write the engraved size of the hole that gave it.</li>
<li>Fill in measurements.yaml and run
<code>platewright coupon --measured measurements.yaml --machine-file my_laser.yaml</code>. The kerf
becomes the mean of all estimates; each fit allowance = that hole's nominal − {coupon.bore_mm:g}
+ (measured kerf − {k0:g}).</li>
</ol>
<p>Kerf changes with focus, power, speed and material batch: repeat on a new sheet. Fits in brittle
acrylic: a press fit can crack the plate later; confirm by test.</p>
<h2>What was cut</h2>
<h3>Holes</h3><table><tr><th>id</th><th>nominal (engraved)</th><th>cut path</th></tr>{hole_rows}</table>
<h3>Slots</h3><table><tr><th>id</th><th>nominal (engraved)</th><th>cut path</th></tr>{slot_rows}</table>
</body></html>
"""
