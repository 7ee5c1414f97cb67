"""Benchmark: the optimiser against the plain route, alternative by alternative.

The plain route is what a user could write in an afternoon: the direct engine's
steady state at each purge fraction and ``scipy.optimize.minimize_scalar``
(bounded Brent) over the case's purge-fraction box, to xatol 1e-6 of the
optimum.  It knows no limits, no source blend and states no method.  The
optimiser (``purgeplan.solve.optimise``, optimum only) must be at least as fast
on every demo alternative whose balances leave no freedom (ratio optimiser / plain at
most 1.0); alternatives with a source blend are timed alone, since the plain route
cannot choose a blend.

Each route is timed on a freshly built loop, best of five runs, after one
warm-up run of the whole set (imports and caches).  Run:
python bench/bench_plain_route.py
"""

import math
import time
from pathlib import Path

from scipy.optimize import minimize_scalar

from purgeplan import build_loop, expand_alternatives, load_case
from purgeplan.engine import steady_state
from purgeplan.errors import NoSteadyStateError
from purgeplan.solve import optimise

CASES = Path(__file__).resolve().parents[1] / "cases"
REPEATS = 5


def plain_route(loop):
    """Bounded Brent on the direct engine's TAC; returns (a, TAC, evaluations)."""
    count = 0

    def tac(a):
        nonlocal count
        count += 1
        try:
            return steady_state(loop, a).tac_per_year
        except NoSteadyStateError:
            return 1e30

    coarse = minimize_scalar(tac, bounds=(loop.purge_fraction_min, loop.purge_fraction_max),
                             method="bounded", options={"xatol": 1e-6 * loop.purge_fraction_min,
                                                        "maxiter": 500})
    return float(coarse.x), float(coarse.fun), count


def best_time(fn, repeats=REPEATS):
    best, out = math.inf, None
    for _ in range(repeats):
        t = time.perf_counter()
        out = fn()
        best = min(best, time.perf_counter() - t)
    return best, out


def main() -> None:
    alternatives = []
    for case_file in ("ammonia_demo.toml", "hydrogenation_demo.toml"):
        case, _ = load_case(CASES / case_file)
        alternatives += [(case_file.split("_")[0], name, alt)
                         for name, _, alt in expand_alternatives(case)]
    for _, name, alt in alternatives:  # warm-up
        optimise(build_loop(alt, name), details=False)
        plain_route(build_loop(alt, name))
    total_opt = total_plain = 0.0
    worst = 0.0
    print(f"{'case':<14} {'alternative':<64} {'optimiser s':>11} {'plain s':>8} {'ratio':>6} "
          f"{'solves':>6} {'evals':>5} {'TAC diff':>9}  binding")
    blends = []
    for case_name, name, alt in alternatives:
        t_opt, opt = best_time(lambda alt=alt, name=name: optimise(build_loop(alt, name),
                                                                    details=False))
        if build_loop(alt, name).blend_free:
            # the plain route has no blend freedom: the engine holds fixed source shares
            blends.append((case_name, name, t_opt, opt))
            continue
        t_plain, (a, tac, evals) = best_time(lambda alt=alt, name=name:
                                             plain_route(build_loop(alt, name)))
        total_opt += t_opt
        total_plain += t_plain
        worst = max(worst, t_opt / t_plain)
        diff = (opt.state.tac_per_year - tac) / tac if opt.feasible else math.nan
        print(f"{case_name:<14} {name:<64} {t_opt:11.4f} {t_plain:8.4f} {t_opt / t_plain:6.2f} "
              f"{opt.solver.solves:6d} {evals:5d} {diff:9.1e}  "
              f"{', '.join(opt.binding_constraints) or '-'}")
    print(f"all {len(alternatives) - len(blends)} alternatives with no blend freedom: "
          f"optimiser {total_opt:.3f} s, plain route {total_plain:.3f} s, ratio "
          f"{total_opt / total_plain:.2f}; worst single ratio {worst:.2f}")
    for case_name, name, t_opt, opt in blends:
        print(f"{case_name:<14} {name:<64} {t_opt:11.4f}  (source blend by HiGHS, "
              f"{opt.solver.solves} LP solves; the plain route cannot choose a blend)")
    print("A positive TAC difference where a limit binds is the plain route ignoring the "
          "limit: its answer is infeasible there.")


if __name__ == "__main__":
    main()
