"""Case validation: every check, property data included, runs before a loop is built.

Each refusal is a CaseError naming the key path and the fix; a case that
validates, each of its design alternatives included, builds.
"""

from __future__ import annotations

import copy
import tomllib
from pathlib import Path

import pytest
from conftest import case_toml
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from purgeplan.build import build_loop
from purgeplan.case import expand_alternatives, parse_case_text, validate_case_dict
from purgeplan.cli import main
from purgeplan.errors import CaseError

CASES = Path(__file__).resolve().parents[1] / "cases"
DEMO_TEXT = {name: (CASES / f"{name}_demo.toml").read_text(encoding="utf-8")
             for name in ("ammonia", "hydrogenation")}
AMMONIA_GAS = {"H2": 0.74, "N2": 0.25, "Ar": 0.01}
EQUILIBRIUM = 'per_pass = "equilibrium"\napproach_to_equilibrium = 0.8\n'
INLET_RATIO = '[{ numerator = "H2", denominator = "benzene", value = 8.0 }]'
RATIO_LINE = f"inlet_ratios = {INLET_RATIO}\n"


def demo(name: str) -> dict:
    """A demo case as plain data, to be edited."""
    return copy.deepcopy(tomllib.loads(DEMO_TEXT[name]))


def refusal(make_case) -> CaseError:
    """The CaseError raised by make_case()."""
    with pytest.raises(CaseError) as info:
        make_case()
    return info.value


def refused_text(text: str) -> CaseError:
    return refusal(lambda: parse_case_text(text))


def refused_dict(raw: dict) -> CaseError:
    return refusal(lambda: validate_case_dict(raw))


# ---------------------------------------------------------------------------
# property data (checked at validation, no longer first found while building)


def test_unknown_component_without_overrides_is_refused():
    err = refused_text(case_toml(makeup=AMMONIA_GAS, liquid_fraction={"NH3": 0.9},
                                 component_overrides={"Ar": {"identifier": "unobtainium-42"}}))
    assert err.path == "components.Ar"
    assert "unknown component" in err.message and "molar_mass_kg_kmol" in err.message


#: A component defined only by overrides has no critical constants: its gas is ideal.
IDEAL_GAS = '\n[compression]\ngas_model = "ideal_gas"\n'


def test_unknown_component_defined_by_overrides_builds():
    overrides = {"Ar": {"identifier": "unobtainium-42", "molar_mass_kg_kmol": 39.9,
                        "heat_capacity_j_mol_k": 20.8}}
    case = parse_case_text(case_toml(makeup=AMMONIA_GAS, liquid_fraction={"NH3": 0.9},
                                     component_overrides=overrides) + IDEAL_GAS)
    assert build_loop(case).data["Ar"].molar_mass_kg_kmol == 39.9


def test_unknown_component_has_no_real_gas_compression():
    overrides = {"Ar": {"identifier": "unobtainium-42", "molar_mass_kg_kmol": 39.9,
                        "heat_capacity_j_mol_k": 20.8}}
    err = refused_text(case_toml(makeup=AMMONIA_GAS, liquid_fraction={"NH3": 0.9},
                                 component_overrides=overrides))
    assert err.path == "compression.gas_model"
    assert "'Ar'" in err.message and "ideal_gas" in err.message


def test_component_without_heat_capacity_data_is_refused():
    # the property library has no ideal-gas heat capacity for sulfur hexafluoride
    err = refused_text(case_toml(makeup={"H2": 0.74, "N2": 0.25, "SF6": 0.01},
                                 liquid_fraction={"NH3": 0.9}))
    assert err.path == "components.SF6.heat_capacity_j_mol_k"
    assert "heat capacity" in err.message


def test_heat_capacity_not_above_the_gas_constant_is_refused():
    err = refused_text(case_toml(makeup=AMMONIA_GAS, liquid_fraction={"NH3": 0.9},
                                 component_overrides={"Ar": {"heat_capacity_j_mol_k": 5.0}}))
    assert err.path == "components.Ar.heat_capacity_j_mol_k"
    assert "gas constant" in err.message


def test_reaction_that_does_not_balance_its_elements_is_refused():
    err = refused_text(case_toml(makeup=AMMONIA_GAS, liquid_fraction={"NH3": 0.9},
                                 stoichiometry={"N2": -1, "H2": -3, "NH3": 1}))
    assert err.path == "reactions[0].stoichiometry"
    assert "balance" in err.message and "'N'" in err.message


FORMATION = EQUILIBRIUM + 'equilibrium = { constant = "formation_data" }'
NH3_BY_OVERRIDES = {"identifier": "unobtainium-42", "molar_mass_kg_kmol": 17.03,
                    "heat_capacity_j_mol_k": 35.6}


def test_formation_data_missing_for_an_equilibrium_constant_is_refused():
    err = refused_text(case_toml(makeup=AMMONIA_GAS, liquid_fraction={"NH3": 0.9},
                                 reaction=FORMATION,
                                 component_overrides={"NH3": NH3_BY_OVERRIDES}))
    assert err.path == "components.NH3"
    assert "formation" in err.message and "standard_entropy_j_mol_k" in err.message


def test_formation_data_given_by_overrides_builds():
    nh3 = {**NH3_BY_OVERRIDES, "formation_enthalpy_kj_mol": -45.9,
           "standard_entropy_j_mol_k": 192.8}
    case = parse_case_text(case_toml(makeup=AMMONIA_GAS, liquid_fraction={"NH3": 0.9},
                                     reaction=FORMATION, component_overrides={"NH3": nh3})
                           + IDEAL_GAS)
    assert build_loop(case).reactions[0].delta_h_298_j_mol == pytest.approx(-91.8e3)


def test_gillespie_beattie_needs_the_ammonia_reaction_by_name():
    # balanced, but the components are not called N2, H2 and NH3
    err = refused_text(case_toml(
        makeup={"hydrogen": 0.75, "nitrogen": 0.25}, liquid_fraction={"NH3": 0.9},
        stoichiometry={"nitrogen": -1, "hydrogen": -3, "NH3": 2}, key_reactant="nitrogen",
        reaction=EQUILIBRIUM + 'equilibrium = { constant = "ammonia_gillespie_beattie" }'))
    assert err.path == "reactions[0].equilibrium.constant"
    assert "N2 + 3 H2 = 2 NH3" in err.message


def test_dyson_simon_outside_its_range_is_refused():
    raw = demo("ammonia")
    raw["reactor"]["temperature_c"] = 1900.0  # the ammonia coefficient turns negative
    err = refused_dict(raw)
    assert err.path == "reactions[0].equilibrium.fugacity"
    assert "Dyson-Simon" in err.message and "'ideal'" in err.message


def test_product_with_vapour_pressure_above_the_separator_pressure_is_refused():
    # ammonia at 60 degC: about 26 bar, above the 19.2 bar separator
    err = refused_text(case_toml(makeup=AMMONIA_GAS, liquid_fraction={"NH3": "condensation"},
                                 pressure_bar=20.0, separator_temperature_c=60.0))
    assert err.path == "separator.temperature_c"
    assert "nothing condenses" in err.message


def test_separator_above_the_critical_temperature_is_refused():
    err = refused_text(case_toml(makeup=AMMONIA_GAS, liquid_fraction={"NH3": "condensation"},
                                 separator_temperature_c=140.0))
    assert err.path == "separator.temperature_c"
    assert "critical temperature" in err.message


def test_condensing_component_without_vapour_pressure_data_is_refused():
    # the property library has no vapour pressure for xenon
    err = refused_text(case_toml(makeup={"H2": 0.74, "N2": 0.25, "Xe": 0.01},
                                 liquid_fraction={"NH3": 0.9, "Xe": "condensation"}))
    assert err.path == "separator.liquid_fraction.Xe"
    assert "vapour pressure" in err.message


# ---------------------------------------------------------------------------
# reactor-inlet ratios: one for the direct feeds, none without them


def test_direct_feed_without_an_inlet_ratio_is_refused_by_check(tmp_path, capsys):
    assert DEMO_TEXT["hydrogenation"].count(RATIO_LINE) == 1
    path = tmp_path / "no_ratio.toml"
    path.write_text(DEMO_TEXT["hydrogenation"].replace(RATIO_LINE, ""), encoding="utf-8")
    assert main(["check", str(path)]) == 2
    out, err = capsys.readouterr()
    assert "case is valid" not in out
    assert err.rstrip("\n").split("\n") == [
        "purgeplan: error: loop.inlet_ratios: the direct feed 'benzene_feed' needs one "
        "loop.inlet_ratios entry (numerator, denominator, value) that fixes its rate; "
        "found none"]


@pytest.mark.parametrize("count, found", [(0, "found none"), (2, "found 2 entries"),
                                          (3, "found 3 entries")])
def test_direct_feed_needs_exactly_one_inlet_ratio(count, found):
    raw = demo("hydrogenation")
    raw["loop"]["inlet_ratios"] = [{"numerator": "H2", "denominator": "benzene",
                                    "value": 8.0 + k} for k in range(count)]
    err = refused_dict(raw)
    assert err.path == "loop.inlet_ratios"
    assert "'benzene_feed' needs one" in err.message and err.message.endswith(found)


def test_direct_feeds_in_one_group_share_one_inlet_ratio():
    raw = demo("hydrogenation")
    raw["sources"]["toluene_rich_benzene"] = {**raw["sources"]["benzene_feed"],
                                              "price_per_kmol": 65.0}
    validate_case_dict(raw)
    raw["loop"]["inlet_ratios"] = []
    err = refused_dict(raw)
    assert err.path == "loop.inlet_ratios"
    assert "one group" in err.message and "total rate" in err.message


def test_inlet_ratio_without_a_direct_feed_is_refused():
    raw = demo("ammonia")
    raw["loop"]["inlet_ratios"] = [{"numerator": "H2", "denominator": "N2", "value": 3.0}]
    err = refused_dict(raw)
    assert err.path == "loop.inlet_ratios"
    assert "leave loop.inlet_ratios out" in err.message and "found 1 entry" in err.message


def test_inlet_ratio_of_a_component_to_itself_is_refused():
    raw = demo("hydrogenation")
    raw["loop"]["inlet_ratios"][0]["denominator"] = "H2"
    err = refused_dict(raw)
    assert err.path == "loop.inlet_ratios[0].denominator"
    assert "different" in err.message


@pytest.mark.parametrize("end", ["numerator", "denominator"])
def test_inlet_ratio_of_a_component_absent_from_the_loop_is_refused(end):
    raw = demo("hydrogenation")
    raw["components"]["N2"] = {}  # declared, but no source carries it and nothing makes it
    raw["loop"]["inlet_ratios"][0][end] = "N2"
    err = refused_dict(raw)
    assert err.path == f"loop.inlet_ratios[0].{end}"
    assert "never reaches the reactor inlet" in err.message


# ---------------------------------------------------------------------------
# alternatives: each patched case passes every check


def test_alternative_without_the_direct_feed_keeping_the_ratio_is_refused():
    raw = demo("hydrogenation")
    raw["options"]["hydrogen_grade"]["reformer"]["makeup_sources"] = ["reformer_hydrogen"]
    case = validate_case_dict(raw)  # the base case buys from every source
    err = refusal(lambda: expand_alternatives(case))
    assert err.path.startswith("options.{hydrogen_grade.reformer, ")
    assert err.path.endswith(": loop.inlet_ratios")
    assert "leave loop.inlet_ratios out" in err.message


def test_alternative_failing_a_property_data_check_is_refused():
    raw = demo("ammonia")
    raw["options"]["makeup_grade"]["purified"]["separator"] = {"temperature_c": 140.0}
    case = validate_case_dict(raw)
    err = refusal(lambda: expand_alternatives(case))
    assert err.path.startswith("options.{makeup_grade.purified, ")
    assert err.path.endswith(": separator.temperature_c")
    assert "critical temperature" in err.message


@pytest.mark.parametrize("name", sorted(DEMO_TEXT))
def test_every_alternative_of_the_demo_cases_builds(name):
    alternatives = expand_alternatives(parse_case_text(DEMO_TEXT[name]))
    assert len(alternatives) == {"ammonia": 18, "hydrogenation": 4}[name]
    for alt_name, _, case in alternatives:
        loop = build_loop(case, alt_name)
        assert loop.name == alt_name
        assert len(loop.inlet_ratios) == (1 if "direct_feed" in loop.streams else 0)


# ---------------------------------------------------------------------------
# properties over many cases


FRACTIONS = st.lists(st.floats(0.0, 1.0), min_size=3, max_size=3)


@settings(max_examples=60, deadline=None)
@given(FRACTIONS.filter(lambda y: abs(sum(y) - 1.0) > 1e-6))
def test_any_composition_that_does_not_sum_to_one_is_refused(y):
    err = refused_text(case_toml(makeup=dict(zip(AMMONIA_GAS, y, strict=True)),
                                 liquid_fraction={"NH3": 0.9}))
    assert err.path == "sources.gas.composition"
    assert "must sum to 1" in err.message


@settings(max_examples=60, deadline=None)
@given(FRACTIONS.filter(lambda y: sum(y) > 1e-3))
def test_any_normalised_composition_is_accepted(y):
    makeup = {c: v / sum(y) for c, v in zip(AMMONIA_GAS, y, strict=True)}
    case = parse_case_text(case_toml(makeup=makeup, liquid_fraction={"NH3": 0.9}))
    assert sum(case.sources["gas"].composition.values()) == pytest.approx(1.0, abs=1e-6)


#: Key paths at which the perturbed conditions below may be refused.
CONDITION_PATHS = {"separator.temperature_c", "reactions[0].equilibrium.fugacity",
                   "loop.pressure_drop_bar", "sources.standard.supply_pressure_bar",
                   "sources.purified.supply_pressure_bar",
                   # the demo's reactor vessel pressure factor holds up to 1000 bar
                   "loop.pressure_bar",
                   # the let-down and the recovery returns must lie below the loop pressure
                   "separator.letdown_pressure_bar",
                   "recovery_units.membrane.return_pressure_bar",
                   "recovery_units.adsorption.return_pressure_bar",
                   # the refrigerant evaporates 5 K below the separator, so not below -268 degC
                   "separator.cooling.evaporator_approach_k"}


@settings(max_examples=80, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(reactor_c=st.floats(-273.0, 1999.0), separator_c=st.floats(-273.0, 999.0),
       pressure_bar=st.floats(1.0, 1999.0), recycle_c=st.floats(-273.0, 999.0))
def test_a_validated_case_builds(reactor_c, separator_c, pressure_bar, recycle_c):
    raw = demo("ammonia")
    raw["reactor"]["temperature_c"] = reactor_c
    raw["separator"]["temperature_c"] = separator_c
    raw["loop"]["pressure_bar"] = pressure_bar
    raw["compression"]["recycle_inlet_temperature_c"] = recycle_c
    try:
        case = validate_case_dict(raw)
    except CaseError as err:
        assert err.path in CONDITION_PATHS, err
        return
    try:
        alternatives = expand_alternatives(case)
    except CaseError as err:
        # an alternative's own recovery unit may not suit the loop pressure
        assert err.path.split(": ")[-1] in CONDITION_PATHS, err
        return
    for name, _, alt in alternatives:
        build_loop(alt, name)
