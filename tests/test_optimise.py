"""The optimiser against independent evaluations of the same loop.

The reference for every optimum is the direct engine (``purgeplan.engine``),
which solves the loop equations as a dense linear system with numpy and uses
neither Pyomo nor HiGHS, scanned densely over the purge fraction and refined
with SciPy's bounded Brent search.  A global solver (SCIP, through Pyomo's
``scip_direct``) solves a small case with the purge fraction free.
"""

from __future__ import annotations

import math
import tomllib
from pathlib import Path

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from scipy.optimize import brentq, minimize_scalar

from purgeplan import build_loop, expand_alternatives, limits, load_case
from purgeplan.case import validate_case_dict
from purgeplan.engine import steady_state
from purgeplan.errors import NoSteadyStateError
from purgeplan.solve import Status, evaluate_at, optimise, solve_exact_with

CASES = Path(__file__).resolve().parents[1] / "cases"


def _alternatives(name):
    case, _ = load_case(CASES / name)
    return [(n, build_loop(c, n)) for n, _, c in expand_alternatives(case)]


def _engine_tac(loop, a):
    """TAC by the direct engine, inf where a case limit is violated."""
    try:
        s = steady_state(loop, a)
    except NoSteadyStateError:
        return math.inf
    y = loop.max_inert_fraction_reactor_inlet
    if y is not None and s.inert_fraction_reactor_inlet > y:
        return math.inf
    return s.tac_per_year


def _engine_minimum(loop, points=160):
    """Dense log scan of the engine, feasibility edge by Brent's root, then bounded Brent."""
    grid = np.geomspace(loop.purge_fraction_min, loop.purge_fraction_max, points)
    vals = np.array([_engine_tac(loop, a) for a in grid])
    i = int(np.argmin(vals))
    lo = grid[max(i - 1, 0)]
    hi = grid[min(i + 1, points - 1)]
    if i > 0 and not math.isfinite(vals[i - 1]):
        y = loop.max_inert_fraction_reactor_inlet
        lo = brentq(lambda a: steady_state(loop, a).inert_fraction_reactor_inlet - y,
                    grid[i - 1], grid[i], xtol=1e-14, rtol=1e-13)
        lo = lo * (1 + 1e-12)
    res = minimize_scalar(lambda a: _engine_tac(loop, a), bounds=(lo, hi), method="bounded",
                          options={"xatol": 1e-10})
    candidates = [(res.fun, res.x), (_engine_tac(loop, lo), lo), (vals[i], grid[i])]
    return min(candidates)


@pytest.mark.parametrize("case_file", ["ammonia_demo.toml", "hydrogenation_demo.toml"])
def test_optimum_agrees_with_dense_engine_scan(case_file):
    """The reported TAC is within 1e-5 relative of the engine's minimum (issue tolerance)."""
    for name, loop in _alternatives(case_file):
        opt = optimise(loop)
        assert opt.status is Status.OPTIMAL, (name, opt.message)
        if loop.blend_free:
            _check_blend_against_engine(loop, opt)
            continue
        tac_ref, a_ref = _engine_minimum(loop)
        tac = opt.state.tac_per_year
        assert abs(tac - tac_ref) <= 1e-5 * tac_ref, (name, tac, tac_ref, a_ref)
        # the optimiser's state is the engine's state at the same purge fraction
        same = steady_state(loop, opt.state.purge_fraction)
        assert same.tac_per_year == pytest.approx(tac, rel=1e-9)
        assert opt.state.balance_error < 1e-9
        # the cost curve brackets the optimum and lies on or above it
        assert min(p.tac_per_year for p in opt.curve) >= tac * (1 - 1e-9)


def _check_blend_against_engine(loop, opt):
    """A loop whose blend is free: the engine at the optimiser's purge fraction and blend.

    The engine has no freedom of its own (it takes the shares of each group of
    sources as given), so it is run at the blend HiGHS chose: the same state
    and TAC, the balances closed and every state limit met.
    """
    s = opt.state
    groups: dict[str, list] = {}
    for src in loop.sources:
        groups.setdefault(src.enters, []).append(src.name)
    shares = {n: s.sources[n] / sum(s.sources[m] for m in names)
              for names in groups.values() for n in names if len(names) > 1}
    same = steady_state(loop, s.purge_fraction, conversion=s.conversion, shares=shares)
    assert same.tac_per_year == pytest.approx(s.tac_per_year, rel=1e-7)
    assert same.balance_error < 1e-9 and s.balance_error < 1e-9
    assert limits.worst_margin(limits.state_limits(loop), same.quantities) <= 1e-7


def _small_case_text(**loop_extra):
    """A hand-checkable loop: fixed conversion, one inert, constant heat capacities.

    Constant, equal heat capacities make the recycle gas's heat-capacity ratio
    independent of composition, and an ideal gas its compressibility, so the
    global solver sees exactly the same model.
    """
    extra = "".join(f"{k} = {v}\n" for k, v in loop_extra.items())
    return f"""
[components]
H2 = {{ heat_capacity_j_mol_k = 29.1 }}
N2 = {{ heat_capacity_j_mol_k = 29.1 }}
Ar = {{ heat_capacity_j_mol_k = 29.1 }}
NH3 = {{ heat_capacity_j_mol_k = 29.1 }}

[[reactions]]
name = "synthesis"
stoichiometry = {{ N2 = -1, H2 = -3, NH3 = 2 }}
key_reactant = "N2"
per_pass_conversion = 0.25

[reactor]
temperature_c = 450

[loop]
pressure_bar = 150
pressure_drop_bar = 10
product = "NH3"
production_t_d = 500
purge_fraction_min = 0.0005
purge_fraction_max = 0.4
{extra}
[separator]
temperature_c = -10
liquid_fraction = {{ NH3 = 0.9, H2 = 0.0, N2 = 0.0, Ar = 0.0 }}

[sources.syngas]
composition = {{ H2 = 0.745, N2 = 0.2483333333, Ar = 0.0066666667 }}
price_per_kmol = 2.5
supply_pressure_bar = 30

[economics]
power_price_per_kwh = 0.08
fuel_price_per_gj = 6.0
compressor_capital = {{ reference_cost = 4.0e6, reference_size = 5000, exponent = 0.62 }}
reactor_capital = {{ reference_cost = 5.0e6, reference_size = 40, exponent = 0.65 }}
catalyst_price_per_m3 = 12000

[compression]
gas_model = "ideal_gas"
"""


def _small_loop(**loop_extra):
    raw = tomllib.loads(_small_case_text(**loop_extra))
    return build_loop(validate_case_dict(raw), "small")


def test_global_solver_finds_the_same_optimum():
    """SCIP (spatial branch and bound) on the full nonconvex model: same optimum within its gap."""
    pytest.importorskip("pyscipopt")
    loop = _small_loop()
    a, tac, results, opt = solve_exact_with(loop, "scip_direct", **{"limits/gap": 1e-7})
    assert "optimal" in str(results.solver.termination_condition)
    assert tac == pytest.approx(opt.state.tac_per_year, rel=1e-6)
    assert a == pytest.approx(opt.state.purge_fraction, rel=1e-3)


def test_global_solver_agrees_with_a_fuel_sink_of_limited_capacity():
    """The demo's standard grade (its fuel header takes 45 GJ/h, the rest is flared) at a
    fixed per-pass conversion: SCIP with the purge fraction free finds the same optimum.

    SCIP is asked for a gap of 2e-6: with the refrigeration unit's capital, one more
    concave term, its lower bound stalls at a gap of 1.1e-6 for over a minute, while its
    solution agrees with the reduced space to 3e-10 (measured)."""
    pytest.importorskip("pyscipopt")
    raw = tomllib.loads((CASES / "ammonia_demo.toml").read_text())
    for key in ("options", "alternatives", "exclude"):
        raw.pop(key, None)
    raw["makeup_sources"] = ["standard"]
    reaction = raw["reactions"][0]
    reaction.update(per_pass="fixed", per_pass_conversion=0.1745)
    for key in ("approach_to_equilibrium", "equilibrium", "rate"):
        reaction.pop(key)
    loop = build_loop(validate_case_dict(raw), "fuel sink")
    assert loop.fuel_capacity_gj_h == 45.0
    assert loop.prices.refrigeration_capital is not None
    a, tac, results, opt = solve_exact_with(loop, "scip_direct", **{"limits/gap": 2e-6})
    assert "optimal" in str(results.solver.termination_condition)
    assert tac == pytest.approx(opt.state.tac_per_year, rel=1e-6)
    assert a == pytest.approx(opt.state.purge_fraction, rel=1e-3)


def test_tighter_inert_limit_binds():
    """An inert limit below the unconstrained optimum's inert level binds and is reported."""
    # an alternative whose optimum lies inside the inert limit (with the standard grade the
    # let-down gas credit takes the demo's optimum to its limit)
    name = "makeup_grade=purified, purge_destination=fuel, recovery=none"
    loop = dict(_alternatives("ammonia_demo.toml"))[name]
    free = optimise(loop)
    assert "max_inert_fraction_reactor_inlet" not in free.binding_constraints
    limit = 0.8 * free.state.inert_fraction_reactor_inlet
    import dataclasses

    tight = optimise(dataclasses.replace(loop, max_inert_fraction_reactor_inlet=limit))
    assert tight.feasible
    assert "max_inert_fraction_reactor_inlet" in tight.binding_constraints
    assert tight.state.inert_fraction_reactor_inlet == pytest.approx(limit, rel=1e-6)
    assert tight.state.purge_fraction > free.state.purge_fraction
    assert tight.state.tac_per_year >= free.state.tac_per_year


def test_infeasible_specifications_give_reasons():
    """Each impossible limit is reported as infeasible with its reason, not raised."""
    cases = {
        "max_inert_fraction_reactor_inlet = 0.005": "inert fraction of the cleanest make-up",
        "max_recycle_power_kw = 1.0": "recycle compressor power limit",
    }
    for extra, reason in cases.items():
        key, value = extra.split(" = ")
        opt = optimise(_small_loop(**{key: value}))
        assert opt.status is Status.INFEASIBLE
        assert reason in opt.message, opt.message
    raw = tomllib.loads(_small_case_text())
    raw["sources"]["syngas"]["supply_limit_kmol_h"] = 100.0
    opt = optimise(build_loop(validate_case_dict(raw), "short supply"))
    assert opt.status is Status.INFEASIBLE and "supply below demand" in opt.message
    raw = tomllib.loads(_small_case_text())
    raw["reactions"][0]["per_pass_conversion"] = 0.9
    raw["reactions"][0]["equilibrium"] = {"constant": "ammonia_gillespie_beattie"}
    opt = optimise(build_loop(validate_case_dict(raw), "above equilibrium"))
    assert opt.status is Status.INFEASIBLE and "above its equilibrium" in opt.message


def test_time_limit_and_solver_fault_are_reported(monkeypatch):
    """A time limit and a HiGHS failure mark the alternative failed with the reason."""
    loop = _small_loop()
    opt = optimise(loop, time_limit_s=1e-9)
    assert opt.status is Status.TIME_LIMIT and "time limit" in opt.message

    from pyomo.contrib.solver.solvers.highs import Highs

    def broken(self, model, **kwargs):
        raise RuntimeError("simulated HiGHS fault")

    monkeypatch.setattr(Highs, "solve", broken)
    opt = optimise(loop, route="highs")
    assert opt.status is Status.FAILED and "simulated HiGHS fault" in opt.message
    assert evaluate_at(loop, 0.01, route="highs").status is Status.FAILED


# -- comparative statics (economics of the trade: what each price does to the purge) --------
# The direction of each effect is common practice in purge design (no single published
# source is cited): dearer make-up gas favours a smaller purge, a larger fuel credit and
# more inert in the make-up favour a larger one, dearer recycle power favours a larger one.

def _statics_loop():
    name, loop = next((n, lp) for n, lp in _alternatives("ammonia_demo.toml")
                      if n == "makeup_grade=standard, purge_destination=fuel, recovery=none")
    return loop


STATICS = settings(max_examples=4, deadline=None,
                   suppress_health_check=[HealthCheck.too_slow])


@STATICS
@given(st.floats(1.05, 1.6))
def test_dearer_makeup_gas_never_raises_the_purge(factor):
    import dataclasses

    loop = _statics_loop()
    src = loop.sources[0]
    price = loop.prices.source_price_per_kmol[src.name]
    dear = dataclasses.replace(loop, prices=dataclasses.replace(
        loop.prices, source_price_per_kmol={src.name: price * factor}))
    assert optimise(dear).state.purge_fraction <= optimise(loop).state.purge_fraction * (1 + 1e-6)


@STATICS
@given(st.floats(1.1, 3.0))
def test_larger_fuel_credit_never_lowers_the_purge(factor):
    import dataclasses

    loop = _statics_loop()
    rich = dataclasses.replace(loop, prices=dataclasses.replace(
        loop.prices, fuel_price_per_gj=loop.prices.fuel_price_per_gj * factor))
    assert optimise(rich).state.purge_fraction >= optimise(loop).state.purge_fraction * (1 - 1e-6)


@STATICS
@given(st.floats(1.1, 2.0))
def test_more_inert_in_makeup_never_lowers_the_purge(factor):
    case, _ = load_case(CASES / "ammonia_demo.toml")
    raw = tomllib.loads((CASES / "ammonia_demo.toml").read_text())
    for key in ("options", "alternatives", "exclude"):
        raw.pop(key, None)
    raw["makeup_sources"] = ["standard"]
    raw["loop"].pop("max_inert_fraction_reactor_inlet")
    # with the fuel header full (the demo's standard-grade purge carries about its
    # capacity) the purge is set by the header: a richer gas fills it at a smaller purge
    raw["purge"].pop("fuel_capacity_gj_h")
    # with the separator's cooling the property does not hold: where the reactor outlet's
    # dew point lies above the water cooler's outlet, a larger purge also moves condensing
    # from refrigeration to cooling water, and more inert can take the loop out of that
    # range (at 1.5 times the inert the optimum purge falls from 0.0124 to 0.0118)
    raw["separator"].pop("cooling")
    base = build_loop(validate_case_dict(raw), "base")
    comp = raw["sources"]["standard"]["composition"]
    inert = comp["Ar"] + comp["CH4"]
    new_inert = inert * factor
    scale = (1 - new_inert) / (1 - inert)
    comp.update(H2=comp["H2"] * scale, N2=comp["N2"] * scale, Ar=comp["Ar"] * factor,
                CH4=1.0 - comp["H2"] * scale - comp["N2"] * scale - comp["Ar"] * factor)
    dirty = build_loop(validate_case_dict(raw), "dirty")
    assert optimise(dirty).state.purge_fraction >= optimise(base).state.purge_fraction * (1 - 1e-6)


@STATICS
@given(st.floats(1.1, 3.0))
def test_dearer_power_never_lowers_the_purge(factor):
    """Dearer power makes recycle compression dearer, which favours a larger purge.

    It also makes make-up compression dearer, and a larger purge needs more
    make-up gas, so the two effects oppose; in this loop the recycle effect
    dominates (checked here, not assumed).
    """
    import dataclasses

    loop = _statics_loop()
    dear = dataclasses.replace(loop, prices=dataclasses.replace(
        loop.prices, power_price_per_kwh=loop.prices.power_price_per_kwh * factor))
    assert optimise(dear).state.purge_fraction >= optimise(loop).state.purge_fraction * (1 - 1e-6)


# -- the LP's own freedom (source blend) and a sized reactor, against 2-D engine scans ------

def _blend_loop():
    """Two make-up grades at once: a cheap one with a supply limit, a purer dear one."""
    raw = tomllib.loads(_small_case_text())
    raw["sources"]["syngas"]["supply_limit_kmol_h"] = 1500.0
    raw["sources"]["pure"] = {"composition": {"H2": 0.75, "N2": 0.25}, "price_per_kmol": 2.9,
                              "supply_pressure_bar": 30}
    return build_loop(validate_case_dict(raw), "blend")


def test_source_blend_is_optimal_against_a_two_dimensional_engine_scan():
    loop = _blend_loop()
    opt = optimise(loop)
    assert opt.status is Status.OPTIMAL, opt.message
    s = opt.state
    total = sum(s.sources.values())
    share = s.sources["syngas"] / total
    # the LP's state is the engine's state at the LP's blend
    same = steady_state(loop, s.purge_fraction, shares={"syngas": share, "pure": 1 - share})
    assert same.tac_per_year == pytest.approx(s.tac_per_year, rel=1e-9)
    assert s.sources["syngas"] <= 1500.0 * (1 + 1e-9)
    best = math.inf
    for a in np.geomspace(s.purge_fraction / 3, min(3 * s.purge_fraction, 0.4), 41):
        for w in np.linspace(0.0, 1.0, 41):
            st = steady_state(loop, a, shares={"syngas": w, "pure": 1 - w})
            if st.sources["syngas"] <= 1500.0:
                best = min(best, st.tac_per_year)
    assert s.tac_per_year <= best * (1 + 1e-9)
    assert "supply_limit_kmol_h:syngas" in opt.binding_constraints


def test_sized_reactor_optimum_against_a_two_dimensional_engine_scan():
    raw = tomllib.loads(_small_case_text())
    raw["reactions"][0] = {
        "name": "synthesis", "stoichiometry": {"N2": -1, "H2": -3, "NH3": 2},
        "key_reactant": "N2", "per_pass": "sized",
        "sizing": {"reference_conversion": 0.25, "reference_volume_m3": 40.0,
                   "reference_feed_kmol_h": 15000.0, "equilibrium_conversion": 0.45,
                   "conversion_min": 0.05, "conversion_max": 0.42}}
    loop = build_loop(validate_case_dict(raw), "sized")
    opt = optimise(loop)
    assert opt.status is Status.OPTIMAL, opt.message
    s = opt.state
    x = s.first_reaction_conversion

    def tac(a, xx):
        return steady_state(loop, a, conversion={0: xx}).tac_per_year

    assert tac(s.purge_fraction, x) == pytest.approx(s.tac_per_year, rel=1e-9)
    grid = min(tac(a, xx) for a in np.geomspace(s.purge_fraction / 2, 2 * s.purge_fraction, 31)
               for xx in np.linspace(max(0.05, x - 0.05), min(0.42, x + 0.05), 31))
    assert s.tac_per_year <= grid * (1 + 1e-9)
    res = minimize_scalar(lambda xx: tac(s.purge_fraction, xx), bounds=(0.05, 0.42),
                          method="bounded", options={"xatol": 1e-9})
    assert s.tac_per_year <= res.fun * (1 + 1e-7)
