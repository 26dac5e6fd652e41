"""What changed between two builds of a design: plates, features, sizes, mass and stiffness results.

Both sides are report documents in the report.json shape (schema_version 1, see DESIGN.md): a
build written to a folder, or a fresh build turned into that shape. Reading the public report
contract keeps this module free of the command line and of the finite-element code, and lets a
build on disk be compared with one made now.

Features are matched by id within a plate of the same name. A feature is *moved* when its centre
moved by more than ``tol_mm``, *resized* when a nominal or cut size differs by more than
``tol_mm``, *rotated* when its angle differs by more than ``tol_deg``. The outline's centre is
the centre of the plate's bounding box (``bbox_mm``), not its area centroid: stretching an
outline evenly moves its centroid whenever the shape is not symmetric, and that is a change of
size (reported as resized width or height), not a move. Units: mm, g, g mm^2,
degrees; every change carries the value on side A, on side B and B minus A.
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from typing import Any

__all__ = [
    "COMPARE_TOL_MM",
    "COMPARE_TOL_DEG",
    "SIZE_FIELDS",
    "FeatureChange",
    "CaseChange",
    "PlateComparison",
    "DesignComparison",
    "compare_reports",
]

#: Two lengths closer than this are the same, mm (report values are rounded to 1e-6 mm; a laser
#: cannot place an edge to better than about 0.01 mm, common practice).
COMPARE_TOL_MM = 1e-4
#: Two feature angles closer than this are the same, degrees.
COMPARE_TOL_DEG = 1e-4
#: (nominal field, cut field, size name) of the report's feature entries.
SIZE_FIELDS: tuple[tuple[str, str, str], ...] = (
    ("nominal_diameter_mm", "cut_diameter_mm", "diameter"),
    ("nominal_width_mm", "cut_width_mm", "width"),
    ("length_mm", "cut_length_mm", "length"),
    ("width_mm", "cut_width_mm", "width"),
    ("height_mm", "cut_height_mm", "height"),
)
_INERTIA_KEYS = ("Ixx", "Iyy", "Izz", "Ixy")


def _delta(a: float | None, b: float | None) -> dict[str, float | None]:
    """{"a", "b", "delta"}; delta None when a side is missing."""
    d = None if a is None or b is None else float(b) - float(a)
    return {"a": a, "b": b, "delta": d}


@dataclass(frozen=True)
class FeatureChange:
    """One changed feature of a plate.

    change: moved | resized | rotated | added | removed. center_a_mm / center_b_mm: (x, y) mm, None
    on the side that lacks the feature. distance_mm: how far the centre moved (moved only).
    sizes: for resized, one dict per size that changed: ``size`` (diameter, width, length,
    height), ``nominal_a_mm``, ``nominal_b_mm``, ``cut_a_mm``, ``cut_b_mm`` (None when a side
    has no such value). angle_a_deg / angle_b_deg for rotated.
    """

    id: str
    kind: str
    change: str
    center_a_mm: tuple[float, float] | None = None
    center_b_mm: tuple[float, float] | None = None
    distance_mm: float | None = None
    sizes: tuple[dict[str, Any], ...] = ()
    angle_a_deg: float | None = None
    angle_b_deg: float | None = None

    def to_report(self) -> dict[str, Any]:
        """JSON-ready dict (only the fields that apply to this change)."""
        out: dict[str, Any] = {"id": self.id, "kind": self.kind, "change": self.change}
        if self.center_a_mm is not None:
            out["center_a_mm"] = list(self.center_a_mm)
        if self.center_b_mm is not None:
            out["center_b_mm"] = list(self.center_b_mm)
        if self.distance_mm is not None:
            out["distance_mm"] = self.distance_mm
        if self.sizes:
            out["sizes"] = [dict(s) for s in self.sizes]
        if self.change == "rotated":
            out["angle_a_deg"] = self.angle_a_deg
            out["angle_b_deg"] = self.angle_b_deg
        return out


@dataclass(frozen=True)
class CaseChange:
    """One load case of one plate on both sides: deflection (mm), limit (mm), safety factor and
    verdict on A and B. A side without the case has None values; ``present`` says which sides
    have it (``both``, ``a``, ``b``)."""

    name: str
    present: str
    max_deflection_a_mm: float | None
    max_deflection_b_mm: float | None
    limit_a_mm: float | None
    limit_b_mm: float | None
    safety_factor_a: float | None
    safety_factor_b: float | None
    passes_a: bool | None
    passes_b: bool | None

    def to_report(self) -> dict[str, Any]:
        """JSON-ready dict with deltas (B minus A)."""
        return {
            "name": self.name, "present": self.present,
            "max_deflection_mm": _delta(self.max_deflection_a_mm, self.max_deflection_b_mm),
            "limit_mm": {"a": self.limit_a_mm, "b": self.limit_b_mm},
            "safety_factor": _delta(self.safety_factor_a, self.safety_factor_b),
            "passes": {"a": self.passes_a, "b": self.passes_b},
        }


@dataclass(frozen=True)
class PlateComparison:
    """A plate present on both sides.

    mass_a_g / mass_b_g: one plate, g. inertia_a_g_mm2 / inertia_b_g_mm2: about the centroid,
    g mm^2 (keys Ixx, Iyy, Izz, Ixy). centroid_a_mm / centroid_b_mm: (x, y) mm. properties: the
    plate fields that changed (material, thickness_mm, kerf_mm, quantity) as name -> (a, b).
    features: the changed features (moved, resized, rotated, then removed, then added).
    cases: load cases when either side has finite-element results (empty otherwise).
    """

    name: str
    mass_a_g: float
    mass_b_g: float
    inertia_a_g_mm2: dict[str, float]
    inertia_b_g_mm2: dict[str, float]
    centroid_a_mm: tuple[float, float]
    centroid_b_mm: tuple[float, float]
    properties: dict[str, tuple[Any, Any]] = field(default_factory=dict)
    features: tuple[FeatureChange, ...] = ()
    cases: tuple[CaseChange, ...] = ()

    def ids(self, change: str) -> list[str]:
        """Ids of the features with this change (moved, resized, rotated, added, removed)."""
        return [f.id for f in self.features if f.change == change]

    @property
    def changed_ids(self) -> set[str]:
        """Every feature id that changed in any way."""
        return {f.id for f in self.features}

    @property
    def mass_delta_g(self) -> float:
        """Mass of B minus mass of A, g."""
        return self.mass_b_g - self.mass_a_g

    def to_report(self) -> dict[str, Any]:
        """JSON-ready dict for ``plates[]`` of compare.json."""
        ca, cb = self.centroid_a_mm, self.centroid_b_mm
        return {
            "name": self.name,
            "mass_g": _delta(self.mass_a_g, self.mass_b_g),
            "inertia_g_mm2": {k: _delta(self.inertia_a_g_mm2.get(k), self.inertia_b_g_mm2.get(k))
                              for k in _INERTIA_KEYS},
            "centroid_mm": {"a": list(ca), "b": list(cb),
                            "moved_mm": math.hypot(cb[0] - ca[0], cb[1] - ca[1])},
            "properties": {k: {"a": a, "b": b} for k, (a, b) in self.properties.items()},
            "features_moved": [f.to_report() for f in self.features if f.change == "moved"],
            "features_resized": [f.to_report() for f in self.features if f.change == "resized"],
            "features_rotated": [f.to_report() for f in self.features if f.change == "rotated"],
            "features_removed": [f.to_report() for f in self.features if f.change == "removed"],
            "features_added": [f.to_report() for f in self.features if f.change == "added"],
            "load_cases": [c.to_report() for c in self.cases],
        }


@dataclass(frozen=True)
class DesignComparison:
    """Two builds compared: ``a`` and ``b`` describe each side (name, file, sha256); total masses
    (g, quantities applied); plates only on one side; one PlateComparison per common plate."""

    a: dict[str, Any]
    b: dict[str, Any]
    total_mass_a_g: float
    total_mass_b_g: float
    total_inertia_a_g_mm2: dict[str, float]
    total_inertia_b_g_mm2: dict[str, float]
    plates_added: tuple[str, ...]
    plates_removed: tuple[str, ...]
    plates: tuple[PlateComparison, ...]

    def plate(self, name: str) -> PlateComparison:
        """The comparison of the common plate ``name``; KeyError if absent."""
        for p in self.plates:
            if p.name == name:
                return p
        raise KeyError(name)

    @property
    def has_changes(self) -> bool:
        """True when anything beyond rounding differs."""
        return bool(self.plates_added or self.plates_removed or any(
            p.features or p.properties or abs(p.mass_delta_g) > 1e-6 for p in self.plates))

    def to_report(self) -> dict[str, Any]:
        """The body of compare.json (the caller adds tool and schema fields)."""
        return {
            "a": dict(self.a), "b": dict(self.b),
            "units": {"length": "mm", "mass": "g", "inertia": "g mm^2", "angle": "deg"},
            "total_mass_g": _delta(self.total_mass_a_g, self.total_mass_b_g),
            "total_inertia_g_mm2": {k: _delta(self.total_inertia_a_g_mm2.get(k),
                                              self.total_inertia_b_g_mm2.get(k))
                                    for k in _INERTIA_KEYS},
            "plates_added": list(self.plates_added),
            "plates_removed": list(self.plates_removed),
            "plates": [p.to_report() for p in self.plates],
        }


def _center(f: Mapping[str, Any]) -> tuple[float, float]:
    c = f.get("center_mm", [0.0, 0.0])
    return float(c[0]), float(c[1])


def _sizes(fa: Mapping[str, Any], fb: Mapping[str, Any], tol_mm: float) -> list[dict[str, Any]]:
    """The sizes of one feature that differ between A and B."""
    out: list[dict[str, Any]] = []
    seen: set[str] = set()
    for nominal, cut, size in SIZE_FIELDS:
        if not any(k in e for k in (nominal, cut) for e in (fa, fb)) or size in seen:
            continue
        na, nb = fa.get(nominal), fb.get(nominal)
        ca, cb = fa.get(cut), fb.get(cut)
        if na is None and nb is None:
            continue
        differs = any(
            (x is None) != (y is None) or (x is not None and y is not None and abs(x - y) > tol_mm)
            for x, y in ((na, nb), (ca, cb))
        )
        seen.add(size)
        if differs:
            out.append({"size": size, "nominal_a_mm": na, "nominal_b_mm": nb,
                        "cut_a_mm": ca, "cut_b_mm": cb})
    fit_a, fit_b = fa.get("fit_allowance_mm"), fb.get("fit_allowance_mm")
    if not out and fit_a is not None and fit_b is not None and abs(fit_a - fit_b) > tol_mm:
        out.append({"size": "fit_allowance", "nominal_a_mm": fit_a, "nominal_b_mm": fit_b,
                    "cut_a_mm": None, "cut_b_mm": None})
    return out


def _angle(f: Mapping[str, Any]) -> float | None:
    for key in ("angle_deg", "direction_deg"):
        if key in f:
            return float(f[key])
    return None


def _box_center(plate: Mapping[str, Any]) -> tuple[float, float] | None:
    box = plate.get("bbox_mm")
    if not box or len(box) != 4:
        return None
    return (float(box[0]) + float(box[2])) / 2.0, (float(box[1]) + float(box[3])) / 2.0


def _feature_changes(fa_list: Sequence[Mapping[str, Any]], fb_list: Sequence[Mapping[str, Any]],
                     tol_mm: float, tol_deg: float,
                     outline_centers: tuple[tuple[float, float] | None, ...] = (None, None),
                     ) -> list[FeatureChange]:
    a = {f["id"]: f for f in fa_list}
    b = {f["id"]: f for f in fb_list}
    moved, resized, rotated, removed, added = [], [], [], [], []
    for fid, fa in a.items():
        fb = b.get(fid)
        if fb is None:
            removed.append(FeatureChange(fid, fa["kind"], "removed", center_a_mm=_center(fa)))
            continue
        pa, pb = _center(fa), _center(fb)
        if fa.get("kind") == "outline" and None not in outline_centers:
            pa, pb = outline_centers  # type: ignore[assignment]
        dist = math.hypot(pb[0] - pa[0], pb[1] - pa[1])
        if dist > tol_mm:
            moved.append(FeatureChange(fid, fb["kind"], "moved", pa, pb, dist))
        sizes = _sizes(fa, fb, tol_mm)
        if sizes:
            resized.append(FeatureChange(fid, fb["kind"], "resized", pa, pb, sizes=tuple(sizes)))
        ang_a, ang_b = _angle(fa), _angle(fb)
        if ang_a is not None and ang_b is not None and abs(ang_b - ang_a) > tol_deg:
            rotated.append(FeatureChange(fid, fb["kind"], "rotated", pa, pb,
                                         angle_a_deg=ang_a, angle_b_deg=ang_b))
    for fid, fb in b.items():
        if fid not in a:
            added.append(FeatureChange(fid, fb["kind"], "added", center_b_mm=_center(fb)))
    return moved + resized + rotated + removed + added


def _cases(pa: Mapping[str, Any], pb: Mapping[str, Any]) -> list[CaseChange]:
    ca = {c["name"]: c for c in (pa.get("fea") or {}).get("load_cases", [])}
    cb = {c["name"]: c for c in (pb.get("fea") or {}).get("load_cases", [])}
    names = list(ca) + [n for n in cb if n not in ca]
    out = []
    for name in names:
        x, y = ca.get(name, {}), cb.get(name, {})
        present = "both" if name in ca and name in cb else ("a" if name in ca else "b")
        out.append(CaseChange(name, present, x.get("max_deflection_mm"), y.get("max_deflection_mm"),
                              x.get("limit_mm"), y.get("limit_mm"), x.get("safety_factor"),
                              y.get("safety_factor"), x.get("passes"), y.get("passes")))
    return out


_PROPERTY_FIELDS = ("material", "thickness_mm", "kerf_mm", "quantity")


def _plate(pa: Mapping[str, Any], pb: Mapping[str, Any], tol_mm: float, tol_deg: float
           ) -> PlateComparison:
    props: dict[str, tuple[Any, Any]] = {}
    for key in _PROPERTY_FIELDS:
        va, vb = pa.get(key), pb.get(key)
        if isinstance(va, float) and isinstance(vb, float):
            if abs(va - vb) > tol_mm:
                props[key] = (va, vb)
        elif va != vb:
            props[key] = (va, vb)
    return PlateComparison(
        name=pa["name"], mass_a_g=float(pa["mass_g"]), mass_b_g=float(pb["mass_g"]),
        inertia_a_g_mm2={k: float(v) for k, v in pa["inertia_g_mm2"].items()},
        inertia_b_g_mm2={k: float(v) for k, v in pb["inertia_g_mm2"].items()},
        centroid_a_mm=_center({"center_mm": pa["centroid_mm"]}),
        centroid_b_mm=_center({"center_mm": pb["centroid_mm"]}),
        properties=props,
        features=tuple(_feature_changes(pa.get("features", []), pb.get("features", []),
                                        tol_mm, tol_deg, (_box_center(pa), _box_center(pb)))),
        cases=tuple(_cases(pa, pb)),
    )


def _side(report: Mapping[str, Any]) -> dict[str, Any]:
    d = report.get("design", {})
    return {"name": d.get("name", ""), "file": d.get("file", ""), "sha256": d.get("sha256", "")}


def compare_reports(a: Mapping[str, Any], b: Mapping[str, Any], *, tol_mm: float = COMPARE_TOL_MM,
                    tol_deg: float = COMPARE_TOL_DEG) -> DesignComparison:
    """Compare two report documents (report.json shape, schema_version 1): side A against B.

    Plates are matched by name, features by id. ``tol_mm``: smallest centre move or size change
    reported, mm; ``tol_deg``: smallest rotation reported, degrees. Raises ValueError for a
    document that is not a schema-1 report.
    """
    for side, rep in (("A", a), ("B", b)):
        if not isinstance(rep, Mapping) or rep.get("schema_version") != 1 or "plates" not in rep:
            raise ValueError(f"side {side} is not a platewright report (schema_version 1)")
    pa = {p["name"]: p for p in a["plates"]}
    pb = {p["name"]: p for p in b["plates"]}
    return DesignComparison(
        a=_side(a), b=_side(b),
        total_mass_a_g=float(a["total_mass_g"]), total_mass_b_g=float(b["total_mass_g"]),
        total_inertia_a_g_mm2=dict(a.get("total_inertia_g_mm2", {})),
        total_inertia_b_g_mm2=dict(b.get("total_inertia_g_mm2", {})),
        plates_added=tuple(n for n in pb if n not in pa),
        plates_removed=tuple(n for n in pa if n not in pb),
        plates=tuple(_plate(pa[n], pb[n], tol_mm, tol_deg) for n in pa if n in pb),
    )
