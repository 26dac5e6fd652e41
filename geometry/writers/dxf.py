"""DXF cut file of one plate (ezdxf, DXF R2010, millimetres at 1:1).

Layers (names and ACI colours are platewright's own):

============== ===== ==========================================================================
layer          ACI   content
============== ===== ==========================================================================
PW_ENGRAVE     3     engraving labels as TEXT (importers may drop text), written first
PW_CUT_INNER   5     inner cut paths, in their cut ``order``
PW_CUT_OUTER   1     the outline cut path, written last (a freed part drops and shifts)
PW_NOTES       8     non-cut annotation (size, material, thickness, kerf, units); not plotted
============== ===== ==========================================================================

Circular paths become true CIRCLE entities; every other path a closed LWPOLYLINE with bulges
(never splines). Vertices closer than ``MIN_SEGMENT_MM`` are merged and identical paths are
written once. Each cut entity carries the ids of the features it cuts as XDATA under the
application name ``PLATEWRIGHT`` (read back with :func:`entity_feature_ids`).

Coordinates in mm; the header says so (``$INSUNITS`` = 4, ``$MEASUREMENT`` = 1). Some importers
ignore ``$INSUNITS``, so the overall size is also printed on the notes layer.
"""

from __future__ import annotations

import os

import ezdxf
import numpy as np
from ezdxf.document import Drawing
from ezdxf.enums import TextEntityAlignment

from platewright.geometry.model import CutContour, Plate
from platewright.geometry.plate.curves import Contour
from platewright.geometry.tolerances import MIN_SEGMENT_MM

__all__ = [
    "new_cut_document",
    "LAYER_ENGRAVE",
    "LAYER_CUT_INNER",
    "LAYER_CUT_OUTER",
    "LAYER_NOTES",
    "XDATA_APP",
    "write_plate_dxf",
    "entity_feature_ids",
    "polyline_vertices",
]

LAYER_ENGRAVE = "PW_ENGRAVE"
LAYER_CUT_INNER = "PW_CUT_INNER"
LAYER_CUT_OUTER = "PW_CUT_OUTER"
LAYER_NOTES = "PW_NOTES"
#: Application name of the feature-id XDATA on cut entities.
XDATA_APP = "PLATEWRIGHT"

#: ACI colours (platewright's choice): green, blue, red, grey.
_LAYERS = {LAYER_ENGRAVE: 3, LAYER_CUT_INNER: 5, LAYER_CUT_OUTER: 1, LAYER_NOTES: 8}
#: DXF group codes: 1000 = XDATA string.
_XDATA_STRING = 1000
#: $INSUNITS code for millimetres and $MEASUREMENT code for metric (DXF reference).
_INSUNITS_MM = 4
_MEASUREMENT_METRIC = 1
#: Notes text height, mm.
NOTE_HEIGHT_MM = 3.0
#: Digits kept when comparing paths for duplicates (0.1 nm).
_DEDUP_DIGITS = 7


def polyline_vertices(contour: Contour, min_segment_mm: float = MIN_SEGMENT_MM) -> np.ndarray:
    """Closed-polyline vertices ``(m, 3) float`` rows ``(x_mm, y_mm, bulge)`` of a contour, with
    every segment shorter than ``min_segment_mm`` merged into its neighbour (the tiny segment's
    bulge is dropped; the neighbour keeps its own). Raises ValueError if the loop collapses."""
    v = np.asarray(contour.vertices, dtype=float)
    b = np.array(contour.bulges, dtype=float)
    keep = [0]
    for i in range(1, len(v)):
        if np.hypot(*(v[i] - v[keep[-1]])) >= min_segment_mm:
            keep.append(i)
        else:
            # the merged segment starts at the kept vertex and takes the later bulge
            b[keep[-1]] = b[i]
    # a tiny closing segment: drop its start vertex; the segment before it now ends at vertex 0
    while len(keep) > 1 and np.hypot(*(v[keep[-1]] - v[keep[0]])) < min_segment_mm:
        keep.pop()
    if len(keep) < 2 or (len(keep) == 2 and not np.all(b[keep] != 0.0)):
        raise ValueError("contour collapses below the minimum segment length")
    return np.column_stack([v[keep], b[keep]])


def _path_key(layer: str, contour: Contour) -> tuple:
    if contour.is_circle:
        (cx, cy), r = contour.circle_center_radius()
        return (layer, "circle", round(cx, _DEDUP_DIGITS), round(cy, _DEDUP_DIGITS),
                round(r, _DEDUP_DIGITS))
    rows = polyline_vertices(contour)
    # same loop from any start vertex and in either direction is the same cut
    start = int(np.lexsort((rows[:, 1], rows[:, 0]))[0])
    rolled = np.roll(rows, -start, axis=0)
    return (layer, "poly", tuple(np.round(rolled, _DEDUP_DIGITS).ravel().tolist()))


def entity_feature_ids(entity) -> tuple[str, ...]:
    """Feature ids stored on a cut entity by :func:`write_plate_dxf` (empty when absent)."""
    if not entity.has_xdata(XDATA_APP):
        return ()
    return tuple(str(v) for code, v in entity.get_xdata(XDATA_APP) if code == _XDATA_STRING)


def _cut_sequence(cut: list[CutContour]) -> list[CutContour]:
    """Inner paths in their order, outer paths last."""
    return sorted(cut, key=lambda c: (c.layer != "inner", c.order))


def new_cut_document() -> Drawing:
    """An empty R2010 drawing in millimetres with our layers (notes layer not plotted) and our
    XDATA application registered: the common start of every cut file we write."""
    doc = ezdxf.new("R2010", setup=False)
    doc.units = _INSUNITS_MM
    doc.header["$INSUNITS"] = _INSUNITS_MM
    doc.header["$MEASUREMENT"] = _MEASUREMENT_METRIC
    doc.appids.add(XDATA_APP)
    for name, colour in _LAYERS.items():
        layer = doc.layers.add(name, color=colour)
        if name == LAYER_NOTES:
            layer.dxf.plot = 0
    return doc


def save_cut_document(doc: Drawing, path: str | os.PathLike) -> None:
    """Write ``doc`` to ``path`` so that the same drawing always gives the same bytes.

    ezdxf stamps the save time, fresh GUIDs and its own time-stamped marker into every file, and
    orders the CLASSES section by a set whose order follows Python's hash seed. Here the header
    dates are fixed (2000-01-01, ezdxf's reproducible-output option), the GUIDs and marker are
    constant, and the classes are written in sorted order, so repeated builds are byte-identical.
    """
    doc.classes.add_required_classes(doc.dxfversion)
    doc.classes.classes = dict(sorted(doc.classes.classes.items()))
    previous = ezdxf.options.write_fixed_meta_data_for_testing
    ezdxf.options.write_fixed_meta_data_for_testing = True
    try:
        doc._create_ezdxf_metadata()  # the "created by" stamp, now constant
        doc.saveas(os.fspath(path))
    finally:
        ezdxf.options.write_fixed_meta_data_for_testing = previous


def write_plate_dxf(plate: Plate, cut: list[CutContour], path: str | os.PathLike) -> None:
    """Write the plate's cut paths (mm) to a DXF R2010 file at ``path``.

    plate: supplies engravings and the notes (material, thickness, kerf).
    cut: kerf-compensated cut paths (``layer`` ``inner`` or ``outer``), e.g. from
    ``geometry.cutpaths.cut_paths``; written inner first by ``order``, then outer.
    """
    doc = new_cut_document()
    msp = doc.modelspace()

    for eng in plate.engravings:
        text = msp.add_text(
            eng.text,
            height=eng.height_mm,
            rotation=eng.rotation_deg,
            dxfattribs={"layer": LAYER_ENGRAVE},
        )
        text.set_placement(eng.position_mm, align=TextEntityAlignment.MIDDLE_CENTER)

    written: dict[tuple, object] = {}
    for cc in _cut_sequence(cut):
        layer = LAYER_CUT_INNER if cc.layer == "inner" else LAYER_CUT_OUTER
        key = _path_key(layer, cc.path)
        if key in written:
            entity = written[key]
            ids = entity_feature_ids(entity)
            if cc.feature_id not in ids:
                set_feature_ids(entity, (*ids, cc.feature_id))
            continue
        if cc.path.is_circle:
            center, r = cc.path.circle_center_radius()
            entity = msp.add_circle(center, r, dxfattribs={"layer": layer})
        else:
            rows = polyline_vertices(cc.path)
            entity = msp.add_lwpolyline(
                [tuple(r) for r in rows.tolist()], format="xyb", close=True,
                dxfattribs={"layer": layer},
            )
        set_feature_ids(entity, (cc.feature_id,))
        written[key] = entity

    _write_notes(msp, plate, cut)
    save_cut_document(doc, path)


def set_feature_ids(entity, ids: tuple[str, ...]) -> None:
    if entity.has_xdata(XDATA_APP):
        entity.discard_xdata(XDATA_APP)
    entity.set_xdata(XDATA_APP, [(_XDATA_STRING, i) for i in ids])


def _write_notes(msp, plate: Plate, cut: list[CutContour]) -> None:
    """Notes above the part: part size from the as-cut outline, material, thickness, kerf."""
    outers = [c.part_contour for c in cut if c.layer == "outer"] or [plate.outline.contours[0]]
    boxes = np.array([c.bbox() for c in outers])
    x0, y0 = boxes[:, 0].min(), boxes[:, 1].min()
    x1, y1 = boxes[:, 2].max(), boxes[:, 3].max()
    lines = [
        f"plate: {plate.name}" + (f" ({plate.part_number})" if plate.part_number else ""),
        f"size: {x1 - x0:.3f} x {y1 - y0:.3f} mm",
        f"material: {plate.material.name}",
        f"thickness: {plate.thickness_mm:g} mm",
        f"kerf used: {plate.kerf_mm:g} mm",
        "units: mm",
    ]
    gap = 1.6 * NOTE_HEIGHT_MM
    top = y1 + 2.0 * NOTE_HEIGHT_MM + gap * len(lines)
    for k, line in enumerate(lines):
        msp.add_text(
            line, height=NOTE_HEIGHT_MM, dxfattribs={"layer": LAYER_NOTES}
        ).set_placement((x0, top - gap * k), align=TextEntityAlignment.LEFT)
