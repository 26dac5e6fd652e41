"""Output folders: everything is written to a staging folder beside OUTDIR, then committed into
OUTDIR file by file, so a failed run leaves an earlier good output untouched and nothing of the
user's is ever lost.

A run stages its whole output in ``.OUTDIR.<12 hex>.partial`` (locked while its writer lives).
The commit, under a lock on OUTDIR so two writers never interleave:

1. re-checks OUTDIR: empty, or holding platewright output;
2. checks every destination: an input being read (the design file), a file of the user's, or a
   file changed since platewright wrote it is never overwritten (refused, nothing written);
3. writes the commit journal, moves every new file into place with an atomic rename (the index
   file, which carries the manifest, last), removes the files the earlier run of the same
   command wrote and this one did not (unless changed since) and the folders that left empty,
   and drops the journal. SIGINT and SIGTERM wait until this step ends.

A staging folder left by a killed run is removed by the next run into the same OUTDIR. A symbolic
link as OUTDIR is followed. New folders and files get the user's umask.

A folder that cannot be written (no permission, a file in the path, a read-only or virtual file
system) is a refusal naming ``-o``, not a crash; a full disk ends the run with exit 3.
"""

from __future__ import annotations

import errno
import json
import os
import re
import shutil
import uuid
from collections.abc import Iterable, Iterator
from contextlib import contextmanager
from pathlib import Path

from platewright.cli.interrupts import signals_deferred
from platewright.cli.locks import LOCKS_AVAILABLE, folder_locked, lock_folder, unlock
from platewright.cli.manifest import (
    MANIFEST_KEY,
    Hashes,
    file_sha256,
    journal_path,
    merge,
    owned_files,
    staged_files,
    write_journal,
    written_by_us,
)
from platewright.geometry.errors import DesignError, Problem

__all__ = ["staged_output", "check_output_target", "output_folder", "remove_stale_staging",
           "cannot_write", "written_by_us"]


def _refuse(message: str, hint: str = "") -> DesignError:
    return DesignError(Problem("-o", message, hint=hint))


def output_folder(outdir: Path) -> Path:
    """The folder ``outdir`` names, absolute, with a symbolic link followed; DesignError for a
    link to nothing or a path that is not a folder."""
    path = Path(outdir).absolute()
    if path.is_symlink():
        if not path.exists():
            raise _refuse(f"'{path}' is a symbolic link to '{os.readlink(path)}', which does not "
                          "exist", "create that folder or name another one")
        path = path.resolve()
    if path.exists() and not path.is_dir():
        raise _refuse(f"'{path}' exists and is not a folder", "name a folder")
    return path


#: errno values that mean "this place cannot be written": a refusal naming ``-o`` (exit 2). A full
#: disk or quota is not a wrong choice of folder: it ends the run with exit 3 (the system's
#: message, no bug report).
_CANNOT_WRITE = {errno.EACCES, errno.EPERM, errno.EROFS, errno.ENOTDIR, errno.EEXIST, errno.ENOENT,
                 errno.ENAMETOOLONG, errno.EINVAL, errno.EXDEV, errno.ELOOP}


def cannot_write(outdir: Path, exc: OSError) -> DesignError:
    """The refusal for an output folder the operating system will not let us write."""
    why = exc.strerror or str(exc)
    where = f" ({exc.filename})" if exc.filename and str(exc.filename) != str(outdir) else ""
    return DesignError(Problem("-o", f"cannot write the output folder '{outdir}': {why}{where}",
                               hint="choose a folder you can write to"))


def check_output_target(outdir: Path) -> None:
    """Refuse an output folder that holds files but no platewright output, or one that cannot
    be written (a file in its path)."""
    try:
        _check_target(outdir)
    except OSError as exc:
        raise cannot_write(outdir, exc) from exc


def _check_target(outdir: Path) -> None:
    for parent in Path(outdir).absolute().parents:  # a file where a folder of the path should be
        if parent.exists() or parent.is_symlink():
            if not parent.is_dir():
                raise NotADirectoryError(errno.ENOTDIR, "a file is in the way", str(parent))
            break
    path = output_folder(outdir)
    if path.is_dir() and any(path.iterdir()) and not owned_files(path, "").any:
        raise _refuse(f"'{path}' is not empty and holds no platewright output (report.json), so it "
                      "is not replaced",
                      "choose a new or empty folder, or an earlier platewright output folder")


def _staging_patterns(name: str) -> tuple[re.Pattern[str], re.Pattern[str]]:
    n = re.escape(name)
    current = re.compile(rf"\.{n}\.[0-9a-f]{{12}}\.partial")
    # left by versions before the manifest: mkdtemp staging folders and swapped-out old outputs
    earlier = re.compile(rf"\.{n}\.([a-z0-9_]{{8}}\.partial|old-[0-9a-f]{{8}})")
    return current, earlier


def remove_stale_staging(outdir: Path) -> list[str]:
    """Remove the staging folders of earlier runs into ``outdir`` that no running writer holds;
    returns their names."""
    parent = outdir.parent
    if not parent.is_dir():
        return []
    current, earlier = _staging_patterns(outdir.name)
    removed = []
    for entry in sorted(parent.iterdir()):
        if current.fullmatch(entry.name) and entry.is_dir() and not entry.is_symlink():
            if not LOCKS_AVAILABLE:
                continue  # cannot tell a live writer's folder from a dead one's
            handle = lock_folder(entry, wait=False)
            if handle is None:
                continue  # a writer is still using it
            try:
                shutil.rmtree(entry, ignore_errors=True)
            finally:
                unlock(handle)
        elif earlier.fullmatch(entry.name):
            if entry.is_symlink():
                entry.unlink()  # a link to the user's folder, renamed aside: drop only the link
            elif entry.is_dir():
                shutil.rmtree(entry, ignore_errors=True)
            else:
                continue
        else:
            continue
        removed.append(entry.name)
    return removed


def _new_staging(outdir: Path) -> tuple[Path, int | None]:
    """A fresh, locked staging folder beside ``outdir``. It is created under another name and
    renamed once locked, so a clean-up never sees it unlocked."""
    token = uuid.uuid4().hex[:12]
    fresh = outdir.parent / f".{outdir.name}.{token}.new"
    fresh.mkdir()
    handle = lock_folder(fresh)
    staging = outdir.parent / f".{outdir.name}.{token}.partial"
    try:
        os.rename(fresh, staging)
    except BaseException:
        unlock(handle)
        shutil.rmtree(fresh, ignore_errors=True)
        raise
    return staging, handle


def _same_file(a: Path, b: Path) -> bool:
    try:
        return os.path.samefile(a, b)
    except OSError:
        return a.resolve() == b.resolve()


def _check_destinations(outdir: Path, index_file: str, written: Iterable[str],
                        protect: list[Path]) -> None:
    """Refuse (before anything changes) when a new file would replace an input, a file of the
    user's or one changed since platewright wrote it."""
    owned = owned_files(outdir, index_file)
    known = merge(owned.others, owned.mine)
    for rel in written:
        dest = outdir / rel
        for parent in list(dest.parents)[: -len(outdir.parts)]:
            if parent != outdir and (parent.is_symlink() or parent.exists()) and not parent.is_dir():
                raise _refuse(f"'{parent}' is a file of yours where platewright writes a folder",
                              "move it away or choose another output folder")
        if not os.path.lexists(dest):
            continue
        if any(_same_file(dest, p) for p in protect if p.exists()):
            raise _refuse(f"'{dest}' is an input of this run and would be replaced by an output",
                          "keep inputs under other names or outside the output folder")
        if dest.is_dir() and not dest.is_symlink():
            raise _refuse(f"'{dest}' is a folder of yours where platewright writes a file",
                          "move it away or choose another output folder")
        if rel == index_file:
            if not written_by_us(outdir, index_file):
                raise _refuse(f"'{dest}' was not written by platewright",
                              "move it away or choose another output folder")
        elif rel in known:
            recorded = known[rel]
            if recorded and (dest.is_symlink() or file_sha256(dest) not in recorded):
                raise _refuse(f"'{dest}' was changed since platewright wrote it, so it is not "
                              "replaced", "move or rename it, or choose another output folder")
        elif not owned.legacy:
            raise _refuse(f"'{dest}' is not a file platewright wrote, so it is not replaced",
                          "move or rename it, or choose another output folder")


def _remove_earlier(outdir: Path, earlier: dict[str, Hashes], written: dict[str, str | None],
                    protect: list[Path]) -> None:
    """Remove the files of the earlier run that this one did not write, unchanged ones only,
    then the folders that left empty (never ``outdir`` itself)."""
    emptied: set[Path] = set()
    for rel, recorded in earlier.items():
        dest = outdir / rel
        if rel in written or not recorded or dest.is_symlink() or not dest.is_file():
            continue
        if any(_same_file(dest, p) for p in protect if p.exists()):
            continue
        if file_sha256(dest) not in recorded:
            continue  # changed since we wrote it: the user's now
        dest.unlink()
        emptied.update(p for p in dest.parents if outdir in p.parents)
    for folder in sorted(emptied, key=lambda p: len(p.parts), reverse=True):
        try:
            folder.rmdir()
        except OSError:
            pass  # not empty: holds files of the user's


def _commit(staging: Path, outdir: Path, index_file: str, written: dict[str, str | None],
            protect: list[Path]) -> None:
    """Move the staged files into ``outdir`` (the caller holds the folder's lock)."""
    check_output_target(outdir)
    _check_destinations(outdir, index_file, written, protect)
    earlier = owned_files(outdir, index_file).mine
    new = {p: frozenset([h] if h else []) for p, h in written.items()}
    write_journal(outdir, index_file, merge(earlier, new))
    for rel in sorted(written, key=lambda r: (r == index_file, r)):
        dest = outdir / rel
        dest.parent.mkdir(parents=True, exist_ok=True)
        os.replace(staging / rel, dest)
    _remove_earlier(outdir, earlier, written, protect)
    journal_path(outdir, index_file).unlink()


def _record_manifest(staging: Path, index_file: str) -> dict[str, str | None]:
    """Add the manifest (every staged file and its sha256) to the staged index file."""
    index = staging / index_file
    if not index.is_file():
        raise RuntimeError(f"the command wrote no {index_file} to record its files in")
    written = staged_files(staging, index_file)
    doc = json.loads(index.read_text(encoding="utf-8"))
    doc[MANIFEST_KEY] = [{"path": p, "sha256": h} for p, h in sorted(written.items())]
    index.write_text(json.dumps(doc, indent=2), encoding="utf-8")
    return written


@contextmanager
def staged_output(outdir: Path, *, index_file: str = "report.json",
                  protect: Iterable[str | Path] = ()) -> Iterator[Path]:
    """Yield an empty staging folder for a run's whole output; when the block ends normally the
    files are committed into ``outdir`` (see the module notes). ``index_file`` (written by the
    block) receives the manifest; ``protect``: files this run reads, never replaced or removed.
    DesignError (nothing written) when a file would have to be overwritten that is not ours."""
    target = output_folder(outdir)
    check_output_target(target)
    try:
        target.parent.mkdir(parents=True, exist_ok=True)
        remove_stale_staging(target)
        staging, handle = _new_staging(target)
    except OSError as exc:
        raise cannot_write(target, exc) from exc
    try:
        try:
            yield staging
            written = _record_manifest(staging, index_file)
            target.mkdir(parents=True, exist_ok=True)
            with folder_locked(target), signals_deferred():  # Ctrl-C still works while waiting
                _commit(staging, target, index_file, written,
                        [Path(p).absolute() for p in protect])
        except OSError as exc:
            if exc.errno in _CANNOT_WRITE:
                raise cannot_write(target, exc) from exc
            raise
    finally:
        shutil.rmtree(staging, ignore_errors=True)
        unlock(handle)
