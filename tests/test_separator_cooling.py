"""Cooling of the reactor outlet to separator temperature: cooling water, then refrigeration.

References (docs/references.md section 14):

- the energy balance of the cooling duty, recomputed from CoolProp's
  ideal-gas enthalpies (each fluid's reference equation of state at 1 Pa)
  and its enthalpies of vaporisation and vapour pressure of ammonia, none of
  the project's property functions;
- the Carnot coefficient of performance of Smith, Van Ness and Abbott,
  *Introduction to Chemical Engineering Thermodynamics*, 7th ed., Example 9.1
  (a space at -10 degC, cooling water at 21 degC, 5 K approaches: 6.30; from
  memory);
- the fraction of Carnot a single-stage ammonia cycle reaches, from CoolProp's
  ammonia, against the 0.5 to 0.6 of common practice;
- the refrigeration power and its cost lines by hand on a small case.
"""

from __future__ import annotations

import json
import math

import CoolProp.CoolProp as CP
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

import purgeplan
from purgeplan.case import expand_alternatives, parse_case_text
from purgeplan.cli import main
from purgeplan.errors import CaseError
from purgeplan.physics.economics import capital_recovery_factor
from purgeplan.physics.refrigeration import carnot_cop

COOLPROP_NAMES = {"H2": "Hydrogen", "N2": "Nitrogen", "Ar": "Argon", "CH4": "Methane",
                  "NH3": "Ammonia"}

CASE = """
[case]
name = "cooling test loop"

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

[separator.cooling]
water_temperature_c = 25
water_price_per_gj = 0.4
refrigeration_capital = { reference_cost = 3.0e6, reference_size = 5000, exponent = 0.65 }

[sources.syngas]
composition = { H2 = 0.7395, N2 = 0.2465, Ar = 0.003, CH4 = 0.011 }
price_per_kmol = 2.3
supply_pressure_bar = 28

[economics]
hours_per_year = 8000
power_price_per_kwh = 0.07
fuel_price_per_gj = 7.5
compressor_capital = { reference_cost = 6.0e6, reference_size = 10000, exponent = 0.62 }
reactor_capital = { reference_cost = 8.0e6, reference_size = 60, exponent = 0.65 }
"""

#: Constant heat capacities and a set ammonia split: a case to check by hand.
HAND_CASE = (CASE.replace("H2 = {}\nN2 = {}\nAr = {}\nCH4 = {}\nNH3 = {}",
                          "\n".join(f"{c} = {{ heat_capacity_j_mol_k = 29.1 }}"
                                    for c in ("H2", "N2", "Ar", "CH4", "NH3")))
             .replace('NH3 = "condensation"', "NH3 = 0.9"))


def state_of(text: str):
    loop = purgeplan.build_loop(parse_case_text(text))
    return loop, purgeplan.steady_state(loop)


def ideal_gas_h(component: str, temperature_k: float) -> float:
    """CoolProp's molar enthalpy at 1 Pa, the ideal-gas limit [J/mol]."""
    return CP.PropsSI("Hmolar", "T", temperature_k, "P", 1.0, COOLPROP_NAMES[component])


def ammonia_hvap(temperature_k: float) -> float:
    """CoolProp's enthalpy of vaporisation of ammonia [J/mol]."""
    return (CP.PropsSI("Hmolar", "T", temperature_k, "Q", 1, "Ammonia")
            - CP.PropsSI("Hmolar", "T", temperature_k, "Q", 0, "Ammonia"))


# ---------------------------------------------------------------------------
# the energy balance against CoolProp


def test_cooling_duty_closes_an_energy_balance_from_coolprop():
    """Duty = sum S_c [h_c(T_reactor) - h_c(T_sep)] + L_NH3 Hvap(T_sep), all from CoolProp.

    The dissolved gases are above their critical temperatures and carry no
    latent heat (their heat of solution is neglected on both sides).
    Measured: 6.7e-4 relative, mostly ammonia's ideal-gas Cp (the Poling
    polynomial's enthalpy change 0.39 % above CoolProp's) and ammonia's
    enthalpy of vaporisation (Perry's 0.05 % above).
    """
    loop, s = state_of(CASE)
    t_r, t_s = loop.reactor_temperature_k, loop.separator_temperature_k
    outlet, liquid = s.flows["reactor_outlet"], s.flows["liquid_product"]
    sensible = sum(f * (ideal_gas_h(c, t_r) - ideal_gas_h(c, t_s)) for c, f in outlet.items())
    expected = (sensible + liquid["NH3"] * ammonia_hvap(t_s)) / 3600.0
    assert s.quantities["separator_cooling_duty_kw"] == pytest.approx(expected, rel=2e-3)


def test_water_cooler_duty_and_its_condensate_from_coolprop():
    """The water cooler's outlet at 25 + 5 degC: ammonia condenses to its vapour pressure there
    (Raoult's law with CoolProp's vapour pressure at separator pressure 142 bar), and the
    cooling water takes the sensible heat to 30 degC and the latent heat at 30 degC."""
    loop, s = state_of(CASE)
    t_r, t_w = loop.reactor_temperature_k, 303.15
    outlet = s.flows["reactor_outlet"]
    psat_bar = CP.PropsSI("P", "T", t_w, "Q", 0, "Ammonia") / 1e5
    others = sum(f for c, f in outlet.items() if c != "NH3")
    condensed = outlet["NH3"] - psat_bar / (142.0 - psat_bar) * others
    assert condensed > 0.0                       # not vacuous: it condenses in the water cooler
    q = s.quantities
    # measured: condensate 3.4e-4 below, duty 6.5e-4 above (the Wagner vapour pressure is
    # 2.8e-4 above CoolProp's at 30 degC; ammonia's ideal-gas Cp as in the test above)
    assert q["water_cooler_condensate_kmol_h"] == pytest.approx(condensed, rel=2e-3)
    sensible = sum(f * (ideal_gas_h(c, t_r) - ideal_gas_h(c, t_w)) for c, f in outlet.items())
    expected = (sensible + condensed * ammonia_hvap(t_w)) / 3600.0
    assert q["water_cooler_duty_kw"] == pytest.approx(expected, rel=2e-3)
    assert q["refrigeration_duty_kw"] == pytest.approx(
        q["separator_cooling_duty_kw"] - q["water_cooler_duty_kw"], rel=1e-12)


def test_above_its_dew_point_nothing_condenses_in_the_water_cooler():
    """A warm water cooler (50 + 5 degC) leaves the reactor outlet above its dew point
    (CoolProp's vapour pressure above the ammonia partial pressure): no condensate, and the
    refrigeration takes all the latent heat."""
    loop, s = state_of(CASE.replace("water_temperature_c = 25", "water_temperature_c = 50"))
    outlet = s.flows["reactor_outlet"]
    partial_bar = 142.0 * outlet["NH3"] / sum(outlet.values())
    assert CP.PropsSI("P", "T", 328.15, "Q", 0, "Ammonia") / 1e5 > partial_bar
    q = s.quantities
    assert q["water_cooler_condensate_kmol_h"] == 0.0
    t_r, t_w = loop.reactor_temperature_k, 328.15
    sensible = sum(f * (ideal_gas_h(c, t_r) - ideal_gas_h(c, t_w)) for c, f in outlet.items())
    assert q["water_cooler_duty_kw"] == pytest.approx(sensible / 3600.0, rel=2e-3)  # 8.1e-4


# ---------------------------------------------------------------------------
# the refrigeration cycle


def test_carnot_cop_of_the_textbook_example():
    """Smith, Van Ness and Abbott, 7th ed., Example 9.1 (from memory): a space at -10 degC,
    cooling water at 21 degC and 5 K approaches give omega = 258.15 / 41 = 6.30."""
    assert carnot_cop(263.15 - 5.0, 294.15 + 5.0) == pytest.approx(6.30, abs=0.005)
    with pytest.raises(ValueError):
        carnot_cop(300.0, 290.0)


def test_the_textbook_example_through_a_case():
    """The same temperatures as a case's cooling at 100 % of Carnot: duty / power = 6.30."""
    text = (CASE.replace("temperature_c = -5", "temperature_c = -10")
            .replace("water_temperature_c = 25", "water_temperature_c = 21\n"
                     "evaporator_approach_k = 5\ncondenser_approach_k = 5\ncarnot_fraction = 1.0"))
    _, s = state_of(text)
    q = s.quantities
    assert q["refrigeration_duty_kw"] / q["refrigeration_power_kw"] == pytest.approx(6.30,
                                                                                    abs=0.005)


def test_default_fraction_of_carnot_against_an_ammonia_cycle():
    """A single-stage ammonia cycle in CoolProp (saturated vapour from the evaporator,
    isentropic efficiency 0.7, common practice; saturated liquid throttled from the
    condenser) between the demo's -10 and 40 degC reaches 0.57 of Carnot: within the 0.5 to
    0.6 of common practice, beside the default 0.55."""
    t_evap, t_cond, eff = 263.15, 313.15, 0.7
    h1 = CP.PropsSI("H", "T", t_evap, "Q", 1, "Ammonia")
    s1 = CP.PropsSI("S", "T", t_evap, "Q", 1, "Ammonia")
    p_cond = CP.PropsSI("P", "T", t_cond, "Q", 0, "Ammonia")
    h2 = h1 + (CP.PropsSI("H", "P", p_cond, "S", s1, "Ammonia") - h1) / eff
    h3 = CP.PropsSI("H", "T", t_cond, "Q", 0, "Ammonia")
    fraction = (h1 - h3) / (h2 - h1) / carnot_cop(t_evap, t_cond)
    assert 0.5 <= fraction <= 0.6
    loop = purgeplan.build_loop(parse_case_text(CASE.replace("water_temperature_c = 25",
                                                             "water_temperature_c = 30")))
    assert loop.cooling.coefficient_of_performance == pytest.approx(
        0.55 * carnot_cop(t_evap, t_cond), rel=1e-12)


def test_refrigeration_power_and_cost_lines_by_hand():
    """Cp = 29.1 J/(mol K) for every gas and a set ammonia split (nothing condenses in the
    water cooler, by the case's own choice): every duty, the power and the cost lines by hand.
    Ammonia's enthalpy of vaporisation at -5 degC by DIPPR equation 106 with the
    coefficients of Perry's Table 2-150 (Tc 405.65 K, C1 3.1523e7 J/kmol, C2 0.3914,
    C3 -0.2289, C4 0.2309)."""
    loop, s = state_of(HAND_CASE)
    t_r, t_w, t_s = 723.15, 303.15, 268.15
    tr = t_s / 405.65
    hvap = 3.1523e4 * (1 - tr) ** (0.3914 - 0.2289 * tr + 0.2309 * tr * tr)   # J/mol
    gas = sum(s.flows["reactor_outlet"].values())
    duty = (gas * 29.1 * (t_r - t_s) + s.flows["liquid_product"]["NH3"] * hvap) / 3600.0
    water = gas * 29.1 * (t_r - t_w) / 3600.0
    cold = duty - water
    cop = 0.55 * (t_s - 5.0) / ((298.15 + 10.0) - (t_s - 5.0))
    power = cold / cop
    q = s.quantities
    assert q["separator_cooling_duty_kw"] == pytest.approx(duty, rel=1e-12)
    assert q["water_cooler_duty_kw"] == pytest.approx(water, rel=1e-12)
    assert q["water_cooler_condensate_kmol_h"] == 0.0
    assert q["refrigeration_duty_kw"] == pytest.approx(cold, rel=1e-11)
    assert q["refrigeration_power_kw"] == pytest.approx(power, rel=1e-11)
    # GJ/h: kW x 3600 s/h / 1e6 kJ/GJ
    heat_gj_h = (water + cold + power) * 3600.0 / 1e6
    assert q["cooling_water_duty_gj_h"] == pytest.approx(heat_gj_h, rel=1e-12)
    c = s.costs
    assert c["cooling_water"] == pytest.approx(heat_gj_h * 0.4 * 8000.0, rel=1e-12)
    assert c["refrigeration_power"] == pytest.approx(power * 0.07 * 8000.0, rel=1e-11)
    crf = capital_recovery_factor(0.08, 20.0)
    assert c["refrigeration_capital"] == pytest.approx(
        crf * 3.0e6 * (cold / 5000.0) ** 0.65, rel=1e-11)
    assert s.tac_per_year == pytest.approx(sum(c.values()), rel=1e-12)


def test_a_given_coefficient_of_performance_is_used():
    _, s = state_of(CASE.replace("water_price_per_gj = 0.4",
                                 "water_price_per_gj = 0.4\ncoefficient_of_performance = 2.5"))
    q = s.quantities
    assert q["refrigeration_power_kw"] == pytest.approx(q["refrigeration_duty_kw"] / 2.5,
                                                        rel=1e-12)


def test_cooling_water_cold_enough_leaves_nothing_to_refrigerate():
    """A separator at 40 degC with water at 25 + 5 degC: all of it by cooling water."""
    loop, s = state_of(CASE.replace("temperature_c = -5", "temperature_c = 40"))
    q = s.quantities
    assert not loop.cooling.refrigerated
    assert q["refrigeration_duty_kw"] == 0.0 and q["refrigeration_power_kw"] == 0.0
    assert q["water_cooler_duty_kw"] == q["separator_cooling_duty_kw"] > 0.0
    assert "refrigeration_power" not in s.costs and "refrigeration_capital" not in s.costs


def test_without_cooling_nothing_changes():
    text = CASE.replace(CASE[CASE.index("[separator.cooling]"):CASE.index("[sources.syngas]")],
                        "")
    _, s = state_of(text)
    assert not any("cool" in k or "refrig" in k for k in (*s.quantities, *s.costs))


# ---------------------------------------------------------------------------
# properties over the cooling keys


@settings(max_examples=40, deadline=None)
@given(water_c=st.floats(0.5, 60.0), water_k=st.floats(0.0, 20.0),
       evaporator_k=st.floats(0.0, 15.0), condenser_k=st.floats(3.0, 25.0),
       fraction=st.floats(0.2, 1.0), separator_c=st.floats(-30.0, 20.0))
def test_duties_close_and_stay_physical(water_c, water_k, evaporator_k, condenser_k, fraction,
                                        separator_c):
    """Any valid cooling: water cooler plus refrigeration is the duty, nothing negative, the
    condensate at most the liquid's ammonia, duty over power the coefficient of performance,
    and the cooling water takes the water cooler's heat and the refrigeration condenser's."""
    text = CASE.replace("temperature_c = -5", f"temperature_c = {separator_c!r}").replace(
        "water_temperature_c = 25",
        f"water_temperature_c = {water_c!r}\nwater_approach_k = {water_k!r}\n"
        f"evaporator_approach_k = {evaporator_k!r}\ncondenser_approach_k = {condenser_k!r}\n"
        f"carnot_fraction = {fraction!r}")
    try:
        loop, s = state_of(text)
    except CaseError as exc:
        assert exc.path.startswith("separator.cooling."), exc
        return
    q = s.quantities
    assert q["water_cooler_duty_kw"] + q["refrigeration_duty_kw"] == pytest.approx(
        q["separator_cooling_duty_kw"], rel=1e-12)
    assert q["refrigeration_duty_kw"] >= -1e-9 * q["separator_cooling_duty_kw"]
    assert q["water_cooler_duty_kw"] > 0.0
    assert 0.0 <= q["water_cooler_condensate_kmol_h"] <= s.flows["liquid_product"]["NH3"]
    if loop.cooling.refrigerated:
        assert q["refrigeration_power_kw"] * loop.cooling.coefficient_of_performance == \
            pytest.approx(q["refrigeration_duty_kw"], rel=1e-12)
    total_kw = q["water_cooler_duty_kw"] + q["refrigeration_duty_kw"] + q["refrigeration_power_kw"]
    assert q["cooling_water_duty_gj_h"] == pytest.approx(total_kw * 0.0036, rel=1e-12)


# ---------------------------------------------------------------------------
# the separator temperature as an option, and the optimiser


def test_separator_temperature_as_an_option():
    """`[options.X.Y] separator = { temperature_c = ... }` patches the temperature and keeps
    the cooling: a colder separator leaves less ammonia in its vapour and refrigerates
    more, at a lower coefficient of performance."""
    text = CASE + """
[options.separator_temperature.cold]
separator = { temperature_c = -15 }
[options.separator_temperature.warm]
separator = { temperature_c = 5 }
"""
    loops = {name: purgeplan.build_loop(case) for name, _, case in
             expand_alternatives(parse_case_text(text))}
    cold, warm = loops["separator_temperature=cold"], loops["separator_temperature=warm"]
    assert cold.separator_temperature_k == pytest.approx(258.15)
    assert warm.separator_temperature_k == pytest.approx(278.15)
    assert cold.cooling is not None and warm.cooling is not None
    assert cold.cooling.coefficient_of_performance < warm.cooling.coefficient_of_performance
    sc, sw = purgeplan.steady_state(cold), purgeplan.steady_state(warm)

    def vapour_nh3(state):  # the production is fixed: what condenses shows in the vapour
        vapour = state.flows["separator_vapour"]
        return vapour["NH3"] / sum(vapour.values())
    assert vapour_nh3(sc) < vapour_nh3(sw)
    assert sc.quantities["refrigeration_power_kw"] > sw.quantities["refrigeration_power_kw"]


def test_the_optimum_against_a_dense_scan_with_cooling():
    """The optimiser's purge fraction on a loop with cooling costs: a dense scan of the
    direct engine (an independent evaluation) finds no lower TAC."""
    import dataclasses

    loop = purgeplan.build_loop(parse_case_text(CASE))
    opt = purgeplan.optimise(loop)
    assert opt.feasible and opt.state.costs["refrigeration_power"] > 0.0
    scan = []
    for i in range(121):
        a = math.exp(math.log(loop.purge_fraction_min)
                     + i / 120 * math.log(loop.purge_fraction_max / loop.purge_fraction_min))
        try:
            scan.append(purgeplan.steady_state(dataclasses.replace(loop, purge_fraction=a))
                        .tac_per_year)
        except ArithmeticError:
            continue
    assert opt.state.tac_per_year <= min(scan) * (1 + 1e-9)


# ---------------------------------------------------------------------------
# the command line: results and refusals


def test_json_carries_the_cooling_quantities(tmp_path):
    case = tmp_path / "case.toml"
    case.write_text(CASE, encoding="utf-8")
    out = tmp_path / "out.json"
    assert main(["optimize", str(case), "--json", str(out), "--quiet"]) == 0
    (rec,) = json.loads(out.read_text(encoding="utf-8"))["alternatives"]
    q = rec["quantities"]
    for key in ("separator_cooling_duty_kw", "refrigeration_power_kw", "water_cooler_duty_kw",
                "refrigeration_duty_kw", "cooling_water_duty_gj_h"):
        assert q[key] > 0.0, key
    assert rec["costs"]["refrigeration_power"] == pytest.approx(
        q["refrigeration_power_kw"] * 0.07 * 8000.0, rel=1e-12)


@pytest.mark.parametrize("old, new, field", [
    ("water_price_per_gj = 0.4", "water_price_per_gj = 0.4\ncarnot_fraction = 0.5\n"
     "coefficient_of_performance = 3.0", "separator.cooling.coefficient_of_performance"),
    ("water_price_per_gj = 0.4", "", "separator.cooling.water_price_per_gj"),
    ("water_temperature_c = 25", "water_temperature_c = 25\nwater_approach_k = -1",
     "separator.cooling.water_approach_k"),
    ("water_temperature_c = 25", "water_temperature_c = 1\nwater_approach_k = 20\n"
     "condenser_approach_k = 0\nevaporator_approach_k = 0",
     "separator.cooling.condenser_approach_k"),
    ("water_temperature_c = 25", "water_temperature_c = 25\nevaporator_approach_k = 250",
     "separator.cooling.evaporator_approach_k"),
    ("temperature_c = -5", "temperature_c = -80", "separator.cooling.evaporator_approach_k"),
    ("water_temperature_c = 25", "water_temperature_c = 25\ncarnot_fraction = 1.5",
     "separator.cooling.carnot_fraction"),
    ("water_temperature_c = 25", "water_temperature_c = 25\nrefrigerant = 'ammonia'",
     "separator.cooling.refrigerant"),
    ("temperature_c = -5", "temperature_c = 460", "separator.temperature_c"),
    ("NH3 = {}", "NH3 = {}\nX = { molar_mass_kg_kmol = 20, heat_capacity_j_mol_k = 30 }",
     "separator.liquid_fraction.X"),
])
def test_bad_cooling_keys_are_refused_in_one_line(tmp_path, capsys, old, new, field):
    text = CASE.replace(old, new, 1)
    if field == "separator.cooling.condenser_approach_k":
        # a separator at 10 degC, refrigerated below the water cooler's 21 degC, with its
        # refrigerant condensing at the water's 1 degC
        text = text.replace("[separator]\ntemperature_c = -5", "[separator]\ntemperature_c = 10")
    if new == "temperature_c = -80":
        text = text.replace("water_price_per_gj = 0.4", "water_price_per_gj = 0.4\n"
                            "evaporator_approach_k = 200")
    if field == "separator.liquid_fraction.X":
        # X has no critical constants either: its compression is taken as an ideal gas's
        text = text.replace("CH4 = 0.004 }", "CH4 = 0.004, X = 0.5 }") + (
            '\n[compression]\ngas_model = "ideal_gas"\n')
    case = tmp_path / "case.toml"
    case.write_text(text, encoding="utf-8")
    out = tmp_path / "out.json"
    assert main(["optimize", str(case), "--json", str(out)]) == 2
    err = capsys.readouterr().err.strip()
    assert len(err.splitlines()) == 1 and field in err, err
    assert "Traceback" not in err and not out.exists()

