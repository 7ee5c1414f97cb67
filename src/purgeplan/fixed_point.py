"""The inner fixed point: per-pass conversions and recycle work converged at fixed design.

With the purge fraction (and a sized reactor's conversion) fixed, the loop
balances are linear once the state-dependent coefficients of
:mod:`purgeplan.coefficients` are fixed.  :func:`converge` alternates a
linear solve (the direct engine, or HiGHS in the reduced space) with a fresh
evaluation of those coefficients until they stop moving.  An equilibrium
reactor runs at approach x X_eq(inlet composition), found by a secant step on
the residual.  Both the direct engine and the optimiser use this one function.
"""

from __future__ import annotations

from collections.abc import Callable, Mapping
from dataclasses import dataclass

from . import coefficients
from .errors import NoSteadyStateError
from .loop import KELVIN, Loop

#: A linear solve at fixed conversions and recycle work: flows, extents and
#: source flows, or None when the solver proves the point infeasible.
LinearSolve = Callable[[dict[int, float], float | None], tuple | None]


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


def secant_step(history: list, x: float, residual: float, slope: float | None = None) -> float:
    """Next iterate of residual(x) = 0 by the secant method over the last two points.

    The first step uses ``slope`` (d residual / dx, for instance from a
    neighbouring design point) where given, else the plain fixed-point step
    x + residual(x).  The iterate is kept inside (1e-9, 0.999999), the range
    of a conversion.
    """
    history.append((x, residual))
    if len(history) >= 2 and history[-1][1] != history[-2][1]:
        (x0, g0), (x1, g1) = history[-2], history[-1]
        x = x1 - g1 * (x1 - x0) / (g1 - g0)
    elif slope is not None and slope < 0.0:
        x = x - residual / slope
    else:
        x = x + residual
    return min(max(x, 1e-9), 0.999999)


def _slope(history: list) -> float | None:
    """d residual / dx from the last two points of a secant history, if known."""
    if len(history) < 2 or history[-1][0] == history[-2][0]:
        return None
    (x0, g0), (x1, g1) = history[-2], history[-1]
    return (g1 - g0) / (x1 - x0)


def converge(loop: Loop, solve: LinearSolve, conversion: Mapping[int, float],
             work_kj_kmol: float | None = None, *, tolerance: float = 1e-13,
             max_iterations: int = 200, work_matters: bool = False,
             slopes: Mapping[int, float] | None = None) -> Converged | None:
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
    for iteration in range(1, max_iterations + 1):
        solved = solve(x, work)
        if solved is None:
            return None
        flows, extents, sources = solved
        if _negative(flows):
            if physical_x is None:
                raise NoSteadyStateError(_unphysical(flows))
            for i in x:
                if x[i] < physical_x[i]:
                    too_low[i] = max(too_low.get(i, 0.0), x[i])
            # an overshooting iterate: step back towards the last physical one
            x = {i: 0.5 * (x[i] + physical_x[i]) for i in x}
            history.clear()
            continue
        physical_x = dict(x)
        new_work = coefficients.recycle_work_kj_kmol(
            loop, _composition(flows["separator_vapour"]))
        eq_x = coefficients.equilibrium_conversions(loop, flows["reactor_feed"])
        change = 0.0
        if work_matters:
            change = 1.0 if work is None else abs(new_work - work) / max(new_work, 1e-12)
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
                             {i: v for i, v in known.items() if v is not None})
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
