"""Decisions under price uncertainty: every alternative re-optimised in every price scenario.

The case's ``[uncertainty]`` table gives a distribution for prices and
economic inputs (:mod:`purgeplan.sampling` draws them).  For each
alternative and scenario the purge fraction is optimised again at that
scenario's prices, and the study reports per alternative the probability of
being the best, TAC percentiles, the optimum's percentiles and the expected
regret (the mean extra cost of choosing it against the best in each
scenario), and which input drives the choice.

Two routes, recorded per alternative:

``price-independent states``
    Where the loop's LP has no freedom left and no reactor is sized, prices
    do not move the converged flows: one set of states serves every
    scenario.  The states are converged on a log grid of purge fractions
    over the feasible range (its edges found exactly, as in the search), the
    quantities that carry costs are interpolated between them by cubic
    splines in ln(purge fraction), and each scenario's optimum is found on
    them by golden-section search, all scenarios at once (arrays).  Around
    the scenarios' optima the spline's TAC is checked against converged
    states at the midpoints of the grid; where it errs by more than
    :data:`SPLINE_TOLERANCE` in any scenario, those states join the grid and
    the search runs again, so new states are converged only where an optimum
    needs them.  A corner in the cost quantities (where the purge gas fills
    a fuel sink's capacity) ends one spline and starts the next.
``re-optimised``
    Where prices move the flows (a source blend with freedom, a sized
    reactor), every scenario is a full :func:`purgeplan.solve.optimise` of
    the loop at its prices.

Tasks are plain data and run in-process, on a process pool or on a Dask
cluster (:mod:`purgeplan.executor`).
"""

from __future__ import annotations

import dataclasses
import math
import time
from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass, field

import numpy as np

from . import costs
from .case import Case, correlation_matrix
from .errors import SolverFailure
from .executor import map_tasks
from .loop import Loop
from .reduced_space import LoopLP
from .sampling import Distribution, SobolIndices, scenario_values, sobol_indices, sobol_plan
from .search import feasibility_edge
from .solve import optimise

ROUTE_STATES = "price-independent states"
ROUTE_REOPTIMISED = "re-optimized"

#: Log-spaced purge fractions at which the price-independent states are converged first.
GRID_POINTS = 48
#: Rounds of grid refinement around the optima at most.
MAX_ROUNDS = 12
#: Relative TAC error of the spline search, checked on converged states, above which
#: the grid is refined [-].
SPLINE_TOLERANCE = 1e-9
#: Golden-section steps: the bracket shrinks by 0.618 each, to 1e-9 of a grid step.
GOLDEN_STEPS = 44
#: Scenarios per task on the re-optimised route.
CHUNK = 25
#: Relative tolerance of edges and searches, as in :func:`purgeplan.solve.optimise`.
XTOL_REL = 1e-6


# ---------------------------------------------------------------------------
# inputs


@dataclass(frozen=True)
class UncertainInput:
    """One uncertain input: its case key path and distribution."""

    path: str
    distribution: Distribution


def uncertain_inputs(case: Case) -> list[UncertainInput]:
    """The case's uncertain inputs, in the order given."""
    fields = ("low", "mode", "high", "mean", "standard_deviation", "median", "sigma_log")
    return [UncertainInput(s.input, Distribution(s.distribution,
                                                 **{k: getattr(s, k) for k in fields}))
            for s in case.uncertainty.inputs]


def with_inputs(loop: Loop, values: Mapping[str, float]) -> Loop:
    """The loop with uncertain inputs set, by case key path (see ``[uncertainty]``).

    A source price applies where the loop buys from that source; other paths
    name a field of the loop's prices (``economics.<field>``, or a capital
    item's ``reference_cost``).
    """
    p = loop.prices
    changes: dict = {}
    sources = dict(p.source_price_per_kmol)
    for path, value in values.items():
        parts = path.split(".")
        if parts[0] == "sources":
            if parts[1] in sources:
                sources[parts[1]] = float(value)
        elif len(parts) == 3:
            changes[parts[1]] = dataclasses.replace(getattr(p, parts[1]),
                                                    reference_cost=float(value))
        else:
            changes[parts[1]] = float(value)
    return dataclasses.replace(loop, prices=dataclasses.replace(
        p, source_price_per_kmol=sources, **changes))


def _assumption_keys(loop: Loop, paths: Sequence[str]) -> dict[str, str | None]:
    """The cost assumption each input sets in this loop (None: not used by it).

    Found by moving each input through :func:`with_inputs` and seeing which
    assumption changes, so the two never disagree.
    """
    base = costs.values(costs.assumptions(loop))
    out = {}
    for path in paths:
        moved = costs.values(costs.assumptions(with_inputs(loop, {path: 0.123456789})))
        changed = [k for k in base if moved.get(k) != base[k]]
        out[path] = changed[0] if changed else None
    return out


# ---------------------------------------------------------------------------
# one alternative, many scenarios


@dataclass(frozen=True)
class ScenarioTask:
    """One alternative at a block of scenarios: plain data."""

    key: tuple
    loop: Loop
    paths: tuple[str, ...]
    values: np.ndarray          # (scenarios, inputs)
    route: str


@dataclass(frozen=True)
class ScenarioOptima:
    """One alternative's optimum in each scenario of a block (NaN where infeasible)."""

    tac_per_year: np.ndarray
    purge_fraction: np.ndarray
    inert_fraction: np.ndarray
    states: int = 0             # states converged (price-independent route)


def route_for(loop: Loop) -> str:
    """Which route serves this alternative (see the module docstring)."""
    square = LoopLP(loop).square
    return ROUTE_STATES if square and loop.sized_reaction is None else ROUTE_REOPTIMISED


def run_scenarios(task: ScenarioTask) -> tuple[tuple, ScenarioOptima]:
    """The optimum of one alternative in each scenario of a block (pure; safe in a worker)."""
    if task.route == ROUTE_STATES:
        try:
            return task.key, _on_states(task.loop, task.paths, task.values)
        except SolverFailure:  # the alternative is reported without scenarios, as infeasible
            nan = np.full(len(task.values), np.nan)
            return task.key, ScenarioOptima(nan, nan.copy(), nan.copy())
    n = len(task.values)
    out = [np.full(n, np.nan) for _ in range(3)]
    solver = LoopLP(task.loop)
    optimise(task.loop, details=False, reuse=solver)
    for s in range(n):
        opt = optimise(with_inputs(task.loop, dict(zip(task.paths, task.values[s],
                                                       strict=True))),
                       details=False, reuse=solver)
        if opt.feasible:
            st = opt.state
            out[0][s], out[1][s], out[2][s] = (st.tac_per_year, st.purge_fraction,
                                               st.inert_fraction_reactor_inlet)
    return task.key, ScenarioOptima(*out)


class _Run:
    """A feasible run of purge fractions with its states: splines of the cost quantities."""

    def __init__(self, points: list[float], solver: LoopLP, keys: list[str]):
        from scipy.interpolate import CubicSpline

        self.a = np.array(points)
        self.u = np.log(self.a)
        states = [solver.states[(a, None)] for a in points]
        self.quantities = {k: np.array([st.quantities[k] for st in states]) for k in keys}
        self.inert = np.array([st.inert_fraction_reactor_inlet for st in states])
        if len(points) >= 4:
            self.splines = {k: CubicSpline(self.u, v) for k, v in self.quantities.items()}
            self.inert_spline = CubicSpline(self.u, self.inert)
        else:  # too few states for a cubic: straight lines between them
            self.splines = {k: _Linear(self.u, v) for k, v in self.quantities.items()}
            self.inert_spline = _Linear(self.u, self.inert)


class _Linear:
    def __init__(self, u, v):
        self.u, self.v = u, v

    def __call__(self, x):
        return np.interp(x, self.u, self.v)


def _tac(lines, table, quantities) -> np.ndarray:
    return sum(costs.evaluate(lines, quantities, table).values())


def _search_run(run: _Run, lines, table: dict, n: int) -> tuple[np.ndarray, np.ndarray]:
    """Each scenario's lowest TAC on one run and its ln(purge fraction)."""
    at_states = {k: v[:, None] for k, v in run.quantities.items()}
    grid = np.broadcast_to(_tac(lines, {k: (v[None, :] if np.ndim(v) else v)
                                        for k, v in table.items()}, at_states),
                           (len(run.u), n))
    best = np.argmin(grid, axis=0)
    lo = run.u[np.maximum(best - 1, 0)]
    hi = run.u[np.minimum(best + 1, len(run.u) - 1)]
    g = (math.sqrt(5.0) - 1.0) / 2.0

    def f(x):
        return _tac(lines, table, {k: s(x) for k, s in run.splines.items()})
    c, d = hi - g * (hi - lo), lo + g * (hi - lo)
    fc, fd = f(c), f(d)
    for _ in range(GOLDEN_STEPS):
        left = fc < fd
        hi = np.where(left, d, hi)
        lo = np.where(left, lo, c)
        c_new, d_new = hi - g * (hi - lo), lo + g * (hi - lo)
        # left: the minimum is in [lo, d]; the old c becomes d.  Else in [c, hi]; d becomes c.
        keep_c, keep_d = np.where(left, c_new, d), np.where(left, c, d_new)
        f_new = f(np.where(left, c_new, d_new))
        fd, fc = np.where(left, fc, f_new), np.where(left, f_new, fd)
        c, d = keep_c, keep_d
    u = 0.5 * (lo + hi)
    tac = f(u)
    at_grid = grid[best, np.arange(n)]
    use_grid = at_grid <= tac  # a converged state beats the spline's point
    return np.where(use_grid, at_grid, tac), np.where(use_grid, run.u[best], u)


def _feasible_runs(loop: Loop, solver: LoopLP, extra: Sequence[float]) -> list[list[float]]:
    """Feasible runs of purge fractions: the grid and ``extra``, with each run's exact edges."""
    lo, hi = loop.purge_fraction_min, loop.purge_fraction_max
    points = sorted(set(np.geomspace(lo, hi, GRID_POINTS).tolist()) | set(extra))
    ok = [math.isfinite(solver.tac(a)) for a in points]
    runs, current = [], []
    for i, a in enumerate(points):
        if ok[i]:
            if not current and i > 0:
                current.append(feasibility_edge(solver.tac, solver.margin, a, points[i - 1],
                                                XTOL_REL))
            current.append(a)
        elif current:
            current.append(feasibility_edge(solver.tac, solver.margin, points[i - 1], a,
                                            XTOL_REL))
            runs.append(sorted(set(current)))
            current = []
    if current:
        runs.append(sorted(set(current)))
    return [piece for run in runs for piece in _split_at_fuel_sink(loop, solver, run)]


def _split_at_fuel_sink(loop: Loop, solver: LoopLP, run: list[float]) -> list[list[float]]:
    """A run cut where the purge gas's heat meets the fuel sink's capacity.

    There the fuel credit stops growing with the purge (the rest is flared):
    the cost quantities have a corner, which a spline must not smooth over, so
    the corner (found by Brent's method on the heat) ends one piece and
    starts the next.
    """
    cap = loop.fuel_capacity_gj_h
    if cap is None or loop.destination != "fuel":
        return [run]

    def excess(a: float) -> float:
        solver.tac(a)
        return solver.states[(a, None)].quantities["disposal_heat_gj_h"] - cap

    from scipy.optimize import brentq

    signs = [excess(a) > 0.0 for a in run]
    pieces, piece = [], [run[0]]
    for prev, a, before, after in zip(run, run[1:], signs, signs[1:], strict=False):
        if before != after:
            corner = brentq(excess, prev, a, xtol=1e-12 * a, rtol=1e-14)
            solver.tac(corner)
            pieces.append(piece + [corner])
            piece = [corner]
        piece.append(a)
    pieces.append(piece)
    return [sorted(set(p)) for p in pieces]


def _on_states(loop: Loop, paths: Sequence[str], values: np.ndarray) -> ScenarioOptima:
    """The price-independent route (see the module docstring)."""
    solver = LoopLP(loop)
    lines, base = solver.pricing
    n = len(values)
    keys = _assumption_keys(loop, paths)
    table: dict = dict(base)
    for j, path in enumerate(paths):
        if keys[path] is not None:
            table[keys[path]] = values[:, j]
    quantity_keys = sorted({line.quantity for line in lines})
    extra: list[float] = []
    for _ in range(MAX_ROUNDS):
        runs = [_Run(r, solver, quantity_keys) for r in _feasible_runs(loop, solver, extra)]
        if not runs:
            nan = np.full(n, np.nan)
            return ScenarioOptima(nan, nan.copy(), nan.copy(), len(solver.states))
        found = [_search_run(r, lines, table, n) for r in runs]
        which = np.argmin(np.vstack([t for t, _ in found]), axis=0)
        tac = np.choose(which, [t for t, _ in found])
        u = np.choose(which, [x for _, x in found])
        added = [a for k, run in enumerate(runs)
                 for a in _refine(solver, lines, table, run, u[which == k])]
        if not added:
            break
        extra += added
    inert = np.choose(which, [np.clip(r.inert_spline(u), 0.0, 1.0) for r in runs])
    return ScenarioOptima(tac, np.exp(u), inert, len(solver.states))


def _refine(solver: LoopLP, lines, table: dict, run: _Run, u: np.ndarray) -> list[float]:
    """Midpoints of the intervals around the optima ``u`` where the spline's TAC errs.

    Each interval holding an optimum, and its neighbours (the search's bracket
    spans two), is checked at its midpoint against the converged state there,
    in every scenario; those erring by more than :data:`SPLINE_TOLERANCE` are
    returned, to become grid points.
    """
    if not len(u) or len(run.u) < 4:
        return []
    at = np.clip(np.searchsorted(run.u, u) - 1, 0, len(run.u) - 2)
    near = sorted({j for i in np.unique(at) for j in (i - 1, i, i + 1)
                   if 0 <= j < len(run.u) - 1})
    bad = []
    for j in near:
        mid = 0.5 * (run.u[j] + run.u[j + 1])
        a = float(math.exp(mid))
        if not math.isfinite(solver.tac(a)):
            continue
        exact = _tac(lines, table, solver.states[(a, None)].quantities)
        spline = _tac(lines, table, {k: float(sp(mid)) for k, sp in run.splines.items()})
        if np.max(np.abs(spline - exact) / np.abs(exact)) > SPLINE_TOLERANCE:
            bad.append(a)
    return bad


# ---------------------------------------------------------------------------
# the study of all alternatives


@dataclass(frozen=True)
class AlternativeRisk:
    """One alternative over all scenarios."""

    name: str
    route: str
    probability_best: float
    tac_percentiles: dict[str, float]
    purge_fraction_percentiles: dict[str, float]
    inert_fraction_percentiles: dict[str, float]
    expected_regret: float
    mean_tac: float
    feasible_share: float


@dataclass(frozen=True)
class Driver:
    """How strongly one input moves the choice: Spearman's rank correlation with the gap."""

    input: str
    rank_correlation: float


@dataclass
class UncertaintyResult:
    scenarios: int
    seed: int
    inputs: list[str]
    alternatives: list[AlternativeRisk]
    recommended: str | None
    drivers: list[Driver]
    sobol: SobolIndices | None = None
    finished: int = 0
    interrupted: bool = False
    seconds: float = 0.0
    tac: np.ndarray | None = field(default=None, repr=False)   # (alternatives, scenarios)
    values: np.ndarray | None = field(default=None, repr=False)


PERCENTILES = {"P10": 10.0, "P50": 50.0, "P90": 90.0}


def _percentiles(x: np.ndarray) -> dict[str, float]:
    x = x[np.isfinite(x)]
    if not len(x):
        return dict.fromkeys(PERCENTILES)
    return {k: float(np.percentile(x, q)) for k, q in PERCENTILES.items()}


def summarise(names: list[str], routes: list[str], tac: np.ndarray, purge: np.ndarray,
              inert: np.ndarray, recommended: str | None
              ) -> tuple[list[AlternativeRisk], np.ndarray]:
    """Per-alternative figures from the (alternatives, scenarios) optima; and the choice gap.

    The best alternative of a scenario is the one with the lowest TAC (the
    first in order on a tie).  The gap is the recommended alternative's TAC
    less the lowest of the others, per scenario.
    """
    filled = np.where(np.isfinite(tac), tac, np.inf)
    best = np.argmin(filled, axis=0)
    low = filled[best, np.arange(tac.shape[1])]
    out = []
    for i, name in enumerate(names):
        ok = np.isfinite(tac[i])
        regret = tac[i][ok] - low[ok]
        out.append(AlternativeRisk(
            name=name, route=routes[i], probability_best=float(np.mean(best == i)),
            tac_percentiles=_percentiles(tac[i]), purge_fraction_percentiles=_percentiles(
                purge[i]), inert_fraction_percentiles=_percentiles(inert[i]),
            expected_regret=float(regret.mean()) if ok.any() else math.nan,
            mean_tac=float(tac[i][ok].mean()) if ok.any() else math.nan,
            feasible_share=float(ok.mean())))
    gap = np.full(tac.shape[1], np.nan)
    if recommended in names and len(names) > 1:
        r = names.index(recommended)
        others = np.delete(filled, r, axis=0).min(axis=0)
        gap = filled[r] - others
    return out, gap


def drivers(paths: list[str], values: np.ndarray, gap: np.ndarray) -> list[Driver]:
    """Inputs ranked by the strength of their rank correlation with the choice gap."""
    from scipy.stats import spearmanr

    ok = np.isfinite(gap)
    out = []
    for j, path in enumerate(paths):
        x = values[ok, j]
        rho = (float(spearmanr(x, gap[ok]).statistic)
               if ok.sum() > 2 and np.ptp(x) > 0 and np.ptp(gap[ok]) > 0 else 0.0)
        out.append(Driver(path, rho))
    return sorted(out, key=lambda d: -abs(d.rank_correlation))


def _tasks(loops: list[Loop], routes: list[str], paths: tuple, values: np.ndarray,
           tag: str) -> list[ScenarioTask]:
    """Price-independent alternatives first (one task each), then blocks scenario-major."""
    tasks = [ScenarioTask((tag, i, 0), lp, paths, values, r)
             for i, (lp, r) in enumerate(zip(loops, routes, strict=True)) if r == ROUTE_STATES]
    for start in range(0, len(values), CHUNK):
        tasks += [ScenarioTask((tag, i, start), lp, paths, values[start:start + CHUNK], r)
                  for i, (lp, r) in enumerate(zip(loops, routes, strict=True))
                  if r == ROUTE_REOPTIMISED]
    return tasks


def optima_over(loops: list[Loop], routes: list[str], paths: tuple, values: np.ndarray, *,
                jobs: int = 1, client=None, progress: Callable[[int], None] | None = None,
                tag: str = "scenarios") -> tuple[np.ndarray, np.ndarray, np.ndarray, int, bool]:
    """Every alternative's optimum in every scenario: (tac, purge, inert, finished, interrupted).

    Arrays are (alternatives, scenarios).  On Ctrl-C the scenarios finished
    for every alternative are kept: ``finished`` counts them (from the first).
    """
    n = len(values)
    tac, purge, inert = (np.full((len(loops), n), np.nan) for _ in range(3))
    done = np.zeros((len(loops), n), dtype=bool)
    tasks = _tasks(loops, routes, paths, values, tag)
    interrupted = False
    stream = map_tasks(run_scenarios, tasks, jobs, client)
    try:
        for pos, (_, optima) in stream:
            _, i, start = tasks[pos].key
            block = slice(start, start + len(tasks[pos].values))
            tac[i, block], purge[i, block] = optima.tac_per_year, optima.purge_fraction
            inert[i, block] = optima.inert_fraction
            done[i, block] = True
            if progress:
                progress(len(tasks[pos].values))
    except KeyboardInterrupt:
        interrupted = True
        stream.close()
    complete = done.all(axis=0)
    finished = n if complete.all() else int(np.argmin(complete))
    return tac, purge, inert, finished, interrupted


def run_uncertainty(case: Case, alternatives: list[tuple[str, Loop]],
                    recommended: str | None = None, *, jobs: int = 1, client=None,
                    progress: Callable[[str, int, int], None] | None = None
                    ) -> UncertaintyResult:
    """The ``[uncertainty]`` study of a case's alternatives.

    Parameters
    ----------
    alternatives : list of (name, loop)
    recommended : str, optional
        The alternative chosen at the case prices; the choice gap and the
        drivers are about it.  Default: the most often best.
    progress : callable, optional
        ``progress(stage, done_increment, stage_total)``.
    """
    t0 = time.perf_counter()
    u = case.uncertainty
    inputs = uncertain_inputs(case)
    paths = tuple(x.path for x in inputs)
    dists = [x.distribution for x in inputs]
    values = scenario_values(dists, u.scenarios, u.seed,
                             correlation_matrix(u) if u.correlations else None)
    names = [n for n, _ in alternatives]
    loops = [lp for _, lp in alternatives]
    routes = [route_for(lp) for lp in loops]
    total = u.scenarios * len(loops)
    tick = (lambda n: progress("price scenarios", n, total)) if progress else None
    tac, purge, inert, finished, interrupted = optima_over(
        loops, routes, paths, values, jobs=jobs, client=client, progress=tick)
    keep = slice(0, finished)
    tac, purge, inert, values = tac[:, keep], purge[:, keep], inert[:, keep], values[keep]
    if recommended is None and finished:
        best = np.argmin(np.where(np.isfinite(tac), tac, np.inf), axis=0)
        recommended = names[int(np.bincount(best, minlength=len(names)).argmax())]
    risks, gap = summarise(names, routes, tac, purge, inert, recommended)
    result = UncertaintyResult(
        scenarios=u.scenarios, seed=u.seed, inputs=list(paths), alternatives=risks,
        recommended=recommended, drivers=drivers(list(paths), values, gap), finished=finished,
        interrupted=interrupted, tac=tac, values=values)
    if u.sobol_samples and not interrupted and len(names) > 1:
        result.sobol = _sobol(loops, routes, names, paths, dists, u.sobol_samples, u.seed,
                              recommended, jobs, client, progress)
        result.interrupted = result.sobol is None
    result.seconds = time.perf_counter() - t0
    return result


def _sobol(loops, routes, names, paths, dists, base_samples, seed, recommended, jobs, client,
           progress) -> SobolIndices | None:
    """Sobol indices of the choice gap on Saltelli's plan (inputs taken as independent)."""
    plan = sobol_plan(dists, base_samples, seed)
    total = len(plan) * len(loops)
    tick = (lambda n: progress("Sobol plan", n, total)) if progress else None
    tac, purge, inert, finished, interrupted = optima_over(
        loops, routes, paths, plan, jobs=jobs, client=client, progress=tick, tag="sobol")
    if interrupted:
        return None
    _, gap = summarise(names, routes, tac, purge, inert, recommended)
    return sobol_indices(list(paths), np.nan_to_num(gap, nan=0.0, posinf=0.0), seed)
