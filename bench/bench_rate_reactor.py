"""Benchmark: one ammonia alternative optimised with the rate-based converter.

Target (issue: a reactor and a separator that respond to inerts): median at most
0.5 s per alternative with the catalyst volume a decision (per_pass = "rate"),
the purge fraction and the per-pass conversion searched together.  Also times
the demo as shipped (its converter at a set approach to equilibrium, the
catalyst sized by the same rate).  Run: python bench/bench_rate_reactor.py;
with ``--beds 380,400,420`` the converter is adiabatic beds in series with
those inlet temperatures [degC] (``rate.bed_inlet_temperatures_c``), cooled
between beds, or with ``--quench 150`` quenched between them with cold feed gas
at that temperature [degC] (``rate.between_beds = "quench"``,
``rate.quench_temperature_c``).
"""

import argparse
import statistics
import time
import tomllib
from pathlib import Path

from purgeplan import build_loop, coefficients
from purgeplan.case import validate_case_dict
from purgeplan.solve import optimise

CASE = Path(__file__).resolve().parents[1] / "cases" / "ammonia_demo.toml"
GRADES = {"standard": ["standard"], "blend": ["standard", "purified", "nitrogen"]}


def _loop(grade: str, rate_based: bool, beds: list[float] | None = None,
          quench_c: float | None = None):
    raw = tomllib.loads(CASE.read_text(encoding="utf-8"))
    for key in ("options", "alternatives", "exclude", "uncertainty"):
        raw.pop(key, None)
    raw["makeup_sources"] = GRADES[grade]
    if grade == "blend":
        raw["sources"]["purified"]["supply_limit_kmol_h"] = 2500.0
    if rate_based:
        reaction = raw["reactions"][0]
        reaction.pop("approach_to_equilibrium")
        reaction.update(per_pass="rate", per_pass_conversion=0.2)
    if beds:
        raw["reactions"][0]["rate"]["bed_inlet_temperatures_c"] = beds
    if quench_c is not None:
        raw["reactions"][0]["rate"].update(between_beds="quench", quench_temperature_c=quench_c)
    return build_loop(validate_case_dict(raw), f"{grade}, {'rate' if rate_based else 'set'}")


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--beds", help="bed inlet temperatures [degC], comma-separated")
    parser.add_argument("--quench", type=float,
                        help="quench gas temperature [degC]: quench between the beds")
    parser.add_argument("--repeat", type=int, default=5, help="timed runs of each (median)")
    args = parser.parse_args()
    beds = [float(t) for t in args.beds.split(",")] if args.beds else None
    for grade in GRADES:
        for rate_based in (True, False):
            loop = _loop(grade, rate_based, beds, args.quench)
            optimise(loop, details=False)           # first run: imports and caches
            times, opt = [], None
            for _ in range(args.repeat):
                # the beds of the reactor inlets seen last are kept; a new alternative has none
                coefficients._BEDS.clear()
                t = time.perf_counter()
                opt = optimise(loop, details=False)
                times.append(time.perf_counter() - t)
            s = opt.state
            print(f"{loop.name:16s} median {statistics.median(times):.3f} s "
                  f"({opt.solver.solves} solves, {opt.solver.route}); "
                  f"purge {s.purge_fraction:.5f}, "
                  f"per pass {s.conversion[0]:.4f}, approach "
                  f"{s.approach_to_equilibrium[0]:.3f}, catalyst "
                  f"{s.quantities['catalyst_volume_m3']:.1f} m3, TAC {s.tac_per_year:,.0f}; "
                  f"outlet NH3 {_fraction(s.flows['reactor_outlet'], 'NH3'):.1%}, inerts "
                  f"{s.inert_fraction_reactor_inlet:.1%}, circulation "
                  f"{sum(s.flows['reactor_feed'].values()) / sum(s.flows['makeup'].values()):.2f}"
                  + "".join(f"; bed {n} {b['inlet_temperature_c']:.0f}-"
                            f"{b['outlet_temperature_c']:.0f} degC to X "
                            f"{b['outlet_conversion']:.4f}"
                            + (f" ({b['feed_share']:.3f} of the feed)" if "feed_share" in b
                               else "") for n, b in enumerate(s.beds, start=1)))


def _fraction(flow: dict, component: str) -> float:
    return flow[component] / sum(flow.values())


if __name__ == "__main__":
    main()
