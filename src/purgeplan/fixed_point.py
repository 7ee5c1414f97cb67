"""The inner fixed point: per-pass conversions and recycle work converged at fixed design.

With the purge fraction (and a sized reactor's conversion) fixed, the loop
balances are linear once the state-dependent coefficients of
:mod:`purgeplan.coefficients` are fixed.  :func:`converge` alternates a
linear solve (the direct engine, or HiGHS in the reduced space) with a fresh
evaluation of those coefficients until they stop moving.  An equilibrium
reactor runs at approach x X_eq(inlet composition), found by a secant step on
the residual.  A phase-equilibrium separator splits its feed at K-values and a
vapour-to-liquid ratio V/L fixed for each linear solve (see
:func:`purgeplan.equations.separator_split`); at each iterate of the
conversions V/L is converged by secant steps in ln(V/L), kept inside a
bracket of the root, on the residual ln V/L(flows) - ln V/L, to a thousandth
of the conversions' last residual (an inexact inner solve: tight only as the
conversions settle).  A linear programme that chooses how the loop is fed may
jump between feeds as V/L crosses the ratio where they cost the same: the
residual then changes sign without passing through zero.  There the steady
state is the mixture of the feeds that gives that ratio, and the LP finds it
when it holds V = R L itself: the dual of that row, which changes sign where
the feeds cost the same, is taken to zero by secant steps in ln R, each solve
exact at its R.  Composition-dependent K-values then move to those of the
flows, by successive substitution alongside the conversions.  Each iterate
starts from V/L moved with the conversions as it moved with them over the
last iterate, and with the slope of the last secant step.  Both the direct
engine and the optimiser use this one function.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Mapping
from dataclasses import dataclass

from . import coefficients
from .errors import NoSteadyStateError
from .loop import KELVIN, Loop
from .physics import separation


@dataclass
class SeparatorPoint:
    """A phase-equilibrium separator's split for one linear solve: the liquid share
    ``share[c]`` of each component at ``log_ratio`` ln(V/L) [-], and whether a
    linear programme is to hold V/L there (``held``)."""

    share: dict[str, float]
    log_ratio: float
    held: bool = False


#: A linear solve at fixed conversions, recycle work and separator split (None without
#: a phase-equilibrium separator): flows, extents and source flows, with V/L held also
#: the dual of that row, or None when the solver proves the point infeasible.
LinearSolve = Callable[[dict[int, float], float | None, SeparatorPoint | None], tuple | None]

#: Range kept for ln of a separator's vapour-to-liquid ratio while it converges [-].
VAPOUR_PER_LIQUID_LOG_RANGE = (-30.0, 30.0)


@dataclass
class Converged:
    """A converged inner fixed point."""

    conversion: dict[int, float]
    equilibrium_conversion: dict[int, float]
    recycle_work_kj_kmol: float
    flows: dict[str, dict[str, float]]
    extents: list[float]
    sources: dict[str, float]
    iterations: int
    slopes: dict[int, float]
    #: A phase-equilibrium separator's vapour-to-liquid ratio V/L [-].
    vapour_per_liquid: float | None = None


def initial_conversions(loop: Loop, given: Mapping[int, float] | None = None) -> dict[int, float]:
    """Starting per-pass conversions: fixed and present values, the sized reference, half of
    equilibrium."""
    out = {}
    for i, r in enumerate(loop.reactions):
        if given and i in given:
            out[i] = float(given[i])
        elif r.per_pass in ("fixed", "rate"):
            out[i] = r.per_pass_conversion
        elif r.per_pass == "sized":
            out[i] = r.sizing["reference_conversion"]
        else:
            out[i] = 0.5 * r.approach_to_equilibrium
    return out


def secant_step(history: list, x: float, residual: float, slope: float | None = None,
                bounds: tuple[float, float] = (1e-9, 0.999999)) -> float:
    """Next iterate of residual(x) = 0 by the secant method over the last two points.

    The first step uses ``slope`` (d residual / dx, for instance from a
    neighbouring design point) where given, else the plain fixed-point step
    x + residual(x).  The iterate is kept inside ``bounds``, by default
    (1e-9, 0.999999), the range of a conversion.
    """
    history.append((x, residual))
    if len(history) >= 2 and history[-1][1] != history[-2][1]:
        (x0, g0), (x1, g1) = history[-2], history[-1]
        x = x1 - g1 * (x1 - x0) / (g1 - g0)
    elif slope is not None and slope < 0.0:
        x = x - residual / slope
    else:
        x = x + residual
    return min(max(x, bounds[0]), bounds[1])


def _slope(history: list) -> float | None:
    """d residual / dx from the last two points of a secant history, if known."""
    if len(history) < 2 or history[-1][0] == history[-2][0]:
        return None
    (x0, g0), (x1, g1) = history[-2], history[-1]
    return (g1 - g0) / (x1 - x0)


def converge(loop: Loop, solve: LinearSolve, conversion: Mapping[int, float],
             work_kj_kmol: float | None = None, *, tolerance: float = 1e-13,
             max_iterations: int = 200, work_matters: bool = False,
             slopes: Mapping[int, float] | None = None,
             vapour_per_liquid: float | None = None,
             hold_vapour_per_liquid: bool = False) -> Converged | None:
    """Converge per-pass conversions (and recycle work) at fixed design variables.

    Parameters
    ----------
    loop : Loop
    solve : callable
        ``solve(conversion, work)`` returns ``(flows, extents, sources)`` or
        None when the linear problem is infeasible.
    conversion : mapping
        Starting per-pass conversion of each reaction [-]; fixed and sized
        reactions keep theirs.
    work_kj_kmol : float, optional
        Starting recycle work [kJ/kmol], needed only if ``work_matters``.
    tolerance : float
        On the equilibrium residual and, if ``work_matters``, on the relative
        change of the recycle work.
    work_matters : bool
        Whether the linear solve uses the recycle work (an LP with freedom or a
        recycle power limit); otherwise the work is evaluated on the final flows.
    slopes : mapping, optional
        d(residual)/d(conversion) of each equilibrium reaction for the first
        secant step, as returned in :attr:`Converged.slopes` at a nearby point.
    vapour_per_liquid : float, optional
        Starting vapour-to-liquid ratio of a phase-equilibrium separator [-],
        for instance :attr:`Converged.vapour_per_liquid` at a nearby point.
    hold_vapour_per_liquid : bool
        Whether ``solve`` can hold a phase-equilibrium separator's V/L (a linear
        programme, see :class:`SeparatorPoint`).

    Returns
    -------
    Converged or None
        None when ``solve`` proves the point infeasible.

    Raises
    ------
    NoSteadyStateError
        A stream would carry a negative flow, a fixed or sized conversion lies
        above equilibrium, or the fixed point does not converge.
    """
    x = dict(conversion)
    work = work_kj_kmol
    history: dict[int, list] = {}
    physical_x = None
    too_low: dict[int, float] = {}  # largest conversion seen with no physical steady state
    separator = _Separator(loop, vapour_per_liquid, hold_vapour_per_liquid)
    change = 1.0
    for iteration in range(1, max_iterations + 1):
        try:
            solved = separator.solve(solve, x, work, max(tolerance, 0.001 * change))
        except _SeparatorDiverged as exc:
            if physical_x is None:
                raise NoSteadyStateError(str(exc)) from None
            solved = None, None, None
        if solved is None:
            return None
        flows, extents, sources = solved[:3]
        if flows is None or _negative(flows):
            if physical_x is None:
                raise NoSteadyStateError(_unphysical(flows))
            for i in x:
                if x[i] < physical_x[i]:
                    too_low[i] = max(too_low.get(i, 0.0), x[i])
            # an overshooting iterate: step back towards the last physical one
            x = {i: 0.5 * (x[i] + physical_x[i]) for i in x}
            history.clear()
            separator.step_back()
            continue
        physical_x = dict(x)
        change = separator.moved
        new_work = coefficients.recycle_work_kj_kmol(
            loop, _composition(flows["separator_vapour"]))
        eq_x = coefficients.equilibrium_conversions(loop, flows["reactor_feed"])
        if work_matters:
            change = max(change, 1.0 if work is None
                         else abs(new_work - work) / max(new_work, 1e-12))
        new_x = dict(x)
        for i, xe in eq_x.items():
            r = loop.reactions[i]
            if r.per_pass == "equilibrium":
                residual = r.approach_to_equilibrium * xe - x[i]
                _check_conversion_suffices(loop, i, x[i], residual, too_low.get(i))
                change = max(change, abs(residual))
                new_x[i] = secant_step(history.setdefault(i, []), x[i], residual,
                                       (slopes or {}).get(i))
        if change < tolerance:
            _check_below_equilibrium(loop, x, eq_x)
            known = {i: _slope(h) for i, h in history.items()}
            return Converged(x, eq_x, work if work_matters else new_work, flows, extents,
                             sources, iteration,
                             {i: v for i, v in known.items() if v is not None},
                             separator.ratio)
        x, work = new_x, new_work
    raise NoSteadyStateError("the per-pass conversion did not converge in "
                             f"{max_iterations} fixed-point steps")


#: Relative width below which the gap between the smallest per-pass conversion with a
#: physical steady state and the largest without one counts as closed [-].
SINGULAR_GAP = 0.02


def _check_conversion_suffices(loop: Loop, i: int, x: float, residual: float,
                               too_low: float | None) -> None:
    """Raise if equilibrium allows less conversion than the loop needs at this design.

    The loop makes its product only above a smallest per-pass conversion (below
    it the recycle would have to be infinite).  When the equilibrium target
    lies below the conversion tried (residual < 0) and conversions just below
    it give no physical steady state, there is no steady state at all.
    """
    if too_low is None or residual >= 0.0 or x - too_low > SINGULAR_GAP * x:
        return
    r = loop.reactions[i]
    where = f"at {loop.reactor_temperature_k - KELVIN:g} degC and {loop.pressure_bar:g} bar"
    target = x + residual
    if target <= 0.0:
        raise NoSteadyStateError(
            f"the reactor inlet is already at or beyond the equilibrium of '{r.name}' {where} "
            "(the recycle returns more product than equilibrium allows): no conversion is left")
    raise NoSteadyStateError(
        f"the equilibrium of '{r.name}' allows a per-pass conversion of {r.key_reactant} of "
        f"only {target:.3g} at the reactor inlet {where}, below the {x:.3g} the loop needs "
        "to make its product")


def _check_below_equilibrium(loop: Loop, x: Mapping[int, float],
                             eq_x: Mapping[int, float]) -> None:
    for i, xe in eq_x.items():
        r = loop.reactions[i]
        if r.per_pass != "equilibrium" and x[i] > xe:
            raise NoSteadyStateError(
                f"the per-pass conversion {x[i]:.4g} of '{r.name}' is above its equilibrium "
                f"conversion {xe:.4g} at the reactor inlet")


def _negative(flows) -> list:
    scale = max(1.0, abs(sum(flows["reactor_feed"].values())))
    return [(s, c) for s, fl in flows.items() for c, f in fl.items() if f < -1e-9 * scale]


def _unphysical(flows) -> str:
    s, c = _negative(flows)[0]
    return (f"no physical steady state: stream {s} would carry {flows[s][c]:.4g} kmol/h of {c}"
            + (" (the separator cannot condense the product at this inert level)"
               if s == "liquid_product" else ""))


def _composition(flow: Mapping[str, float]) -> dict[str, float]:
    total = sum(max(f, 0.0) for f in flow.values())
    if total <= 0:
        return {c: 1.0 / len(flow) for c in flow}
    return {c: max(f, 0.0) / total for c, f in flow.items()}


class _Separator:
    """The state-dependent split of a phase-equilibrium separator, converged at fixed
    conversions (see the module docstring); a plain linear solve for a
    split-fraction separator."""

    max_steps = 100

    def __init__(self, loop: Loop, vapour_per_liquid: float | None, can_hold: bool):
        self.active = loop.separator_model != "split_fractions"
        self.loop = loop
        self.can_hold = can_hold
        self.k = coefficients.separator_k_values(loop) if self.active else None
        self.ratio = (vapour_per_liquid or 1.0) if self.active else None
        #: d residual / d ln(V/L) of the last secant step, to start the next [-]; the
        #: residual falls as V/L rises (the vapour grows less than in proportion).
        self.slope: float | None = None
        #: The larger of the V/L residual and the K-values' relative move at the last solve.
        self.moved = 0.0
        #: Conversions and ln(V/L) where V/L was last settled, and the move to there.
        self.settled: tuple[list[float], float] | None = None
        self.move: tuple[list[float], float] | None = None
        #: d dual / d ln R where V/L was last held at a jump [-], to hold it at once next.
        self.tie_slope: float | None = None

    def _predict(self, x: list[float]) -> None:
        """Move V/L with the conversions as it moved with them last (a secant along the
        last move of the conversions)."""
        if self.settled is None or self.move is None:
            return
        dx = [a - b for a, b in zip(x, self.settled[0], strict=True)]
        step, d_log_ratio = self.move
        norm = sum(d * d for d in step)
        if norm > 0.0:
            along = sum(d * e for d, e in zip(dx, step, strict=True)) / norm
            along = min(max(along, -1.0), 1.0)  # no further than the last move
            self.ratio = math.exp(min(max(self.settled[1] + along * d_log_ratio,
                                          VAPOUR_PER_LIQUID_LOG_RANGE[0]),
                                      VAPOUR_PER_LIQUID_LOG_RANGE[1]))

    def _settle(self, x: list[float]) -> None:
        log_ratio = math.log(self.ratio)
        if self.settled is not None:
            self.move = ([a - b for a, b in zip(x, self.settled[0], strict=True)],
                         log_ratio - self.settled[1])
        self.settled = (x, log_ratio)

    def _call(self, solve: LinearSolve, conversion, work, held: bool = False):
        share = {c: separation.liquid_share(k, self.ratio) for c, k in self.k.items()}
        try:
            return solve(conversion, work, SeparatorPoint(share, math.log(self.ratio), held))
        except NoSteadyStateError as exc:
            raise _SeparatorDiverged(str(exc)) from None

    def solve(self, solve: LinearSolve, conversion: dict[int, float], work: float | None,
              tolerance: float):
        """The linear solve with V/L converged to ``tolerance`` at these conversions and
        K-values, which then move to those of its flows; :attr:`moved` is the larger
        of the two moves."""
        if not self.active:
            return solve(conversion, work, None)
        x = [conversion[i] for i in sorted(conversion)]
        self._predict(x)
        done = None
        if self.can_hold and self.tie_slope is not None:  # a jump at the last solve
            done = self._hold(solve, conversion, work, tolerance, *VAPOUR_PER_LIQUID_LOG_RANGE,
                              start=math.log(self.ratio))
            if done is None:
                self.tie_slope = None
        solved, residual = done or self._secant(solve, conversion, work, tolerance)
        if solved is None or _negative(solved[0]):
            return solved
        self._settle(x)
        flows = solved[0]
        k_new = (coefficients.separator_k_values(self.loop, flows["liquid_product"],
                                                 flows["separator_vapour"])
                 if coefficients.separator_k_values_vary(self.loop) else self.k)
        self.moved = max([abs(residual)] + [abs(k_new[c] / k - 1.0) for c, k in self.k.items()])
        self.k = k_new
        return solved

    def _secant(self, solve: LinearSolve, conversion, work, tolerance: float):
        """Secant steps in ln(V/L), held in each solve, inside a bracket of the root; where
        the LP can hold V/L and the root is a jump, :meth:`_hold`.  (solve, residual)."""
        history: list = []
        low, high = VAPOUR_PER_LIQUID_LOG_RANGE  # the bracket of the root in ln(V/L)
        sides: dict[bool, list] = {True: [], False: []}  # (ln V/L, |residual|) either side
        for _ in range(self.max_steps):
            solved = self._call(solve, conversion, work)
            if solved is None or _negative(solved[0]):
                return solved, None
            u = math.log(self.ratio)
            residual = _log_ratio(solved[0]) - u
            if abs(residual) < tolerance:
                return solved, residual
            sides[residual > 0.0].append((u, abs(residual)))
            low, high = (u, high) if residual > 0.0 else (low, u)
            if self.can_hold and _jump(sides[True], sides[False]):
                self.tie_slope = None
                return self._hold(solve, conversion, work, tolerance, low, high)
            if high - low < 1e-12 * max(1.0, abs(u)):
                return solved, residual
            u = secant_step(history, u, residual, self.slope, bounds=(low, high))
            if not low < u < high:  # the secant left the bracket: bisect it
                u = 0.5 * (low + high)
            slope = _slope(history)
            self.slope = slope if slope is not None and slope < 0.0 else self.slope
            self.ratio = math.exp(u)
        raise _SeparatorDiverged("the separator's vapour-to-liquid ratio did not converge "
                                 f"in {self.max_steps} steps")

    def _hold(self, solve: LinearSolve, conversion, work, tolerance: float,
              low: float, high: float, start: float | None = None):
        """The LP holding V = R L, ln R moved until the dual of that row is zero (see the
        module docstring): from the middle of a bracket (low, high) of a jump, or from
        ``start`` with the slope the dual had at the last jump.  Returns (solve,
        residual), (None, None) where the LP proves the loop infeasible, or None where
        the dual keeps one sign to the bracket's edge (no jump here)."""
        u = 0.5 * (low + high) if start is None else start
        last, slope, signs = None, self.tie_slope, set()
        for _ in range(self.max_steps):
            self.ratio = math.exp(u)
            solved = self._call(solve, conversion, work, held=True)
            if solved is None:  # no mixture of the feeds gives this V/L
                if last is None:
                    return (None, None) if start is None else None
                low, high = (low, u) if u > last[0] else (u, high)
                u = 0.5 * (low + high)
                continue
            if _negative(solved[0]):
                return solved, None
            dual = solved[3] if len(solved) > 3 else None
            if not dual:  # the LP meets this V/L unforced: exact as it stands
                return solved, _log_ratio(solved[0]) - u
            # a negative dual: the LP would have more vapour than R L, so the feeds tie above
            low, high = (u, high) if dual < 0.0 else (low, u)
            signs.add(dual > 0.0)
            if last is not None and dual != last[1]:
                slope = (dual - last[1]) / (u - last[0])
            last = (u, dual)
            newton = u - dual / slope if slope and slope > 0.0 else None
            if newton is not None and abs(newton - u) < tolerance:  # the dual's zero
                self.tie_slope = slope
                return solved, _log_ratio(solved[0]) - u
            if high - low < 1e-12 * max(1.0, abs(u)):  # closed on an edge of the bracket
                if start is not None and len(signs) < 2:
                    return None
                return solved, _log_ratio(solved[0]) - u
            u = newton if newton is not None and low < newton < high else 0.5 * (low + high)
        raise _SeparatorDiverged("the separator's vapour-to-liquid ratio did not converge "
                                 f"in {self.max_steps} steps with V/L held")

    def step_back(self) -> None:
        """Back to the V/L settled last, as the conversions step back to theirs."""
        if self.settled is not None:
            self.ratio = math.exp(self.settled[1])
        self.move = None


def _log_ratio(flows) -> float:
    """ln(V/L) of a separator's flows [-]."""
    vapour = sum(flows["separator_vapour"].values())
    liquid = sum(flows["liquid_product"].values())
    return math.log(max(vapour / max(liquid, 1e-300), 1e-300))


def _jump(below: list, above: list) -> bool:
    """Whether the root of the V/L residual bracketed by these solves is a jump.

    It is when, on either side, the line through the last two solves keeps
    |residual| above zero up to the nearest solve across the root (a residual
    smooth in ln(V/L) is close to its secant near the root, so the line from at
    least one side would cross zero inside the bracket); with one solve on a
    side, when the bracket is narrower than a tenth of the smaller residual.
    """
    if not below or not above:
        return False
    if len(below) < 2 or len(above) < 2:
        return 10.0 * (above[-1][0] - below[-1][0]) < min(below[-1][1], above[-1][1])
    return _short(below, above[-1][0]) and _short(above, below[-1][0])


def _short(side: list, other: float) -> bool:
    (u0, r0), (u1, r1) = side[-2], side[-1]
    return u1 != u0 and r1 + (r1 - r0) / (u1 - u0) * (other - u1) > 0.0


class _SeparatorDiverged(Exception):
    """No steady state of the separator at these conversions (the outer loop steps back)."""
