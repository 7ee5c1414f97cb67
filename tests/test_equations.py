"""Stream conditions and the quantities that follow from the flows, against hand values.

Every expected number is recomputed by hand from the case inputs and the hand-made
flows written in this file.
"""

from __future__ import annotations

import dataclasses

import pytest
from conftest import case_toml, loop_from_text

from purgeplan import equations
from purgeplan.equations import LoopVariables

MAKEUP = {"H2": 0.735, "N2": 0.245, "Ar": 0.008, "CH4": 0.012}
LIQUID = {"NH3": 0.95}
# Lower heating values [kJ/mol] and the product's molar mass set in the case, so the
# heat of the purge gas is recomputed from these numbers alone.
OVERRIDES = {"H2": {"lower_heating_value_kj_mol": 242.0},
             "NH3": {"lower_heating_value_kj_mol": 316.8, "molar_mass_kg_kmol": 17.0},
             "CH4": {"lower_heating_value_kj_mol": 802.7},
             "N2": {"lower_heating_value_kj_mol": 0.0},
             "Ar": {"lower_heating_value_kj_mol": 0.0}}

# Loop at 150 bar with a 6 bar loop pressure drop (the shared case sets 4 % of the
# loop pressure), converter at 430 degC, separator at -5 degC, make-up supplied at
# 25 degC, recycle compressor inlet at 38 degC.
PRESSURE_BAR = 150.0
LOW_BAR = 144.0
SIDE_FEED = """
[sources.side]
composition = { H2 = 1.0 }
price_per_kmol = 1.5
supply_pressure_bar = 160.0
temperature_c = 60.0
enters = "reactor_feed"
"""
COMPRESSION = """
[compression]
recycle_inlet_temperature_c = 38.0
recycle_efficiency = 0.7
makeup_efficiency = 0.8
"""


def conditions_text(*, recovery=None, side_feed=False) -> str:
    text = case_toml(makeup=MAKEUP, liquid_fraction=LIQUID, component_overrides=OVERRIDES,
                     pressure_bar=PRESSURE_BAR, reactor_temperature_c=430.0,
                     separator_temperature_c=-5.0, recovery=recovery)
    text = text.replace("[sources.gas]\n", "[sources.gas]\ntemperature_c = 25.0\n")
    if side_feed:
        # a direct feed needs a reactor-inlet ratio that fixes its rate
        text = text.replace(f"purge_fraction = {0.02!r}\n", f"purge_fraction = {0.02!r}\n"
                            + 'inlet_ratios = [{ numerator = "H2", denominator = "N2", '
                              'value = 3.0 }]\n')
        text += SIDE_FEED
    return text + COMPRESSION


@pytest.fixture(scope="module")
def loop():
    return loop_from_text(conditions_text())


@pytest.fixture(scope="module")
def recovery_loop():
    return loop_from_text(conditions_text(recovery={"H2": 0.9, "N2": 0.2}))


# ---------------------------------------------------------------------------
# stream conditions


def test_inputs_as_built(loop):
    assert loop.pressure_bar == PRESSURE_BAR
    assert loop.pressure_drop_bar == pytest.approx(PRESSURE_BAR - LOW_BAR, rel=1e-12)


def test_stream_conditions_from_the_case(loop):
    got = equations.stream_conditions(loop)
    assert set(got) == set(loop.streams)
    expected = {
        # make-up compressed to loop pressure, at its supply temperature
        "makeup": (150.0, 25.0),
        # converter (isothermal) at loop pressure and converter temperature
        "reactor_feed": (150.0, 430.0),
        "reactor_outlet": (150.0, 430.0),
        # separator and what leaves it: loop pressure less the pressure drop,
        # separator temperature
        "liquid_product": (144.0, -5.0),
        "separator_vapour": (144.0, -5.0),
        "purge": (144.0, -5.0),
        # recycle after its compressor: back to loop pressure, at its inlet temperature
        "recycle": (150.0, 38.0),
    }
    for stream, (p, t) in expected.items():
        assert got[stream] == pytest.approx((p, t), abs=1e-9), stream


def test_stream_conditions_with_recovery(recovery_loop):
    got = equations.stream_conditions(recovery_loop)
    assert set(got) == set(recovery_loop.streams)
    assert got["recovery_return"] == pytest.approx((144.0, -5.0), abs=1e-9)
    assert got["recovery_tail_gas"] == pytest.approx((144.0, -5.0), abs=1e-9)
    assert got["makeup"] == pytest.approx((150.0, 25.0), abs=1e-9)
    assert got["recycle"] == pytest.approx((150.0, 38.0), abs=1e-9)


def test_stream_conditions_of_a_direct_feed():
    loop = loop_from_text(conditions_text(side_feed=True))
    got = equations.stream_conditions(loop)
    assert "direct_feed" in loop.streams
    # fed to the converter at loop pressure at its own supply temperature, 60 degC
    assert got["direct_feed"] == pytest.approx((150.0, 60.0), abs=1e-9)
    assert got["makeup"] == pytest.approx((150.0, 25.0), abs=1e-9)


# ---------------------------------------------------------------------------
# quantities on hand-made flows

COMPONENTS = ("Ar", "CH4", "H2", "N2", "NH3")
HAND_FLOWS = {
    "reactor_feed": {"H2": 3000.0, "N2": 1000.0, "NH3": 100.0, "Ar": 200.0, "CH4": 300.0},
    "recycle": {"H2": 2400.0, "N2": 800.0, "NH3": 60.0, "Ar": 190.0, "CH4": 280.0},
    "purge": {"H2": 50.0, "N2": 17.0, "NH3": 1.2, "Ar": 4.0, "CH4": 6.0},
    "liquid_product": {"NH3": 500.0},
    "recovery_tail_gas": {"H2": 5.0, "N2": 13.6, "NH3": 1.2, "Ar": 4.0, "CH4": 6.0},
}
RECYCLE_WORK_KJ_KMOL = 600.0
MAKEUP_WORK_KJ_KMOL = 9000.0
VOLUME_PER_FEED = 0.01          # m3 per kmol/h of reactor feed


def _variables(loop):
    flow = {(s, c): HAND_FLOWS.get(s, {}).get(c, 0.0) for s in loop.streams for c in COMPONENTS}
    return LoopVariables(flow=flow, extent=[0.0], source={"gas": 1100.0},
                         purge_fraction=0.02, conversion={0: 0.25})


def _quantities(loop):
    # the make-up compressor's work per kmol set by hand (the build computes it from
    # the gas's heat-capacity ratio; that is tested with the compression physics)
    source = dataclasses.replace(loop.sources[0], compression_work_kj_kmol=MAKEUP_WORK_KJ_KMOL)
    loop = dataclasses.replace(loop, sources=(source,))
    return equations.quantities(_variables(loop), loop, RECYCLE_WORK_KJ_KMOL, VOLUME_PER_FEED)


def test_quantities_on_hand_made_flows(loop):
    assert loop.inerts == ("Ar", "CH4")
    q = _quantities(loop)
    assert q["source_kmol_h:gas"] == 1100.0
    assert q["purge_fraction"] == 0.02
    assert q["per_pass_conversion:0"] == 0.25
    # recycle 3730 kmol/h x 600 kJ/kmol / 3600 s/h / 0.7 = 888.095 kW
    assert q["recycle_compressor_power_kw"] == pytest.approx(888.0952381, rel=1e-9)
    # make-up 1100 kmol/h x 9000 kJ/kmol / 3600 / 0.8 = 3437.5 kW
    assert q["makeup_compressor_power_kw"] == pytest.approx(3437.5, rel=1e-12)
    # reactor feed 4600 kmol/h; catalyst 0.01 x 4600 = 46 m3
    assert q["reactor_feed_kmol_h"] == pytest.approx(4600.0, rel=1e-12)
    assert q["catalyst_volume_m3"] == pytest.approx(46.0, rel=1e-12)
    # inerts Ar + CH4 at the converter inlet: 200 + 300
    assert q["inert_kmol_h_reactor_inlet"] == pytest.approx(500.0, rel=1e-12)
    # purge 78.2 kmol/h leaves the loop
    assert q["disposal_kmol_h"] == pytest.approx(78.2, rel=1e-12)
    # (50 x 242 + 1.2 x 316.8 + 6 x 802.7) / 1000 = 17.29636 GJ/h
    assert q["disposal_heat_gj_h"] == pytest.approx(17.29636, rel=1e-12)
    # 500 kmol/h NH3 x 17.0 kg/kmol = 8.5 t/h
    assert q["product_t_h"] == pytest.approx(8.5, rel=1e-12)
    assert q["recovery_feed_kmol_h"] == pytest.approx(78.2, rel=1e-12)


def test_quantities_after_recovery(recovery_loop):
    q = _quantities(recovery_loop)
    # the tail gas leaves the loop: 5 + 13.6 + 1.2 + 4 + 6 = 29.8 kmol/h carrying
    # (5 x 242 + 1.2 x 316.8 + 6 x 802.7) / 1000 = 6.40636 GJ/h
    assert q["disposal_kmol_h"] == pytest.approx(29.8, rel=1e-12)
    assert q["disposal_heat_gj_h"] == pytest.approx(6.40636, rel=1e-12)
    # the unit treats the whole purge
    assert q["recovery_feed_kmol_h"] == pytest.approx(78.2, rel=1e-12)


def test_no_makeup_power_when_supplied_at_loop_pressure():
    loop = loop_from_text(case_toml(makeup=MAKEUP, liquid_fraction=LIQUID,
                                    pressure_bar=30.0, supply_pressure_bar=30.0))
    assert loop.sources[0].compression_work_kj_kmol == 0.0
    q = equations.quantities(_variables(loop), loop, RECYCLE_WORK_KJ_KMOL, VOLUME_PER_FEED)
    assert q["makeup_compressor_power_kw"] == 0.0


# ---------------------------------------------------------------------------
# residuals of the equation families on hand-made flows (a direct feed of pure H2)


def _side_feed_variables(loop):
    """Make-up gas 1100 kmol/h, side feed 200 kmol/h of H2; the flows below are off the
    balances by hand-set amounts, so each residual is a number to recompute."""
    flow = {(s, c): 0.0 for s in loop.streams for c in COMPONENTS}
    flow.update({("makeup", "H2"): 800.0, ("makeup", "N2"): 270.0, ("makeup", "Ar"): 9.0,
                 ("makeup", "CH4"): 13.0, ("direct_feed", "H2"): 190.0,
                 ("recycle", "H2"): 2400.0, ("recycle", "N2"): 830.0,
                 ("reactor_feed", "H2"): 3400.0, ("reactor_feed", "N2"): 1100.0})
    return LoopVariables(flow=flow, extent=[0.0], source={"gas": 1100.0, "side": 200.0},
                         purge_fraction=0.02, conversion={0: 0.25})


@pytest.fixture(scope="module")
def side_feed_loop():
    return loop_from_text(conditions_text(side_feed=True))


def test_blend_residuals_with_a_direct_feed(side_feed_loop):
    got = dict(equations.makeup_blend(_side_feed_variables(side_feed_loop), side_feed_loop))
    # make-up: flow - 1100 x composition (0.735 H2, 0.245 N2, 0.008 Ar, 0.012 CH4)
    expected = {("makeup", "H2"): 800.0 - 808.5, ("makeup", "N2"): 270.0 - 269.5,
                ("makeup", "Ar"): 9.0 - 8.8, ("makeup", "CH4"): 13.0 - 13.2,
                ("makeup", "NH3"): 0.0,
                # direct feed: 190 - 200 x 1.0 of H2; nothing else in the side feed
                ("direct_feed", "H2"): -10.0}
    expected.update({("direct_feed", c): 0.0 for c in ("Ar", "CH4", "N2", "NH3")})
    assert got == pytest.approx(expected, abs=1e-9)


def test_mixer_and_inlet_ratio_residuals_with_a_direct_feed(side_feed_loop):
    v = _side_feed_variables(side_feed_loop)
    mixer = dict(equations.mixer_balance(v, side_feed_loop))
    # reactor feed - (make-up + direct feed + recycle): H2 3400 - (800 + 190 + 2400) = 10,
    # N2 1100 - (270 + 830) = 0, Ar 0 - 9, CH4 0 - 13
    assert mixer == pytest.approx({"H2": 10.0, "N2": 0.0, "Ar": -9.0, "CH4": -13.0,
                                   "NH3": 0.0}, abs=1e-9)
    # H2 = 3 N2 at the reactor inlet: 3400 - 3 x 1100 = 100
    assert dict(equations.inlet_ratio(v, side_feed_loop)) == pytest.approx({0: 100.0},
                                                                           abs=1e-9)


def test_extent_residual_of_a_key_reactant_with_a_coefficient_of_three():
    # key reactant H2 (coefficient 3): xi - X M_H2 / 3 = 250 - 0.25 x 3000 / 3 = 0
    loop = loop_from_text(case_toml(makeup=MAKEUP, liquid_fraction=LIQUID, key_reactant="H2"))
    flow = {(s, c): HAND_FLOWS.get(s, {}).get(c, 0.0) for s in loop.streams for c in COMPONENTS}
    v = LoopVariables(flow=flow, extent=[250.0], source={"gas": 1100.0}, purge_fraction=0.02,
                      conversion={0: 0.25})
    assert dict(equations.reaction_extent(v, loop)) == pytest.approx({0: 0.0}, abs=1e-9)


def test_equation_indices_name_each_residual(recovery_loop):
    """The index of each residual names it (it is the Pyomo constraint's index)."""
    v = _variables(recovery_loop)
    comps = recovery_loop.components

    def indices(family):
        return [k for k, _ in family(v, recovery_loop)]

    assert indices(equations.separator_split) == [
        k for c in comps for k in (("liquid", c), ("vapour", c))]
    assert indices(equations.purge_split) == [
        k for c in comps for k in (("purge", c), ("recycle", c))]
    assert indices(equations.recovery_split) == [
        k for c in comps for k in (("return", c), ("tail", c))]
    assert indices(equations.basis) == ["makeup"]
    production = loop_from_text(case_toml(makeup=MAKEUP, liquid_fraction=LIQUID,
                                          basis="production"))
    assert [k for k, _ in equations.basis(_variables(production), production)] == [
        "production"]


def test_makeup_power_of_a_small_compression_work(loop):
    # 0.5 kJ/kmol (supply just below loop pressure): 1100 x 0.5 / 3600 / 0.8 = 0.19097 kW
    source = dataclasses.replace(loop.sources[0], compression_work_kj_kmol=0.5)
    small = dataclasses.replace(loop, sources=(source,))
    q = equations.quantities(_variables(small), small, RECYCLE_WORK_KJ_KMOL, VOLUME_PER_FEED)
    assert q["makeup_compressor_power_kw"] == pytest.approx(1100.0 * 0.5 / 3600.0 / 0.8,
                                                            rel=1e-12)


def test_purge_heat_of_a_component_with_a_small_heating_value():
    # argon given 0.5 kJ/mol: (50 x 242 + 1.2 x 316.8 + 6 x 802.7 + 4 x 0.5) / 1000 GJ/h
    overrides = dict(OVERRIDES, Ar={"lower_heating_value_kj_mol": 0.5})
    loop = loop_from_text(case_toml(makeup=MAKEUP, liquid_fraction=LIQUID,
                                    component_overrides=overrides))
    q = equations.quantities(_variables(loop), loop, RECYCLE_WORK_KJ_KMOL, VOLUME_PER_FEED)
    assert q["disposal_heat_gj_h"] == pytest.approx(17.29836, rel=1e-12)
