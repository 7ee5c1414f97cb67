"""Let-down of the liquid product: the dissolved gas released as a stream with its credit or cost.

Reference: Henry's law, x_i = y_i P / H_i (Smith, Van Ness and Abbott,
*Introduction to Chemical Engineering Thermodynamics*, 7th ed., section 10.4;
from memory; docs/references.md section 9): with the released gas taken at
the composition of the separator vapour, the liquid keeps the fraction
P_letdown / P_separator of each dissolved gas.  The product (and any other
component that is liquid at let-down pressure) stays in the liquid.
Cost lines are checked by hand from the stated quantities.
"""

from __future__ import annotations

import pytest

import purgeplan
from purgeplan.case import parse_case_text
from purgeplan.errors import CaseError
from purgeplan.physics.separation import dissolved_gas_released_fraction
from purgeplan.results import with_balances

CASE = """
[case]
name = "let-down test loop"

[components]
H2 = {}
N2 = {}
Ar = {}
CH4 = {}
NH3 = {}

[[reactions]]
name = "synthesis"
stoichiometry = { N2 = -1, H2 = -3, NH3 = 2 }
key_reactant = "N2"
per_pass_conversion = 0.25

[reactor]
temperature_c = 450

[loop]
pressure_bar = 150
pressure_drop_bar = 8
product = "NH3"
production_t_d = 1000
purge_fraction = 0.03

[separator]
temperature_c = -5
liquid_fraction = { NH3 = "condensation", H2 = 0.001, N2 = 0.001, Ar = 0.002, CH4 = 0.004 }
letdown_pressure_bar = 20
letdown_destination = "fuel"

[sources.syngas]
composition = { H2 = 0.7395, N2 = 0.2465, Ar = 0.003, CH4 = 0.011 }
price_per_kmol = 2.3
supply_pressure_bar = 28

[economics]
hours_per_year = 8000
power_price_per_kwh = 0.07
fuel_price_per_gj = 7.5
flare_cost_per_kmol = 0.03
compressor_capital = { reference_cost = 6.0e6, reference_size = 10000, exponent = 0.62 }
reactor_capital = { reference_cost = 8.0e6, reference_size = 60, exponent = 0.65 }
"""

DISSOLVED = ("H2", "N2", "Ar", "CH4")


def state_of(text: str):
    loop = purgeplan.build_loop(parse_case_text(text))
    return loop, purgeplan.steady_state(loop)


def test_released_fraction_by_henrys_law():
    # Henry's law (Smith, Van Ness and Abbott section 10.4; from memory): the liquid keeps
    # 20/142 of each dissolved gas, so 1 - 20/142 = 0.859155 is released.
    assert dissolved_gas_released_fraction(20.0, 142.0) == pytest.approx(1 - 20 / 142, rel=1e-15)
    with pytest.raises(ValueError):
        dissolved_gas_released_fraction(150.0, 142.0)


def test_dissolved_gas_is_released_and_the_product_stays_liquid():
    loop, s = state_of(CASE)
    f = s.flows
    released = 1.0 - 20.0 / 142.0
    for c in DISSOLVED:
        assert f["letdown_gas"][c] == pytest.approx(released * f["liquid_product"][c], rel=1e-12)
        assert f["letdown_liquid"][c] == pytest.approx(
            f["liquid_product"][c] - f["letdown_gas"][c], rel=1e-9, abs=1e-12)
    assert f["letdown_gas"]["NH3"] == 0.0
    assert f["letdown_liquid"]["NH3"] == pytest.approx(f["liquid_product"]["NH3"], rel=1e-15)


def test_the_fuel_credit_by_hand():
    loop, s = state_of(CASE)
    heat = sum(s.flows["letdown_gas"][c] * loop.data[c].lhv_kj_mol / 1000.0 for c in DISSOLVED)
    assert s.quantities["letdown_heat_gj_h"] == pytest.approx(heat, rel=1e-12)
    # -1 x GJ/h x 7.5 per GJ x 8000 h/year
    assert s.costs["letdown_fuel_credit"] == pytest.approx(-heat * 7.5 * 8000.0, rel=1e-12)
    assert heat > 0.0


def test_flaring_the_letdown_gas_is_a_cost():
    loop, s = state_of(CASE.replace('letdown_destination = "fuel"',
                                    'letdown_destination = "flare"'))
    kmol = sum(s.flows["letdown_gas"].values())
    assert s.costs["letdown_flaring"] == pytest.approx(kmol * 0.03 * 8000.0, rel=1e-12)
    assert "letdown_fuel_credit" not in s.costs


def test_balances_count_the_letdown_streams_as_outlets():
    loop, s = state_of(CASE)
    assert "letdown_gas" in loop.outlet_streams and "letdown_liquid" in loop.outlet_streams
    assert s.balance_error < 1e-9
    # not vacuous: the let-down liquid alone, without its gas, leaves a visible imbalance
    fed = {c: s.flows["makeup"][c] for c in loop.components}
    made = {c: loop.reactions[0].stoichiometry.get(c, 0.0) * s.extents[0]
            for c in loop.components}
    left = {c: s.flows["letdown_liquid"][c] + s.flows["purge"][c] for c in loop.components}
    worst = max(abs(fed[c] + made[c] - left[c]) for c in loop.components) / sum(fed.values())
    assert worst > 1e-6


def test_without_letdown_there_is_no_stream():
    loop, s = state_of(CASE.replace("letdown_pressure_bar = 20\n", ""))
    assert "letdown_gas" not in s.flows
    assert not any("letdown" in k for k in s.costs)


def test_a_liquid_feed_component_stays_liquid():
    # benzene at 40 degC has a vapour pressure of about 0.24 bar (from memory), far below
    # a let-down to 5 bar, so it stays in the liquid; hydrogen and methane are released
    text = open("cases/hydrogenation_demo.toml", encoding="utf-8").read()
    split = 'liquid_fraction = { cyclohexane = "condensation"'
    text = text.replace(split, "letdown_pressure_bar = 5\n" + split)
    case = parse_case_text(text)
    name, _, alt = purgeplan.expand_alternatives(case)[0]
    loop = purgeplan.build_loop(alt, name)
    release = loop.letdown_release_fraction
    assert release["benzene"] == 0.0 and release["cyclohexane"] == 0.0
    low = loop.pressure_bar - loop.pressure_drop_bar
    assert release["H2"] == pytest.approx(1 - 5.0 / low) and release["CH4"] == release["H2"]


def test_the_demo_credits_its_letdown_gas():
    case, _ = purgeplan.load_case("cases/ammonia_demo.toml")
    alts = {n: c for n, _, c in purgeplan.expand_alternatives(case)}
    name = "makeup_grade=standard, purge_destination=fuel, recovery=none"
    loop = purgeplan.build_loop(alts[name], name)
    s = with_balances(loop, purgeplan.steady_state(loop))
    assert s.costs["letdown_fuel_credit"] < 0.0
    assert s.flows["letdown_gas"]["CH4"] > 0.0 and s.flows["letdown_gas"]["H2"] > 0.0
    assert s.balance_error < 1e-9


@pytest.mark.parametrize(("old", "new", "path"), [
    ("letdown_pressure_bar = 20", "letdown_pressure_bar = 142", "separator.letdown_pressure_bar"),
    # NH3 at -5 degC boils at about 3.5 bar (from memory): a let-down to 2 bar would flash it
    ("letdown_pressure_bar = 20", "letdown_pressure_bar = 2", "separator.letdown_pressure_bar"),
    ('letdown_destination = "fuel"', 'letdown_destination = "sea"',
     "separator.letdown_destination"),
])
def test_bad_letdown_is_refused_with_its_key_path(old, new, path):
    with pytest.raises(CaseError) as err:
        parse_case_text(CASE.replace(old, new))
    assert err.value.path == path


def test_letdown_gas_pays_for_its_co2():
    # carbon balance: 1 C per CH4, 44.009 kg CO2 per kmol (purgeplan.physics.emissions);
    # line = t/h x price x 8000 h/year
    text = CASE.replace("hours_per_year = 8000", "hours_per_year = 8000\nco2_price_per_t = 80.0")
    loop, s = state_of(text)
    tonnes = s.flows["letdown_gas"]["CH4"] * 44.009 / 1000.0
    assert s.quantities["letdown_co2_t_h"] == pytest.approx(tonnes, rel=1e-12)
    assert s.costs["letdown_co2_emissions"] == pytest.approx(tonnes * 80.0 * 8000.0, rel=1e-12)
