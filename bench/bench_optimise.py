"""Benchmark: one alternative of the ammonia demo optimised, against the SCIP global route.

Target (issue: optimiser): median at most 0.3 s after import; at least 20 times
faster than SCIP at equal or better accuracy.  Run: python bench/bench_optimise.py
"""

import statistics
import time
from pathlib import Path

from purgeplan import build_loop, expand_alternatives, load_case
from purgeplan.solve import optimise, solve_exact_with

CASE = Path(__file__).resolve().parents[1] / "cases" / "ammonia_demo.toml"


def main() -> None:
    case, _ = load_case(CASE)
    name, _, alt = next(a for a in expand_alternatives(case)
                        if a[0] == "makeup_grade=standard, purge_destination=fuel, recovery=none")
    times, opt = [], None
    for _ in range(7):
        loop = build_loop(alt, name)
        t = time.perf_counter()
        opt = optimise(loop)
        times.append(time.perf_counter() - t)
    med = statistics.median(times)
    print(f"reduced-space HiGHS optimum of '{name}': median {med:.3f} s over {len(times)} runs, "
          f"{opt.solver.solves} LP solves, purge fraction {opt.state.purge_fraction:.6f}, "
          f"TAC {opt.state.tac_per_year:,.2f}")
    try:
        t = time.perf_counter()
        a, tac, _, _ = solve_exact_with(build_loop(alt, name), "scip_direct",
                                        **{"limits/gap": 1e-6})
        scip = time.perf_counter() - t - med
        print(f"SCIP global (same model, purge free; fixed point taken from the reduced "
              f"space): {scip:.3f} s, purge fraction {a:.6f}, TAC {tac:,.2f}; "
              f"relative TAC difference {abs(tac - opt.state.tac_per_year) / tac:.2e}; "
              f"ratio {scip / med:.1f}")
    except Exception as exc:  # report, do not hide
        print(f"SCIP route failed: {type(exc).__name__}: {exc}")


if __name__ == "__main__":
    main()
