"""The sweep engine: build (and check, and lighten) every combination of varied design fields.

A sweep varies design fields (the same paths as ``--set``) over ``start:stop:step`` ranges and
runs one job per combination of the cartesian product. Every job is a pure function of its
:class:`SweepJob` (design file, overrides, options), so it runs the same in this process, in a
process pool or on Dask workers. Each result is written as it arrives to ``results/KEY.json``
(KEY: a hash of the design file's sha256, the overrides and the options), so an interrupted
sweep keeps every finished result and a rerun computes only the missing ones.

Units: lengths mm, masses g, as in the design file and report.json.
"""

from __future__ import annotations

import hashlib
import itertools
import json
import math
import os
import signal
from collections.abc import Callable, Iterator, Sequence
from concurrent.futures import ProcessPoolExecutor, as_completed
from dataclasses import dataclass, field
from multiprocessing import get_context
from pathlib import Path
from typing import Any

from platewright.cli.reports.report_json import tool_version
from platewright.geometry.design.loader import Design, load_design
from platewright.geometry.design.overrides import split_path
from platewright.geometry.errors import DesignError, Problem
from platewright.geometry.plate.pipeline import build_design
from platewright.geometry.writers.atomic import write_atomic

__all__ = [
    "MAX_COMBINATIONS",
    "VarySpec",
    "SweepJob",
    "SweepOutcome",
    "parse_vary",
    "sweep_jobs",
    "validate_sweep",
    "run_job",
    "run_sweep",
    "lighten_available",
    "write_atomic",
]

#: Most combinations one sweep may ask for (a guard against a mistyped step).
MAX_COMBINATIONS = 5000
_ROUND_DIGITS = 10
_JOB_VERSION = 2  # 2: lightening follows the design's lightening settings


@dataclass(frozen=True)
class VarySpec:
    """One ``--vary PATH=START:STOP:STEP``: the field path and its values (start, start + step,
    ... up to and including stop when it falls on the step), in the field's unit."""

    path: str
    start: float
    stop: float
    step: float
    values: tuple[float, ...]


def _bad(text: str, message: str, hint: str = "") -> DesignError:
    return DesignError(Problem(f"--vary {text}", message, None, hint))


def parse_vary(text: str) -> VarySpec:
    """Read ``PATH=START:STOP:STEP`` (numbers; STOP included when it falls on the step).

    Raises DesignError for a missing ``=``, a malformed path, non-numeric parts, a zero or
    non-finite step, a step whose sign does not lead from START to STOP, or more than
    MAX_COMBINATIONS values.
    """
    path, sep, rng = text.partition("=")
    hint = "e.g. references.wheelbase_mm=150:190:10"
    if not sep or not path.strip():
        raise _bad(text, "expected PATH=START:STOP:STEP", hint)
    try:
        split_path(path)
    except ValueError as exc:
        raise _bad(text, str(exc), hint) from exc
    parts = rng.split(":")
    if len(parts) != 3:
        raise _bad(text, f"the range '{rng}' needs three numbers START:STOP:STEP", hint)
    try:
        start, stop, step = (float(p) for p in parts)
    except ValueError as exc:
        raise _bad(text, f"the range '{rng}' is not three numbers", hint) from exc
    if not all(math.isfinite(v) for v in (start, stop, step)):
        raise _bad(text, "START, STOP and STEP must be finite numbers", hint)
    if step == 0.0:
        raise _bad(text, "STEP is 0", "give a non-zero step")
    if (stop - start) * step < 0.0:
        raise _bad(text, f"STEP {step:g} leads away from STOP {stop:g}",
                   f"use a step of sign {'+' if stop > start else '-'}")
    count = math.floor((stop - start) / step + 1e-9) + 1
    if count > MAX_COMBINATIONS:
        raise _bad(text, f"{count} values is more than {MAX_COMBINATIONS}", "use a larger step")
    values = tuple(round(start + i * step, _ROUND_DIGITS) for i in range(count))
    return VarySpec(path.strip(), start, stop, step, values)


def _value_text(v: float) -> str:
    """A number as a ``--set`` value: integers without a decimal point, others shortest-exact."""
    return str(int(v)) if float(v).is_integer() else repr(float(v))


@dataclass(frozen=True)
class SweepJob:
    """One combination: the design file, the base ``--set`` overrides, the varied (path, value)
    pairs, the design file's sha256, the options (check: run the load cases; lighten: run
    the lightening step when it is installed) and the platewright version that runs it (a new
    version recomputes rather than reuse older results)."""

    design_path: str
    design_sha256: str
    base_overrides: tuple[str, ...]
    varied: tuple[tuple[str, float], ...]
    check: bool = False
    lighten: bool = False
    tool_version: str = ""

    @property
    def overrides(self) -> list[str]:
        """The ``--set`` texts of this combination: base overrides, then the varied fields."""
        return list(self.base_overrides) + [f"{p}={_value_text(v)}" for p, v in self.varied]

    @property
    def key(self) -> str:
        """Hex digest (20 characters) identifying the job's inputs and options."""
        blob = json.dumps({"v": _JOB_VERSION, "sha256": self.design_sha256,
                           "set": self.overrides, "check": self.check, "lighten": self.lighten,
                           "tool": self.tool_version},
                          sort_keys=True)
        return hashlib.sha256(blob.encode("utf-8")).hexdigest()[:20]


@dataclass(frozen=True)
class SweepOutcome:
    """Rows in combination order (see run_job for a row's fields), how many were computed now and
    how many were read back from earlier results."""

    rows: tuple[dict[str, Any], ...]
    computed: int
    reused: int
    notes: tuple[str, ...] = field(default=())


def sweep_jobs(design: Design, base_overrides: Sequence[str], specs: Sequence[VarySpec], *,
               check: bool = False, lighten: bool = False) -> list[SweepJob]:
    """One job per combination of ``specs`` values (cartesian product, first spec slowest)."""
    combos = list(itertools.product(*(s.values for s in specs)))
    if len(combos) > MAX_COMBINATIONS:
        raise DesignError(Problem("--vary", f"{len(combos)} combinations is more than "
                                  f"{MAX_COMBINATIONS}", hint="use larger steps or fewer fields"))
    return [SweepJob(str(design.source_path), design.sha256, tuple(base_overrides),
                     tuple(zip((s.path for s in specs), combo)), check, lighten, tool_version())
            for combo in combos]


def validate_sweep(design_path: Path, base_overrides: Sequence[str], specs: Sequence[VarySpec]
                   ) -> Design:
    """Check the varied fields with the design loader before anything runs; returns the design
    with the base overrides. Refused (DesignError): the same path varied twice, a path that
    does not exist, or a field that does not take the range's numbers (each spec's START and
    STOP are loaded in turn, the other fields at their START)."""
    paths = [s.path for s in specs]
    dup = sorted({p for p in paths if paths.count(p) > 1})
    if dup:
        raise DesignError(Problem("--vary", f"the field '{dup[0]}' is varied twice",
                                  hint="give each field once"))
    design = load_design(design_path, overrides=list(base_overrides))
    starts = [f"{s.path}={_value_text(s.start)}" for s in specs]
    trials = [starts] + [starts[:i] + [f"{s.path}={_value_text(s.values[-1])}"] + starts[i + 1:]
                         for i, s in enumerate(specs)]
    for trial in trials:
        try:
            load_design(design_path, overrides=list(base_overrides) + trial)
        except DesignError as exc:
            ours = [p for p in exc.problems
                    if p.path.startswith("--set") or "value from --set" in p.hint]
            if ours:
                raise DesignError([Problem(p.path.replace("--set", "--vary", 1), p.message,
                                           p.line, p.hint) for p in ours],
                                  source=exc.source) from exc
    return design


def lighten_available() -> bool:
    """True when the lightening step (``platewright.fea.lighten.pipeline.lighten_plate``) is installed."""
    try:
        from platewright.fea.lighten import pipeline
    except ImportError:
        return False
    return callable(getattr(pipeline, "lighten_plate", None))


def _lighten(design: Any, plate: Any, cases: Sequence[Any], loads: Any, before: Any) -> Any:
    """The lightening result of ``plate`` (fea.lighten ``lighten_plate`` with the design's own
    ``lightening:`` settings, ``--set`` overrides included, so a sweep may vary e.g.
    ``lightening.deflection_budget``). ``before``: its analysis, or None."""
    from platewright.fea.lighten.design_region import lightening_section, settings_from_mapping
    from platewright.fea.lighten.pipeline import lighten_plate

    raw = lightening_section(design) or {}
    settings = settings_from_mapping(raw, plate.name)
    style = raw.get("style") if raw.get("style") in ("organic", "pattern") else "organic"
    kwargs: dict[str, Any] = {"components": loads.components, "vehicle_mass_g": loads.vehicle_mass_g,
                              "settings": settings, "style": style}
    if before is not None:
        kwargs["before"] = before
    return lighten_plate(plate, cases, **kwargs)


def _lightening_row(result: Any) -> dict[str, Any]:
    """The sweep row's summary of one plate's lightening: masses g, shares, deflections mm."""
    def num(v: Any) -> float | None:
        return None if v is None or not math.isfinite(float(v)) else float(v)

    return {"mass_after_g": float(result.mass_after_g),
            "mass_saved_fraction": float(result.mass_saved_fraction),
            "grey_saved_fraction": num(result.grey_saved_fraction),
            "deflection_budget": num(result.deflection_budget),
            "verified": bool(result.verified),
            "max_deflection_mm": {c.name: float(c.max_deflection_mm) for c in result.after.cases}}


def run_job(job: SweepJob) -> dict[str, Any]:
    """Build one combination (and check and lighten it as asked); never raises for bad input.

    Returns a JSON-ready row: ``key``, ``values`` (path -> value), ``status`` (pass | fail |
    refused | error), ``error`` (text, empty when built), ``total_mass_g`` (quantities applied),
    ``plates`` (name -> one plate's mass_g), ``cases`` ("plate/case" -> max_deflection_mm,
    limit_mm, safety_factor, passes), ``lightened_mass_g`` (plate -> g), ``lightening`` (plate ->
    mass after, saved share, grey optimum's share, budget, verified, deflection per case after)
    when lightening ran, and ``notes``.
    """
    row: dict[str, Any] = {"key": job.key, "values": {p: v for p, v in job.varied},
                           "status": "refused", "error": "", "total_mass_g": None, "plates": {},
                           "cases": {}, "lightened_mass_g": {}, "notes": []}
    try:
        design = load_design(job.design_path, overrides=job.overrides)
        result = build_design(design)
        row["total_mass_g"] = float(result.total.mass_g)
        row["plates"] = {b.plate.name: float(b.mass.mass_g) for b in result.plates}
        errors = result.errors
        if errors:
            row["error"] = "; ".join(f"{name}: {f.rule}: {f.message}" for name, f in errors)
            return row
        passes = True
        if job.check or job.lighten:
            from platewright.fea.analysis import analyse_design
            from platewright.fea.loadcases.parse import parse_loads

            plates = [b.plate for b in result.plates]
            loads = parse_loads(design, plates)
            analyses = {}
            if job.check:
                for analysis in analyse_design(design, plates, loads=loads):
                    analyses[analysis.plate] = analysis
                    for c in analysis.cases:
                        row["cases"][f"{analysis.plate}/{c.name}"] = {
                            "max_deflection_mm": float(c.max_deflection_mm),
                            "limit_mm": None if c.limit_mm is None else float(c.limit_mm),
                            "safety_factor": (float(c.safety_factor)
                                              if math.isfinite(c.safety_factor) else None),
                            "passes": bool(c.passes)}
                        passes = passes and bool(c.passes)
            if job.lighten and lighten_available():
                for plate in plates:
                    cases = [c for c in loads.cases if c.plate == plate.name]
                    if not cases:
                        continue
                    try:
                        res = _lighten(design, plate, cases, loads, analyses.get(plate.name))
                        row["lightened_mass_g"][plate.name] = float(res.mass_after_g)
                        row.setdefault("lightening", {})[plate.name] = _lightening_row(res)
                    except Exception as exc:  # the suggestion is optional: note it, keep the row
                        row["notes"].append(f"lightening {plate.name} failed: "
                                            f"{type(exc).__name__}: {exc}")
            elif job.lighten:
                row["notes"].append("lightening step not installed: skipped")
        row["status"] = "pass" if passes else "fail"
    except DesignError as exc:
        row["error"] = "; ".join(str(p) for p in exc.problems)
    except Exception as exc:  # one bad combination must not stop the sweep
        row["status"] = "error"
        row["error"] = f"{type(exc).__name__}: {exc}"
    return row


def _read_done(results_dir: Path, jobs: Sequence[SweepJob]) -> dict[str, dict[str, Any]]:
    done = {}
    for job in jobs:
        path = results_dir / f"{job.key}.json"
        try:
            row = json.loads(path.read_text(encoding="utf-8"))
        except (OSError, ValueError):
            continue
        if isinstance(row, dict) and row.get("key") == job.key:
            done[job.key] = row
    return done


OnResult = Callable[[dict[str, Any], int, int], None]


def _quiet_interrupt() -> None:
    """Pool workers stop at once and silently on Ctrl-C or SIGTERM; the parent reports it."""
    for signum in (signal.SIGINT, signal.SIGTERM):
        signal.signal(signum, lambda n, frame: os._exit(128 + n))


def _iter_local(todo: Sequence[SweepJob], workers: int) -> Iterator[dict[str, Any]]:
    if workers <= 1 or len(todo) <= 1:
        for job in todo:
            yield run_job(job)
        return
    # spawn: workers start clean (no threads or locks copied from this process)
    pool = ProcessPoolExecutor(max_workers=workers, mp_context=get_context("spawn"),
                               initializer=_quiet_interrupt)
    try:
        futures = [pool.submit(run_job, job) for job in todo]
        for fut in as_completed(futures):
            yield fut.result()
    finally:
        pool.shutdown(wait=True, cancel_futures=True)


def _iter_dask(todo: Sequence[SweepJob], workers: int, scheduler: str | None, processes: bool,
               timeout_s: float) -> Iterator[dict[str, Any]]:
    try:
        from distributed import Client, LocalCluster
        from distributed import as_completed as dask_completed
    except ImportError as exc:
        raise DesignError(Problem("--backend", "the Dask backend needs the 'cluster' extra",
                                  hint="pip install 'platewright[cluster]'")) from exc
    cluster = None
    try:
        if scheduler:
            client = Client(scheduler, timeout=min(timeout_s, 30.0))
        else:
            # worker processes talk over tcp on loopback only; threads use in-process queues
            where = {"host": "127.0.0.1"} if processes else {}
            cluster = LocalCluster(n_workers=max(1, workers), threads_per_worker=1,
                                   processes=processes, dashboard_address=None, **where)
            client = Client(cluster, timeout=timeout_s)
    except OSError as exc:
        if cluster is not None:
            cluster.close()
        raise DesignError(Problem("--scheduler", f"cannot reach the Dask scheduler: {exc}",
                                  hint="give a running scheduler's address, or none for a local one")
                          ) from exc
    try:
        futures = [client.submit(run_job, job, key=f"platewright-sweep-{job.key}", pure=False)
                   for job in todo]
        try:
            for fut in dask_completed(futures, timeout=timeout_s * max(1, len(todo))):
                yield fut.result(timeout=timeout_s)
        finally:
            client.cancel(futures)
    finally:
        client.close()
        if cluster is not None:
            cluster.close()


def run_sweep(jobs: Sequence[SweepJob], results_dir: Path, *, workers: int = 1,
              backend: str = "local", scheduler: str | None = None, dask_processes: bool = True,
              timeout_s: float = 600.0, on_result: OnResult | None = None) -> SweepOutcome:
    """Run every job not already in ``results_dir`` and return all rows in job order.

    backend ``local`` runs in this process (workers 1) or a process pool of ``workers``;
    ``dask`` submits the same job function through distributed.Client to ``scheduler`` (an
    address) or to a LocalCluster on 127.0.0.1 with ``workers`` workers (threads when
    ``dask_processes`` is False). ``timeout_s``: longest wait for a Dask connection or one
    result, s. Each row is written to ``results_dir/KEY.json`` as it arrives, then
    ``on_result(row, finished, total)`` is called. Rows of refused combinations are kept;
    rows of unexpected errors are not stored (a rerun tries them again).
    """
    if backend not in ("local", "dask"):
        raise DesignError(Problem("--backend", f"unknown backend '{backend}'", hint="local or dask"))
    results_dir.mkdir(parents=True, exist_ok=True)
    done = _read_done(results_dir, jobs)
    todo = [j for j in jobs if j.key not in done]
    rows = dict(done)
    stream = (_iter_local(todo, workers) if backend == "local"
              else _iter_dask(todo, workers, scheduler, dask_processes, timeout_s))
    computed = 0
    try:
        for row in stream:
            computed += 1
            if row["status"] != "error":
                write_atomic(results_dir / f"{row['key']}.json", json.dumps(row, indent=1))
            rows[row["key"]] = row
            if on_result is not None:
                on_result(row, len(done) + computed, len(jobs))
    finally:
        stream.close()
    return SweepOutcome(tuple(rows[j.key] for j in jobs), computed, len(done))
