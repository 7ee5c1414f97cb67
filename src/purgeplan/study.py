"""The study: every alternative optimised, ranked, the break-even feed premium and sensitivity.

Each optimisation of one alternative under one set of prices is an
independent task (:func:`run_task`): plain data in, a plain result out.  The
study hands tasks to an executor (in-process by default, a local process pool
with ``jobs > 1``, or a Dask distributed client) and merges results in a fixed
order, whatever order they finish in.
"""

from __future__ import annotations

import dataclasses
import datetime as dt
from collections.abc import Callable, Mapping
from dataclasses import dataclass, field

from scipy.optimize import brentq

from . import __version__
from .build import build_loop
from .case import Case, expand_alternatives
from .loop import Loop
from .reduced_space import LoopLP
from .solve import Optimum, optimise


@dataclass
class Alternative:
    """One design alternative: its choices, its loop and its optimum."""

    name: str
    choices: dict[str, str]
    loop: Loop
    optimum: Optimum
    rank: int | None = None


@dataclass
class StudyResult:
    case_name: str
    case_sha256: str
    tool_version: str
    currency: str
    created: str
    alternatives: list[Alternative]
    break_even: list[dict] = field(default_factory=list)
    sensitivity: list[dict] = field(default_factory=list)
    sensitivity_fraction: float = 0.2

    @property
    def ranked(self) -> list[Alternative]:
        return [a for a in self.alternatives if a.rank is not None]

    @property
    def best(self) -> Alternative | None:
        return self.ranked[0] if self.ranked else None


# ---------------------------------------------------------------------------
# tasks and executors


@dataclass(frozen=True)
class Task:
    """One optimisation: plain, picklable data."""

    key: tuple
    loop: Loop
    time_limit_s: float | None = None
    details: bool = True
    variants: tuple = ()


def run_task(task: Task) -> tuple[tuple, object]:
    """Optimise one alternative (pure; safe in a worker process).

    With ``variants`` (pairs of key and the same loop at other prices or
    assumptions) the task returns a dict of their optima instead; variants
    that change only prices reuse the converged flows of one solver.
    """
    if not task.variants:
        return task.key, optimise(task.loop, time_limit_s=task.time_limit_s,
                                  details=task.details)
    solver = LoopLP(task.loop)
    # the base optimum again, in this worker, so that its converged states can be re-priced
    optimise(task.loop, details=False, reuse=solver)
    return task.key, {key: optimise(loop, details=False, reuse=solver,
                                    time_limit_s=task.time_limit_s)
                      for key, loop in task.variants}


def run_tasks(tasks: list[Task], jobs: int = 1, client=None,
              progress: Callable[[int], None] | None = None) -> dict[tuple, Optimum]:
    """Run tasks on the chosen executor; results keyed by task key.

    Parameters
    ----------
    jobs : int
        1 runs in-process; more uses a local process pool of that size.
    client : dask.distributed.Client, optional
        Sends the tasks to a Dask cluster instead.
    progress : callable, optional
        Called with the number of tasks finished since the last call.
    """
    results: dict[tuple, object] = {}
    if client is not None:
        from dask.distributed import as_completed

        futures = client.map(run_task, tasks, pure=False)
        for fut in as_completed(futures):
            key, opt = fut.result()
            results[key] = opt
            if progress:
                progress(1)
    elif jobs > 1 and len(tasks) > 1:
        from concurrent.futures import ProcessPoolExecutor, as_completed

        with ProcessPoolExecutor(max_workers=jobs) as pool:
            for fut in as_completed([pool.submit(run_task, t) for t in tasks]):
                key, opt = fut.result()
                results[key] = opt
                if progress:
                    progress(1)
    else:
        for t in tasks:
            key, opt = run_task(t)
            results[key] = opt
            if progress:
                progress(1)
    return results


# ---------------------------------------------------------------------------
# ranking


def rank(alternatives: list[Alternative]) -> list[Alternative]:
    """Feasible alternatives by TAC, then cost per tonne, then name; the others after, by name."""
    ok = [a for a in alternatives if a.optimum.feasible]
    ok.sort(key=lambda a: (a.optimum.state.tac_per_year,
                           a.optimum.state.cost_per_tonne_product, a.name))
    rest = sorted((a for a in alternatives if not a.optimum.feasible), key=lambda a: a.name)
    for i, a in enumerate(ok):
        a.rank = i + 1
    for a in rest:
        a.rank = None
    return ok + rest


# ---------------------------------------------------------------------------
# price levers


def with_source_prices(loop: Loop, prices: Mapping[str, float]) -> Loop:
    """The loop with new prices for the named sources [currency/kmol]."""
    return dataclasses.replace(loop, prices=dataclasses.replace(
        loop.prices, source_price_per_kmol={**loop.prices.source_price_per_kmol, **prices}))


def _scale_sources(loop: Loop, factor: float) -> Loop:
    return with_source_prices(loop, {name: price * factor for name, price
                                     in loop.prices.source_price_per_kmol.items()})


def _price(loop: Loop, factor: float, **fields) -> Loop:
    changes = {k: getattr(loop.prices, k) * factor for k in fields}
    return dataclasses.replace(loop, prices=dataclasses.replace(loop.prices, **changes))


def _capital(loop: Loop, factor: float) -> Loop:
    p = loop.prices

    def scale(c):
        return None if c is None else dataclasses.replace(c, reference_cost=c.reference_cost
                                                          * factor)

    return dataclasses.replace(loop, prices=dataclasses.replace(
        p, compressor_capital=scale(p.compressor_capital),
        reactor_capital=scale(p.reactor_capital), recovery_capital=scale(p.recovery_capital)))


def _efficiency(loop: Loop, factor: float) -> Loop:
    return dataclasses.replace(loop, recycle_efficiency=min(loop.recycle_efficiency * factor, 1.0),
                               makeup_efficiency=min(loop.makeup_efficiency * factor, 1.0))


def _per_pass(loop: Loop, factor: float) -> Loop:
    reactions = []
    for r in loop.reactions:
        if r.per_pass == "fixed":
            r = dataclasses.replace(r, per_pass_conversion=min(r.per_pass_conversion * factor,
                                                               0.999))
        elif r.per_pass == "equilibrium":
            r = dataclasses.replace(r, approach_to_equilibrium=min(
                r.approach_to_equilibrium * factor, 1.0))
        reactions.append(r)
    return dataclasses.replace(loop, reactions=tuple(reactions))


def _hours(loop: Loop, factor: float) -> Loop:
    return dataclasses.replace(loop, prices=dataclasses.replace(
        loop.prices, hours_per_year=min(loop.prices.hours_per_year * factor, 8784.0)))


#: Sensitivity levers: name -> (label, function(loop, factor) -> loop).
LEVERS: dict[str, tuple[str, Callable[[Loop, float], Loop]]] = {
    "makeup_gas_price": ("Make-up gas and feed prices", _scale_sources),
    "power_price": ("Power price", lambda lp_, f: _price(lp_, f, power_price_per_kwh=1)),
    "fuel_price": ("Fuel value of purge gas", lambda lp_, f: _price(lp_, f, fuel_price_per_gj=1)),
    "catalyst_price": ("Catalyst price",
                       lambda lp_, f: _price(lp_, f, catalyst_price_per_m3=1)),
    "capital_cost": ("Capital cost (all reference costs)", _capital),
    "discount_rate": ("Discount rate", lambda lp_, f: _price(lp_, f, discount_rate=1)),
    "hours_per_year": ("Hours on stream", _hours),
    "compressor_efficiency": ("Compressor efficiencies", _efficiency),
    "per_pass_performance": ("Per-pass conversion or approach to equilibrium", _per_pass),
}


# ---------------------------------------------------------------------------
# break-even


def _grade(alt: Alternative) -> tuple[str, ...]:
    return tuple(s.name for s in alt.loop.makeup_sources)


def _inert_fraction(loop: Loop, source_name: str) -> float:
    src = next(s for s in loop.sources if s.name == source_name)
    return sum(src.composition[c] for c in loop.inerts)


def break_even(alternatives: list[Alternative]) -> list[dict]:
    """Premium at which each purer make-up grade's best alternative ties with the base grade's.

    The base grade is the least pure single-source grade among the feasible
    alternatives.  The premium is found by Brent's method on the price of the
    purer grade, re-optimising its best alternative at each trial price.
    """
    feasible = [a for a in alternatives if a.optimum.feasible and len(_grade(a)) == 1]
    grades = sorted({_grade(a)[0] for a in feasible})
    if len(grades) < 2:
        return []
    purity = {g: _inert_fraction(next(a for a in feasible if _grade(a)[0] == g).loop, g)
              for g in grades}
    base = max(grades, key=lambda g: (purity[g], g))
    best = {g: min((a for a in feasible if _grade(a)[0] == g),
                   key=lambda a: (a.optimum.state.tac_per_year, a.name)) for g in grades}
    target = best[base].optimum.state.tac_per_year
    base_price = best[base].loop.prices.source_price_per_kmol[base]
    out = []
    for g in grades:
        if g == base:
            continue
        alt = best[g]
        solver = LoopLP(alt.loop)

        def gap(price, alt=alt, g=g, solver=solver):
            opt = optimise(with_source_prices(alt.loop, {g: price}), details=False, reuse=solver)
            if not opt.feasible:
                raise RuntimeError(opt.message)
            return opt.state.tac_per_year - target

        flow = alt.optimum.state.sources[g] * alt.loop.prices.hours_per_year
        guess = alt.loop.prices.source_price_per_kmol[g] - gap(
            alt.loop.prices.source_price_per_kmol[g]) / flow
        lo, hi = max(0.0, guess - 0.05 * base_price - 1e-9), guess + 0.05 * base_price + 1e-9
        entry = {"grade": g, "base_grade": base, "alternative": alt.name,
                 "base_alternative": best[base].name, "base_price_per_kmol": base_price,
                 "grade_price_per_kmol": alt.loop.prices.source_price_per_kmol[g]}
        try:
            while gap(lo) > 0 and lo > 0:
                lo = max(0.0, lo - 0.25 * base_price)
            while gap(hi) < 0:
                hi += 0.25 * base_price
            price = brentq(gap, lo, hi, xtol=1e-10 * base_price, rtol=1e-14)
            entry.update(tie_price_per_kmol=price, premium_per_kmol=price - base_price,
                         premium_percent=100.0 * (price - base_price) / base_price,
                         tac_at_tie_per_year=target + gap(price))
        except (RuntimeError, ValueError) as exc:
            entry.update(tie_price_per_kmol=None, premium_per_kmol=None, premium_percent=None,
                         note=f"no tie found: {exc}")
        out.append(entry)
    return out


# ---------------------------------------------------------------------------
# the study


def run_study(case: Case, case_sha256: str, *, jobs: int = 1, client=None,
              sensitivity_alternatives: int = 3, time_limit_s: float | None = None,
              progress: Callable[[str, int, int], None] | None = None) -> StudyResult:
    """Optimise, rank, break-even and sensitivity for every alternative of a case.

    Parameters
    ----------
    progress : callable, optional
        ``progress(stage, done_increment, stage_total)`` for a progress bar.
    """
    alts = [Alternative(name, choices, build_loop(c, name), None)
            for name, choices, c in expand_alternatives(case)]
    tick = (lambda stage, total: (lambda n: progress(stage, n, total))) if progress else (
        lambda stage, total: None)
    tasks = [Task(("base", a.name), a.loop, time_limit_s) for a in alts]
    done = run_tasks(tasks, jobs, client, tick("optimising alternatives", len(tasks)))
    for a in alts:
        a.optimum = done[("base", a.name)]
        a.optimum.name = a.name
    ordered = rank(alts)

    frac = case.economics.sensitivity_fraction
    top = [a for a in ordered if a.rank is not None][:sensitivity_alternatives]
    sens_tasks = [Task(("sensitivity", a.name), a.loop, time_limit_s, False, tuple(
        ((lever, side, a.name), fn(a.loop, 1.0 + sign * frac))
        for lever, (_, fn) in LEVERS.items() for side, sign in (("low", -1.0), ("high", 1.0))))
        for a in top]
    sens = {}
    for part in run_tasks(sens_tasks, jobs, client,
                          tick("sensitivity", len(sens_tasks))).values():
        sens.update(part)
    sensitivity = []
    for lever, (label, _) in LEVERS.items():
        row = {"lever": lever, "label": label, "low_factor": 1.0 - frac,
               "high_factor": 1.0 + frac, "tac": {}}
        for a in top:
            row["tac"][a.name] = {
                "low": _tac(sens[(lever, "low", a.name)]),
                "base": a.optimum.state.tac_per_year,
                "high": _tac(sens[(lever, "high", a.name)])}
        for side in ("low", "high"):
            cands = [(v[side], n) for n, v in row["tac"].items() if v[side] is not None]
            row[f"best_at_{side}"] = min(cands)[1] if cands else None
        row["best_changes"] = any(row[f"best_at_{s}"] != (top[0].name if top else None)
                                  for s in ("low", "high"))
        sensitivity.append(row)
    if progress:
        progress("break-even", 0, 1)
    be = break_even(ordered)
    if progress:
        progress("break-even", 1, 1)
    return StudyResult(
        case_name=case.case.name, case_sha256=case_sha256, tool_version=__version__,
        currency=case.economics.currency,
        created=dt.datetime.now(dt.UTC).replace(microsecond=0).isoformat(),
        alternatives=ordered, break_even=be, sensitivity=sensitivity,
        sensitivity_fraction=frac)


def _tac(opt: Optimum) -> float | None:
    return opt.state.tac_per_year if opt.feasible else None


def study_document(result: StudyResult) -> dict:
    """The study as the JSON contract, plus ranking, break-even and sensitivity."""
    from .output.json_out import alternative_record, document

    records = [alternative_record(a.name, a.loop, a.optimum, a.choices, a.rank)
               for a in result.alternatives]
    return document(result.case_sha256, records, case_name=result.case_name,
                    currency=result.currency, created=result.created,
                    ranking=[a.name for a in result.ranked], break_even=result.break_even,
                    sensitivity=result.sensitivity,
                    sensitivity_fraction=result.sensitivity_fraction)
