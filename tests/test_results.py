"""A steady state evaluated from hand-made flows: balance closure, totals, memo and ratios.

Every expected number is recomputed by hand from the flows and prices written in this
file.  The hand-made state is the ammonia loop N2 + 3 H2 = 2 NH3 at a reaction extent of
200 kmol/h and a purge fraction of 0.05:

=================  ======  =====  =====  ====
kmol/h             H2      N2     Ar     NH3
=================  ======  =====  =====  ====
makeup             740     250    10     0
recycle            2641    931    180.5  380
reactor_feed       3381    1181   190.5  380
reactor_outlet     2781    981    190.5  780
separator_vapour   2780    980    190    400
purge              139     49     9.5    20
liquid_product     1       1      0.5    380
=================  ======  =====  =====  ====

The reaction uses 200 N2 and 600 H2 and makes 400 NH3; what is bought (1000 kmol/h)
plus what is made equals what leaves in the liquid and the purge, species by species
and element by element.  Every number is a multiple of 0.5, so the closure is exact
in floating point.
"""

from __future__ import annotations

import copy
import math
import re

import pytest
from conftest import case_toml, loop_from_text

from purgeplan import costs
from purgeplan.results import costing, make_state, with_balances

MAKEUP = {"H2": 0.74, "N2": 0.25, "Ar": 0.01}
LIQUID = {"NH3": 0.95, "H2": 0.002, "N2": 0.004, "Ar": 0.003}
# A molar mass of 17 kg/kmol for the product, so its tonnage is recomputed by hand.
OVERRIDES = {"NH3": {"molar_mass_kg_kmol": 17.0}}
PRICES = """hours_per_year = 8400.0
fuel_price_per_gj = 4.0
product_price_per_t = 350.0
catalyst_price_per_m3 = 30000.0
catalyst_life_years = 4.0
"""

FLOWS = {
    "makeup": {"H2": 740.0, "N2": 250.0, "Ar": 10.0, "NH3": 0.0},
    "recycle": {"H2": 2641.0, "N2": 931.0, "Ar": 180.5, "NH3": 380.0},
    "reactor_feed": {"H2": 3381.0, "N2": 1181.0, "Ar": 190.5, "NH3": 380.0},
    "reactor_outlet": {"H2": 2781.0, "N2": 981.0, "Ar": 190.5, "NH3": 780.0},
    "separator_vapour": {"H2": 2780.0, "N2": 980.0, "Ar": 190.0, "NH3": 400.0},
    "purge": {"H2": 139.0, "N2": 49.0, "Ar": 9.5, "NH3": 20.0},
    "liquid_product": {"H2": 1.0, "N2": 1.0, "Ar": 0.5, "NH3": 380.0},
}
EXTENTS = [200.0]
SOURCES = {"gas": 1000.0}
WORK_KJ_KMOL = 600.0
VOLUME_PER_FEED = 0.01      # m3 per kmol/h of reactor feed


def loop_text(stoichiometry=None, key_reactant="N2"):
    text = case_toml(makeup=MAKEUP, liquid_fraction=LIQUID, component_overrides=OVERRIDES,
                     stoichiometry=stoichiometry, key_reactant=key_reactant)
    # the prices of this file replace any the shared case sets
    text = re.sub(r"^(hours_per_year|fuel_price_per_gj|product_price_per_t|catalyst_price_per_m3"
                  r"|catalyst_life_years) = .*\n", "", text, flags=re.M)
    return text.replace("[economics]\n", "[economics]\n" + PRICES)


@pytest.fixture(scope="module")
def loop():
    return loop_from_text(loop_text())


def scaled(flows, k):
    return {s: {c: k * f for c, f in fl.items()} for s, fl in flows.items()}


def state_of(loop, flows=FLOWS, extents=EXTENTS, sources=SOURCES, **kwargs):
    flows = copy.deepcopy(flows)
    return make_state(loop, 0.05, {0: 200.0 / 1181.0}, flows, list(extents), dict(sources),
                      WORK_KJ_KMOL, VOLUME_PER_FEED, **kwargs)


# ---------------------------------------------------------------------------
# what the state carries


def test_state_carries_its_inputs(loop):
    state = state_of(loop, equilibrium_conversion={0: 0.3}, route="direct")
    assert state.name == loop.name
    assert state.purge_fraction == 0.05
    assert state.conversion == {0: 200.0 / 1181.0}
    assert state.first_reaction_conversion == 200.0 / 1181.0
    assert state.flows == FLOWS
    assert state.extents == [200.0]
    assert state.sources == {"gas": 1000.0}
    assert state.recycle_work_kj_kmol == 600.0
    assert state.catalyst_volume_per_feed_m3_h_kmol == 0.01
    assert state.equilibrium_conversion == {0: 0.3}
    assert state.route == "direct"


def test_state_defaults(loop):
    state = state_of(loop)
    assert state.equilibrium_conversion == {}
    assert state.route == ""


def test_quantities_of_the_state(loop):
    q = state_of(loop).quantities
    # recycle 2641 + 931 + 180.5 + 380 = 4132.5 kmol/h x 600 kJ/kmol / 3600 s/h / 0.75
    assert q["recycle_compressor_power_kw"] == pytest.approx(918.3333333333, rel=1e-12)
    # reactor feed 3381 + 1181 + 190.5 + 380 = 5132.5 kmol/h; catalyst 0.01 x 5132.5 m3
    assert q["reactor_feed_kmol_h"] == pytest.approx(5132.5, rel=1e-12)
    assert q["catalyst_volume_m3"] == pytest.approx(51.325, rel=1e-12)
    assert q["inert_kmol_h_reactor_inlet"] == pytest.approx(190.5, rel=1e-12)
    assert q["disposal_kmol_h"] == pytest.approx(217.5, rel=1e-12)
    # 380 kmol/h of NH3 x 17 kg/kmol = 6.46 t/h
    assert q["product_t_h"] == pytest.approx(6.46, rel=1e-12)
    assert q["source_kmol_h:gas"] == 1000.0
    assert q["per_pass_conversion:0"] == 200.0 / 1181.0


def test_costs_total_and_cost_per_tonne(loop):
    state = state_of(loop)
    lines, table = costing(loop)
    assert [ln.key for ln in lines] == [ln.key for ln in costs.cost_lines(loop)]
    assert state.costs == pytest.approx(costs.evaluate(lines, state.quantities, table),
                                        rel=1e-12)
    # make-up gas 1000 kmol/h x 2.0 per kmol x 8400 h; the product value is a credit
    assert state.costs["feed:gas"] == pytest.approx(16.8e6, rel=1e-12)
    assert state.costs["product_value"] == pytest.approx(-6.46 * 350.0 * 8400.0, rel=1e-12)
    assert state.tac_per_year == pytest.approx(sum(state.costs.values()), rel=1e-12)
    # 6.46 t/h x 8400 h/year = 54,264 t/year
    assert state.cost_per_tonne_product == pytest.approx(state.tac_per_year / 54264.0,
                                                         rel=1e-12)


def test_given_pricing_is_used(loop):
    lines, table = costing(loop)
    cheaper = dict(table, **{"price_per_kmol:gas": 1.0})
    state = state_of(loop, pricing=(lines, cheaper))
    assert state.costs["feed:gas"] == pytest.approx(1000.0 * 1.0 * 8400.0, rel=1e-12)


def test_ratios_of_the_state(loop):
    state = state_of(loop)
    # inerts at the converter inlet: 190.5 of 5132.5 kmol/h
    assert state.inert_fraction_reactor_inlet == pytest.approx(190.5 / 5132.5, rel=1e-12)
    # key reactant N2: 200 kmol/h consumed of 250 fed
    assert state.overall_conversion == pytest.approx(0.8, rel=1e-12)


def test_lost_reactant_memo(loop):
    state = state_of(loop)
    # 2.0 per kmol of gas buys 740 + 250 = 990 kmol/h of reactant: 2000 / 990 per kmol;
    # H2 and N2 leave with the liquid (1 + 1) and the purge (139 + 49): 190 kmol/h
    assert state.lost_reactant_memo_per_year == pytest.approx(
        190.0 * (2000.0 / 990.0) * 8400.0, rel=1e-12)
    assert "lost_reactant_memo" not in state.costs


def test_memo_counts_reactants_only_whatever_the_scale_of_the_stoichiometry():
    """N2 + 3 H2 = 2 NH3 written as 0.25 N2 + 0.75 H2 = 0.5 NH3: the same reaction.  The
    memo depends on the flows only, so it is the same; the key reactant consumed is the
    extent times 0.25, so the extent for the same state is four times larger."""
    quarter = loop_from_text(loop_text(stoichiometry={"N2": -0.25, "H2": -0.75, "NH3": 0.5}))
    state = state_of(quarter, extents=[800.0])
    assert state.lost_reactant_memo_per_year == pytest.approx(
        190.0 * (2000.0 / 990.0) * 8400.0, rel=1e-12)
    assert state.overall_conversion == pytest.approx(0.8, rel=1e-12)
    assert state.species_balance_error == 0.0
    assert state.element_balance_error == 0.0


def test_no_gas_bought_prices_the_losses_at_nothing(loop):
    # no make-up gas is bought: no reactant has a price, and the H2 and N2 that leave are
    # valued at zero
    assert state_of(loop, sources={"gas": 0.0}).lost_reactant_memo_per_year == 0.0


def test_an_empty_loop(loop):
    """No flow at all: no cost per tonne (no product), and the ratios are zero, not NaN."""
    state = state_of(loop, scaled(FLOWS, 0.0), extents=[0.0], sources={"gas": 0.0})
    assert state.tac_per_year == 0.0
    assert state.cost_per_tonne_product == math.inf
    assert state.lost_reactant_memo_per_year == 0.0
    assert state.inert_fraction_reactor_inlet == 0.0
    assert state.overall_conversion == 0.0
    assert state.species_balance_error == 0.0
    assert state.element_balance_error == 0.0


def test_a_tiny_loop_has_the_same_ratios():
    """The hand-made state at 1/100,000 of its flows (0.01 kmol/h of make-up, 0.0038 kmol/h
    of product, 0.54 t/year): intensive results do not depend on the size."""
    loop = loop_from_text(loop_text())
    k = 1e-5
    state = state_of(loop, scaled(FLOWS, k), extents=[200.0 * k], sources={"gas": 1000.0 * k})
    assert state.inert_fraction_reactor_inlet == pytest.approx(190.5 / 5132.5, rel=1e-12)
    assert state.overall_conversion == pytest.approx(0.8, rel=1e-12)
    assert state.lost_reactant_memo_per_year == pytest.approx(
        k * 190.0 * (2000.0 / 990.0) * 8400.0, rel=1e-12)
    tonnes = k * 6.46 * 8400.0
    assert tonnes < 1.0
    assert state.cost_per_tonne_product == pytest.approx(state.tac_per_year / tonnes, rel=1e-12)
    assert state.species_balance_error == pytest.approx(0.0, abs=1e-15)
    assert state.element_balance_error == pytest.approx(0.0, abs=1e-15)


# ---------------------------------------------------------------------------
# balance closure, recomputed from the streams


def test_closed_balances(loop):
    state = state_of(loop)
    assert state.species_balance_error == 0.0
    assert state.element_balance_error == 0.0
    assert state.balance_error == 0.0


def test_species_and_element_errors_by_hand(loop):
    # 10 kmol/h of H2 goes missing from the purge (139 -> 129)
    flows = copy.deepcopy(FLOWS)
    flows["purge"]["H2"] = 129.0
    state = state_of(loop, flows)
    # species: H2 740 - 600 - (1 + 129) = 10 kmol/h against 1000 kmol/h fed
    assert state.species_balance_error == pytest.approx(0.01, rel=1e-12)
    # hydrogen atoms: 2 x 10 = 20 kmol/h against 2 x 740 = 1480 kmol/h fed
    assert state.element_balance_error == pytest.approx(20.0 / 1480.0, rel=1e-12)
    assert state.balance_error == pytest.approx(20.0 / 1480.0, rel=1e-12)


def test_errors_of_either_sign_count(loop):
    # 10 kmol/h of H2 too many in the purge (139 -> 149): the same size of error
    flows = copy.deepcopy(FLOWS)
    flows["purge"]["H2"] = 149.0
    state = state_of(loop, flows)
    assert state.species_balance_error == pytest.approx(0.01, rel=1e-12)
    assert state.element_balance_error == pytest.approx(20.0 / 1480.0, rel=1e-12)


def test_the_largest_error_is_reported(loop):
    # H2 short by 10 kmol/h and N2 short by 30: the N2 error is the larger of the species,
    # nitrogen atoms (2 x 30 = 60 of 500 fed) the larger of the elements
    flows = copy.deepcopy(FLOWS)
    flows["purge"]["H2"] = 129.0
    flows["purge"]["N2"] = 19.0
    state = state_of(loop, flows)
    assert state.species_balance_error == pytest.approx(0.03, rel=1e-12)
    assert state.element_balance_error == pytest.approx(60.0 / 500.0, rel=1e-12)
    # the species error beats the element error when the element is abundant: 1 kmol/h of
    # argon too many in the purge is 0.001 of the feed but 0.1 of the argon fed
    flows = copy.deepcopy(FLOWS)
    flows["purge"]["Ar"] = 10.5
    state = state_of(loop, flows)
    assert state.species_balance_error == pytest.approx(0.001, rel=1e-12)
    assert state.element_balance_error == pytest.approx(0.1, rel=1e-12)
    assert state.balance_error == pytest.approx(0.1, rel=1e-12)


def test_an_element_the_feeds_do_not_carry(loop):
    # a make-up with no argon, while 10 kmol/h of argon leaves: argon is measured against
    # all atoms fed, 2 x 740 (H) + 2 x 250 (N) = 1980 kmol/h
    flows = copy.deepcopy(FLOWS)
    flows["makeup"]["Ar"] = 0.0
    state = state_of(loop, flows)
    assert state.species_balance_error == pytest.approx(10.0 / 990.0, rel=1e-12)
    assert state.element_balance_error == pytest.approx(10.0 / 1980.0, rel=1e-12)


def test_errors_of_a_tiny_loop_are_relative(loop):
    """The errors above at 1/10,000 of the flows: the same relative errors, also below
    1 kmol/h of feed (0.1 kmol/h) and of each element fed (0.148 kmol/h of H atoms)."""
    k = 1e-4
    flows = scaled(FLOWS, k)
    flows["purge"]["H2"] = 129.0 * k
    state = state_of(loop, flows, extents=[200.0 * k])
    assert state.species_balance_error == pytest.approx(0.01, rel=1e-9)
    assert state.element_balance_error == pytest.approx(20.0 / 1480.0, rel=1e-9)
    flows = scaled(FLOWS, k)
    flows["makeup"]["Ar"] = 0.0
    state = state_of(loop, flows, extents=[200.0 * k])
    assert state.element_balance_error == pytest.approx(10.0 / 1980.0, rel=1e-9)


def test_balances_left_out_and_added_later(loop):
    flows = copy.deepcopy(FLOWS)
    flows["purge"]["H2"] = 129.0
    quick = state_of(loop, flows, balances=False)
    assert math.isnan(quick.species_balance_error)
    assert math.isnan(quick.element_balance_error)
    full = with_balances(loop, quick)
    assert full.species_balance_error == pytest.approx(0.01, rel=1e-12)
    assert full.element_balance_error == pytest.approx(20.0 / 1480.0, rel=1e-12)
    # everything else is the quick state's
    assert full.tac_per_year == quick.tac_per_year
    assert full.flows == quick.flows
    assert math.isnan(quick.species_balance_error)      # the quick state is not changed
