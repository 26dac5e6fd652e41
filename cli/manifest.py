"""The manifest of an output folder: which files platewright wrote there, with their sha256.

Every index file (report.json, nest.json, compare.json) lists the files its run wrote under
``output_files`` ([{"path": relative POSIX path, "sha256": hex or null}], the index itself with
null). While a run moves its files into place, a commit journal ``.INDEX.commit`` beside them
lists the earlier run's files and the new ones, so a run killed half-way still leaves a record.
"""

from __future__ import annotations

import hashlib
import json
from dataclasses import dataclass, field
from pathlib import Path, PurePosixPath
from typing import Any

from platewright.geometry.writers.atomic import write_atomic

__all__ = [
    "INDEX_FILES",
    "MANIFEST_KEY",
    "Hashes",
    "merge",
    "Owned",
    "file_sha256",
    "journal_path",
    "owned_files",
    "safe_relative",
    "staged_files",
    "write_journal",
    "written_by_us",
]

#: The index files our commands write at the top of an output folder.
INDEX_FILES = ("report.json", "nest.json", "compare.json", "sweep.json")
MANIFEST_KEY = "output_files"


def file_sha256(path: Path) -> str:
    """sha256 (hex) of the bytes of the file at ``path``."""
    digest = hashlib.sha256()
    with open(path, "rb") as fh:
        for block in iter(lambda: fh.read(1 << 20), b""):
            digest.update(block)
    return digest.hexdigest()


def _read_ours(path: Path) -> dict[str, Any] | None:
    """The JSON mapping in ``path`` when platewright wrote it, else None."""
    try:
        data = json.loads(path.read_text(encoding="utf-8"))
    except (OSError, ValueError):
        return None
    if isinstance(data, dict) and isinstance(data.get("tool"), dict) \
            and data["tool"].get("name") == "platewright":
        return data
    return None


def written_by_us(folder: Path, index_file: str) -> bool:
    """True when ``folder/index_file`` (e.g. sweep.json) is a JSON file written by this tool."""
    return _read_ours(folder / index_file) is not None


def safe_relative(rel: object) -> bool:
    """True for a relative POSIX path that stays inside its folder (no '..', not absolute)."""
    if not isinstance(rel, str) or not rel or "\\" in rel or "\0" in rel:
        return False
    p = PurePosixPath(rel)
    return not p.is_absolute() and all(part not in ("", ".", "..") for part in p.parts) \
        and p.as_posix() == rel


Hashes = frozenset[str]


def _entries(data: dict[str, Any]) -> dict[str, Hashes]:
    """path -> the sha256 values it may have (none known: empty) from a manifest or journal."""
    out: dict[str, set[str]] = {}
    for e in data.get(MANIFEST_KEY) or []:
        if isinstance(e, dict) and safe_relative(e.get("path")):
            h = e.get("sha256")
            out.setdefault(e["path"], set()).update([h] if isinstance(h, str) else [])
    return {p: frozenset(h) for p, h in out.items()}


def merge(*maps: dict[str, Hashes]) -> dict[str, Hashes]:
    """Union of path -> hashes maps (the hashes of a path in any of them)."""
    out: dict[str, Hashes] = {}
    for m in maps:
        for p, h in m.items():
            out[p] = out.get(p, frozenset()) | h
    return out


def journal_path(folder: Path, index_file: str) -> Path:
    """The commit journal of ``index_file``'s command in ``folder``."""
    return folder / f".{index_file}.commit"


def write_journal(folder: Path, index_file: str, files: dict[str, Hashes]) -> None:
    """Record ``files`` (path -> every sha256 it may have: the earlier run's and this one's) as
    being committed into ``folder``."""
    entries = [{"path": p, "sha256": h} for p, hs in sorted(files.items())
               for h in (sorted(hs) or [None])]
    doc = {"tool": {"name": "platewright"}, "index": index_file, MANIFEST_KEY: entries}
    write_atomic(journal_path(folder, index_file), json.dumps(doc, indent=1))


@dataclass(frozen=True)
class Owned:
    """What platewright wrote into a folder: ``mine`` the files of the earlier run of the same
    index (path -> the sha256 values it was written with; empty when unknown), ``others`` those
    of the other index files, ``legacy`` True when the same index is ours but older than
    manifests (its files are unknown), ``any`` True when the folder holds any platewright index
    or journal."""

    mine: dict[str, Hashes] = field(default_factory=dict)
    others: dict[str, Hashes] = field(default_factory=dict)
    legacy: bool = False
    any: bool = False


def owned_files(folder: Path, index_file: str) -> Owned:
    """The files platewright wrote into ``folder``, from its index files and commit journals."""
    mine: dict[str, Hashes] = {}
    others: dict[str, Hashes] = {}
    legacy = found = False
    for name in INDEX_FILES:
        for path in (folder / name, journal_path(folder, name)):
            data = _read_ours(path)
            if data is None:
                continue
            found = True
            if name == index_file and path.name == name and MANIFEST_KEY not in data:
                legacy = True
            if name == index_file:
                mine = merge(mine, _entries(data))
            else:
                others = merge(others, _entries(data))
    return Owned(mine, others, legacy, found)


def staged_files(folder: Path, index_file: str) -> dict[str, str | None]:
    """Every file under ``folder`` (relative POSIX path -> sha256; the index file None)."""
    out: dict[str, str | None] = {}
    for p in sorted(folder.rglob("*")):
        if p.is_file() and not p.is_symlink():
            rel = p.relative_to(folder).as_posix()
            out[rel] = None if rel == index_file else file_sha256(p)
    return out
