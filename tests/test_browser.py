"""The HTML reports as a person sees them: rendered by headless Chromium (Debian's package).

Checks: the browser exits 0 and logs no console message for the page (our pages carry no
script, so any console line is a problem: a blocked resource, a parse error); the DOM after
loading holds every drawing (one <svg> per plate) and every plot as an <img> whose data: URI
decodes as a PNG (PNG signature, ISO/IEC 15948, and a decode by matplotlib.image, a reference
reader independent of the plotting code); the screenshot shows the plates: inside the drawing
area (the box filled with the drawing background colour) there are pixels of the cut-path
colours, not only background.

Skipped with a reason when /usr/bin/chromium is absent and the CI variable is not set; with CI
set a missing browser is a failure (.ci/run installs it).
"""

from __future__ import annotations

import argparse
import base64
import io
import json
import os
import subprocess
from html.parser import HTMLParser
from pathlib import Path

import numpy as np
import pytest
from matplotlib import image as mpimg

from platewright.cli.commands.compare import CompareCommand
from platewright.cli.main import main
from platewright.geometry.plate.build import bundled_example_path, list_templates

CHROMIUM = Path("/usr/bin/chromium")
PNG_SIGNATURE = b"\x89PNG\r\n\x1a\n"
FLAGS = ["--headless", "--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run",
         "--disable-background-networking", "--disable-component-update", "--disable-sync",
         "--disable-dev-shm-usage", "--hide-scrollbars", "--enable-logging=stderr", "--v=0"]


@pytest.fixture(scope="module")
def chromium() -> Path:
    if not CHROMIUM.exists():
        if os.environ.get("CI"):
            pytest.fail("CI is set but /usr/bin/chromium is missing (.ci/run should install it)")
        pytest.skip("/usr/bin/chromium is not installed (apt-get install chromium); CI not set")
    return CHROMIUM


def run_chromium(tmp_path: Path, page: Path, *extra: str) -> subprocess.CompletedProcess:
    profile = tmp_path / f"profile-{len(list(tmp_path.glob('profile-*')))}"
    profile.mkdir()
    return subprocess.run([str(CHROMIUM), *FLAGS, f"--user-data-dir={profile}", *extra,
                           page.absolute().as_uri()],
                          capture_output=True, text=True, timeout=120, check=False)


class _Collector(HTMLParser):
    def __init__(self) -> None:
        super().__init__()
        self.images: list[str] = []
        self.svgs = 0

    def handle_starttag(self, tag: str, attrs: list[tuple[str, str | None]]) -> None:
        if tag == "img":
            self.images.append(dict(attrs).get("src") or "")
        elif tag == "svg":
            self.svgs += 1


def console_lines(stderr: str) -> list[str]:
    return [ln for ln in stderr.splitlines() if "CONSOLE" in ln]


def decode_png(uri: str) -> np.ndarray:
    head, _, data = uri.partition(",")
    assert head == "data:image/png;base64", head[:40]
    raw = base64.b64decode(data, validate=True)
    assert raw[:8] == PNG_SIGNATURE
    return mpimg.imread(io.BytesIO(raw), format="png")


def drawing_pixels(shot: np.ndarray, background: tuple[int, int, int]) -> np.ndarray:
    """The pixels inside the bounding box of the area filled with the drawing background."""
    rgb = np.round(shot[..., :3] * 255).astype(int)
    mask = np.all(rgb == np.array(background), axis=-1)
    assert mask.sum() > 10_000, "no drawing area found in the screenshot"
    rows, cols = np.nonzero(mask)
    return rgb[rows.min():rows.max() + 1, cols.min():cols.max() + 1]


@pytest.fixture(scope="module")
def checked_report(tmp_path_factory) -> Path:
    out = tmp_path_factory.mktemp("browser") / "report"
    assert main(["check", str(bundled_example_path()), "-q", "-o", str(out)]) == 0
    return out


def test_report_loads_with_every_drawing_and_plot(chromium, checked_report, tmp_path):
    page = checked_report / "report.html"
    res = run_chromium(tmp_path, page, "--dump-dom")
    assert res.returncode == 0, res.stderr[-2000:]
    assert console_lines(res.stderr) == []
    dom = _Collector()
    dom.feed(res.stdout)
    report = json.loads((checked_report / "report.json").read_text(encoding="utf-8"))
    assert dom.svgs == len(report["plates"])
    expected_plots = sum(len(c["plots"]) for p in report["plates"]
                         for c in p.get("fea", {}).get("load_cases", []))
    assert expected_plots > 0 and len(dom.images) == expected_plots
    for uri in dom.images:
        img = decode_png(uri)
        assert img.ndim == 3 and img.shape[0] > 50 and img.shape[1] > 50


def test_report_screenshot_shows_the_plate(chromium, checked_report, tmp_path):
    shot_path = tmp_path / "report.png"
    res = run_chromium(tmp_path, checked_report / "report.html", f"--screenshot={shot_path}",
                       "--window-size=1280,2400")
    assert res.returncode == 0, res.stderr[-2000:]
    shot = mpimg.imread(shot_path)
    # report_html draws on #fbfcfd; svg_writer strokes outer cuts #cc00cc, inner cuts #0033cc
    area = drawing_pixels(shot, (0xFB, 0xFC, 0xFD))
    r, g, b = area[..., 0], area[..., 1], area[..., 2]
    magenta = (r > 150) & (g < 110) & (b > 150)
    blue = (b > 150) & (r < 110) & (g < 150)
    assert magenta.sum() > 200 and blue.sum() > 200


def test_comparison_page_shows_both_sides(chromium, tmp_path):
    deck = {p.stem: p for p in list_templates()}["four_wheel_deck"]
    out = tmp_path / "cmp"
    cmd = CompareCommand()
    parser = argparse.ArgumentParser()
    cmd.add_arguments(parser)
    args = parser.parse_args([str(deck), str(deck), "--no-check", "-q", "-o", str(out),
                              "--set-b", "plates.deck.features.bore_front_left.at_mm=[85, 70]"])
    assert cmd.run(args) == 0
    shot_path = tmp_path / "cmp.png"
    res = run_chromium(tmp_path, out / "compare.html", f"--screenshot={shot_path}",
                       "--window-size=1280,1600")
    assert res.returncode == 0 and console_lines(res.stderr) == []
    area = drawing_pixels(mpimg.imread(shot_path), (0xFB, 0xFC, 0xFD))
    r, g, b = area[..., 0], area[..., 1], area[..., 2]
    # compare_html: side A #1f5fbf (blue), side B #d9480f (orange)
    blue = (b > 140) & (r < 90)
    orange = (r > 170) & (g > 40) & (g < 120) & (b < 60)
    assert blue.sum() > 100 and orange.sum() > 200
