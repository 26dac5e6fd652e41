"""``platewright sweep DESIGN --vary PATH=START:STOP:STEP ...``: every combination of varied fields.

The ranges are checked with the design loader before anything is written (exit 2 when one is
bad). Results go to OUTDIR/results/ one file per combination as they arrive, so an interrupted
sweep resumes where it stopped; sweep.csv, sweep.html and plots/ are written at the end.
Exit 0 when at least one combination was built and met every limit, 1 when none did.
"""

from __future__ import annotations

import argparse
import json
import logging
import os
import shutil
import sys
from pathlib import Path
from typing import Any

from platewright.cli.commands.base import Command
from platewright.cli.interrupts import exit_status
from platewright.cli.outputs import output_folder, written_by_us
from platewright.cli.reports.report_json import input_entries, tool_version
from platewright.cli.sweep.engine import (
    lighten_available,
    parse_vary,
    run_sweep,
    sweep_jobs,
    validate_sweep,
    write_atomic,
)
from platewright.geometry.errors import DesignError, Problem

__all__ = ["SweepCommand", "is_sweep_folder"]


def is_sweep_folder(folder: Path) -> bool:
    """True when ``folder`` holds a sweep.json written by platewright (so it may be resumed)."""
    return written_by_us(folder, "sweep.json")


class SweepCommand(Command):
    name = "sweep"
    help = ("build (and check, and lighten) every combination of varied design fields, in "
            "parallel; writes sweep.csv, a mass-against-deflection plot and an HTML page")

    def add_arguments(self, parser: argparse.ArgumentParser) -> None:
        parser.add_argument("design", type=Path, metavar="DESIGN", help="design file (YAML)")
        parser.add_argument("--vary", action="append", default=[], metavar="PATH=START:STOP:STEP",
                            required=True,
                            help="vary a numeric field over a range, STOP included when it falls "
                                 "on the step, e.g. references.wheelbase_mm=150:190:10 (repeatable: "
                                 "every combination runs)")
        parser.add_argument("-o", "--output", type=Path, metavar="OUTDIR",
                            help="output folder (default: platewright-out/sweep-<design name>)")
        parser.add_argument("--set", dest="overrides", action="append", default=[],
                            metavar="PATH=VALUE", help="override a field in every combination")
        parser.add_argument("--machine", metavar="KEY", help="machine profile key")
        parser.add_argument("--check", action="store_true",
                            help="run the design's load cases for every combination")
        parser.add_argument("--lighten", action="store_true",
                            help="also run the lightening step when it is installed")
        parser.add_argument("--jobs", type=int, default=os.cpu_count() or 1, metavar="N",
                            help="parallel workers (default: the number of cores)")
        parser.add_argument("--backend", choices=["local", "dask"], default="local",
                            help="local process pool (default) or a Dask cluster (extra 'cluster')")
        parser.add_argument("--scheduler", metavar="ADDRESS",
                            help="Dask scheduler address (default: a local cluster on 127.0.0.1)")
        parser.add_argument("-q", "--quiet", action="store_true", help="no progress or summary")

    def run(self, args: argparse.Namespace) -> int:
        if not args.design.is_file():
            raise DesignError(Problem("DESIGN", f"no such design file: '{args.design}'"))
        if args.jobs < 1:
            raise DesignError(Problem("--jobs", f"must be at least 1, got {args.jobs}"))
        if args.scheduler and args.backend != "dask":
            raise DesignError(Problem("--scheduler", "a scheduler address needs --backend dask"))
        specs = [parse_vary(text) for text in args.vary]
        overrides = list(args.overrides) + ([f"machine={args.machine}"] if args.machine else [])
        design = validate_sweep(args.design, overrides, specs)
        if args.check and not design.load_cases:
            raise DesignError(Problem("load_cases", "--check given but the design has no load cases"),
                              source=str(args.design))
        jobs = sweep_jobs(design, overrides, specs, check=args.check, lighten=args.lighten)
        # a symbolic link is followed; a link to nothing or a file is refused
        outdir = output_folder(args.output if args.output is not None
                               else Path("platewright-out") / f"sweep-{args.design.stem}")
        if outdir.is_dir() and any(outdir.iterdir()) and not is_sweep_folder(outdir):
            raise DesignError(Problem("-o", f"'{outdir}' is not empty and holds no platewright "
                                      "sweep.json, so it is not used",
                                      hint="choose a new or empty folder, or an earlier sweep's folder"))
        notes = []
        if args.lighten and not lighten_available():
            notes.append("the lightening step is not installed: --lighten skipped")
        paths = [s.path for s in specs]
        manifest: dict[str, Any] = {
            "schema_version": 1, "kind": "sweep",
            "tool": {"name": "platewright", "version": tool_version()},
            "design": {"name": design.name, "file": str(args.design), "sha256": design.sha256},
            "overrides": overrides,
            "inputs": input_entries(design),
            "vary": [{"path": s.path, "start": s.start, "stop": s.stop, "step": s.step,
                      "values": list(s.values)} for s in specs],
            "check": args.check, "lighten": args.lighten, "combinations": len(jobs),
            "results": {j.key: dict(j.varied) for j in jobs},
        }
        created = not outdir.exists()
        outdir.mkdir(parents=True, exist_ok=True)
        write_atomic(outdir / "sweep.json", json.dumps(manifest, indent=1))
        if args.backend == "dask":
            # the scheduler's and workers' start-up chatter is not for the terminal
            logging.getLogger("distributed").setLevel(logging.WARNING)

        def progress(row: dict[str, Any], finished: int, total: int) -> None:
            if not args.quiet:
                values = ", ".join(f"{p}={v:g}" for p, v in row["values"].items())
                print(f"  [{finished}/{total}] {values}: {row['status']}", file=sys.stderr, flush=True)

        for n in notes:
            if not args.quiet:
                print(f"note: {n}", file=sys.stderr)
        try:
            outcome = run_sweep(jobs, outdir / "results", workers=args.jobs, backend=args.backend,
                                scheduler=args.scheduler, on_result=progress)
        except DesignError:
            if created:  # refused before any result (e.g. no scheduler): leave nothing behind
                shutil.rmtree(outdir, ignore_errors=True)
            raise
        except KeyboardInterrupt as exc:  # Ctrl-C or SIGTERM
            print(f"platewright: sweep interrupted; finished results are kept in {outdir / 'results'}"
                  "; run the same command again to resume", file=sys.stderr)
            return exit_status(exc)
        from platewright.cli.sweep.outputs import (  # matplotlib
            render_sweep_html,
            sweep_csv,
            sweep_plot_png,
            sweep_summary,
        )

        rows = list(outcome.rows)
        (outdir / "plots").mkdir(exist_ok=True)
        png = sweep_plot_png(paths, rows)
        write_atomic(outdir / "plots" / "mass_vs_deflection.png", png)
        write_atomic(outdir / "sweep.csv", sweep_csv(paths, rows))
        write_atomic(outdir / "sweep.html", render_sweep_html(manifest, paths, rows, png))
        if not args.quiet:
            print(sweep_summary(paths, rows, str(outdir), outcome.computed, outcome.reused))
        return 0 if any(r["status"] == "pass" for r in rows) else 1
