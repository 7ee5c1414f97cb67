"""The study layer in parts, on a small ammonia loop: executors, levers, typed records.

The loop is the one-reaction case of ``conftest.case_toml`` on the production
basis (fixed per-pass conversion 0.25, 8000 h/year, power 0.07 EUR/kWh) with a
fuel price and a catalyst price added, so that every lever has a non-zero
value to move.  Two make-up grades make a break-even: "gas" (1 % argon,
2.0 EUR/kmol) and "pure" (0.1 % argon, 2.1 EUR/kmol).  All of these numbers
are invented for the tests.

References: each expected loop is built here from the lever's own definition
(the named field times the factor, capped as the lever states); each
direction of TAC follows from the cost model's signs (a dearer input costs
more, a larger credit or a more efficient machine costs less).
"""

from __future__ import annotations

import dataclasses

import pytest
from conftest import case_toml, loop_from_text

from purgeplan.build import build_loop
from purgeplan.case import expand_alternatives, parse_case_text
from purgeplan.errors import Status
from purgeplan.output.json_out import study_document
from purgeplan.solve import optimise
from purgeplan.study import (
    LEVERS,
    MAX_HOURS_PER_YEAR,
    Alternative,
    BreakEven,
    SensitivityRow,
    Swing,
    Task,
    VariantOptima,
    run_sensitivity,
    run_study,
    run_tasks,
    with_source_prices,
)

GAS = {"N2": 0.25, "H2": 0.74, "Ar": 0.01}
PURE = {"N2": 0.2497, "H2": 0.7493, "Ar": 0.001}
EXTRA_ECONOMICS = "fuel_price_per_gj = 4.0\ncatalyst_price_per_m3 = 20000.0\n"
GRADES = """
[sources.pure]
composition = { N2 = 0.2497, H2 = 0.7493, Ar = 0.001 }
price_per_kmol = 2.1
supply_pressure_bar = 30.0

[options.grade.gas]
makeup_sources = ["gas"]
[options.grade.pure]
makeup_sources = ["pure"]

[options.destination.fuel]
purge = { destination = "fuel" }
[options.destination.flare]
purge = { destination = "flare" }
"""


def small_text(reaction: str = 'per_pass = "fixed"\nper_pass_conversion = 0.25',
               grades: bool = False) -> str:
    text = case_toml(makeup=GAS, liquid_fraction={"NH3": 0.9}, basis="production",
                     reaction=reaction)
    assert text.count("[economics]\n") == 1
    text = text.replace("[economics]\n", "[economics]\n" + EXTRA_ECONOMICS)
    return text + GRADES if grades else text


@pytest.fixture(scope="module")
def loop():
    return loop_from_text(small_text())


@pytest.fixture(scope="module")
def base_tac(loop):
    opt = optimise(loop, details=False)
    assert opt.status is Status.OPTIMAL
    return opt.state.tac_per_year


@pytest.fixture(scope="module")
def alternatives():
    """The four alternatives of the two-grade case (grade x purge destination), unoptimised."""
    case = parse_case_text(small_text(grades=True))
    return [Alternative(name, choices, build_loop(c, name), None)
            for name, choices, c in expand_alternatives(case)]


# ---------------------------------------------------------------------------
# executors: the same results whatever runs the tasks


@pytest.fixture(scope="module")
def tasks(alternatives):
    """One task per alternative, an infeasible twin, and one task with variants."""
    out = [Task(("base", a.name), a.loop) for a in alternatives]
    first = alternatives[0].loop
    # an inert limit below the 1 % argon of the "gas" grade: no purge can meet it
    assert first.makeup_sources[0].composition["Ar"] == 0.01
    tight = dataclasses.replace(first, name="tight", max_inert_fraction_reactor_inlet=0.005)
    out.append(Task(("base", "tight"), tight))
    variants = tuple(((lever, a.name), LEVERS[lever].apply(a.loop, 1.2)[0])
                     for a in alternatives[:2] for lever in ("power_price", "hours_per_year"))
    out.append(Task(("variants", alternatives[1].name), alternatives[1].loop, None, False,
                    variants))
    return out


def _summary(results) -> dict:
    """Status, TAC and purge fraction of every optimum, variants included, by key."""
    out = {}
    for key, result in results.items():
        optima = result.optima if isinstance(result, VariantOptima) else {key: result}
        for k, opt in optima.items():
            s = opt.state
            out[k] = (opt.status, opt.feasible, s.tac_per_year if s else None,
                      s.purge_fraction if s else None, dict(s.costs) if s else None)
    return out


@pytest.fixture(scope="module")
def in_process(tasks):
    return run_tasks(tasks, jobs=1)


def test_in_process_results_are_in_task_order_with_their_statuses(tasks, in_process):
    assert list(in_process) == [t.key for t in tasks]
    summary = _summary(in_process)
    assert summary[("base", "tight")][0] is Status.INFEASIBLE
    assert [v[0] for k, v in summary.items() if k != ("base", "tight")] == \
        [Status.OPTIMAL] * (len(summary) - 1)
    assert isinstance(in_process[tasks[-1].key], VariantOptima)
    assert len(in_process[tasks[-1].key].optima) == 4


def test_process_pool_gives_the_in_process_results(tasks, in_process):
    pooled = run_tasks(tasks, jobs=2)
    assert list(pooled) == list(in_process)
    assert _summary(pooled) == _summary(in_process)


def test_dask_cluster_gives_the_in_process_results(tasks, in_process):
    from distributed import Client, LocalCluster

    with LocalCluster(n_workers=2, threads_per_worker=1, processes=True, host="127.0.0.1",
                      dashboard_address=None) as cluster, Client(cluster) as client:
        done = []
        remote = run_tasks(tasks, client=client, progress=done.append)
    assert sum(done) == len(tasks)
    assert list(remote) == list(in_process)
    assert _summary(remote) == _summary(in_process)


# ---------------------------------------------------------------------------
# levers: each moves the field it names, and TAC the way the cost model says


def _prices(loop, **changes):
    return dataclasses.replace(loop, prices=dataclasses.replace(loop.prices, **changes))


def _capitals(loop, f):
    p = loop.prices
    return _prices(loop, **{name: dataclasses.replace(c, reference_cost=c.reference_cost * f)
                            for name in ("compressor_capital", "reactor_capital")
                            if (c := getattr(p, name)) is not None})


def _fixed_conversion(loop, f):
    r = loop.reactions[0]
    return dataclasses.replace(loop, reactions=(dataclasses.replace(
        r, per_pass_conversion=r.per_pass_conversion * f),))


#: lever -> (the loop it must return at factor f, sign of the TAC change at f > 1)
EXPECTED = {
    "makeup_gas_price": (lambda lp, f: _prices(lp, source_price_per_kmol={
        n: p * f for n, p in lp.prices.source_price_per_kmol.items()}), +1),
    "power_price": (lambda lp, f: _prices(
        lp, power_price_per_kwh=lp.prices.power_price_per_kwh * f), +1),
    "fuel_price": (lambda lp, f: _prices(
        lp, fuel_price_per_gj=lp.prices.fuel_price_per_gj * f), -1),
    "catalyst_price": (lambda lp, f: _prices(
        lp, catalyst_price_per_m3=lp.prices.catalyst_price_per_m3 * f), +1),
    "capital_cost": (_capitals, +1),
    "discount_rate": (lambda lp, f: _prices(lp, discount_rate=lp.prices.discount_rate * f), +1),
    # 8000 h x 1.2 = 9600 h is more than a year has: the lever stops at 366 x 24 = 8784 h
    "hours_per_year": (lambda lp, f: _prices(lp, hours_per_year=8784.0), +1),
    "compressor_efficiency": (lambda lp, f: dataclasses.replace(
        lp, recycle_efficiency=lp.recycle_efficiency * f,
        makeup_efficiency=lp.makeup_efficiency * f), -1),
    "per_pass_performance": (_fixed_conversion, -1),
}


def test_every_lever_has_an_expectation():
    assert set(EXPECTED) == set(LEVERS)


@pytest.mark.parametrize("name", list(EXPECTED))
def test_lever_moves_its_field_and_tac(name, loop, base_tac):
    expected, sign = EXPECTED[name]
    moved, _ = LEVERS[name].apply(loop, 1.2)
    assert moved != loop, "the lever must change the loop"
    assert moved == expected(loop, 1.2)
    opt = optimise(moved, details=False)
    assert opt.status is Status.OPTIMAL
    change = opt.state.tac_per_year - base_tac
    assert change * sign > 1e-9 * base_tac, (name, change)


def test_small_loop_values_the_expectations_rely_on(loop):
    """The case values behind EXPECTED: none capped at 1.2 except the hours."""
    assert loop.prices.hours_per_year == 8000.0
    assert loop.recycle_efficiency * 1.2 < 1.0 and loop.makeup_efficiency * 1.2 < 1.0
    assert loop.reactions[0].per_pass == "fixed"
    assert loop.reactions[0].per_pass_conversion == 0.25
    assert loop.prices.recovery_capital is None
    assert loop.destination == "fuel"


def test_per_pass_lever_moves_the_approach_to_equilibrium():
    loop = loop_from_text(small_text(
        'per_pass = "equilibrium"\napproach_to_equilibrium = 0.8\n'
        'equilibrium = { constant = "ammonia_gillespie_beattie" }'))
    moved, applied = LEVERS["per_pass_performance"].apply(loop, 1.2)
    r = loop.reactions[0]
    assert moved == dataclasses.replace(loop, reactions=(dataclasses.replace(
        r, approach_to_equilibrium=0.8 * 1.2),))
    assert applied == 1.2
    # 0.9 x 1.2 = 1.08: an approach above equilibrium is capped at 1
    near = dataclasses.replace(loop, reactions=(dataclasses.replace(
        r, approach_to_equilibrium=0.9),))
    moved, applied = LEVERS["per_pass_performance"].apply(near, 1.2)
    assert moved.reactions[0].approach_to_equilibrium == 1.0
    assert applied == pytest.approx(1.0 / 0.9, rel=1e-12)


@pytest.mark.parametrize("hours, high", [(7000.0, 1.2), (8000.0, 8784.0 / 8000.0)])
def test_hours_lever_reports_the_factor_it_applies(loop, hours, high):
    """7000 h x 1.2 = 8400 h fits in a year; 8000 h x 1.2 = 9600 h does not (8784 h)."""
    at = _prices(loop, hours_per_year=hours)
    moved, applied = LEVERS["hours_per_year"].apply(at, 1.2)
    assert moved.prices.hours_per_year == min(hours * 1.2, 8784.0)
    assert applied == pytest.approx(high, rel=1e-12)
    moved, applied = LEVERS["hours_per_year"].apply(at, 0.8)
    assert moved.prices.hours_per_year == hours * 0.8 and applied == 0.8
    assert MAX_HOURS_PER_YEAR == 366 * 24


def test_lever_with_nothing_to_move_applies_factor_one(loop):
    free_fuel = _prices(loop, fuel_price_per_gj=0.0)
    moved, applied = LEVERS["fuel_price"].apply(free_fuel, 1.2)
    assert moved == free_fuel and applied == 1.0


@pytest.fixture(scope="module")
def sensitivity(loop):
    alt = Alternative("small", {}, loop, optimise(loop, details=False))
    return alt, run_sensitivity([alt], 0.2)


def test_sensitivity_rows_record_the_factors_applied(sensitivity, loop):
    alt, rows = sensitivity
    assert [r.lever for r in rows] == list(LEVERS)
    assert all(isinstance(r, SensitivityRow) for r in rows)
    by = {r.lever: r for r in rows}
    hours = by["hours_per_year"]
    assert (hours.low_factor, hours.high_factor) == (0.8, 1.2)
    assert hours.low_factor_applied == 0.8
    assert hours.high_factor_applied == pytest.approx(8784.0 / 8000.0, rel=1e-12)
    assert hours.tac["small"].high_factor_applied == hours.high_factor_applied
    assert "8784" in hours.note and "1.098" in hours.note
    # the TAC at "high" is the optimum at 8784 h, not at 9600 h
    capped = optimise(_prices(loop, hours_per_year=8784.0), details=False)
    assert hours.tac["small"].high == pytest.approx(capped.state.tac_per_year, rel=1e-12)
    for lever, row in by.items():
        if lever != "hours_per_year":
            assert (row.low_factor_applied, row.high_factor_applied) == (0.8, 1.2), lever
            assert row.note is None, lever


def test_sensitivity_swings_are_the_optima_of_the_moved_loops(sensitivity, loop):
    alt, rows = sensitivity
    power = next(r for r in rows if r.lever == "power_price")
    swing = power.tac["small"]
    assert isinstance(swing, Swing)
    assert swing.base == alt.optimum.state.tac_per_year
    for side, f in (("low", 0.8), ("high", 1.2)):
        moved = _prices(loop, power_price_per_kwh=0.07 * f)
        assert getattr(swing, side) == pytest.approx(
            optimise(moved, details=False).state.tac_per_year, rel=1e-9)
    assert power.best_at_low == power.best_at_high == "small"
    assert power.best_changes is False


# ---------------------------------------------------------------------------
# the break-even record


BREAK_EVEN_FIELDS = ["grade", "base_grade", "alternative", "base_alternative",
                     "base_price_per_kmol", "grade_price_per_kmol", "tie_price_per_kmol",
                     "premium_per_kmol", "premium_percent", "tac_at_tie_per_year", "note"]


@pytest.fixture(scope="module")
def study():
    return run_study(parse_case_text(small_text(grades=True)), "sha",
                     sensitivity_alternatives=1)


def test_break_even_record_fields_by_name(study):
    assert [f.name for f in dataclasses.fields(BreakEven)] == BREAK_EVEN_FIELDS
    (be,) = study.break_even
    by = {a.name: a for a in study.alternatives}

    def best(grade):
        return min((a for a in study.ranked if a.choices["grade"] == grade),
                   key=lambda a: a.optimum.state.tac_per_year)

    assert be.grade == "pure" and be.base_grade == "gas"   # 0.1 % against 1 % argon
    assert be.alternative == best("pure").name
    assert be.base_alternative == best("gas").name
    assert be.base_price_per_kmol == 2.0 and be.grade_price_per_kmol == 2.1  # case prices
    assert be.premium_per_kmol == pytest.approx(be.tie_price_per_kmol - 2.0, rel=1e-12)
    assert be.premium_percent == pytest.approx(100 * be.premium_per_kmol / 2.0, rel=1e-12)
    target = by[be.base_alternative].optimum.state.tac_per_year
    assert be.tac_at_tie_per_year == pytest.approx(target, rel=1e-9)
    tie = optimise(with_source_prices(by[be.alternative].loop, {"pure": be.tie_price_per_kmol}),
                   details=False)
    assert tie.state.tac_per_year == pytest.approx(target, rel=1e-6)
    assert be.note is None


def test_json_writes_the_records_under_their_field_names(study):
    doc = study_document(study)
    (entry,) = doc["break_even"]
    assert list(entry) == BREAK_EVEN_FIELDS
    be = study.break_even[0]
    assert all(entry[k] == getattr(be, k) for k in BREAK_EVEN_FIELDS)
    row_fields = [f.name for f in dataclasses.fields(SensitivityRow)]
    swing_fields = [f.name for f in dataclasses.fields(Swing)]
    assert len(doc["sensitivity"]) == len(LEVERS)
    for entry, row in zip(doc["sensitivity"], study.sensitivity, strict=True):
        assert list(entry) == row_fields
        assert entry["high_factor_applied"] == row.high_factor_applied
        (name,) = entry["tac"]
        assert list(entry["tac"][name]) == swing_fields
        assert entry["tac"][name]["high"] == row.tac[name].high
    assert doc["ranking"] == [a.name for a in study.ranked]
