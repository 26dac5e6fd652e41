"""Contour plots drawn without matplotlib (fea.plots), checked from outside the code under test.

Images are decoded by matplotlib.image.imread (Pillow underneath), a general-purpose reference
PNG reader; the PNG chunk layout is checked against the PNG specification (W3C PNG 2nd ed.,
ISO/IEC 15948: signature, IHDR fields, CRC-32 of type + data, filter byte per row). Expected
pixel positions are worked here from the image itself (the drawn outline gives the plate's
extent) and closed-form fields (w = x, a paraboloid with a known maximum). Colour order is
judged by CIE 1976 L* lightness from sRGB (IEC 61966-2-1 transfer curve, Rec. 709 luminance
weights), worked independently in this file.
"""

from __future__ import annotations

import base64
import io
import re
import struct
import subprocess
import sys
import zlib
from types import SimpleNamespace

import numpy as np
import pytest
from matplotlib import image as mpimg
from scipy.spatial import Delaunay

from platewright.fea.plots import (
    BANDS,
    encode_png_rgb,
    plot_case,
    plot_field,
    plot_legend_html,
    ramp_rgb,
)
from platewright.fea.results import CaseFields

PNG_SIGNATURE = b"\x89PNG\r\n\x1a\n"  # PNG spec 2nd ed. section 5.2


def lightness(rgb: np.ndarray) -> np.ndarray:
    """CIE 1976 L* of 8-bit sRGB colours (..., 3): sRGB decoding per IEC 61966-2-1, relative
    luminance with the Rec. 709 / sRGB weights, L* = 116 (Y)^(1/3) - 16 (CIE 15)."""
    c = np.asarray(rgb, dtype=float) / 255.0
    lin = np.where(c <= 0.04045, c / 12.92, ((c + 0.055) / 1.055) ** 2.4)
    y = lin @ np.array([0.2126, 0.7152, 0.0722])
    return np.where(y > 216 / 24389, 116 * np.cbrt(y) - 16, 24389 / 27 * y)


def grid_mesh(a: float, b: float, step: float, hole: tuple[float, float, float, float] | None = None):
    """Nodes (n, 2) and counter-clockwise triangles (m, 3) of [0, a] x [0, b], cells of
    ``step``; cells inside ``hole`` (x0, y0, x1, y1) left out."""
    nx, ny = int(round(a / step)) + 1, int(round(b / step)) + 1
    xs, ys = np.meshgrid(np.linspace(0, a, nx), np.linspace(0, b, ny))
    nodes = np.column_stack([xs.ravel(), ys.ravel()])
    tris = []
    for j in range(ny - 1):
        for i in range(nx - 1):
            n0 = j * nx + i
            cx, cy = (i + 0.5) * step, (j + 0.5) * step
            if hole and hole[0] < cx < hole[2] and hole[1] < cy < hole[3]:
                continue
            tris += [(n0, n0 + 1, n0 + nx + 1), (n0, n0 + nx + 1, n0 + nx)]
    return nodes, np.array(tris)


def fake_result(nodes, tris, w, rings, vm=None, name="case_a"):
    """A stand-in for a CaseResult: only what the plot functions read."""
    n = len(nodes)
    fields = CaseFields(nodes_mm=nodes, triangles=tris, displacement_mm=np.zeros((n, 3)),
                        deflection_mm=np.asarray(w, float),
                        von_mises_mpa=np.asarray(w if vm is None else vm, float),
                        rings_mm=tuple(np.asarray(r, float) for r in rings))
    return SimpleNamespace(name=name, plate="test_deck", family="bending", fields=fields)


def decode(png: bytes) -> np.ndarray:
    """(h, w, 3) uint8 from PNG bytes, decoded by the reference reader."""
    assert png[:8] == PNG_SIGNATURE
    img = mpimg.imread(io.BytesIO(png), format="png")
    return np.round(img[..., :3] * 255).astype(int)


def is_white(img: np.ndarray) -> np.ndarray:
    return np.all(img == 255, axis=-1)


def is_red(img: np.ndarray) -> np.ndarray:
    """The maximum's cross (the ramp and the lines hold no such colour)."""
    return (img[..., 0] > 180) & (img[..., 1] < 80) & (img[..., 2] < 80)


def extent(img: np.ndarray) -> tuple[int, int, int, int]:
    """(left, right, top, bottom) pixel index of everything neither white nor the red cross
    (which may reach past the outline when the maximum lies on it)."""
    rows, cols = np.nonzero(~is_white(img) & ~is_red(img))
    return cols.min(), cols.max(), rows.min(), rows.max()


SQUARE = np.array([[0, 0], [100, 0], [100, 100], [0, 100]], float)  # outline, counter-clockwise
HOLE = np.array([[40, 40], [40, 60], [60, 60], [60, 40]], float)  # hole, clockwise


def test_png_encoder_round_trips_through_a_reference_reader():
    rng = np.random.default_rng(7)
    rgb = rng.integers(0, 256, size=(23, 37, 3), dtype=np.uint8)
    png = encode_png_rgb(rgb)
    np.testing.assert_array_equal(decode(png), rgb)  # matplotlib/Pillow decode
    # chunk layout per PNG spec 2nd ed. 5.3/11.2: length, type, data, CRC-32 of type + data
    pos, kinds = 8, []
    while pos < len(png):
        (length,) = struct.unpack(">I", png[pos:pos + 4])
        kind, data = png[pos + 4:pos + 8], png[pos + 8:pos + 8 + length]
        (crc,) = struct.unpack(">I", png[pos + 8 + length:pos + 12 + length])
        assert crc == zlib.crc32(kind + data) & 0xFFFFFFFF
        kinds.append(kind)
        if kind == b"IHDR":  # width, height, bit depth 8, colour type 2 (truecolour), 0, 0, 0
            assert struct.unpack(">IIBBBBB", data) == (37, 23, 8, 2, 0, 0, 0)
        if kind == b"IDAT":
            raw = np.frombuffer(zlib.decompress(data), np.uint8).reshape(23, 1 + 3 * 37)
            assert np.all(raw[:, 0] == 0)  # filter type 0 (None) on every row
        pos += 12 + length
    assert kinds == [b"IHDR", b"IDAT", b"IEND"]
    with pytest.raises(ValueError):
        encode_png_rgb(np.zeros((4, 4), np.uint8))


def test_image_size_follows_width_and_plate_aspect():
    nodes, tris = grid_mesh(200, 100, 10)
    ring = np.array([[0, 0], [200, 0], [200, 100], [0, 100]], float)
    img = decode(plot_field(fake_result(nodes, tris, nodes[:, 0], [ring]), dpi=50, width_in=8.0))
    assert img.shape[1] == 400  # width_in x dpi px (the brief)
    left, right, top, bottom = extent(img)
    # a 200 x 100 mm plate is drawn twice as wide as tall (within the 2 px outline)
    assert abs((right - left + 1) / (bottom - top + 1) - 2.0) < 0.05
    # margins: equal on all four sides (height = plate height + the same margins), white
    margins = [left, img.shape[1] - 1 - right, top, img.shape[0] - 1 - bottom]
    assert max(margins) - min(margins) <= 2 and min(margins) >= 3
    # a tall plate (20 x 200 mm): the height is capped at twice the width (module notes)
    nodes_t, tris_t = grid_mesh(20, 200, 10)
    tall = np.array([[0, 0], [20, 0], [20, 200], [0, 200]], float)
    img = decode(plot_field(fake_result(nodes_t, tris_t, nodes_t[:, 1], [tall]), dpi=50,
                            width_in=4.0))
    assert img.shape[:2] == (400, 200)
    left, right, top, bottom = extent(img)
    assert abs((bottom - top + 1) / (right - left + 1) - 10.0) < 0.6
    # the default size: 7 in at 110 dpi = 770 px wide (plot_field's documented defaults)
    assert decode(plot_field(fake_result(nodes, tris, nodes[:, 0], [ring]))).shape[1] == 770


def test_ramp_is_ordered_dark_blue_to_green_to_yellow():
    c = ramp_rgb(np.linspace(0, 1, 256)).astype(int)
    assert c.shape == (256, 3)
    # perceptually ordered: L* (CIE 1976) rises; neighbours 1/255 apart may dip by the 8-bit
    # rounding of one channel (under 0.1 L*), samples 1/31 apart rise by more than 1 L*
    assert np.all(np.diff(lightness(c)) > -0.1)
    assert np.all(np.diff(lightness(ramp_rgb(np.linspace(0, 1, 32)).astype(int))) > 1.0)
    r, g, b = c[0]
    assert b > r and b > g and lightness(c[0]) < 25  # dark blue start
    mid = c[int(0.7 * 255)]
    assert mid[1] == mid.max()  # green dominates on the way
    r, g, b = c[-1]
    assert r > 200 and g > 200 and b < 100 and lightness(c[-1]) > 85  # yellow end


def test_linear_field_bands_rise_left_to_right_and_match_the_ramp_ends():
    nodes, tris = grid_mesh(100, 100, 5)
    img = decode(plot_field(fake_result(nodes, tris, nodes[:, 0], [SQUARE]), dpi=50,
                            width_in=8.0))
    left, right, top, bottom = extent(img)
    row = img[(top + bottom) // 2, left + 3:right - 2]  # inside the outline
    lum = lightness(row)
    assert np.all(np.diff(lum) >= -1e-9)  # w = x: never darker to the right
    colours = [tuple(p) for i, p in enumerate(row) if i == 0 or tuple(p) != tuple(row[i - 1])]
    assert len(colours) == BANDS == 14  # ~14 bands (the brief), each seen once
    # ends are the ramp's documented end colours (fea.plots RAMP_KEYS docs: dark blue, yellow)
    assert colours[0] == (36, 24, 92) and colours[-1] == (246, 228, 60)
    # band k of w = x in [0, 100] ends at x = 100 (k + 1) / 14 (equal bands): find the column
    # of each colour change and compare with the outline-measured mapping x -> column
    changes = np.nonzero(np.any(row[1:] != row[:-1], axis=1))[0] + left + 3 + 1
    u0, u1 = left + 1.0, right + 0.0  # outline pixels straddle x = 0 and x = 100
    expected = u0 + (u1 - u0) * np.arange(1, BANDS) / BANDS
    np.testing.assert_allclose(changes + 0.5, expected, atol=1.6)


def test_background_outside_the_plate_and_inside_a_hole_and_dark_outline():
    nodes, tris = grid_mesh(100, 100, 5, hole=(40, 40, 60, 60))
    img = decode(plot_field(fake_result(nodes, tris, nodes[:, 1], [SQUARE, HOLE]), dpi=50,
                            width_in=8.0))
    left, right, top, bottom = extent(img)

    def px(x_mm, y_mm):  # y up: row grows as y falls
        return (int(round(top + (100 - y_mm) / 100 * (bottom - top))),
                int(round(left + x_mm / 100 * (right - left))))

    white = is_white(img)
    margin = white | is_red(img)  # w = y peaks on the top edge: its cross may reach out
    assert margin[:left, :].all() and margin[:, right + 1:].all()  # margins
    assert margin[:top, :].all() and margin[bottom + 1:, :].all()
    r0, c0 = px(43, 57)
    r1, c1 = px(57, 43)
    assert white[r0:r1 + 1, c0:c1 + 1].all()  # inside the hole, 3 mm clear of its edge
    for x, y in ((20, 20), (80, 50), (50, 80), (50, 20)):
        assert not white[px(x, y)]  # the plate itself is filled
    # outline: dark grey pixels on the left edge at mid height
    edge = img[(top + bottom) // 2, left:left + 2]
    assert np.all(lightness(edge) < 25) and np.all(np.ptp(edge, axis=-1) < 15)
    # y up: w = y is brightest at the top of the image
    mid = (left + right) // 2
    assert lightness(img[top + 4, mid]) > lightness(img[bottom - 4, mid]) + 50


def test_max_cross_is_at_the_maximum():
    nodes, tris = grid_mesh(100, 100, 5)
    w = -((nodes[:, 0] - 30) ** 2 + (nodes[:, 1] - 70) ** 2)  # unique maximum at (30, 70) mm
    img = decode(plot_field(fake_result(nodes, tris, w, [SQUARE]), dpi=50, width_in=8.0))
    left, right, top, bottom = extent(img)
    red = is_red(img)
    rows, cols = np.nonzero(red)
    assert 8 < red.sum() < 200 and np.ptp(rows) < 20 and np.ptp(cols) < 20  # a small cross
    # expected centre from the outline: x = 30 -> 30 % across, y = 70 -> 30 % down (y up)
    u = left + 1.0 + 0.30 * (right - left - 1.0)
    v = top + 1.0 + 0.30 * (bottom - top - 1.0)
    assert abs(cols.mean() + 0.5 - u) < 2.0 and abs(rows.mean() + 0.5 - v) < 2.0


def test_unstructured_mesh_bands_match_the_closed_form_field():
    """Random Delaunay mesh (scipy, half the triangles listed clockwise) of the square and
    w = 2x + 3y: each pixel's band must be floor(14 (w - min) / (max - min)) at its centre."""
    rng = np.random.default_rng(3)
    inner = rng.uniform(2, 98, size=(300, 2))
    edge = np.linspace(0, 100, 21)
    border = np.vstack([np.column_stack([edge, 0 * edge]), np.column_stack([edge, 100 + 0 * edge]),
                        np.column_stack([0 * edge[1:-1], edge[1:-1]]),
                        np.column_stack([100 + 0 * edge[1:-1], edge[1:-1]])])
    nodes = np.vstack([border, inner])
    tris = Delaunay(nodes).simplices.copy()
    tris[::2] = tris[::2, ::-1]
    w = 2 * nodes[:, 0] + 3 * nodes[:, 1]
    img = decode(plot_field(fake_result(nodes, tris, w, [SQUARE]), dpi=50, width_in=8.0))
    left, right, top, bottom = extent(img)
    # plate pixels 3 px inside the outline; colours ranked by L* give the band index
    sub = img[top + 3:bottom - 2, left + 3:right - 2]
    rows, cols = np.mgrid[top + 3:bottom - 2, left + 3:right - 2]
    keep = ~is_red(sub).ravel()  # the cross at the maximum (100, 100) is not a band
    flat = sub.reshape(-1, 3)[keep]
    palette, band_of = np.unique(flat, axis=0, return_inverse=True)
    assert len(palette) == BANDS
    rank = np.argsort(np.argsort(lightness(palette)))
    got = rank[band_of.ravel()]
    u0, u1, v0, v1 = left + 1.0, right + 0.0, top + 1.0, bottom + 0.0
    x = (cols.ravel()[keep] + 0.5 - u0) / (u1 - u0) * 100
    y = 100 - (rows.ravel()[keep] + 0.5 - v0) / (v1 - v0) * 100
    want = np.clip(np.floor(14 * (2 * x + 3 * y) / 500), 0, 13)
    assert np.mean(got == want) > 0.97  # mismatches only along band edges (1 px mapping)
    assert np.all(np.abs(got - want) <= 1)


def test_constant_field_and_errors():
    nodes, tris = grid_mesh(100, 100, 10)
    res = fake_result(nodes, tris, np.full(len(nodes), 2.5), [SQUARE])
    img = decode(plot_field(res, "von_mises", dpi=40, width_in=5.0))
    left, right, top, bottom = extent(img)
    inner = img[top + 4:bottom - 3, left + 4:right - 3].reshape(-1, 3)
    assert len(np.unique(inner, axis=0)) <= 2  # one fill colour (plus the max cross)
    assert "min 2.5 MPa, max 2.5 MPa" in plot_legend_html(res, "von_mises")
    with pytest.raises(ValueError):
        plot_field(res, "stress_xx")
    with pytest.raises(ValueError):
        plot_legend_html(res, "stress_xx")
    with pytest.raises(ValueError):
        plot_field(SimpleNamespace(name="c", plate="p", family="bending", fields=None))


def test_plot_case_gives_both_fields():
    nodes, tris = grid_mesh(100, 100, 10)
    res = fake_result(nodes, tris, nodes[:, 0], [SQUARE], vm=nodes[:, 1])
    pngs = plot_case(res, dpi=40)
    assert set(pngs) == {"deflection", "von_mises"}
    a, b = decode(pngs["deflection"]), decode(pngs["von_mises"])
    assert a.shape == b.shape and a.shape[1] == 280  # 7 in x 40 dpi
    # w = x rises left to right, vm = y rises bottom to top (independent fields)
    left, right, top, bottom = extent(a)
    mr, mc = (top + bottom) // 2, (left + right) // 2
    assert lightness(a[mr, right - 4]) > lightness(a[mr, left + 4]) + 50
    assert lightness(b[top + 4, mc]) > lightness(b[bottom - 4, mc]) + 50


def test_legend_html_states_min_max_units_and_caution():
    nodes, tris = grid_mesh(100, 100, 10)
    res = fake_result(nodes, tris, nodes[:, 0] / 50.0, [SQUARE], vm=3.0 + nodes[:, 1])
    text = plot_legend_html(res, "deflection")
    # w = x / 50 over x in [0, 100]: min 0 mm, max 2 mm on the edge x = 100 mm (worked here)
    m = re.search(r"min ([-0-9.e+]+) mm, max ([-0-9.e+]+) mm at \(([-0-9.]+), ([-0-9.]+)\) mm", text)
    assert m, text[:400]
    assert float(m[1]) == pytest.approx(0.0, abs=1e-12) and float(m[2]) == pytest.approx(2.0)
    assert float(m[3]) == pytest.approx(100.0)
    assert "finite-element estimate: confirm by test" in text
    assert "test_deck / case_a (bending): deflection (mm)" in text
    assert "<svg" not in text  # the page keeps one <svg> element per plate drawing
    # the colour bar: an SVG linearGradient with 14 hard-edged bands, ends the ramp's ends
    uri = re.search(r"data:image/svg\+xml;base64,([A-Za-z0-9+/=]+)", text)[1]
    svg = base64.b64decode(uri).decode("utf-8")
    stops = re.findall(r'<stop offset="([0-9.]+)" stop-color="rgb\((\d+),(\d+),(\d+)\)"', svg)
    assert "<linearGradient" in svg and len(stops) == 2 * 14
    assert tuple(map(int, stops[0][1:])) == (36, 24, 92)
    assert tuple(map(int, stops[-1][1:])) == (246, 228, 60)
    assert float(stops[0][0]) == 0.0 and float(stops[-1][0]) == 1.0
    # von Mises in MPa: min 3, max 103 (vm = 3 + y, y in [0, 100])
    vm = plot_legend_html(res, "von_mises")
    m = re.search(r"min ([-0-9.e+]+) MPa, max ([-0-9.e+]+) MPa at \(([-0-9.]+), ([-0-9.]+)\) mm", vm)
    assert m and float(m[1]) == pytest.approx(3.0) and float(m[2]) == pytest.approx(103.0)
    assert float(m[4]) == pytest.approx(100.0)


def test_plotting_and_the_commands_do_not_import_matplotlib():
    code = ("import sys, numpy as np\n"
            "import platewright.cli.commands.registry\n"
            "from platewright.fea.plots import plot_field\n"
            "from platewright.fea.results import CaseFields\n"
            "from types import SimpleNamespace\n"
            "xy = np.array([[0, 0], [1, 0], [0, 1.0]])\n"
            "f = CaseFields(xy, np.array([[0, 1, 2]]), np.zeros((3, 3)), xy[:, 0], xy[:, 1], (xy,))\n"
            "plot_field(SimpleNamespace(name='c', plate='p', family='bending', fields=f))\n"
            "print(sorted(m for m in sys.modules if m.split('.')[0] == 'matplotlib'))\n")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True,
                         timeout=60, check=True)
    assert out.stdout.strip() == "[]"
