"""Output folders as a user and a script meet them: nothing of the user's is lost, nothing
half-written is left behind, permissions follow the user's umask.

Specification (README, "Usage"): a rebuild removes only the files platewright wrote into the
folder before (the manifest ``output_files`` in the index file) and never touches the design file
being read or any other file of the user's; an interrupted run (Ctrl-C, SIGTERM) leaves no
staging folder, and a staging folder left by a killed run is removed by the next run; two
writers finishing at once both succeed and leave one complete output; new folders and files get
the permissions the user's umask allows (POSIX: mode = 0o777 / 0o666 with the umask bits cleared).
Independent checks: hashlib.sha256 of the bytes on disk; os.stat for modes.
"""

from __future__ import annotations

import hashlib
import json
import os
import signal
import stat
import subprocess
import sys
import time
from pathlib import Path

import pytest

from platewright.cli.main import main

posix_only = pytest.mark.skipif(os.name != "posix", reason="POSIX signals, flock and umask")

SLED = """\
name: Output sled
material: cast_acrylic
thickness_mm: 3.0
machine: example_co2_60w
kerf_mm: 0.2
plates:
  - name: deck
    outline:
      rounded_rect: {width_mm: 160, height_mm: 90, corner_radius_mm: 5}
    features:
      - {id: rear, type: bore, at_mm: [-50, 0], diameter_mm: 22, fit: press}
      - {id: mount, type: fastener, at_mm: [0, 25], screw: M3}
"""


def run(args: list[str], capsys) -> tuple[int, str, str]:
    rc = main(args)
    out, err = capsys.readouterr()
    return rc, out, err


def tree(folder: Path) -> dict[str, bytes]:
    """Relative path -> bytes of every file under ``folder``."""
    return {p.relative_to(folder).as_posix(): p.read_bytes()
            for p in sorted(folder.rglob("*")) if p.is_file()}


def sha(data: bytes) -> str:
    return hashlib.sha256(data).hexdigest()


# -- item 5: a rebuild removes only what platewright wrote ----------------------------------------


def test_rebuild_into_a_folder_keeps_the_users_files_and_the_design_being_read(tmp_path, capsys):
    keep = tmp_path / "keep"
    first = tmp_path / "first.yaml"
    first.write_text(SLED, encoding="utf-8")
    assert run(["build", str(first), "-o", str(keep), "-q"], capsys)[0] == 0
    # the user keeps the design and their own notes in the output folder, even inside plates/
    design = keep / "my_design.yaml"
    design.write_text(SLED, encoding="utf-8")
    (keep / "notes.txt").write_text("bearing order 2024-01", encoding="utf-8")
    (keep / "sketches").mkdir()
    (keep / "sketches" / "idea.svg").write_text("<svg/>", encoding="utf-8")
    (keep / "plates" / "my_engraving.svg").write_text("<svg/>", encoding="utf-8")
    design_inode = design.stat().st_ino
    rc, _, err = run(["build", str(design), "-o", str(keep), "-q"], capsys)
    assert rc == 0, err
    assert design.read_text(encoding="utf-8") == SLED
    assert design.stat().st_ino == design_inode  # not even moved and back
    assert (keep / "notes.txt").read_text(encoding="utf-8") == "bearing order 2024-01"
    assert (keep / "sketches" / "idea.svg").read_text(encoding="utf-8") == "<svg/>"
    assert (keep / "plates" / "my_engraving.svg").read_text(encoding="utf-8") == "<svg/>"
    assert (keep / "plates" / "deck.dxf").is_file() and (keep / "report.html").is_file()


def test_the_report_lists_every_file_it_wrote_with_its_hash(tmp_path, capsys):
    out = tmp_path / "out"
    design = tmp_path / "d.yaml"
    design.write_text(SLED, encoding="utf-8")
    assert run(["build", str(design), "-o", str(out), "-q"], capsys)[0] == 0
    report = json.loads((out / "report.json").read_text(encoding="utf-8"))
    assert report["schema_version"] == 1
    listed = {e["path"]: e["sha256"] for e in report["output_files"]}
    on_disk = tree(out)
    assert set(listed) == set(on_disk)
    for rel, data in on_disk.items():
        if rel != "report.json":  # the index cannot hold its own hash
            assert listed[rel] == sha(data), rel
    assert listed["report.json"] is None


def test_a_rebuild_removes_the_files_of_its_earlier_run_it_no_longer_writes(tmp_path, capsys):
    out = tmp_path / "out"
    design = tmp_path / "d.yaml"
    design.write_text(SLED, encoding="utf-8")
    assert run(["build", str(design), "-o", str(out), "-q"], capsys)[0] == 0
    (out / "plates" / "notes.txt").write_text("mine", encoding="utf-8")
    design.write_text(SLED.replace("name: deck", "name: floor"), encoding="utf-8")
    assert run(["build", str(design), "-o", str(out), "-q"], capsys)[0] == 0
    files = set(tree(out))
    assert not any(f.startswith("plates/deck.") for f in files)
    assert {"plates/floor.dxf", "plates/floor.svg", "plates/notes.txt"} <= files


def test_a_file_changed_since_platewright_wrote_it_is_never_overwritten(tmp_path, capsys):
    out = tmp_path / "out"
    design = tmp_path / "d.yaml"
    design.write_text(SLED, encoding="utf-8")
    assert run(["build", str(design), "-o", str(out), "-q"], capsys)[0] == 0
    edited = out / "plates" / "deck.svg"
    edited.write_text("<svg><!-- my annotations --></svg>", encoding="utf-8")
    before = tree(out)
    rc, _, err = run(["build", str(design), "-o", str(out), "-q"], capsys)
    assert rc == 2 and "plates/deck.svg" in err, err
    assert tree(out) == before  # refused: nothing written
    # a changed file the next build no longer writes is kept, not removed
    design.write_text(SLED.replace("name: deck", "name: floor"), encoding="utf-8")
    assert run(["build", str(design), "-o", str(out), "-q"], capsys)[0] == 0
    assert edited.read_text(encoding="utf-8") == "<svg><!-- my annotations --></svg>"
    assert not (out / "plates" / "deck.dxf").exists()


def test_the_design_file_is_never_overwritten_even_with_an_output_name(tmp_path, capsys):
    out = tmp_path / "out"
    design = tmp_path / "d.yaml"
    design.write_text(SLED, encoding="utf-8")
    assert run(["build", str(design), "-o", str(out), "-q"], capsys)[0] == 0
    # a design kept under the name of one of the outputs
    inside = out / "report.html"
    inside.write_text(SLED, encoding="utf-8")
    rc, _, err = run(["build", str(inside), "-o", str(out), "-q"], capsys)
    assert rc == 2 and "report.html" in err, err
    assert inside.read_text(encoding="utf-8") == SLED


@pytest.mark.parametrize("command", ["nest", "compare"])
def test_nest_and_compare_keep_the_users_files_too(command, tmp_path, capsys):
    a, b, out = tmp_path / "a.yaml", tmp_path / "b.yaml", tmp_path / "out"
    a.write_text(SLED, encoding="utf-8")
    b.write_text(SLED.replace("[-50, 0]", "[-45, 0]"), encoding="utf-8")
    args = ([command, str(a), str(b), "-o", str(out), "-q"] if command == "compare"
            else [command, str(a), "--sheet", "300x200", "-o", str(out), "-q"])
    assert run(args, capsys)[0] == 0
    (out / "notes.txt").write_text("mine", encoding="utf-8")
    rc, _, err = run(args, capsys)
    assert rc == 0, err
    assert (out / "notes.txt").read_text(encoding="utf-8") == "mine"
    index = json.loads((out / f"{command}.json").read_text(encoding="utf-8"))
    assert "notes.txt" not in {e["path"] for e in index["output_files"]}


# -- item 9: interrupted and concurrent writes ----------------------------------------------------

# A child process that builds and signals itself while the staging folder is full (after every
# file is written, before the folder is moved into place).
_SIGNAL_CHILD = """\
import os, signal, sys
from platewright.cli.commands import build as build_command
from platewright.cli.main import main
real = build_command.write_build
def write_then_signal(*args, **kwargs):
    report = real(*args, **kwargs)
    os.kill(os.getpid(), getattr(signal, sys.argv[1]))
    return report
build_command.write_build = write_then_signal
sys.exit(main(sys.argv[2:]))
"""


def _child(tmp_path: Path, signame: str, out: Path) -> subprocess.CompletedProcess:
    design = tmp_path / "d.yaml"
    design.write_text(SLED, encoding="utf-8")
    return subprocess.run([sys.executable, "-c", _SIGNAL_CHILD, signame, "build", str(design),
                           "-o", str(out), "-q"], capture_output=True, text=True, timeout=300)


def _leftovers(folder: Path, keep: set[str]) -> list[str]:
    return sorted(p.name for p in folder.iterdir() if p.name not in keep)


@posix_only
@pytest.mark.parametrize("signame", ["SIGTERM", "SIGINT"])
def test_sigterm_is_handled_like_ctrl_c_and_leaves_no_staging_folder(signame, tmp_path):
    out = tmp_path / "out"
    proc = _child(tmp_path, signame, out)
    expected = 128 + getattr(signal, signame)  # shell convention for "ended by signal N"
    assert proc.returncode == expected, proc.stderr
    assert "interrupted" in proc.stderr or "terminated" in proc.stderr
    assert _leftovers(tmp_path, {"d.yaml"}) == []  # no out/, no .out.*.partial


@posix_only
def test_a_staging_folder_left_by_a_killed_run_is_removed_by_the_next_run(tmp_path, capsys):
    out = tmp_path / "out"
    proc = _child(tmp_path, "SIGKILL", out)
    assert proc.returncode == -signal.SIGKILL
    stale = _leftovers(tmp_path, {"d.yaml"})
    assert stale and all(n.startswith(".out.") and n.endswith(".partial") for n in stale)
    assert run(["build", str(tmp_path / "d.yaml"), "-o", str(out), "-q"], capsys)[0] == 0
    assert _leftovers(tmp_path, {"d.yaml", "out"}) == []


@posix_only
def test_the_staging_folder_of_a_run_still_going_is_left_alone(tmp_path, capsys):
    import fcntl

    design = tmp_path / "d.yaml"
    design.write_text(SLED, encoding="utf-8")
    live = tmp_path / ".out.0123456789ab.partial"  # the name pattern of a staging folder
    live.mkdir()
    fd = os.open(live, os.O_RDONLY)
    try:
        fcntl.flock(fd, fcntl.LOCK_EX | fcntl.LOCK_NB)  # as a running writer holds it
        assert run(["build", str(design), "-o", str(tmp_path / "out"), "-q"], capsys)[0] == 0
        assert live.is_dir()
    finally:
        os.close(fd)


# Two writers that stage their own output, wait until both are ready, then finish at once. Every
# rename is slowed down (as on a busy or network file system) so that the two finishing steps
# overlap: a forced race.
_WRITER = """\
import json, os, sys, time
from pathlib import Path
from platewright.cli.outputs import staged_output
def slowly(op):
    def slow(*args, **kwargs):
        time.sleep(0.01)
        return op(*args, **kwargs)
    return slow
os.rename, os.replace = slowly(os.rename), slowly(os.replace)
out, tag, ready, go = Path(sys.argv[1]), sys.argv[2], Path(sys.argv[3]), Path(sys.argv[4])
with staged_output(out) as tmp:
    (tmp / "plates").mkdir()
    for i in range(10):
        (tmp / "plates" / f"part_{i}.txt").write_text(tag)
    (tmp / "report.json").write_text(json.dumps({"tool": {"name": "platewright"}, "writer": tag}))
    ready.touch()
    while not go.exists():  # spin, so both leave the wait within microseconds of each other
        pass
"""


@posix_only
def test_two_writers_finishing_at_once_both_succeed_and_leave_one_whole_output(tmp_path):
    out = tmp_path / "out"
    for round_ in range(6):
        go = tmp_path / f"go{round_}"
        procs, readies = [], []
        for tag in ("A", "B"):
            ready = tmp_path / f"ready{round_}{tag}"
            readies.append(ready)
            procs.append(subprocess.Popen(
                [sys.executable, "-c", _WRITER, str(out), tag, str(ready), str(go)],
                stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True))
        deadline = time.monotonic() + 120  # a guard against a hung child, not a measurement
        while not all(r.exists() for r in readies) and time.monotonic() < deadline:
            time.sleep(0.001)
        go.touch()
        results = [p.communicate(timeout=120) for p in procs]
        for p, (_, err) in zip(procs, results):
            assert p.returncode == 0, err
        writer = json.loads((out / "report.json").read_text())["writer"]
        parts = {p.read_text() for p in (out / "plates").iterdir()}
        assert parts == {writer}, (round_, writer, parts)
        assert len(list((out / "plates").iterdir())) == 10
        for name in (*readies, go):
            name.unlink()
        assert _leftovers(tmp_path, {"out"}) == [], round_


# -- item 14: permissions and symbolic links ------------------------------------------------------


@pytest.fixture
def umask_027():
    old = os.umask(0o027)
    yield 0o027
    os.umask(old)


@posix_only
def test_output_folders_and_files_follow_the_umask(tmp_path, capsys, umask_027):
    design = tmp_path / "d.yaml"
    design.write_text(SLED, encoding="utf-8")
    out = tmp_path / "new" / "out"
    assert run(["build", str(design), "-o", str(out), "-q"], capsys)[0] == 0
    for p in [out, *out.rglob("*")]:
        mode = stat.S_IMODE(p.stat().st_mode)
        want = (0o777 if p.is_dir() else 0o666) & ~umask_027
        assert mode == want, (p, oct(mode), oct(want))


@posix_only
def test_sweep_files_follow_the_umask(tmp_path, capsys, umask_027):
    design = tmp_path / "d.yaml"
    design.write_text(SLED, encoding="utf-8")
    out = tmp_path / "sweep"
    rc, _, err = run(["sweep", str(design), "--vary", "plates.deck.features.rear.diameter_mm=20:22:2",
                      "--jobs", "1", "-o", str(out), "-q"], capsys)
    assert rc in (0, 1), err
    files = [p for p in out.rglob("*") if p.is_file()]
    assert any(p.parent.name == "results" for p in files)
    for p in files:
        assert stat.S_IMODE(p.stat().st_mode) == 0o666 & ~umask_027, p


@posix_only
def test_an_output_path_that_is_a_symbolic_link_is_followed(tmp_path, capsys):
    design = tmp_path / "d.yaml"
    design.write_text(SLED, encoding="utf-8")
    real = tmp_path / "real"
    real.mkdir()
    link = tmp_path / "link_out"
    link.symlink_to(real)
    for _ in range(2):
        assert run(["build", str(design), "-o", str(link), "-q"], capsys)[0] == 0
    assert link.is_symlink() and os.readlink(link) == str(real)
    assert (real / "report.json").is_file() and (real / "plates" / "deck.dxf").is_file()
    assert _leftovers(tmp_path, {"d.yaml", "real", "link_out"}) == []


@posix_only
def test_a_dangling_symbolic_link_as_output_is_refused(tmp_path, capsys):
    design = tmp_path / "d.yaml"
    design.write_text(SLED, encoding="utf-8")
    link = tmp_path / "link_out"
    link.symlink_to(tmp_path / "missing")
    rc, _, err = run(["build", str(design), "-o", str(link), "-q"], capsys)
    assert rc == 2 and "link" in err, err
    assert _leftovers(tmp_path, {"d.yaml", "link_out"}) == []
    assert not (tmp_path / "missing").exists()


@posix_only
def test_a_run_killed_while_moving_its_files_in_is_finished_cleanly_by_the_next(tmp_path, capsys):
    out = tmp_path / "out"
    design = tmp_path / "d.yaml"
    design.write_text(SLED, encoding="utf-8")
    assert run(["build", str(design), "-o", str(out), "-q"], capsys)[0] == 0
    # the next run renames the plate and is killed after moving two of its files into place
    design.write_text(SLED.replace("name: deck", "name: floor"), encoding="utf-8")
    child = """\
import os, signal, sys
from pathlib import Path
out = Path(sys.argv[1])
moved = []
real = os.replace
def replace(src, dst):
    real(src, dst)
    if Path(dst).parent == out / "plates":
        moved.append(dst)
        if len(moved) == 2:
            os.kill(os.getpid(), signal.SIGKILL)
os.replace = replace
from platewright.cli.main import main
sys.exit(main(["build", sys.argv[2], "-o", sys.argv[1], "-q"]))
"""
    proc = subprocess.run([sys.executable, "-c", child, str(out), str(design)],
                          capture_output=True, text=True, timeout=300)
    assert proc.returncode == -signal.SIGKILL, proc.stderr
    half = set(tree(out))
    assert {"plates/deck.dxf", "report.json"} <= half and len(half & {
        "plates/floor.dxf", "plates/floor.glb", "plates/floor.stl", "plates/floor.svg"}) == 2
    # the rerun neither refuses the half-moved files nor keeps the earlier plate's files
    rc, _, err = run(["build", str(design), "-o", str(out), "-q"], capsys)
    assert rc == 0, err
    files = set(tree(out))
    assert not any(f.startswith("plates/deck.") for f in files)
    assert {"plates/floor.dxf", "plates/floor.svg"} <= files
    assert _leftovers(out, {"plates", "report.json", "report.html"}) == []  # no journal
    assert _leftovers(tmp_path, {"d.yaml", "out"}) == []


def test_a_folder_from_before_manifests_is_rebuilt_and_the_users_files_kept(tmp_path, capsys):
    out = tmp_path / "out"
    design = tmp_path / "d.yaml"
    design.write_text(SLED, encoding="utf-8")
    assert run(["build", str(design), "-o", str(out), "-q"], capsys)[0] == 0
    report = json.loads((out / "report.json").read_text(encoding="utf-8"))
    del report["output_files"]  # as written by an earlier version
    (out / "report.json").write_text(json.dumps(report), encoding="utf-8")
    (out / "notes.txt").write_text("mine", encoding="utf-8")
    assert run(["build", str(design), "-o", str(out), "-q"], capsys)[0] == 0
    assert (out / "notes.txt").read_text(encoding="utf-8") == "mine"
    assert "output_files" in json.loads((out / "report.json").read_text(encoding="utf-8"))


@posix_only
def test_sigterm_while_files_move_in_waits_until_the_output_is_whole(tmp_path):
    out = tmp_path / "out"
    design = tmp_path / "d.yaml"
    design.write_text(SLED, encoding="utf-8")
    child = """\
import os, signal, sys
from pathlib import Path
out = Path(sys.argv[1])
real = os.replace
def replace(src, dst):
    real(src, dst)
    if Path(dst).parent == out / "plates":
        os.kill(os.getpid(), signal.SIGTERM)  # as soon as the first file is in place
os.replace = replace
from platewright.cli.main import main
sys.exit(main(["build", sys.argv[2], "-o", sys.argv[1], "-q"]))
"""
    proc = subprocess.run([sys.executable, "-c", child, str(out), str(design)],
                          capture_output=True, text=True, timeout=300)
    assert proc.returncode == 128 + signal.SIGTERM, proc.stderr
    report = json.loads((out / "report.json").read_text(encoding="utf-8"))
    listed = {e["path"] for e in report["output_files"]}
    assert listed == set(tree(out))  # every file of the run, nothing else
    assert _leftovers(tmp_path, {"d.yaml", "out"}) == []
