"""Time from the optimum to the inert limit (purgeplan.physics.inventory, purgeplan.operations).

Reference: the closed form of a single well-mixed inventory with constant
flows, N dy/dt = I - G y, whose time constant is tau = N / G (common
practice; docs/references.md section 8).  The integrator
(``solve_ivp`` with the limit as an event) must reproduce it for one inert,
and the per-inert closed forms summed for several.
"""

from __future__ import annotations

import math

import pytest
from scipy.optimize import brentq

import purgeplan
from purgeplan.case import parse_case_text
from purgeplan.errors import CaseError
from purgeplan.operations import time_to_inert_limit
from purgeplan.output.json_out import alternative_record
from purgeplan.physics.inventory import hours_to_inert_limit, hours_to_limit_closed_form
from purgeplan.physics.thermo import KELVIN, R_J_MOL_K
from purgeplan.solve import optimise

# ---------------------------------------------------------------------------
# the inventory balance against its closed form


@pytest.mark.parametrize(("inventory", "y0", "inflow", "outlet", "limit"), [
    (1000.0, 0.10, 5.0, 20.0, 0.20),     # settles at 0.25, above the limit
    (2500.0, 0.05, 12.0, 40.0, 0.29),    # settles at 0.30, just above
    (800.0, 0.12, 3.0, 0.0, 0.25),       # no outlet: linear rise
    (1500.0, 0.02, 30.0, 5.0, 0.15),     # small outlet, fast rise
])
def test_one_inert_matches_the_closed_form(inventory, y0, inflow, outlet, limit):
    # Source: single well-mixed inventory with constant flows (common practice):
    # t = tau ln((y_ss - y0)/(y_ss - y_lim)), tau = N/G, y_ss = I/G; t = N (y_lim - y0)/I
    # with G = 0.  Integrator tolerance 1e-10 relative.
    want = hours_to_limit_closed_form(inventory, y0, inflow, outlet, limit)
    if outlet > 0:
        tau, settled = inventory / outlet, inflow / outlet
        assert want == pytest.approx(tau * math.log((settled - y0) / (settled - limit)),
                                     rel=1e-12)
    else:
        assert want == pytest.approx(inventory * (limit - y0) / inflow, rel=1e-12)
    got = hours_to_inert_limit(inventory, [y0], [inflow], [outlet], limit)
    assert got == pytest.approx(want, rel=1e-7)


def test_an_inert_that_settles_below_the_limit_never_reaches_it():
    # Source: closed form, y_ss = I / G = 0.2 below the limit 0.25 (common practice).
    assert hours_to_limit_closed_form(1000.0, 0.1, 4.0, 20.0, 0.25) == math.inf
    assert hours_to_inert_limit(1000.0, [0.1], [4.0], [20.0], 0.25) == math.inf


def test_at_the_limit_the_time_is_zero():
    assert hours_to_inert_limit(1000.0, [0.2], [4.0], [20.0], 0.2) == 0.0


def test_two_inerts_match_the_sum_of_their_closed_forms():
    # Source: each inert's closed-form approach y_j(t) = y_ss + (y0 - y_ss) exp(-t/tau_j)
    # (common practice); the time their sum reaches the limit is found by brentq.
    n, y0, inflow, outlet, limit = 1200.0, [0.06, 0.04], [6.0, 1.0], [20.0, 40.0], 0.22

    def total(t):
        return sum(i / g + (y - i / g) * math.exp(-t * g / n)
                   for y, i, g in zip(y0, inflow, outlet, strict=True)) - limit
    want = brentq(total, 0.0, 1e4, xtol=1e-12)
    assert hours_to_inert_limit(n, y0, inflow, outlet, limit) == pytest.approx(want, rel=1e-7)


# ---------------------------------------------------------------------------
# the loop: purge closed and recovery down

CASE = """
[case]
name = "inventory test loop"

[components]
H2 = {}
N2 = {}
Ar = {}
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
max_inert_fraction_reactor_inlet = 0.012
gas_inventory_kmol = 1500

[separator]
temperature_c = -5
liquid_fraction = { NH3 = "condensation", H2 = 0.001, N2 = 0.001, Ar = 0.0 }

[sources.syngas]
composition = { H2 = 0.747, N2 = 0.249, Ar = 0.004 }
price_per_kmol = 2.0
supply_pressure_bar = 28

[purge]
recovery = "membrane"

[recovery_units.membrane]
return_fraction = { H2 = 0.85, N2 = 0.05, Ar = 0.03 }
capital = { reference_cost = 2.0e6, reference_size = 400 }
return_pressure_bar = 70

[economics]
power_price_per_kwh = 0.07
compressor_capital = { reference_cost = 6.0e6, reference_size = 10000, exponent = 0.62 }
reactor_capital = { reference_cost = 8.0e6, reference_size = 60, exponent = 0.65 }
"""


#: The case's inert limit: the optimum state of CASE runs at about 1.05 % argon.
LIMIT = 0.012


@pytest.fixture(scope="module")
def loop_and_state():
    loop = purgeplan.build_loop(parse_case_text(CASE))
    return loop, purgeplan.steady_state(loop)


def test_purge_closed_is_the_linear_rise_of_an_inert_with_no_other_outlet(loop_and_state):
    # Source: closed form with G = 0 (argon does not dissolve here: liquid fraction 0),
    # t = N (y_lim - y0) / I, the argon inflow I scaled with the make-up, which falls
    # by the reactant the purge gas took out of the loop (by hand from the streams).
    loop, s = loop_and_state
    f = s.flows
    y0 = s.inert_fraction_reactor_inlet
    reactants = ("H2", "N2")
    bought = sum(f["makeup"][c] for c in reactants)
    lost = sum(f["purge"][c] - f["recovery_return"][c] for c in reactants)
    inflow = f["makeup"]["Ar"] * (bought - lost) / bought
    want = 1500.0 * (LIMIT - y0) / inflow
    got = time_to_inert_limit(loop, s)
    assert got["purge_closed"] == pytest.approx(want, rel=1e-7)


def test_recovery_down_against_the_closed_form(loop_and_state):
    # Source: closed form with constant flows (common practice): the argon the unit
    # returned is gone, its outlet is the whole purge, G = P_Ar / y0, and the make-up
    # (so the argon fed) rises by the reactant the unit returned (by hand).
    loop, s = loop_and_state
    f = s.flows
    y0 = s.inert_fraction_reactor_inlet
    reactants = ("H2", "N2")
    bought = sum(f["makeup"][c] for c in reactants)
    inflow = f["makeup"]["Ar"] * (bought + sum(f["recovery_return"][c] for c in reactants)) \
        / bought
    outlet = f["purge"]["Ar"] / y0
    want = hours_to_limit_closed_form(1500.0, y0, inflow, outlet, LIMIT)
    got = time_to_inert_limit(loop, s)["recovery_down"]
    assert got == pytest.approx(want, rel=1e-7)
    assert math.isfinite(got) and got > 0


def test_no_inventory_or_no_recovery_gives_none():
    loop = purgeplan.build_loop(parse_case_text(CASE.replace("gas_inventory_kmol = 1500\n", "")))
    got = time_to_inert_limit(loop, purgeplan.steady_state(loop))
    assert got == {"purge_closed": None, "recovery_down": None}
    loop = purgeplan.build_loop(parse_case_text(CASE.replace('recovery = "membrane"',
                                                             'recovery = "none"')))
    got = time_to_inert_limit(loop, purgeplan.steady_state(loop))
    assert got["recovery_down"] is None and got["purge_closed"] is not None


def test_a_state_at_the_inert_limit_has_no_time_left(loop_and_state):
    # an optimum that holds the inert fraction at its limit reaches it at once on any upset
    import dataclasses

    loop, s = loop_and_state
    at_limit = dataclasses.replace(loop, max_inert_fraction_reactor_inlet=(
        s.inert_fraction_reactor_inlet))
    assert time_to_inert_limit(at_limit, s) == {"purge_closed": 0.0, "recovery_down": 0.0}


def test_json_carries_the_hours(loop_and_state):
    loop, _ = loop_and_state
    opt = optimise(loop)
    assert opt.time_to_inert_limit_h  # a study's optimum carries the hours
    rec = alternative_record("x", loop, opt)
    hours = rec["time_to_inert_limit_h"]
    assert set(hours) == {"purge_closed", "recovery_down", "never_reached"}
    for k, v in opt.time_to_inert_limit_h.items():
        assert hours[k] == (None if v is None or math.isinf(v) else v)
        assert (k in hours["never_reached"]) == (v is not None and math.isinf(v))


def test_runs_without_details_leave_the_hours_out(loop_and_state):
    loop, _ = loop_and_state
    assert optimise(loop, details=False).time_to_inert_limit_h == {}


def test_json_names_the_events_that_never_reach_the_limit(loop_and_state):
    import dataclasses

    loop, _ = loop_and_state
    loose = dataclasses.replace(loop, max_inert_fraction_reactor_inlet=0.5)
    opt = optimise(loose)
    hours = alternative_record("x", loose, opt)["time_to_inert_limit_h"]
    assert hours["recovery_down"] is None and "recovery_down" in hours["never_reached"]


def test_a_volume_is_taken_at_loop_pressure_and_separator_temperature():
    # ideal gas, n = P V / (R T): 150e5 Pa x 100 m3 / (R x 268.15 K) / 1000 [kmol]
    text = CASE.replace("gas_inventory_kmol = 1500", "gas_inventory_m3 = 100")
    loop = purgeplan.build_loop(parse_case_text(text))
    assert loop.gas_inventory_kmol == pytest.approx(
        150e5 * 100.0 / (R_J_MOL_K * (-5.0 + KELVIN)) / 1000.0, rel=1e-12)


def test_inventory_given_twice_is_refused():
    text = CASE.replace("gas_inventory_kmol = 1500", "gas_inventory_kmol = 1500\n"
                        "gas_inventory_m3 = 100")
    with pytest.raises(CaseError) as err:
        parse_case_text(text)
    assert err.value.path == "loop.gas_inventory_m3"
