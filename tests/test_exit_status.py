"""Exit statuses a script can rely on: an unexpected error is not a failed check.

Specification (README, "Usage"; RULES exit codes): 0 done, 1 done but a limit failed, 2 refused,
3 crashed: a short message naming the design and asking for a bug report, the traceback only with
``--debug``, nothing written.
"""

from __future__ import annotations

from pathlib import Path

import pytest

from platewright.cli.commands import build as build_command
from platewright.cli.main import main

SLED = """\
name: Crash sled
material: cast_acrylic
thickness_mm: 3.0
machine: example_co2_60w
plates:
  - name: deck
    outline:
      rounded_rect: {width_mm: 120, height_mm: 80, corner_radius_mm: 5}
    features:
      - {id: rear, type: bore, at_mm: [-30, 0], diameter_mm: 22, fit: press}
"""


@pytest.fixture
def broken_build(monkeypatch):
    """A build step with a programming error in it (as a bug would raise)."""

    def broken(design):
        return {}["no such key"]

    monkeypatch.setattr(build_command, "build_design", broken)


@pytest.fixture
def design(tmp_path: Path) -> Path:
    p = tmp_path / "sled.yaml"
    p.write_text(SLED, encoding="utf-8")
    return p


def test_an_unexpected_error_exits_3_with_a_short_message(broken_build, design, tmp_path, capsys):
    out = tmp_path / "out"
    rc = main(["build", str(design), "-o", str(out)])
    err = capsys.readouterr().err
    assert rc == 3
    assert str(design) in err and "KeyError" in err and "report" in err and "--debug" in err
    assert "Traceback" not in err and len(err.strip().splitlines()) <= 3
    assert sorted(p.name for p in tmp_path.iterdir()) == ["sled.yaml"]  # nothing written


@pytest.mark.parametrize("where", ["before", "after"])
def test_debug_adds_the_traceback(where, broken_build, design, tmp_path, capsys):
    args = ["build", str(design), "-o", str(tmp_path / "out")]
    rc = main(["--debug", *args] if where == "before" else [*args, "--debug"])
    err = capsys.readouterr().err
    assert rc == 3
    assert "Traceback" in err and "KeyError" in err


def test_a_file_the_system_will_not_write_exits_3_without_a_bug_report(design, tmp_path, capsys,
                                                                       monkeypatch):
    def no_space(*args, **kwargs):
        raise OSError(28, "No space left on device")

    monkeypatch.setattr(build_command, "write_build", no_space)
    rc = main(["build", str(design), "-o", str(tmp_path / "out")])
    err = capsys.readouterr().err
    assert rc == 3 and "No space left on device" in err and "bug" not in err
    assert sorted(p.name for p in tmp_path.iterdir()) == ["sled.yaml"]


def test_bad_input_still_exits_2(tmp_path, capsys):
    p = tmp_path / "bad.yaml"
    p.write_text(SLED.replace("cast_acrylic", "pvc"), encoding="utf-8")
    assert main(["build", str(p), "-o", str(tmp_path / "out")]) == 2
