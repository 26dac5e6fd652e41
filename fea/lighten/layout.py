"""The optimised material layout of one plate, before any hole is made.

With a stiffness budget: least mass with every case's deflection within its budget
(:mod:`.min_mass`, the method of moving asymptotes over :mod:`.plate_density`); without one:
least compliance at a volume share chosen from the slack of the cases' limits (:mod:`.simp`,
optimality criteria). Used by :func:`.pipeline.lighten_plate`. Lengths mm, shares
dimensionless.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence

import numpy as np
import shapely

from platewright.fea.lighten.design_region import DesignRegion, LighteningSettings
from platewright.fea.lighten.min_mass import minimise_mass
from platewright.fea.lighten.plate_density import PlateDensityModel
from platewright.fea.lighten.search import SearchJob
from platewright.fea.lighten.simp import TopOptSettings, optimise
from platewright.fea.mesh.mesher import mesh_rings
from platewright.fea.mesh.plate_input import plate_rings
from platewright.fea.results import PlateAnalysis

__all__ = ["limit_slack", "optimised_layout"]


def limit_slack(before: PlateAnalysis) -> float:
    """Smallest ratio allowed / present over every limit (>= 1 when the plate passes)."""
    ratios = []
    for case in before.cases:
        for chk in case.checks:
            if chk.value is None or chk.limit is None or chk.value <= 0:
                continue
            if chk.name == "min_safety_factor":
                ratios.append(chk.value / chk.limit)
            else:
                ratios.append(chk.limit / chk.value)
    return min(ratios) if ratios else 2.0


def _volume_fraction(slack: float) -> float:
    """SIMP volume bound on the design region from the slack (our choice, stated here, tuned
    on the bundled deck by benchmarks/bench_lighten.py): the bending stiffness of a plate
    grows like its thickness cubed, so a slack s in deflection allows roughly a share
    ``s^(-1/3)`` of the material; 0.1 less, clipped to [0.35, 0.85], so the density ranking
    the level search works on stays informative."""
    return float(np.clip(slack ** (-1.0 / 3.0) - 0.1, 0.35, 0.85))


#: Exponent of the P-norm that stands for each case's largest deflection in the optimiser.
_DEFLECTION_POWER = 24.0
#: Mesh grading (mm per mm) of the budget optimiser's mesh (fea.mesh default 0.3).
_FAST_GRADING = 0.6
#: Density filter radius of the budget optimiser, in element sizes (at least one web).
_FILTER_PER_SIZE = 1.25


def optimised_layout(job: SearchJob, region: DesignRegion, slack: float,
               settings: LighteningSettings, budgets: Mapping[str, float] | None,
               curve: Sequence[Mapping[str, float]] = ()
               ) -> tuple[np.ndarray, np.ndarray, np.ndarray, int, float, float, list[float]]:
    """(nodes (n, 2), triangles (m, 3), densities (m,), optimiser iterations, volume fraction
    of the design region, mass share the grey densities remove from the plate, that share at
    each budget set of ``curve``).

    budgets (case -> b_k): least mass with every case's deflection within its budget
    (fea.lighten.min_mass); None: least compliance at a volume share chosen from the slack of
    the limits (fea.lighten.simp). curve: more budget sets, each optimised from the nearest
    tighter result found so far (a feasible start)."""
    s = region.settings
    h = float(s.mesh_size_mm)
    # The budget path grades the mesh faster away from small holes (they lie in keep-outs):
    # about 40 % fewer elements for the same size in the design region.
    mesh = mesh_rings(plate_rings(job.plate, h), h) if budgets is None else \
        mesh_rings(plate_rings(job.plate, h), h, grading=_FAST_GRADING)
    model = PlateDensityModel(job.plate, mesh, job.cases, components=job.components,
                              vehicle_mass_g=job.vehicle_mass_g)
    cx, cy = model.centroids[:, 0], model.centroids[:, 1]
    free = shapely.contains_xy(region.free, cx, cy) if not region.free.is_empty else \
        np.zeros(model.n_elements, bool)
    if budgets is not None:
        free &= ~model.attached_elements()
    passive = ~free
    if passive.all():
        return mesh.nodes, mesh.triangles, np.ones(model.n_elements), 0, 1.0, 0.0, \
            [0.0 for _ in curve]
    curve_saved: list[float] = []
    rmin = max(2.0 * h, 2.0 * float(s.corner_radius_mm))
    if budgets is not None:  # a filter about one web wide: the smallest member it draws
        rmin = max(_FILTER_PER_SIZE * h, float(s.min_web_mm))
    vol = model.element_volume
    if budgets is None:
        vf = _volume_fraction(slack)
        top = TopOptSettings(rmin_mm=rmin, max_iter=settings.max_iter, tol_change=0.02)

        def report(it: int, obj: float, v: float) -> None:
            job.say(f"{job.plate.name}: optimiser iteration {it}, objective {obj:.4g}, "
                    f"volume {v:.3f}")

        res = optimise(model, vf, top, passive_solid=passive, progress=report)
        dens, iterations = np.asarray(res.densities), res.iterations
    else:
        # The largest deflection is watched where material always stays (the keep-outs):
        # inside the design region a void's own displacement means nothing.
        watch = np.zeros(mesh.n_nodes, bool)
        watch[mesh.triangles[passive].ravel()] = True
        b = np.array([budgets[n] for n in model.case_names])
        top = TopOptSettings(rmin_mm=rmin, max_iter=settings.max_iter, tol_change=0.01)

        def responses(xp: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
            return model.case_deflection_norms(xp, penal=top.penal, emin_ratio=top.emin_ratio,
                                               power=_DEFLECTION_POWER, watch=watch)

        def report_mm(it: int, v: float, worst: float) -> None:
            job.say(f"{job.plate.name}: optimiser iteration {it}, volume {v:.3f}, "
                    f"worst deflection / budget {worst:.4f}")

        mm = minimise_mass(model, b, top, passive_solid=passive, responses=responses,
                           progress=report_mm)
        dens, iterations, vf = np.asarray(mm.densities), mm.iterations, mm.volume_fraction
        done = [(b, mm.design)]
        for extra in curve:
            bc = np.array([extra[n] for n in model.case_names])
            if np.array_equal(bc, b):  # the main run itself
                curve_saved.append(float(vol[free] @ (1.0 - dens[free]) / vol.sum()))
                continue
            tighter = [d for bb, d in done if np.all(bb <= bc)]
            job.say(f"{job.plate.name}: continuous optimum at budget {max(bc):g}")
            res = minimise_mass(model, bc, top, passive_solid=passive, responses=responses,
                                start=tighter[-1] if tighter else None)
            done.append((bc, res.design))
            curve_saved.append(float(vol[free] @ (1.0 - res.densities[free]) / vol.sum()))
    saved = float(vol[free] @ (1.0 - dens[free]) / vol.sum())
    return mesh.nodes, mesh.triangles, dens, iterations, vf, saved, curve_saved
