"""DXF cut file of one plate (ezdxf, DXF R2010, millimetres at 1:1).

Layers (names and ACI colours are platewright's own):

============== ===== ==========================================================================
layer          ACI   content
============== ===== ==========================================================================
PW_ENGRAVE     3     engraving labels as TEXT (importers may drop text), written first
PW_CUT_INNER   5     inner cut paths, in their cut ``order``
PW_CUT_OUTER   6     the outline cut path, written last (a freed part drops and shifts)
PW_NOTES       8     non-cut annotation (size, material, thickness, kerf, units); not plotted
============== ===== ==========================================================================

The plotted layers agree with the cut order three ways, so a cutter that orders its work by
entity, by layer table, by layer name or by colour number cuts in the same order: the layer table
lists them in cut order, their names sort in cut order and their ACI colour numbers rise in cut
order. (Nest sheets with parts inside other parts' cut-outs use numbered cut layers instead, see
:mod:`.sheet`.)

Circular paths become true CIRCLE entities; every other path a closed LWPOLYLINE with bulges
(never splines). Vertices closer than ``MIN_SEGMENT_MM`` are merged and identical paths are
written once. Each cut entity carries the ids of the features it cuts as XDATA under the
application name ``PLATEWRIGHT`` (read back with :func:`entity_feature_ids`).

Coordinates in mm; the header says so (``$INSUNITS`` = 4, ``$MEASUREMENT`` = 1). Some importers
ignore ``$INSUNITS``, so the overall size is also printed on the notes layer. The header's drawing
extents (``$EXTMIN``, ``$EXTMAX``) are the box of everything written: exact for the cut paths, the
measured ink box for text. Every text uses the text style ``PW_LABEL``, whose font is the face
labels are measured in (:mod:`platewright.geometry.plate.lettering`).
"""

from __future__ import annotations

import math
import os
from collections.abc import Sequence

import ezdxf
import numpy as np
from ezdxf.document import Drawing
from ezdxf.enums import TextEntityAlignment

from platewright.geometry.model import CutContour, Plate
from platewright.geometry.plate.curves import Contour
from platewright.geometry.plate.lettering import LABEL_FONT_FILE, LABEL_STYLE, text_extent, text_polygon
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
    "Extents",
    "write_note_lines",
    "PLATE_CUT_LAYERS",
]

LAYER_ENGRAVE = "PW_ENGRAVE"
LAYER_CUT_INNER = "PW_CUT_INNER"
LAYER_CUT_OUTER = "PW_CUT_OUTER"
LAYER_NOTES = "PW_NOTES"
#: Application name of the feature-id XDATA on cut entities.
XDATA_APP = "PLATEWRIGHT"

#: ACI colours (platewright's choice), rising in cut order: green, blue, magenta; notes grey.
_LAYERS = {LAYER_ENGRAVE: 3, LAYER_CUT_INNER: 5, LAYER_CUT_OUTER: 6, LAYER_NOTES: 8}
#: The plate files' cut layers and their ACI colours, in cut order.
PLATE_CUT_LAYERS: tuple[tuple[str, int], ...] = ((LAYER_CUT_INNER, 5), (LAYER_CUT_OUTER, 6))
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


class Extents:
    """The growing box (mm) of what a writer has put in a drawing, for ``$EXTMIN``/``$EXTMAX``."""

    def __init__(self) -> None:
        self.box = [math.inf, math.inf, -math.inf, -math.inf]

    def add(self, x0: float, y0: float, x1: float, y1: float) -> None:
        """Grow the box to hold ``(x0, y0, x1, y1)`` (mm)."""
        b = self.box
        self.box = [min(b[0], x0), min(b[1], y0), max(b[2], x1), max(b[3], y1)]

    def add_contour(self, contour: Contour) -> None:
        """Grow the box to hold a contour (exact bounding box, arcs included)."""
        self.add(*contour.bbox())

    def add_text(self, text: str, position_mm: tuple[float, float], height_mm: float,
                 rotation_deg: float = 0.0, *, left: bool = False) -> None:
        """Grow the box to hold a text's ink, anchored as the writers place it (``left``: at the
        left end of the baseline, unrotated; otherwise middle-centre, turned ``rotation_deg``)."""
        if left:
            x0, y0, x1, y1 = text_extent(text, height_mm, True)
            self.add(position_mm[0] + x0, position_mm[1] + y0, position_mm[0] + x1,
                     position_mm[1] + y1)
            return
        poly = text_polygon(text, position_mm, height_mm, rotation_deg)
        if not poly.is_empty:
            self.add(*poly.bounds)

    def write(self, doc: Drawing) -> None:
        """Set the drawing extents of ``doc`` (left unchanged when nothing was added): the model
        space's, which ezdxf copies into the header's ``$EXTMIN``/``$EXTMAX`` on saving."""
        x0, y0, x1, y1 = self.box
        if x0 <= x1 and y0 <= y1:
            doc.modelspace().reset_extents((float(x0), float(y0), 0.0), (float(x1), float(y1), 0.0))


def new_cut_document(cut_layers: Sequence[tuple[str, int]] = PLATE_CUT_LAYERS) -> Drawing:
    """An empty R2010 drawing in millimetres with our text style, our XDATA application and our
    layers in cut order: the engraving layer, ``cut_layers`` ((name, ACI colour) in cut order;
    default the plate files' two) and the notes layer (not plotted). The common start of every
    cut file we write."""
    doc = ezdxf.new("R2010", setup=False)
    doc.units = _INSUNITS_MM
    doc.header["$INSUNITS"] = _INSUNITS_MM
    doc.header["$MEASUREMENT"] = _MEASUREMENT_METRIC
    doc.appids.add(XDATA_APP)
    doc.styles.add(LABEL_STYLE, font=LABEL_FONT_FILE)
    doc.layers.add(LAYER_ENGRAVE, color=_LAYERS[LAYER_ENGRAVE])
    for name, colour in cut_layers:
        doc.layers.add(name, color=colour)
    doc.layers.add(LAYER_NOTES, color=_LAYERS[LAYER_NOTES]).dxf.plot = 0
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
    ext = Extents()

    for eng in plate.engravings:
        text = msp.add_text(
            eng.text,
            height=eng.height_mm,
            rotation=eng.rotation_deg,
            dxfattribs={"layer": LAYER_ENGRAVE, "style": LABEL_STYLE},
        )
        text.set_placement(eng.position_mm, align=TextEntityAlignment.MIDDLE_CENTER)
        ext.add_text(eng.text, eng.position_mm, eng.height_mm, eng.rotation_deg)

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
        ext.add_contour(cc.path)

    _write_notes(msp, plate, cut, ext)
    ext.write(doc)
    save_cut_document(doc, path)


def set_feature_ids(entity, ids: tuple[str, ...]) -> None:
    if entity.has_xdata(XDATA_APP):
        entity.discard_xdata(XDATA_APP)
    entity.set_xdata(XDATA_APP, [(_XDATA_STRING, i) for i in ids])


def write_note_lines(msp, lines: list[str], left_mm: float, top_mm: float, ext: Extents) -> None:
    """Notes-layer text lines, left-aligned at ``left_mm``, the first baseline at ``top_mm``."""
    gap = 1.6 * NOTE_HEIGHT_MM
    for k, line in enumerate(lines):
        at = (left_mm, top_mm - gap * k)
        msp.add_text(
            line, height=NOTE_HEIGHT_MM, dxfattribs={"layer": LAYER_NOTES, "style": LABEL_STYLE}
        ).set_placement(at, align=TextEntityAlignment.LEFT)
        ext.add_text(line, at, NOTE_HEIGHT_MM, left=True)


def _write_notes(msp, plate: Plate, cut: list[CutContour], ext: Extents) -> None:
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
    write_note_lines(msp, lines, x0, y1 + 2.0 * NOTE_HEIGHT_MM + gap * len(lines), ext)
