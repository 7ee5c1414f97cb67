"""Recovery units as units, inlet-ratio limits and direct feeds raised to loop pressure.

References:

- compression: *Hydrogen Generation, Storage and Utilization*, eqs 5.16 to
  5.18 (seen; docs/references.md section 4): 1 mol H2 from 1 atm and 20 degC
  to 70 MPa with gamma 1.4 needs 46.71 kJ in one stage and 26.35 kJ in two
  (derived), to 10 J/mol.  The recompression of a recovery return and the
  compression of a direct feed are checked against it scaled to their flows;
  a return joining the second of the two equal stages passes one of them,
  26.35 / 2 = 13.175 kJ/mol (derived).
- pumping: reversible work of an incompressible liquid, W = v dP (common
  practice; docs/references.md section 8).
- the loop compresses an ideal gas, as the worked example does (real-gas
  compression: tests/test_real_gas.py).
- everything else by hand from the stated quantities and prices.
"""

from __future__ import annotations

import math

import pytest

import purgeplan
from purgeplan.case import parse_case_text
from purgeplan.errors import CaseError
from purgeplan.output.json_out import alternative_record
from purgeplan.physics import compression
from purgeplan.physics.equilibrium import ATM_BAR
from purgeplan.physics.thermo import R_J_MOL_K
from purgeplan.results import with_balances
from purgeplan.solve import optimise

#: docs/references.md section 4: kJ/mol (numerically kJ/kmol x 1e-3), to 10 J/mol.
ONE_STAGE_J_MOL, TWO_STAGES_J_MOL, EXAMPLE_TOL_J_MOL = 46710.0, 26350.0, 10.0
#: 70 MPa in bar.
EXAMPLE_DISCHARGE_BAR = 700.0

#: Ideal-gas Cp of 3.5 R gives gamma = 1.4 exactly, as in the worked example.
GAMMA_14 = f"{{ heat_capacity_j_mol_k = {3.5 * R_J_MOL_K!r} }}"

BASE = """
[case]
name = "recovery test loop"

[components]
H2 = {h2}
N2 = {{}}
Ar = {{}}
NH3 = {{}}

[[reactions]]
name = "synthesis"
stoichiometry = {{ N2 = -1, H2 = -3, NH3 = 2 }}
key_reactant = "N2"
per_pass_conversion = 0.25

[reactor]
temperature_c = 450

[loop]
pressure_bar = {pressure}
pressure_drop_bar = 8
product = "NH3"
production_t_d = 1000
purge_fraction = 0.03
{loop_extra}

[separator]
temperature_c = -5
liquid_fraction = {{ NH3 = 0.9, H2 = 0.001, N2 = 0.001, Ar = 0.002 }}

[sources.syngas]
composition = {{ H2 = 0.747, N2 = 0.249, Ar = 0.004 }}
price_per_kmol = 2.0
supply_pressure_bar = {supply}
temperature_c = 20
{sources}

[compression]
makeup_stages = {stages}
makeup_efficiency = 0.8
recycle_inlet_temperature_c = 20
gas_model = "ideal_gas"

[purge]
recovery = "unit"

[recovery_units.unit]
return_fraction = {{ H2 = 0.9 }}
capital = {{ reference_cost = 3.0e6, reference_size = 500 }}
{unit}

[economics]
hours_per_year = 8000
power_price_per_kwh = 0.07
fuel_price_per_gj = 7.5
co2_price_per_t = 80.0
compressor_capital = {{ reference_cost = 6.0e6, reference_size = 10000, exponent = 0.62 }}
reactor_capital = {{ reference_cost = 8.0e6, reference_size = 60, exponent = 0.65 }}
"""


def case_text(*, unit: str = "", pressure: float = 150.0, supply: float = 28.0,
              stages: int = 3, sources: str = "", loop_extra: str = "",
              h2: str = "{}") -> str:
    return BASE.format(unit=unit, pressure=pressure, supply=supply, stages=stages,
                       sources=sources, loop_extra=loop_extra, h2=h2)


def state_of(text: str):
    loop = purgeplan.build_loop(parse_case_text(text))
    return loop, with_balances(loop, purgeplan.steady_state(loop))


def returned_kmol_h(state) -> float:
    return sum(state.flows["recovery_return"].values())


# ---------------------------------------------------------------------------
# recompression of the return against the worked example


@pytest.mark.parametrize(("stages", "want_j_mol"), [(1, ONE_STAGE_J_MOL),
                                                    (2, TWO_STAGES_J_MOL)])
def test_own_compressor_power_is_the_worked_example_scaled_to_the_return(stages, want_j_mol):
    # docs/references.md section 4: pure H2 (gamma 1.4) from 1 atm and 20 degC to 70 MPa;
    # shaft power = flow [kmol/h] x work [kJ/kmol] / 3600 / efficiency 0.8
    text = case_text(pressure=EXAMPLE_DISCHARGE_BAR, h2=GAMMA_14,
                     unit=f"return_pressure_bar = {ATM_BAR!r}\nrecompression = \"own_compressor\""
                          f"\nrecompression_stages = {stages}")
    loop, s = state_of(text)
    flow = returned_kmol_h(s)
    tol = EXAMPLE_TOL_J_MOL / want_j_mol
    assert loop.recovery_recompression_work_kj_kmol == pytest.approx(want_j_mol, rel=tol)
    assert s.quantities["recovery_recompression_power_kw"] == pytest.approx(
        want_j_mol * flow / 3600.0 / 0.8, rel=tol)
    assert s.costs["recovery_recompression_power"] == pytest.approx(
        s.quantities["recovery_recompression_power_kw"] * 0.07 * 8000.0, rel=1e-12)
    assert "recovery_recompression_capital" in s.costs
    assert s.balance_error < 1e-9


@pytest.mark.parametrize(("return_bar", "want_j_mol"), [
    # joins the second stage (suction sqrt(700 x 1.01325) = 26.63 bar): one stage of two
    (27.0, TWO_STAGES_J_MOL / 2.0),
    # below the second stage's suction: it joins the first and passes both
    (20.0, TWO_STAGES_J_MOL),
])
def test_through_the_makeup_compressor_the_return_joins_the_stage_that_suits_it(return_bar,
                                                                                want_j_mol):
    # docs/references.md section 4 (derived): the two-stage example's equal stages
    text = case_text(pressure=EXAMPLE_DISCHARGE_BAR, h2=GAMMA_14, supply=ATM_BAR, stages=2,
                     unit=f"return_pressure_bar = {return_bar!r}\n"
                          "recompression = \"makeup_compressor\"")
    loop, s = state_of(text)
    tol = EXAMPLE_TOL_J_MOL / want_j_mol
    assert loop.recovery_recompression_work_kj_kmol == pytest.approx(want_j_mol, rel=tol)
    assert s.quantities["recovery_recompression_power_kw"] == pytest.approx(
        want_j_mol * returned_kmol_h(s) / 3600.0 / 0.8, rel=tol)
    # one machine: its capital is sized on the make-up duty plus the return's
    assert "recovery_recompression_capital" not in s.costs
    assert s.quantities["makeup_compressor_duty_kw"] == pytest.approx(
        s.quantities["makeup_compressor_power_kw"]
        + s.quantities["recovery_recompression_power_kw"], rel=1e-12)


def test_joining_stage_by_hand():
    # stages of ratio 2 from 10 bar: suctions 10, 20, 40 bar
    assert compression.joining_stage(10.0, 80.0, 3, 10.0) == 0
    assert compression.joining_stage(10.0, 80.0, 3, 39.0) == 1
    assert compression.joining_stage(10.0, 80.0, 3, 40.0) == 2
    assert compression.joining_stage(10.0, 80.0, 3, 79.0) == 2


def test_a_return_at_loop_pressure_needs_no_recompression_but_a_missing_pressure_warns():
    loop, s = state_of(case_text(unit="return_pressure_bar = 150"))
    assert s.quantities["recovery_recompression_power_kw"] == 0.0
    assert not any("return_pressure_bar" in w for w in s.warnings)
    loop, s = state_of(case_text())
    assert "recovery_recompression_power" not in s.costs
    assert any("no return_pressure_bar" in w for w in s.warnings)


def test_recompression_changes_the_cost_of_recovery():
    # the same unit returning at 70 and 28 bar: the lower return costs more power
    _, high = state_of(case_text(unit="return_pressure_bar = 70"))
    _, low = state_of(case_text(unit="return_pressure_bar = 28"))
    assert low.quantities["recovery_recompression_power_kw"] > \
        high.quantities["recovery_recompression_power_kw"] > 0.0


@pytest.mark.parametrize(("unit", "path"), [
    ("return_pressure_bar = 200", "recovery_units.unit.return_pressure_bar"),
    # below the make-up supply at 28 bar the make-up compressor cannot take it
    ("return_pressure_bar = 10", "recovery_units.unit.return_pressure_bar"),
    ("export_fraction = { H2 = 0.2 }", "recovery_units.unit.export_fraction.H2"),
    ("export_fraction = { He = 0.2 }", "recovery_units.unit.export_fraction.He"),
    ('recompression = "wheel"', "recovery_units.unit.recompression"),
    ("recompression_stages = 0", "recovery_units.unit.recompression_stages"),
])
def test_bad_recovery_settings_are_refused_with_their_key_path(unit, path):
    with pytest.raises(CaseError) as err:
        parse_case_text(case_text(unit=unit))
    assert err.value.path == path


# ---------------------------------------------------------------------------
# recovered gas leaving the loop


def test_exported_gas_is_sold_and_counted_as_an_outlet():
    loop, s = state_of(case_text(unit="return_pressure_bar = 70\n"
                                      "export_fraction = { Ar = 0.6 }\n"
                                      "export_price_per_kmol = 12.0"))
    f = s.flows
    assert f["recovery_export"]["Ar"] == pytest.approx(0.6 * f["purge"]["Ar"], rel=1e-12)
    # -1 x kmol/h x 12 per kmol x 8000 h/year
    assert s.costs["recovery_export_sales"] == pytest.approx(
        -f["recovery_export"]["Ar"] * 12.0 * 8000.0, rel=1e-12)
    assert "recovery_export" in loop.outlet_streams
    assert s.balance_error < 1e-9
    # not vacuous: leaving the export out of the outlets shows an imbalance
    fed, left = f["makeup"]["Ar"], f["liquid_product"]["Ar"] + f["recovery_tail_gas"]["Ar"]
    assert abs(fed - left) / sum(f["makeup"].values()) > 1e-6


def test_product_recovered_from_the_purge_counts_as_product():
    loop, s = state_of(case_text(unit="return_pressure_bar = 70\n"
                                      "export_fraction = { NH3 = 0.9 }"))
    f = s.flows
    made = f["liquid_product"]["NH3"] + f["recovery_export"]["NH3"]
    assert made == pytest.approx(loop.production_kmol_h, rel=1e-12)
    assert f["recovery_export"]["NH3"] > 0.0
    assert s.quantities["recovery_export_sold_kmol_h"] == 0.0
    assert s.balance_error < 1e-9


# ---------------------------------------------------------------------------
# the ratio at the reactor inlet

RATIO = """[[loop.inlet_ratio_limits]]
name = "H2/N2"
numerator = { H2 = 1 }
denominator = { N2 = 1 }
min_ratio = 3.0
max_ratio = 3.0
"""
NITROGEN = """
[sources.nitrogen]
composition = { N2 = 1.0 }
price_per_kmol = 0.5
supply_pressure_bar = 28
"""


@pytest.fixture(scope="module")
def skewed_and_held():
    """The loop with a hydrogen recovery unit, without and with nitrogen to trim H2/N2."""
    skewed = purgeplan.build_loop(parse_case_text(case_text(
        unit="return_pressure_bar = 70", loop_extra=RATIO)))
    held = purgeplan.build_loop(parse_case_text(case_text(
        unit="return_pressure_bar = 70", loop_extra=RATIO, sources=NITROGEN)))
    return (skewed, optimise(skewed, details=False)), (held, optimise(held, details=False))


def test_recovery_skews_the_ratio_and_a_warning_says_by_how_much(skewed_and_held):
    (loop, opt), _ = skewed_and_held
    s = opt.state
    ratio = s.inlet_ratio["H2/N2"]
    feed = s.flows["reactor_feed"]
    assert ratio == pytest.approx(feed["H2"] / feed["N2"], rel=1e-12)
    assert ratio > 3.1        # the unit returns 90 % of the hydrogen and no nitrogen
    assert loop.ratio_limits == ()
    [warning] = [w for w in s.warnings if "H2/N2" in w]
    assert f"{ratio / 3.0 - 1.0:.1%} above stoichiometric 3" in warning
    assert not any(b.startswith("inlet_ratio") for b in opt.binding_constraints)


def test_with_an_adjustment_source_the_ratio_is_held_and_binding(skewed_and_held):
    _, (loop, opt) = skewed_and_held
    s = opt.state
    assert opt.solver.route == "HiGHS LP"
    assert s.inlet_ratio["H2/N2"] == pytest.approx(3.0, rel=1e-9)
    assert {"inlet_ratio_min:H2/N2", "inlet_ratio_max:H2/N2"} <= set(opt.binding_constraints)
    assert s.sources["nitrogen"] > 0.0
    assert not any("H2/N2" in w for w in s.warnings)
    assert s.balance_error < 1e-9
    rec = alternative_record("held", loop, opt)
    assert rec["inlet_ratio"] == {"H2/N2": pytest.approx(3.0, rel=1e-9)}
    assert rec["warnings"] == s.warnings


def test_stoichiometric_ratio_of_a_linear_form():
    # methanol: CO + 2 H2 = CH3OH gives the module (H2 - CO2)/(CO + CO2) = 2 / 1
    from purgeplan.case import InletRatioLimit, stoichiometric_ratio
    text = """
[components]
H2 = {}
CO = {}
CO2 = {}
CH3OH = {}
[[reactions]]
name = "methanol"
stoichiometry = { CO = -1, H2 = -2, CH3OH = 1 }
key_reactant = "CO"
per_pass_conversion = 0.3
[reactor]
temperature_c = 250
[loop]
pressure_bar = 80
pressure_drop_bar = 4
product = "CH3OH"
production_t_d = 1000
[separator]
temperature_c = 40
liquid_fraction = { CH3OH = 0.95 }
[sources.syngas]
composition = { H2 = 0.7, CO = 0.25, CO2 = 0.05 }
price_per_kmol = 2.0
supply_pressure_bar = 30
[economics]
power_price_per_kwh = 0.07
compressor_capital = { reference_cost = 6.0e6, reference_size = 10000 }
reactor_capital = { reference_cost = 8.0e6, reference_size = 60 }
"""
    case = parse_case_text(text)
    spec = InletRatioLimit(name="module", numerator={"H2": 1.0, "CO2": -1.0},
                           denominator={"CO": 1.0, "CO2": 1.0})
    assert stoichiometric_ratio(case, spec) == pytest.approx(2.0, rel=1e-15)


@pytest.mark.parametrize(("old", "new", "path"), [
    ("max_ratio = 3.0", "max_ratio = 2.0", "loop.inlet_ratio_limits[0].max_ratio"),
    ("denominator = { N2 = 1 }", "denominator = { N2 = 0 }",
     "loop.inlet_ratio_limits[0].denominator"),
    ("numerator = { H2 = 1 }", "numerator = { Xe = 1 }",
     "loop.inlet_ratio_limits[0].numerator.Xe"),
    ("numerator = { H2 = 1 }", "numerator = { Ar = 1 }",
     "loop.inlet_ratio_limits[0].stoichiometric_ratio"),
])
def test_bad_ratio_limits_are_refused_with_their_key_path(old, new, path):
    with pytest.raises(CaseError) as err:
        parse_case_text(case_text(loop_extra=RATIO.replace(old, new)))
    assert err.value.path == path


# ---------------------------------------------------------------------------
# direct feeds raised to loop pressure

HYDROGEN_FEED = """
[sources.hydrogen]
composition = {{ H2 = 1.0 }}
price_per_kmol = 2.5
supply_pressure_bar = {supply!r}
temperature_c = 20
enters = "reactor_feed"
"""
DIRECT_RATIO = 'inlet_ratios = [{ numerator = "H2", denominator = "N2", value = 3.3 }]'


NO_RECOVERY = ('recovery = "unit"', 'recovery = "none"')


def test_a_gas_direct_feed_is_compressed_as_in_the_worked_example():
    # docs/references.md section 4: H2, gamma 1.4, 1 atm and 20 degC to 70 MPa, one stage
    text = case_text(pressure=EXAMPLE_DISCHARGE_BAR, h2=GAMMA_14, stages=1,
                     loop_extra=DIRECT_RATIO,
                     sources=HYDROGEN_FEED.format(supply=ATM_BAR)).replace(*NO_RECOVERY)
    loop, s = state_of(text)
    tol = EXAMPLE_TOL_J_MOL / ONE_STAGE_J_MOL
    flow = s.sources["hydrogen"]
    assert flow > 0.0
    assert s.quantities["direct_feed_compression_power_kw"] == pytest.approx(
        ONE_STAGE_J_MOL * flow / 3600.0 / 0.8, rel=tol)
    assert s.costs["direct_feed_compression_power"] == pytest.approx(
        s.quantities["direct_feed_compression_power_kw"] * 0.07 * 8000.0, rel=1e-12)
    assert "direct_feed_compressor_capital" in s.costs


def test_a_direct_feed_above_loop_pressure_needs_no_power():
    text = case_text(loop_extra=DIRECT_RATIO,
                     sources=HYDROGEN_FEED.format(supply=160.0)).replace(*NO_RECOVERY)
    loop, s = state_of(text)
    assert s.quantities["direct_feed_compression_power_kw"] == 0.0
    assert not any(k.startswith("direct_feed") for k in s.costs)


def test_a_liquid_direct_feed_is_pumped_by_hand():
    # common practice: W = v dP = (M / rho) dP; liquid nitrogen, 807 kg/m3, 2 to 150 bar
    feed = """
[sources.liquid_nitrogen]
composition = { N2 = 1.0 }
price_per_kmol = 1.5
supply_pressure_bar = 2
temperature_c = -196
enters = "reactor_feed"
phase = "liquid"
liquid_density_kg_m3 = 807
"""
    ratio = 'inlet_ratios = [{ numerator = "H2", denominator = "N2", value = 2.9 }]'
    text = case_text(loop_extra=ratio, sources=feed).replace(*NO_RECOVERY)
    text = text.replace("[compression]", "[compression]\npump_efficiency = 0.6")
    loop, s = state_of(text)
    mw = loop.data["N2"].molar_mass_kg_kmol
    work = mw / 807.0 * (150.0 - 2.0) * 100.0          # kJ/kmol (100 kPa per bar)
    flow = s.sources["liquid_nitrogen"]
    assert flow > 0.0
    assert s.quantities["direct_feed_pumping_power_kw"] == pytest.approx(
        flow * work / 3600.0 / 0.6, rel=1e-12)
    assert s.costs["direct_feed_pumping_power"] == pytest.approx(
        s.quantities["direct_feed_pumping_power_kw"] * 0.07 * 8000.0, rel=1e-12)
    assert s.balance_error < 1e-9


@pytest.mark.parametrize(("old", "new", "path"), [
    ('enters = "reactor_feed"\nphase = "liquid"\n', 'phase = "liquid"\n',
     "sources.liquid_nitrogen.phase"),
    ("liquid_density_kg_m3 = 807\n", "", "sources.liquid_nitrogen.liquid_density_kg_m3"),
    ('phase = "liquid"\n', 'phase = "gas"\n', "sources.liquid_nitrogen.liquid_density_kg_m3"),
])
def test_bad_liquid_feeds_are_refused_with_their_key_path(old, new, path):
    feed = """
[sources.liquid_nitrogen]
composition = { N2 = 1.0 }
price_per_kmol = 1.5
supply_pressure_bar = 2
enters = "reactor_feed"
phase = "liquid"
liquid_density_kg_m3 = 807
"""
    ratio = 'inlet_ratios = [{ numerator = "H2", denominator = "N2", value = 2.9 }]'
    with pytest.raises(CaseError) as err:
        parse_case_text(case_text(loop_extra=ratio, sources=feed.replace(old, new)))
    assert err.value.path == path


def test_recovery_keeps_its_returned_gas_finite():
    # a sanity check of the state the tests above use
    loop, s = state_of(case_text(unit="return_pressure_bar = 70"))
    assert math.isfinite(s.tac_per_year) and returned_kmol_h(s) > 0.0
