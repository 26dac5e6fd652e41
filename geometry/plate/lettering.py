"""The lettering of engraved text: the face the cut files name, and the text's measured extent (mm).

Every cut file writes its text in one face, so that what is measured here is what a viewer
draws: the DXF text style ``PW_LABEL`` names the TrueType file ``DejaVuSans.ttf`` and the SVG
asks for the family ``DejaVu Sans`` (DejaVu fonts: a free licence derived from Bitstream Vera;
the face ships with matplotlib, a platewright dependency, and with most Linux systems). A viewer
that lacks the face substitutes another one, which may run wider: install DejaVu Sans where
labels matter.

Measurement: ezdxf's font tools (fontTools underneath) read the face and give the outline of the
text; its bounding box is the ink extent. Conventions are those of a DXF TEXT entity as ezdxf
draws it: the text height is the CAPITAL height, the anchor is the middle of the cap height and
the centre of the advance width (DXF ``MIDDLE_CENTER``), rotation in degrees counter-clockwise
about the anchor. The SVG font size is the em size, ``height_mm * em_per_cap()``.
"""

from __future__ import annotations

import importlib.util
import math
import os
from functools import lru_cache

import shapely

__all__ = [
    "LABEL_STYLE",
    "LABEL_FONT_FILE",
    "LABEL_FONT_FAMILY",
    "label_font_path",
    "text_extent",
    "text_polygon",
    "em_per_cap",
]

#: DXF text style of every text platewright writes.
LABEL_STYLE = "PW_LABEL"
#: TrueType file the DXF text style names.
LABEL_FONT_FILE = "DejaVuSans.ttf"
#: Font family the SVG text asks for.
LABEL_FONT_FAMILY = "DejaVu Sans"
#: DejaVu Sans 2.37 cap height / em (1493 / 2048 font units, from the font's own outlines), used
#: only when no copy of the face can be read.
_CAP_PER_EM = 1493.0 / 2048.0


def label_font_path() -> str | None:
    """Path of matplotlib's copy of DejaVuSans.ttf, or None when that copy is missing (some
    system builds of matplotlib use the system's fonts instead)."""
    spec = importlib.util.find_spec("matplotlib")
    for folder in (spec.submodule_search_locations or []) if spec is not None else []:
        path = os.path.join(folder, "mpl-data", "fonts", "ttf", LABEL_FONT_FILE)
        if os.path.isfile(path):
            return path
    return None


@lru_cache(maxsize=1)
def _font():
    """The face at cap height 1 mm: matplotlib's copy, else whatever ezdxf's font manager finds
    under the same file name (the system's copy, or ezdxf's fallback face)."""
    from ezdxf.fonts import fonts

    path = label_font_path()
    if path is not None:
        return fonts.sideload_ttf(path, 1.0)
    return fonts.make_font(LABEL_FONT_FILE, 1.0)


def em_per_cap() -> float:
    """Em size / cap height of the face (dimensionless): the SVG font size of 1 mm cap height."""
    cache = getattr(_font(), "glyph_cache", None)
    try:
        units = float(cache.font["head"].unitsPerEm)  # type: ignore[union-attr]
        cap = float(cache.font_measurements.cap_height)  # type: ignore[union-attr]
        return units / cap
    except (AttributeError, KeyError, TypeError, ZeroDivisionError):
        return 1.0 / _CAP_PER_EM


@lru_cache(maxsize=4096)
def text_extent(text: str, height_mm: float, baseline_left: bool = False
                ) -> tuple[float, float, float, float]:
    """Ink box ``(x0, y0, x1, y1)`` (mm) of ``text`` at cap height ``height_mm``, relative to its
    anchor before rotation: the middle of the cap height at the centre of the advance width (DXF
    ``MIDDLE_CENTER``), or with ``baseline_left`` the left end of the baseline (DXF ``LEFT``).
    Blank text has an empty box at the anchor."""
    font = _font()
    h = float(height_mm)
    path = font.text_path_ex(text, h)
    if not text.strip() or len(path) == 0:
        return 0.0, 0.0, 0.0, 0.0
    box = path.bbox()
    dx, dy = (0.0, 0.0) if baseline_left else (font.text_width_ex(text, h) / 2.0, h / 2.0)
    return (float(box.extmin.x) - dx, float(box.extmin.y) - dy,
            float(box.extmax.x) - dx, float(box.extmax.y) - dy)


def text_polygon(text: str, position_mm: tuple[float, float], height_mm: float,
                 rotation_deg: float = 0.0) -> shapely.Polygon:
    """The ink box of ``text`` placed with its anchor at ``position_mm`` and turned by
    ``rotation_deg`` (counter-clockwise) about it: a shapely polygon in mm."""
    x0, y0, x1, y1 = text_extent(text, float(height_mm))
    a = math.radians(rotation_deg)
    c, s = math.cos(a), math.sin(a)
    px, py = float(position_mm[0]), float(position_mm[1])
    corners = [(x0, y0), (x1, y0), (x1, y1), (x0, y1)]
    return shapely.Polygon([(px + c * x - s * y, py + s * x + c * y) for x, y in corners])
