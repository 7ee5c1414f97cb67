"""The study: every alternative optimised, ranked, the break-even feed premium and sensitivity.

Each optimisation of one alternative under one set of prices is an
independent task (:func:`run_task`): plain data in, a plain result out.  The
study hands tasks to an executor (in-process by default, a local process pool
with ``jobs > 1``, or a Dask distributed client) and merges results in a fixed
order, whatever order they finish in.

The study's answers are typed records: :class:`BreakEven` for each purer
make-up grade and :class:`SensitivityRow` (with one :class:`Swing` per
alternative) for each lever.  The workbook, the plots and the JSON document
read their attributes.
"""

from __future__ import annotations

import dataclasses
import datetime as dt
import math
from collections.abc import Callable, Mapping
from dataclasses import dataclass, field

from scipy.optimize import brentq

from . import __version__, limits
from .build import build_loop
from .case import MAX_LABEL_CHARS, Case, expand_alternatives
from .executor import map_tasks
from .loop import Loop
from .reduced_space import LoopLP
from .solve import Optimum, evaluate_at, objective, optimise
from .uncertainty import UncertaintyResult, run_uncertainty


@dataclass
class Alternative:
    """One design alternative: its choices, its loop and its optimum."""

    name: str
    choices: dict[str, str]
    loop: Loop
    optimum: Optimum
    rank: int | None = None
    #: Short code, "A1", "A2", ...: the number ``check`` gives the alternative.
    code: str = ""
    #: The alternative in words: the case's own label, or its choices in words.
    label: str = ""
    #: The alternative at the case's present purge fraction (:func:`purgeplan.solve.evaluate_at`).
    present: Optimum | None = None
    #: TAC at each purge fraction of :attr:`StudyResult.grid` [currency/year]; None where
    #: the loop has no feasible state there.
    grid_tac: list[float | None] = field(default_factory=list)
    #: Where the cost curve stops at its low-purge end because a limit binds:
    #: (purge fraction, TAC, limit names); None where it does not stop inside the grid.
    curve_edge: tuple[float, float, tuple[str, ...]] | None = None

    @property
    def title(self) -> str:
        """Code and label, "A5 blend gas, purge to fuel, membrane" (the name without a code)."""
        if not self.code:
            return self.label or self.name
        return f"{self.code} {self.label}" if self.label else self.code


@dataclass(frozen=True)
class BreakEven:
    """The price at which a purer make-up grade's best alternative ties with the base grade's.

    Prices in the case currency per kmol, TAC per year.  Without a tie the
    tie price, the premium and the TAC at the tie are None and ``note`` says why.
    """

    grade: str
    base_grade: str
    alternative: str
    base_alternative: str
    base_price_per_kmol: float
    grade_price_per_kmol: float
    tie_price_per_kmol: float | None
    premium_per_kmol: float | None
    premium_percent: float | None
    tac_at_tie_per_year: float | None
    note: str | None = None


@dataclass(frozen=True)
class Swing:
    """One alternative's TAC with a lever low, at the case value and high [currency/year].

    ``low`` or ``high`` is None where the moved loop has no feasible optimum.
    The applied factors are those the lever really applied to this loop (see
    :meth:`Lever.apply`).
    """

    low: float | None
    base: float
    high: float | None
    low_factor_applied: float
    high_factor_applied: float


@dataclass(frozen=True)
class SensitivityRow:
    """One lever moved down and up with every alternative re-optimised.

    ``low_factor`` and ``high_factor`` are the factors asked for;
    ``low_factor_applied`` and ``high_factor_applied`` the ones really applied
    where a cap cut the move short (of the alternatives in ``tac``, the one
    furthest from the factor asked for), and ``note`` says which cap.
    """

    lever: str
    label: str
    low_factor: float
    high_factor: float
    low_factor_applied: float
    high_factor_applied: float
    tac: dict[str, Swing]
    best_at_low: str | None
    best_at_high: str | None
    best_changes: bool
    note: str | None = None


@dataclass
class StudyResult:
    case_name: str
    case_sha256: str
    tool_version: str
    currency: str
    created: str
    alternatives: list[Alternative]
    break_even: list[BreakEven] = field(default_factory=list)
    sensitivity: list[SensitivityRow] = field(default_factory=list)
    sensitivity_fraction: float = 0.2
    #: The even grid of purge fractions every alternative's TAC is given on [-].
    grid: list[float] = field(default_factory=list)
    #: The price scenarios of the case's [uncertainty] table; None without one.
    uncertainty: UncertaintyResult | None = None

    def by_name(self, name: str | None) -> Alternative | None:
        return next((a for a in self.alternatives if a.name == name), None)

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


@dataclass(frozen=True)
class VariantOptima:
    """The optima of a task's variants (the same loop at other prices or assumptions), by key."""

    optima: dict[tuple, Optimum]


def run_task(task: Task) -> tuple[tuple, Optimum | VariantOptima]:
    """Optimise one alternative (pure; safe in a worker process).

    With ``variants`` (pairs of key and the same loop at other prices or
    assumptions) the task returns their optima as :class:`VariantOptima`
    instead; variants that change only prices reuse the converged flows of
    one solver.
    """
    if not task.variants:
        return task.key, optimise(task.loop, time_limit_s=task.time_limit_s,
                                  details=task.details)
    solver = LoopLP(task.loop)
    # the base optimum again, in this worker: its converged states are re-priced (an LP with
    # no freedom left) or serve as the starting point of each variant's search
    optimise(task.loop, details=False, reuse=solver)
    return task.key, VariantOptima({key: optimise(loop, details=False, reuse=solver,
                                                  time_limit_s=task.time_limit_s)
                                    for key, loop in task.variants})


def run_tasks(tasks: list[Task], jobs: int = 1, client=None,
              progress: Callable[[int], None] | None = None
              ) -> dict[tuple, Optimum | VariantOptima]:
    """Run tasks on the chosen executor; results keyed by task key, in the order of ``tasks``.

    Parameters
    ----------
    jobs : int
        1 runs in-process; more uses a local process pool of that size.
    client : dask.distributed.Client, optional
        Sends the tasks to a Dask cluster instead.
    progress : callable, optional
        Called with the number of tasks finished since the last call.
    """
    results: dict[tuple, Optimum | VariantOptima] = {}
    for _, (key, opt) in map_tasks(run_task, tasks, jobs, client):
        results[key] = opt
        if progress:
            progress(1)
    return {t.key: results[t.key] for t in tasks}


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

#: Longest year on stream: a leap year of 366 days [h/year].
MAX_HOURS_PER_YEAR = 8784.0
#: Highest fixed per-pass conversion a lever may set [-].
MAX_PER_PASS_CONVERSION = 0.999


def with_source_prices(loop: Loop, prices: Mapping[str, float]) -> Loop:
    """The loop with new prices for the named sources [currency/kmol]."""
    return dataclasses.replace(loop, prices=dataclasses.replace(
        loop.prices, source_price_per_kmol={**loop.prices.source_price_per_kmol, **prices}))


def _scale_sources(loop: Loop, factor: float) -> Loop:
    return with_source_prices(loop, {name: price * factor for name, price
                                     in loop.prices.source_price_per_kmol.items()})


def _source_prices(loop: Loop) -> tuple[float, ...]:
    return tuple(loop.prices.source_price_per_kmol.values())


def _price(name: str) -> tuple[Callable[[Loop, float], Loop], Callable[[Loop], tuple]]:
    """Move and reading of one field of :class:`purgeplan.loop.Prices`."""
    def move(loop: Loop, factor: float) -> Loop:
        return dataclasses.replace(loop, prices=dataclasses.replace(
            loop.prices, **{name: getattr(loop.prices, name) * factor}))

    return move, lambda loop: (getattr(loop.prices, name),)


_CAPITALS = ("compressor_capital", "reactor_capital", "recovery_capital",
             "refrigeration_capital")


def _capital(loop: Loop, factor: float) -> Loop:
    def scale(c):
        return None if c is None else dataclasses.replace(c, reference_cost=c.reference_cost
                                                          * factor)

    return dataclasses.replace(loop, prices=dataclasses.replace(
        loop.prices, **{name: scale(getattr(loop.prices, name)) for name in _CAPITALS}))


def _capital_costs(loop: Loop) -> tuple[float, ...]:
    return tuple(c.reference_cost for c in (getattr(loop.prices, n) for n in _CAPITALS)
                 if c is not None)


def _efficiency(loop: Loop, factor: float) -> Loop:
    return dataclasses.replace(loop, recycle_efficiency=min(loop.recycle_efficiency * factor, 1.0),
                               makeup_efficiency=min(loop.makeup_efficiency * factor, 1.0))


def _efficiencies(loop: Loop) -> tuple[float, ...]:
    return loop.recycle_efficiency, loop.makeup_efficiency


def _per_pass(loop: Loop, factor: float) -> Loop:
    reactions = []
    for r in loop.reactions:
        if r.per_pass == "fixed":
            r = dataclasses.replace(r, per_pass_conversion=min(r.per_pass_conversion * factor,
                                                               MAX_PER_PASS_CONVERSION))
        elif r.per_pass == "equilibrium":
            r = dataclasses.replace(r, approach_to_equilibrium=min(
                r.approach_to_equilibrium * factor, 1.0))
        reactions.append(r)
    return dataclasses.replace(loop, reactions=tuple(reactions))


def _per_pass_values(loop: Loop) -> tuple[float, ...]:
    """Fixed per-pass conversions and approaches to equilibrium (a sized reactor has none)."""
    return tuple(r.per_pass_conversion if r.per_pass == "fixed" else r.approach_to_equilibrium
                 for r in loop.reactions if r.per_pass in ("fixed", "equilibrium"))


def _hours(loop: Loop, factor: float) -> Loop:
    return dataclasses.replace(loop, prices=dataclasses.replace(
        loop.prices, hours_per_year=min(loop.prices.hours_per_year * factor,
                                        MAX_HOURS_PER_YEAR)))


@dataclass(frozen=True)
class Lever:
    """One sensitivity lever.

    Attributes
    ----------
    label : str
        The lever in plain words.
    move : callable
        ``move(loop, factor) -> loop``: the loop with the lever's values times ``factor``.
    reading : callable
        ``reading(loop) -> tuple of floats``: the values the lever moves.
    cap : str
        The cap that may cut a move short, in plain words ("" for none).
    """

    label: str
    move: Callable[[Loop, float], Loop]
    reading: Callable[[Loop], tuple[float, ...]]
    cap: str = ""

    def apply(self, loop: Loop, factor: float) -> tuple[Loop, float]:
        """The moved loop and the factor really applied to it.

        The applied factor is measured on the moved loop: of the lever's
        non-zero values, the ratio new / old furthest from ``factor`` (so a
        cap that cuts one value short shows), ``factor`` itself where that
        ratio is within rounding (1e-12 relative) of it; 1.0 when the lever
        has no non-zero value to move in this loop.
        """
        moved = self.move(loop, factor)
        ratios = [new / old for old, new in zip(self.reading(loop), self.reading(moved),
                                                strict=True) if old != 0.0]
        applied = max(ratios, key=lambda r: abs(r - factor), default=1.0)
        # new / old of an uncapped value is the factor up to rounding
        return moved, factor if math.isclose(applied, factor, rel_tol=1e-12) else applied


#: Sensitivity levers by name.
LEVERS: dict[str, Lever] = {
    "makeup_gas_price": Lever("Make-up gas and feed prices", _scale_sources, _source_prices),
    "power_price": Lever("Power price", *_price("power_price_per_kwh")),
    "fuel_price": Lever("Fuel value of purge gas", *_price("fuel_price_per_gj")),
    "catalyst_price": Lever("Catalyst price", *_price("catalyst_price_per_m3")),
    "capital_cost": Lever("Capital cost (all reference costs)", _capital, _capital_costs),
    "discount_rate": Lever("Discount rate", *_price("discount_rate")),
    "hours_per_year": Lever("Hours on stream", _hours, lambda lp_: (lp_.prices.hours_per_year,),
                            f"hours on stream at most {MAX_HOURS_PER_YEAR:g} h/year"),
    "compressor_efficiency": Lever("Compressor efficiencies", _efficiency, _efficiencies,
                                   "compressor efficiencies at most 1"),
    "per_pass_performance": Lever("Per-pass conversion or approach to equilibrium", _per_pass,
                                  _per_pass_values,
                                  f"per-pass conversion at most {MAX_PER_PASS_CONVERSION:g}, "
                                  "approach to equilibrium at most 1"),
}


# ---------------------------------------------------------------------------
# sensitivity


def _tac(opt: Optimum) -> float | None:
    return opt.state.tac_per_year if opt.feasible else None


def _furthest(factors, asked: float) -> float:
    return max(factors, key=lambda f: abs(f - asked), default=asked)


def _factor_text(f: float) -> str:
    return f"{f:.4g}"


def run_sensitivity(alternatives: list[Alternative], fraction: float, *, jobs: int = 1,
                    client=None, time_limit_s: float | None = None,
                    progress: Callable[[int], None] | None = None) -> list[SensitivityRow]:
    """Each lever of :data:`LEVERS` at ``1 - fraction`` and ``1 + fraction``, re-optimised.

    ``alternatives`` are optimised, feasible alternatives, the best first; one
    task per alternative carries all of its moved loops.
    """
    sides = (("low", 1.0 - fraction), ("high", 1.0 + fraction))
    moved = {(lever, side, a.name): LEVERS[lever].apply(a.loop, factor)
             for a in alternatives for lever in LEVERS for side, factor in sides}
    tasks = [Task(("sensitivity", a.name), a.loop, time_limit_s, False, tuple(
        ((lever, side, a.name), moved[(lever, side, a.name)][0])
        for lever in LEVERS for side, _ in sides)) for a in alternatives]
    optima: dict[tuple, Optimum] = {}
    for part in run_tasks(tasks, jobs, client, progress).values():
        optima.update(part.optima)
    first = alternatives[0].name if alternatives else None
    rows = []
    for lever, spec in LEVERS.items():
        tac = {a.name: Swing(low=_tac(optima[(lever, "low", a.name)]),
                             base=a.optimum.state.tac_per_year,
                             high=_tac(optima[(lever, "high", a.name)]),
                             low_factor_applied=moved[(lever, "low", a.name)][1],
                             high_factor_applied=moved[(lever, "high", a.name)][1])
               for a in alternatives}
        best = {}
        for side in ("low", "high"):
            cands = [(getattr(s, side), n) for n, s in tac.items() if getattr(s, side) is not None]
            best[side] = min(cands)[1] if cands else None
        applied = {side: _furthest([getattr(s, f"{side}_factor_applied") for s in tac.values()],
                                   factor) for side, factor in sides}
        cut = [f"{side} factor applied {_factor_text(applied[side])}, not "
               f"{_factor_text(factor)}" for side, factor in sides if applied[side] != factor]
        note = None
        if cut:
            note = (f"{spec.cap}: " if spec.cap else "") + "; ".join(cut)
        rows.append(SensitivityRow(
            lever=lever, label=spec.label, low_factor=sides[0][1], high_factor=sides[1][1],
            low_factor_applied=applied["low"], high_factor_applied=applied["high"], tac=tac,
            best_at_low=best["low"], best_at_high=best["high"],
            best_changes=any(best[s] != first for s in ("low", "high")), note=note))
    return rows


# ---------------------------------------------------------------------------
# break-even


def _grade(alt: Alternative) -> tuple[str, ...]:
    return tuple(s.name for s in alt.loop.makeup_sources)


def _inert_fraction(loop: Loop, source_name: str) -> float:
    src = next(s for s in loop.sources if s.name == source_name)
    return sum(src.composition[c] for c in loop.inerts)


def break_even(alternatives: list[Alternative]) -> list[BreakEven]:
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

        grade_price = alt.loop.prices.source_price_per_kmol[g]
        flow = alt.optimum.state.sources[g] * alt.loop.prices.hours_per_year
        guess = grade_price - gap(grade_price) / flow
        lo, hi = max(0.0, guess - 0.05 * base_price - 1e-9), guess + 0.05 * base_price + 1e-9
        common = dict(grade=g, base_grade=base, alternative=alt.name,
                      base_alternative=best[base].name, base_price_per_kmol=base_price,
                      grade_price_per_kmol=grade_price)
        try:
            while gap(lo) > 0 and lo > 0:
                lo = max(0.0, lo - 0.25 * base_price)
            while gap(hi) < 0:
                hi += 0.25 * base_price
            price = brentq(gap, lo, hi, xtol=1e-10 * base_price, rtol=1e-14)
            out.append(BreakEven(**common, tie_price_per_kmol=price,
                                 premium_per_kmol=price - base_price,
                                 premium_percent=100.0 * (price - base_price) / base_price,
                                 tac_at_tie_per_year=target + gap(price)))
        except (RuntimeError, ValueError) as exc:
            out.append(BreakEven(**common, tie_price_per_kmol=None, premium_per_kmol=None,
                                 premium_percent=None, tac_at_tie_per_year=None,
                                 note=f"no tie found: {exc}"))
    return out


# ---------------------------------------------------------------------------
# labels


def _number_text(value) -> str:
    return f"{value:g}" if isinstance(value, int | float) else str(value)


def choice_words(option: str, choice: str, patch: Mapping) -> str:
    """One option choice in words, from what its patch of the case changes.

    A make-up grade reads "standard gas", a purge destination "purge to fuel",
    a recovery unit its name (or "no recovery"), a loop pressure "150 bar";
    any other choice reads as its option and choice, "power dear".
    """
    words = []
    if "makeup_sources" in patch:
        words.append(f"{choice} gas")
    purge = patch.get("purge") if isinstance(patch.get("purge"), Mapping) else {}
    if "destination" in purge:
        words.append(f"purge to {purge['destination']}")
    if "recovery" in purge:
        words.append("no recovery" if purge["recovery"] == "none" else str(purge["recovery"]))
    loop = patch.get("loop") if isinstance(patch.get("loop"), Mapping) else {}
    if "pressure_bar" in loop:
        words.append(f"{_number_text(loop['pressure_bar'])} bar")
    return ", ".join(words) or f"{option.replace('_', ' ')} {choice}"


def alternative_labels(case: Case, named: list[tuple[str, dict[str, str]]]
                       ) -> list[tuple[str, str]]:
    """Code ("A1", "A2", ... in the order given) and label in words of each alternative.

    The label is the case's own (``alternatives[].label``, or the name the
    case gives an alternative where it fits in :data:`MAX_LABEL_CHARS`), else
    the choices in words in option order (:func:`choice_words`), else the
    name (the base case of a case without options).
    """
    own = {a.name: a.label or (a.name if len(a.name) <= MAX_LABEL_CHARS else None)
           for a in case.alternatives}
    own = {name: label for name, label in own.items() if label}
    out = []
    for i, (name, choices) in enumerate(named, start=1):
        words = own.get(name) or ", ".join(
            choice_words(o, choices[o], case.options.get(o, {}).get(choices[o], {}))
            for o in sorted(choices)) or name
        out.append((f"A{i}", words))
    return out


# ---------------------------------------------------------------------------
# the present operation and the cost curves on one grid

#: Points of the even grid of purge fractions the cost curves are given on.
GRID_POINTS = 28
_NICE_STEPS = (1.0, 2.0, 2.5, 5.0, 10.0)


def purge_grid(optima: list[float], lo: float, hi: float, points: int = GRID_POINTS
               ) -> list[float]:
    """An even grid of purge fractions with a round step, reaching twice the largest optimum.

    The step is the smallest of 1, 2, 2.5 or 5 times a power of ten that
    covers twice the largest optimum in ``points`` steps; the grid runs from
    one step up to that, kept inside the allowed box [lo, hi].
    """
    top = 2.0 * max(optima)
    raw = top / points
    power = 10.0 ** math.floor(math.log10(raw))
    step = next(m * power for m in _NICE_STEPS if m * power >= raw * (1 - 1e-12))
    grid = [round(k * step, 12) for k in range(1, points + 1)]
    return [a for a in grid if lo <= a <= hi] or [min(max(top / 2, lo), hi)]


def cost_on_grid(alt: Alternative, grid: list[float]) -> None:
    """The alternative's TAC on the grid, and where its curve stops at the low-purge end.

    Between the first feasible grid point (or the optimum, where that comes
    first) and the infeasible grid point below it the edge is found by
    bisection to a relative 1e-4; its limit is the one nearest its bound
    there (:func:`purgeplan.limits.margin`), none where the loop has no
    steady state beyond the edge.
    """
    solver = LoopLP(alt.loop)
    f, _ = objective(alt.loop, solver, 1e-6)
    alt.grid_tac = [v if math.isfinite(v) else None for v in map(f, grid)]
    alt.curve_edge = None
    first = next((k for k, v in enumerate(alt.grid_tac) if v is not None), len(grid))
    a_opt = alt.optimum.state.purge_fraction
    hi = min(grid[first] if first < len(grid) else a_opt, a_opt)
    lower = [a for a in grid if a < hi]
    if not lower or alt.grid_tac[grid.index(lower[-1])] is not None:
        return
    lo = lower[-1]
    top = f(hi)
    if not math.isfinite(top):  # this solver, started afresh, finds no state there: the
        # optimiser's, reached from its neighbours, stands (the loop has more than one)
        hi, top = a_opt, alt.optimum.state.tac_per_year
    while hi - lo > 1e-4 * hi:
        mid = 0.5 * (lo + hi)
        value = f(mid)
        if math.isfinite(value):
            hi, top = mid, value
        else:
            lo = mid
    state = solver.evaluate(hi)
    # a ratio held between equal bounds binds everywhere; it does not end the curve
    bind = set(alt.optimum.binding_constraints)
    held = {n for n in bind for one, other in (("_min:", "_max:"), ("_max:", "_min:"))
            if n.startswith("inlet_ratio" + one) and n.replace(one, other, 1) in bind}
    candidates = [lim for lim in solver.limits if lim.name not in held]
    near = max(candidates, key=lambda lim: limits.margin(lim, state.quantities),
               default=None) if state is not None else None
    alt.curve_edge = (hi, top, (near.name,) if near is not None else ())


def present_operation(alt: Alternative) -> Optimum:
    """The alternative at the case's present purge fraction (``loop.purge_fraction``)."""
    return evaluate_at(alt.loop, alt.loop.purge_fraction)


# ---------------------------------------------------------------------------
# the decision in words


def recommendation(study: StudyResult) -> str:
    """The decision in one sentence, at the case prices.

    The best alternative, its purge fraction and inert setpoint, its TAC,
    and what it saves against the runner-up and against running it at the
    case's present purge fraction.
    """
    best = study.best
    cur = study.currency
    if best is None:
        return "No alternative meets the specification; the reason is given for each."
    s = best.optimum.state
    text = (f"Recommendation: {best.title}, purging {100 * s.purge_fraction:.3f} % of the "
            f"separator vapour (inert setpoint {100 * s.inert_fraction_reactor_inlet:.2f} % at "
            f"the reactor inlet); TAC {s.tac_per_year:,.0f} {cur}/year")
    ranked = study.ranked
    if len(ranked) > 1:
        other = ranked[1]
        text += (f", {other.optimum.state.tac_per_year - s.tac_per_year:,.0f} {cur}/year less "
                 f"than the runner-up {other.title}")
    present = best.present
    a0 = best.loop.purge_fraction
    if present is not None and present.state is not None:
        saving = present.state.tac_per_year - s.tac_per_year
        text += (f", and {abs(saving):,.0f} {cur}/year {'less' if saving >= 0 else 'more'} "
                 f"than running it at the present purge fraction {100 * a0:.2f} %")
        if not present.feasible:
            text += " (which breaks a limit)"
    elif present is not None:
        text += f"; at the present purge fraction {100 * a0:.2f} % it has no steady state"
    return text + "."


def break_even_words(be: BreakEven, currency: str) -> str:
    """The break-even premium in plain words: below what premium the purer grade pays, and
    whether it pays at the quoted premium."""
    quoted = be.grade_price_per_kmol - be.base_price_per_kmol
    if be.premium_per_kmol is None:
        return f"{be.grade} against {be.base_grade}: {be.note}"
    x = be.premium_per_kmol
    text = (f"{be.grade} ties with {be.base_grade} at a premium of {x:.4f} {currency}/kmol "
            f"({be.premium_percent:.2f} % of the base price): ")
    if x < 0:
        text += (f"the break-even premium is negative, so {be.grade} loses even at the price of "
                 f"{be.base_grade}; ")
    else:
        text += (f"{be.grade} pays if its premium over {be.base_grade} is below {x:.4f} "
                 f"{currency}/kmol; ")
    pays = quoted < x
    return text + (f"the quoted premium is {quoted:.4f} {currency}/kmol, so {be.grade} "
                   f"{'pays' if pays else 'does not pay'}.")


def levers_changing_best(study: StudyResult) -> list[str]:
    """The sensitivity moves that change the best alternative, in plain words."""
    out = []
    for row in study.sensitivity:
        for side, factor, best in (("low", row.low_factor_applied, row.best_at_low),
                                   ("high", row.high_factor_applied, row.best_at_high)):
            first = study.best.name if study.best is not None else None
            if best is None or best == first:
                continue
            alt = study.by_name(best)
            out.append(f"{row.label} x{factor:.4g} ({side}): the best becomes "
                       f"{alt.title if alt is not None else best}")
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
    expanded = expand_alternatives(case)
    codes = alternative_labels(case, [(name, choices) for name, choices, _ in expanded])
    alts = [Alternative(name, choices, build_loop(c, name), None, code=code, label=label)
            for (name, choices, c), (code, label) in zip(expanded, codes, strict=True)]
    tick = (lambda stage, total: (lambda n: progress(stage, n, total))) if progress else (
        lambda stage, total: None)
    tasks = [Task(("base", a.name), a.loop, time_limit_s) for a in alts]
    done = run_tasks(tasks, jobs, client, tick("optimizing alternatives", len(tasks)))
    for a in alts:
        a.optimum = done[("base", a.name)]
        a.optimum.name = a.name
    ordered = rank(alts)

    frac = case.economics.sensitivity_fraction
    top = [a for a in ordered if a.rank is not None][:sensitivity_alternatives]
    sensitivity = run_sensitivity(top, frac, jobs=jobs, client=client,
                                  time_limit_s=time_limit_s,
                                  progress=tick("sensitivity", len(top)))
    if progress:
        progress("break-even", 0, 1)
    be = break_even(ordered)
    if progress:
        progress("break-even", 1, 1)
    for a in ordered:
        a.present = present_operation(a)
    feasible = [a for a in ordered if a.optimum.feasible]
    grid = purge_grid([a.optimum.state.purge_fraction for a in feasible],
                      min(a.loop.purge_fraction_min for a in feasible),
                      max(a.loop.purge_fraction_max for a in feasible)) if feasible else []
    for a in feasible:
        cost_on_grid(a, grid)
    scenarios = None
    if case.uncertainty is not None:
        scenarios = run_uncertainty(case, [(a.name, a.loop) for a in feasible],
                                    ordered[0].name if feasible else None, jobs=jobs,
                                    client=client, progress=progress)
        if scenarios.interrupted:  # nothing partial is written: stop as Ctrl-C does
            raise KeyboardInterrupt
    return StudyResult(
        case_name=case.case.name, case_sha256=case_sha256, tool_version=__version__,
        currency=case.economics.currency,
        created=dt.datetime.now(dt.UTC).replace(microsecond=0).isoformat(),
        alternatives=ordered, break_even=be, sensitivity=sensitivity,
        sensitivity_fraction=frac, grid=grid, uncertainty=scenarios)
