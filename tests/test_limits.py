"""The table of limits on hand-made quantities: values, margins, binding and violated limits.

Every expected number is recomputed by hand from the limits and quantities written here.
"""

from __future__ import annotations

import math

import pytest
from conftest import case_toml, loop_from_text

from purgeplan import limits
from purgeplan.engine import steady_state
from purgeplan.limits import BINDING_TOLERANCE, FEASIBILITY_TOLERANCE, Limit

INERT = Limit("max_inert_fraction_reactor_inlet", "inert_kmol_h_reactor_inlet", 0.10, "max",
              "state", "the inert limit at the reactor inlet", per="reactor_feed_kmol_h")
POWER = Limit("max_recycle_power_kw", "recycle_compressor_power_kw", 5000.0, "max", "state",
              "the recycle compressor power limit", "kW")
PURGE_MIN = Limit("purge_fraction_min", "purge_fraction", 0.002, "min", "design",
                  "the smallest purge fraction allowed")

Q = {"inert_kmol_h_reactor_inlet": 480.0, "reactor_feed_kmol_h": 6000.0,
     "recycle_compressor_power_kw": 5500.0, "purge_fraction": 0.005}


# ---------------------------------------------------------------------------
# value and margin


def test_value_of_a_plain_and_a_ratio_limit():
    assert limits.value(POWER, Q) == 5500.0
    # 480 kmol/h of inerts in 6000 kmol/h of reactor feed: 0.08
    assert limits.value(INERT, Q) == pytest.approx(0.08, rel=1e-12)


def test_ratio_limit_with_no_denominator_flow_is_zero():
    assert limits.value(INERT, dict(Q, reactor_feed_kmol_h=0.0)) == 0.0


def test_margins_of_max_limits():
    # met: 0.08 / 0.10 - 1 = -0.2
    assert limits.margin(INERT, Q) == pytest.approx(-0.2, rel=1e-12)
    # broken: 5500 / 5000 - 1 = +0.1
    assert limits.margin(POWER, Q) == pytest.approx(0.1, rel=1e-12)


def test_margins_of_a_min_limit():
    # met: 1 - 0.005 / 0.002 = -1.5
    assert limits.margin(PURGE_MIN, Q) == pytest.approx(-1.5, rel=1e-12)
    # broken: 1 - 0.001 / 0.002 = +0.5
    assert limits.margin(PURGE_MIN, dict(Q, purge_fraction=0.001)) == pytest.approx(
        0.5, rel=1e-12)
    # at the bound
    assert limits.margin(PURGE_MIN, dict(Q, purge_fraction=0.002)) == pytest.approx(
        0.0, abs=1e-15)


def test_worst_margin():
    assert limits.worst_margin([INERT, POWER, PURGE_MIN], Q) == pytest.approx(0.1, rel=1e-12)
    assert limits.worst_margin([INERT, PURGE_MIN], Q) == pytest.approx(-0.2, rel=1e-12)
    assert limits.worst_margin([], Q) == -math.inf


# ---------------------------------------------------------------------------
# binding and violated, at the tolerance edges


def test_binding_and_violated_away_from_the_bounds():
    assert limits.binding([INERT, POWER, PURGE_MIN], Q) == ["max_recycle_power_kw"]
    assert [lim.name for lim in limits.violated([INERT, POWER, PURGE_MIN], Q)] == [
        "max_recycle_power_kw"]


@pytest.mark.parametrize(("relative_offset", "is_binding"), [
    (-0.5, True),    # inside the band, on the feasible side
    (-2.0, False),   # outside the band
    (0.0, True),     # at the bound
])
def test_binding_tolerance_edge_of_a_max_limit(relative_offset, is_binding):
    power = 5000.0 * (1.0 + relative_offset * BINDING_TOLERANCE)
    q = dict(Q, recycle_compressor_power_kw=power)
    assert (limits.binding([POWER], q) == ["max_recycle_power_kw"]) is is_binding


@pytest.mark.parametrize(("relative_offset", "is_binding"), [
    (0.5, True),
    (2.0, False),
])
def test_binding_tolerance_edge_of_a_min_limit(relative_offset, is_binding):
    # a min limit is approached from above
    q = dict(Q, purge_fraction=0.002 * (1.0 + relative_offset * BINDING_TOLERANCE))
    assert (limits.binding([PURGE_MIN], q) == ["purge_fraction_min"]) is is_binding


def test_binding_tolerance_edge_of_a_ratio_limit():
    feed = 6000.0
    inside = dict(Q, inert_kmol_h_reactor_inlet=0.10 * feed * (1.0 - 0.5 * BINDING_TOLERANCE))
    outside = dict(Q, inert_kmol_h_reactor_inlet=0.10 * feed * (1.0 - 2.0 * BINDING_TOLERANCE))
    assert limits.binding([INERT], inside) == [INERT.name]
    assert limits.binding([INERT], outside) == []


@pytest.mark.parametrize(("relative_offset", "is_violated"), [
    (0.5, False),    # within the feasibility tolerance: still meets the limit
    (2.0, True),
    (0.0, False),
])
def test_feasibility_tolerance_edge_of_a_max_limit(relative_offset, is_violated):
    q = dict(Q, recycle_compressor_power_kw=5000.0 * (
        1.0 + relative_offset * FEASIBILITY_TOLERANCE))
    assert (limits.violated([POWER], q) == [POWER]) is is_violated
    # a state that breaks a limit by any amount is at it, so it is also binding
    assert limits.binding([POWER], q) == [POWER.name]


@pytest.mark.parametrize(("relative_offset", "is_violated"), [
    (0.5, False),
    (2.0, True),
])
def test_feasibility_tolerance_edge_of_a_min_limit(relative_offset, is_violated):
    q = dict(Q, purge_fraction=0.002 * (1.0 - relative_offset * FEASIBILITY_TOLERANCE))
    assert (limits.violated([PURGE_MIN], q) == [PURGE_MIN]) is is_violated


def test_tolerances_are_ordered():
    # a limit reported violated must also be reported binding
    assert 0.0 < FEASIBILITY_TOLERANCE < BINDING_TOLERANCE


# ---------------------------------------------------------------------------
# describe


def test_describe_with_and_without_a_unit():
    assert limits.describe(POWER, Q) == (
        "the recycle compressor power limit (5000 kW) against 5500 kW")
    assert limits.describe(INERT, Q) == "the inert limit at the reactor inlet (0.1) against 0.08"
    assert limits.describe(PURGE_MIN, dict(Q, purge_fraction=0.00123456)) == (
        "the smallest purge fraction allowed (0.002) against 0.001235")


# ---------------------------------------------------------------------------
# the table of a loop


LIMITED_CASE = case_toml(makeup={"H2": 0.74, "N2": 0.25, "Ar": 0.01},
                         liquid_fraction={"NH3": 1.0}, purge_fraction=0.03).replace(
    "purge_fraction = 0.03\n",
    "purge_fraction = 0.03\nmax_inert_fraction_reactor_inlet = 0.12\n"
    "max_recycle_power_kw = 4000.0\npurge_fraction_min = 0.001\npurge_fraction_max = 0.4\n"
).replace("[sources.gas]\n", "[sources.gas]\nsupply_limit_kmol_h = 1200.0\n")


@pytest.fixture(scope="module")
def limited_loop():
    return loop_from_text(LIMITED_CASE)


def test_loop_limits_table(limited_loop):
    table = limits.loop_limits(limited_loop)
    got = [(lim.name, lim.quantity, lim.per, lim.bound, lim.sense, lim.kind) for lim in table]
    assert got == [
        ("max_inert_fraction_reactor_inlet", "inert_kmol_h_reactor_inlet",
         "reactor_feed_kmol_h", 0.12, "max", "state"),
        ("max_recycle_power_kw", "recycle_compressor_power_kw", "", 4000.0, "max", "state"),
        ("supply_limit_kmol_h:gas", "source_kmol_h:gas", "", 1200.0, "max", "state"),
        ("purge_fraction_min", "purge_fraction", "", 0.001, "min", "design"),
        ("purge_fraction_max", "purge_fraction", "", 0.4, "max", "design"),
    ]
    assert [lim.name for lim in limits.state_limits(limited_loop)] == [
        "max_inert_fraction_reactor_inlet", "max_recycle_power_kw", "supply_limit_kmol_h:gas"]


def test_loop_without_case_limits_has_only_the_purge_box():
    loop = loop_from_text(case_toml(makeup={"H2": 0.75, "N2": 0.25},
                                    liquid_fraction={"NH3": 1.0}))
    assert [lim.name for lim in limits.loop_limits(loop)] == [
        "purge_fraction_min", "purge_fraction_max"]
    assert limits.state_limits(loop) == ()


def test_inert_limit_on_a_solved_state(limited_loop):
    """The ratio limit's value on a steady state is its inert fraction at the inlet."""
    state = steady_state(limited_loop)
    inert = next(lim for lim in limits.loop_limits(limited_loop)
                 if lim.name == "max_inert_fraction_reactor_inlet")
    by_hand = state.flows["reactor_feed"]["Ar"] / sum(state.flows["reactor_feed"].values())
    assert limits.value(inert, state.quantities) == pytest.approx(by_hand, rel=1e-12)
    assert limits.margin(inert, state.quantities) == pytest.approx(by_hand / 0.12 - 1.0,
                                                                   rel=1e-12)
    # the make-up is fixed at 1000 kmol/h, below its supply limit of 1200
    supply = next(lim for lim in limits.loop_limits(limited_loop)
                  if lim.name == "supply_limit_kmol_h:gas")
    assert limits.margin(supply, state.quantities) == pytest.approx(1000.0 / 1200.0 - 1.0,
                                                                    rel=1e-12)


def test_loop_limits_labels_and_units(limited_loop):
    """What a report says of each limit: its label and the unit of its bound."""
    got = [(lim.name, lim.label, lim.unit) for lim in limits.loop_limits(limited_loop)]
    assert got == [
        ("max_inert_fraction_reactor_inlet", "the inert limit at the reactor inlet", "-"),
        ("max_recycle_power_kw", "the recycle compressor power limit", "kW"),
        ("supply_limit_kmol_h:gas", "the supply limit of 'gas'", "kmol/h"),
        ("purge_fraction_min", "the smallest purge fraction allowed", "-"),
        ("purge_fraction_max", "the largest purge fraction allowed", "-"),
    ]


SIZED_REACTION = ('per_pass = "sized"\n\n[reactions.sizing]\nreference_conversion = 0.25\n'
                  "reference_volume_m3 = 60.0\nreference_feed_kmol_h = 5000.0\n"
                  "equilibrium_conversion = 0.4\nconversion_min = 0.05\nconversion_max = 0.38\n")


def test_sized_reactor_adds_its_conversion_box():
    """A sized reactor's per-pass conversion is a design variable bounded by the case's
    conversion_min = 0.05 and conversion_max = 0.38, after the purge fraction box."""
    loop = loop_from_text(case_toml(makeup={"H2": 0.7425, "N2": 0.2475, "Ar": 0.01},
                                    liquid_fraction={"NH3": 1.0}, reaction=SIZED_REACTION))
    table = limits.loop_limits(loop)
    got = [(lim.name, lim.quantity, lim.per, lim.bound, lim.sense, lim.kind, lim.label,
            lim.unit) for lim in table]
    assert got[:2] == [
        ("purge_fraction_min", "purge_fraction", "", loop.purge_fraction_min, "min", "design",
         "the smallest purge fraction allowed", "-"),
        ("purge_fraction_max", "purge_fraction", "", loop.purge_fraction_max, "max", "design",
         "the largest purge fraction allowed", "-")]
    assert got[2:] == [
        ("conversion_min", "per_pass_conversion:0", "", 0.05, "min", "design",
         "the smallest per-pass conversion allowed", "-"),
        ("conversion_max", "per_pass_conversion:0", "", 0.38, "max", "design",
         "the largest per-pass conversion allowed", "-")]
    assert limits.state_limits(loop) == ()
    # at a per-pass conversion of 0.04 the lower bound is broken by 1 - 0.04 / 0.05 = 0.2
    q = {"purge_fraction": 0.02, "per_pass_conversion:0": 0.04}
    assert limits.worst_margin(table, q) == pytest.approx(0.2, rel=1e-12)


def test_ratio_limit_below_one_unit_of_denominator_flow():
    # 0.04 kmol/h of inerts in 0.5 kmol/h of reactor feed: 0.08, however small the loop
    q = dict(Q, inert_kmol_h_reactor_inlet=0.04, reactor_feed_kmol_h=0.5)
    assert limits.value(INERT, q) == pytest.approx(0.08, rel=1e-12)
