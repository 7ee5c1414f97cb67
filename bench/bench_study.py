"""Benchmark: the full ammonia demo study with workbook, wall time and peak memory.

Targets: the demo study with its price scenarios ([uncertainty] table) at
most 15 s wall on the 2-core machine; without the table (alternatives,
ranking, break-even, sensitivity and workbook only) at most 10 s; peak
memory under 600 MB.  Run: python bench/bench_study.py
"""

import resource
import subprocess
import sys
import tempfile
import time
from pathlib import Path

DEMO = Path(__file__).resolve().parents[1] / "cases" / "ammonia_demo.toml"


def _run(case: Path, out: Path) -> float:
    t = time.perf_counter()
    subprocess.run([sys.executable, "-m", "purgeplan", "study", str(case), "-o", str(out),
                    "--quiet"], check=True, capture_output=True)
    return time.perf_counter() - t


def main() -> None:
    text = DEMO.read_text()
    with tempfile.TemporaryDirectory() as tmp:
        plain = Path(tmp) / "without_scenarios.toml"
        plain.write_text(text[:text.index("\n[uncertainty]") + 1])
        without = _run(plain, Path(tmp) / "a.xlsx")
        with_scenarios = _run(DEMO, Path(tmp) / "b.xlsx")
    peak_kb = resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss
    print(f"demo study without its price scenarios: {without:.1f} s wall")
    print(f"demo study with its price scenarios:    {with_scenarios:.1f} s wall")
    print(f"peak memory of the largest process: {peak_kb / 1024:.0f} MB")


if __name__ == "__main__":
    main()
