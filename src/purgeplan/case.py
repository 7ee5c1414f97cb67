"""Case files: TOML in, validated objects out.

Every physical quantity carries its unit in its key (``pressure_bar``,
``temperature_c``, ``production_t_d``).  The glossary of unit suffixes is in
the README.  A case may declare structural options; each combination of their
choices is one design alternative, a patch applied to the base case.
"""

from __future__ import annotations

import copy
import difflib
import hashlib
import itertools
import math
import re
import tomllib
import typing
from collections.abc import Callable
from pathlib import Path
from typing import Annotated, Any, Literal

from pydantic import BaseModel, ConfigDict, Field, ValidationError, model_validator

from .case_checks import check_property_data
from .case_checks import key_part as _key
from .errors import CaseError
from .physics.thermo import KELVIN


def _num(**bounds):
    """A finite number (an int is taken as a float, a boolean is refused) within bounds."""
    return Annotated[float, Field(allow_inf_nan=False, strict=True, **bounds)]


#: Magnitudes outside [1e-9, 1e12] are typing errors for every quantity of a loop
#: study (flows, prices, sizes, costs); refusing them keeps the numerics sound.
Positive = _num(ge=1e-9, le=1e12)
NonNegative = _num(ge=0, le=1e12)
Finite = _num(ge=-1e12, le=1e12)
OpenFraction = _num(gt=0, lt=1)
Fraction = _num(ge=0, le=1)
UpToOne = _num(gt=0, le=1)
ReactorTemperatureC = _num(gt=-273.15, lt=2000)
SpaceVelocityPerH = _num(ge=1, le=1e6)
PressureBar = _num(gt=0, lt=2000)
PressureDropBar = _num(ge=1e-3, le=1000)
ProductionTD = _num(ge=1e-3, le=1e6)
MakeupKmolH = _num(ge=1e-3, le=1e8)
TemperatureC = _num(gt=-273.15, lt=1000)
CapacityExponent = _num(gt=0, le=1.5)
HoursPerYear = _num(gt=0, le=8784)
RatePerYear = _num(ge=0, lt=1)
LifeYears = _num(ge=1, le=100)
CatalystLifeYears = _num(ge=0.01, le=100)
VesselDiameterM = _num(ge=0.1, le=20)
#: Inlet temperature of an adiabatic catalyst bed [degC]: synthesis catalysts work from
#: about 300 to 550 degC (common practice); the range leaves room on both sides.
BedInletTemperatureC = _num(ge=200, le=600)
#: Most adiabatic beds in series a converter may have (common practice: two to four).
MAX_BEDS = 6
#: Temperature of the cold feed gas injected between quenched beds [degC]: below every
#: bed's inlet temperature (checked with them); 0 degC keeps the ideal-gas Cp polynomials
#: well inside the temperatures they were fitted over.
QuenchTemperatureC = _num(ge=0, le=600)
Name = Annotated[str, Field(min_length=1, max_length=200)]

MAX_CASE_BYTES = 2_000_000


class _Strict(BaseModel):
    model_config = ConfigDict(extra="forbid", strict=False, frozen=True)


class CaseInfo(_Strict):
    name: Name = "unnamed case"
    description: str = ""


class ComponentSpec(_Strict):
    """A component; every property can be overridden, otherwise ``chemicals`` supplies it."""

    identifier: Name | None = None
    molar_mass_kg_kmol: Positive | None = None
    lower_heating_value_kj_mol: NonNegative | None = None
    formation_enthalpy_kj_mol: Finite | None = None
    standard_entropy_j_mol_k: Positive | None = None
    heat_capacity_j_mol_k: Positive | None = None


class EquilibriumSpec(_Strict):
    constant: Literal["ammonia_gillespie_beattie", "formation_data"] = "formation_data"
    fugacity: Literal["ideal", "dyson_simon"] = "ideal"
    fugacity_correction_factor: Positive = 1.0


class SizingSpec(_Strict):
    reference_conversion: OpenFraction
    reference_volume_m3: Positive
    reference_feed_kmol_h: Positive
    equilibrium_conversion: OpenFraction
    conversion_min: OpenFraction = 0.05
    conversion_max: OpenFraction = 0.95
    approach_to_equilibrium_max: OpenFraction | None = None


#: Constants of a rate the case gives: rate constants and adsorption constants span
#: many decades (a pre-exponential factor of 1e15 is common); energies in kJ/mol.
RateConstant = _num(ge=1e-30, le=1e30)
EnergyKjMol = _num(ge=-1000, le=1000)
ReactionOrder = _num(ge=0, le=10)
AdsorptionExponent = _num(ge=-10, le=10)
DenominatorPower = _num(gt=0, le=10)


class AdsorptionTermSpec(_Strict):
    """One term K_j0 exp(-dH_j/RT) prod p_i^m_ij of a Langmuir-Hinshelwood denominator."""

    pre_exponential: RateConstant
    heat_of_adsorption_kj_mol: EnergyKjMol
    exponents: dict[Name, AdsorptionExponent]


#: The keys of a rate whose constants the case gives.
RATE_CONSTANT_KEYS = ("pre_exponential_kmol_m3_h", "activation_energy_kj_mol", "orders",
                      "adsorption", "denominator_power")


class RateSpec(_Strict):
    """A catalyst bed sized from a rate expression (per_pass = "rate"), isothermal or
    adiabatic beds in series with cooling or quench between them."""

    law: Literal["temkin_pyzhev", "power_law", "langmuir_hinshelwood"] = "temkin_pyzhev"
    effectiveness_factor: UpToOne | Literal["dyson_simon"] = 1.0
    pre_exponential_kmol_m3_h: RateConstant | None = None
    activation_energy_kj_mol: EnergyKjMol | None = None
    orders: dict[Name, ReactionOrder] | None = None
    adsorption: list[AdsorptionTermSpec] | None = None
    denominator_power: DenominatorPower | None = None
    conversion_min: OpenFraction = 0.02
    conversion_max: OpenFraction = 0.95
    approach_to_equilibrium_max: OpenFraction | None = None
    #: Adiabatic beds in series, each entered at its temperature after an inter-bed cooler;
    #: None: one isothermal bed at the reactor temperature.
    bed_inlet_temperatures_c: list[BedInletTemperatureC] | None = Field(
        default=None, min_length=1, max_length=MAX_BEDS)
    #: How the gas reaches each later bed's inlet temperature: an inter-bed cooler
    #: ("cooling") or cold feed gas injected between beds ("quench").
    between_beds: Literal["cooling", "quench"] = "cooling"
    #: Temperature of the quench gas (between_beds = "quench" only).
    quench_temperature_c: QuenchTemperatureC | None = None


class ReactionSpec(_Strict):
    name: Name
    stoichiometry: dict[Name, Finite]
    key_reactant: Name
    per_pass: Literal["fixed", "equilibrium", "sized", "rate"] = "fixed"
    per_pass_conversion: OpenFraction | None = None
    approach_to_equilibrium: UpToOne | None = None
    equilibrium: EquilibriumSpec | None = None
    sizing: SizingSpec | None = None
    rate: RateSpec | None = None


class ReactorSpec(_Strict):
    temperature_c: ReactorTemperatureC
    space_velocity_per_h: SpaceVelocityPerH = 10000.0
    vessel_diameter_m: VesselDiameterM | None = None
    capital_reference_pressure_bar: PressureBar | None = None


class InletRatio(_Strict):
    numerator: Name
    denominator: Name
    value: Positive


class InletRatioLimit(_Strict):
    """A ratio of two linear forms of the reactor-inlet flows, (sum a_c M_c) / (sum b_c M_c).

    With ``min_ratio`` or ``max_ratio`` it is a limit of the model where the
    loop has the freedom to hold it (a second make-up source or an
    adjustment source); otherwise it is reported, with a warning when it
    departs from ``stoichiometric_ratio`` (by default the ratio of the
    reactants' consumption in the first reaction that consumes the
    denominator's components).
    """

    name: Name
    numerator: dict[Name, Finite] = Field(min_length=1)
    denominator: dict[Name, NonNegative] = Field(min_length=1)
    min_ratio: Positive | None = None
    max_ratio: Positive | None = None
    stoichiometric_ratio: Positive | None = None


class LoopSpec(_Strict):
    pressure_bar: PressureBar
    pressure_drop_bar: PressureDropBar
    basis: Literal["production", "makeup"] = "production"
    product: Name
    production_t_d: ProductionTD | None = None
    makeup_kmol_h: MakeupKmolH | None = None
    purge_fraction: OpenFraction = 0.02
    purge_fraction_min: OpenFraction = 1e-4
    purge_fraction_max: OpenFraction = 0.5
    max_inert_fraction_reactor_inlet: OpenFraction | None = None
    max_recycle_power_kw: Positive | None = None
    inlet_ratios: list[InletRatio] = []
    inlet_ratio_limits: list[InletRatioLimit] = []
    gas_inventory_kmol: Positive | None = None
    gas_inventory_m3: Positive | None = None


class SeparatorSpec(_Strict):
    temperature_c: TemperatureC
    liquid_fraction: dict[Name, Fraction | Literal["condensation"]] = {}
    letdown_pressure_bar: PressureBar | None = None
    letdown_destination: Literal["fuel", "flare"] = "fuel"
    cooling: SeparatorCoolingSpec | None = None
    model: Literal["split_fractions", "henry_raoult", "peng_robinson"] | None = None
    henry_constant_bar: dict[Name, Positive] = {}

    @property
    def split_model(self) -> str:
        """The separator model in force: fixed split fractions where the case gives them
        and names no model, else the named model, else Henry and Raoult's laws."""
        if self.model is not None:
            return self.model
        return "split_fractions" if self.liquid_fraction else "henry_raoult"


class SourceSpec(_Strict):
    composition: dict[Name, Fraction]
    price_per_kmol: NonNegative
    supply_pressure_bar: Positive
    temperature_c: TemperatureC = 40.0
    supply_limit_kmol_h: Positive | None = None
    enters: Literal["makeup", "reactor_feed"] = "makeup"
    phase: Literal["gas", "liquid"] = "gas"
    liquid_density_kg_m3: _num(ge=1, le=30000) | None = None


class CompressionSpec(_Strict):
    recycle_efficiency: OpenFraction = 0.75
    makeup_efficiency: OpenFraction = 0.75
    makeup_stages: Annotated[int, Field(ge=1, le=12, strict=True)] = 3
    recycle_inlet_temperature_c: TemperatureC = 35.0
    pump_efficiency: OpenFraction = 0.65
    arrangement: Literal["two_machines", "one_casing"] = "two_machines"
    gas_model: Literal["peng_robinson", "ideal_gas"] = "peng_robinson"


class CapitalItem(_Strict):
    reference_cost: Positive
    reference_size: Positive
    exponent: CapacityExponent = 0.6


ApproachK = _num(ge=0, le=200)


class SeparatorCoolingSpec(_Strict):
    """Cooling of the reactor outlet to separator temperature: cooling water, then refrigeration.

    The gas leaves the water cooler ``water_approach_k`` above the cooling
    water's supply temperature; the refrigerant evaporates
    ``evaporator_approach_k`` below separator temperature and condenses
    ``condenser_approach_k`` above the cooling water.  The coefficient of
    performance is ``carnot_fraction`` of Carnot's (0.55 unless given) or
    ``coefficient_of_performance`` itself.  Cooling water is priced per GJ of
    heat it takes; the refrigeration unit's capital is sized on its duty [kW].
    """

    water_temperature_c: _num(gt=0, lt=100)      # liquid water
    water_price_per_gj: NonNegative
    water_approach_k: ApproachK = 5.0
    evaporator_approach_k: ApproachK = 5.0
    condenser_approach_k: ApproachK = 10.0
    carnot_fraction: _num(ge=0.05, le=1) | None = None
    coefficient_of_performance: _num(ge=0.01, le=1000) | None = None
    refrigeration_capital: CapitalItem | None = None


class RecoveryUnitSpec(_Strict):
    return_fraction: dict[Name, Fraction]
    capital: CapitalItem
    operating_cost_per_kmol: NonNegative = 0.0
    return_pressure_bar: PressureBar | None = None
    recompression: Literal["makeup_compressor", "own_compressor"] = "makeup_compressor"
    recompression_stages: Annotated[int, Field(ge=1, le=12, strict=True)] = 1
    export_fraction: dict[Name, Fraction] = {}
    export_price_per_kmol: NonNegative = 0.0


class PurgeSpec(_Strict):
    destination: Literal["fuel", "flare"] = "fuel"
    recovery: Name = "none"
    fuel_capacity_gj_h: Positive | None = None


class EconomicsSpec(_Strict):
    currency: Annotated[str, Field(min_length=1, max_length=12)] = "EUR"
    hours_per_year: HoursPerYear = 8000.0
    discount_rate: RatePerYear = 0.08
    life_years: LifeYears = 20.0
    cost_index_ratio: Positive = 1.0
    power_price_per_kwh: NonNegative
    fuel_price_per_gj: NonNegative = 0.0
    flare_cost_per_kmol: NonNegative = 0.0
    product_price_per_t: NonNegative = 0.0
    co2_price_per_t: NonNegative | None = None
    compressor_capital: CapitalItem
    reactor_capital: CapitalItem
    catalyst_price_per_m3: NonNegative = 0.0
    catalyst_life_years: CatalystLifeYears = 5.0
    sensitivity_fraction: OpenFraction = 0.2


#: Longest label of an alternative in words (it heads tables and chart legends).
MAX_LABEL_CHARS = 60


class UncertainInputSpec(_Strict):
    """One uncertain price or economic input: a case key path and its distribution."""

    input: Name
    distribution: Literal["uniform", "triangular", "normal", "lognormal"]
    low: Finite | None = None
    mode: Finite | None = None
    high: Finite | None = None
    mean: Finite | None = None
    standard_deviation: Positive | None = None
    median: Positive | None = None
    sigma_log: _num(gt=0, le=5) | None = None


class RankCorrelationSpec(_Strict):
    inputs: list[Name] = Field(min_length=2, max_length=2)
    rank_correlation: _num(ge=-0.99, le=0.99)


class UncertaintySpec(_Strict):
    scenarios: Annotated[int, Field(strict=True, ge=2, le=1_000_000)]
    seed: Annotated[int, Field(strict=True, ge=0, le=2**63 - 1)] = 0
    inputs: list[UncertainInputSpec] = Field(min_length=1, max_length=50)
    correlations: list[RankCorrelationSpec] = []
    sobol_samples: Annotated[int, Field(strict=True, ge=0, le=65536)] = 0


class AlternativeSpec(_Strict):
    name: Name
    choices: dict[Name, Name]
    #: The alternative in words, shown after its code (A1, A2, ...); default: its choices.
    label: Annotated[str, Field(min_length=1, max_length=MAX_LABEL_CHARS)] | None = None


class Case(_Strict):
    """A validated case: one loop and its prices, before options are applied."""

    case: CaseInfo = CaseInfo()
    components: dict[Name, ComponentSpec]
    reactions: list[ReactionSpec] = Field(min_length=1)
    reactor: ReactorSpec
    loop: LoopSpec
    separator: SeparatorSpec
    sources: dict[Name, SourceSpec] = Field(min_length=1)
    makeup_sources: list[Name] | None = None
    compression: CompressionSpec = CompressionSpec()
    purge: PurgeSpec = PurgeSpec()
    recovery_units: dict[Name, RecoveryUnitSpec] = {}
    economics: EconomicsSpec
    options: dict[Name, dict[Name, dict[str, Any]]] = {}
    alternatives: list[AlternativeSpec] = []
    exclude: list[dict[Name, Name]] = []
    uncertainty: UncertaintySpec | None = None

    @model_validator(mode="after")
    def _cross_checks(self):
        check_case(self)
        check_property_data(self)
        return self

    @property
    def active_sources(self) -> list[str]:
        """Names of the sources this case buys from, in sorted order."""
        return sorted(self.makeup_sources if self.makeup_sources is not None else self.sources)


#: Refuses a name that is not a declared component: need(key_path, name).
_Need = Callable[[str, str], None]


def check_case(case: Case) -> None:
    """Cross-field checks that a schema cannot express, section by section.

    The checks that need property data follow in
    :func:`purgeplan.case_checks.check_property_data`; both run whenever a
    case is validated.

    Raises
    ------
    CaseError
        Naming the key path of the first failure.
    """
    need = _component_check(case)
    _check_reactions(case, need)
    _check_loop(case, need)
    _check_reactor_vessel(case)
    _check_separator(case, need)
    _check_sources(case, need)
    _check_inlet_ratios(case)
    _check_inlet_ratio_limits(case, need)
    _check_letdown_and_inventory(case)
    _check_recovery_and_economics(case, need)
    _check_recovery_unit_in_use(case)
    _check_options(case)
    _check_uncertainty(case)
    _check_cooling(case)


#: The inputs an [uncertainty] table may move, with the range each may take.
UNCERTAIN_ECONOMICS = {
    "hours_per_year": (1e-9, 8784.0), "discount_rate": (0.0, 0.999999),
    "life_years": (1.0, 100.0), "cost_index_ratio": (1e-9, 1e12),
    "power_price_per_kwh": (0.0, 1e12), "fuel_price_per_gj": (0.0, 1e12),
    "flare_cost_per_kmol": (0.0, 1e12), "product_price_per_t": (0.0, 1e12),
    "co2_price_per_t": (0.0, 1e12), "catalyst_price_per_m3": (0.0, 1e12),
    "catalyst_life_years": (0.01, 100.0), "compressor_capital.reference_cost": (1e-9, 1e12),
    "reactor_capital.reference_cost": (1e-9, 1e12),
}

#: The parameters each distribution takes: (required, optional).
DISTRIBUTION_PARAMETERS = {
    "uniform": ({"low", "high"}, set()),
    "triangular": ({"low", "mode", "high"}, set()),
    "normal": ({"mean", "standard_deviation"}, {"low", "high"}),
    "lognormal": ({"median", "sigma_log"}, {"low", "high"}),
}


def uncertain_input_range(case: Case, path: str) -> tuple[float, float]:
    """The range an uncertain input may take, or a CaseError naming the input and the fix."""
    field = path.removeprefix("economics.")
    if path.startswith("economics.") and field in UNCERTAIN_ECONOMICS:
        if field == "co2_price_per_t" and case.economics.co2_price_per_t is None:
            raise ValueError("the case sets no economics.co2_price_per_t, so there is no "
                             "emissions line to move; set it first")
        return UNCERTAIN_ECONOMICS[field]
    parts = path.split(".")
    if len(parts) == 3 and parts[0] == "sources" and parts[2] == "price_per_kmol":
        if parts[1] not in case.sources:
            raise ValueError(f"no source named {parts[1]!r}; sources: {sorted(case.sources)}")
        return 0.0, 1e12
    choices = ([f"economics.{k}" for k in UNCERTAIN_ECONOMICS]
               + [f"sources.{n}.price_per_kmol" for n in sorted(case.sources)])
    hint = difflib.get_close_matches(path, choices, n=1)
    raise ValueError(f"{path!r} is not an input that can be uncertain"
                     + (f"; did you mean {hint[0]!r}?" if hint else
                        "; use economics.<price or economic input> or "
                        "sources.<name>.price_per_kmol"))


def _check_uncertain_input(case: Case, base: str, spec: UncertainInputSpec) -> None:
    try:
        lo_ok, hi_ok = uncertain_input_range(case, spec.input)
    except ValueError as exc:
        raise CaseError(f"{base}.input", str(exc)) from None
    required, optional = DISTRIBUTION_PARAMETERS[spec.distribution]
    given = {k for k in ("low", "mode", "high", "mean", "standard_deviation", "median",
                         "sigma_log") if getattr(spec, k) is not None}
    for k in sorted(required - given):
        raise CaseError(f"{base}.{k}", f"required for a {spec.distribution} distribution")
    for k in sorted(given - required - optional):
        raise CaseError(f"{base}.{k}", f"not a parameter of a {spec.distribution} "
                        f"distribution (it takes {', '.join(sorted(required | optional))})")
    order = [(k, getattr(spec, k)) for k in ("low", "mode", "high") if k in given]
    for (k0, v0), (k1, v1) in itertools.pairwise(order):
        if not v0 < v1:
            raise CaseError(f"{base}.{k1}", f"{v1:g} must be above {k0} {v0:g}")
    low = -math.inf if spec.low is None else spec.low
    high = math.inf if spec.high is None else spec.high
    for k, v in (("mean", spec.mean), ("median", spec.median)):
        if v is not None and not low < v < high:
            raise CaseError(f"{base}.{k}", f"{v:g} must lie between low and high")
    from .sampling import Distribution

    lo, hi = Distribution(spec.distribution, **{k: getattr(spec, k) for k in given}).support()
    if lo < lo_ok or hi > hi_ok:
        bound = "low" if lo < lo_ok else "high"
        raise CaseError(f"{base}.{bound}", f"samples would reach {lo if lo < lo_ok else hi:g}; "
                        f"{spec.input} must stay within [{lo_ok:g}, {hi_ok:g}] "
                        f"(set {bound} to cut the distribution)")


def _check_uncertainty(case: Case) -> None:
    u = case.uncertainty
    if u is None:
        return
    seen: dict[str, int] = {}
    for i, spec in enumerate(u.inputs):
        base = f"uncertainty.inputs[{i}]"
        if spec.input in seen:
            raise CaseError(f"{base}.input", f"{spec.input!r} is already given in "
                            f"uncertainty.inputs[{seen[spec.input]}]")
        seen[spec.input] = i
        _check_uncertain_input(case, base, spec)
    pairs = set()
    for i, c in enumerate(u.correlations):
        base = f"uncertainty.correlations[{i}]"
        for name in c.inputs:
            if name not in seen:
                raise CaseError(f"{base}.inputs", f"{name!r} is not one of uncertainty.inputs")
        if c.inputs[0] == c.inputs[1]:
            raise CaseError(f"{base}.inputs", "names the same input twice")
        pair = frozenset(c.inputs)
        if pair in pairs:
            raise CaseError(f"{base}.inputs", "this pair is already correlated above")
        pairs.add(pair)
    if correlation_matrix(u) is None:
        raise CaseError("uncertainty.correlations", "these rank correlations cannot hold "
                        "together (their matrix is not positive definite); weaken some")


def correlation_matrix(u: UncertaintySpec):
    """The rank-correlation matrix of the inputs, in their order; None if not positive definite."""
    import numpy as np

    index = {spec.input: i for i, spec in enumerate(u.inputs)}
    m = np.eye(len(u.inputs))
    for c in u.correlations:
        i, j = index[c.inputs[0]], index[c.inputs[1]]
        m[i, j] = m[j, i] = c.rank_correlation
    try:
        np.linalg.cholesky(m)
    except np.linalg.LinAlgError:
        return None
    return m


def _component_check(case: Case) -> _Need:
    """A function that refuses a name that is not a declared component, with a hint."""
    known = sorted(case.components)

    def need_component(path: str, name: str) -> None:
        if name not in case.components:
            hint = difflib.get_close_matches(name, known, n=1)
            fix = f"; did you mean '{hint[0]}'?" if hint else f"; declared components: {known}"
            raise CaseError(path, f"unknown component {name!r}{fix}")
    return need_component


def _check_reactions(case: Case, need: _Need) -> None:
    for i, r in enumerate(case.reactions):
        _check_reaction(f"reactions[{i}]", r, need)
    if sum(r.per_pass in ("sized", "rate") or r.rate is not None
           for r in case.reactions) > 1:
        raise CaseError("reactions", "at most one reaction may be sized (per_pass 'sized' or "
                        "'rate', or a rate table): the loop has one converter")


def _check_reaction(base: str, r: ReactionSpec, need: _Need) -> None:
    for c, nu in r.stoichiometry.items():
        need(f"{base}.stoichiometry.{_key(c)}", c)
        if nu == 0:
            raise CaseError(f"{base}.stoichiometry.{_key(c)}", "coefficient 0: leave it out")
    need(f"{base}.key_reactant", r.key_reactant)
    if r.stoichiometry.get(r.key_reactant, 0) >= 0:
        raise CaseError(f"{base}.key_reactant",
                        f"'{r.key_reactant}' must be consumed (negative coefficient)")
    needs = {"fixed": ("per_pass_conversion",), "equilibrium": ("approach_to_equilibrium",),
             "sized": ("sizing",), "rate": ("rate", "per_pass_conversion")}[r.per_pass]
    for key in needs:
        if getattr(r, key) is None:
            raise CaseError(f"{base}.{key}", f"required when per_pass = '{r.per_pass}'")
    if r.per_pass == "equilibrium" and r.equilibrium is None:
        raise CaseError(f"{base}.equilibrium", "required when per_pass = 'equilibrium'")
    if r.sizing is not None:
        _check_sizing(f"{base}.sizing", r.sizing)
        if r.sizing.approach_to_equilibrium_max is not None and r.equilibrium is None:
            raise CaseError(f"{base}.sizing.approach_to_equilibrium_max",
                            "needs the reaction's equilibrium table (without it the sizing's "
                            "equilibrium_conversion is fixed: bound conversion_max instead)")
    if r.rate is not None:
        _check_rate(base, r, need)


def _check_rate(base: str, r: ReactionSpec, need: _Need) -> None:
    """A rate table: the keys its law needs and no others, and its equilibrium."""
    if r.per_pass not in ("rate", "equilibrium"):
        raise CaseError(f"{base}.rate", "sizes the catalyst of per_pass = 'rate' or "
                        f"'equilibrium' only, not '{r.per_pass}': delete it or change per_pass")
    if r.rate.law == "temkin_pyzhev":
        _check_temkin_rate(base, r)
    else:
        _check_rate_constants(base, r, need)
    if not r.rate.conversion_min < r.rate.conversion_max:
        raise CaseError(f"{base}.rate.conversion_max", "need conversion_min < conversion_max")
    _check_quench(f"{base}.rate", r.rate)


def _check_quench(path: str, rate: RateSpec) -> None:
    """A quench converter: two or more adiabatic beds and a quench gas colder than each
    bed's inlet (the quench cools the gas to the next bed's inlet temperature, and bed
    1's share is preheated from it)."""
    beds, t_q = rate.bed_inlet_temperatures_c, rate.quench_temperature_c
    if rate.between_beds == "cooling":
        if t_q is not None:
            raise CaseError(f"{path}.quench_temperature_c", "belongs to between_beds = "
                            "'quench': delete it or set between_beds = \"quench\"")
        return
    if beds is None or len(beds) < 2:
        raise CaseError(f"{path}.between_beds", "'quench' needs two or more adiabatic beds: "
                        "give bed_inlet_temperatures_c, or delete between_beds")
    if t_q is None:
        raise CaseError(f"{path}.quench_temperature_c",
                        "required when between_beds = 'quench': give the quench gas's "
                        "temperature, below every bed's inlet temperature")
    if not t_q < min(beds):
        raise CaseError(f"{path}.quench_temperature_c",
                        f"{t_q:g} degC must lie below every bed's inlet temperature (lowest "
                        f"{min(beds):g} degC): the quench cools the gas to them")


def _check_temkin_rate(base: str, r: ReactionSpec) -> None:
    """The Temkin-Pyzhev constants of Dyson and Simon (1968) belong to their equilibrium:
    the rate is zero there and nowhere else (its reaction is then checked to be ammonia
    synthesis with the property data, :mod:`purgeplan.case_checks`)."""
    for key in RATE_CONSTANT_KEYS:
        if getattr(r.rate, key) is not None:
            raise CaseError(f"{base}.rate.{key}", "belongs to law = 'power_law' or "
                            "'langmuir_hinshelwood'; the Temkin-Pyzhev rate has the constants "
                            "of Dyson and Simon: delete it or change the law")
    eq = r.equilibrium
    if (eq is None or eq.constant != "ammonia_gillespie_beattie" or eq.fugacity != "dyson_simon"
            or eq.fugacity_correction_factor != 1.0):
        raise CaseError(f"{base}.equilibrium", "the Temkin-Pyzhev rate of Dyson and Simon needs "
                        "their equilibrium: { constant = \"ammonia_gillespie_beattie\", "
                        "fugacity = \"dyson_simon\" } with no correction factor")


def _check_rate_constants(base: str, r: ReactionSpec, need: _Need) -> None:
    """A power-law or Langmuir-Hinshelwood rate: its constants, components and equilibrium."""
    rate, law, path = r.rate, r.rate.law, f"{base}.rate"
    if rate.effectiveness_factor == "dyson_simon":
        raise CaseError(f"{path}.effectiveness_factor", "'dyson_simon' is the fit for the "
                        "Temkin-Pyzhev rate only: give a number between 0 and 1")
    if r.equilibrium is None:
        raise CaseError(f"{base}.equilibrium", f"required with rate law '{law}': its driving "
                        "force 1 - Q/K comes from the reaction's equilibrium (equilibrium = {} "
                        "takes K from formation data)")
    needed = ("pre_exponential_kmol_m3_h", "activation_energy_kj_mol", "orders")
    if law == "langmuir_hinshelwood":
        needed += ("adsorption", "denominator_power")
    for key in needed:
        if getattr(rate, key) is None:
            raise CaseError(f"{path}.{key}", f"required with law = '{law}'")
    for c in rate.orders:
        need(f"{path}.orders.{_key(c)}", c)
    if law == "power_law":
        for key in ("adsorption", "denominator_power"):
            if getattr(rate, key) is not None:
                raise CaseError(f"{path}.{key}", "belongs to law = 'langmuir_hinshelwood': "
                                "delete it or change the law")
        return
    if not rate.adsorption:
        raise CaseError(f"{path}.adsorption", "give at least one adsorption term "
                        "(without one the rate is a power law: law = 'power_law')")
    for j, term in enumerate(rate.adsorption):
        where = f"{path}.adsorption[{j}].exponents"
        if not term.exponents:
            raise CaseError(where, "give the exponent of at least one component")
        for c, m in term.exponents.items():
            need(f"{where}.{_key(c)}", c)
            if m < 0 and r.stoichiometry.get(c, 0.0) >= 0:
                raise CaseError(f"{where}.{_key(c)}", f"a negative exponent is allowed on a "
                                f"reactant only (which the bed never runs out of), not {c!r}")


def _check_sizing(base: str, s: SizingSpec) -> None:
    if not s.reference_conversion < s.equilibrium_conversion:
        raise CaseError(f"{base}.reference_conversion",
                        f"{s.reference_conversion} must be below equilibrium_conversion "
                        f"{s.equilibrium_conversion}")
    if not s.conversion_min < s.conversion_max < s.equilibrium_conversion:
        raise CaseError(f"{base}.conversion_max",
                        "need conversion_min < conversion_max < equilibrium_conversion")


def _check_loop(case: Case, need: _Need) -> None:
    loop = case.loop
    need("loop.product", loop.product)
    if not any(r.stoichiometry.get(loop.product, 0) > 0 for r in case.reactions):
        raise CaseError("loop.product", f"'{loop.product}' is not produced by any reaction")
    if loop.basis == "production" and loop.production_t_d is None:
        raise CaseError("loop.production_t_d", "required when basis = 'production'")
    if loop.basis == "makeup" and loop.makeup_kmol_h is None:
        raise CaseError("loop.makeup_kmol_h", "required when basis = 'makeup'")
    if loop.basis == "makeup" and case.economics.product_price_per_t == 0.0:
        raise CaseError("economics.product_price_per_t",
                        "required above 0 when loop.basis = 'makeup': at a zero product price "
                        "the optimiser saves gas by cutting production")
    if not loop.purge_fraction_min < loop.purge_fraction_max:
        raise CaseError("loop.purge_fraction_max",
                        f"{loop.purge_fraction_max} must exceed purge_fraction_min "
                        f"{loop.purge_fraction_min}")
    if loop.pressure_drop_bar >= loop.pressure_bar:
        raise CaseError("loop.pressure_drop_bar",
                        f"{loop.pressure_drop_bar} must be below pressure_bar {loop.pressure_bar}")
    for i, ratio in enumerate(loop.inlet_ratios):
        need(f"loop.inlet_ratios[{i}].numerator", ratio.numerator)
        need(f"loop.inlet_ratios[{i}].denominator", ratio.denominator)


#: Highest loop pressure for the vessel pressure factor (Turton et al. eq. 7.10 needs
#: 850 - 0.6 (P + 1) well above 0, P in barg) [bar abs].
MAX_VESSEL_PRESSURE_BAR = 1000.0
#: Lowest: -0.5 barg, below which Turton et al. give a vacuum-service factor instead.
MIN_VESSEL_PRESSURE_BAR = 0.5


def _check_reactor_vessel(case: Case) -> None:
    r = case.reactor
    given = {"vessel_diameter_m": r.vessel_diameter_m,
             "capital_reference_pressure_bar": r.capital_reference_pressure_bar}
    for key, other in (("vessel_diameter_m", "capital_reference_pressure_bar"),
                       ("capital_reference_pressure_bar", "vessel_diameter_m")):
        if given[key] is not None and given[other] is None:
            raise CaseError(f"reactor.{other}",
                            f"required with reactor.{key}: the vessel pressure factor needs "
                            "the diameter and the pressure the reactor reference cost is for")
    if r.vessel_diameter_m is None:
        return
    for path, p in (("loop.pressure_bar", case.loop.pressure_bar),
                    ("reactor.capital_reference_pressure_bar", r.capital_reference_pressure_bar)):
        if not MIN_VESSEL_PRESSURE_BAR <= p <= MAX_VESSEL_PRESSURE_BAR:
            raise CaseError(path, f"{p:g} bar is outside {MIN_VESSEL_PRESSURE_BAR:g} to "
                            f"{MAX_VESSEL_PRESSURE_BAR:g} bar abs, the range kept for the vessel "
                            "pressure factor (Turton et al. eq. 7.10; vacuum vessels excluded)")


def _check_separator_model(case: Case, need: _Need) -> None:
    """The keys of the phase-equilibrium separator, and those of the fixed split."""
    sep = case.separator
    model = sep.split_model
    if model == "split_fractions" and not sep.liquid_fraction:
        raise CaseError("separator.liquid_fraction",
                        "required with model = 'split_fractions': give each component's "
                        "fraction of the reactor outlet leaving with the liquid")
    if model != "split_fractions" and sep.liquid_fraction:
        raise CaseError("separator.liquid_fraction",
                        f"fixed split fractions do not apply to model = '{model}', whose phase "
                        "equilibrium sets the split: remove liquid_fraction, or give model = "
                        "'split_fractions'")
    if sep.henry_constant_bar and model != "henry_raoult":
        raise CaseError("separator.henry_constant_bar",
                        f"Henry constants apply to model = 'henry_raoult' only, not '{model}'")
    for c in sep.henry_constant_bar:
        need(f"separator.henry_constant_bar.{_key(c)}", c)


def _check_separator(case: Case, need: _Need) -> None:
    _check_separator_model(case, need)
    if case.separator.split_model != "split_fractions":
        return
    split = case.separator.liquid_fraction
    condensing = [c for c, v in split.items() if v == "condensation"]
    for c in split:
        need(f"separator.liquid_fraction.{_key(c)}", c)
    if len(condensing) > 1:
        raise CaseError("separator.liquid_fraction",
                        f"only one component may condense with split fractions, found "
                        f"{condensing}: for several give model = 'henry_raoult' and no "
                        "liquid_fraction")
    product = case.loop.product
    if split.get(product, 0.0) == 0.0:
        raise CaseError(f"separator.liquid_fraction.{_key(product)}",
                        "the product must leave with the liquid: give a fraction above 0 "
                        "or 'condensation'")


def _check_sources(case: Case, need: _Need) -> None:
    for name, src in case.sources.items():
        _check_source(f"sources.{_key(name)}", src, case.loop.pressure_bar, need)
    for i, name in enumerate(case.makeup_sources or []):
        if name not in case.sources:
            hint = difflib.get_close_matches(name, sorted(case.sources), n=1)
            fix = f"; did you mean '{hint[0]}'?" if hint else ""
            raise CaseError(f"makeup_sources[{i}]", f"unknown source '{name}'{fix}")
    active = case.active_sources
    if not active:
        raise CaseError("makeup_sources", "at least one source is needed")
    if not any(case.sources[s].enters == "makeup" for s in active):
        raise CaseError("makeup_sources", "at least one source must enter as make-up gas")


def _check_source(base: str, src: SourceSpec, loop_pressure_bar: float, need: _Need) -> None:
    for c in src.composition:
        need(f"{base}.composition.{_key(c)}", c)
    total = sum(src.composition.values())
    if abs(total - 1.0) > 1e-6:
        raise CaseError(f"{base}.composition",
                        f"mole fractions sum to {total:.9g}; they must sum to 1 within 1e-6")
    if src.enters == "makeup" and src.supply_pressure_bar > loop_pressure_bar:
        raise CaseError(f"{base}.supply_pressure_bar",
                        f"{src.supply_pressure_bar} is above the loop pressure "
                        f"{loop_pressure_bar}")
    if src.phase == "liquid" and src.enters == "makeup":
        raise CaseError(f"{base}.phase", "a liquid is pumped straight to the reactor: give "
                        "enters = 'reactor_feed', or phase = 'gas' for make-up gas")
    if src.phase == "gas" and src.liquid_density_kg_m3 is not None:
        raise CaseError(f"{base}.liquid_density_kg_m3",
                        "used only with phase = 'liquid': delete it, or give phase = 'liquid'")
    if src.phase == "liquid" and src.liquid_density_kg_m3 is None:
        raise CaseError(f"{base}.liquid_density_kg_m3",
                        "required when phase = 'liquid' (the pump work is volume x pressure rise)")


def _check_inlet_ratios(case: Case) -> None:
    """One reactor-inlet ratio fixes the rate of the direct feeds; without them, none.

    The direct feeds (active sources with enters = "reactor_feed") are one
    group whose total rate is an unknown of the loop; the basis fixes the
    make-up, so the loop equations are square only with exactly one ratio
    when there are direct feeds and none otherwise.
    """
    direct = [s for s in case.active_sources if case.sources[s].enters == "reactor_feed"]
    ratios = case.loop.inlet_ratios
    found = {0: "none", 1: "1 entry"}.get(len(ratios), f"{len(ratios)} entries")
    if direct and len(ratios) != 1:
        names = ", ".join(repr(s) for s in direct)
        who = (f"the direct feed {names} needs" if len(direct) == 1 else
               f"the direct feeds {names} enter the reactor as one group and need")
        its = "its rate" if len(direct) == 1 else "their total rate"
        raise CaseError("loop.inlet_ratios",
                        f"{who} one loop.inlet_ratios entry (numerator, denominator, value) "
                        f"that fixes {its}; found {found}")
    if not direct and ratios:
        raise CaseError("loop.inlet_ratios",
                        "no active source enters the reactor directly (enters = "
                        "'reactor_feed'), so there is no feed rate for a ratio to fix and the "
                        f"basis already fixes the make-up: leave loop.inlet_ratios out; "
                        f"found {found}")
    carried = {c for s in case.active_sources for c, y in case.sources[s].composition.items()
               if y > 0.0}
    made = {c for r in case.reactions for c, nu in r.stoichiometry.items() if nu > 0}
    for i, ratio in enumerate(ratios):
        base = f"loop.inlet_ratios[{i}]"
        if ratio.numerator == ratio.denominator:
            raise CaseError(f"{base}.denominator",
                            f"{ratio.denominator!r} is also the numerator: a ratio needs two "
                            "different components")
        for end in ("numerator", "denominator"):
            c = getattr(ratio, end)
            if c not in carried | made:
                raise CaseError(f"{base}.{end}",
                                f"{c!r} never reaches the reactor inlet: no active source "
                                "carries it and no reaction makes it; name a component that "
                                "is in the loop")


def stoichiometric_ratio(case: Case, spec: InletRatioLimit) -> float | None:
    """The stoichiometric value of an inlet ratio: its forms over a reaction's consumption [-].

    Taken from the first reaction whose consumed reactants give the
    denominator form a positive value (consumption = -nu of each reactant);
    ``stoichiometric_ratio`` in the case overrides it.  None when no reaction does.
    """
    if spec.stoichiometric_ratio is not None:
        return spec.stoichiometric_ratio
    for r in case.reactions:
        used = {c: -nu for c, nu in r.stoichiometry.items() if nu < 0}
        den = sum(b * used.get(c, 0.0) for c, b in spec.denominator.items())
        if den > 0:
            num = sum(a * used.get(c, 0.0) for c, a in spec.numerator.items())
            return num / den if num > 0 else None
    return None


def _check_inlet_ratio_limits(case: Case, need: _Need) -> None:
    names = set()
    for i, spec in enumerate(case.loop.inlet_ratio_limits):
        base = f"loop.inlet_ratio_limits[{i}]"
        if spec.name in names:
            raise CaseError(f"{base}.name", f"{spec.name!r} is used twice: names must be unique")
        names.add(spec.name)
        for end in ("numerator", "denominator"):
            for c in getattr(spec, end):
                need(f"{base}.{end}.{_key(c)}", c)
        if not any(b > 0 for b in spec.denominator.values()):
            raise CaseError(f"{base}.denominator", "needs at least one coefficient above 0")
        if (spec.min_ratio is not None and spec.max_ratio is not None
                and spec.min_ratio > spec.max_ratio):
            raise CaseError(f"{base}.max_ratio",
                            f"{spec.max_ratio:g} is below min_ratio {spec.min_ratio:g}")
        if stoichiometric_ratio(case, spec) is None:
            raise CaseError(f"{base}.stoichiometric_ratio",
                            "no reaction's consumption gives this ratio a positive value: "
                            "give stoichiometric_ratio")


def _check_letdown_and_inventory(case: Case) -> None:
    sep, loop = case.separator, case.loop
    low = loop.pressure_bar - loop.pressure_drop_bar
    if sep.letdown_pressure_bar is not None and sep.letdown_pressure_bar >= low:
        raise CaseError("separator.letdown_pressure_bar",
                        f"{sep.letdown_pressure_bar:g} must be below the separator pressure "
                        f"{low:g} bar (pressure_bar less pressure_drop_bar)")
    if loop.gas_inventory_kmol is not None and loop.gas_inventory_m3 is not None:
        raise CaseError("loop.gas_inventory_m3",
                        "give the loop gas inventory once: gas_inventory_kmol or gas_inventory_m3")


#: Fraction of the Carnot coefficient of performance a refrigeration cycle reaches when
#: the case gives neither: common practice for ammonia refrigeration, 0.5 to 0.6 [-].
CARNOT_FRACTION = 0.55


def cooling_temperatures_k(case: Case) -> tuple[float, float, float]:
    """Water cooler outlet, refrigerant evaporator and condenser temperatures [K].

    The water cooler takes the gas from reactor temperature down to the
    cooling water's supply temperature plus its approach, but not below
    separator temperature; refrigeration does the rest.
    """
    c = case.separator.cooling
    t_sep = case.separator.temperature_c + KELVIN
    t_water = min(max(c.water_temperature_c + c.water_approach_k + KELVIN, t_sep),
                  case.reactor.temperature_c + KELVIN)
    return (t_water, t_sep - c.evaporator_approach_k,
            c.water_temperature_c + c.condenser_approach_k + KELVIN)


def _check_cooling(case: Case) -> None:
    """The separator's cooling: a reactor outlet to cool, a refrigeration cycle that can run."""
    c = case.separator.cooling
    if c is None:
        return
    base = "separator.cooling"
    t_sep, t_reactor = case.separator.temperature_c, case.reactor.temperature_c
    if not t_sep < t_reactor:
        raise CaseError("separator.temperature_c",
                        f"{t_sep:g} degC must be below the reactor temperature {t_reactor:g} "
                        f"degC for {base} to cool the reactor outlet")
    if c.carnot_fraction is not None and c.coefficient_of_performance is not None:
        raise CaseError(f"{base}.coefficient_of_performance",
                        "give carnot_fraction or coefficient_of_performance, not both")
    t_water, t_evap, t_cond = cooling_temperatures_k(case)
    if not t_water > t_sep + KELVIN or c.coefficient_of_performance is not None:
        return  # no refrigeration, or its performance given
    if not t_evap > 0.0:
        raise CaseError(f"{base}.evaporator_approach_k",
                        f"{c.evaporator_approach_k:g} K below separator temperature is "
                        "below absolute zero")
    if not t_cond > t_evap:
        raise CaseError(f"{base}.condenser_approach_k",
                        f"the refrigerant would condense at {t_cond - KELVIN:g} degC, not above "
                        f"its evaporator at {t_evap - KELVIN:g} degC; raise condenser_approach_k")


def _check_recovery_unit_in_use(case: Case) -> None:
    """The recovery unit of this alternative: its return pressure against the compressors."""
    rec = case.purge.recovery
    if rec == "none":
        return
    unit, base = case.recovery_units[rec], f"recovery_units.{_key(rec)}"
    for c, x in unit.export_fraction.items():
        if x + unit.return_fraction.get(c, 0.0) > 1.0 + 1e-12:
            raise CaseError(f"{base}.export_fraction.{_key(c)}",
                            f"{x:g} plus the return fraction {unit.return_fraction.get(c, 0.0):g}"
                            " exceeds 1")
    p_ret = unit.return_pressure_bar
    if p_ret is None:
        return
    if p_ret > case.loop.pressure_bar:
        raise CaseError(f"{base}.return_pressure_bar",
                        f"{p_ret:g} is above the loop pressure {case.loop.pressure_bar:g}")
    supply = min((case.sources[s].supply_pressure_bar for s in case.active_sources
                  if case.sources[s].enters == "makeup"), default=0.0)
    if unit.recompression == "makeup_compressor" and p_ret < supply:
        raise CaseError(f"{base}.return_pressure_bar",
                        f"{p_ret:g} bar is below the make-up compressor's suction ({supply:g} "
                        "bar): give recompression = 'own_compressor'")


def _check_recovery_and_economics(case: Case, need: _Need) -> None:
    rate = case.economics.discount_rate
    if 0.0 < rate < 1e-6:
        raise CaseError("economics.discount_rate",
                        f"{rate!r} is neither 0 nor a rate of at least 1e-6 per year")
    rec = case.purge.recovery
    if rec != "none" and rec not in case.recovery_units:
        raise CaseError("purge.recovery",
                        f"unknown recovery unit '{rec}'; declared: {sorted(case.recovery_units)} "
                        "or 'none'")
    for name, unit in case.recovery_units.items():
        for c in unit.return_fraction:
            need(f"recovery_units.{_key(name)}.return_fraction.{_key(c)}", c)
        for c in unit.export_fraction:
            need(f"recovery_units.{_key(name)}.export_fraction.{_key(c)}", c)


def _check_options(case: Case) -> None:
    for opt, choices in case.options.items():
        if not choices:
            raise CaseError(f"options.{_key(opt)}", "an option needs at least one choice")
    for i, alt in enumerate(case.alternatives):
        for opt, choice in alt.choices.items():
            if opt not in case.options:
                raise CaseError(f"alternatives[{i}].choices.{_key(opt)}",
                                f"unknown option '{opt}'")
            if choice not in case.options[opt]:
                raise CaseError(f"alternatives[{i}].choices.{_key(opt)}",
                                f"unknown choice '{choice}'; options: {sorted(case.options[opt])}")
    for i, ex in enumerate(case.exclude):
        for opt, choice in ex.items():
            if opt not in case.options or choice not in case.options[opt]:
                raise CaseError(f"exclude[{i}].{_key(opt)}",
                                f"no such option choice {opt!r} = {choice!r}")
    names = [a.name for a in case.alternatives]
    if len(set(names)) != len(names):
        raise CaseError("alternatives", "alternative names must be unique")
    seen: set[str] = set()
    for i, alt in enumerate(case.alternatives):
        if alt.label is None:
            continue
        if not alt.label.strip() or any(ord(ch) < 32 for ch in alt.label):
            raise CaseError(f"alternatives[{i}].label", "must be text on one line, not blank")
        if alt.label.strip().casefold() in seen:
            raise CaseError(f"alternatives[{i}].label",
                            f"'{alt.label}' labels another alternative too; labels must differ")
        seen.add(alt.label.strip().casefold())


# ---------------------------------------------------------------------------
# reading and error messages


def _fields_at(model: type, loc: tuple) -> list[str]:
    """Field names of the (sub)model reached by a pydantic error location.

    Steps through models by field name, and over list indexes and table keys
    by the element type of ``list[...]`` and ``dict[str, ...]`` annotations.
    """
    current: Any = model
    for part in loc:
        current = _strip_optional(current)
        if isinstance(current, type) and issubclass(current, BaseModel):
            field = current.model_fields.get(part)
            if field is None:
                return []
            current = field.annotation
        elif typing.get_origin(current) in (list, dict):
            current = typing.get_args(current)[-1]
        else:
            return []
    current = _strip_optional(current)
    if isinstance(current, type) and issubclass(current, BaseModel):
        return list(current.model_fields)
    return []


def _strip_optional(annotation: Any) -> Any:
    """``X`` from ``X | None`` (and the metadata-free type from ``Annotated``)."""
    if typing.get_origin(annotation) is Annotated:
        annotation = typing.get_args(annotation)[0]
    args = typing.get_args(annotation)
    if args and type(None) in args:
        rest = [a for a in args if a is not type(None)]
        if len(rest) == 1:
            return _strip_optional(rest[0])
    return annotation


def _path(loc: tuple) -> str:
    out = ""
    for part in loc:
        if isinstance(part, int):
            out += f"[{part}]"
        else:
            out += ("." if out else "") + _key(part)
    return out


def _short(value: Any) -> str:
    text = repr(value)
    return text if len(text) <= 60 else text[:57] + "..."


def _case_error(exc: ValidationError, prefix: str = "") -> CaseError:
    """One pydantic error as a one-line CaseError with a did-you-mean hint.

    An unknown key is reported before anything else: a misspelt or unit-less
    key also makes the intended key missing, and the misspelling is the news.
    """
    errors = exc.errors(include_url=False)
    err = next((e for e in errors if e["type"] == "extra_forbidden"), errors[0])
    # pydantic adds the names of union members and validators to locations
    loc = tuple(p for p in err["loc"] if not (isinstance(p, str) and _TAG.match(p)))
    path = prefix + _path(loc)
    kind = err["type"]
    if kind == "extra_forbidden":
        allowed = _fields_at(Case, loc[:-1])
        hint = difflib.get_close_matches(str(loc[-1]), allowed, n=1, cutoff=0.5)
        fix = f"did you mean '{hint[0]}'?" if hint else f"allowed keys: {', '.join(allowed)}"
        return CaseError(path, f"unknown key; {fix}", value=_short(err.get("input")))
    if kind == "missing":
        return CaseError(path, "missing key: this value is required")
    ctx = err.get("ctx", {})
    if kind == "value_error" and isinstance(ctx.get("error"), CaseError):
        found = ctx["error"]
        return CaseError(prefix + found.path, found.message)
    bounds = {"greater_than": ("greater than", "gt"), "greater_than_equal": ("at least", "ge"),
              "less_than": ("less than", "lt"), "less_than_equal": ("at most", "le")}
    if kind in bounds:
        words, key = bounds[kind]
        return CaseError(path, f"must be {words} {ctx[key]:g}", value=_short(err.get("input")))
    return CaseError(path, f"{err['msg'].lower()}", value=_short(err.get("input")))


_TAG = re.compile(r"^(constrained-\w+|literal\[.*\]|function-\w+|float|int|str|bool)$")

#: Deepest nesting of tables and arrays a case may have.
MAX_DEPTH = 24


def _too_deep(raw: Any) -> tuple | None:
    """Key path of a point nested deeper than MAX_DEPTH, or None (found without recursion)."""
    stack = [(raw, ())]
    while stack:
        value, loc = stack.pop()
        if len(loc) > MAX_DEPTH:
            return loc
        if isinstance(value, dict):
            stack.extend((v, loc + (k,)) for k, v in value.items())
        elif isinstance(value, list):
            stack.extend((v, loc + (i,)) for i, v in enumerate(value))
    return None


def parse_case_text(text: str, source: str = "case") -> Case:
    """Validate the text of a TOML case file.

    Raises
    ------
    CaseError
        With the key path, the value found and what was expected.
    """
    try:
        raw = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise CaseError("", f"{source} is not valid TOML: {exc}") from None
    except RecursionError:
        raise CaseError("", f"{source} nests deeper than the TOML reader can follow") from None
    return validate_case_dict(raw)


def validate_case_dict(raw: dict, prefix: str = "") -> Case:
    """Validate a case already parsed into plain Python data."""
    deep = _too_deep(raw)
    if deep is not None:
        raise CaseError(prefix + _path(deep[:3]) + "...",
                        f"tables and arrays nest deeper than {MAX_DEPTH} levels")
    try:
        return Case.model_validate(raw)
    except ValidationError as exc:
        raise _case_error(exc, prefix) from None
    except RecursionError:
        raise CaseError(prefix, "the case nests too deeply") from None


def read_case_bytes(path: Path) -> str:
    """The text of a case file, refusing huge and non-UTF-8 files with a CaseError."""
    try:
        size = path.stat().st_size
    except OSError as exc:
        raise CaseError("", f"cannot read case file {path}: {exc.strerror}") from None
    if size > MAX_CASE_BYTES:
        raise CaseError("", f"case file {path} is {size} bytes; the limit is {MAX_CASE_BYTES}")
    try:
        data = path.read_bytes()
        return data.decode("utf-8")
    except UnicodeDecodeError as exc:
        raise CaseError("", f"case file {path} is not UTF-8 text (byte {exc.start})") from None
    except OSError as exc:
        raise CaseError("", f"cannot read case file {path}: {exc.strerror}") from None


def load_case(path: str | Path) -> tuple[Case, str]:
    """Read and validate a case file; returns the case and the SHA-256 of its bytes."""
    path = Path(path)
    text = read_case_bytes(path)
    digest = hashlib.sha256(text.encode("utf-8")).hexdigest()
    return parse_case_text(text, source=str(path)), digest


# ---------------------------------------------------------------------------
# alternatives


def _deep_merge(base: dict, patch: dict) -> dict:
    out = copy.deepcopy(base)
    for key, value in patch.items():
        if isinstance(value, dict) and isinstance(out.get(key), dict):
            out[key] = _deep_merge(out[key], value)
        else:
            out[key] = copy.deepcopy(value)
    return out


def alternative_name(choices: dict[str, str]) -> str:
    """Name of an alternative from its option choices, option names sorted."""
    return ", ".join(f"{opt}={choices[opt]}" for opt in sorted(choices)) or "base case"


def expand_alternatives(case: Case) -> list[tuple[str, dict[str, str], Case]]:
    """Every design alternative as (name, choices, validated case), sorted by name.

    With no options the base case is the only alternative.  Explicit
    ``alternatives`` replace the full combination; ``exclude`` removes any
    combination containing all of an entry's choices.
    """
    base = case.model_dump(exclude={"options", "alternatives", "exclude"}, exclude_none=True)
    if case.alternatives:
        wanted = [(a.name, dict(a.choices)) for a in case.alternatives]
    else:
        opts = sorted(case.options)
        combos = itertools.product(*(sorted(case.options[o]) for o in opts))
        wanted = [(None, dict(zip(opts, combo, strict=True))) for combo in combos]
    result = []
    for name, choices in wanted:
        if any(all(choices.get(o) == c for o, c in ex.items()) for ex in case.exclude):
            continue
        raw = base
        for opt in sorted(choices):
            raw = _deep_merge(raw, case.options[opt][choices[opt]])
        prefix = f"options.{{{', '.join(f'{o}.{choices[o]}' for o in sorted(choices))}}}: "
        alt_case = validate_case_dict(raw, prefix=prefix if choices else "")
        result.append((name or alternative_name(choices), choices, alt_case))
    if not result:
        raise CaseError("exclude", "every alternative is excluded; nothing is left to study")
    return sorted(result, key=lambda item: item[0])
