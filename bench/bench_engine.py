"""Benchmark: one steady state of the ammonia demo, and `purgeplan --help`.

Targets (issue: engine): median steady state at most 5 ms after import;
`purgeplan --help` at most 1 s.  Run: python bench/bench_engine.py
"""

import statistics
import subprocess
import sys
import time
from pathlib import Path

from purgeplan import build_loop, expand_alternatives, load_case, steady_state

CASE = Path(__file__).resolve().parents[1] / "cases" / "ammonia_demo.toml"


def main() -> None:
    case, _ = load_case(CASE)
    name, _, alt = expand_alternatives(case)[-1]
    loop = build_loop(alt, name)
    steady_state(loop)  # compiles the loop equations once
    times = []
    for i in range(200):
        a = 0.002 + 0.0004 * i
        t = time.perf_counter()
        steady_state(loop, a)
        times.append(time.perf_counter() - t)
    print(f"steady state ({name}): median {1e3 * statistics.median(times):.2f} ms, "
          f"p90 {1e3 * sorted(times)[int(0.9 * len(times))]:.2f} ms over {len(times)} runs")
    t = time.perf_counter()
    fresh = build_loop(alt, name)
    steady_state(fresh)
    print(f"first steady state of a new loop (compiling equations): "
          f"{1e3 * (time.perf_counter() - t):.1f} ms")
    runs = []
    for _ in range(5):
        t = time.perf_counter()
        subprocess.run([sys.executable, "-m", "purgeplan", "--help"], check=True,
                       capture_output=True)
        runs.append(time.perf_counter() - t)
    print(f"purgeplan --help: median {statistics.median(runs):.3f} s")


if __name__ == "__main__":
    main()
