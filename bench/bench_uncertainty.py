"""Benchmark: price scenarios on the ammonia demo, every alternative re-optimised in each.

Prints, on the demo's alternatives whose flows do not depend on prices (no
source blend with freedom):

- wall time and cost per scenario at 100, 1,000 and 10,000 scenarios with
  ``--jobs 2`` (goal: 10,000 scenarios in at most 60 s, cost per scenario flat);
- peak memory over all processes (goal: at most 1 GB);
- 1,000 scenarios re-optimised from scratch (``optimise`` of each scenario's
  loop) in the same run, and the ratio;

and the cost per scenario of the demo's source-blend alternatives, which are
re-optimised from scratch in every scenario.  Run:
python bench/bench_uncertainty.py [--quick]
"""

import resource
import sys
import time
from pathlib import Path

from purgeplan import build_loop, expand_alternatives, load_case
from purgeplan.case import correlation_matrix
from purgeplan.sampling import scenario_values
from purgeplan.uncertainty import (
    ROUTE_REOPTIMISED,
    ROUTE_STATES,
    optima_over,
    route_for,
    uncertain_inputs,
)

CASES = Path(__file__).resolve().parents[1] / "cases"


def _peak_mb() -> float:
    own = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss
    children = resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss
    return (own + children) / 1024.0


def main() -> None:
    quick = "--quick" in sys.argv
    case, _ = load_case(CASES / "ammonia_demo.toml")
    if case.uncertainty is None:
        sys.exit("the demo case has no [uncertainty] table")
    inputs = uncertain_inputs(case)
    paths = tuple(x.path for x in inputs)
    dists = [x.distribution for x in inputs]
    corr = correlation_matrix(case.uncertainty) if case.uncertainty.correlations else None
    loops = [build_loop(c, n) for n, _, c in expand_alternatives(case)]
    square = [lp for lp in loops if route_for(lp) == ROUTE_STATES]
    blends = [lp for lp in loops if route_for(lp) == ROUTE_REOPTIMISED]
    print(f"{len(square)} alternatives on shared states, {len(blends)} re-optimised "
          f"(source blend), {len(paths)} uncertain inputs")
    counts = (100, 1000) if quick else (100, 1000, 10000)
    for n in counts:
        values = scenario_values(dists, n, 1, corr)
        t = time.perf_counter()
        optima_over(square, [ROUTE_STATES] * len(square), paths, values, jobs=2)
        wall = time.perf_counter() - t
        print(f"{n:6d} scenarios x {len(square)} alternatives, --jobs 2: {wall:7.2f} s, "
              f"{1e3 * wall / n:7.3f} ms per scenario")
    n = 100 if quick else 1000
    values = scenario_values(dists, n, 2, corr)
    t = time.perf_counter()
    fast = optima_over(square, [ROUTE_STATES] * len(square), paths, values, jobs=2)
    t_fast = time.perf_counter() - t
    t = time.perf_counter()
    slow = optima_over(square, [ROUTE_REOPTIMISED] * len(square), paths, values, jobs=2)
    t_slow = time.perf_counter() - t
    worst = float(abs(fast[0] / slow[0] - 1.0).max())
    print(f"{n} scenarios from scratch: {t_slow:.1f} s against {t_fast:.2f} s on shared "
          f"states, ratio {t_slow / t_fast:.0f}; largest TAC difference {worst:.1e}")
    if blends:
        m = 10
        values = scenario_values(dists, m, 3, corr)
        t = time.perf_counter()
        optima_over(blends, [ROUTE_REOPTIMISED] * len(blends), paths, values, jobs=2)
        wall = time.perf_counter() - t
        print(f"source-blend alternatives, re-optimised: {1e3 * wall / m / len(blends):.0f} ms "
              f"per scenario and alternative with --jobs 2")
    print(f"peak memory, this process plus the largest worker: {_peak_mb():.0f} MB")


if __name__ == "__main__":
    main()
