"""The lightening pipeline: design region -> SIMP densities -> holes -> proof by real-geometry FE.

``lighten_plate`` for one plate:

1. analyse the plate as designed (fea.analysis.analyse_plate): the "before" figures; a plate
   that already fails a limit is not lightened;
2. build the design region (fea.design_region) and mesh the plate; elements whose centroid lies
   outside the region are passive (solid);
3. one SIMP optimisation (fea.topopt.optimise on fea.topopt_plate.PlateDensityModel) at a
   volume fraction of the design region chosen from the slack of the limits: the tighter the
   limits, the more material it keeps;
4. a search over hole sets: the level is the share of the design region (ranked by density,
   lightest first) that may become holes; it sets the density threshold below which material
   becomes a hole (organic) or that grades a regular array (pattern, fea.hole_patterns). The
   distinct hole sets of 16 levels, ordered by hole area, are searched by interpolating the
   worst utilisation of any limit in hole area (bracketed by the plate as designed and the
   first failing set), with sets between two neighbours made on demand by halving the level
   or, failing that, by shrinking the holes of the failing set evenly.
   On a symmetric problem (mirror-symmetric design region and density field) the density is
   averaged with its mirror image and the holes cut to their mirror images.
   Every candidate is a plate WITH the new holes as Features of kind ``lightening`` (ids
   ``lighten1``, ...), checked by geometry.rules.check_plate (holes with an error or a web,
   edge-distance or size warning are dropped) and re-meshed and re-solved by analyse_plate;
   a candidate passes when every case meets every limit. The lightest passing candidate is kept;
   when none passes, no holes are suggested. Nothing unverified is ever returned;
5. the same input gives the same output (no randomness; ties broken by position).

Lengths mm, masses g, times s. Every figure is a finite-element ESTIMATE to be confirmed by
test before the part carries a load.

The hole sets, the rules for new holes and the verification of a candidate are in
:mod:`.search`, the optimisation in :mod:`.layout`; this module holds the pipeline and the
search loop.
"""

from __future__ import annotations

import math
import time
from collections.abc import Mapping, Sequence
from dataclasses import replace
from typing import Any

import numpy as np

from platewright.fea.analysis import analyse_plate, total_vehicle_mass_g
from platewright.fea.lighten.budget import (
    budget_utilisation,
    case_budgets,
    meets_budget,
)
from platewright.fea.lighten.design_region import (
    LighteningSettings,
    design_region,
    lightening_section,
    settings_from_mapping,
)
from platewright.fea.lighten.layout import limit_slack, optimised_layout
from platewright.fea.lighten.patterns import choose_layout
from platewright.fea.lighten.results import Candidate, DensityField, LighteningResult
from platewright.fea.lighten.search import (
    RULES_FOR_NEW_HOLES,
    Progress,
    SearchJob,
    failing_cases,
    hole_sets,
    limit_utilisation,
    refine_hole_sets,
    with_holes,
)
from platewright.fea.lighten.tracing import hole_features, level_thresholds, mirror_lines, symmetrised
from platewright.fea.loadcases.parse import Component, LoadCase, parse_loads
from platewright.fea.results import PlateAnalysis
from platewright.geometry.model import Feature, Plate
from platewright.geometry.plate.cutpaths import cut_paths
from platewright.geometry.plate.mass import mass_properties

__all__ = ["lighten_plate", "lighten_design", "with_holes", "RULES_FOR_NEW_HOLES"]

#: Utilisation the level search aims at (just below the limits).
_TARGET = 0.995
#: Share of the plate's mass below which one more verified candidate is not worth its check.
_SMALL_GAIN = 0.01
#: Hole sets that could not be checked (e.g. the holed plate did not mesh) skipped at most.
_UNUSABLE_SETS = 2


def lighten_plate(
    plate: Plate,
    cases: Sequence[LoadCase],
    *,
    style: str = "organic",
    settings: LighteningSettings | None = None,
    components: Sequence[Component] = (),
    vehicle_mass_g: float | None = None,
    size_mm: float | None = None,
    method: str = "auto",
    before: PlateAnalysis | None = None,
    densities: DensityField | tuple[np.ndarray, np.ndarray, np.ndarray] | None = None,
    progress: Progress | None = None,
) -> LighteningResult:
    """Lightening holes for ``plate`` that keep every case of ``cases`` within its limits.

    style: "organic" (holes traced from the density field) or "pattern" (a regular array graded
    by it; shape from ``settings.pattern_shape``). settings: LighteningSettings (None: defaults
    from the plate). components, vehicle_mass_g (g), size_mm (element size of the verifying
    analyses, mm; None: each case's), method: as in analyse_plate. before: the analysis of the
    plate as designed under these same cases, when already run. densities: (nodes (n, 2),
    triangles (m, 3), element densities (m,)) to use instead of running the optimiser (e.g.
    the other style's run).
    progress: called with short texts. See the module text for the method. Raises ValueError
    when no case acts on the plate, DesignError for bad load cases.
    """
    t_all = time.perf_counter()
    settings = replace(settings or LighteningSettings(), style=style)
    mine = tuple(c for c in cases if c.plate == plate.name)
    if not mine:
        raise ValueError(f"no load case acts on plate '{plate.name}'")
    vmass = vehicle_mass_g if vehicle_mass_g is not None else total_vehicle_mass_g([plate], components)
    job = SearchJob(plate, mine, tuple(components), vmass, size_mm, method, progress)
    timings: dict[str, float] = {}
    t0 = time.perf_counter()
    if before is None:
        job.say(f"{plate.name}: checking the plate as designed")
        before = analyse_plate(plate, mine, components=components, vehicle_mass_g=vmass,
                               size_mm=size_mm, method=method)
    timings["before"] = time.perf_counter() - t0
    region = design_region(plate, settings, cases=mine, components=components)
    m0 = mass_properties(plate).mass_g
    cut0 = cut_paths(plate)
    notes: list[str] = []
    iterations, vf, grey_saved = 0, 1.0, 0.0
    density_field: DensityField | None = None
    candidates: list[Candidate] = []
    best: tuple[float, tuple[Feature, ...], Plate, PlateAnalysis] | None = None
    budget = settings.deflection_budget
    budgets = case_budgets(before, budget) if budget is not None else None

    def utilisation(analysis: PlateAnalysis) -> float:
        u = limit_utilisation(analysis)
        return u if budgets is None else max(u, budget_utilisation(before, analysis, budgets))

    def passes(analysis: PlateAnalysis) -> bool:
        return analysis.passes and (budgets is None or meets_budget(before, analysis, budgets))

    if not before.passes:
        notes.append("the plate as designed already fails a limit: no lightening suggested")
    elif region.free.area < math.pi * (region.settings.min_hole_mm / 2.0) ** 2:
        notes.append("the design region (plate minus keep-outs) is too small for any hole")
    else:
        t0 = time.perf_counter()
        if densities is None:
            job.say(f"{plate.name}: optimising the material layout")
            curve_budgets = sorted(set(settings.budget_curve)) if budgets is not None else []
            curve_sets = [case_budgets(before, bc) for bc in curve_budgets]
            nodes, tris, dens, iterations, vf, grey_saved, curve_saved = optimised_layout(
                job, region, limit_slack(before), settings, budgets, curve_sets)
            density_field = DensityField(nodes, tris, dens, iterations, vf, grey_saved,
                                         tuple(zip(curve_budgets, curve_saved)))
        elif isinstance(densities, DensityField):
            density_field = densities
            nodes, tris, dens = densities.nodes, densities.triangles, densities.densities
            vf, grey_saved = densities.volume_fraction, densities.saved_fraction
        else:
            nodes, tris, dens = densities
            density_field = DensityField(nodes, tris, dens, 0, vf, grey_saved)
        timings["optimise"] = time.perf_counter() - t0

        u0 = utilisation(before)
        mirrors = mirror_lines(region, nodes, tris, dens)
        if mirrors:
            dens = symmetrised(dens, nodes, tris, mirrors)
            notes.append("symmetric problem: the density field was averaged with its mirror image "
                         "so the holes come out symmetric")
        to_threshold = level_thresholds(nodes, tris, dens, region)
        t0 = time.perf_counter()
        layout = None
        if style == "pattern":  # the lattice that best covers the optimiser's voids
            layout = choose_layout(region, nodes, tris, dens, to_threshold(1.0 - vf), mirrors)
        sets = hole_sets(style, nodes, tris, dens, region, to_threshold, mirrors=mirrors,
                         layout=layout)
        timings["holes"] = time.perf_counter() - t0

        def make(holes: Any) -> tuple[Feature, ...]:
            if style == "organic":
                return hole_features(holes, region.settings.chord_tol_mm)
            return holes

        # Search over the distinct hole sets, ordered by hole area: u(set) is the worst
        # utilisation of any limit and of the stiffness budget (1 = at the limit). The bracket
        # starts at "no holes" (the plate as designed, u0) and "beyond the largest set"; each
        # step interpolates u linearly in hole area to aim just below 1, so about log2(sets)
        # solves suffice.
        lo, u_lo, a_lo = -1, u0, 0.0
        hi, u_hi, a_hi = len(sets), math.inf, math.inf
        failed_mass = -math.inf
        unusable = 0
        t0 = time.perf_counter()
        attempts = 0
        while sets and len(candidates) < settings.max_candidates:
            attempts += 1
            if budgets is not None and attempts > settings.max_candidates + _UNUSABLE_SETS:
                break  # every check counts against the budget run's time, usable or not
            if hi - lo <= 1:  # neighbours in the list: look for a set between them
                if not refine_hole_sets(sets, lo, hi, style, nodes, tris, dens, region, to_threshold,
                                        mirrors, layout):
                    break
                hi += 1
            if not candidates and budgets is not None:  # the grey optimum's void area
                want = grey_saved * region.material.area
            elif not candidates:
                want = (1.0 - vf) * sets[-1][1]
            elif math.isfinite(u_hi):
                want = a_lo + (_TARGET - u_lo) * (a_hi - a_lo) / max(u_hi - u_lo, 1e-12)
            else:
                want = math.inf if u_lo <= u0 else a_lo * (_TARGET - u0) / (u_lo - u0)
            i = lo + 1
            while i + 1 < hi and sets[i + 1][1] <= want:
                i += 1
            if budgets is not None and math.isfinite(u_hi) and (lo < 0 or (
                    len(candidates) >= 2 and candidates[-1].passes and candidates[-2].passes)):
                # the first guess failed, or two passing steps in a row crept towards a failing
                # set far off: the utilisation is not linear in hole area there (a cliff), so
                # halve the bracket instead (budget runs only; the older search is kept as is)
                i = max(i, (lo + hi + 1) // 2)
            level, area, raw_holes = sets[i]
            tc = time.perf_counter()
            holes = make(raw_holes)
            job.say(f"{plate.name}: verifying {len(holes)} holes at level {level:.3f}")
            kept, holed, analysis = job.verify(holes)
            if analysis is None:
                if budgets is not None and unusable < _UNUSABLE_SETS:
                    # the set could not be checked (no hole kept, or the holed plate could not
                    # be meshed): leave it out of the search rather than bound the search by it
                    unusable += 1
                    sets.pop(i)
                    hi -= 1
                    continue
                hi, u_hi, a_hi = i, 10.0, area
                continue
            mass = mass_properties(holed).mass_g
            u = utilisation(analysis)
            ok = passes(analysis)
            candidates.append(Candidate(level, len(kept), mass, ok,
                                        failing_cases(analysis) or ("" if ok else "budget"),
                                        time.perf_counter() - tc))
            if ok:
                lo, u_lo, a_lo = i, u, area
                if best is None or mass < best[0] - 1e-9:
                    best = (mass, kept, holed, analysis)
            else:
                hi, u_hi, a_hi = i, max(u, 1.0 + 1e-9), area
                failed_mass = max(failed_mass, mass)
            # With a stiffness budget, stop once another check can gain little: the lightest
            # passing and the heaviest failing candidate lie within _SMALL_GAIN of the plate's
            # mass.
            if budgets is not None and best is not None and \
                    best[0] - failed_mass < _SMALL_GAIN * m0:
                break
        timings["verify"] = time.perf_counter() - t0
        if best is None:
            notes.append("no candidate kept every case within its limits"
                         + (" and its stiffness budget" if budgets is not None else "")
                         + ": no holes suggested")
    if best is None:
        holes_out, after_plate, after = (), plate, before
        m1, cut1 = m0, cut0
    else:
        m1, holes_out, after_plate, after = best
        cut1 = cut_paths(after_plate)
    timings["total"] = time.perf_counter() - t_all
    return LighteningResult(
        plate=plate, lightened=after_plate, holes=holes_out, style=style, before=before,
        after=after, mass_before_g=m0, mass_after_g=m1,
        cut_length_before_mm=float(sum(c.path.length() for c in cut0)),
        cut_length_after_mm=float(sum(c.path.length() for c in cut1)),
        pierces_before=len(cut0), pierces_after=len(cut1), candidates=tuple(candidates),
        optimiser_iterations=iterations, volume_fraction=vf,
        deflection_budget=budget, case_budgets=budgets or {},
        grey_saved_fraction=grey_saved if density_field is not None else None,
        keep_outs=region.keep_outs, design_region_mm2=region.free_area_mm2,
        design_region_fraction=region.free_fraction,
        pattern_shape=region.settings.pattern_shape if style == "pattern" else "",
        timings_s=timings, notes=tuple(notes), density=density_field)


def _design_settings(design: Any) -> dict | None:
    """The validated ``lightening:`` section of ``design`` (None when absent)."""
    raw = getattr(design, "lightening", None)
    return raw if raw is not None else lightening_section(design)


def lighten_design(
    design: Any,
    plates: Sequence[Plate],
    *,
    styles: Sequence[str] | None = None,
    settings: LighteningSettings | None = None,
    overrides: Mapping[str, Any] | None = None,
    size_mm: float | None = None,
    method: str = "auto",
    progress: Progress | None = None,
    analyses: Sequence[PlateAnalysis] = (),
) -> list[LighteningResult]:
    """Lighten every plate of ``design`` that has load cases, in every style of ``styles``.

    styles: None: the design's ``lightening.style`` ("both" = organic and pattern). settings:
    replaces the design's ``lightening:`` section; overrides: LighteningSettings field -> value
    applied on top (e.g. ``{"pattern_shape": "slot"}``). analyses: already-run analyses of the plates
    as designed (reused as "before"). When both styles run on a plate they share one
    optimisation. Returns one result per plate and style, in plate order.
    """
    loads = parse_loads(design, plates)
    raw = _design_settings(design) or {}
    vmass = loads.vehicle_mass_g
    if vmass is None:
        vmass = total_vehicle_mass_g(plates, loads.components)
    wanted = raw.get("plates") or None
    by_plate = {a.plate: a for a in analyses}
    out: list[LighteningResult] = []
    for plate in plates:
        cases = [c for c in loads.cases if c.plate == plate.name]
        if not cases or (wanted and plate.name not in wanted):
            continue
        s = settings or settings_from_mapping(raw, plate.name)
        if overrides:
            s = replace(s, **dict(overrides))
        chosen = list(styles) if styles else (["organic", "pattern"] if raw.get("style") == "both"
                                               else [raw.get("style") or s.style])
        before = by_plate.get(plate.name)
        shared = None
        for style in chosen:
            res = lighten_plate(plate, cases, style=style, settings=s,
                                components=loads.components, vehicle_mass_g=vmass,
                                size_mm=size_mm, method=method, before=before,
                                densities=shared, progress=progress)
            before = res.before
            out.append(res)
            shared = shared or res.density
    return out
