"""The reduced space: one alternative evaluated at fixed design variables.

With the purge fraction a (and a sized reactor's per-pass conversion X)
fixed, the loop model is a linear programme: balances, source blend with
supply limits, limits and costs.  :class:`LoopLP` evaluates it at any (a, X)
in three steps:

1. converge: the inner fixed point of :mod:`purgeplan.fixed_point` on the
   per-pass conversions (and the recycle work where the LP uses it), with the
   limits relaxed while the conversion still moves;
2. enforce the limits: on an LP with no freedom left they are checked on the
   converged state; otherwise the LP is solved again with them in force;
3. refresh the capital tangents: with freedom left, each capital line enters
   the LP as its tangent at the current size, moved to the solution until the
   sizes stop moving (so are a fuel sink's kmol per GJ, the catalyst volume
   per feed of a sized reactor or of one sized by its rate, and whether the
   product condenses in the water cooler).

Route.  An LP with no freedom left (one source per feed group) has a single
feasible point, so it is solved by the direct engine's linear solve
(:mod:`purgeplan.engine`), the same equations as a matrix; an LP with freedom
goes to HiGHS through :mod:`purgeplan.highs_adapter`.  Every state records
its route, and ``route="highs"`` sends every LP to HiGHS.
"""

from __future__ import annotations

import dataclasses
import math
import time

from . import coefficients, costs, limits
from .engine import engine_for
from .errors import NoSteadyStateError, SolverFailure, Status
from .fixed_point import converge, initial_conversions
from .loop import Loop
from .results import LoopState, costing, make_state

#: Relative move of a capital line's size (or of the fuel sink's kmol per GJ) below
#: which its tangent in the LP is not moved: the LP's choice then errs in TAC only at
#: second order in the move, far below the search's tolerance [-].
TANGENT_TOLERANCE = 1e-6

ROUTE_DIRECT = "direct linear solve"
ROUTE_HIGHS = "HiGHS LP"


def _physics(loop: Loop) -> Loop:
    """The loop with prices, efficiencies and names blanked: what fixes the flows."""
    return dataclasses.replace(loop, name="", prices=None, recycle_efficiency=0.0,
                               makeup_efficiency=0.0)


def _lp_constants(loop: Loop) -> tuple:
    """The economic inputs the LP holds as constants: replacement charges' annualisation."""
    table = costs.values(costs.assumptions(loop))
    return (table["discount_rate"],) + tuple(
        table[line.life] for line in costs.cost_lines(loop) if line.kind == "replacement")


class LoopLP:
    """The reduced-space LP of one loop, evaluated at fixed design variables.

    Parameters
    ----------
    loop : Loop
    time_limit_s : float, optional
        Wall-clock budget for everything done with this instance [s].
    solver_options : dict, optional
        Passed to HiGHS (for instance ``{"time_limit": 10}``).
    route : {"auto", "highs"}
        "auto" solves an LP with no freedom left by the direct linear solve
        and the others by HiGHS; "highs" sends every LP to HiGHS.
    """

    tolerance = 1e-10
    max_iterations = 60

    def __init__(self, loop: Loop, time_limit_s: float | None = None,
                 solver_options: dict | None = None, route: str = "auto"):
        self._take(loop)
        self.square = not loop.blend_free
        self.use_highs = route == "highs" or not self.square
        self.states: dict[tuple, LoopState | None] = {}
        self.margins: dict[tuple, float] = {}
        self.reasons: dict[tuple, str] = {}
        self.unlimited: dict[tuple, LoopState] = {}
        self.converged: list[tuple[float, dict]] = []
        self.conversion = initial_conversions(loop)
        #: Equilibrium conversions [-] and reactor inlet [kmol/h] of the state converged
        #: last: a sized or rate-based reactor's LP capital uses them.
        self.equilibrium: dict[int, float] = {}
        self.reactor_inlet: dict[str, float] | None = None
        self.work: float | None = None
        self.slopes: dict[int, float] = {}
        #: A phase-equilibrium separator's V/L at the state converged last [-].
        self.vapour_per_liquid: float | None = None
        self.sizes: dict[str, float] = {}
        self.direct_solves = 0
        self.solver_options = solver_options
        self.lp = None
        self.model = None
        if self.use_highs:
            # Pyomo and HiGHS are imported only by the loops that need them
            from .highs_adapter import PersistentLP
            from .model import build_model

            self.model = build_model(loop)
            self.lp = PersistentLP(self.model, solver_options, time_limit_s)
        self.restart(time_limit_s)

    def _take(self, loop: Loop) -> None:
        """The loop, its costing and its limits (on building, and on re-pricing)."""
        self.loop = loop
        self.pricing = costing(loop)
        self.limits = limits.loop_limits(loop)
        self.state_limits = limits.state_limits(loop)
        #: The state limits not in the LP, checked on each state it gives.
        self.checked_limits = tuple(lim for lim in self.state_limits if not lim.in_model)

    def restart(self, time_limit_s: float | None) -> None:
        """Start a new wall-clock budget."""
        self.started = time.perf_counter()
        self.time_limit_s = time_limit_s
        if self.lp is not None:
            self.lp.restart(time_limit_s)

    @property
    def solves(self) -> int:
        """Linear solves so far, by either route."""
        return self.direct_solves + (self.lp.solves if self.lp is not None else 0)

    @property
    def route(self) -> str:
        return ROUTE_HIGHS if self.use_highs else ROUTE_DIRECT

    # -- the linear solves ---------------------------------------------------
    def _direct(self, purge_fraction: float):
        solve = engine_for(self.loop).linear_solve(purge_fraction)

        def run(conversion, work, point=None):
            self._check_time()
            self.direct_solves += 1
            return solve(conversion, work, point)
        return run

    def _highs(self, purge_fraction: float):
        m = self.model
        m.purge_fraction = purge_fraction

        def run(conversion, work, point=None):
            for i, xi in conversion.items():
                m.conversion[i] = xi
            if point is not None:
                self._set_split(point)
            m.recycle_work_kj_kmol = work
            # the LP's reactor capital at the equilibrium and inlet of the state converged
            # last; the state itself is costed at its own (see _state)
            volume = coefficients.catalyst_volume_per_feed_m3_h_kmol(
                self.loop, conversion, self.equilibrium, self.reactor_inlet)
            if not math.isfinite(volume):  # past the last state's equilibrium: as it was
                volume = m.catalyst_volume_per_feed_m3_h_kmol.value
            if not (math.isfinite(work) and math.isfinite(volume)):
                raise SolverFailure("a coefficient of the LP is not finite (recycle work "
                                    f"{work:g} kJ/kmol, catalyst volume per feed "
                                    f"{volume:g} m3 h/kmol)")
            m.catalyst_volume_per_feed_m3_h_kmol = volume
            if self.lp.solve() is Status.INFEASIBLE:
                return None
            if point is None or not point.held:
                return self._read()
            return (*self._read(), self.lp.row_dual(m.separator_split["vapour_per_liquid"]))
        return run

    def _set_split(self, point) -> None:
        """A phase-equilibrium separator's liquid shares, and V/L held where asked."""
        m = self.model
        for c, share in point.share.items():
            m.liquid_share[c] = share
        m.vapour_per_liquid = math.exp(point.log_ratio)
        m.vapour_per_liquid_held = 1.0 if point.held else 0.0

    def _check_time(self) -> None:
        if self.time_limit_s is not None and \
                time.perf_counter() - self.started > self.time_limit_s:
            raise SolverFailure(f"time limit of {self.time_limit_s:g} s reached",
                                Status.TIME_LIMIT)

    def _read(self):
        m, loop = self.model, self.loop
        flows = {s: {c: max(float(m.flow[s, c].value), 0.0) for c in loop.components}
                 for s in loop.streams}
        extents = [float(m.extent[i].value) for i in m.REACTION]
        sources = {n: max(float(m.source[n].value), 0.0) for n in m.SOURCE}
        return flows, extents, sources

    # -- one evaluation at fixed design variables ----------------------------
    def _predict(self, purge_fraction: float) -> dict:
        """Starting conversions: interpolated in log(a) between converged neighbours."""
        x = dict(self.conversion)
        eq = [i for i, r in enumerate(self.loop.reactions) if r.per_pass == "equilibrium"]
        if len(self.converged) < 2 or not eq:
            return x
        la = math.log(purge_fraction)
        near = sorted(self.converged, key=lambda t: abs(math.log(t[0]) - la))[:2]
        (a0, x0), (a1, x1) = near
        if math.log(a1) == math.log(a0):  # the same point, or apart by rounding only
            return dict(x0)
        w = (la - math.log(a0)) / (math.log(a1) - math.log(a0))
        for i in eq:
            x[i] = min(max(x0[i] + w * (x1[i] - x0[i]), 1e-9), 0.999999)
        return x

    def _state(self, purge_fraction: float, done) -> LoopState:
        loop = self.loop
        return make_state(
            loop, purge_fraction, done.conversion, done.flows, done.extents, done.sources,
            done.recycle_work_kj_kmol,
            coefficients.catalyst_volume_per_feed_m3_h_kmol(
                loop, done.conversion, done.equilibrium_conversion, done.flows["reactor_feed"]),
            done.equilibrium_conversion, self.pricing, balances=False, route=self.route)

    def _converge(self, purge_fraction: float, x: dict) -> LoopState | None:
        """Step 1: the inner fixed point at fixed design variables."""
        work_matters = not self.square or self.loop.max_recycle_power_kw is not None
        if self.use_highs and self.work is None:
            self.work = coefficients.recycle_work_kj_kmol(
                self.loop, self.loop.makeup_sources[0].composition)
        solve = self._highs(purge_fraction) if self.use_highs else self._direct(purge_fraction)
        done = converge(self.loop, solve, x, self.work, tolerance=self.tolerance,
                        max_iterations=self.max_iterations,
                        work_matters=work_matters and self.use_highs, slopes=self.slopes,
                        vapour_per_liquid=self.vapour_per_liquid,
                        hold_vapour_per_liquid=self.use_highs)
        if done is None:
            return None
        self.slopes.update(done.slopes)
        self.vapour_per_liquid = done.vapour_per_liquid
        if work_matters:
            self.work = done.recycle_work_kj_kmol
        return self._state(purge_fraction, done)

    def _keep_checked(self, key: tuple, state: LoopState) -> LoopState | None:
        """Step 2 on an LP with no freedom left: the limits checked on the state."""
        self.unlimited[key] = state
        self.margins[key] = limits.worst_margin(self.state_limits, state.quantities)
        kept = state if self.margins[key] <= limits.FEASIBILITY_TOLERANCE else None
        self.states[key] = kept
        return kept

    def _refresh_capital_tangents(self, state: LoopState) -> bool:
        """Step 3: move each capital tangent to the state's size; True if any moved."""
        lines, table = self.pricing
        moved = False
        for line in lines:
            if line.kind != "capital":
                continue
            size = max(state.quantities[line.quantity],
                       1e-6 * table[f"{line.capital}_reference_size"])
            if abs(size - self.sizes.get(line.key, 0.0)) <= TANGENT_TOLERANCE * size:
                continue
            moved = True
            value = costs.exact_capital(line, size, table)
            self.model.capital_size0[line.key] = size
            self.model.capital_value0[line.key] = value
            self.model.capital_slope[line.key] = table[f"{line.capital}_exponent"] * value / size
            self.sizes[line.key] = size
        return moved

    def _refresh_reactor(self, state: LoopState) -> bool:
        """Step 3 also moves the catalyst volume per feed of a sized reactor, or of one
        sized by its rate, to the state's (at its equilibrium conversion and inlet)."""
        if self.loop.sized_reaction is None and self.loop.rate_reaction is None:
            return False
        self.equilibrium = dict(state.equilibrium_conversion)
        self.reactor_inlet = dict(state.flows["reactor_feed"])
        new = state.catalyst_volume_per_feed_m3_h_kmol
        old = self.model.catalyst_volume_per_feed_m3_h_kmol.value
        return abs(new - old) > TANGENT_TOLERANCE * new

    def _refresh_fuel_sink(self, state: LoopState) -> bool:
        """Step 3 also moves the purge gas's kmol per GJ of a fuel sink with a capacity."""
        if self.loop.fuel_capacity_gj_h is None:
            return False
        q = state.quantities
        kappa = q["disposal_kmol_h"] / q["disposal_heat_gj_h"] if q["disposal_heat_gj_h"] else 0.0
        param = self.model.disposal_kmol_per_gj
        if abs(kappa - param.value) <= TANGENT_TOLERANCE * max(kappa, 1e-300):
            return False
        param.value = kappa
        return True

    def _refresh_water_cooler(self, state: LoopState) -> bool:
        """Step 3 also sets whether the product condenses in the water cooler, from the state."""
        param = getattr(self.model, "water_cooler_condenses", None)
        if param is None:
            return False
        condenses = 1.0 if state.quantities["water_cooler_condensate_kmol_h"] > 0.0 else 0.0
        if condenses == param.value:
            return False
        param.value = condenses
        return True

    def evaluate(self, purge_fraction: float, sized_conversion: float | None = None,
                 enforce_limits: bool = True) -> LoopState | None:
        """Converged state at the design variables, or None if infeasible.

        The reason for an infeasible point with no steady state is kept in
        :attr:`reasons`.  With ``enforce_limits`` False the state of the LP
        with its limits relaxed is returned (for diagnosis).
        """
        key = (purge_fraction, sized_conversion)
        x = self._predict(purge_fraction)
        if sized_conversion is not None:
            x[self.loop.sized_reaction] = sized_conversion
        try:
            state = self._evaluate(key, x, enforce_limits)
        except NoSteadyStateError as exc:
            self.states[key] = None
            self.reasons[key] = str(exc)
            return None
        if state is not None and enforce_limits:
            self.converged.append((purge_fraction, dict(state.conversion)))
            self.conversion.update({i: state.conversion[i]
                                    for i in state.equilibrium_conversion})
        return state

    def _evaluate(self, key: tuple, x: dict, enforce_limits: bool) -> LoopState | None:
        """Steps 1 to 3.  An LP with freedom starts with its limits in force; only if
        that LP is infeasible on the way are they relaxed until the conversion
        settles, then put back in force."""
        purge_fraction = key[0]
        relaxed = self.square or not enforce_limits
        was_relaxed = relaxed
        if self.use_highs:
            self.model.limit_relaxation = 1e15 if relaxed else 0.0
        for _ in range(self.max_iterations):
            state = self._converge(purge_fraction, x)
            if state is None and not was_relaxed:
                self.model.limit_relaxation = 1e15
                relaxed = was_relaxed = True
                continue
            if state is None:
                self.states[key] = None
                return None
            if not enforce_limits:
                return state
            if self.square:
                return self._keep_checked(key, state)
            if (self._refresh_capital_tangents(state) | self._refresh_fuel_sink(state)
                    | self._refresh_reactor(state) | self._refresh_water_cooler(state)):
                x = dict(state.conversion)
                continue
            if relaxed:
                self.model.limit_relaxation = 0.0
                relaxed = False
                x = dict(state.conversion)
                continue
            if limits.violated(self.checked_limits, state.quantities):
                state = None
            self.states[key] = state
            return state
        raise SolverFailure("the capital tangents did not settle in "
                            f"{self.max_iterations} rounds at purge fraction {purge_fraction:.6g}")

    def tac(self, purge_fraction: float, sized_conversion: float | None = None) -> float:
        """TAC at the design variables [currency/year]; inf where infeasible."""
        key = (purge_fraction, sized_conversion)
        state = self.states[key] if key in self.states else self.evaluate(*key)
        return math.inf if state is None else state.tac_per_year

    def margin(self, purge_fraction: float) -> float | None:
        """Worst limit margin at a purge fraction, where known (LP with no freedom left)."""
        return self.margins.get((purge_fraction, None))

    def start_from(self, other: LoopLP) -> None:
        """Take the converged conversions, secant slopes and recycle work of a solver of
        the same alternative as starting points (they change only where to start)."""
        if len(other.loop.reactions) != len(self.loop.reactions):
            return
        self.converged = list(other.converged)
        self.conversion = dict(other.conversion)
        self.slopes = dict(other.slopes)
        self.work = other.work if self.use_highs else None

    # -- other prices on the same physics ------------------------------------
    def can_reprice(self, loop: Loop) -> bool:
        """Whether ``loop`` differs from this one only in prices and efficiencies.

        Then, with no freedom left in the LP, every converged flow stays valid
        and only the costs (and the limit margins) need evaluating again.
        """
        return self.square and _physics(loop) == _physics(self.loop)

    def can_reprice_lp(self, loop: Loop) -> bool:
        """Whether ``loop`` differs from this one only in what the LP takes as parameters.

        That is the same physics, and prices, hours on stream or capital
        inputs that differ (capital enters through tangents the solver sets);
        the annualisation of replacement charges is a constant of the LP.
        """
        return (self.use_highs and _physics(loop) == _physics(self.loop)
                and _lp_constants(loop) == _lp_constants(self.loop))

    def reprice_lp(self, loop: Loop, time_limit_s: float | None = None) -> None:
        """Take the prices of ``loop`` into the LP, keeping its starting points.

        The states found at the old prices are dropped (the LP's choice may
        change with prices); the converged conversions, recycle work and
        secant slopes stay as starting points, and the capital tangents are
        moved to the new capital costs at the next solve.
        """
        if not self.can_reprice_lp(loop):
            raise ValueError("reprice_lp needs the same loop physics on the HiGHS route")
        from .model import price_keys

        self.loop = loop
        self.pricing = costing(loop)
        table = self.pricing[1]
        for key in price_keys(loop):
            self.model.price[key] = table[key]
        self.sizes = {}
        self.states, self.margins, self.reasons, self.unlimited = {}, {}, {}, {}
        self.restart(time_limit_s)

    def reprice(self, loop: Loop, time_limit_s: float | None = None) -> None:
        """Take the prices of ``loop``, re-costing every converged state (see can_reprice)."""
        if not self.can_reprice(loop):
            raise ValueError("reprice needs the same loop physics and an LP with no freedom")
        self._take(loop)
        self.restart(time_limit_s)
        self.states = {}
        for key, st in list(self.unlimited.items()):
            self._keep_checked(key, make_state(
                loop, st.purge_fraction, st.conversion, st.flows, st.extents, st.sources,
                st.recycle_work_kj_kmol, st.catalyst_volume_per_feed_m3_h_kmol,
                st.equilibrium_conversion, self.pricing, balances=False, route=st.route))
        for key in self.reasons:
            self.states[key] = None
