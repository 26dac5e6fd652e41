"""Run every benchmark at a small and a large size and write one report.

Run by hand:  python benchmarks/run_all.py [--small-only] [--out benchmarks/results.md]

Each benchmark script runs as its own process with the arguments below; the report starts with
the date, the machine (node name, cores, memory) and the load average before and after, then one
summary table (benchmark, size, wall seconds of the whole command, exit status, and the script's
own target lines), then every script's printed table verbatim. The machine is shared on the
development setup, so times can be pessimistic; the scripts print ratios from paired runs where a
reference tool takes part.
"""

from __future__ import annotations

import argparse
import datetime
import os
import platform
import subprocess
import sys
import time

HERE = os.path.dirname(os.path.abspath(__file__))

#: (benchmark, size label, arguments) for the small and the large run of each script.
RUNS: list[tuple[str, str, str, list[str]]] = [
    ("bench_mesh.py", "small", "4.5 mm (about 5k nodes)", ["4.5"]),
    ("bench_mesh.py", "large", "0.52 mm (about 250k nodes)", ["0.52"]),
    ("bench_membrane.py", "small", "50k unknowns", ["--sizes", "50000"]),
    ("bench_membrane.py", "large", "200k and 1M unknowns", ["--sizes", "200000", "1000000"]),
    ("bench_bending.py", "small", "10k and 30k unknowns", ["--cells", "57", "99"]),
    ("bench_bending.py", "large", "30k, 250k and 1M unknowns, multigrid paired with direct",
     ["--cells", "99", "288", "576", "--method", "amg", "--direct-max", "600000"]),
    ("bench_topopt.py", "small", "3 mm elements", ["--sizes", "3.0"]),
    ("bench_topopt.py", "large", "2 mm elements", ["--sizes", "2.0"]),
    ("bench_lighten.py", "small", "one margin, pattern style",
     ["--margins", "0.1", "--styles", "pattern"]),
    ("bench_lighten.py", "large", "all margins and styles", []),
    ("bench_nest.py", "small", "25 parts", ["25"]),
    ("bench_nest.py", "large", "100 parts", ["100"]),
]


def _memory_gib() -> float:
    try:
        with open("/proc/meminfo", encoding="ascii") as fh:
            for line in fh:
                if line.startswith("MemTotal:"):
                    return int(line.split()[1]) / 1024.0**2
    except OSError:
        pass
    return float("nan")


def _load() -> str:
    return "{:.2f} {:.2f} {:.2f}".format(*os.getloadavg())


def main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--small-only", action="store_true", help="skip the large runs")
    ap.add_argument("--out", default=os.path.join(HERE, "results.md"))
    args = ap.parse_args(argv)
    env = dict(os.environ)
    for var in ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS", "MKL_NUM_THREADS"):
        env.setdefault(var, "1")
    started = datetime.datetime.now().strftime("%Y-%m-%d %H:%M")
    load_before = _load()
    summary: list[str] = []
    blocks: list[str] = []
    for script, which, label, extra in RUNS:
        if args.small_only and which == "large":
            continue
        cmd = [sys.executable, os.path.join(HERE, script), *extra]
        print(f"running {script} ({which}: {label}) ...", flush=True)
        t0 = time.perf_counter()
        res = subprocess.run(cmd, capture_output=True, text=True, check=False, env=env)
        wall = time.perf_counter() - t0
        out = res.stdout.rstrip()
        targets = "; ".join(ln.lstrip("# ").strip() for ln in out.splitlines()
                            if ln.startswith("# target"))
        summary.append(f"| {script} | {which}: {label} | {wall:.1f} | {res.returncode} | "
                       f"{targets or '-'} |")
        tail = "" if res.returncode == 0 else "\n" + "\n".join(res.stderr.splitlines()[-5:])
        shown = " ".join(["python", f"benchmarks/{script}", *extra])
        blocks.append(f"### {script} ({which}: {label})\n\n```\n$ {shown}\n"
                      f"{out}{tail}\n```\n")
    report = [
        "# Benchmark results",
        "",
        f"Run {started} on {platform.node()} ({platform.machine()}, {os.cpu_count()} cores, "
        f"{_memory_gib():.0f} GiB), Python {platform.python_version()}, BLAS threads "
        f"{env['OPENBLAS_NUM_THREADS']}. Load average before: {load_before}; after: {_load()}.",
        "",
        "| benchmark | size | wall s | exit | targets printed |",
        "|---|---|---|---|---|",
        *summary,
        "",
        *blocks,
    ]
    with open(args.out, "w", encoding="utf-8") as fh:
        fh.write("\n".join(report))
    print("\n".join(report[:7 + len(summary)]))
    print(f"written {args.out}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
