"""Power-law and Langmuir-Hinshelwood rates whose constants the case gives, and the beds they size.

Checks against outside sources: the methanol rate of Vanden Bussche and Froment (1996) with
their published constants, written out here as they print it (docs/references.md section
15.1); the catalyst volume of a power-law isomerisation against Levenspiel's closed form for
a reversible first-order plug-flow reactor (section 15.2); the bed integral against SciPy's
ODE solver; the rate's zero against the loop's own equilibrium; the optimum against a dense
scan of the direct engine.
"""

from __future__ import annotations

import math
import tempfile
import tomllib
from pathlib import Path

import numpy as np
import pytest
from conftest import assert_no_cheaper_nearby, loop_from_text
from hypothesis import HealthCheck, event, given, settings
from hypothesis import strategies as st
from scipy.integrate import solve_ivp
from test_fuzz import GeneratedCase, HypothesisChooser, check_case_file, mutate_doc, toml_dumps

from purgeplan import build_loop, steady_state
from purgeplan.case import validate_case_dict
from purgeplan.coefficients import (
    catalyst_volume_per_feed_m3_h_kmol,
    equilibrium_conversions,
    rate_function,
)
from purgeplan.errors import CaseError
from purgeplan.physics import kinetics
from purgeplan.physics.reactor import (
    first_order_reversible_pfr_ktau,
    isothermal_bed_volume_per_feed_m3_h_kmol,
)
from purgeplan.solve import Status, optimise

R_J_MOL_K = 8.314462618

#: Vanden Bussche and Froment (1996), Table 2 (docs/references.md section 15.1): the rate of
#: CO2 + 3 H2 = CH3OH + H2O in mol/(kg_cat s), partial pressures in bar, each constant
#: A exp(B / RT) with B in J/mol.
VBF_K_METHANOL = (1.07, 36696.0)          # k'5a K'2 K3 K4 K_H2   [mol/(kg s bar^2)]
VBF_SQRT_K_H2 = (0.499, 17197.0)          # sqrt(K_H2)            [bar^-0.5]
VBF_K_H2O = (6.62e-11, 124119.0)          # K_H2O                 [bar^-1]
VBF_K_H2O_OVER_H2 = (3453.38, 0.0)        # K_H2O / (K8 K9 K_H2)  [-]
#: The equilibrium constant of the methanol reaction the rate was fitted with,
#: log10 K = 3066 / T - 10.592 [bar^-2] (docs/references.md section 15.1).
VBF_LOG10_K = (3066.0, -10.592)
#: Bed density chosen here to put the rate per kg of catalyst on the engine's basis of a m3
#: of bed (a unit conversion of this test, not a published value) [kg/m3].
BED_DENSITY_KG_M3 = 1000.0
#: k0 per m3 of bed and hour: mol/(kg s) x 3600 s/h x kg/m3 / 1000 mol/kmol.
VBF_K0_KMOL_M3_H = VBF_K_METHANOL[0] * 3600.0 * BED_DENSITY_KG_M3 / 1000.0

#: The loop's components in its own order, their coefficients and the key reactant's index.
COMPONENTS = ("CH3OH", "CH4", "CO2", "H2", "H2O")
NU = np.array([1.0, 0.0, -1.0, -3.0, 1.0])
KEY = COMPONENTS.index("CO2")


def fractions(**y) -> np.ndarray:
    return np.array([y[c] for c in COMPONENTS])

LH_RATE = f"""
[reactions.rate]
law = "langmuir_hinshelwood"
pre_exponential_kmol_m3_h = {VBF_K0_KMOL_M3_H!r}
activation_energy_kj_mol = {-VBF_K_METHANOL[1] / 1000.0!r}
orders = {{ CO2 = 1, H2 = 1 }}
denominator_power = 3

[[reactions.rate.adsorption]]
pre_exponential = {VBF_K_H2O_OVER_H2[0]!r}
heat_of_adsorption_kj_mol = 0.0
exponents = {{ H2O = 1, H2 = -1 }}

[[reactions.rate.adsorption]]
pre_exponential = {VBF_SQRT_K_H2[0]!r}
heat_of_adsorption_kj_mol = {-VBF_SQRT_K_H2[1] / 1000.0!r}
exponents = {{ H2 = 0.5 }}

[[reactions.rate.adsorption]]
pre_exponential = {VBF_K_H2O[0]!r}
heat_of_adsorption_kj_mol = {-VBF_K_H2O[1] / 1000.0!r}
exponents = {{ H2O = 1 }}
"""

#: A power law with invented constants (what it is checked against does not depend on them).
POWER_RATE = """
[reactions.rate]
law = "power_law"
pre_exponential_kmol_m3_h = 5.0e5
activation_energy_kj_mol = 60.0
orders = { CO2 = 1, H2 = 0.5 }
effectiveness_factor = 0.7
"""


def methanol_loop(*args, **kwargs):
    loop = loop_from_text(methanol_case(*args, **kwargs))
    assert loop.components == COMPONENTS
    return loop


def methanol_case(rate: str = LH_RATE, *, temperature_c: float = 250.0,
                  pressure_bar: float = 70.0, equilibrium: str = "equilibrium = {}") -> str:
    """A small methanol-from-CO2 loop (invented plant data) with a rate-based converter."""
    return f"""
[components]
CO2 = {{}}
H2 = {{}}
CH3OH = {{}}
H2O = {{}}
CH4 = {{}}

[[reactions]]
name = "methanol from CO2"
stoichiometry = {{ CO2 = -1, H2 = -3, CH3OH = 1, H2O = 1 }}
key_reactant = "CO2"
per_pass = "rate"
per_pass_conversion = 0.1
{equilibrium}
{rate}
[reactor]
temperature_c = {temperature_c!r}

[loop]
pressure_bar = {pressure_bar!r}
pressure_drop_bar = 3.0
basis = "production"
production_t_d = 500.0
product = "CH3OH"
purge_fraction = 0.02

[separator]
temperature_c = 40.0
liquid_fraction = {{ CH3OH = 0.98, H2O = 0.99, CO2 = 0.01 }}

[sources.gas]
composition = {{ H2 = 0.745, CO2 = 0.245, CH4 = 0.01 }}
price_per_kmol = 2.0
supply_pressure_bar = 30.0

[economics]
power_price_per_kwh = 0.07
compressor_capital = {{ reference_cost = 6.0e6, reference_size = 10000, exponent = 0.62 }}
reactor_capital = {{ reference_cost = 8.0e6, reference_size = 60, exponent = 0.65 }}
"""


def _arrhenius(constant, temperature_k):
    a, b = constant
    return a * math.exp(b / (R_J_MOL_K * temperature_k))


def vbf_methanol_rate_mol_kg_s(temperature_k, p_bar, k_eq_bar2):
    """Vanden Bussche and Froment's r_CH3OH as they print it (1996, p. 6), written out here
    independently of the engine: k p_CO2 p_H2 (1 - p_H2O p_CH3OH / (K p_H2^3 p_CO2))
    / (1 + c1 p_H2O / p_H2 + sqrt(K_H2) sqrt(p_H2) + K_H2O p_H2O)^3."""
    co2, h2, meoh, h2o = (p_bar[c] for c in ("CO2", "H2", "CH3OH", "H2O"))
    group = (1.0 + _arrhenius(VBF_K_H2O_OVER_H2, temperature_k) * h2o / h2
             + _arrhenius(VBF_SQRT_K_H2, temperature_k) * math.sqrt(h2)
             + _arrhenius(VBF_K_H2O, temperature_k) * h2o)
    return (_arrhenius(VBF_K_METHANOL, temperature_k) * co2 * h2
            * (1.0 - h2o * meoh / (k_eq_bar2 * h2**3 * co2)) / group**3)


# ---------------------------------------------------------------------------
# (1) against published rates and closed forms

@pytest.mark.parametrize("temperature_c, pressure_bar, y", [
    (250.0, 50.0, {"CO2": 0.03, "H2": 0.70, "CH3OH": 0.02, "H2O": 0.004, "CH4": 0.246}),
    (220.0, 80.0, {"CO2": 0.08, "H2": 0.65, "CH3OH": 0.005, "H2O": 0.01, "CH4": 0.255}),
    (270.0, 30.0, {"CO2": 0.20, "H2": 0.60, "CH3OH": 0.001, "H2O": 0.0005, "CH4": 0.1985}),
])
def test_langmuir_hinshelwood_rate_is_the_published_methanol_rate(temperature_c, pressure_bar, y):
    """The case's Langmuir-Hinshelwood table with Vanden Bussche and Froment's constants
    (section 15.1) gives their methanol rate, evaluated from their printed expression with
    their equilibrium constant, to 1e-12 (per kg of catalyst at the test's bed density)."""
    t = temperature_c + 273.15
    loop = methanol_loop(temperature_c=temperature_c, pressure_bar=pressure_bar)
    k_eq = 10.0 ** (VBF_LOG10_K[0] / t + VBF_LOG10_K[1])
    # the driving force with the published K: rhs = ln K - dnu ln(P / 1 bar), dnu = -2
    rhs = math.log(k_eq) + 2.0 * math.log(pressure_bar)
    spec = loop.reactions[0].rate
    terms = [(a["pre_exponential"], a["heat_of_adsorption_kj_mol"],
              [a["exponents"].get(c, 0.0) for c in COMPONENTS]) for a in spec["adsorption"]]
    y_now = fractions(**y)
    got = kinetics.langmuir_hinshelwood_rate_kmol_m3_h(
        t, pressure_bar, y_now, spec["pre_exponential_kmol_m3_h"],
        spec["activation_energy_kj_mol"], [spec["orders"].get(c, 0.0) for c in COMPONENTS],
        NU, rhs, terms, spec["denominator_power"])
    published = vbf_methanol_rate_mol_kg_s(t, {c: y[c] * pressure_bar for c in y}, k_eq)
    assert published > 0.0
    assert got / 3.6 / BED_DENSITY_KG_M3 == pytest.approx(published, rel=1e-12)


def test_the_case_rate_uses_the_loop_equilibrium_and_the_effectiveness_factor():
    """The rate the converter integrates is the published one with the loop's own K (formation
    data) in the driving force, times the case's effectiveness factor."""
    rate = (LH_RATE.replace("denominator_power = 3",
                                         "denominator_power = 3\neffectiveness_factor = 0.6"))
    loop = methanol_loop(rate)
    r, t, p = loop.reactions[0], loop.reactor_temperature_k, loop.pressure_bar
    k_loop = math.exp(r.equilibrium_rhs - 2.0 * math.log(p))     # back to K in bar^-2
    y = {"CO2": 0.05, "H2": 0.68, "CH3OH": 0.015, "H2O": 0.006, "CH4": 0.249}
    got = rate_function(loop, 0, t)(np.array([[y[c]] for c in COMPONENTS]))[0]
    published = vbf_methanol_rate_mol_kg_s(t, {c: y[c] * p for c in y}, k_loop)
    assert got / 3.6 / BED_DENSITY_KG_M3 == pytest.approx(0.6 * published, rel=1e-12)


@pytest.mark.parametrize("temperature_c", [200.0, 250.0, 300.0])
def test_the_loop_equilibrium_against_the_correlation_the_rate_was_fitted_with(temperature_c):
    """K of CO2 + 3 H2 = CH3OH + H2O from formation data against log10 K = 3066/T - 10.592
    (section 15.1) over the rate's conditions: within 1 kJ/mol in -RT ln K (measured 0.53,
    0.71 and 0.72 kJ/mol at 200, 250 and 300 degC, the formation data's K the higher),
    so the published rate written with the loop's K keeps its zero within that."""
    loop = methanol_loop(temperature_c=temperature_c)
    t = loop.reactor_temperature_k
    ln_k_loop = loop.reactions[0].equilibrium_rhs - 2.0 * math.log(loop.pressure_bar)
    ln_k_published = math.log(10.0) * (VBF_LOG10_K[0] / t + VBF_LOG10_K[1])
    gap_kj_mol = R_J_MOL_K * t * (ln_k_loop - ln_k_published) / 1000.0
    assert 0.0 < gap_kj_mol < 1.0


def isomerisation_case(temperature_c: float) -> str:
    """n-butane = isobutane in a power law of order one in n-butane (invented constants)."""
    return f"""
[components]
butane = {{}}
isobutane = {{}}
N2 = {{}}

[[reactions]]
name = "isomerisation"
stoichiometry = {{ butane = -1, isobutane = 1 }}
key_reactant = "butane"
per_pass = "rate"
per_pass_conversion = 0.1
equilibrium = {{}}

[reactions.rate]
law = "power_law"
pre_exponential_kmol_m3_h = 5.0e6
activation_energy_kj_mol = 80.0
orders = {{ butane = 1 }}

[reactor]
temperature_c = {temperature_c!r}

[loop]
pressure_bar = 15.0
pressure_drop_bar = 1.0
basis = "production"
production_t_d = 100.0
product = "isobutane"
purge_fraction = 0.02

[separator]
temperature_c = 20.0
liquid_fraction = {{ isobutane = 0.9, butane = 0.9 }}

[sources.gas]
composition = {{ butane = 0.9, N2 = 0.1 }}
price_per_kmol = 2.0
supply_pressure_bar = 10.0

[economics]
power_price_per_kwh = 0.07
compressor_capital = {{ reference_cost = 6.0e6, reference_size = 10000, exponent = 0.62 }}
reactor_capital = {{ reference_cost = 8.0e6, reference_size = 60, exponent = 0.65 }}
"""


@pytest.mark.parametrize("temperature_c", [150.0, 250.0])
@pytest.mark.parametrize("approach", [0.2, 0.7, 0.99, 0.9999])
def test_power_law_bed_against_levenspiel_reversible_first_order(temperature_c, approach):
    """A = R, first order both ways, no change in moles, no product in the feed: Levenspiel's
    plug-flow relation k1 tau = X_e ln(X_e / (X_e - X)) (section 15.2), with k1 = k P and
    tau = V y_A0 P / (F0 y_A0 P): V / F0 = X_e ln(X_e / (X_e - X)) / (k P), with the K of the
    loop's own equilibrium (X_e = K / (1 + K)).  Within 1e-9."""
    loop = loop_from_text(isomerisation_case(temperature_c))
    r, t, p = loop.reactions[0], loop.reactor_temperature_k, loop.pressure_bar
    k_eq = math.exp(r.equilibrium_rhs)
    inlet = {"butane": 90.0, "isobutane": 0.0, "N2": 10.0}
    x_e = equilibrium_conversions(loop, inlet)[0]
    assert x_e == pytest.approx(k_eq / (1.0 + k_eq), rel=1e-9)
    k = r.rate["pre_exponential_kmol_m3_h"] * math.exp(
        -r.rate["activation_energy_kj_mol"] * 1000.0 / (R_J_MOL_K * t))
    x = approach * x_e
    expected = first_order_reversible_pfr_ktau(x, x_e) / (k * p)
    got = catalyst_volume_per_feed_m3_h_kmol(loop, {0: x}, {0: x_e}, inlet)
    assert got == pytest.approx(expected, rel=1e-9)


# ---------------------------------------------------------------------------
# (2) the bed integral against SciPy

def _along(y0, nu, key):
    """Mole fractions along the bed at conversion X of the key reactant."""
    per_x = y0[key] / -nu[key]
    return lambda x: (y0 + nu * per_x * x) / (1.0 + nu.sum() * per_x * x)


@pytest.mark.parametrize("rate", [LH_RATE, POWER_RATE], ids=["langmuir_hinshelwood", "power_law"])
@pytest.mark.parametrize("y0", [
    {"CO2": 0.20, "H2": 0.70, "CH3OH": 0.005, "H2O": 0.002, "CH4": 0.093},
    {"CO2": 0.06, "H2": 0.62, "CH3OH": 0.01, "H2O": 0.01, "CH4": 0.30}])
@pytest.mark.parametrize("approach", [0.3, 0.9, 0.99, 0.9999])
def test_bed_integral_against_scipy_ode(rate, y0, approach):
    """The 32-point quadrature against SciPy's LSODA on dV/dX = (y_k0 / |nu_k|) / r(y(X))
    at rtol 1e-11: within 1e-8, up to 0.9999 of the loop's equilibrium (measured: 7e-10 at
    0.9999, 6e-12 at 0.3)."""
    loop = methanol_loop(rate)
    y0 = fractions(**y0)
    x_e = equilibrium_conversions(loop, dict(zip(COMPONENTS, y0, strict=True)))[0]
    rate_of = rate_function(loop, 0, loop.reactor_temperature_k)
    along = _along(y0, NU, KEY)
    x = approach * x_e
    got = isothermal_bed_volume_per_feed_m3_h_kmol(rate_of, y0, NU, KEY, x, x_e)
    ode = solve_ivp(lambda xx, v: [y0[KEY] / rate_of(along(xx)[:, None])[0]], (0.0, x), [0.0],
                    method="LSODA", rtol=1e-11, atol=1e-18)
    assert ode.success
    assert got == pytest.approx(ode.y[0, -1], rel=1e-8)


# ---------------------------------------------------------------------------
# (3) zero at the loop's equilibrium

@pytest.mark.parametrize("rate", [LH_RATE, POWER_RATE], ids=["langmuir_hinshelwood", "power_law"])
@pytest.mark.parametrize("equilibrium", ["equilibrium = {}",
                                         "equilibrium = { fugacity_correction_factor = 0.8 }"])
def test_rate_vanishes_at_the_loop_equilibrium(rate, equilibrium):
    """At the equilibrium conversion the loop computes (coefficients.equilibrium_conversions)
    the rate is zero to 1e-9 of its forward part, positive short of it and negative past
    it; the catalyst volume grows without bound toward it, each factor ten closer adding
    about the same volume (the logarithmic divergence), and is infinite there."""
    loop = methanol_loop(rate, equilibrium=equilibrium)
    inlet = {"CO2": 180.0, "H2": 640.0, "CH3OH": 4.0, "H2O": 1.0, "CH4": 175.0}
    x_e = equilibrium_conversions(loop, inlet)[0]
    y0 = np.array([inlet[c] for c in COMPONENTS]) / sum(inlet.values())
    along = _along(y0, NU, KEY)
    rate_of = rate_function(loop, 0, loop.reactor_temperature_k)
    r, t, p = loop.reactions[0], loop.reactor_temperature_k, loop.pressure_bar
    spec = r.rate
    forward = kinetics.power_law_rate_kmol_m3_h(
        t, p, along(x_e), spec["pre_exponential_kmol_m3_h"], spec["activation_energy_kj_mol"],
        [spec["orders"].get(c, 0.0) for c in COMPONENTS], NU, 700.0)
    assert abs(rate_of(along(x_e)[:, None])[0]) <= 1e-9 * forward
    assert rate_of(along(0.9 * x_e)[:, None])[0] > 0.0
    assert rate_of(along(1.05 * x_e)[:, None])[0] < 0.0
    volumes = [catalyst_volume_per_feed_m3_h_kmol(loop, {0: x_e * (1 - d)}, {0: x_e}, inlet)
               for d in (1e-1, 1e-2, 1e-3, 1e-4)]
    steps = np.diff(volumes)
    assert np.all(steps > 0.0)
    assert steps[-1] == pytest.approx(steps[-2], rel=0.05)
    assert catalyst_volume_per_feed_m3_h_kmol(loop, {0: x_e}, {0: x_e}, inlet) == math.inf


@settings(max_examples=30, deadline=None)
@given(inert=st.floats(0.02, 0.4), more=st.floats(0.01, 0.3), approach=st.floats(0.1, 0.95))
def test_inerts_cost_catalyst(inert, more, approach):
    """Diluting the same reactant gas with more methane needs more catalyst per kmol/h of CO2
    fed to reach the same conversion: the reactants' partial pressures fall."""
    loop = methanol_loop()
    rate_of = rate_function(loop, 0, loop.reactor_temperature_k)
    gas = fractions(CO2=0.24, H2=0.74, CH3OH=0.01, H2O=0.01, CH4=0.0)
    gases = [gas * (1 - f) + f * (NU == 0) for f in (inert, inert + more)]
    x_e = [equilibrium_conversions(loop, dict(zip(COMPONENTS, y0, strict=True)))[0]
           for y0 in gases]
    x = approach * min(x_e)
    lean, rich = (isothermal_bed_volume_per_feed_m3_h_kmol(rate_of, y0, NU, KEY, x, xe) / y0[KEY]
                  for y0, xe in zip(gases, x_e, strict=True))
    assert rich > lean


# ---------------------------------------------------------------------------
# (4) the loop and its optimum

@pytest.mark.parametrize("rate", [LH_RATE, POWER_RATE], ids=["langmuir_hinshelwood", "power_law"])
def test_rate_reactor_optimum_against_a_two_dimensional_engine_scan(rate):
    """The loop reaches a steady state that closes its balances, and the optimum (purge
    fraction and conversion, hence catalyst volume) is no worse than the direct engine on a
    31 x 31 grid around it nor than a 101-point scan in the conversion at its purge."""
    loop = methanol_loop(rate)
    present = steady_state(loop, 0.02, conversion={0: 0.1})
    assert present.balance_error < 1e-9
    opt = optimise(loop)
    assert opt.status is Status.OPTIMAL, opt.message
    s = opt.state
    x = s.conversion[0]
    assert 0.02 < x < s.equilibrium_conversion[0]
    assert s.balance_error < 1e-9
    assert_no_cheaper_nearby(loop, s, top=min(1.5 * x, 0.9999 * s.equilibrium_conversion[0]))


def test_the_fitted_range_of_dyson_and_simon_is_not_reported_for_other_rates():
    """At 70 bar and 250 degC the methanol loop lies far outside the 150 to 300 atm and 603 to
    768 K of the Temkin-Pyzhev rate (section 12), a warning that belongs to that rate alone."""
    state = steady_state(methanol_loop(), 0.02, conversion={0: 0.1})
    assert not [w for w in state.warnings if "Dyson and Simon" in w]


# ---------------------------------------------------------------------------
# (5) bad input

def _raw(rate: str = LH_RATE) -> dict:
    return tomllib.loads(methanol_case(rate))


@pytest.mark.parametrize("base, change, field", [
    (LH_RATE, {"orders": {"CO": 1}}, "reactions[0].rate.orders.CO"),
    (LH_RATE, {"orders": {"CO2": -1}}, "reactions[0].rate.orders.CO2"),
    (LH_RATE, {"pre_exponential_kmol_m3_h": None}, "reactions[0].rate.pre_exponential_kmol_m3_h"),
    (LH_RATE, {"activation_energy_kj_mol": None}, "reactions[0].rate.activation_energy_kj_mol"),
    (LH_RATE, {"orders": None}, "reactions[0].rate.orders"),
    (LH_RATE, {"adsorption": None}, "reactions[0].rate.adsorption"),
    (LH_RATE, {"adsorption": []}, "reactions[0].rate.adsorption"),
    (LH_RATE, {"denominator_power": None}, "reactions[0].rate.denominator_power"),
    (LH_RATE, {"denominator_power": 0}, "reactions[0].rate.denominator_power"),
    (LH_RATE, {"adsorption": [{"pre_exponential": 1.0, "heat_of_adsorption_kj_mol": 0.0,
                               "exponents": {"H2O": 1, "CH3OH": -1}}]},
     "reactions[0].rate.adsorption[0].exponents.CH3OH"),
    (LH_RATE, {"adsorption": [{"pre_exponential": 1.0, "heat_of_adsorption_kj_mol": 0.0,
                               "exponents": {"Ar": 1}}]},
     "reactions[0].rate.adsorption[0].exponents.Ar"),
    (LH_RATE, {"adsorption": [{"pre_exponential": 1.0, "heat_of_adsorption_kj_mol": 0.0,
                               "exponents": {}}]}, "reactions[0].rate.adsorption[0].exponents"),
    (LH_RATE, {"adsorption": [{"pre_exponential": 1.0, "exponents": {"H2O": 1}}]},
     "reactions[0].rate.adsorption[0].heat_of_adsorption_kj_mol"),
    (LH_RATE, {"adsorption": [{"pre_exponential": 1.0, "heat_of_adsorption_kj_mol": -1500.0,
                               "exponents": {"H2O": 1}}]},
     "reactions[0].rate.adsorption[0].heat_of_adsorption_kj_mol"),
    (LH_RATE, {"activation_energy_kj_mol": 1500.0}, "reactions[0].rate.activation_energy_kj_mol"),
    (LH_RATE, {"pre_exponential_kmol_m3_h": 0.0}, "reactions[0].rate.pre_exponential_kmol_m3_h"),
    (LH_RATE, {"effectiveness_factor": "dyson_simon"}, "reactions[0].rate.effectiveness_factor"),
    (POWER_RATE, {"denominator_power": 2}, "reactions[0].rate.denominator_power"),
    (POWER_RATE, {"adsorption": [{"pre_exponential": 1.0, "heat_of_adsorption_kj_mol": 0.0,
                                  "exponents": {"H2O": 1}}]}, "reactions[0].rate.adsorption"),
    (POWER_RATE, {"law": "temkin_pyzhev"}, "reactions[0].rate.pre_exponential_kmol_m3_h"),
    (POWER_RATE, {"law": "arrhenius"}, "reactions[0].rate.law"),
    (POWER_RATE, {"rate_constant": 1.0}, "reactions[0].rate.rate_constant"),
])
def test_rate_constant_errors_name_the_field(base, change, field):
    raw = _raw(base)
    rate = raw["reactions"][0]["rate"]
    for key, value in change.items():
        if value is None:
            rate.pop(key)
        else:
            rate[key] = value
    with pytest.raises(CaseError) as err:
        build_loop(validate_case_dict(raw))
    assert str(err.value).startswith(field), str(err.value)
    assert "\n" not in str(err.value)


def test_a_rate_constant_beyond_floating_point_is_refused():
    """k0 exp(-E/RT) of 1e30 exp(1000 / (R 173 K)) is e^764: refused at check, naming the
    activation energy (most often an energy in J/mol written as kJ/mol)."""
    raw = tomllib.loads(methanol_case(temperature_c=-100.0))
    raw["reactions"][0]["rate"].update(pre_exponential_kmol_m3_h=1e30,
                                       activation_energy_kj_mol=-1000.0)
    with pytest.raises(CaseError) as err:
        build_loop(validate_case_dict(raw))
    assert str(err.value).startswith("reactions[0].rate.activation_energy_kj_mol")


def test_a_power_law_needs_the_reaction_equilibrium():
    raw = _raw(POWER_RATE)
    raw["reactions"][0].pop("equilibrium")
    with pytest.raises(CaseError) as err:
        build_loop(validate_case_dict(raw))
    assert str(err.value).startswith("reactions[0].equilibrium")


@settings(max_examples=40, deadline=None)
@given(order_co2=st.floats(0, 3), order_h2=st.floats(0, 3), energy=st.floats(-100, 200),
       k0=st.floats(1e-3, 1e12), k_ads=st.floats(1e-12, 1e6), dh=st.floats(-150, 50),
       m=st.floats(-2, 2), power=st.floats(0.5, 4))
def test_any_valid_constants_give_a_finite_bed_or_an_infinite_one(order_co2, order_h2, energy,
                                                                  k0, k_ads, dh, m, power):
    """Within the schema's ranges the bed volume is a positive number or infinite (a rate
    too slow for floating point), never NaN, and grows with the conversion."""
    raw = _raw()
    raw["reactions"][0]["rate"] = {
        "law": "langmuir_hinshelwood", "pre_exponential_kmol_m3_h": k0,
        "activation_energy_kj_mol": energy, "orders": {"CO2": order_co2, "H2": order_h2},
        "denominator_power": power,
        "adsorption": [{"pre_exponential": k_ads, "heat_of_adsorption_kj_mol": dh,
                        "exponents": {"H2": m, "H2O": 1.0}}]}
    loop = build_loop(validate_case_dict(raw))
    inlet = {"CO2": 180.0, "H2": 640.0, "CH3OH": 4.0, "H2O": 1.0, "CH4": 175.0}
    x_e = equilibrium_conversions(loop, inlet)[0]
    small, large = (catalyst_volume_per_feed_m3_h_kmol(loop, {0: f * x_e}, {0: x_e}, inlet)
                    for f in (0.3, 0.6))
    assert not math.isnan(small) and not math.isnan(large)
    assert 0.0 < small <= large


@settings(max_examples=60, deadline=None,
          suppress_health_check=[HealthCheck.too_slow, HealthCheck.data_too_large])
@given(st.data())
def test_check_survives_mutated_rate_tables(data):
    """The fuzz contract of tests/test_fuzz.py (exit 0, 2 or 3; one stderr line for bad
    input; no traceback) on the methanol loop, mutating its rate table only."""
    ch = HypothesisChooser(data)
    doc = tomllib.loads(methanol_case(ch.choice([LH_RATE, POWER_RATE])))
    log: list[str] = []
    rate = doc["reactions"][0]["rate"]
    for _ in range(ch.integer(1, 3)):
        mutate_doc(ch, rate, log, max_depth=8)
    case = GeneratedCase("methanol rate", toml_dumps(doc).encode("utf-8"), log)
    with tempfile.TemporaryDirectory() as tmp:
        status, _, _ = check_case_file(case, Path(tmp))
    event(f"check exit {status}")
