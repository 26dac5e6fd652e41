"""Atomic output folders: everything is written to a temporary sibling folder, then moved into place.

A failed run removes its temporary folder and leaves an earlier good output untouched. A folder
that cannot be written (no permission, a file in the path, a read-only or virtual file system,
a full disk) is a refusal naming ``-o``, not a crash.
"""

from __future__ import annotations

import errno
import json
import os
import shutil
import tempfile
import uuid
from collections.abc import Iterator
from contextlib import contextmanager
from pathlib import Path

from platewright.geometry.errors import DesignError, Problem

__all__ = ["staged_output", "check_output_target", "cannot_write", "written_by_us"]


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


#: errno values that mean "this place cannot be written", refused rather than crashing.
_CANNOT_WRITE = {errno.EACCES, errno.EPERM, errno.EROFS, errno.ENOSPC, errno.EDQUOT, errno.ENOTDIR,
                 errno.EEXIST, errno.ENOENT, errno.ENAMETOOLONG, errno.EINVAL, errno.EXDEV,
                 errno.ELOOP}


def cannot_write(outdir: Path, exc: OSError) -> DesignError:
    """The refusal for an output folder the operating system will not let us write."""
    why = exc.strerror or str(exc)
    where = f" ({exc.filename})" if exc.filename and str(exc.filename) != str(outdir) else ""
    return DesignError(Problem("-o", f"cannot write the output folder '{outdir}': {why}{where}",
                               hint="choose a folder you can write to"))


def check_output_target(outdir: Path) -> None:
    """Refuse an output folder we would have to overwrite but did not write ourselves, or one
    that cannot be written (a file in its path)."""
    try:
        _check_target(outdir)
    except OSError as exc:
        raise cannot_write(outdir, exc) from exc


def _check_target(outdir: Path) -> None:
    for parent in outdir.parents:  # a file where a folder of the path should be
        if parent.exists() or parent.is_symlink():
            if not parent.is_dir():
                raise NotADirectoryError(errno.ENOTDIR, "a file is in the way", str(parent))
            break
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
    try:
        outdir.parent.mkdir(parents=True, exist_ok=True)
        tmp = Path(tempfile.mkdtemp(prefix=f".{outdir.name}.", suffix=".partial",
                                    dir=outdir.parent))
    except OSError as exc:
        raise cannot_write(outdir, exc) from exc
    try:
        yield tmp
    except OSError as exc:
        shutil.rmtree(tmp, ignore_errors=True)
        if exc.errno in _CANNOT_WRITE:
            raise cannot_write(outdir, exc) from exc
        raise
    except BaseException:
        shutil.rmtree(tmp, ignore_errors=True)
        raise
    old = outdir.parent / f".{outdir.name}.old-{uuid.uuid4().hex[:8]}"
    moved = False
    try:
        if outdir.exists():
            os.rename(outdir, old)
            moved = True
        os.rename(tmp, outdir)
    except OSError as exc:
        if moved:  # put the earlier output back
            os.rename(old, outdir)
        shutil.rmtree(tmp, ignore_errors=True)
        raise cannot_write(outdir, exc) from exc
    if moved:
        shutil.rmtree(old, ignore_errors=True)
