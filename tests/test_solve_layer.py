"""The solve layer's parts against each other: HiGHS adapter routes, solve routes, the fixed point.

Each check compares two independent routes to the same answer (the direct linear
solve of the loop equations and HiGHS; HiGHS re-run directly and through Pyomo's
public ``solve()``), or an end-to-end behaviour of the command line.
"""

from __future__ import annotations

import tomllib

import pyomo.environ as pyo
import pytest
from conftest import case_toml, loop_from_text

import purgeplan
from purgeplan import build_loop
from purgeplan.case import validate_case_dict
from purgeplan.cli import main
from purgeplan.errors import Status
from purgeplan.highs_adapter import PersistentLP
from purgeplan.model import build_model
from purgeplan.reduced_space import ROUTE_DIRECT, ROUTE_HIGHS, LoopLP
from purgeplan.solve import optimise

SMALL = tomllib.loads(case_toml(makeup={"H2": 0.745, "N2": 0.2483333333, "Ar": 0.0066666667},
                                liquid_fraction={"NH3": 0.9}, basis="production",
                                production_t_d=500.0, separator_temperature_c=-10.0))


def _blend_loop():
    """Two make-up grades, the cheaper one with a supply limit: the LP keeps freedom."""
    raw = {**SMALL, "sources": {
        "gas": {**SMALL["sources"]["gas"], "supply_limit_kmol_h": 1500.0},
        "pure": {"composition": {"H2": 0.75, "N2": 0.25}, "price_per_kmol": 2.9,
                 "supply_pressure_bar": 30.0}}}
    return build_loop(validate_case_dict(raw), "blend")


def _solution(model) -> list[float]:
    return [v.value for v in model.component_data_objects(pyo.Var) if not v.fixed]


def _set_design(m, purge_fraction: float) -> None:
    m.purge_fraction = purge_fraction
    m.conversion[0] = 0.25
    m.recycle_work_kj_kmol = 250.0
    m.catalyst_volume_per_feed_m3_h_kmol = 1e-4
    m.limit_relaxation = 0.0


def test_direct_highs_rerun_matches_the_public_solve():
    """Re-solves run on the HiGHS instance directly give the public solve()'s answer."""
    loop = _blend_loop()
    direct, public = build_model(loop), build_model(loop)
    lp_direct, lp_public = PersistentLP(direct), PersistentLP(public, direct=False)
    for a in (0.01, 0.02, 0.05, 0.003):
        _set_design(direct, a)
        _set_design(public, a)
        assert lp_direct.solve() is Status.OPTIMAL
        assert lp_public.solve() is Status.OPTIMAL
        assert _solution(direct) == pytest.approx(_solution(public), rel=1e-9, abs=1e-9)
        assert pyo.value(direct.tac) == pytest.approx(pyo.value(public.tac), rel=1e-12)
    assert lp_direct.routes == {"public solve()": 1, "direct run()": 3}
    assert lp_public.routes == {"public solve()": 4}


def _move_every_parameter(m, step: int) -> None:
    """Every mutable parameter of the model to a new value (capital tangents included)."""
    _set_design(m, 0.004 * (1 + step))
    m.conversion[0] = 0.18 + 0.03 * step
    m.recycle_work_kj_kmol = 200.0 + 40.0 * step
    m.catalyst_volume_per_feed_m3_h_kmol = 1e-4 * (1 + step)
    for k in m.CAPITAL:
        m.capital_size0[k] = 10.0 * (1 + step)
        m.capital_value0[k] = 1e6 * (1 + 0.5 * step)
        m.capital_slope[k] = 6e4 / (1 + step)


def test_compiled_parameter_push_matches_the_interface_update():
    """Pushing parameters by the compiled coefficients gives what update() and solve() give."""
    loop = _blend_loop()
    models = [build_model(loop) for _ in range(3)]
    lps = [PersistentLP(models[0]), PersistentLP(models[1], compiled=False),
           PersistentLP(models[2], direct=False)]
    for step in range(5):
        for m, lp in zip(models, lps, strict=True):
            _move_every_parameter(m, step)
            assert lp.solve() is Status.OPTIMAL
        tac = [pyo.value(m.tac) for m in models]
        # HiGHS's own objective is the model's TAC: every cost and offset was pushed
        for m, lp in zip(models, lps, strict=True):
            assert lp.objective_value() == pytest.approx(pyo.value(m.tac), rel=1e-9)
        assert tac[0] == pytest.approx(tac[2], rel=1e-12)
        assert tac[1] == pytest.approx(tac[2], rel=1e-12)
        assert _solution(models[0]) == pytest.approx(_solution(models[2]), rel=1e-9, abs=1e-9)
    # where Pyomo's interface keeps its table of mutable coefficients, the push is compiled
    if hasattr(lps[0].solver, "_mutable_helpers"):
        assert lps[0].pushes_compiled
    assert not lps[1].pushes_compiled
    assert lps[0].routes == lps[1].routes == {"public solve()": 1, "direct run()": 4}


def test_parameter_push_falls_back_when_the_coefficient_table_is_missing():
    from purgeplan.highs_adapter import ParameterPush

    class Hidden:  # an interface without the table of mutable coefficients
        pass
    assert ParameterPush.build(Hidden()) is None


def test_direct_route_falls_back_when_the_interface_hides_its_instance():
    loop = _blend_loop()
    m = build_model(loop)
    lp = PersistentLP(m)
    _set_design(m, 0.02)
    lp.solve()
    lp._highs = lambda: None  # an interface that does not expose its HiGHS instance
    _set_design(m, 0.04)
    assert lp.solve() is Status.OPTIMAL
    assert lp.routes == {"public solve()": 2}


def test_square_lp_by_direct_solve_agrees_with_highs():
    """With no freedom left the direct linear solve and HiGHS find the same optimum."""
    loop = build_loop(validate_case_dict(SMALL), "square")
    auto, highs = optimise(loop), optimise(loop, route="highs")
    assert auto.solver.route == ROUTE_DIRECT and highs.solver.route == ROUTE_HIGHS
    assert auto.state.route == ROUTE_DIRECT and highs.state.route == ROUTE_HIGHS
    assert auto.state.tac_per_year == pytest.approx(highs.state.tac_per_year, rel=1e-9)
    assert auto.state.purge_fraction == pytest.approx(highs.state.purge_fraction, rel=1e-5)
    assert "direct linear solve" in auto.solver.method
    assert "HiGHS LP" in highs.solver.method


def test_blend_goes_to_highs():
    opt = optimise(_blend_loop())
    assert opt.status is Status.OPTIMAL and opt.solver.route == ROUTE_HIGHS


@pytest.mark.parametrize("route", ["auto", "highs"])
def test_reduced_space_state_is_the_engine_steady_state(route):
    """The optimiser's evaluation and the engine share one fixed point: same answer.

    Equilibrium reactor of the ammonia demo (Gillespie-Beattie with Dyson-Simon
    fugacities), at two purge fractions."""
    case, _ = purgeplan.load_case(purgeplan.cli.data_file("cases", "ammonia_demo.toml"))
    name, _, alt = purgeplan.expand_alternatives(case)[-1]
    loop = build_loop(alt, name)
    solver = LoopLP(loop, route=route)
    for a in (0.004, 0.012):
        mine = solver.evaluate(a, enforce_limits=False)
        engine = purgeplan.steady_state(loop, a)
        assert mine.conversion[0] == pytest.approx(engine.conversion[0], abs=1e-9)
        assert mine.tac_per_year == pytest.approx(engine.tac_per_year, rel=1e-8)


# -- an alternative with no steady state anywhere ---------------------------------------

def _hopeless_text() -> str:
    """At 0 degC and 77 bar the separator vapour holds about 5.6 % NH3 (see test_engine);
    purging at least 30 % of it at 0.4 % per-pass conversion removes more NH3 than the
    reactor makes, so no purge fraction the case allows gives a liquid product."""
    text = case_toml(makeup={"H2": 0.7425, "N2": 0.2475, "Ar": 0.01},
                     liquid_fraction={"NH3": "condensation"},
                     reaction='per_pass = "fixed"\nper_pass_conversion = 0.004',
                     pressure_bar=80.0, purge_fraction=0.4)
    return text.replace("purge_fraction = 0.4\n",
                        "purge_fraction = 0.4\npurge_fraction_min = 0.3\n")


def test_no_steady_state_anywhere_is_an_infeasible_alternative():
    opt = optimise(loop_from_text(_hopeless_text()))
    assert opt.status is Status.INFEASIBLE
    assert "no physical steady state" in opt.message and "liquid_product" in opt.message


def test_optimize_reports_the_hopeless_alternative_and_solves_the_other(tmp_path, capsys):
    usual = ('{ name = "synthesis", stoichiometry = { N2 = -1, H2 = -3, NH3 = 2 }, '
             'key_reactant = "N2", per_pass = "fixed", per_pass_conversion = 0.25 }')
    text = _hopeless_text() + f"""
[options.conversion.low]
[options.conversion.usual]
reactions = [{usual}]
"""
    path = tmp_path / "two.toml"
    path.write_text(text)
    code = main(["optimize", str(path)])
    raw = capsys.readouterr().out
    out = " ".join(raw.split())  # the table wraps long reasons
    assert code == 3
    assert "at any purge fraction up to" in out
    assert "no physical steady state" in out
    solved = [line for line in raw.splitlines() if line.lstrip().startswith("1 ")]
    assert len(solved) == 1 and "usual" in solved[0], raw


# -- the reason and likely cause of no steady state; evaluate with a limit not met -------

def _demo(*edits: tuple[str, str]):
    text = purgeplan.cli.data_file("cases", "ammonia_demo.toml").read_text()
    for old, new in edits:
        assert old in text
        text = text.replace(old, new)
    case = purgeplan.parse_case_text(text)
    name, _, alt = next(a for a in purgeplan.expand_alternatives(case)
                        if a[0] == "makeup_grade=standard, purge_destination=fuel, recovery=none")
    return build_loop(alt, name)


#: The demo's reactor at 743 "degC" (a temperature in kelvin), at 150 bar: at its own
#: 160 bar a steady state remains, with a per-pass conversion of 0.6 %.
HOT = (("temperature_c = 470", "temperature_c = 743"), ("pressure_bar = 160", "pressure_bar = 150"))


def test_reactor_temperature_in_kelvin_is_named_as_the_likely_cause():
    """The demo's 470 degC written as 743 (470 + 273.15, a temperature in kelvin): the
    equilibrium conversion of N2 is then below what the loop needs at any purge fraction,
    and the message says so, with the hint on the unit."""
    opt = optimise(_demo(*HOT))
    assert opt.status is Status.INFEASIBLE
    assert "allows a per-pass conversion of N2 of only" in opt.message
    assert "743 degC" in opt.message and "is it in kelvin?" in opt.message
    # check and optimize use the same words: the reason at the case's purge fraction
    at = purgeplan.solve.evaluate_at(_demo(*HOT), 0.03)
    assert at.status is Status.INFEASIBLE and at.state is None
    assert "allows a per-pass conversion of N2 of only" in at.message


def test_evaluate_reports_the_state_and_the_limit_not_met():
    """At a purge fraction of 0.001 the demo's loop carries far more than 25 % inerts: the
    state and its costs are reported, the result is infeasible and names the limit."""
    loop = _demo()
    at = purgeplan.solve.evaluate_at(loop, 0.001)
    assert at.status is Status.INFEASIBLE and not at.feasible
    assert at.state is not None and at.state.tac_per_year > 0
    assert at.state.inert_fraction_reactor_inlet > 0.25
    assert "max_inert_fraction_reactor_inlet" in at.binding_constraints
    assert "the inert limit at the reactor inlet (0.25)" in at.message
    assert "cannot be met at the purge fraction 0.001" in at.message
    ok = purgeplan.solve.evaluate_at(loop, 0.03)
    assert ok.status is Status.OPTIMAL and ok.binding_constraints == []


def test_lp_repriced_in_place_gives_the_lp_built_at_the_new_prices():
    """One model re-priced through its price parameters against a model built at those prices."""
    import dataclasses

    loop = _blend_loop()
    # the pure grade now cheaper than the limited one (the blend turns over), dearer power
    # and a dearer compressor (its capital tangent must move)
    compressor = loop.prices.compressor_capital
    dearer = dataclasses.replace(loop, prices=dataclasses.replace(
        loop.prices, power_price_per_kwh=2.0 * loop.prices.power_price_per_kwh,
        source_price_per_kmol={**loop.prices.source_price_per_kmol, "pure": 1.5},
        compressor_capital=dataclasses.replace(compressor,
                                               reference_cost=1.5 * compressor.reference_cost)))
    repriced = LoopLP(loop)
    for a in (0.01, 0.03):
        repriced.evaluate(a)
    assert repriced.can_reprice_lp(dearer)
    repriced.reprice_lp(dearer)
    fresh = LoopLP(dearer)
    for a in (0.03, 0.01, 0.04):  # first where the capital sizes have not moved
        mine, theirs = repriced.evaluate(a), fresh.evaluate(a)
        assert mine.tac_per_year == pytest.approx(theirs.tac_per_year, rel=1e-9)
        assert mine.sources == pytest.approx(theirs.sources, rel=1e-7, abs=1e-9)
        assert repriced.lp.objective_value() == pytest.approx(fresh.lp.objective_value(),
                                                              rel=1e-9)
    assert repriced.evaluate(0.02).sources != pytest.approx(
        LoopLP(loop).evaluate(0.02).sources, rel=1e-3)  # the blend did turn over
    # capital dearer alone, at the purge fraction solved last: the sizes stay where they
    # were, and the capital tangents must still move to the new cost
    capital_only = dataclasses.replace(loop, prices=dataclasses.replace(
        loop.prices, compressor_capital=dearer.prices.compressor_capital))
    again, fresh = LoopLP(loop), LoopLP(capital_only)
    again.evaluate(0.02)
    again.reprice_lp(capital_only)
    again.evaluate(0.02)
    fresh.evaluate(0.02)
    assert again.lp.objective_value() == pytest.approx(fresh.lp.objective_value(), rel=1e-9)
    # a discount rate moves the annualised catalyst charge, a constant of the LP: rebuilt
    other_rate = dataclasses.replace(loop, prices=dataclasses.replace(loop.prices,
                                                                      discount_rate=0.12))
    assert not LoopLP(loop).can_reprice_lp(other_rate)
    assert not LoopLP(loop).can_reprice_lp(dataclasses.replace(loop, pressure_bar=180.0))
