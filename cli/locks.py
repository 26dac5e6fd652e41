"""Advisory locks on folders: POSIX ``flock`` on the folder itself, released by the system when
the holder ends, even when it is killed. Where ``fcntl`` is missing (Windows) no lock is taken
and every folder counts as held by someone else (so nothing is ever cleaned up as stale).
"""

from __future__ import annotations

import os
from collections.abc import Iterator
from contextlib import contextmanager
from pathlib import Path

try:
    import fcntl
except ImportError:  # pragma: no cover - not POSIX
    fcntl = None  # type: ignore[assignment]

__all__ = ["LOCKS_AVAILABLE", "lock_folder", "unlock", "folder_locked"]

LOCKS_AVAILABLE = fcntl is not None


def lock_folder(path: Path, *, wait: bool = True) -> int | None:
    """Take an exclusive lock on the folder ``path``; returns the handle to pass to
    :func:`unlock`, or None when ``wait`` is False and someone else holds it (or the folder is
    gone). Without locks available, returns -1 at once."""
    if fcntl is None:
        return -1
    try:
        fd = os.open(path, os.O_RDONLY)
    except FileNotFoundError:
        return None
    try:
        fcntl.flock(fd, fcntl.LOCK_EX if wait else fcntl.LOCK_EX | fcntl.LOCK_NB)
    except BlockingIOError:
        os.close(fd)
        return None
    except BaseException:
        os.close(fd)
        raise
    return fd


def unlock(handle: int | None) -> None:
    """Release a lock taken with :func:`lock_folder`."""
    if handle is not None and handle >= 0:
        os.close(handle)


@contextmanager
def folder_locked(path: Path) -> Iterator[None]:
    """Hold the lock on the folder ``path`` (waiting for it) while the block runs."""
    handle = lock_folder(path)
    try:
        yield
    finally:
        unlock(handle)
