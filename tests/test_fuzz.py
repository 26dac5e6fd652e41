"""Fuzzing the command line with broken designs (issue 9): random mutations of the bundled
starter designs never crash.

Each case takes a starter design and applies one to three random mutations (delete a key, swap a
value's type, huge / tiny / negative / NaN / infinite numbers, long strings, lists for scalars and
scalars for lists, duplicated list entries, damaged text), then runs ``platewright build`` in
process. Whatever the input, the exit status is 0 (built), 1 (built, a limit failed) or 2
(refused) and no exception escapes. The seed is fixed, so a failure names a case that can be
replayed with :func:`mutated_design`.
"""

from __future__ import annotations

import copy
import math
import random
from pathlib import Path
from typing import Any

import pytest
import yaml

from platewright.cli.main import main
from platewright.geometry.plate.build import list_templates

SEED = 20240917
CASES = 320

STARTERS = {p.stem: p.read_text(encoding="utf-8") for p in list_templates()}

#: Replacement values: wrong types, extreme numbers, long and odd text.
ODD_VALUES: list[Any] = [
    None, True, False, 0, -1, 1, 0.0, -0.0, 1e-308, 5e-324, 1e18, 1e308, -1e308, 10**30,
    -(10**30), math.nan, math.inf, -math.inf, "", " ", "x" * 5000, "1e-308", "1/0", "sqrt(-1)",
    "9**9**9", "(" * 300 + "1" + ")" * 300, "wheelbase_mm * 1e300", "CON", "Rail_Left",
    "ümlaut ✓", "\x00", "../../../etc/passwd", "a.yaml", [], [1], [1, 2, 3], ["a", "b"],
    [[1, 2], [3]], {}, {"a": 1}, {"type": "hole"}, [None], [math.nan, 1],
]


def _paths(node: Any, here: tuple = ()) -> list[tuple]:
    """Every path (tuple of keys and indices) to a value inside ``node``."""
    out = [here] if here else []
    if isinstance(node, dict):
        for k, v in node.items():
            out += _paths(v, (*here, k))
    elif isinstance(node, list):
        for i, v in enumerate(node):
            out += _paths(v, (*here, i))
    return out


def _get(node: Any, path: tuple) -> Any:
    for part in path:
        node = node[part]
    return node


def _number_variant(rng: random.Random, value: float) -> Any:
    return rng.choice([
        # far outside every range, not numbers at all
        value * 1e12, value * 1e-12, -value, value + 1e6, math.nan, math.inf, 0, 1e-9, 1e9,
        str(value) * 40,
        # inside the ranges but at their edges: these reach the geometry
        0.001, 0.0011, 4999.9, -4999.9, value * 1.5, value * 0.5, value * 0.01, value * 20,
        value + 0.001, int(value) if math.isfinite(value) else 0])


def _mutate_tree(rng: random.Random, tree: Any) -> None:
    path = rng.choice(_paths(tree))
    parent, key = _get(tree, path[:-1]), path[-1]
    value = parent[key]
    op = rng.random()
    if op < 0.15 and isinstance(parent, dict):
        del parent[key]
    elif op < 0.25 and isinstance(parent, list):
        parent.insert(rng.randrange(len(parent) + 1), copy.deepcopy(value))  # duplicate entry
    elif op < 0.45 and isinstance(value, (int, float)) and not isinstance(value, bool):
        parent[key] = _number_variant(rng, float(value))
    elif op < 0.55 and isinstance(value, (list, dict)) and value:
        parent[key] = rng.choice([value[0] if isinstance(value, list) else 1, "text", 3.0])
    elif op < 0.65 and not isinstance(value, (list, dict)):
        parent[key] = [value] * rng.choice([1, 2, 3])
    else:
        parent[key] = copy.deepcopy(rng.choice(ODD_VALUES))


def _mutate_text(rng: random.Random, text: str) -> str:
    lines = text.splitlines(keepends=True)
    i = rng.randrange(len(lines))
    op = rng.random()
    if op < 0.3:
        del lines[i]
    elif op < 0.5:
        lines.insert(i, lines[rng.randrange(len(lines))])
    elif op < 0.7:
        cut = rng.randrange(len(lines[i]) + 1)
        lines[i] = lines[i][:cut] + rng.choice(["{", "[", ": ", "&a ", "*a", "!!python/none ",
                                                 "\t", "'", "- ", "? "]) + lines[i][cut:]
    else:
        return text[: rng.randrange(len(text))]  # truncated file
    return "".join(lines)


def mutated_design(case: int) -> str:
    """The design text of fuzz case ``case`` (deterministic for the fixed SEED)."""
    rng = random.Random(SEED * 1_000_003 + case)
    name = sorted(STARTERS)[case % len(STARTERS)]
    text = STARTERS[name]
    if rng.random() < 0.15:
        return _mutate_text(rng, text)
    tree = yaml.safe_load(text)
    for _ in range(rng.choice([1, 1, 2, 3])):
        if not isinstance(tree, dict) or not tree:
            break
        _mutate_tree(rng, tree)
    return yaml.safe_dump(tree, sort_keys=False, allow_unicode=True)


@pytest.mark.parametrize("block", range(4))
def test_mutated_starters_never_crash(block: int, tmp_path: Path, capsys) -> None:
    statuses: dict[int, int] = {}
    for case in range(block, CASES, 4):
        design = tmp_path / f"case{case}.yaml"
        design.write_text(mutated_design(case), encoding="utf-8")
        out = tmp_path / f"out{case}"
        try:
            rc = main(["build", str(design), "-o", str(out), "-q"])
        except BaseException as exc:  # noqa: BLE001 - anything escaping is the failure
            raise AssertionError(f"fuzz case {case} raised {exc!r}") from exc
        err = capsys.readouterr().err
        assert rc in (0, 1, 2), f"fuzz case {case}: exit status {rc}\n{err[-2000:]}"
        assert "Traceback" not in err, f"fuzz case {case}\n{err[-2000:]}"
        statuses[case] = rc
    # the mutations must reach both outcomes, or the fuzzing tests nothing
    assert 2 in statuses.values() and 0 in statuses.values()
