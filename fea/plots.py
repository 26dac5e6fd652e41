"""Filled contour plots of analysis results as PNG bytes, drawn with numpy alone (no matplotlib).

Each plot shows one field (deflection in mm or von Mises stress in MPa) over the plate: every
mesh triangle is rasterised with linear (barycentric) interpolation of the nodal values, the
values are quantised into ``BANDS`` equal bands coloured by our own ramp (dark blue -> green ->
yellow, lightness rising with the value), the outline and holes are drawn as 2 px dark lines
and the largest value is marked with a red cross. The image carries no text: the title, colour
bar, minimum and maximum and the finite-element caution are HTML (``plot_legend_html``) to be
placed next to the image. PNG encoding follows the PNG specification (W3C, 2nd edition):
8-bit RGB, chunks IHDR/IDAT/IEND, filter type 0 on every row. Nothing is written to disk here.

Image layout: width ``round(width_in * dpi)`` px; a margin of ``max(4, round(0.025 * width))``
px on every side; the plate's bounding box is scaled to the remaining width (y up), unless
its height would then exceed twice the image width, in which case it is scaled to that height
and centred.
"""

from __future__ import annotations

import base64
import html
import struct
import zlib
from collections.abc import Callable
from typing import NamedTuple

import numpy as np

from platewright.fea.results import CaseResult

__all__ = ["FIELDS", "BANDS", "RAMP_KEYS", "ramp_rgb", "encode_png_rgb", "plot_field",
           "plot_case", "plot_legend_html"]

#: Plot names -> (CaseFields attribute, colour-bar label).
FIELDS: dict[str, tuple[str, str]] = {
    "deflection": ("deflection_mm", "deflection (mm)"),
    "von_mises": ("von_mises_mpa", "von Mises stress (MPa)"),
}
_UNITS = {"deflection": "mm", "von_mises": "MPa"}

#: Number of equal value bands of a filled plot (BANDS + 1 band edges from min to max).
BANDS = 14

#: Key colours (8-bit sRGB) of the colour ramp, equally spaced from 0 (lowest) to 1 (highest);
#: CIE L* of the keys rises about 14 -> 36 -> 52 -> 69 -> 90.
RAMP_KEYS: tuple[tuple[int, int, int], ...] = (
    (36, 24, 92), (34, 84, 150), (22, 140, 130), (96, 190, 80), (246, 228, 60))

_WHITE = (255, 255, 255)
_LINE = (35, 35, 40)
_MARK = (220, 20, 20)
_CAUTION = "finite-element estimate: confirm by test"
_PNG_SIGNATURE = b"\x89PNG\r\n\x1a\n"


def ramp_rgb(t: np.ndarray | float) -> np.ndarray:
    """Colours of the ramp at positions ``t`` in [0, 1] (clipped): (..., 3) uint8 sRGB,
    linear interpolation in sRGB between the equally spaced ``RAMP_KEYS``."""
    keys = np.asarray(RAMP_KEYS, dtype=float)
    s = np.clip(np.asarray(t, dtype=float), 0.0, 1.0) * (len(keys) - 1)
    i = np.minimum(np.floor(s).astype(int), len(keys) - 2)
    f = (s - i)[..., None]
    return np.round(keys[i] * (1.0 - f) + keys[i + 1] * f).astype(np.uint8)


def _band_colours() -> np.ndarray:
    """(BANDS, 3) uint8: band k has the ramp colour at k / (BANDS - 1), so the lowest band is
    the first key colour and the highest band the last."""
    return ramp_rgb(np.arange(BANDS) / (BANDS - 1))


def encode_png_rgb(rgb: np.ndarray, *, level: int = 6) -> bytes:
    """PNG bytes of an image ``rgb``: (h, w, 3) uint8, row 0 at the top. 8-bit truecolour,
    no interlace, filter type 0 (None) on every row, zlib ``level`` 0-9."""
    rgb = np.ascontiguousarray(rgb, dtype=np.uint8)
    if rgb.ndim != 3 or rgb.shape[2] != 3 or rgb.shape[0] < 1 or rgb.shape[1] < 1:
        raise ValueError(f"expected an (h, w, 3) image, got shape {rgb.shape}")
    h, w, _ = rgb.shape
    raw = np.zeros((h, 1 + 3 * w), dtype=np.uint8)  # column 0: filter type 0 of each row
    raw[:, 1:] = rgb.reshape(h, 3 * w)

    def chunk(kind: bytes, data: bytes) -> bytes:
        return (struct.pack(">I", len(data)) + kind + data
                + struct.pack(">I", zlib.crc32(kind + data) & 0xFFFFFFFF))

    header = struct.pack(">IIBBBBB", w, h, 8, 2, 0, 0, 0)  # depth 8, colour type 2 (RGB)
    return (_PNG_SIGNATURE + chunk(b"IHDR", header)
            + chunk(b"IDAT", zlib.compress(raw.tobytes(), level)) + chunk(b"IEND", b""))


def _layout(xy: np.ndarray, rings: tuple[np.ndarray, ...], width_px: int
            ) -> tuple[int, int, float, float, float, float, float]:
    """Image height and width (px) and the map mm -> pixel coordinates: u = ou + (x - x0) s,
    v = ov + (y1 - y) s (s in px/mm; pixel (row r, column c) has its centre at (c + 0.5, r + 0.5)).
    Returns (height_px, width_px, s, ou, ov, x0, y1)."""
    pts = np.vstack([xy, *rings]) if rings else xy
    x0, y0 = pts.min(axis=0)
    x1, y1 = pts.max(axis=0)
    span_x, span_y = max(float(x1 - x0), 1e-9), max(float(y1 - y0), 1e-9)
    margin = max(4, round(0.025 * width_px))
    s = (width_px - 2 * margin) / span_x
    if span_y * s > 2 * width_px - 2 * margin:
        s = (2 * width_px - 2 * margin) / span_y
    height_px = max(int(round(span_y * s)) + 2 * margin, 2 * margin + 1)
    ou = (width_px - span_x * s) / 2.0
    ov = (height_px - span_y * s) / 2.0
    return height_px, width_px, s, ou, ov, float(x0), float(y1)


class _Raster(NamedTuple):
    """Where each mesh triangle lands on the pixel grid, shared by every field of one mesh.

    pixel: (k,) int flat pixel index (row * width + column) of every pixel centre inside a
    triangle; tri: (k,) int that triangle; x, y: (k,) float the pixel centre (px).
    coef: (m, 6) float per triangle, barycentric l1 = c0 x + c1 y + c2, l2 = c3 x + c4 y + c5.
    """

    pixel: np.ndarray
    tri: np.ndarray
    x: np.ndarray
    y: np.ndarray
    coef: np.ndarray


def _raster(uv: np.ndarray, triangles: np.ndarray, shape: tuple[int, int]) -> _Raster:
    """Scan-convert ``triangles`` (m, 3) int with vertices at pixel coordinates ``uv`` (n, 2):
    for every (triangle, pixel row) pair the row's centre line is cut with the three edges and
    the pixel centres between the cuts are taken. Vectorised over triangles, rows and pixels."""
    h, w = shape
    tri = np.asarray(triangles, dtype=np.int64).reshape(-1, 3)
    pu, pv = uv[tri, 0], uv[tri, 1]  # (m, 3)
    det = (pv[:, 1] - pv[:, 2]) * (pu[:, 0] - pu[:, 2]) + (pu[:, 2] - pu[:, 1]) * (pv[:, 0] - pv[:, 2])
    good = np.abs(det) > 1e-12
    d = np.where(good, det, 1.0)
    a1, b1 = (pv[:, 1] - pv[:, 2]) / d, (pu[:, 2] - pu[:, 1]) / d
    a2, b2 = (pv[:, 2] - pv[:, 0]) / d, (pu[:, 0] - pu[:, 2]) / d
    coef = np.column_stack([a1, b1, -(a1 * pu[:, 2] + b1 * pv[:, 2]),
                            a2, b2, -(a2 * pu[:, 2] + b2 * pv[:, 2])])
    r0 = np.maximum(np.ceil(pv.min(axis=1) - 0.5 - 1e-9), 0).astype(np.int64)
    r1 = np.minimum(np.floor(pv.max(axis=1) - 0.5 + 1e-9), h - 1).astype(np.int64)
    nrow = np.where(good, np.maximum(r1 - r0 + 1, 0), 0)
    # (triangle, row) pairs
    pt = np.repeat(np.arange(len(tri)), nrow)
    row = r0[pt] + np.arange(len(pt)) - np.repeat(np.cumsum(nrow) - nrow, nrow)
    yc = row + 0.5
    left = np.full(len(pt), np.inf)
    right = np.full(len(pt), -np.inf)
    for i, j in ((0, 1), (1, 2), (2, 0)):
        ua, va, ub, vb = pu[pt, i], pv[pt, i], pu[pt, j], pv[pt, j]
        lo, hi = np.minimum(va, vb), np.maximum(va, vb)
        ok = (hi - lo > 1e-12) & (yc >= lo - 1e-9) & (yc <= hi + 1e-9)
        x = ua + (np.clip(yc, lo, hi) - va) * (ub - ua) / np.where(ok, vb - va, 1.0)
        left = np.where(ok, np.minimum(left, x), left)
        right = np.where(ok, np.maximum(right, x), right)
    c0 = np.maximum(np.ceil(left - 0.5 - 1e-9), 0)
    c1 = np.minimum(np.floor(right - 0.5 + 1e-9), w - 1)
    ncol = np.where(np.isfinite(c0) & np.isfinite(c1), np.maximum(c1 - c0 + 1, 0), 0).astype(np.int64)
    c0 = np.where(ncol > 0, c0, 0).astype(np.int64)
    # pixels
    pp = np.repeat(np.arange(len(pt)), ncol)
    col = c0[pp] + np.arange(len(pp)) - np.repeat(np.cumsum(ncol) - ncol, ncol)
    prow = row[pp]
    return _Raster(prow * w + col, pt[pp], col + 0.5, prow + 0.5, coef)


def _sample(r: _Raster, values: np.ndarray, triangles: np.ndarray) -> np.ndarray:
    """Linear (barycentric) interpolation of nodal ``values`` (n,) over ``triangles`` (m, 3) int
    at the pixels of ``r``: (k,) float."""
    f = np.asarray(values, dtype=float)[triangles]
    d1, d2 = f[:, 0] - f[:, 2], f[:, 1] - f[:, 2]
    c = r.coef
    gx, gy = d1 * c[:, 0] + d2 * c[:, 3], d1 * c[:, 1] + d2 * c[:, 4]
    g0 = f[:, 2] + d1 * c[:, 2] + d2 * c[:, 5]
    return g0[r.tri] + gx[r.tri] * r.x + gy[r.tri] * r.y


def _ring_pixels(rings: tuple[np.ndarray, ...], to_uv: Callable[[np.ndarray], np.ndarray],
                 shape: tuple[int, int]) -> tuple[np.ndarray, np.ndarray]:
    """(rows, cols) of 2 px wide lines along every closed ring: points sampled at most 0.5 px
    apart on each segment, each stamping the 2 x 2 pixels whose centres lie within 1 px of it."""
    segs = []
    for ring in rings:
        p = to_uv(np.asarray(ring, dtype=float))
        if len(p) >= 2:
            segs.append(np.stack([p, np.roll(p, -1, axis=0)], axis=1))  # (k, 2, 2)
    if not segs:
        return np.empty(0, np.int64), np.empty(0, np.int64)
    seg = np.concatenate(segs)
    a, b = seg[:, 0], seg[:, 1]
    n = np.ceil(np.hypot(*(b - a).T) / 0.5).astype(np.int64) + 1
    idx = np.repeat(np.arange(len(seg)), n)
    t = (np.arange(int(n.sum())) - np.repeat(np.cumsum(n) - n, n)) / np.maximum(n[idx] - 1, 1)
    pts = a[idx] + (b - a)[idx] * t[:, None]
    c = np.floor(pts[:, 0] - 0.5).astype(np.int64)
    r = np.floor(pts[:, 1] - 0.5).astype(np.int64)
    rows = np.concatenate([r, r, r + 1, r + 1])
    cols = np.concatenate([c, c + 1, c, c + 1])
    ok = (rows >= 0) & (rows < shape[0]) & (cols >= 0) & (cols < shape[1])
    return rows[ok], cols[ok]


def _cross_pixels(u: float, v: float, arm_px: int, shape: tuple[int, int]
                  ) -> tuple[np.ndarray, np.ndarray]:
    """(rows, cols) of a diagonal cross, 2 px thick, centred on the pixel holding (u, v)."""
    c, r = int(np.floor(u)), int(np.floor(v))
    d = np.arange(-arm_px, arm_px + 1)
    rows = np.concatenate([r + d, r - d, r + d, r - d])
    cols = np.concatenate([c + d, c + d, c + d + 1, c + d + 1])
    ok = (rows >= 0) & (rows < shape[0]) & (cols >= 0) & (cols < shape[1])
    return rows[ok], cols[ok]


def _field_values(result: CaseResult, field: str) -> np.ndarray:
    """The nodal values (n,) float of ``field``; ValueError for an unknown field or no fields."""
    if field not in FIELDS:
        raise ValueError(f"unknown field {field!r}; valid: {', '.join(FIELDS)}")
    if result.fields is None:
        raise ValueError("this result was computed without fields (keep_fields=False)")
    return np.asarray(getattr(result.fields, FIELDS[field][0]), dtype=float)


def _range(values: np.ndarray) -> tuple[float, float, int]:
    """(min, max, index of the max) over the finite values; (0, 0, 0) when none is finite."""
    finite = np.isfinite(values)
    if not finite.any():
        return 0.0, 0.0, 0
    i = int(np.argmax(np.where(finite, values, -np.inf)))
    return float(values[finite].min()), float(values[i]), i


def _is_constant(vmin: float, vmax: float) -> bool:
    return not vmax - vmin > 1e-12 * max(1.0, abs(vmax))


class _Canvas(NamedTuple):
    """One mesh laid out on an image: shape (h, w) px, node pixel coordinates uv (n, 2),
    triangles (m, 3) int, the triangle raster and the flat pixel indices (j,) of the outline
    and hole lines."""

    shape: tuple[int, int]
    uv: np.ndarray
    triangles: np.ndarray
    raster: _Raster
    lines: np.ndarray


def _canvas(result: CaseResult, width_px: int) -> _Canvas:
    """Lay the mesh of ``result.fields`` out on an image ``width_px`` wide and rasterise it."""
    f = result.fields
    if f is None:
        raise ValueError("this result was computed without fields (keep_fields=False)")
    xy = np.asarray(f.nodes_mm, dtype=float).reshape(-1, 2)
    rings = tuple(np.asarray(r, dtype=float).reshape(-1, 2) for r in f.rings_mm)
    h, w, s, ou, ov, x0, y1 = _layout(xy, rings, width_px)

    def to_uv(p: np.ndarray) -> np.ndarray:
        return np.column_stack([ou + (p[:, 0] - x0) * s, ov + (y1 - p[:, 1]) * s])

    uv = to_uv(xy)
    rows, cols = _ring_pixels(rings, to_uv, (h, w))
    tri = np.asarray(f.triangles, dtype=np.int64).reshape(-1, 3)
    return _Canvas((h, w), uv, tri, _raster(uv, tri, (h, w)), rows * w + cols)


def _design_scale(result: CaseResult, field: str, values: np.ndarray
                  ) -> tuple[float, float, int] | None:
    """(min, top of the scale, node of the cross) for a von Mises plot of a case with singular
    points: the scale stops at the design stress and the cross marks where it stands; None
    otherwise (the plain min/max scale)."""
    if field != "von_mises" or not getattr(result, "singular_points", ()) or result.fields is None:
        return None
    vmin, _, _ = _range(values)
    xy = np.asarray(result.fields.nodes_mm, dtype=float)
    at = np.asarray(result.von_mises_at_mm, dtype=float)
    i = int(np.argmin(((xy - at) ** 2).sum(axis=1)))
    return vmin, float(result.max_von_mises_mpa), i


def _draw(c: _Canvas, values: np.ndarray,
          scale: tuple[float, float, int] | None = None) -> bytes:
    """PNG bytes of ``values`` (n,) drawn on canvas ``c``: bands, lines, cross at the maximum
    (or, with ``scale`` = (min, top, node), bands up to ``top`` - higher values in the top
    band - and the cross at ``node``)."""
    h, w = c.shape
    white, line, mark, flat = BANDS, BANDS + 1, BANDS + 2, BANDS + 3
    palette = np.vstack([_band_colours(), [_WHITE, _LINE, _MARK], ramp_rgb(0.5)[None]])
    index = np.full(h * w, white, dtype=np.uint8)
    vmin, vmax, imax = _range(values) if scale is None else scale
    if _is_constant(vmin, vmax):
        index[c.raster.pixel] = flat
    else:
        val = _sample(c.raster, values, c.triangles)
        band = np.floor((val - vmin) * (BANDS / (vmax - vmin)))
        band = np.where(np.isfinite(band), np.clip(band, 0, BANDS - 1), white)
        index[c.raster.pixel] = band.astype(np.uint8)
    index[c.lines] = line
    if len(c.uv):
        rows, cols = _cross_pixels(c.uv[imax, 0], c.uv[imax, 1], max(3, round(w / 120)), (h, w))
        index[rows * w + cols] = mark
    return encode_png_rgb(palette[index].reshape(h, w, 3))


def plot_field(result: CaseResult, field: str = "deflection", *, dpi: int = 110,
               width_in: float = 7.0) -> bytes:
    """PNG bytes of one field of ``result`` over the plate (filled bands, no text).

    field: "deflection" (|w| in bending, in-plane displacement magnitude otherwise, mm) or
    "von_mises" (MPa; in bending on the more stressed face). The image is
    ``round(width_in * dpi)`` px wide; the height follows the plate's aspect ratio plus the
    margins (see the module notes). A constant field is drawn in the ramp's middle colour;
    pixels with a non-finite value stay background. Raises ValueError for an unknown field or
    a result kept without fields.
    """
    values = _field_values(result, field)
    return _draw(_canvas(result, max(16, int(round(width_in * dpi)))), values,
                 _design_scale(result, field, values))


def plot_case(result: CaseResult, *, dpi: int = 110) -> dict[str, bytes]:
    """Both plots of a case: {"deflection": PNG bytes, "von_mises": PNG bytes}, 7 in wide at
    ``dpi``; the mesh is rasterised once for both."""
    values = {name: _field_values(result, name) for name in FIELDS}
    canvas = _canvas(result, max(16, int(round(7.0 * dpi))))
    return {name: _draw(canvas, v, _design_scale(result, name, v)) for name, v in values.items()}


def _colour_bar_svg(edges: np.ndarray, constant: bool) -> str:
    """SVG text of a colour bar: BANDS hard-edged bands (a linearGradient of the same colours as
    the plot), a tick at every band edge, every other edge labelled (values of ``edges``)."""
    wide, bar_h, pad = 560.0, 18.0, 30.0
    if constant:
        c = ramp_rgb(0.5)
        stops = [f'<stop offset="0" stop-color="rgb({c[0]},{c[1]},{c[2]})"/>']
    else:
        stops = []
        for k, c in enumerate(_band_colours()):
            col = f"rgb({c[0]},{c[1]},{c[2]})"
            stops.append(f'<stop offset="{k / BANDS:.5f}" stop-color="{col}"/>'
                         f'<stop offset="{(k + 1) / BANDS:.5f}" stop-color="{col}"/>')
    span = wide - 2 * pad
    ticks, labels = [], []
    for k, e in enumerate(edges):
        x = pad + span * (k / (len(edges) - 1) if len(edges) > 1 else 0.5)
        ticks.append(f'<line x1="{x:.1f}" y1="{bar_h}" x2="{x:.1f}" y2="{bar_h + 5}"/>')
        if k % 2 == 0 or len(edges) <= 2:
            labels.append(f'<text x="{x:.1f}" y="{bar_h + 19}">{e:.3g}</text>')
    return ('<svg xmlns="http://www.w3.org/2000/svg" viewBox="0 0 560 44" width="560" height="44">'
            f'<defs><linearGradient id="g" x1="0" x2="1" y1="0" y2="0">{"".join(stops)}'
            f'</linearGradient></defs><rect x="{pad}" y="0" width="{span}" height="{bar_h}" '
            'fill="url(#g)" stroke="#23232a" stroke-width="0.8"/>'
            f'<g stroke="#23232a" stroke-width="0.8">{"".join(ticks)}</g>'
            '<g font-family="sans-serif" font-size="12" text-anchor="middle" fill="#23232a">'
            f'{"".join(labels)}</g></svg>')


def plot_legend_html(result: CaseResult, field: str) -> str:
    """HTML block to show beside ``plot_field(result, field)``: a title line, a colour bar (an
    SVG linearGradient of the plot's bands, as a data URI so the page gains no <svg> element),
    the band edges, the minimum and maximum (with units) and where the maximum is (mm), and the
    finite-element caution. Raises ValueError like ``plot_field``."""
    values = _field_values(result, field)
    f = result.fields
    assert f is not None
    unit, label = _UNITS[field], FIELDS[field][1]
    scale = _design_scale(result, field, values)
    top = _range(values)[1]
    vmin, vmax, imax = _range(values) if scale is None else scale
    constant = _is_constant(vmin, vmax)
    edges = np.array([vmin, vmax]) if constant else np.linspace(vmin, vmax, BANDS + 1)
    svg = _colour_bar_svg(edges, constant)
    uri = "data:image/svg+xml;base64," + base64.b64encode(svg.encode("utf-8")).decode("ascii")
    at = (f" at ({f.nodes_mm[imax, 0]:.1f}, {f.nodes_mm[imax, 1]:.1f}) mm"
          if len(f.nodes_mm) else "")
    edge_text = ", ".join(f"{e:.4g}" for e in edges)
    title = f"{result.plate} / {result.name} ({result.family}): {label}"
    return (
        '<div class="plot-legend" style="font-size:.85rem;margin:.2rem 0 .6rem 0">'
        f'<div style="font-weight:600">{html.escape(title)}</div>'
        f'<div role="img" aria-label="colour bar, {html.escape(label)}" '
        f'title="band edges ({unit}): {edge_text}" style="width:100%;max-width:560px;'
        f"aspect-ratio:560/44;background:url('{uri}') no-repeat;background-size:contain\"></div>"
        f"<div>min {vmin:.4g} {unit}, max {vmax:.4g} {unit}{at} "
        '(<span style="color:#dc1414">red cross</span>)'
        + ("" if scale is None else
           f"; this is the design stress: up to {top:.4g} {unit} lies within "
           f"{result.exclusion_radius_mm:g} mm of {len(result.singular_points)} singular "
           "point(s), drawn in the top band")
        + "</div>"
        f'<div style="color:#56616b">band edges ({unit}): {edge_text}</div>'
        f'<div style="color:#56616b">{_CAUTION}</div></div>')
