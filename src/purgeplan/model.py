"""The Pyomo model of one alternative: balances, reactor, compression and costs.

The constraints are the equation families of :mod:`purgeplan.equations`, one Pyomo
``Constraint`` per family, named after it (``m.mixer_balance``,
``m.purge_split``, ...), plus the limits of :mod:`purgeplan.limits` as
``m.limit``.  The purge fraction ``m.purge_fraction`` and per-pass conversions
``m.conversion`` are the design variables.  For the reduced-space strategy of
:mod:`purgeplan.reduced_space` they are built as mutable parameters
(``design="fixed"``), which leaves a linear programme for HiGHS whose
coefficients change in place between re-solves; a global solver gets them as
variables (``design="free"``).

Coefficients that depend on the state (recycle work from the gas's heat
capacity ratio, catalyst volume per feed, a phase-equilibrium separator's
liquid shares ``m.liquid_share``, and a vapour-to-liquid ratio it may hold,
``m.vapour_per_liquid``) are mutable parameters.  With
``capital="tangent"`` each capital line enters the objective as its tangent
at a parameter size (the solve layer moves the point of tangency to the
solution), with ``capital="exact"`` as the capacity-scaling power law.
"""

from __future__ import annotations

from collections.abc import Callable

import pyomo.environ as pyo

from . import costs, equations, limits
from .equations import LoopVariables, quantities
from .loop import Loop


def _label(key) -> str:
    if isinstance(key, tuple):
        return ".".join(str(k) for k in key)
    return str(key)


def add_loop_equations(m: pyo.ConcreteModel, loop: Loop, v: LoopVariables) -> None:
    """One Constraint per equation family of the loop (see :mod:`purgeplan.equations`)."""
    for family in equations.EQUATION_FAMILIES:
        items = {_label(k): res for k, res in family(v, loop)}
        if items:
            m.add_component(family.__name__, pyo.Constraint(
                list(items), rule=lambda _m, k, items=items: items[k] == 0))


def add_fuel_sink(m: pyo.ConcreteModel, loop: Loop, v: LoopVariables) -> tuple | None:
    """The split of the purge gas between a fuel sink with a capacity and the flare.

    ``m.fuel_heat_gj_h`` is held at most the capacity (its bound) and at most
    the heat of the gas (``m.fuel_sink``); the objective drives it to the
    smaller of the two (see :func:`purgeplan.equations.fuel_sink`).
    ``m.disposal_kmol_per_gj`` is the gas's kmol per GJ at the current state,
    set by the solve layer.  Returns the pair for
    :func:`purgeplan.equations.quantities`, or None without a capacity.
    """
    if loop.fuel_capacity_gj_h is None:
        return None
    m.fuel_heat_gj_h = pyo.Var(bounds=(0.0, loop.fuel_capacity_gj_h), initialize=0.0)
    m.disposal_kmol_per_gj = pyo.Param(mutable=True, initialize=0.0)
    m.fuel_sink = pyo.Constraint(expr=m.fuel_heat_gj_h <= equations.disposal_heat_gj_h(v, loop))
    return m.fuel_heat_gj_h, m.disposal_kmol_per_gj


def add_water_cooler(m: pyo.ConcreteModel, loop: Loop):
    """Whether the product condenses in the water cooler, ``m.water_cooler_condenses`` (1 or 0).

    Set by the solve layer from the state it starts from (see
    :func:`purgeplan.equations.water_cooler_condensate_kmol_h`); None where
    nothing can condense there.
    """
    if loop.cooling is None or loop.cooling.water_vapour_ratio is None:
        return None
    m.water_cooler_condenses = pyo.Param(mutable=True, initialize=1.0)
    return m.water_cooler_condenses


def add_limits(m: pyo.ConcreteModel, loop: Loop, q: dict) -> None:
    """The state limits of :func:`purgeplan.limits.loop_limits` as ``m.limit[name]``.

    q_limit <= bound q_per + r  (or >= for a lower bound), with the relaxation r
    (``m.limit_relaxation``) zero except while the inner fixed point of the
    solve layer is still moving the per-pass conversion; a limit with
    ``relaxed`` False (an inlet ratio the blend holds) is never relaxed.
    """
    m.limit_relaxation = pyo.Param(mutable=True, initialize=0.0)
    table = {lim.name: lim for lim in limits.state_limits(loop) if lim.in_model}
    if not table:
        return

    def rule(_m, name):
        lim = table[name]
        bound = lim.bound * (q[lim.per] if lim.per else 1.0)
        relax = m.limit_relaxation if lim.relaxed else 0.0
        if lim.sense == "max":
            return q[lim.quantity] <= bound + relax
        return q[lim.quantity] >= bound - relax

    m.LIMIT = pyo.Set(initialize=list(table))
    m.limit = pyo.Constraint(m.LIMIT, rule=rule)


def price_keys(loop: Loop) -> list[str]:
    """The assumptions that enter the LP's objective linearly: prices and hours on stream.

    They are mutable parameters ``m.price[key]`` of the model, so that one
    model serves the loop at other prices (see
    :meth:`purgeplan.reduced_space.LoopLP.reprice_lp`); the capital lines
    enter through tangents the solve layer sets.
    """
    keys = {"hours_per_year"}
    for line in costs.cost_lines(loop):
        if line.kind in ("hourly", "replacement"):
            keys.add(line.price)
    return sorted(keys)


def add_costs(m: pyo.ConcreteModel, loop: Loop, q: dict, capital: str) -> None:
    """Cost lines as Expressions ``m.cost[key]`` and the objective ``m.tac`` [currency/year]."""
    lines = costs.cost_lines(loop)
    table = costs.values(costs.assumptions(loop))
    m.PRICE = pyo.Set(initialize=price_keys(loop))
    m.price = pyo.Param(m.PRICE, mutable=True, initialize={k: table[k] for k in m.PRICE})
    table = {**table, **{k: m.price[k] for k in m.PRICE}}
    capital_keys = [line.key for line in lines if line.kind == "capital"]
    m.CAPITAL = pyo.Set(initialize=capital_keys)
    m.capital_size0 = pyo.Param(m.CAPITAL, mutable=True, initialize=1.0)
    m.capital_value0 = pyo.Param(m.CAPITAL, mutable=True, initialize=0.0)
    m.capital_slope = pyo.Param(m.CAPITAL, mutable=True, initialize=0.0)

    def tangent(line, size, _a):
        k = line.key
        return m.capital_value0[k] + m.capital_slope[k] * (size - m.capital_size0[k])

    rule = tangent if capital == "tangent" else costs.exact_capital
    values = costs.evaluate(lines, q, table, capital=rule)
    m.COST = pyo.Set(initialize=list(values))
    m.cost = pyo.Expression(m.COST, rule=lambda _m, k: values[k])
    m.tac = pyo.Objective(expr=sum(m.cost[k] for k in m.COST), sense=pyo.minimize)


def build_model(loop: Loop, capital: str = "tangent", design: str = "fixed",
                exact_coefficients: Callable | None = None) -> pyo.ConcreteModel:
    """The Pyomo model of one alternative with the design variables fixed.

    Parameters
    ----------
    loop : Loop
    capital : {"tangent", "exact"}
        How capital lines enter the objective (see the module docstring).
    design : {"fixed", "free"}
        Purge fraction and conversions as mutable parameters, or as variables
        (the purge fraction bounded by the case, fixed until unfixed).
    exact_coefficients : callable, optional
        For a global solver's check: ``f(m, v)`` of the model and its
        :class:`~purgeplan.equations.LoopVariables`, returning Pyomo
        expressions of the state for any of ``"recycle_work_kj_kmol"`` and
        ``"catalyst_volume_per_feed_m3_h_kmol"`` (it may add the variables
        and constraints they need to ``m``), used in place of the parameters
        the solve layer holds.
    """
    m = pyo.ConcreteModel(name=loop.name)
    pairs = [(s, c) for s in loop.streams for c in loop.components]
    m.FLOW = pyo.Set(initialize=pairs, dimen=2)
    m.REACTION = pyo.Set(initialize=range(len(loop.reactions)))
    m.SOURCE = pyo.Set(initialize=[s.name for s in loop.sources])
    m.flow = pyo.Var(m.FLOW, domain=pyo.NonNegativeReals, initialize=1.0)
    m.extent = pyo.Var(m.REACTION, initialize=1.0)
    m.source = pyo.Var(m.SOURCE, domain=pyo.NonNegativeReals, initialize=1.0)
    if design == "fixed":
        m.purge_fraction = pyo.Param(mutable=True, initialize=loop.purge_fraction)
        m.conversion = pyo.Param(m.REACTION, mutable=True, initialize=0.2)
    else:
        m.purge_fraction = pyo.Var(bounds=(loop.purge_fraction_min, loop.purge_fraction_max),
                                   initialize=loop.purge_fraction)
        m.conversion = pyo.Var(m.REACTION, bounds=(0.0, 1.0), initialize=0.2)
        m.purge_fraction.fix(loop.purge_fraction)
        m.conversion.fix()
    # state-dependent coefficients, set by the solve layer before every solve
    m.recycle_work_kj_kmol = pyo.Param(mutable=True, initialize=1000.0)
    m.catalyst_volume_per_feed_m3_h_kmol = pyo.Param(mutable=True, initialize=1.0)
    share = held = None
    if loop.separator_model != "split_fractions":  # a phase-equilibrium separator's split
        m.liquid_share = pyo.Param(list(loop.components), mutable=True, initialize=0.5)
        share = m.liquid_share
        # V = R L held where the solve layer sets the weight to 1 (see fixed_point)
        m.vapour_per_liquid_held = pyo.Param(mutable=True, initialize=0.0)
        m.vapour_per_liquid = pyo.Param(mutable=True, initialize=1.0)
        held = (m.vapour_per_liquid_held, m.vapour_per_liquid)

    v = LoopVariables(flow=m.flow, extent=m.extent, source=m.source,
                      purge_fraction=m.purge_fraction, conversion=m.conversion,
                      liquid_share=share, held_vapour_per_liquid=held)
    add_loop_equations(m, loop, v)
    exact = exact_coefficients(m, v) if exact_coefficients is not None else {}
    unknown = set(exact) - {"recycle_work_kj_kmol", "catalyst_volume_per_feed_m3_h_kmol"}
    if unknown:
        raise ValueError(f"exact_coefficients gave {sorted(unknown)}: not coefficients here")
    q = quantities(v, loop, exact.get("recycle_work_kj_kmol", m.recycle_work_kj_kmol),
                   exact.get("catalyst_volume_per_feed_m3_h_kmol",
                             m.catalyst_volume_per_feed_m3_h_kmol),
                   fuel_split=add_fuel_sink(m, loop, v),
                   water_condensing=add_water_cooler(m, loop))
    for key in ("recycle_compressor_power_kw", "makeup_compressor_power_kw", "catalyst_volume_m3",
                "reactor_feed_kmol_h", "inert_kmol_h_reactor_inlet", "disposal_heat_gj_h"):
        m.add_component(key, pyo.Expression(expr=q[key]))
        q[key] = m.component(key)
    add_limits(m, loop, q)
    add_costs(m, loop, q, capital)
    return m
