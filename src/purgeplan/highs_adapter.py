"""Everything specific to HiGHS and Pyomo's interface to it, in one place.

:class:`PersistentLP` keeps one Pyomo model in one persistent HiGHS instance.
The first solve goes through the interface's public ``solve()``.  Re-solves,
after the caller changed mutable parameters, push the changes with the
public ``update()`` and run the same HiGHS instance directly, reading the
column values back by the interface's variable map: measured on the demo's
source-blend loop this is about three times faster than ``solve()`` per
re-solve, because Pyomo's per-solve output capture and result objects are
skipped.  That route relies on two attributes the interface does not
document (its ``highspy.Highs`` instance and its variable map); where either
is missing, every solve falls back to ``solve()``.

Of what is left, most of the time went into ``update()`` evaluating each
mutable coefficient's Pyomo expression through the generic expression
walker.  :class:`ParameterPush` compiles those expressions once into one
Python function of the parameter values and pushes the changed numbers
into HiGHS itself; it reads the interface's table of mutable coefficients,
a third undocumented attribute, and where that table is missing or holds
a kind of entry it does not know, re-solves use the public ``update()``.
The tests run every route on the same model and compare.

HiGHS and Pyomo statuses are mapped once, onto :class:`purgeplan.errors.Status`.
"""

from __future__ import annotations

import logging
import math
import time

import pyomo.environ as pyo
from pyomo.contrib.solver.common.results import TerminationCondition

from .errors import SolverFailure, Status

log = logging.getLogger(__name__)


class _Opaque(Exception):
    """An expression node the compiler does not know; the caller falls back."""


def _source(node, params: dict) -> str:
    """Python source computing a Pyomo expression without variables from parameter values.

    ``params`` maps id(parameter) to (position in the value tuple ``v``, parameter).
    """
    from pyomo.core.expr import numeric_expr as ne

    if isinstance(node, (int, float)):
        number = float(node)
        return repr(number) if math.isfinite(number) else ("1e999" if number > 0 else "-1e999")
    if getattr(node, "is_parameter_type", lambda: False)():
        position, _ = params.setdefault(id(node), (len(params), node))
        return f"v[{position}]"
    if getattr(node, "is_named_expression_type", lambda: False)():
        return _source(node.expr, params)
    args = [_source(a, params) for a in getattr(node, "args", ())]
    if isinstance(node, ne.SumExpression):
        return "(" + " + ".join(args) + ")" if args else "0.0"
    if isinstance(node, ne.ProductExpression):
        return f"({args[0]} * {args[1]})"
    if isinstance(node, ne.DivisionExpression):
        return f"({args[0]} / {args[1]})"
    if isinstance(node, ne.NegationExpression):
        return f"(-{args[0]})"
    if isinstance(node, ne.PowExpression):
        return f"({args[0]} ** {args[1]})"
    raise _Opaque(type(node).__name__)


class ParameterPush:
    """The interface's ``update_parameters()``, compiled.

    Built from the interface's table of mutable coefficients after the first
    solve; :meth:`push` evaluates every coefficient at the parameters' current
    values in one generated function and changes in HiGHS those that moved.
    :meth:`build` returns None where the table is missing or holds an entry
    of a kind not known here.
    """

    def __init__(self, solver, targets: list, exprs: list[str], params: dict):
        self.highs = solver._solver_model
        self.con_map = solver._pyomo_con_to_solver_con_map
        self.var_map = solver._pyomo_var_to_solver_var_map
        self.targets = targets  # (kind, constraint, variable id) per value, in ``exprs`` order
        self.params = [p for _, p in sorted(params.values(), key=lambda t: t[0])]
        self.evaluate = eval("lambda v: (" + ", ".join(exprs) + ",)",  # noqa: S307
                             {"__builtins__": {}})
        self.last: list = [None] * len(targets)

    @classmethod
    def build(cls, solver) -> ParameterPush | None:
        from pyomo.contrib.solver.solvers import highs as iface

        params: dict = {}
        exprs, targets = [], []
        try:
            objective = solver._mutable_objective
            if solver._mutable_bounds or objective.quadratic_coefs:
                return None
            for h in (h for hs in solver._mutable_helpers.values() for h in hs):
                if type(h) is iface._MutableLinearCoefficient:
                    exprs.append(_source(h.expr, params))
                    targets.append(("coefficient", h.pyomo_con, h.pyomo_var_id))
                elif type(h) is iface._MutableConstraintBounds:
                    exprs.append(f"({_source(h.lower_expr, params)}, "
                                 f"{_source(h.upper_expr, params)})")
                    targets.append(("row bounds", h.con, None))
                else:
                    return None
            for c in objective.linear_coefs:
                exprs.append(_source(c.expr, params))
                targets.append(("cost", None, c.pyomo_var_id))
            exprs.append(_source(objective.constant.expr, params))
            targets.append(("offset", None, None))
            return cls(solver, targets, exprs, params)
        except (AttributeError, TypeError, _Opaque):
            return None

    def push(self) -> None:
        """Evaluate every coefficient and change in HiGHS those that moved."""
        values = self.evaluate(tuple(p.value for p in self.params))
        highs, con_map, var_map = self.highs, self.con_map, self.var_map
        for i, (value, (kind, con, var)) in enumerate(zip(values, self.targets, strict=True)):
            if value == self.last[i]:
                continue
            self.last[i] = value
            if kind == "coefficient":
                highs.changeCoeff(con_map[con], var_map[var], value)
            elif kind == "cost":
                highs.changeColCost(var_map[var], value)
            elif kind == "row bounds":
                highs.changeRowBounds(con_map[con], *value)
            else:
                highs.changeObjectiveOffset(value)


_TERMINATION = {
    TerminationCondition.convergenceCriteriaSatisfied: Status.OPTIMAL,
    TerminationCondition.provenInfeasible: Status.INFEASIBLE,
    TerminationCondition.locallyInfeasible: Status.INFEASIBLE,
    TerminationCondition.infeasibleOrUnbounded: Status.INFEASIBLE,
    TerminationCondition.maxTimeLimit: Status.TIME_LIMIT,
    TerminationCondition.iterationLimit: Status.TIME_LIMIT,
}


def status_of(condition) -> Status:
    """A Pyomo termination condition or a ``highspy.HighsModelStatus`` as a Status."""
    if isinstance(condition, TerminationCondition):
        return _TERMINATION.get(condition, Status.FAILED)
    import highspy

    s = highspy.HighsModelStatus
    return {s.kOptimal: Status.OPTIMAL, s.kInfeasible: Status.INFEASIBLE,
            s.kUnboundedOrInfeasible: Status.INFEASIBLE, s.kTimeLimit: Status.TIME_LIMIT,
            s.kIterationLimit: Status.TIME_LIMIT}.get(condition, Status.FAILED)


class PersistentLP:
    """One Pyomo LP in one persistent HiGHS instance.

    Parameters
    ----------
    model : pyomo.environ.ConcreteModel
        Between solves only the values of its mutable parameters may change.
    solver_options : dict, optional
        HiGHS options (for instance ``{"time_limit": 10}``).
    time_limit_s : float, optional
        Wall-clock budget for every solve of this instance together [s].
    direct : bool
        Re-solve through the HiGHS instance directly where the interface allows
        (see the module docstring); False always uses ``solve()``.
    compiled : bool
        On the direct route, push changed parameters by :class:`ParameterPush`
        where it can be built; False uses the interface's ``update()``.
    """

    def __init__(self, model: pyo.ConcreteModel, solver_options: dict | None = None,
                 time_limit_s: float | None = None, direct: bool = True,
                 compiled: bool = True):
        from pyomo.contrib.solver.solvers.highs import Highs

        self.model = model
        self.solver = Highs()
        self.solver.config.load_solutions = False
        self.solver.config.raise_exception_on_nonoptimal_result = False
        auto = self.solver.config.auto_updates
        for name in ("check_for_new_or_removed_constraints", "check_for_new_or_removed_vars",
                     "check_for_new_or_removed_params", "check_for_new_objective",
                     "update_constraints", "update_vars", "update_named_expressions",
                     "update_objective"):
            setattr(auto, name, False)
        self.options = {"output_flag": False, **(solver_options or {})}
        self.direct = direct
        self.solves = 0
        self.routes: dict[str, int] = {}
        self.restart(time_limit_s)
        self._variables = [v for v in model.component_data_objects(pyo.Var, active=True)
                           if not v.fixed]
        self._loaded = False
        self.compiled = compiled
        self._push: ParameterPush | None = None

    def restart(self, time_limit_s: float | None) -> None:
        """Start a new wall-clock budget."""
        self.started = time.perf_counter()
        self.time_limit_s = time_limit_s

    @property
    def pushes_compiled(self) -> bool:
        """Whether re-solves push parameters through :class:`ParameterPush`."""
        return self._push is not None

    def objective_value(self) -> float | None:
        """The objective value HiGHS reports for its last solve, or None where hidden."""
        highs = self._highs()
        return None if highs is None else float(highs.getInfo().objective_function_value)

    def row_dual(self, constraint) -> float | None:
        """d objective / d right-hand side of a constraint at HiGHS's last solve, or None
        where hidden."""
        highs = self._highs()
        rows = getattr(self.solver, "_pyomo_con_to_solver_con_map", None)
        if highs is None or not isinstance(rows, dict) or constraint not in rows:
            return None
        return float(highs.getSolution().row_dual[rows[constraint]])

    def solve(self) -> Status:
        """Solve the LP as it stands; OPTIMAL (values loaded into the model) or INFEASIBLE.

        A solve that ends otherwise is tried once more from a cold start (a warm
        basis carried over many re-solves can stall on a badly scaled loop);
        a second such end raises :class:`SolverFailure` with its status.
        """
        status, condition = self._run()
        if status is Status.FAILED and self._highs() is not None:
            log.warning("HiGHS stopped with %s on a warm start; solving again cold",
                        getattr(condition, "name", condition))
            self._highs().clearSolver()
            status, condition = self._run()
        if status in (Status.OPTIMAL, Status.INFEASIBLE):
            return status
        name = getattr(condition, "name", str(condition))
        raise SolverFailure(f"HiGHS stopped with '{name}'"
                            + (" (time limit)" if status is Status.TIME_LIMIT else ""), status)

    def _highs(self):
        """The interface's HiGHS instance, or None where it does not expose one."""
        return getattr(self.solver, "_solver_model", None)

    def _run(self):
        options = dict(self.options)
        if self.time_limit_s is not None:
            remaining = self.time_limit_s - (time.perf_counter() - self.started)
            if remaining <= 0:
                raise SolverFailure(f"time limit of {self.time_limit_s:g} s reached",
                                    Status.TIME_LIMIT)
            options["time_limit"] = remaining
        try:
            if self.direct and self._loaded and self._direct_ready():
                return self._run_direct(options)
            return self._run_public(options)
        except SolverFailure:
            raise
        except Exception as exc:  # a solver library fault is reported, not raised raw
            raise SolverFailure(f"HiGHS raised {type(exc).__name__}: {exc}") from None

    def _run_public(self, options: dict):
        self.solver.config.solver_options = options
        result = self.solver.solve(self.model)
        self._count("public solve()")
        self._loaded = True
        if self.direct and self._push is None and self.compiled:
            self._push = ParameterPush.build(self.solver)
        status = status_of(result.termination_condition)
        if status is Status.OPTIMAL:
            result.solution_loader.load_vars()
        return status, result.termination_condition

    def _direct_ready(self) -> bool:
        return (self._highs() is not None
                and isinstance(getattr(self.solver, "_pyomo_var_to_solver_var_map", None), dict))

    def _run_direct(self, options: dict):
        highs = self._highs()
        highs.HandleKeyboardInterrupt = True  # Ctrl-C and SIGTERM reach Python during a solve
        if self._push is None:
            self.solver.update()
        else:
            self._push.push()
        for key, value in options.items():
            highs.setOptionValue(key, value)
        highs.run()
        self._count("direct run()")
        model_status = highs.getModelStatus()
        status = status_of(model_status)
        if status is Status.OPTIMAL:
            values = highs.getSolution().col_value
            columns = self.solver._pyomo_var_to_solver_var_map
            for var in self._variables:
                var.set_value(values[columns[id(var)]], skip_validation=True)
        return status, model_status

    def _count(self, route: str) -> None:
        self.solves += 1
        self.routes[route] = self.routes.get(route, 0) + 1
