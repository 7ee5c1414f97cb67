"""Quantities of the recovery unit, the direct feeds and the let-down gas, by hand.

The loops are those of tests/test_unit_cost_lines_by_hand.py.  The quantities
are evaluated on hand-made flows (``FLOWS``), with the compression work per
kmol set by hand (the build computes it from the gas's heat-capacity ratio;
that is checked against a published worked example in tests/test_recovery.py),
so every expected number below is recomputed from the numbers in this file.
Heating values are set in the case: H2 240 kJ/mol, CH4 800 kJ/mol, and argon
a hypothetical 0.5 kJ/mol, so that a small heating value is seen to count.
CO2 per kmol of carbon burned: 44.009 kg/kmol (IUPAC conventional atomic
weights, C 12.011 and O 15.999; from memory, as in
``purgeplan.physics.emissions``).
"""

from __future__ import annotations

import dataclasses
import math
from collections import defaultdict

import pytest
from test_unit_cost_lines_by_hand import HYDROGEN, OTHER, case_text

import purgeplan
from purgeplan import costs, equations
from purgeplan.case import parse_case_text
from purgeplan.equations import LoopVariables

HEATING_VALUES = {"H2": 240.0, "CH4": 800.0, "Ar": 0.5}
CO2_T_PER_KMOL_C = 44.009 / 1000.0

#: compression work per kmol set by hand [kJ/kmol]
WORK = {"syngas": 9000.0, "hydrogen": 6000.0, "liquid_nitrogen": 500.0, "return": 4000.0}

#: hand-made flows [kmol/h]; every other flow is 0
FLOWS = {
    "reactor_feed": {"H2": 3000.0, "N2": 1000.0, "Ar": 200.0, "CH4": 300.0},
    "recycle": {"H2": 2000.0, "N2": 700.0, "Ar": 190.0, "CH4": 280.0},
    "purge": {"H2": 60.0, "N2": 20.0, "Ar": 6.0, "CH4": 9.0},
    "recovery_return": {"H2": 50.0, "N2": 4.0},
    "recovery_export": {"Ar": 3.0, "NH3": 1.0},
    "recovery_tail_gas": {"H2": 10.0, "N2": 16.0, "Ar": 3.0, "CH4": 9.0},
    "liquid_product": {"NH3": 2400.0, "H2": 2.0, "N2": 1.0, "Ar": 0.5, "CH4": 0.4},
    "letdown_gas": {"H2": 2.0, "N2": 1.0, "Ar": 0.5, "CH4": 0.4},
    "letdown_liquid": {"NH3": 2400.0},
}


def _loop(**changes):
    text = case_text(**changes)
    for c, lhv in HEATING_VALUES.items():
        text = text.replace(f"{c} = {{}}", f"{c} = {{ lower_heating_value_kj_mol = {lhv!r} }}")
    loop = purgeplan.build_loop(parse_case_text(text))
    sources = tuple(dataclasses.replace(s, compression_work_kj_kmol=WORK[s.name])
                    for s in loop.sources)
    return dataclasses.replace(loop, sources=sources,
                               recovery_recompression_work_kj_kmol=WORK["return"])


@pytest.fixture(scope="module")
def units_loop():
    return _loop()


@pytest.fixture(scope="module")
def other_loop():
    return _loop(**OTHER)


def _variables(loop, sources):
    flow = defaultdict(float, {(s, c): x for s, row in FLOWS.items() for c, x in row.items()})
    return LoopVariables(flow=flow, extent=[800.0], source=sources, purge_fraction=0.03,
                         conversion={0: 0.25})


def _quantities(loop, sources):
    return equations.quantities(_variables(loop, sources), loop, 600.0, 0.01)


UNITS_SOURCES = {"syngas": 4000.0, "hydrogen": 600.0}


def test_the_heating_values_are_those_set(units_loop):
    assert {c: units_loop.data[c].lhv_kj_mol for c in HEATING_VALUES} == HEATING_VALUES


def test_letdown_quantities_by_hand(units_loop):
    q = _quantities(units_loop, UNITS_SOURCES)
    # 2.0 + 1.0 + 0.5 + 0.4 kmol/h released
    assert q["letdown_kmol_h"] == pytest.approx(3.9, rel=1e-12)
    # (2.0 x 240 + 0.5 x 0.5 + 0.4 x 800) / 1000 = 0.80025 GJ/h; nitrogen has none
    assert q["letdown_heat_gj_h"] == pytest.approx(0.80025, rel=1e-12)
    # only methane carries carbon: 0.4 kmol/h x 44.009 kg/kmol = 17.6036 kg/h
    assert q["letdown_co2_t_h"] == pytest.approx(0.4 * CO2_T_PER_KMOL_C, rel=1e-12)
    # the purge gas leaving after recovery: tail gas 10 + 16 + 3 + 9 = 38 kmol/h with
    # (10 x 240 + 3 x 0.5 + 9 x 800) / 1000 = 9.6015 GJ/h and 9 kmol/h of methane
    assert q["disposal_kmol_h"] == pytest.approx(38.0, rel=1e-12)
    assert q["disposal_heat_gj_h"] == pytest.approx(9.6015, rel=1e-12)
    assert q["disposal_co2_t_h"] == pytest.approx(9.0 * CO2_T_PER_KMOL_C, rel=1e-12)


def test_recovery_and_direct_feed_quantities_by_hand(units_loop):
    q = _quantities(units_loop, UNITS_SOURCES)
    # the return, 54 kmol/h x 4000 kJ/kmol / 3600 s/h / 0.8 = 75 kW
    assert q["recovery_recompression_power_kw"] == pytest.approx(75.0, rel=1e-12)
    # argon sold, 3 kmol/h; the ammonia exported is product, not a sale
    assert q["recovery_export_sold_kmol_h"] == pytest.approx(3.0, rel=1e-12)
    # product: 2400 kmol/h in the liquid + 1 exported, x 17.031 kg/kmol
    mw = units_loop.data["NH3"].molar_mass_kg_kmol
    assert mw == pytest.approx(17.031, abs=1e-3)      # NH3, N 14.007 + 3 H 1.008 (from memory)
    assert q["product_t_h"] == pytest.approx(2401.0 * mw / 1000.0, rel=1e-12)
    # hydrogen fed to the reactor, 600 kmol/h x 6000 kJ/kmol / 3600 / 0.8 = 1250 kW
    assert q["direct_feed_compression_power_kw"] == pytest.approx(1250.0, rel=1e-12)
    assert q["direct_feed_pumping_power_kw"] == 0.0
    # syngas, 4000 x 9000 / 3600 / 0.8 = 12500 kW; the return has a machine of its own,
    # so the make-up duty is the make-up power alone, and the casing takes the recycle's
    # 3170 kmol/h x 600 / 3600 / 0.75 (the case default efficiency) = 704.44 kW besides
    assert q["makeup_compressor_power_kw"] == pytest.approx(12500.0, rel=1e-12)
    assert q["makeup_compressor_duty_kw"] == pytest.approx(12500.0, rel=1e-12)
    assert q["recycle_compressor_power_kw"] == pytest.approx(704.4444444, rel=1e-9)
    assert q["compressor_power_kw"] == pytest.approx(12500.0 + 704.4444444, rel=1e-9)
    # the fuel header takes 5 GJ/h of the 9.6015; the rest of the 38 kmol/h is flared:
    # 38 x (1 - 5 / 9.6015)
    assert q["fuel_heat_gj_h"] == 5.0
    assert q["flared_kmol_h"] == pytest.approx(38.0 * (1.0 - 5.0 / 9.6015), rel=1e-12)


def test_other_arrangement_quantities_by_hand(other_loop):
    q = _quantities(other_loop, {"syngas": 4000.0, "liquid_nitrogen": 50.0})
    # liquid nitrogen pumped: 50 kmol/h x 500 kJ/kmol / 3600 / 0.6 = 11.574 kW
    assert q["direct_feed_pumping_power_kw"] == pytest.approx(50.0 * 500.0 / 3600.0 / 0.6,
                                                              rel=1e-12)
    assert q["direct_feed_compression_power_kw"] == 0.0
    # the return joins the make-up compressor: its duty is 12500 + 75 kW
    assert q["makeup_compressor_duty_kw"] == pytest.approx(12575.0, rel=1e-12)
    assert q["makeup_compressor_power_kw"] == pytest.approx(12500.0, rel=1e-12)
    # no export stream, no fuel header capacity
    assert "recovery_export_sold_kmol_h" not in q
    assert "fuel_heat_gj_h" not in q and "flared_kmol_h" not in q


def test_no_recompression_without_a_return_pressure():
    text = case_text().replace("return_pressure_bar = 70\n", "")
    plain = purgeplan.build_loop(parse_case_text(text))
    assert plain.recovery_recompression == "none"
    q = _quantities(plain, UNITS_SOURCES)
    assert q["recovery_recompression_power_kw"] == 0.0


def test_a_direct_feed_needing_under_one_kj_per_kmol_is_charged_with_its_compressor():
    """Hydrogen supplied at 149.95 bar to a 150 bar loop needs little work, below 1 kJ/kmol:
    at least the isothermal work of an ideal gas at its 30 degC, R T ln(150 / 149.95)
    = 8.3145 x 303.15 x 3.334e-4 = 0.8403 kJ/kmol (by hand; R from CODATA, from memory),
    which intercooled isentropic stages exceed only a little; it is still charged."""
    loop = purgeplan.build_loop(parse_case_text(case_text(
        direct=HYDROGEN.replace("supply_pressure_bar = 20", "supply_pressure_bar = 149.95"))))
    work = next(s for s in loop.sources if s.name == "hydrogen").compression_work_kj_kmol
    isothermal = 8.314462618 * 303.15 * math.log(150.0 / 149.95)
    assert isothermal <= work < 1.0
    q = equations.quantities(_variables(loop, UNITS_SOURCES), loop, 600.0, 0.01)
    # 600 kmol/h x work / 3600 s/h / 0.8
    assert q["direct_feed_compression_power_kw"] == pytest.approx(600.0 * work / 3600.0 / 0.8,
                                                                  rel=1e-12)
    keys = [ln.key for ln in costs.cost_lines(loop)]
    assert {"direct_feed_compression_power", "direct_feed_compressor_capital"} <= set(keys)


# ---------------------------------------------------------------------------
# the fuel sink at its capacity


def test_a_purge_that_exactly_fills_the_fuel_header_is_all_burned():
    """9.9 GJ/h into a 9.9 GJ/h header: all of it is fuel and nothing is flared, exactly
    (10 - 10 / 9.9 x 9.9 would leave a rounding residue of -1.8e-15 kmol/h)."""
    assert equations.fuel_sink(9.9, 10.0, 9.9) == (9.9, 0.0)
    fuel, flared = equations.fuel_sink(9.9, 10.0, 4.95)
    assert (fuel, flared) == (4.95, pytest.approx(5.0, rel=1e-12))


# ---------------------------------------------------------------------------
# stream conditions


def test_stream_conditions_by_hand(units_loop, other_loop):
    """Loop at 150 bar with 8 bar of pressure drop: what leaves the separator at 142 bar and
    -5 degC; make-up gas at its 20 degC supply and the hydrogen at its 30 degC after
    compression to loop pressure; the reactor at 450 degC; the recycle after its compressor
    at its 35 degC inlet (the case default); the return at its 70 bar; the let-down streams
    at 20 bar."""
    sep, low = (142.0, -5.0), (142.0, -5.0)
    want = {
        "makeup": (150.0, 20.0), "direct_feed": (150.0, 30.0),
        "reactor_feed": (150.0, 450.0), "reactor_outlet": (150.0, 450.0),
        "liquid_product": sep, "separator_vapour": sep, "purge": sep,
        "recycle": (150.0, 35.0), "recovery_return": (70.0, -5.0),
        "recovery_tail_gas": low, "recovery_export": low,
        "letdown_gas": (20.0, -5.0), "letdown_liquid": (20.0, -5.0)}
    got = equations.stream_conditions(units_loop)
    assert list(got) == list(units_loop.streams)
    assert got == {s: pytest.approx(pt, abs=1e-9) for s, pt in want.items()}
    other = equations.stream_conditions(other_loop)
    assert "recovery_export" not in other
    assert other["direct_feed"] == pytest.approx((150.0, -196.0), abs=1e-9)


# ---------------------------------------------------------------------------
# the residuals of the let-down and the recovery export, by their index


def test_letdown_and_export_residuals_name_each_equation(units_loop):
    v = _variables(units_loop, UNITS_SOURCES)
    comps = units_loop.components
    letdown = list(equations.letdown_split(v, units_loop))
    assert [k for k, _ in letdown] == [k for c in comps for k in (("gas", c), ("liquid", c))]
    recovery = list(equations.recovery_split(v, units_loop))
    assert [k for k, _ in recovery] == [
        k for c in comps for k in (("return", c), ("export", c), ("tail", c))]
    # the residuals themselves on the hand-made flows: argon's export is 3.0 against
    # 0.6 x 6.0 purged, its tail 3.0 against 6.0 - 0 returned - 3.0 exported
    res = dict(recovery)
    assert res[("export", "Ar")] == pytest.approx(3.0 - 0.6 * 6.0, rel=1e-12)
    assert res[("tail", "Ar")] == pytest.approx(3.0 - 6.0 + 0.0 + 3.0, abs=1e-12)


def test_a_condensing_product_names_its_vapour_equation():
    """With the product condensing, its 'liquid' equation sets its vapour from the other
    components' vapour (Raoult's law in the build); the name stays that of the family."""
    text = case_text().replace('NH3 = 0.9, H2', 'NH3 = "condensation", H2')
    loop = purgeplan.build_loop(parse_case_text(text))
    assert loop.condensing == "NH3"
    v = _variables(loop, UNITS_SOURCES)
    assert [k for k, _ in equations.separator_split(v, loop)] == [
        k for c in loop.components for k in (("liquid", c), ("vapour", c))]
