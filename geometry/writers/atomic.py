"""Whole-file writes: a temporary file in the target's folder, then an atomic rename, so a reader
sees the old file or the new one, never half of one.

Temporary files made by :func:`tempfile.mkstemp` are private (mode 0600); a finished file gets
the mode of the file it replaces, or for a new file the mode the user's umask allows
(0o666 with the umask bits cleared), as other tools do.
"""

from __future__ import annotations

import os
import stat
import tempfile
from collections.abc import Iterator
from contextlib import contextmanager
from pathlib import Path

__all__ = ["current_umask", "new_file_mode", "atomic_path", "write_atomic"]


def current_umask() -> int:
    """The process's umask (POSIX; 0 elsewhere), read without changing it where the system allows."""
    if os.name != "posix":
        return 0
    try:  # Linux 4.7 and later: no set-and-restore race with other threads
        with open("/proc/self/status", encoding="ascii") as fh:
            for line in fh:
                if line.startswith("Umask:"):
                    return int(line.split()[1], 8)
    except (OSError, ValueError, IndexError):
        pass
    mask = os.umask(0o022)
    os.umask(mask)
    return mask


def new_file_mode() -> int:
    """Permission bits of a newly created regular file under the current umask."""
    return 0o666 & ~current_umask()


@contextmanager
def atomic_path(path: str | os.PathLike[str], suffix: str = ".partial") -> Iterator[Path]:
    """Yield a temporary path beside ``path``; when the block ends normally, the file written
    there replaces ``path`` (keeping the replaced file's permission bits, else the umask's);
    otherwise it is removed."""
    target = Path(path)
    fd, tmp = tempfile.mkstemp(prefix=f".{target.name}.", suffix=suffix, dir=target.parent)
    os.close(fd)
    try:
        yield Path(tmp)
        try:
            mode = stat.S_IMODE(os.stat(target).st_mode)
        except OSError:
            mode = new_file_mode()
        os.chmod(tmp, mode)
        os.replace(tmp, target)
    finally:
        if os.path.exists(tmp):
            os.unlink(tmp)


def write_atomic(path: str | os.PathLike[str], data: str | bytes, *, sync: bool = False) -> None:
    """Write ``data`` (text as UTF-8, or bytes) to ``path`` whole (see :func:`atomic_path`);
    ``sync`` flushes it to the disk before the rename."""
    with atomic_path(path) as tmp, open(tmp, "wb") as fh:
        fh.write(data.encode("utf-8") if isinstance(data, str) else data)
        if sync:
            fh.flush()
            os.fsync(fh.fileno())
