"""Are the outputs of the starter designs unchanged? Run before and after a refactoring.

    python benchmarks/same_outputs.py run BEFORE_DIR [--lighten]   # with the old code installed
    python benchmarks/same_outputs.py run AFTER_DIR [--lighten]    # with the new code installed
    python benchmarks/same_outputs.py diff BEFORE_DIR AFTER_DIR

``run`` writes, for every bundled starter design, the output folders of ``platewright build`` and
``platewright check`` (and ``lighten`` with ``--lighten``). ``diff`` compares two such trees file by
file: every file must be byte-identical, except report.json, which is compared as JSON with the
timing entries (``timings_s``) removed. It prints each difference and exits 1 when there is one.
"""

from __future__ import annotations

import argparse
import json
import subprocess
import sys
from pathlib import Path

TIMING_KEYS = {"timings_s", "seconds"}


def _starters() -> list[Path]:
    from importlib.resources import files

    return sorted(Path(str(files("platewright.templates") / "designs")).glob("*.yaml"))


def run(outdir: Path, lighten: bool) -> None:
    commands = ["build", "check"] + (["lighten"] if lighten else [])
    for design in _starters():
        for command in commands:
            target = outdir / design.stem / command
            proc = subprocess.run(
                [sys.executable, "-m", "platewright.cli.main", command, str(design), "-q",
                 "-o", str(target)],
                capture_output=True, text=True,
            )
            print(f"{design.stem:20s} {command:8s} exit {proc.returncode}")
            (outdir / design.stem / f"{command}.exit").write_text(f"{proc.returncode}\n")


def _strip(value):
    if isinstance(value, dict):
        return {k: _strip(v) for k, v in value.items() if k not in TIMING_KEYS}
    if isinstance(value, list):
        return [_strip(v) for v in value]
    return value


def diff(a: Path, b: Path) -> int:
    files_a = {p.relative_to(a) for p in a.rglob("*") if p.is_file()}
    files_b = {p.relative_to(b) for p in b.rglob("*") if p.is_file()}
    problems = [f"only in {a}: {p}" for p in sorted(files_a - files_b)]
    problems += [f"only in {b}: {p}" for p in sorted(files_b - files_a)]
    for rel in sorted(files_a & files_b):
        pa, pb = a / rel, b / rel
        if rel.name == "report.json":
            same = _strip(json.loads(pa.read_text())) == _strip(json.loads(pb.read_text()))
        else:
            same = pa.read_bytes() == pb.read_bytes()
        if not same:
            problems.append(f"differs: {rel}")
    for line in problems:
        print(line)
    print(f"{len(files_a & files_b)} files compared, {len(problems)} differences")
    return 1 if problems else 0


def main() -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    sub = parser.add_subparsers(dest="verb", required=True)
    p_run = sub.add_parser("run")
    p_run.add_argument("outdir", type=Path)
    p_run.add_argument("--lighten", action="store_true")
    p_diff = sub.add_parser("diff")
    p_diff.add_argument("a", type=Path)
    p_diff.add_argument("b", type=Path)
    args = parser.parse_args()
    if args.verb == "run":
        run(args.outdir, args.lighten)
        return 0
    return diff(args.a, args.b)


if __name__ == "__main__":
    sys.exit(main())
