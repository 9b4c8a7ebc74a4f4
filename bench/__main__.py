"""Run every benchmark and write one table: ``python -m bench`` (or ``make bench``).

Each benchmark is its own module, measures its floor in the same run (the
framework's bare endpoint, plain reportlab, plain sqlite3, or a simpler
algorithm on the same input) and prints its rows. This runner runs them one
after another in fresh processes, so one cannot warm the caches of the next,
and writes the collected output with the machine it ran on to
``bench/results/latest.md``.
"""

from __future__ import annotations

import importlib.util
import os
import platform
import subprocess
import sys
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
BENCHMARKS = (
    "bench.compatibility",
    "bench.bench_pages",
    "bench.bench_workorder_pdf",
    "bench.bench_planner",
    "bench.csv_import",
    "bench.latency",
)


def machine() -> str:
    cpu = platform.processor() or platform.machine()
    try:
        for line in Path("/proc/cpuinfo").read_text().splitlines():
            if line.startswith("model name"):
                cpu = line.split(":", 1)[1].strip()
                break
    except OSError:
        pass
    return f"{os.cpu_count()} cores, {cpu}, Python {platform.python_version()}, {platform.system()}"


def main() -> int:
    sections = [f"# Benchmarks\n\nMachine: {machine()}\nDate: {time.strftime('%Y-%m-%d')}\n"]
    failed = 0
    for name in BENCHMARKS:
        if importlib.util.find_spec(name) is None:
            sections.append(f"## {name}\n\nnot present\n")
            continue
        started = time.perf_counter()
        result = subprocess.run(
            [sys.executable, "-m", name], cwd=ROOT, capture_output=True, text=True, check=False
        )
        took_s = time.perf_counter() - started
        status = "ok" if result.returncode == 0 else f"exit {result.returncode}"
        failed += result.returncode != 0
        output = result.stdout.strip() or result.stderr.strip()[-2000:]
        sections.append(f"## {name} ({status}, {took_s:.1f} s)\n\n```\n{output}\n```\n")
        print(sections[-1], flush=True)
    results = ROOT / "bench" / "results"
    results.mkdir(exist_ok=True)
    (results / "latest.md").write_text("\n".join(sections))
    print(f"written to {results / 'latest.md'}")
    return 1 if failed else 0


if __name__ == "__main__":
    raise SystemExit(main())
