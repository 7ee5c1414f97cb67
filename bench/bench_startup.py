"""Start-up cost: CPU time of `purgeplan optimize` on one alternative against importing Pyomo.

Runs each command several times in a fresh process and reports the smallest
user + system CPU time of each (the least disturbed by other work on the
machine), and their ratio.  Target: the ratio at most 2.5.

    python bench/bench_startup.py [--repeats N] [--alternative ALT] [--cold] [CASE]

Default: the ammonia demo's alternative `standard, fuel, none`, with the
per-user cache of property records filled by one untimed run first (as on
every run after a user's first); `--cold` gives every timed run an empty
cache folder instead, so that each reads the ``chemicals`` tables.
"""

from __future__ import annotations

import argparse
import os
import resource
import shutil
import subprocess
import sys
import tempfile
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
TARGET_RATIO = 2.5


def _children_cpu() -> float:
    r = resource.getrusage(resource.RUSAGE_CHILDREN)
    return r.ru_utime + r.ru_stime


def cpu_seconds(argv: list[str], cache_home: str | None = None) -> float:
    """User + system CPU time of one run of ``argv`` [s], with XDG_CACHE_HOME if given."""
    env = None if cache_home is None else {**os.environ, "XDG_CACHE_HOME": cache_home}
    before = _children_cpu()
    subprocess.run(argv, check=True, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL,
                   env=env)
    return _children_cpu() - before


def main() -> int:
    p = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    p.add_argument("case", nargs="?", default=str(ROOT / "cases" / "ammonia_demo.toml"))
    p.add_argument("--alternative", default="standard, fuel, none")
    p.add_argument("--repeats", type=int, default=5)
    p.add_argument("--cold", action="store_true",
                   help="an empty property cache for every timed run")
    args = p.parse_args()
    script = shutil.which("purgeplan", path=str(Path(sys.executable).parent))
    command = [script] if script else [sys.executable, "-m", "purgeplan"]
    runs = {
        "purgeplan optimize (one alternative)":
            [*command, "optimize", args.case, "--alternative", args.alternative, "--quiet"],
        'python -c "import pyomo.environ"': [sys.executable, "-c", "import pyomo.environ"],
    }
    ours_argv = runs["purgeplan optimize (one alternative)"]
    best = {}
    with tempfile.TemporaryDirectory() as scratch:
        if not args.cold:
            cpu_seconds(ours_argv)  # fills the user's cache, as any earlier run has
        for label, argv in runs.items():
            cold = args.cold and argv is ours_argv
            homes = [str(Path(scratch) / f"cold{i}") if cold else None
                     for i in range(args.repeats)]
            times = [cpu_seconds(argv, home) for home in homes]
            best[label] = min(times)
            print(f"{label}: {best[label]:.2f} s CPU (least of {args.repeats}; "
                  f"largest {max(times):.2f} s)")
    ours, pyomo = best.values()
    ratio = ours / pyomo
    cache = "an empty property cache" if args.cold else "the property cache filled"
    print(f"ratio: {ratio:.2f} with {cache} (target at most {TARGET_RATIO:g}: "
          f"{'met' if ratio <= TARGET_RATIO else 'not met'})")
    return 0


if __name__ == "__main__":
    sys.exit(main())
