"""Solve strategy: the lowest-cost purge fraction of one alternative.

Reduced space.  The purge fraction a (and the per-pass conversion X of a
sized reactor) are the complicating variables.  With them fixed the model is
a linear programme (balances, source blend with supply limits, limits,
costs), solved by HiGHS through Pyomo's persistent interface; the state
dependent coefficients (equilibrium conversion, recycle work, capital
tangents) are converged by an inner fixed point with secant acceleration.

Outer search.  TAC(a) is scanned on a log-spaced grid over the allowed box;
around the best grid point the feasibility edge (where a limit starts to
bind) is found as a root of the limit margin by Brent's method (bisection
where the LP still has freedom), and the minimum by bounded Brent refinement.
A sized reactor nests the same search over X inside each evaluation of a.
The result states the grid, the refinement tolerance and the number of solves.

Re-solves push the changed fixed values and parameters through the
persistent interface's ``update()`` and run the same HiGHS instance.
"""

from __future__ import annotations

import dataclasses
import enum
import logging
import math
import time
from dataclasses import dataclass, field

import numpy as np
import pyomo.environ as pyo
from pyomo.contrib.solver.common.results import TerminationCondition
from scipy.optimize import minimize_scalar

from . import costs
from . import loop as lp
from .engine import initial_conversions, secant_step, steady_state
from .errors import InfeasibleError, NoSteadyStateError, SolverFailure
from .loop import Loop
from .model import build_model
from .results import LoopState, costing, make_state

log = logging.getLogger(__name__)


class Status(enum.Enum):
    OPTIMAL = "optimal"
    INFEASIBLE = "infeasible"
    TIME_LIMIT = "time limit"
    FAILED = "failed"


def map_termination(condition) -> Status:
    """HiGHS termination (through Pyomo) onto the small set of statuses."""
    if condition == TerminationCondition.convergenceCriteriaSatisfied:
        return Status.OPTIMAL
    if condition in (TerminationCondition.provenInfeasible,
                     TerminationCondition.locallyInfeasible,
                     TerminationCondition.infeasibleOrUnbounded):
        return Status.INFEASIBLE
    if condition in (TerminationCondition.maxTimeLimit, TerminationCondition.iterationLimit):
        return Status.TIME_LIMIT
    return Status.FAILED


@dataclass
class SolverInfo:
    name: str = "highs"
    status: str = "optimal"
    solves: int = 0
    seconds: float = 0.0
    method: str = ""


@dataclass
class Optimum:
    """The answer for one alternative."""

    name: str
    feasible: bool
    status: Status
    message: str
    state: LoopState | None
    binding_constraints: list[str]
    curve: list[dict]
    solver: SolverInfo
    off_optimum: dict = field(default_factory=dict)


def _physics(loop: Loop) -> Loop:
    """The loop with prices, efficiencies and names blanked: what fixes the flows."""
    return dataclasses.replace(
        loop, name="", prices=None, recycle_efficiency=0.0, makeup_efficiency=0.0,
        sources=tuple(dataclasses.replace(s, price_per_kmol=0.0) for s in loop.sources))


class LoopLP:
    """The reduced-space LP of one loop in a persistent HiGHS instance.

    Parameters
    ----------
    loop : Loop
    time_limit_s : float, optional
        Wall-clock budget for everything done with this instance [s].
    solver_options : dict, optional
        Passed to HiGHS (for instance ``{"time_limit": 10}``).
    """

    tolerance = 1e-10

    def __init__(self, loop: Loop, time_limit_s: float | None = None,
                 solver_options: dict | None = None):
        from pyomo.contrib.solver.solvers.highs import Highs

        self.loop = loop
        self.pricing = costing(loop)
        self.model = build_model(loop)
        self.solver = Highs()
        self.solver.config.load_solutions = False
        self.solver.config.raise_exception_on_nonoptimal_result = False
        auto = self.solver.config.auto_updates
        # Between solves only parameter values change.
        for name in ("check_for_new_or_removed_constraints", "check_for_new_or_removed_vars",
                     "check_for_new_or_removed_params", "check_for_new_objective",
                     "update_constraints", "update_vars", "update_named_expressions",
                     "update_objective"):
            setattr(auto, name, False)
        self.states: dict[tuple, LoopState | None] = {}
        self.margins: dict[tuple, float] = {}
        self.reasons: dict[tuple, str] = {}
        self.unlimited: dict[tuple, LoopState] = {}
        self.converged: list[tuple[float, dict]] = []
        self.solver_options = {"output_flag": False, **(solver_options or {})}
        self._solution_vars = None
        self._entries = None
        self.solves = 0
        self.started = time.perf_counter()
        self.time_limit_s = time_limit_s
        self.conversion = initial_conversions(loop)
        self.work = None
        self.sizes: dict[str, float] = {}

    # -- one LP ------------------------------------------------------------
    def _lp(self) -> Status:
        """One HiGHS solve of the LP as it stands.

        A solve that ends with neither an optimum nor proven infeasibility is
        tried once more from a cold start (a warm basis carried over many
        re-solves can stall on a badly scaled loop, for instance with trace
        inerts); a second such end is a solver failure.
        """
        status, condition = self._run()
        if status is Status.FAILED:
            highs = getattr(self.solver, "_solver_model", None)
            if highs is not None:
                log.warning("%s: HiGHS stopped with %s on a warm start; solving again cold",
                            self.loop.name, getattr(condition, "name", condition))
                highs.clearSolver()
                status, condition = self._run()
        if status is Status.OPTIMAL or status is Status.INFEASIBLE:
            return status
        raise SolverFailure(f"HiGHS stopped with '{condition.name}'"
                            + (" (time limit)" if status is Status.TIME_LIMIT else ""))

    def _run(self):
        """Solve once; returns (status, termination condition or HiGHS model status)."""
        if self.time_limit_s is not None and time.perf_counter() - self.started > self.time_limit_s:
            raise SolverFailure(f"time limit of {self.time_limit_s:g} s reached")
        options = dict(self.solver_options)
        if self.time_limit_s is not None:
            remaining = self.time_limit_s - (time.perf_counter() - self.started)
            options["time_limit"] = max(remaining, 1e-3)
        try:
            if self._solution_vars is not None:
                return self._rerun(options)
            self.solver.config.solver_options = options
            result = self.solver.solve(self.model)
        except SolverFailure:
            raise
        except Exception as exc:  # a solver library fault is reported, not raised raw
            raise SolverFailure(f"HiGHS raised {type(exc).__name__}: {exc}") from None
        self.solves += 1
        status = map_termination(result.termination_condition)
        if status is Status.OPTIMAL:
            result.solution_loader.load_vars()
        self._solution_vars = self._solution_variables()
        if self._solution_vars is not None and not self.blend_free:
            self._entries = self._design_entries()
        return status, result.termination_condition

    def _solution_variables(self):
        """The flow, extent and source variables, read straight from HiGHS on re-solves.

        Re-solves then push the changed coefficients through the persistent
        interface's ``update()`` and run the same HiGHS instance directly,
        without Pyomo's per-solve output capture.  Where the interface does not
        expose its HiGHS instance this returns None and every solve goes
        through ``solve()``.
        """
        var_map = getattr(self.solver, "_pyomo_var_to_solver_var_map", None)
        if getattr(self.solver, "_solver_model", None) is None or var_map is None:
            return None
        m = self.model
        return list(m.flow.values()) + list(m.extent.values()) + list(m.source.values())

    def _design_entries(self):
        """The LP entries that the purge fraction and the conversions set, or None.

        Taken from the engine's compiled form of the same loop equations
        (A = A0 + a A_a + sum_r X_r A_r): a list of (HiGHS row, HiGHS column,
        engine row, engine column).  With no freedom left in the LP only these
        entries change between re-solves (the objective and the relaxed limits
        cannot move its single feasible point), so they are written straight
        into HiGHS.  The entries are checked once against the matrix HiGHS
        holds; on any mismatch re-solves go through ``update()`` instead.
        """
        from .engine import engine_for

        m = self.model
        eng = engine_for(self.loop)
        constraints = [con for family in lp.EQUATION_FAMILIES
                       if (block := m.component(family.__name__)) is not None
                       for con in block.values()]
        variables = []
        for key in eng.keys:
            if key[0] == "flow":
                variables.append(m.flow[key[1], key[2]])
            else:
                variables.append((m.extent if key[0] == "extent" else m.source)[key[1]])
        if len(constraints) != eng.a0.shape[0] or len(variables) != eng.a0.shape[1]:
            return None
        rows = self.solver._pyomo_con_to_solver_con_map
        cols = self.solver._pyomo_var_to_solver_var_map
        moving = np.abs(eng.a_purge) + sum((np.abs(a) for a in eng.a_conv), 0 * eng.a_purge)
        entries = [(rows[constraints[r]], cols[id(variables[j])], r, j)
                   for r, j in zip(*np.nonzero(moving), strict=True)]
        matrix = self.solver._solver_model.getLp().a_matrix_
        held = {}
        for col in range(len(matrix.start_) - 1):
            for k in range(matrix.start_[col], matrix.start_[col + 1]):
                held[matrix.index_[k], col] = matrix.value_[k]
        if any(abs(held.get((row, col), 0.0) - self._coefficient(eng, r, j)) > 1e-12
               for row, col, r, j in entries):
            return None
        self._engine = eng
        return entries

    def _coefficient(self, eng, r: int, j: int) -> float:
        m = self.model
        value = eng.a0[r, j] + pyo.value(m.purge_fraction) * eng.a_purge[r, j]
        for i, a in enumerate(eng.a_conv):
            value += pyo.value(m.conversion[i]) * a[r, j]
        return float(value)

    def _rerun(self, options: dict):
        import highspy

        highs = self.solver._solver_model
        highs.HandleKeyboardInterrupt = True  # Ctrl-C and SIGTERM reach Python during a solve
        if self._entries is not None:
            for row, col, r, j in self._entries:
                highs.changeCoeff(row, col, self._coefficient(self._engine, r, j))
        else:
            self.solver.update()
        for key, value in options.items():
            highs.setOptionValue(key, value)
        highs.run()
        self.solves += 1
        model_status = highs.getModelStatus()
        s = highspy.HighsModelStatus
        if model_status == s.kOptimal:
            values = highs.getSolution().col_value
            columns = self.solver._pyomo_var_to_solver_var_map  # renumbered by update()
            for var in self._solution_vars:
                var.set_value(values[columns[id(var)]], skip_validation=True)
            return Status.OPTIMAL, model_status
        if model_status in (s.kInfeasible, s.kUnboundedOrInfeasible):
            return Status.INFEASIBLE, model_status
        if model_status in (s.kTimeLimit, s.kIterationLimit):
            return Status.TIME_LIMIT, model_status
        return Status.FAILED, model_status

    def _read(self):
        m, loop = self.model, self.loop
        flows = {s: {c: max(float(m.flow[s, c].value), 0.0) for c in loop.components}
                 for s in loop.streams}
        extents = [float(m.extent[i].value) for i in m.REACTION]
        sources = {n: max(float(m.source[n].value), 0.0) for n in m.SOURCE}
        return flows, extents, sources

    def _set_capital_tangents(self, quantities: dict) -> None:
        m = self.model
        lines, table = self.pricing
        for line in lines:
            if line.kind != "capital":
                continue
            size = max(quantities[line.quantity], 1e-6 * table[f"{line.capital}_reference_size"])
            value = costs.exact_capital(line, size, table)
            m.capital_size0[line.key] = size
            m.capital_value0[line.key] = value
            m.capital_slope[line.key] = table[f"{line.capital}_exponent"] * value / size
            self.sizes[line.key] = size

    # -- one evaluation at fixed design variables ----------------------------
    @property
    def blend_free(self) -> bool:
        """Whether the LP has freedom left: a group with more than one source."""
        groups = [s.enters for s in self.loop.sources]
        return len(groups) != len(set(groups))

    def _predict(self, purge_fraction: float) -> dict:
        """Starting conversions: interpolated in log(a) between converged neighbours."""
        x = dict(self.conversion)
        eq = [i for i, r in enumerate(self.loop.reactions) if r.per_pass == "equilibrium"]
        if len(self.converged) < 2 or not eq:
            return x
        la = math.log(purge_fraction)
        near = sorted(self.converged, key=lambda t: abs(math.log(t[0]) - la))[:2]
        (a0, x0), (a1, x1) = near
        if a0 == a1:
            return dict(x0)
        w = (la - math.log(a0)) / (math.log(a1) - math.log(a0))
        for i in eq:
            x[i] = min(max(x0[i] + w * (x1[i] - x0[i]), 1e-9), 0.999999)
        return x

    def _margin(self, state: LoopState) -> float:
        """Largest relative violation of a limit (negative when all are met) [-]."""
        loop = self.loop
        worst = -math.inf
        y = loop.max_inert_fraction_reactor_inlet
        if y is not None:
            worst = max(worst, state.inert_fraction_reactor_inlet / y - 1.0)
        w = loop.max_recycle_power_kw
        if w is not None:
            worst = max(worst, state.quantities["recycle_compressor_power_kw"] / w - 1.0)
        for s in loop.sources:
            if s.supply_limit_kmol_h is not None:
                worst = max(worst, state.sources[s.name] / s.supply_limit_kmol_h - 1.0)
        return worst

    def _keep_square(self, key: tuple, state: LoopState) -> None:
        """Record a converged state of an LP with no freedom left; limits checked on it."""
        self.unlimited[key] = state
        self.margins[key] = self._margin(state)
        self.states[key] = state if self.margins[key] <= 1e-9 else None

    def can_reprice(self, loop: Loop) -> bool:
        """Whether ``loop`` differs from this one only in prices and efficiencies.

        Then, with no freedom left in the LP, every converged flow stays valid
        and only the costs (and the limit margins) need evaluating again.
        """
        return not self.blend_free and _physics(loop) == _physics(self.loop)

    def reprice(self, loop: Loop, time_limit_s: float | None = None) -> None:
        """Take the prices of ``loop``, re-costing every converged state (see can_reprice)."""
        if not self.can_reprice(loop):
            raise ValueError("reprice needs the same loop physics and an LP with no freedom")
        self.loop = loop
        self.pricing = costing(loop)
        self.started = time.perf_counter()
        self.time_limit_s = time_limit_s
        self.states = {}
        for key, st in list(self.unlimited.items()):
            self._keep_square(key, make_state(
                loop, st.purge_fraction, st.conversion, st.flows, st.extents, st.sources,
                st.recycle_work_kj_kmol, st.volume_per_feed_m3_h_kmol,
                st.equilibrium_conversion, self.pricing))
        for key in self.reasons:
            self.states[key] = None

    def evaluate(self, purge_fraction: float, sized_conversion: float | None = None,
                 max_iterations: int = 60, enforce_limits: bool = True) -> LoopState | None:
        """Converged LP state at the design variables, or None if infeasible.

        While the per-pass conversion is still moving the limits are relaxed
        (an unconverged iterate may violate them); at convergence they are
        enforced: checked on the state when the LP has no freedom left, and
        otherwise by solving again with them in force.
        """
        loop, m = self.loop, self.model
        key = (purge_fraction, sized_conversion)
        m.purge_fraction = purge_fraction
        x = self._predict(purge_fraction)
        if sized_conversion is not None:
            x[loop.sized_reaction] = sized_conversion
        if self.work is None:
            self.work = lp.recycle_work_kj_kmol(loop, loop.makeup_sources[0].composition)
        blend_free = self.blend_free
        work_matters = blend_free or loop.max_recycle_power_kw is not None
        relaxed = m.component("limit_relaxation") is not None
        if relaxed:
            m.limit_relaxation = 1e15
        history: dict[int, list] = {}
        for _ in range(max_iterations):
            for i, xi in x.items():
                m.conversion[i] = xi
            m.recycle_work_kj_kmol = self.work
            m.volume_per_feed = lp.volume_per_feed(loop, x)
            if not (math.isfinite(self.work) and math.isfinite(pyo.value(m.volume_per_feed))):
                raise SolverFailure("a coefficient of the LP is not finite (recycle work "
                                    f"{self.work:g} kJ/kmol, catalyst volume per feed "
                                    f"{pyo.value(m.volume_per_feed):g} m3 h/kmol)")
            if self._lp() is Status.INFEASIBLE:
                self.states[key] = None
                return None
            flows, extents, sources = self._read()
            eq_x = lp.equilibrium_conversions(loop, flows["reactor_feed"])
            vapour = flows["separator_vapour"]
            total = sum(vapour.values())
            if total <= 0.0:
                raise SolverFailure("the LP returned no separator vapour: the flows are below "
                                    "the solver's tolerances")
            new_work = lp.recycle_work_kj_kmol(loop, {c: f / total for c, f in vapour.items()})
            change = abs(new_work - self.work) / max(new_work, 1e-12) if work_matters else 0.0
            new_x = dict(x)
            above = [i for i, xe in eq_x.items() if loop.reactions[i].per_pass != "equilibrium"
                     and x[i] > xe]
            if above:
                self.states[key] = None
                self.reasons[key] = (
                    f"the per-pass conversion {x[above[0]]:.4g} of "
                    f"'{loop.reactions[above[0]].name}' is above its equilibrium conversion "
                    f"{eq_x[above[0]]:.4g} at the reactor inlet")
                return None
            for i, xe in eq_x.items():
                if loop.reactions[i].per_pass != "equilibrium":
                    continue
                residual = loop.reactions[i].approach_to_equilibrium * xe - x[i]
                change = max(change, abs(residual))
                new_x[i] = secant_step(history.setdefault(i, []), x[i], residual)
            state = None
            if change < self.tolerance:
                state = make_state(loop, purge_fraction, x, flows, extents, sources,
                                   self.work if work_matters else new_work,
                                   lp.volume_per_feed(loop, x), eq_x, self.pricing)
                if blend_free:
                    moved = max((abs(state.quantities[line.quantity] - self.sizes.get(line.key, 0))
                                 / max(state.quantities[line.quantity], 1e-9)
                                 for line in self.pricing[0] if line.kind == "capital"),
                                default=0.0)
                    if moved > 1e-9:
                        self._set_capital_tangents(state.quantities)
                        state = None
            if state is not None:
                if not enforce_limits:
                    return state
                if relaxed and not blend_free:
                    self.converged.append((purge_fraction, dict(x)))
                    self._keep_square(key, state)
                    return self.states[key]
                if relaxed:
                    m.limit_relaxation = 0.0
                    relaxed = False
                    continue
                self.conversion.update({i: x[i] for i in eq_x})
                self.converged.append((purge_fraction, dict(x)))
                self.states[key] = state
                return state
            self.work = new_work
            x = new_x
        raise SolverFailure("the inner fixed point on per-pass conversion did not converge "
                            f"in {max_iterations} steps at purge fraction {purge_fraction:.6g}")

    def tac(self, purge_fraction: float, sized_conversion: float | None = None) -> float:
        key = (purge_fraction, sized_conversion)
        state = self.states[key] if key in self.states else self.evaluate(*key)
        return math.inf if state is None else state.tac_per_year


# ---------------------------------------------------------------------------
# outer search


def _edge(f, margin, feasible_x: float, infeasible_x: float, xtol_rel: float) -> float:
    """The feasibility edge between two points, on the feasible side.

    Where the limit margin is known on both sides (an LP with no freedom left)
    the edge is a root of the margin (Brent's method); otherwise bisection.
    """
    from scipy.optimize import brentq

    f(feasible_x)
    f(infeasible_x)
    m_in, m_out = margin(feasible_x), margin(infeasible_x)
    if m_in is not None and m_out is not None and m_in < 0 < m_out:
        def g(a):
            f(a)
            value = margin(a)
            return value if value is not None else 1.0
        x = brentq(g, feasible_x, infeasible_x, xtol=xtol_rel * min(feasible_x, infeasible_x),
                   rtol=1e-12)
        # step to the feasible side of the root within the tolerance
        for _ in range(60):
            if math.isfinite(f(x)):
                return x
            x = x + (feasible_x - x) * 1e-3 if abs(feasible_x - x) > 0 else feasible_x
        return feasible_x
    a, b = feasible_x, infeasible_x
    while abs(b - a) > xtol_rel * min(a, b):
        mid = 0.5 * (a + b)
        if math.isfinite(f(mid)):
            a = mid
        else:
            b = mid
    return a


def _scan_and_refine(f, lo: float, hi: float, points: int, xtol_rel: float, margin=None):
    """Global minimum of f on [lo, hi]: log grid, feasibility edges, bounded Brent.

    f returns inf where infeasible.  Returns (x_best, f_best, samples).
    """
    margin = margin or (lambda _x: None)
    seen: dict[float, float] = {}

    def fx(x):
        x = float(x)
        if x not in seen:
            seen[x] = f(x)
        return seen[x]

    grid = np.geomspace(lo, hi, points)
    vals = [fx(a) for a in grid]
    finite = [i for i, v in enumerate(vals) if math.isfinite(v)]
    if not finite:
        return None, math.inf, sorted(seen.items())
    i = min(finite, key=lambda k: vals[k])
    left = grid[i - 1] if i > 0 else grid[i]
    right = grid[i + 1] if i < points - 1 else grid[i]
    if i > 0 and not math.isfinite(vals[i - 1]):
        left = _edge(fx, margin, grid[i], grid[i - 1], xtol_rel)
    if i < points - 1 and not math.isfinite(vals[i + 1]):
        right = _edge(fx, margin, grid[i], grid[i + 1], xtol_rel)
    if right > left:
        minimize_scalar(fx, bounds=(left, right), method="bounded",
                        options={"xatol": xtol_rel * left, "maxiter": 200})
        fx(left)
        fx(right)
    best_x, best_f = min(((x, v) for x, v in seen.items() if math.isfinite(v)),
                         key=lambda t: t[1])
    return best_x, best_f, sorted(seen.items())


def optimise(loop: Loop, *, scan_points: int = 17, xtol_rel: float = 1e-6,
             details: bool = True, time_limit_s: float | None = None,
             solver_options: dict | None = None, reuse: LoopLP | None = None) -> Optimum:
    """The lowest-cost purge fraction (and conversion, for a sized reactor).

    Parameters
    ----------
    loop : Loop
    scan_points : int
        Log-spaced grid points over the allowed purge-fraction box.
    xtol_rel : float
        Relative tolerance of the refinement in the purge fraction.
    details : bool
        Also report the cost curve and the cost of running off the optimum
        (sensitivity and break-even runs leave them out).
    time_limit_s : float, optional
        Wall-clock limit for this alternative [s]; past it the alternative fails.
    reuse : LoopLP, optional
        A solver of the same loop at other prices: its converged states are
        re-costed instead of solved again where :meth:`LoopLP.can_reprice`.

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
        else:
            solver = LoopLP(loop, time_limit_s=time_limit_s, solver_options=solver_options)
        solves_before = solver.solves
        k = loop.sized_reaction
        lo, hi = loop.purge_fraction_min, loop.purge_fraction_max
        inner: dict[float, float] = {}

        if k is None:
            def f(a):
                return solver.tac(a)
        else:
            s = loop.reactions[k].sizing

            def f(a):
                x, v, _ = _scan_and_refine(lambda x: solver.tac(a, x), s["conversion_min"],
                                           s["conversion_max"], 9, xtol_rel)
                if x is not None:
                    inner[a] = x
                return v

        margin = None if k is not None else (lambda a: solver.margins.get((a, None)))
        a_best, tac_best, samples = _scan_and_refine(f, lo, hi, scan_points, xtol_rel, margin)
        if a_best is None:
            raise InfeasibleError(_diagnose(loop, solver))
        x_best = inner.get(a_best) if k is not None else None
        if k is not None and x_best is None:
            f(a_best)
            x_best = inner[a_best]
        state = solver.states.get((a_best, x_best)) or solver.evaluate(a_best, x_best)
        if state is None:
            raise SolverFailure(f"the optimum at purge fraction {a_best:.6g} did not "
                                "re-solve as feasible")
        curve = _curve(loop, a_best, samples, f) if details else []
        binding = _binding(loop, solver, state, x_best)
        off = _off_optimum(loop, a_best, state.tac_per_year, f) if details else {}
        info.solves = solver.solves - solves_before
        info.seconds = time.perf_counter() - t0
        info.method = (
            f"reduced space: purge fraction scanned at {scan_points} log-spaced points in "
            f"[{lo:g}, {hi:g}], feasibility edges by root finding and bounded Brent refinement "
            f"to a relative tolerance of {xtol_rel:g} in the purge fraction"
            + (f"; per-pass conversion searched the same way in [{s['conversion_min']:g}, "
               f"{s['conversion_max']:g}] at each purge fraction" if k is not None else "")
            + f"; HiGHS LP at every point ({info.solves} solves), inner fixed point on "
            f"per-pass conversion and recycle work to {LoopLP.tolerance:g}")
        log.debug("%s: optimum at purge fraction %.6g after %d solves in %.3f s", loop.name,
                  state.purge_fraction, info.solves, info.seconds)
        return Optimum(loop.name, True, Status.OPTIMAL, "optimal", state, binding, curve, info,
                       off)
    except InfeasibleError as exc:
        info.status = Status.INFEASIBLE.value
        info.seconds = time.perf_counter() - t0
        return Optimum(loop.name, False, Status.INFEASIBLE, str(exc), None, [], [], info)
    except SolverFailure as exc:
        status = Status.TIME_LIMIT if "time limit" in str(exc) else Status.FAILED
        info.status = status.value
        info.seconds = time.perf_counter() - t0
        return Optimum(loop.name, False, status, str(exc), None, [], [], info)


def evaluate_at(loop: Loop, purge_fraction: float, conversion: float | None = None,
                solver_options: dict | None = None) -> Optimum:
    """Steady state and costs at a given purge fraction (the source blend optimised)."""
    t0 = time.perf_counter()
    info = SolverInfo(method=f"HiGHS LP at the fixed purge fraction {purge_fraction:g}")
    try:
        solver = LoopLP(loop, solver_options=solver_options)
        state = solver.evaluate(purge_fraction, conversion)
        info.solves = solver.solves
        info.seconds = time.perf_counter() - t0
        if state is None:
            raise InfeasibleError(_diagnose(loop, solver, purge_fraction))
        return Optimum(loop.name, True, Status.OPTIMAL, "evaluated", state,
                       _binding(loop, solver, state, conversion), [], info)
    except InfeasibleError as exc:
        info.status = Status.INFEASIBLE.value
        return Optimum(loop.name, False, Status.INFEASIBLE, str(exc), None, [], [], info)
    except SolverFailure as exc:
        info.status = Status.FAILED.value
        return Optimum(loop.name, False, Status.FAILED, str(exc), None, [], [], info)


def _curve(loop: Loop, a_best: float, samples, f) -> list[dict]:
    """TAC against purge fraction from a quarter to four times the optimum.

    The points the search evaluated in that range, plus half and twice the optimum.
    """
    lo = max(loop.purge_fraction_min, a_best / 4.0)
    hi = min(loop.purge_fraction_max, a_best * 4.0)
    points = {a: v for a, v in samples if lo <= a <= hi}
    for a in (a_best / 2.0, a_best * 2.0, lo, hi):
        if loop.purge_fraction_min <= a <= loop.purge_fraction_max and a not in points:
            points[a] = f(a)
    return [{"purge_fraction": float(a), "tac_per_year": float(v)}
            for a, v in sorted(points.items()) if math.isfinite(v)]


def _off_optimum(loop: Loop, a_best: float, tac_best: float, f) -> dict:
    """Cost of running off the optimum: TAC at half and twice a*, and the 1 % band."""
    from scipy.optimize import brentq

    lo, hi = loop.purge_fraction_min, loop.purge_fraction_max
    out = {"tac_half_purge_per_year": None, "tac_double_purge_per_year": None}
    if a_best / 2 >= lo:
        out["tac_half_purge_per_year"] = f(a_best / 2)
    if a_best * 2 <= hi:
        out["tac_double_purge_per_year"] = f(a_best * 2)
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
    out["band_1pct_purge_fraction"] = band
    return out


def _binding(loop: Loop, solver: LoopLP, state: LoopState, x_best) -> list[str]:
    out = []
    rel = 1e-6
    a = state.purge_fraction
    if a <= loop.purge_fraction_min * (1 + rel):
        out.append("purge_fraction_min")
    if a >= loop.purge_fraction_max * (1 - rel):
        out.append("purge_fraction_max")
    y = loop.max_inert_fraction_reactor_inlet
    if y is not None and state.inert_fraction_reactor_inlet >= y * (1 - 1e-6):
        out.append("max_inert_fraction_reactor_inlet")
    w = loop.max_recycle_power_kw
    if w is not None and state.quantities["recycle_compressor_power_kw"] >= w * (1 - 1e-6):
        out.append("max_recycle_power_kw")
    for s in loop.sources:
        if (s.supply_limit_kmol_h is not None
                and state.sources[s.name] >= s.supply_limit_kmol_h * (1 - 1e-6)):
            out.append(f"supply_limit_kmol_h:{s.name}")
    k = loop.sized_reaction
    if k is not None and x_best is not None:
        sz = loop.reactions[k].sizing
        if x_best <= sz["conversion_min"] * (1 + rel):
            out.append("conversion_min")
        if x_best >= sz["conversion_max"] * (1 - rel):
            out.append("conversion_max")
    return out


def _inert_fraction(composition: dict, loop: Loop) -> float:
    return sum(composition[c] for c in loop.inerts)


def _prechecks(loop: Loop) -> str:
    """Reasons a specification cannot be met, found before any solve."""
    y = loop.max_inert_fraction_reactor_inlet
    if y is not None:
        lowest = min(_inert_fraction(s.composition, loop) for s in loop.makeup_sources)
        if y <= lowest:
            return (f"the inert limit at the reactor inlet ({y:g}) is at or below the inert "
                    f"fraction of the cleanest make-up gas ({lowest:.6g}): no purge can meet it")
    return ""


def _diagnose(loop: Loop, solver: LoopLP, purge_fraction: float | None = None) -> str:
    """Which limit makes every purge fraction infeasible, with the figures."""
    a = loop.purge_fraction_max if purge_fraction is None else purge_fraction
    where = (f"at any purge fraction up to {a:g}" if purge_fraction is None
             else f"at the purge fraction {a:g}")
    named = [("inert_limit", "the inert limit at the reactor inlet"),
             ("recycle_power_limit", "the recycle compressor power limit"),
             ("supply_limit", "the supply limits of the sources")]
    present = [(n, text) for n, text in named if solver.model.component(n) is not None]
    state = solver.evaluate(a, enforce_limits=False)
    if state is None:
        if solver.reasons:
            return next(iter(solver.reasons.values()))
        try:
            steady_state(loop, a)
        except NoSteadyStateError as exc:
            return str(exc)
        return f"the loop balances cannot be met {where}"
    reasons = []
    for n, text in present:
        if n == "inert_limit" and state.inert_fraction_reactor_inlet > \
                loop.max_inert_fraction_reactor_inlet:
            reasons.append(f"{text} ({loop.max_inert_fraction_reactor_inlet:g}) cannot be met "
                           f"{where}: the reactor inlet would carry "
                           f"{state.inert_fraction_reactor_inlet:.4g}")
        if n == "recycle_power_limit" and state.quantities["recycle_compressor_power_kw"] > \
                loop.max_recycle_power_kw:
            reasons.append(f"{text} ({loop.max_recycle_power_kw:g} kW) is below the minimum "
                           f"recycle: {state.quantities['recycle_compressor_power_kw']:.4g} kW "
                           f"is needed {where}")
        if n == "supply_limit":
            offered = sum(s.supply_limit_kmol_h for s in loop.sources
                          if s.supply_limit_kmol_h is not None)
            if all(s.supply_limit_kmol_h is not None for s in loop.makeup_sources):
                need = sum(state.sources[s.name] for s in loop.makeup_sources)
                if need > offered:
                    reasons.append(f"supply below demand: the loop needs {need:.6g} kmol/h of "
                                   f"make-up gas, the sources offer {offered:.6g} kmol/h")
    return "; ".join(reasons) or f"the limits cannot all be met together {where}"


def solve_exact_with(loop: Loop, solver_name: str = "scip_direct", **options):
    """The same model with the purge fraction free and exact capital, for a global solver.

    Used by the tests to check the reduced-space answer; returns (a, TAC, results).
    The recycle work and volume coefficients are taken converged from the
    reduced-space solution at the same alternative's optimum.
    """
    opt = optimise(loop)
    if not opt.feasible:
        raise InfeasibleError(opt.message)
    m = build_model(loop, capital="exact", design="free")
    m.recycle_work_kj_kmol = opt.state.recycle_work_kj_kmol
    m.volume_per_feed = opt.state.volume_per_feed_m3_h_kmol
    for i, x in opt.state.conversion.items():
        m.conversion[i].fix(x)
    m.purge_fraction.unfix()
    solver = pyo.SolverFactory(solver_name)
    for k, v in options.items():
        solver.options[k] = v
    results = solver.solve(m)
    return float(m.purge_fraction.value), float(pyo.value(m.tac)), results, opt
