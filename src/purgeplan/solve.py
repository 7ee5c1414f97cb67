"""Solve strategy: the lowest-cost purge fraction of one alternative, and how it was found.

Reduced space (:mod:`purgeplan.reduced_space`): the purge fraction a (and
the per-pass conversion X of a sized reactor) are the complicating
variables; at fixed values of them the loop is a linear programme,
evaluated with its inner fixed point.  The outer search
(:mod:`purgeplan.search`) scans TAC(a) on a log-spaced grid over the allowed
box, finds a feasibility edge next to the best grid point by a root of the
limit margin, and refines the minimum by bounded Brent search; a sized
reactor nests the same search over X inside each evaluation of a.  The
result states the grid, the tolerance, the number of solves and the route
that found the states.  Limits, margins and binding constraints come from
the one table of :mod:`purgeplan.limits`.
"""

from __future__ import annotations

import logging
import math
import time
from collections.abc import Callable
from dataclasses import dataclass, field

from scipy.optimize import brentq

from . import limits
from .engine import steady_state
from .errors import InfeasibleError, NoSteadyStateError, SolverFailure, Status
from .loop import KELVIN, Loop
from .operations import time_to_inert_limit
from .reduced_space import ROUTE_DIRECT, LoopLP
from .results import LoopState, with_balances
from .search import scan_and_refine

log = logging.getLogger(__name__)

#: Points of the log-spaced scan over the purge-fraction box.
SCAN_POINTS = 11
#: Points of the scan over a sized reactor's conversion at each purge fraction.
SIZED_SCAN_POINTS = 9
#: Factor either side of a neighbour's best conversion that bounds the first, narrow
#: search of a sized reactor's conversion [-].
WARM_BOX = 1.25


@dataclass
class SolverInfo:
    """How a result was found: the solver, its status, solves, time, method and route.

    ``route`` is "HiGHS LP" or "direct linear solve" (see
    :mod:`purgeplan.reduced_space`); ``name`` is then "highs" or "lapack".
    """

    name: str = "highs"
    status: str = "optimal"
    solves: int = 0
    seconds: float = 0.0
    method: str = ""
    route: str = ""


@dataclass(frozen=True)
class CurvePoint:
    """One point of the cost curve around the optimum."""

    purge_fraction: float
    tac_per_year: float


@dataclass(frozen=True)
class OffOptimum:
    """What running off the optimum costs [currency/year; purge fractions -].

    None where the point lies outside the allowed purge-fraction box.  The
    band is the range of purge fractions whose TAC is within 1 % of the lowest.
    """

    tac_half_purge_per_year: float | None
    tac_double_purge_per_year: float | None
    band_1pct_purge_fraction: tuple[float, float]


@dataclass
class Optimum:
    """The answer for one alternative."""

    name: str
    feasible: bool
    status: Status
    message: str
    state: LoopState | None
    binding_constraints: list[str]
    curve: list[CurvePoint]
    solver: SolverInfo
    off_optimum: OffOptimum | None = None
    #: Hours from the optimum to the inert limit, "purge_closed" and "recovery_down"
    #: (see :func:`purgeplan.operations.time_to_inert_limit`); empty when infeasible
    #: or when optimised without ``details``.
    time_to_inert_limit_h: dict[str, float | None] = field(default_factory=dict)


def _failed(loop: Loop, info: SolverInfo, status: Status, message: str, t0: float) -> Optimum:
    info.status = status.value
    info.seconds = time.perf_counter() - t0
    return Optimum(loop.name, False, status, message, None, [], [], info)


def _solver_name(solver: LoopLP) -> str:
    return "lapack" if solver.route == ROUTE_DIRECT else "highs"


def _method(loop: Loop, solver: LoopLP, scan_points: int, xtol_rel: float, solves: int) -> str:
    lo, hi = loop.purge_fraction_min, loop.purge_fraction_max
    k = loop.sized_reaction
    text = (f"reduced space: purge fraction scanned at {scan_points} log-spaced points in "
            f"[{lo:g}, {hi:g}], feasibility edges by root finding and bounded Brent refinement "
            f"to a relative tolerance of {xtol_rel:g} in the purge fraction")
    if k is not None:
        lo, hi = loop.reactions[k].conversion_bounds
        text += (f"; per-pass conversion searched the same way in [{lo:g}, {hi:g}] at each "
                 "purge fraction")
    route = ("the LP has no freedom left, so each point is its single feasible solution, found "
             "by the direct linear solve of the loop equations" if solver.route == ROUTE_DIRECT
             else "HiGHS LP at every point")
    return (text + f"; {route} ({solves} solves), inner fixed point on per-pass conversion "
            f"and recycle work to {LoopLP.tolerance:g}")


def optimise(loop: Loop, *, scan_points: int = SCAN_POINTS, xtol_rel: float = 1e-6,
             details: bool = True, time_limit_s: float | None = None,
             solver_options: dict | None = None, reuse: LoopLP | None = None,
             route: str = "auto") -> Optimum:
    """The lowest-cost purge fraction (and conversion, for a sized reactor).

    Parameters
    ----------
    loop : Loop
    scan_points : int
        Log-spaced grid points over the allowed purge-fraction box.
    xtol_rel : float
        Relative tolerance of the refinement in the purge fraction.
    details : bool
        Also report the cost curve, the cost of running off the optimum and
        the hours to the inert limit (sensitivity and break-even runs leave
        them out).
    time_limit_s : float, optional
        Wall-clock limit for this alternative [s]; past it the alternative fails.
    reuse : LoopLP, optional
        A solver of the same alternative at other prices or assumptions: its
        converged states are re-costed instead of solved again where
        :meth:`LoopLP.can_reprice`; on the HiGHS route its LP takes the new
        prices where :meth:`LoopLP.can_reprice_lp`; otherwise it gives the
        starting conversions.
    route : {"auto", "highs"}
        See :class:`purgeplan.reduced_space.LoopLP`.

    Returns
    -------
    Optimum
        Infeasible and failed alternatives carry the reason in ``message``.
    """
    t0 = time.perf_counter()
    info = SolverInfo()
    try:
        pre = _prechecks(loop)
        if pre:
            raise InfeasibleError(pre)
        if reuse is not None and reuse.can_reprice(loop):
            reuse.reprice(loop, time_limit_s)
            solver = reuse
        elif reuse is not None and reuse.can_reprice_lp(loop):
            reuse.reprice_lp(loop, time_limit_s)
            solver = reuse
        else:
            solver = LoopLP(loop, time_limit_s=time_limit_s, solver_options=solver_options,
                            route=route)
            if reuse is not None:
                solver.start_from(reuse)
        solves_before = solver.solves
        f, inner = objective(loop, solver, xtol_rel)
        margin = None if loop.sized_reaction is not None else solver.margin
        a_best, _, samples = scan_and_refine(f, loop.purge_fraction_min,
                                             loop.purge_fraction_max, scan_points, xtol_rel,
                                             margin)
        if a_best is None:
            raise InfeasibleError(_diagnose(loop, solver)[0])
        x_best = None
        if loop.sized_reaction is not None:
            if a_best not in inner:
                f(a_best)
            x_best = inner[a_best]
        state = solver.states.get((a_best, x_best)) or solver.evaluate(a_best, x_best)
        if state is None:
            raise SolverFailure(f"the optimum at purge fraction {a_best:.6g} did not "
                                "re-solve as feasible")
        state = with_balances(loop, state)
        curve = _curve(loop, a_best, samples, f) if details else []
        off = _off_optimum(loop, a_best, state.tac_per_year, f) if details else None
        info.solves = solver.solves - solves_before
        info.seconds = time.perf_counter() - t0
        info.route, info.name = solver.route, _solver_name(solver)
        info.method = _method(loop, solver, scan_points, xtol_rel, info.solves)
        log.debug("%s: optimum at purge fraction %.6g after %d solves in %.3f s", loop.name,
                  state.purge_fraction, info.solves, info.seconds)
        return Optimum(loop.name, True, Status.OPTIMAL, "optimal", state,
                       limits.binding(solver.limits, state.quantities), curve, info, off,
                       time_to_inert_limit(loop, state) if details else {})
    except InfeasibleError as exc:
        return _failed(loop, info, Status.INFEASIBLE, str(exc), t0)
    except SolverFailure as exc:
        return _failed(loop, info, exc.status, str(exc), t0)


def objective(loop: Loop, solver: LoopLP, xtol_rel: float):
    """TAC as a function of the purge fraction, and the best conversion found at each.

    Where a reactor's size is a design variable, its per-pass conversion is
    searched at each purge fraction: first in a narrow box around the best
    conversion of the nearest purge fraction searched so far (the optimum
    moves smoothly with the purge fraction), and over the whole box where the
    minimum is not inside the narrow one (scan and bounded Brent refinement
    in both).
    """
    k = loop.sized_reaction
    inner: dict[float, float] = {}
    if k is None:
        return solver.tac, inner
    lo, hi = loop.reactions[k].conversion_bounds

    def f(a):
        def g(x):
            return solver.tac(a, x)

        def margin(x):
            return solver.margins.get((a, x))
        if inner:
            near = inner[min(inner, key=lambda b: abs(math.log(b / a)))]
            box = (max(lo, near / WARM_BOX), min(hi, near * WARM_BOX))
            x, v, _ = scan_and_refine(g, *box, 3, xtol_rel, margin)
            if x is not None and not any(x == end != bound for end, bound in zip(box, (lo, hi),
                                                                                  strict=True)):
                inner[a] = x
                return v
        x, v, _ = scan_and_refine(g, lo, hi, SIZED_SCAN_POINTS, xtol_rel, margin)
        if x is not None:
            inner[a] = x
        return v
    return f, inner


def evaluate_at(loop: Loop, purge_fraction: float, conversion: float | None = None,
                solver_options: dict | None = None, route: str = "auto") -> Optimum:
    """Steady state and costs at a given purge fraction (the source blend optimised).

    Where the loop has a steady state it is reported with its costs, even
    when a limit is not met; the result is then INFEASIBLE, its message names
    the limits not met and ``binding_constraints`` lists them.  Without a
    steady state the result is INFEASIBLE with the reason and no state.
    """
    t0 = time.perf_counter()
    info = SolverInfo(method=f"LP at the fixed purge fraction {purge_fraction:g}")
    try:
        solver = LoopLP(loop, solver_options=solver_options, route=route)
        state = solver.evaluate(purge_fraction, conversion)
        message, status = "evaluated", Status.OPTIMAL
        if state is None:
            message, state = _diagnose(loop, solver, purge_fraction)
            status = Status.INFEASIBLE
        info.solves = solver.solves
        info.seconds = time.perf_counter() - t0
        info.route, info.name = solver.route, _solver_name(solver)
        info.status = status.value
        if state is None:
            return Optimum(loop.name, False, status, message, None, [], [], info)
        state = with_balances(loop, state)
        return Optimum(loop.name, status is Status.OPTIMAL, status, message, state,
                       limits.binding(solver.limits, state.quantities), [], info)
    except SolverFailure as exc:
        return _failed(loop, info, exc.status, str(exc), t0)


def _curve(loop: Loop, a_best: float, samples, f) -> list[CurvePoint]:
    """TAC against purge fraction from a quarter to four times the optimum.

    The points the search evaluated in that range, plus half and twice the optimum.
    """
    lo = max(loop.purge_fraction_min, a_best / 4.0)
    hi = min(loop.purge_fraction_max, a_best * 4.0)
    points = {a: v for a, v in samples if lo <= a <= hi}
    for a in (a_best / 2.0, a_best * 2.0, lo, hi):
        if loop.purge_fraction_min <= a <= loop.purge_fraction_max and a not in points:
            points[a] = f(a)
    return [CurvePoint(float(a), float(v)) for a, v in sorted(points.items())
            if math.isfinite(v)]


def _off_optimum(loop: Loop, a_best: float, tac_best: float, f) -> OffOptimum:
    """Cost of running off the optimum: TAC at half and twice a*, and the 1 % band."""
    lo, hi = loop.purge_fraction_min, loop.purge_fraction_max
    half = f(a_best / 2) if a_best / 2 >= lo else None
    double = f(a_best * 2) if a_best * 2 <= hi else None
    target = tac_best + 0.01 * abs(tac_best)

    def g(a):
        v = f(a)
        return (v if math.isfinite(v) else 10 * abs(target)) - target

    band = []
    for edge in (lo, hi):
        if g(edge) <= 0:
            band.append(edge)
        else:
            band.append(brentq(g, min(edge, a_best), max(edge, a_best), rtol=1e-4))
    return OffOptimum(half, double, (float(band[0]), float(band[1])))


def _prechecks(loop: Loop) -> str:
    """Reasons a specification cannot be met, found before any solve."""
    y = loop.max_inert_fraction_reactor_inlet
    if y is not None:
        lowest = min(sum(s.composition[c] for c in loop.inerts) for s in loop.makeup_sources)
        if y <= lowest:
            return (f"the inert limit at the reactor inlet ({y:g}) is at or below the inert "
                    f"fraction of the cleanest make-up gas ({lowest:.6g}): no purge can meet it")
    return ""


def _diagnose(loop: Loop, solver: LoopLP,
              purge_fraction: float | None = None) -> tuple[str, LoopState | None]:
    """Why a purge fraction (or every one) is infeasible, with the figures.

    Returns the reason and the state with the limits relaxed (None without a
    steady state).
    """
    a = loop.purge_fraction_max if purge_fraction is None else purge_fraction
    where = (f"at any purge fraction up to {a:g}" if purge_fraction is None
             else f"at the purge fraction {a:g}")
    state = solver.evaluate(a, enforce_limits=False)
    if state is None:
        reason = solver.reasons.get((a, None)) or next(iter(solver.reasons.values()), "")
        if not reason:
            try:
                steady_state(loop, a)
                reason = f"the loop balances cannot be met {where}"
            except NoSteadyStateError as exc:
                reason = str(exc)
        cause = likely_cause(loop)
        return f"{where}: {reason}" + (f"; likely cause: {cause}" if cause else ""), None
    q = state.quantities
    broken = limits.violated(solver.state_limits, q)
    supply = [lim for lim in broken if lim.name.startswith("supply_limit_kmol_h:")]
    reasons = [f"{limits.describe(lim, q)} cannot be met {where}" for lim in broken
               if lim not in supply]
    if supply:
        offered = sum(s.supply_limit_kmol_h for s in loop.sources
                      if s.supply_limit_kmol_h is not None)
        need = sum(q[f"source_kmol_h:{s.name}"] for s in loop.sources)
        if all(s.supply_limit_kmol_h is not None for s in loop.sources) and need > offered:
            reasons.append(f"supply below demand: the loop needs {need:.6g} kmol/h of feed, "
                           f"the sources offer {offered:.6g} kmol/h")
        else:
            reasons += [f"{limits.describe(lim, q)} cannot be met {where}" for lim in supply]
    return "; ".join(reasons) or f"the limits cannot all be met together {where}", state


#: Converters of synthesis loops run between about 200 and 550 degC (ammonia 400 to 500,
#: methanol 220 to 280; common practice): hotter suggests a temperature in kelvin.
HOTTEST_USUAL_REACTOR_C = 600.0


def likely_cause(loop: Loop) -> str:
    """The likely cause of a loop with no steady state, where one can be named, or "".

    A reactant that no source carries and no reaction makes; or a reactor
    far hotter than synthesis converters run (a temperature in kelvin where
    degrees Celsius are meant).
    """
    fed = {c for s in loop.sources for c, y in s.composition.items() if y > 0.0}
    made = {c for r in loop.reactions for c, nu in r.stoichiometry.items() if nu > 0.0}
    for r in loop.reactions:
        missing = sorted(c for c, nu in r.stoichiometry.items()
                         if nu < 0.0 and c not in fed | made)
        if missing:
            return (f"no source carries {', '.join(missing)}, a reactant of '{r.name}', and "
                    "no reaction makes it")
    t_c = loop.reactor_temperature_k - KELVIN
    if t_c > HOTTEST_USUAL_REACTOR_C:
        return (f"reactor.temperature_c = {t_c:g} is hotter than synthesis converters run "
                "(about 200 to 550 degC); is it in kelvin? The key takes degrees Celsius")
    return ""


def solve_exact_with(loop: Loop, solver_name: str = "scip_direct",
                     exact_coefficients: Callable | None = None, **options):
    """The same model with the purge fraction free and exact capital, for a global solver.

    Used by the tests to check the reduced-space answer; returns (a, TAC,
    results, the reduced-space optimum).  The recycle work and volume
    coefficients (and a fuel sink's kmol per GJ, whether the product
    condenses in the water cooler, a phase-equilibrium separator's liquid
    shares) are taken converged from the reduced-space solution at the same
    alternative's optimum, except those ``exact_coefficients`` states as
    expressions of the model (see :func:`purgeplan.model.build_model`).
    """
    import pyomo.environ as pyo

    from .coefficients import separator_liquid_shares
    from .model import build_model

    opt = optimise(loop)
    if not opt.feasible:
        raise InfeasibleError(opt.message)
    m = build_model(loop, capital="exact", design="free", exact_coefficients=exact_coefficients)
    m.recycle_work_kj_kmol = opt.state.recycle_work_kj_kmol
    m.catalyst_volume_per_feed_m3_h_kmol = opt.state.catalyst_volume_per_feed_m3_h_kmol
    if loop.fuel_capacity_gj_h is not None:  # the purge gas's kmol per GJ at the optimum
        q = opt.state.quantities
        m.disposal_kmol_per_gj = q["disposal_kmol_h"] / q["disposal_heat_gj_h"]
    if hasattr(m, "water_cooler_condenses"):  # condensing in the water cooler at the optimum
        m.water_cooler_condenses = float(opt.state.quantities["water_cooler_condensate_kmol_h"] > 0)
    if loop.separator_model != "split_fractions":
        flows = opt.state.flows
        for c, share in separator_liquid_shares(loop, flows["liquid_product"],
                                                flows["separator_vapour"]).items():
            m.liquid_share[c] = share
    for i, x in opt.state.conversion.items():
        m.conversion[i].fix(x)
    m.purge_fraction.unfix()
    solver = pyo.SolverFactory(solver_name)
    for k, v in options.items():
        solver.options[k] = v
    results = solver.solve(m)
    return float(m.purge_fraction.value), float(pyo.value(m.tac)), results, opt
