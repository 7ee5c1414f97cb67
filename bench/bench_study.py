"""Benchmark: the full ammonia demo study with workbook, wall time and peak memory.

Target (issue: study): at most 15 s wall on the 2-core machine, peak memory
under 600 MB.  Run: python bench/bench_study.py
"""

import resource
import subprocess
import sys
import tempfile
import time
from pathlib import Path


def main() -> None:
    with tempfile.TemporaryDirectory() as tmp:
        out = Path(tmp) / "study.xlsx"
        t = time.perf_counter()
        subprocess.run([sys.executable, "-m", "purgeplan", "study", "-o", str(out), "--quiet"],
                       check=True, capture_output=True)
        wall = time.perf_counter() - t
    peak_kb = resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss
    print(f"full demo study: {wall:.1f} s wall, peak memory of the largest process "
          f"{peak_kb / 1024:.0f} MB")


if __name__ == "__main__":
    main()
