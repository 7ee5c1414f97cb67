"""Cost lines of the recovery unit, the direct feeds and the let-down gas, by hand.

Every expected number is recomputed by hand from the inputs written in this
file: the prices of ``CASE`` and the hand-made quantities of ``Q`` (no
published value is needed; the recompression and pumping work behind the
quantities of a solved state are checked against published values in
tests/test_recovery.py).  Two loops cover the branches:

- ``units_loop``: a recovery unit with a compressor of its own and recovered
  argon sold, a gas direct feed of hydrogen, the liquid let down to fuel, a
  fuel header of limited capacity, one compressor casing, a CO2 price and a
  reactor pressure factor;
- ``other_loop``: the recovery return through the make-up compressor, a
  liquid direct feed of nitrogen, the let-down gas flared, two compressors,
  no fuel capacity and no pressure factor.
"""

from __future__ import annotations

import pytest

import purgeplan
from purgeplan import costs
from purgeplan.case import parse_case_text
from purgeplan.physics.economics import capital_recovery_factor

CASE = """
[case]
name = "unit lines"

[components]
H2 = {{}}
N2 = {{}}
Ar = {{}}
CH4 = {{}}
NH3 = {{}}

[[reactions]]
name = "synthesis"
stoichiometry = {{ N2 = -1, H2 = -3, NH3 = 2 }}
key_reactant = "N2"
per_pass_conversion = 0.25

[reactor]
temperature_c = 450
{reactor}

[loop]
pressure_bar = 150
pressure_drop_bar = 8
product = "NH3"
production_t_d = 1000
purge_fraction = 0.03
inlet_ratios = [{{ numerator = "H2", denominator = "N2", value = {ratio} }}]

[separator]
temperature_c = -5
liquid_fraction = {{ NH3 = 0.9, H2 = 0.001, N2 = 0.001, Ar = 0.002, CH4 = 0.004 }}
letdown_pressure_bar = 20
letdown_destination = "{letdown}"

[sources.syngas]
composition = {syngas}
price_per_kmol = 2.0
supply_pressure_bar = 28
temperature_c = 20
{direct}

[compression]
makeup_stages = 3
makeup_efficiency = 0.8
pump_efficiency = 0.6
arrangement = "{arrangement}"

[purge]
recovery = "unit"
{purge}

[recovery_units.unit]
return_fraction = {{ H2 = 0.9 }}
capital = {{ reference_cost = 3.0e6, reference_size = 500 }}
operating_cost_per_kmol = 0.5
return_pressure_bar = 70
recompression = "{recompression}"
{export}

[economics]
hours_per_year = 8000
power_price_per_kwh = 0.07
fuel_price_per_gj = 7.5
flare_cost_per_kmol = 0.03
catalyst_price_per_m3 = 30000.0
co2_price_per_t = 80.0
compressor_capital = {{ reference_cost = 6.0e6, reference_size = 10000, exponent = 0.62 }}
reactor_capital = {{ reference_cost = 8.0e6, reference_size = 60, exponent = 0.65 }}
"""

HYDROGEN = """
[sources.hydrogen]
composition = { H2 = 1.0 }
price_per_kmol = 2.5
supply_pressure_bar = 20
temperature_c = 30
enters = "reactor_feed"
"""
LIQUID_NITROGEN = """
[sources.liquid_nitrogen]
composition = { N2 = 1.0 }
price_per_kmol = 1.5
supply_pressure_bar = 2
temperature_c = -196
enters = "reactor_feed"
phase = "liquid"
liquid_density_kg_m3 = 807
"""

UNITS = dict(
    reactor="vessel_diameter_m = 2.0\ncapital_reference_pressure_bar = 100",
    ratio=4.0, letdown="fuel", direct=HYDROGEN, arrangement="one_casing",
    # nitrogen-rich make-up, so that the hydrogen feed has something to make up
    syngas="{ H2 = 0.66, N2 = 0.33, Ar = 0.004, CH4 = 0.006 }",
    purge="fuel_capacity_gj_h = 5.0", recompression="own_compressor",
    export="export_fraction = { Ar = 0.6 }\nexport_price_per_kmol = 12.0")
OTHER = dict(
    reactor="", ratio=2.5, letdown="flare", direct=LIQUID_NITROGEN,
    arrangement="two_machines", syngas="{ H2 = 0.74, N2 = 0.25, Ar = 0.004, CH4 = 0.006 }",
    purge="", recompression="makeup_compressor", export="")


def case_text(**changes) -> str:
    return CASE.format(**{**UNITS, **changes})


def loop_of(**changes):
    return purgeplan.build_loop(parse_case_text(case_text(**changes)))


@pytest.fixture(scope="module")
def units_loop():
    return loop_of()


@pytest.fixture(scope="module")
def other_loop():
    return loop_of(**OTHER)


def _line(key, label, kind, quantity, unit, **kw):
    return costs.CostLine(key, label, kind, quantity, unit, **kw)


def _feed(name):
    return _line(f"feed:{name}", f"Feed: {name}", "hourly", f"source_kmol_h:{name}", "kmol/h",
                 price=f"price_per_kmol:{name}")


POWER = [
    _line("recycle_power", "Recycle compression power", "hourly",
          "recycle_compressor_power_kw", "kW", price="power_price_per_kwh"),
    _line("makeup_power", "Make-up compression power", "hourly",
          "makeup_compressor_power_kw", "kW", price="power_price_per_kwh")]
CATALYST = _line("catalyst_replacement", "Catalyst replacement", "replacement",
                 "catalyst_volume_m3", "m3", price="catalyst_price_per_m3",
                 life="catalyst_life_years")
RECOVERY = [
    _line("recovery_capital", "Recovery unit capital (annualised)", "capital",
          "recovery_feed_kmol_h", "kmol/h", capital="recovery"),
    _line("recovery_operation", "Recovery unit operation", "hourly", "recovery_feed_kmol_h",
          "kmol/h", price="recovery_operating_cost_per_kmol")]
PURGE_CO2 = _line("co2_emissions", "CO2 from purge gas burned or flared", "hourly",
                  "disposal_co2_t_h", "t/h", price="co2_price_per_t")
RECOMPRESSION_POWER = _line("recovery_recompression_power",
                            "Recovery return recompression power", "hourly",
                            "recovery_recompression_power_kw", "kW", price="power_price_per_kwh")
LETDOWN_CO2 = _line("letdown_co2_emissions", "CO2 from let-down gas burned or flared", "hourly",
                    "letdown_co2_t_h", "t/h", price="co2_price_per_t")


def test_every_field_of_the_lines_of_the_units(units_loop):
    """What each line prices, in which unit, with which sign (a credit or a sale is
    negative); sources in name order, the unit lines after the purge lines."""
    assert costs.cost_lines(units_loop) == [
        _feed("hydrogen"), _feed("syngas"), *POWER,
        _line("compressor_capital",
              "Compressor capital, one casing for make-up and recycle (annualised)",
              "capital", "compressor_power_kw", "kW", capital="compressor"),
        _line("reactor_capital", "Reactor and catalyst capital (annualised)", "capital",
              "catalyst_volume_m3", "m3", capital="reactor", factor="reactor_pressure_factor"),
        CATALYST, *RECOVERY,
        _line("purge_fuel_credit", "Purge gas fuel credit (up to the fuel sink capacity)",
              "hourly", "fuel_heat_gj_h", "GJ/h", price="fuel_price_per_gj", sign=-1.0),
        _line("purge_flaring", "Purge gas beyond the fuel sink capacity, flared", "hourly",
              "flared_kmol_h", "kmol/h", price="flare_cost_per_kmol"),
        PURGE_CO2, RECOMPRESSION_POWER,
        _line("recovery_recompression_capital",
              "Recovery return compressor capital (annualised)", "capital",
              "recovery_recompression_power_kw", "kW", capital="compressor"),
        _line("recovery_export_sales", "Recovered gas sold", "hourly",
              "recovery_export_sold_kmol_h", "kmol/h", price="recovery_export_price_per_kmol",
              sign=-1.0),
        _line("direct_feed_compression_power", "Direct feed compression power", "hourly",
              "direct_feed_compression_power_kw", "kW", price="power_price_per_kwh"),
        _line("direct_feed_compressor_capital", "Direct feed compressor capital (annualised)",
              "capital", "direct_feed_compression_power_kw", "kW", capital="compressor"),
        _line("letdown_fuel_credit", "Let-down gas fuel credit", "hourly", "letdown_heat_gj_h",
              "GJ/h", price="fuel_price_per_gj", sign=-1.0),
        LETDOWN_CO2]


def test_every_field_of_the_lines_of_the_other_arrangement(other_loop):
    """Through the make-up compressor the return has no machine of its own, and that
    compressor is sized on its make-up duty plus the return's; a liquid feed is pumped,
    with no compressor; let-down gas flared is a cost."""
    assert costs.cost_lines(other_loop) == [
        _feed("liquid_nitrogen"), _feed("syngas"), *POWER,
        _line("recycle_compressor_capital", "Recycle compressor capital (annualised)",
              "capital", "recycle_compressor_power_kw", "kW", capital="compressor"),
        _line("makeup_compressor_capital", "Make-up compressor capital (annualised)",
              "capital", "makeup_compressor_duty_kw", "kW", capital="compressor"),
        _line("reactor_capital", "Reactor and catalyst capital (annualised)", "capital",
              "catalyst_volume_m3", "m3", capital="reactor"),
        CATALYST, *RECOVERY,
        _line("purge_fuel_credit", "Purge gas fuel credit", "hourly", "disposal_heat_gj_h",
              "GJ/h", price="fuel_price_per_gj", sign=-1.0),
        PURGE_CO2, RECOMPRESSION_POWER,
        _line("direct_feed_pumping_power", "Direct feed pumping power", "hourly",
              "direct_feed_pumping_power_kw", "kW", price="power_price_per_kwh"),
        _line("letdown_flaring", "Let-down gas flaring", "hourly", "letdown_kmol_h", "kmol/h",
              price="flare_cost_per_kmol"),
        LETDOWN_CO2]


def test_without_a_co2_price_or_a_return_pressure_those_lines_go():
    """No CO2 price: neither CO2 line; no return pressure: no recompression line (the
    return is taken at loop pressure, see tests/test_state_warnings.py)."""
    text = case_text().replace("co2_price_per_t = 80.0\n", "").replace(
        "return_pressure_bar = 70\n", "")
    keys = [ln.key for ln in costs.cost_lines(purgeplan.build_loop(parse_case_text(text)))]
    assert not {"co2_emissions", "letdown_co2_emissions", "recovery_recompression_power",
                "recovery_recompression_capital"} & set(keys)
    assert {"recovery_export_sales", "letdown_fuel_credit", "direct_feed_compression_power",
            "purge_flaring"} <= set(keys)


def test_a_direct_feed_at_loop_pressure_has_no_lines():
    """A hydrogen feed supplied at 160 bar, above the loop's 150, needs no work."""
    loop = loop_of(direct=HYDROGEN.replace("supply_pressure_bar = 20",
                                           "supply_pressure_bar = 160"))
    assert not [ln.key for ln in costs.cost_lines(loop) if ln.key.startswith("direct_feed")]


# ---------------------------------------------------------------------------
# the assumptions the new lines price with


def test_assumptions_of_the_new_lines(units_loop, other_loop):
    a = costs.assumptions(units_loop)
    assert (a["co2_price_per_t"].value, a["co2_price_per_t"].unit,
            a["co2_price_per_t"].label, a["co2_price_per_t"].source) == (
        80.0, "EUR/t", "Emission price per tonne of CO2", "case file")
    assert (a["recovery_export_price_per_kmol"].value, a["recovery_export_price_per_kmol"].unit,
            a["recovery_export_price_per_kmol"].label) == (
        12.0, "EUR/kmol", "Price of recovered gas sold out of the loop")
    factor = a["reactor_pressure_factor"]
    assert factor.value == units_loop.prices.reactor_pressure_factor
    assert factor.value > 1.0           # 150 bar against a reference of 100 bar
    assert (factor.unit, factor.label, factor.source) == (
        "-", "Reactor vessel pressure factor at loop pressure / at the reference pressure",
        "Turton et al. eq. 7.10")
    assert a["recovery_operating_cost_per_kmol"].value == 0.5
    b = costs.assumptions(other_loop)
    assert "reactor_pressure_factor" not in b
    assert "recovery_export_price_per_kmol" not in b


# ---------------------------------------------------------------------------
# the new lines evaluated on hand-made quantities

Q = {
    "source_kmol_h:syngas": 4000.0, "source_kmol_h:hydrogen": 600.0,
    "source_kmol_h:liquid_nitrogen": 50.0,
    "recycle_compressor_power_kw": 1000.0, "makeup_compressor_power_kw": 6000.0,
    "makeup_compressor_duty_kw": 6400.0, "compressor_power_kw": 7000.0,
    "catalyst_volume_m3": 60.0, "recovery_feed_kmol_h": 500.0,
    "fuel_heat_gj_h": 5.0, "flared_kmol_h": 160.0, "disposal_heat_gj_h": 30.0,
    "disposal_co2_t_h": 0.9, "recovery_recompression_power_kw": 400.0,
    "recovery_export_sold_kmol_h": 9.0, "direct_feed_compression_power_kw": 2000.0,
    "direct_feed_pumping_power_kw": 15.0, "letdown_heat_gj_h": 5.5, "letdown_kmol_h": 20.0,
    "letdown_co2_t_h": 0.1,
}
HOURS = 8000.0
CRF = capital_recovery_factor(0.08, 20.0)       # the case defaults: 8 % over 20 years


def _evaluate(loop):
    return costs.evaluate(costs.cost_lines(loop), Q, costs.values(costs.assumptions(loop)))


def test_unit_lines_by_hand(units_loop):
    got = _evaluate(units_loop)
    # hourly lines: sign x quantity x price x 8000 h/year
    assert got["recovery_recompression_power"] == pytest.approx(400.0 * 0.07 * HOURS,
                                                                rel=1e-12)   # 224,000
    assert got["recovery_export_sales"] == pytest.approx(-9.0 * 12.0 * HOURS, rel=1e-12)
    assert got["direct_feed_compression_power"] == pytest.approx(2000.0 * 0.07 * HOURS,
                                                                 rel=1e-12)  # 1.12e6
    assert got["letdown_fuel_credit"] == pytest.approx(-5.5 * 7.5 * HOURS, rel=1e-12)
    assert got["letdown_co2_emissions"] == pytest.approx(0.1 * 80.0 * HOURS, rel=1e-12)
    assert got["co2_emissions"] == pytest.approx(0.9 * 80.0 * HOURS, rel=1e-12)   # 576,000
    # the fuel header takes 5 GJ/h; the 160 kmol/h beyond it are flared at 0.03 per kmol
    assert got["purge_fuel_credit"] == pytest.approx(-5.0 * 7.5 * HOURS, rel=1e-12)
    assert got["purge_flaring"] == pytest.approx(160.0 * 0.03 * HOURS, rel=1e-12)
    assert got["recovery_operation"] == pytest.approx(500.0 * 0.5 * HOURS, rel=1e-12)
    # capital: CRF x 6.0e6 x (S / 10000 kW)^0.62 for each compressor, the casing on
    # the total 7000 kW
    assert got["recovery_recompression_capital"] == pytest.approx(
        CRF * 6.0e6 * 0.04 ** 0.62, rel=1e-12)
    assert got["direct_feed_compressor_capital"] == pytest.approx(
        CRF * 6.0e6 * 0.2 ** 0.62, rel=1e-12)
    assert got["compressor_capital"] == pytest.approx(CRF * 6.0e6 * 0.7 ** 0.62, rel=1e-12)
    # the reactor at its reference size: CRF x 8.0e6 x the pressure factor
    factor = units_loop.prices.reactor_pressure_factor
    assert got["reactor_capital"] == pytest.approx(CRF * 8.0e6 * factor, rel=1e-12)


def test_other_arrangement_lines_by_hand(other_loop):
    got = _evaluate(other_loop)
    assert got["direct_feed_pumping_power"] == pytest.approx(15.0 * 0.07 * HOURS, rel=1e-12)
    assert got["letdown_flaring"] == pytest.approx(20.0 * 0.03 * HOURS, rel=1e-12)   # 4,800
    # all the purge heat is credited without a fuel header capacity
    assert got["purge_fuel_credit"] == pytest.approx(-30.0 * 7.5 * HOURS, rel=1e-12)
    # the make-up machine is sized on its duty with the return: 6400 kW
    assert got["makeup_compressor_capital"] == pytest.approx(CRF * 6.0e6 * 0.64 ** 0.62,
                                                             rel=1e-12)
    assert got["reactor_capital"] == pytest.approx(CRF * 8.0e6, rel=1e-12)
    assert got["catalyst_replacement"] == pytest.approx(
        capital_recovery_factor(0.08, 5.0) * 60.0 * 30000.0, rel=1e-12)


def test_a_solved_state_totals_its_unit_lines(units_loop):
    """On a solved state each unit line is its own quantity priced, and the total is the
    sum of every line."""
    s = purgeplan.steady_state(units_loop)
    q, c = s.quantities, s.costs
    for key, quantity, price in (
            ("recovery_recompression_power", "recovery_recompression_power_kw", 0.07),
            ("direct_feed_compression_power", "direct_feed_compression_power_kw", 0.07),
            ("recovery_export_sales", "recovery_export_sold_kmol_h", -12.0),
            ("letdown_fuel_credit", "letdown_heat_gj_h", -7.5),
            ("letdown_co2_emissions", "letdown_co2_t_h", 80.0)):
        assert q[quantity] > 0.0, quantity
        assert c[key] == pytest.approx(q[quantity] * price * HOURS, rel=1e-12), key
    assert s.tac_per_year == pytest.approx(sum(c.values()), rel=1e-12)


# ---------------------------------------------------------------------------
# what each reactant is worth where it is bought


def test_reactant_value_by_source_by_hand(units_loop):
    """Syngas at 2.0 per kmol carries 0.99 kmol of reactant per kmol (H2 0.66 + N2 0.33);
    hydrogen at 2.5 is all reactant.  With 1000 kmol/h of syngas and 100 of hydrogen:
    H2 bought 660 + 100 kmol/h for 660 x 2.0 / 0.99 + 100 x 2.5 = 1333.33 + 250, so
    1583.33 / 760 = 2.08333 per kmol; N2 only from syngas, 2.0 / 0.99 = 2.0202."""
    value = costs.reactant_value_per_kmol(units_loop, {"syngas": 1000.0, "hydrogen": 100.0})
    assert set(value) == {"H2", "N2"}
    assert value["H2"] == pytest.approx((660.0 * 2.0 / 0.99 + 250.0) / 760.0, rel=1e-12)
    assert value["N2"] == pytest.approx(2.0 / 0.99, rel=1e-12)


def test_a_source_not_bought_adds_nothing(units_loop):
    """A source missing from the flows is a source not bought: H2 from syngas only."""
    value = costs.reactant_value_per_kmol(units_loop, {"syngas": 1000.0})
    assert value == pytest.approx({"H2": 2.0 / 0.99, "N2": 2.0 / 0.99}, rel=1e-12)
    # nothing bought at all: nothing to value, so zero rather than a division by zero
    assert costs.reactant_value_per_kmol(units_loop, {}) == {"H2": 0.0, "N2": 0.0}


def test_a_source_with_no_reactant_is_left_out():
    """A make-up source of pure argon carries no reactant; it neither adds to what the
    reactants cost nor divides by its zero reactant content."""
    text = case_text().replace("[compression]", """[sources.argon]
composition = { Ar = 1.0 }
price_per_kmol = 9.0
supply_pressure_bar = 28

[compression]""")
    loop = purgeplan.build_loop(parse_case_text(text))
    value = costs.reactant_value_per_kmol(loop, {"syngas": 1000.0, "argon": 50.0})
    assert value == pytest.approx({"H2": 2.0 / 0.99, "N2": 2.0 / 0.99}, rel=1e-12)


def test_the_reactants_do_not_depend_on_how_the_reaction_is_scaled():
    """The same synthesis written a quarter as large, 0.25 N2 + 0.75 H2 = 0.5 NH3: the
    reactants are still H2 and N2 (consumed, a negative coefficient), not the product."""
    text = case_text().replace("stoichiometry = { N2 = -1, H2 = -3, NH3 = 2 }",
                               "stoichiometry = { N2 = -0.25, H2 = -0.75, NH3 = 0.5 }")
    loop = purgeplan.build_loop(parse_case_text(text))
    value = costs.reactant_value_per_kmol(loop, {"syngas": 1000.0, "hydrogen": 100.0})
    assert value == pytest.approx({"H2": (660.0 * 2.0 / 0.99 + 250.0) / 760.0,
                                   "N2": 2.0 / 0.99}, rel=1e-12)
