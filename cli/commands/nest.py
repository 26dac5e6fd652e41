"""``platewright nest``: lay every plate of one or more designs onto the fewest stock sheets.

Writes ``sheets/sheet_NN.dxf`` and ``.svg`` (one pair per sheet), ``nest.json`` and
``nest.html`` into the output folder (atomically), and prints utilisation, cut time and cost per
sheet. The work is done by :func:`platewright.geometry.shop.nesting.nest_parts`; this module parses,
resolves the sheet stock, writes and prints.

nest.json (``kind`` "nest", ``schema_version`` 1): ``designs`` [{name, file, sha256}],
``settings`` {spacing_mm, margin_mm, rotations}, ``parts`` [{plate, design, quantity, material,
thickness_mm, area_mm2}], ``sheets`` [{index, material, thickness_mm, size_mm, sheet_source,
parts_area_mm2, utilisation, files {dxf, svg}, cut_layers [{layer, aci}] (the DXF cut layers
in cut order, see :mod:`platewright.geometry.writers.sheet`), placements [{plate, copy, x_mm,
y_mm, rotation_deg, inside}], cost (the costing estimate of the sheet's cut, or null),
sheet_price}], ``notes``. Placement: sheet point = R(rotation_deg) * plate point + (x_mm, y_mm),
sheet origin at its lower-left corner; utilisation = parts area (as cut, holes excluded) / sheet
area.
"""

from __future__ import annotations

import argparse
import html
import json
import re
from collections import Counter
from pathlib import Path
from typing import Any

from platewright.cli.commands.base import Command, DesignCommand
from platewright.cli.outputs import check_output_target, staged_output
from platewright.cli.reports.report_html import REPORT_CSS
from platewright.cli.reports.report_json import SCHEMA_VERSION, input_entries, tool_version
from platewright.cli.reports.safety import SAFETY_NOTES
from platewright.cli.terminal import format_table
from platewright.geometry.design.loader import Design, load_design
from platewright.geometry.errors import DesignError, Problem
from platewright.geometry.plate.build import bundled_example_path
from platewright.geometry.plate.pipeline import build_design
from platewright.geometry.shop.costing import estimate_cut
from platewright.geometry.shop.machines import MachineProfile, get_machine, sheet_for
from platewright.geometry.shop.nesting import ROTATION_MODES, NestItem, NestResult, SheetSize, nest_parts
from platewright.geometry.writers.sheet import sheet_cut_layers, sheet_svg_string, write_sheet_dxf

__all__ = ["NestCommand", "parse_sheet_size", "parse_quantities", "nest_report", "nest_html", "nest_summary"]

_SIZE = re.compile(r"^\s*([0-9]*\.?[0-9]+)\s*[xX]\s*([0-9]*\.?[0-9]+)\s*$")


def parse_sheet_size(text: str) -> SheetSize:
    """``"600x400"`` -> SheetSize(600, 400) (mm); DesignError for anything else."""
    m = _SIZE.match(text or "")
    if not m or float(m.group(1)) <= 0 or float(m.group(2)) <= 0:
        raise DesignError(Problem("--sheet", f"bad sheet size '{text}'",
                                  hint="give WIDTHxHEIGHT in mm, both > 0, e.g. 600x400"))
    return SheetSize(float(m.group(1)), float(m.group(2)))


def parse_quantities(texts: list[str], labels: dict[str, str]) -> dict[str, int]:
    """``PLATE=N`` texts -> {item label: N}. ``labels`` maps every accepted name (label, plate
    name when unambiguous, ``design:plate``) to its label. DesignError on an unknown plate."""
    out: dict[str, int] = {}
    for t in texts:
        name, sep, value = t.partition("=")
        if not sep or not value.strip().isdigit():
            raise DesignError(Problem("--qty", f"bad quantity '{t}'", hint="give PLATE=N, N >= 0"))
        if name.strip() not in labels:
            raise DesignError(Problem("--qty", f"no plate named '{name.strip()}'",
                                      hint="valid: " + ", ".join(sorted(set(labels)))))
        out[labels[name.strip()]] = int(value)
    return out


def _items(designs: list[Design], args: argparse.Namespace) -> tuple[list[NestItem], list[str]]:
    """Build every design (refusing manufacturability errors) and label its plates."""
    built = []
    for d in designs:
        result = build_design(d)
        DesignCommand.refuse_on_rule_errors(result)
        built.append((d, result))
    names = Counter(b.plate.name for _, r in built for b in r.plates)
    items, design_of, labels = [], [], {}
    for d, r in built:
        stem = Path(d.source_path).stem
        for b in r.plates:
            label = b.plate.name if names[b.plate.name] == 1 else f"{stem}:{b.plate.name}"
            labels[label] = label
            labels[f"{stem}:{b.plate.name}"] = label
            items.append(NestItem(label, b.plate, b.cut, b.plate.quantity * args.sets))
            design_of.append(d.name)
    qty = parse_quantities(args.qty, labels)
    items = [NestItem(it.label, it.plate, it.cut, qty.get(it.label, it.quantity)) for it in items]
    return items, design_of


def _sheets(items: list[NestItem], designs: list[Design], machine: MachineProfile | None,
            fixed: SheetSize | None) -> tuple[dict, dict, dict]:
    """(material, thickness) -> SheetSize, where it came from, and the machine for costing."""
    sizes, source, machines = {}, {}, {}
    problems = []
    for it in items:
        key = (it.plate.material.key, float(it.plate.thickness_mm))
        if key in sizes or it.quantity <= 0:
            continue
        m = machine or next(d.machine for d in designs
                            if any(p.name == it.plate.name for p in d.plates))
        machines[key] = m
        stock = sheet_for(m, *key)
        if fixed is not None:
            price = stock.price if stock is not None and tuple(stock.size_mm) == (
                fixed.width_mm, fixed.height_mm) else None
            sizes[key], source[key] = SheetSize(fixed.width_mm, fixed.height_mm, price), "--sheet"
        elif stock is not None:
            sizes[key] = SheetSize(stock.size_mm[0], stock.size_mm[1], stock.price)
            source[key] = f"stock of machine '{m.key}'"
        elif m.bed_mm is not None:
            sizes[key], source[key] = SheetSize(*m.bed_mm), f"bed of machine '{m.key}' (no stock)"
        else:
            problems.append(Problem("--sheet", f"no sheet size for {key[0]} {key[1]:g} mm",
                                    hint="give --sheet WxH or add sheets to the machine profile"))
    if problems:
        raise DesignError(problems)
    return sizes, source, machines


def _costs(result: NestResult, machines: dict) -> list[dict[str, Any] | None]:
    out = []
    for s in result.sheets:
        m = machines.get((s.material, s.thickness_mm))
        if m is None:
            out.append(None)
            continue
        est = estimate_cut([c.path for c in s.cut], m, s.material, s.thickness_mm)
        entry = est.to_report()
        # a nested sheet uses the whole sheet: its price replaces the per-part area share
        entry["material_cost"] = s.size.price
        mc = entry["machine_cost"]
        entry["total_cost"] = None if mc is None or s.size.price is None else round(mc + s.size.price, 2)
        out.append(entry)
    return out


def nest_report(result: NestResult, items: list[NestItem], design_of: list[str],
                designs: list[Design], source: dict, costs: list) -> dict[str, Any]:
    """The nest.json dictionary (see the module docstring)."""
    sheets = []
    for s, cost in zip(result.sheets, costs):
        stem = f"sheets/sheet_{s.index:02d}"
        sheets.append({
            "index": s.index, "material": s.material, "thickness_mm": s.thickness_mm,
            "size_mm": [s.size.width_mm, s.size.height_mm],
            "sheet_source": source[(s.material, s.thickness_mm)],
            "parts_area_mm2": round(s.parts_area_mm2, 3), "utilisation": round(s.utilisation, 5),
            "files": {"dxf": f"{stem}.dxf", "svg": f"{stem}.svg"},
            "cut_layers": [{"layer": n, "aci": c} for n, c in sheet_cut_layers(s)],
            "placements": [{"plate": p.label, "copy": p.copy, "x_mm": round(p.x_mm, 6) + 0.0,
                            "y_mm": round(p.y_mm, 6) + 0.0, "rotation_deg": p.rotation_deg,
                            "inside": p.inside or None} for p in s.placements],
            "cost": cost, "sheet_price": s.size.price,
        })
    return {
        "schema_version": SCHEMA_VERSION, "kind": "nest",
        "tool": {"name": "platewright", "version": tool_version()},
        "units": {"length": "mm", "area": "mm2", "angle": "deg", "time": "s"},
        "designs": [{"name": d.name, "file": d.source_path, "sha256": d.sha256} for d in designs],
        "overrides": list(designs[0].overrides) if designs else [],
        "inputs": list({(e["role"], e["path"]): e for d in designs for e in input_entries(d)}.values()),
        "settings": {"spacing_mm": result.spacing_mm, "margin_mm": result.margin_mm,
                     "rotations": result.rotations},
        "parts": [{"plate": it.label, "design": dn, "quantity": it.quantity,
                   "material": it.plate.material.key, "thickness_mm": it.plate.thickness_mm}
                  for it, dn in zip(items, design_of)],
        "sheets": sheets, "notes": list(result.notes),
    }


#: The cut-order convention of the sheet files, as the nest page states it.
CUT_ORDER_TEXT = (
    "Engrave first, then cut layer by layer in the order listed for each sheet; the DXF "
    "entities are also written in that order. Every part's holes are cut before its outline, and "
    "a part that sits in another part's cut-out is cut completely (holes and outline) before that "
    "cut-out, whose scrap would otherwise drop with the part on it. On a sheet with such nested "
    "parts the cut layers are numbered by stage: PW_CUT1_INNER and PW_CUT1_OUTER hold the parts "
    "nested deepest, PW_CUT2_* the parts holding them, and so on up to the parts on the open "
    "sheet; other sheets use PW_CUT_INNER then PW_CUT_OUTER as the plate files do. The layer "
    "table lists the layers in this order, their names sort in this order and their colour "
    "numbers (ACI) rise in this order, so a cutter ordering by any of them cuts correctly.")


def _layer_item(sheet: dict[str, Any]) -> str:
    layers = ", ".join(f"{c['layer']} (ACI {c['aci']})" for c in sheet["cut_layers"])
    return f"<li>Sheet {sheet['index']}: {html.escape(layers)}</li>"


def nest_html(report: dict[str, Any], svgs: list[str]) -> str:
    """A short self-contained HTML page: settings, the sheet table and every sheet drawing."""
    e = html.escape
    rows = "".join(
        f"<tr><td>{s['index']}</td><td class=l>{e(s['material'])}</td><td>{s['thickness_mm']:g}</td>"
        f"<td>{s['size_mm'][0]:g} x {s['size_mm'][1]:g}</td><td>{len(s['placements'])}</td>"
        f"<td>{100 * s['utilisation']:.1f} %</td><td>{e(_time_cost(s)[0])}</td>"
        f"<td>{e(_time_cost(s)[1])}</td></tr>" for s in report["sheets"])
    st = report["settings"]
    parts = [f"<!doctype html><html><head><meta charset=utf-8><title>nest</title><style>{REPORT_CSS}"
             "</style></head><body>",
             f"<h1>Nest: {len(report['sheets'])} sheet(s)</h1>",
             f"<p class=meta>{e(', '.join(d['name'] for d in report['designs']))}; spacing "
             f"{st['spacing_mm']:g} mm, margin {st['margin_mm']:g} mm, rotations "
             f"{e(st['rotations'])}</p>",
             "<table><tr><th>sheet</th><th class=l>material</th><th>t mm</th><th>size mm</th>"
             f"<th>parts</th><th>utilisation</th><th>cut min</th><th>cost</th></tr>{rows}</table>",
             "<p class=meta>Times and costs are estimates (+-20 %): machine time plus the whole "
             "sheet price.</p>",
             f"<h2>Cut order</h2><p>{e(CUT_ORDER_TEXT)}</p>"
             f"<ul>{''.join(_layer_item(s) for s in report['sheets'])}</ul>"]
    parts += [f"<div class=caution>{e(n)}</div>" for n in report["notes"]]
    for s, svg in zip(report["sheets"], svgs):
        body = svg.split("?>", 1)[-1]
        parts.append(f"<h2>Sheet {s['index']}</h2><div class=drawing>{body}</div>")
    parts.append("<h2>Safety</h2><ul>" + "".join(f"<li>{e(n)}</li>" for n in SAFETY_NOTES) + "</ul>")
    parts.append("</body></html>\n")
    return "\n".join(parts)


class NestCommand(Command):
    name = "nest"
    help = "lay every plate of one or more designs onto the fewest stock sheets (one file per sheet)"

    def add_arguments(self, parser: argparse.ArgumentParser) -> None:
        parser.add_argument("designs", nargs="*", type=Path, metavar="DESIGN",
                            help="design files (YAML); default: the bundled example design")
        parser.add_argument("--qty", action="append", default=[], metavar="PLATE=N",
                            help="copies of a plate (overrides quantity x --sets; repeatable; "
                                 "DESIGN:PLATE when two designs share a plate name)")
        parser.add_argument("--sets", type=int, default=1, metavar="N",
                            help="multiply every plate's quantity by N (default 1)")
        parser.add_argument("--sheet", metavar="WxH", help="sheet size in mm, e.g. 600x400 "
                            "(default: the machine's sheet stock for each material)")
        parser.add_argument("--machine", metavar="KEY", help="machine profile to cut on: its "
                            "sheet stock, kerf and speeds (same as --set machine=KEY)")
        parser.add_argument("--spacing-mm", type=float, default=3.0, metavar="MM",
                            help="least gap between cut paths (default 3 mm, common practice)")
        parser.add_argument("--margin-mm", type=float, default=5.0, metavar="MM",
                            help="least gap from a cut path to the sheet edge (default 5 mm)")
        parser.add_argument("--rotations", choices=list(ROTATION_MODES), default="90",
                            help="allowed part rotations: 90-degree steps (default), 15-degree "
                                 "steps (free), 0/180 only (180, keeps wood grain) or none")
        parser.add_argument("-o", "--output", type=Path, metavar="OUTDIR",
                            help="output folder (default: platewright-out/<first design>-nest)")
        parser.add_argument("--set", dest="overrides", action="append", default=[],
                            metavar="PATH=VALUE", help="override a field in every design")
        parser.add_argument("-q", "--quiet", action="store_true", help="no terminal summary")

    def run(self, args: argparse.Namespace) -> int:
        paths = list(args.designs) or [bundled_example_path()]
        fixed = parse_sheet_size(args.sheet) if args.sheet is not None else None
        if args.sets < 0:
            raise DesignError(Problem("--sets", f"must be >= 0, got {args.sets}"))
        machine = None
        overrides = list(args.overrides)
        if args.machine:
            try:
                machine = get_machine(args.machine)
            except KeyError as exc:
                raise DesignError(Problem("--machine", str(exc).strip("'\""))) from None
            overrides.append(f"machine={args.machine}")
        for p in paths:
            if not p.exists():
                raise DesignError(Problem("DESIGN", f"no such design file: '{p}'"))
        designs = [load_design(p, overrides=overrides) for p in paths]
        outdir = args.output if args.output is not None else (
            Path("platewright-out") / f"{paths[0].stem}-nest")
        check_output_target(outdir.absolute())
        items, design_of = _items(designs, args)
        sizes, source, machines = _sheets(items, designs, machine, fixed)
        result = nest_parts(items, sizes, spacing_mm=args.spacing_mm, margin_mm=args.margin_mm,
                            rotations=args.rotations)
        costs = _costs(result, machines)
        plates = {it.label: it.plate for it in items}
        report = nest_report(result, items, design_of, designs, source, costs)
        with staged_output(outdir, index_file="nest.json",
                           protect=[f.path for d in designs for f in d.inputs]) as tmp:
            (tmp / "sheets").mkdir()
            svgs = []
            for s, entry in zip(result.sheets, report["sheets"]):
                write_sheet_dxf(s, tmp / entry["files"]["dxf"], plates)
                svg = sheet_svg_string(s, plates)
                (tmp / entry["files"]["svg"]).write_text(svg, encoding="utf-8")
                svgs.append(svg)
            (tmp / "nest.json").write_text(json.dumps(report, indent=2), encoding="utf-8")
            (tmp / "nest.html").write_text(nest_html(report, svgs), encoding="utf-8")
        if not args.quiet:
            print(nest_summary(report, str(outdir)))
        return 0


def _time_cost(sheet: dict[str, Any]) -> tuple[str, str]:
    """Cut time (min) and cost texts of a nest.json sheet entry ("-" when unknown)."""
    c = sheet["cost"] or {}
    t = c.get("total_time_s")
    cur = c.get("currency", "")
    if c.get("total_cost") is not None:
        cost = f"{c['total_cost']:.2f} {cur}".strip()
    elif c.get("machine_cost") is not None:
        cost = f"{c['machine_cost']:.2f} {cur} (machine only, no sheet price)".replace("  ", " ")
    else:
        cost = "-"
    return ("-" if t is None else f"{t / 60:.1f}", cost)


def nest_summary(report: dict[str, Any], outdir: str) -> str:
    """Terminal summary: one row per sheet with utilisation, cut time and cost."""
    rows = []
    for s in report["sheets"]:
        rows.append([str(s["index"]), s["material"], f"{s['thickness_mm']:g}",
                     f"{s['size_mm'][0]:g} x {s['size_mm'][1]:g}", str(len(s["placements"])),
                     f"{100 * s['utilisation']:.1f}", *_time_cost(s)])
    lines = [f"{len(rows)} sheet(s), "
             f"{sum(len(s['placements']) for s in report['sheets'])} part(s)",
             format_table(["sheet", "material", "t mm", "size mm", "parts", "used %", "cut min",
                           "cost"], rows)]
    lines += [f"  note: {n}" for n in report["notes"]]
    lines.append("  times and costs are estimates (+-20 %); cost = machine time + whole sheet price")
    lines.append(f"written to {outdir} (nest.html, nest.json, sheets/)")
    lines.append("Cut safely: fume extraction on, never unattended, no chlorine-bearing plastics.")
    return "\n".join(lines)
