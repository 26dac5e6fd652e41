"""Atomic output folders: everything is written to a temporary sibling folder, then moved into place.

A failed run removes its temporary folder and leaves an earlier good output untouched.
"""

from __future__ import annotations

import json
import os
import shutil
import tempfile
import uuid
from collections.abc import Iterator
from contextlib import contextmanager
from pathlib import Path

from platewright.geometry.errors import DesignError, Problem

__all__ = ["staged_output", "check_output_target", "written_by_us"]


#: The index files our commands write at the top of an output folder.
_INDEX_FILES = ("report.json", "nest.json", "compare.json", "sweep.json")


def written_by_us(folder: Path, index_file: str) -> bool:
    """True when ``folder/index_file`` (e.g. sweep.json) is a JSON file written by this tool."""
    try:
        data = json.loads((folder / index_file).read_text(encoding="utf-8"))
    except (OSError, ValueError):
        return False
    return isinstance(data, dict) and data.get("tool", {}).get("name") == "platewright"


def _is_ours(folder: Path) -> bool:
    """True when ``folder`` holds an index file (report.json, nest.json, ...) written by this tool."""
    return any(written_by_us(folder, name) for name in _INDEX_FILES)


def check_output_target(outdir: Path) -> None:
    """Refuse an output folder we would have to overwrite but did not write ourselves."""
    if outdir.exists() and not outdir.is_dir():
        raise DesignError(Problem("-o", f"'{outdir}' exists and is not a folder", hint="name a folder"))
    if outdir.is_dir() and any(outdir.iterdir()) and not _is_ours(outdir):
        raise DesignError(
            Problem(
                "-o",
                f"'{outdir}' is not empty and holds no platewright output (report.json), "
                "so it is not replaced",
                hint="choose a new or empty folder, or an earlier platewright output folder",
            )
        )


@contextmanager
def staged_output(outdir: Path) -> Iterator[Path]:
    """Yield a temporary folder beside ``outdir``; on success it replaces ``outdir`` whole."""
    outdir = Path(outdir).absolute()
    check_output_target(outdir)
    outdir.parent.mkdir(parents=True, exist_ok=True)
    tmp = Path(tempfile.mkdtemp(prefix=f".{outdir.name}.", suffix=".partial", dir=outdir.parent))
    try:
        yield tmp
    except BaseException:
        shutil.rmtree(tmp, ignore_errors=True)
        raise
    if outdir.exists():
        old = outdir.parent / f".{outdir.name}.old-{uuid.uuid4().hex[:8]}"
        os.rename(outdir, old)
        os.rename(tmp, outdir)
        shutil.rmtree(old, ignore_errors=True)
    else:
        os.rename(tmp, outdir)
