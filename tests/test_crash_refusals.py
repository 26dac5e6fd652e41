"""Inputs that used to crash with a traceback (issue 9, item 7) are refused: exit status 2,
nothing written, the field (path) and its line named.

Each expected path and line is worked out here from the design text (the line of the key that
names the field), never taken from the code under test.
"""

from __future__ import annotations

import os
import subprocess
import sys
from pathlib import Path

import pytest

from platewright.cli.main import main

HEAD = """\
name: crash test
material: cast_acrylic
thickness_mm: 3
kerf_mm: 0.2
plates:
  - name: deck
    outline:
      rounded_rect: {width_mm: 100, height_mm: 80}
    features:
"""


def _line(text: str, needle: str) -> int:
    """1-based line of the first line of ``text`` containing ``needle``."""
    return next(i + 1 for i, t in enumerate(text.splitlines()) if needle in t)


def _refused(tmp_path: Path, capsys, text: str, *extra: str, name: str = "design.yaml") -> str:
    """Build ``text``; assert a clean refusal (2, no traceback, nothing written); stderr."""
    design = tmp_path / name
    design.write_text(text, encoding="utf-8")
    out = tmp_path / "out"
    rc = main(["build", str(design), "-o", str(out), "-q", *extra])
    _, err = capsys.readouterr()
    assert rc == 2, err
    assert "Traceback" not in err
    assert not out.exists()
    assert sorted(p.name for p in tmp_path.iterdir()) == [name]  # no temporary leftovers
    return err


def test_overlapping_holes_that_cut_the_plate_apart_are_refused(tmp_path, capsys):
    # two 75 mm holes 24 mm apart on a 100 x 80 mm plate: each fits inside, together they
    # overlap (the exact mass assumed disjoint holes and went negative)
    text = HEAD + ("      - {id: left, type: hole, at_mm: [-12, 0], diameter_mm: 75}\n"
                   "      - {id: right, type: hole, at_mm: [12, 0], diameter_mm: 75}\n")
    err = _refused(tmp_path, capsys, text)
    assert "feature_overlap" in err
    assert f"plates[0].features[0] (line {_line(text, 'id: left')})" in err


def test_cutouts_whose_union_is_the_whole_plate_are_refused(tmp_path, capsys):
    # two 50 x 80 mm cut-outs side by side cover the 100 x 80 mm plate exactly
    text = HEAD + ("      - {id: west, type: cutout, at_mm: [-25, 0], width_mm: 50, height_mm: 80}\n"
                   "      - {id: east, type: cutout, at_mm: [25, 0], width_mm: 50, height_mm: 80}\n")
    err = _refused(tmp_path, capsys, text)
    assert "plates[0]" in err and "line" in err


@pytest.mark.parametrize("field,value", [
    ("type", "[hole]"), ("type", "{a: 1}"), ("id", "[a]"), ("id", "{x: 1}")])
def test_a_list_or_mapping_as_type_or_id_is_refused(tmp_path, capsys, field, value):
    entry = {"id": "a", "type": "hole"} | {field: value}
    text = HEAD + (f"      - {{id: {entry['id']}, type: {entry['type']}, at_mm: [0, 0], "
                   "diameter_mm: 5}\n")
    err = _refused(tmp_path, capsys, text)
    assert f"plates[0].features[0].{field} (line {_line(text, 'at_mm: [0, 0]')})" in err


@pytest.mark.parametrize("where", ["outline", "cutout"])
def test_a_vanishing_corner_radius_is_refused(tmp_path, capsys, where):
    if where == "outline":
        text = HEAD.replace("height_mm: 80}", "height_mm: 80, corner_radius_mm: 1e-308}")
        path, needle = "plates[0].outline.rounded_rect.corner_radius_mm", "rounded_rect"
    else:
        text = HEAD + ("      - {id: box, type: cutout, at_mm: [0, 0], width_mm: 10, height_mm: 10,"
                       " corner_radius_mm: 1e-308}\n")
        path, needle = "plates[0].features[0].corner_radius_mm", "id: box"
    err = _refused(tmp_path, capsys, text)
    assert f"{path} (line {_line(text, needle)})" in err


def test_a_huge_pitch_is_refused(tmp_path, capsys):
    text = HEAD + ("      - {id: grid, type: fastener_array, at_mm: [0, 0], screw: M3, rows: 2,\n"
                   "         cols: 2, pitch_mm: [1e18, 1e18]}\n")
    err = _refused(tmp_path, capsys, text)
    assert f"plates[0].features[0].pitch_mm[0] (line {_line(text, 'pitch_mm')})" in err


def test_a_very_long_reference_expression_is_refused(tmp_path, capsys):
    long_expr = "+".join(["a"] * 3000)  # about 6000 characters
    text = HEAD.replace("plates:\n", f"references:\n  a: 1\n  b: {long_expr}\nplates:\n")
    err = _refused(tmp_path, capsys, text)
    assert f"references.b (line {_line(text, '  b: ')})" in err
    assert "500 characters" in err


def test_yaml_nested_ten_thousand_deep_is_refused(tmp_path, capsys):
    text = HEAD.replace("name: crash test\n", "name: crash test\nnotes: " + "[" * 10_000
                        + "]" * 10_000 + "\n")
    err = _refused(tmp_path, capsys, text)
    assert f"(line {_line(text, 'notes:')})" in err
    assert "nested" in err


def test_a_300_character_plate_name_is_refused(tmp_path, capsys):
    text = HEAD.replace("name: deck", "name: " + "p" * 300)
    err = _refused(tmp_path, capsys, text)
    assert f"plates[0].name (line {_line(text, 'pppp')})" in err


def test_dev_zero_as_the_design_file_is_refused(tmp_path, capsys):
    if not Path("/dev/zero").exists():
        pytest.skip("no /dev/zero on this system")
    out = tmp_path / "out"
    rc = main(["build", "/dev/zero", "-o", str(out), "-q"])
    _, err = capsys.readouterr()
    assert rc == 2 and "Traceback" not in err and not out.exists()
    assert "not a regular file" in err


def test_a_design_file_over_the_size_limit_is_refused(tmp_path, capsys):
    from platewright.geometry.design.loader import MAX_DESIGN_BYTES

    text = HEAD + "#" + "x" * MAX_DESIGN_BYTES + "\n"
    err = _refused(tmp_path, capsys, text)
    assert "larger than" in err


# -- output folders that cannot be written -------------------------------------------------------

GOOD = HEAD + "      - {id: hole, type: hole, at_mm: [0, 0], diameter_mm: 5}\n"


def _build_to(tmp_path: Path, capsys, out: str) -> tuple[int, str]:
    design = tmp_path / "design.yaml"
    design.write_text(GOOD, encoding="utf-8")
    rc = main(["build", str(design), "-o", out, "-q"])
    return rc, capsys.readouterr().err


def test_output_under_a_file_is_refused(tmp_path, capsys):
    (tmp_path / "afile").write_text("x", encoding="utf-8")
    rc, err = _build_to(tmp_path, capsys, str(tmp_path / "afile" / "out"))
    assert rc == 2 and "Traceback" not in err
    assert "-o" in err and "afile" in err


def test_output_under_proc_is_refused(tmp_path, capsys):
    if not Path("/proc/self").exists():
        pytest.skip("no /proc on this system")
    rc, err = _build_to(tmp_path, capsys, "/proc/platewright-test-out")
    assert rc == 2 and "Traceback" not in err
    assert "-o" in err and "cannot" in err


def test_output_folder_without_permission_is_refused(tmp_path, capsys, monkeypatch):
    # root may write anywhere, so the refusal of the operating system is simulated where the
    # staged folder is made
    import platewright.cli.outputs as outputs

    def denied(*args, **kwargs):
        raise PermissionError(13, "Permission denied")

    monkeypatch.setattr(outputs, "_new_staging", denied)
    rc, err = _build_to(tmp_path, capsys, str(tmp_path / "out"))
    assert rc == 2 and "Traceback" not in err
    assert "-o" in err and "Permission denied" in err
    assert not (tmp_path / "out").exists()


# -- a closed pipe -----------------------------------------------------------------------------


def test_fields_into_a_closed_pipe_ends_quietly(tmp_path):
    # `platewright fields | head -1`: the reader goes away; the read end is closed before the
    # command writes, so every write meets a broken pipe
    r, w = os.pipe()
    os.close(r)
    try:
        proc = subprocess.run([sys.executable, "-m", "platewright.cli.main", "fields"],
                              stdout=w, stderr=subprocess.PIPE, timeout=120, check=False)
    finally:
        os.close(w)
    err = proc.stderr.decode("utf-8", "replace")
    assert "Traceback" not in err and "BrokenPipe" not in err, err
    assert proc.returncode == 0


def test_fields_into_a_broken_stdout_in_process(monkeypatch):
    class Closed:
        def write(self, text):
            raise BrokenPipeError(32, "Broken pipe")

        def flush(self):
            raise BrokenPipeError(32, "Broken pipe")

    monkeypatch.setattr(sys, "stdout", Closed())
    assert main(["fields"]) == 0
