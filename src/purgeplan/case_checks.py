"""Checks of a case that need property data, and the values they establish.

Run by the validator of :class:`purgeplan.case.Case` after the checks of the
case's own structure, so every validated case (each design alternative
included) has component data for every component, reactions that balance
their elements, the data its equilibrium constants need, usable fugacity
coefficients, heat capacities that give a heat-capacity ratio, and a
condensing product that condenses.  The loop builder (:mod:`purgeplan.build`)
takes its values from the same functions, so a validated case always builds.

Every failure is a one-line :class:`CaseError` naming the key path and the fix.
"""

from __future__ import annotations

import json
import math
from collections.abc import Mapping
from typing import TYPE_CHECKING, Any

from .errors import CaseError
from .physics import equilibrium, kinetics, separation, thermo
from .physics.real_gas import PengRobinsonData
from .physics.thermo import KELVIN
from .properties import ComponentData, lookup, peng_robinson_parameters, unifac_groups

if TYPE_CHECKING:
    from .case import Case, ComponentSpec, ReactionSpec


def key_part(part: Any) -> str:
    """One key of a path, quoted when it is not a plain name (so messages stay one line)."""
    text = str(part)
    if text and all(ch.isalnum() or ch in "_-:" for ch in text):
        return text
    return json.dumps(text, ensure_ascii=True)


def check_property_data(case: Case) -> None:
    """Every check that needs property data, in the order the loop is built."""
    data = component_data(case)
    _check_heat_capacities(case, data)
    t_reactor = case.reactor.temperature_c + KELVIN
    for i, spec in enumerate(case.reactions):
        path = f"reactions[{i}]"
        _check_element_balance(f"{path}.stoichiometry", spec.stoichiometry, data)
        formation_terms(spec, data)
        _check_gillespie_beattie(path, spec)
        _check_fugacity(path, spec, t_reactor, case.loop.pressure_bar)
        _check_rate_constants_at(path, spec, t_reactor)
        _check_bed_enthalpies(path, spec, data)
    condensate_vapour_ratio(case, data)
    separator_k_values(case, data)
    peng_robinson_data(case, data)
    letdown_release(case, data)
    peng_robinson_data(case, data)
    if case.separator.cooling is not None:
        latent_heats_kj_kmol(case, data, case.separator.temperature_c + KELVIN)


# ---------------------------------------------------------------------------
# components


def component_data(case: Case) -> dict[str, ComponentData]:
    """Property data of every declared component, case overrides first."""
    return {name: _one_component(name, spec) for name, spec in case.components.items()}


def _override(value: float | None, default: float | None) -> float | None:
    return value if value is not None else default


def _one_component(name: str, spec: ComponentSpec) -> ComponentData:
    ident = spec.identifier or name
    try:
        cas, formula, atoms, mw, lhv, hf, s0, cp, psat, hvap = lookup(ident)
    except LookupError:
        if spec.molar_mass_kg_kmol is None or spec.heat_capacity_j_mol_k is None:
            raise CaseError(f"components.{key_part(name)}",
                            f"unknown component {ident!r}: give identifier = a name, formula "
                            "or CAS number the property library knows, or give "
                            "molar_mass_kg_kmol and heat_capacity_j_mol_k") from None
        cas, formula, atoms, mw, lhv, hf, s0, cp, psat, hvap = ("", "", (), 0.0, 0.0, None,
                                                               None, None, None, None)
    if spec.heat_capacity_j_mol_k is not None:
        cp = (spec.heat_capacity_j_mol_k / thermo.R_J_MOL_K,)
    if cp is None:
        raise CaseError(f"components.{key_part(name)}.heat_capacity_j_mol_k",
                        "no ideal-gas heat capacity data for this component; give one")
    return ComponentData(
        name=name, cas=cas, formula=formula, atoms=atoms,
        molar_mass_kg_kmol=_override(spec.molar_mass_kg_kmol, mw),
        lhv_kj_mol=_override(spec.lower_heating_value_kj_mol, lhv),
        formation_enthalpy_kj_mol=_override(spec.formation_enthalpy_kj_mol, hf),
        standard_entropy_j_mol_k=_override(spec.standard_entropy_j_mol_k, s0),
        cp_coefficients=tuple(cp), vapour_pressure_coefficients=psat,
        vaporisation_enthalpy_coefficients=hvap)


def _check_heat_capacities(case: Case, data: Mapping[str, ComponentData]) -> None:
    """Cp above R wherever a gas is compressed, so its heat-capacity ratio exists.

    Every component can be in the recycle gas; a make-up source's components
    are compressed at that source's temperature.  A mixture's Cp is a
    mole-fraction average, so it is above R when each component's is.
    """
    at = [(c, case.compression.recycle_inlet_temperature_c) for c in data]
    for name in case.active_sources:
        src = case.sources[name]
        if src.enters == "makeup":
            at += [(c, src.temperature_c) for c, y in src.composition.items() if y > 0.0]
    r = thermo.R_J_MOL_K
    for c, t_c in at:
        cp = thermo.cp_ideal_gas_j_mol_k(data[c].cp_coefficients, t_c + KELVIN)
        if not cp > r:
            raise CaseError(f"components.{key_part(c)}.heat_capacity_j_mol_k",
                            f"ideal-gas heat capacity {cp:.6g} J/(mol K) at {t_c:g} degC is "
                            f"not above the gas constant {r:.6g} J/(mol K), so the gas has no "
                            "heat-capacity ratio; give heat_capacity_j_mol_k above it")


# ---------------------------------------------------------------------------
# reactions


def _check_element_balance(path: str, nu: Mapping[str, float],
                           data: Mapping[str, ComponentData]) -> None:
    if any(not data[c].atoms for c in nu):
        return  # a component defined only by overrides has no formula to check
    totals: dict[str, float] = {}
    for c, coeff in nu.items():
        for element, count in data[c].atoms:
            totals[element] = totals.get(element, 0.0) + coeff * count
    bad = {e: round(v, 9) for e, v in totals.items() if abs(v) > 1e-9}
    if bad:
        raise CaseError(path, f"reaction does not balance its elements: net {bad}")


def formation_terms(spec: ReactionSpec, data: Mapping[str, ComponentData]
                    ) -> tuple[float | None, float | None, tuple | None]:
    """Reaction enthalpy [J/mol] and entropy [J/(mol K)] at 298.15 K and the Cp/R polynomial
    of the reaction, from formation data; all None unless K comes from formation data."""
    eq = spec.equilibrium
    if eq is None or eq.constant != "formation_data":
        return None, None, None
    nu = spec.stoichiometry
    missing = [c for c in nu if data[c].formation_enthalpy_kj_mol is None
               or data[c].standard_entropy_j_mol_k is None]
    if missing:
        raise CaseError(f"components.{key_part(missing[0])}",
                        "formation data missing: give formation_enthalpy_kj_mol and "
                        "standard_entropy_j_mol_k")
    dh = 1000.0 * sum(v * data[c].formation_enthalpy_kj_mol for c, v in nu.items())
    ds = sum(v * data[c].standard_entropy_j_mol_k for c, v in nu.items())
    width = max(len(data[c].cp_coefficients) for c in nu)
    dcp = tuple(sum(v * (data[c].cp_coefficients + (0.0,) * width)[k] for c, v in nu.items())
                for k in range(width))
    return dh, ds, dcp


def _check_bed_enthalpies(path: str, spec: ReactionSpec,
                          data: Mapping[str, ComponentData]) -> None:
    """Adiabatic beds need the reaction enthalpy, from the reactants' and products'
    enthalpies of formation."""
    if spec.rate is None or spec.rate.bed_inlet_temperatures_c is None:
        return
    for c in spec.stoichiometry:
        if data[c].formation_enthalpy_kj_mol is None:
            raise CaseError(f"components.{key_part(c)}.formation_enthalpy_kj_mol",
                            f"needed by the adiabatic beds of {path}.rate "
                            "(their temperature rise): give it")


def _check_gillespie_beattie(path: str, spec: ReactionSpec) -> None:
    if spec.equilibrium is None or spec.equilibrium.constant != "ammonia_gillespie_beattie":
        return
    nu = spec.stoichiometry
    ratio = nu.get("NH3", 0.0)
    expected = {"N2": -0.5 * ratio, "H2": -1.5 * ratio, "NH3": ratio}
    if ratio <= 0 or set(nu) != set(expected) or any(
            abs(nu[c] - expected[c]) > 1e-12 for c in nu):
        raise CaseError(f"{path}.equilibrium.constant",
                        "ammonia_gillespie_beattie needs the reaction N2 + 3 H2 = 2 NH3 "
                        "(any multiple), with components named N2, H2 and NH3")


def _check_fugacity(path: str, spec: ReactionSpec, temperature_k: float,
                    pressure_bar: float) -> None:
    """The Dyson-Simon coefficients must be positive numbers at reactor conditions."""
    if spec.equilibrium is None or spec.equilibrium.fugacity != "dyson_simon":
        return
    try:
        phi = equilibrium.dyson_simon_fugacity_coefficients(
            temperature_k, pressure_bar / equilibrium.ATM_BAR)
    except OverflowError:
        phi = dict.fromkeys(("H2", "N2", "NH3"), math.inf)
    bad = [c for c in spec.stoichiometry if c in phi and not 0.0 < phi[c] < math.inf]
    if bad:
        raise CaseError(f"{path}.equilibrium.fugacity",
                        f"the Dyson-Simon correlation gives no usable fugacity coefficient "
                        f"for {', '.join(bad)} at {temperature_k - KELVIN:g} degC and "
                        f"{pressure_bar:g} bar; use fugacity = 'ideal'")


def _check_rate_constants_at(path: str, spec: ReactionSpec, temperature_k: float) -> None:
    """A rate constant and adsorption constants that are numbers at the reactor temperature.

    k0 exp(-E/RT) and K_j0 exp(-dH_j/RT) must lie within e^-300 to e^300 (about 1e-130 to
    1e130), so that with partial pressures to the powers the schema allows the rate's
    numerator stays a floating-point number (a denominator that overflows makes the rate
    zero and the bed infinite, which the loop reports).  Beyond that, most often, an
    energy in J/mol was given as kJ/mol.
    """
    rate = spec.rate
    if rate is None or rate.law == "temkin_pyzhev":
        return
    r_t = kinetics.R_KJ_MOL_K * temperature_k
    checks = [(f"{path}.rate.activation_energy_kj_mol", rate.pre_exponential_kmol_m3_h,
               rate.activation_energy_kj_mol, "rate constant k0 exp(-E/RT)")]
    checks += [(f"{path}.rate.adsorption[{j}].heat_of_adsorption_kj_mol", a.pre_exponential,
                a.heat_of_adsorption_kj_mol, "adsorption constant K0 exp(-dH/RT)")
               for j, a in enumerate(rate.adsorption or ())]
    for where, k0, energy, what in checks:
        ln_k = math.log(k0) - energy / r_t
        if not -300.0 < ln_k < 300.0:
            raise CaseError(where, f"the {what} is e^{ln_k:.4g} at the reactor's "
                            f"{temperature_k - KELVIN:g} degC, beyond e^300: check the "
                            "energy's unit (kJ/mol) and sign")


# ---------------------------------------------------------------------------
# separator


def _check_below_critical(case: Case, condensing: str, tc_k: float) -> None:
    """The separator must run below the critical temperature of the product it condenses."""
    t_sep_c = case.separator.temperature_c
    if t_sep_c >= tc_k - KELVIN:
        raise CaseError("separator.temperature_c",
                        f"{t_sep_c:g} degC is not below the critical temperature of "
                        f"{condensing!r} ({tc_k - KELVIN:.6g} degC): nothing condenses")


def condensate_vapour_ratio(case: Case, data: Mapping[str, ComponentData]
                            ) -> tuple[str | None, float]:
    """The condensing component (or None) and its moles per mole of other separator vapour."""
    split = case.separator.liquid_fraction
    condensing = next((c for c, v in split.items() if v == "condensation"), None)
    if condensing is None:
        return None, 0.0
    coefficients = data[condensing].vapour_pressure_coefficients
    if coefficients is None:
        raise CaseError(f"separator.liquid_fraction.{key_part(condensing)}",
                        f"no vapour pressure data for {condensing!r}, so it cannot condense: "
                        "give a split fraction, or an identifier the property library knows")
    _check_below_critical(case, condensing, coefficients[1])
    t_sep_c = case.separator.temperature_c
    loop = case.loop
    try:
        psat = data[condensing].vapour_pressure_bar(t_sep_c + KELVIN)
        ratio = separation.condensate_vapour_ratio(psat, loop.pressure_bar
                                                   - loop.pressure_drop_bar)
    except (ArithmeticError, ValueError) as exc:
        raise CaseError("separator.temperature_c", str(exc)) from None
    return condensing, ratio


def _stays_liquid(d: ComponentData, temperature_k: float, pressure_bar: float) -> bool:
    """Whether a component is a liquid at separator temperature and let-down pressure.

    Below its critical temperature with a vapour pressure under the let-down
    pressure; a component without vapour-pressure data counts as a dissolved gas.
    """
    coefficients = d.vapour_pressure_coefficients
    if coefficients is None or temperature_k >= coefficients[1]:
        return False
    try:
        return d.vapour_pressure_bar(temperature_k) < pressure_bar
    except (ArithmeticError, ValueError):
        return False


def letdown_release(case: Case, data: Mapping[str, ComponentData]) -> dict[str, float] | None:
    """Fraction of each component of the separator liquid released as let-down gas [-].

    None without a let-down.  The dissolved gases (components that would
    boil at separator temperature and let-down pressure) are released by
    Henry's law (:func:`purgeplan.physics.separation.dissolved_gas_released_fraction`);
    the product and the other liquids stay liquid.  The product must be a
    liquid at let-down pressure.
    """
    p_ld = case.separator.letdown_pressure_bar
    if p_ld is None:
        return None
    t_sep = case.separator.temperature_c + KELVIN
    product = case.loop.product
    d = data[product]
    if d.vapour_pressure_coefficients is not None and not _stays_liquid(d, t_sep, p_ld):
        raise CaseError("separator.letdown_pressure_bar",
                        f"{p_ld:g} bar is below the vapour pressure of the product {product!r} "
                        f"at separator temperature: the product would flash; let down to a "
                        "higher pressure")
    low = case.loop.pressure_bar - case.loop.pressure_drop_bar
    released = separation.dissolved_gas_released_fraction(p_ld, low)
    return {c: (0.0 if c == product or _stays_liquid(data[c], t_sep, p_ld) else released)
            for c in case.components}


# ---------------------------------------------------------------------------
# the gas model of the compressors


def peng_robinson_data(case: Case, data: Mapping[str, ComponentData]
                       ) -> PengRobinsonData | None:
    """Peng-Robinson parameters of the case's components; None for an ideal gas.

    Every component needs critical constants and an acentric factor, so one
    defined only by its overrides (no CAS number) cannot be compressed as a
    real gas.
    """
    if case.compression.gas_model != "peng_robinson":
        return None
    names = tuple(sorted(data))
    try:
        tc, pc, omega, kij = peng_robinson_parameters(tuple(data[c].cas for c in names))
    except LookupError as exc:
        name = next(c for c in names if data[c].cas == exc.args[0])
        raise CaseError("compression.gas_model",
                        f"no critical constants for component '{name}', which the "
                        "Peng-Robinson equation needs: give it an identifier the property "
                        "library knows, or set gas_model = \"ideal_gas\"") from None
    return PengRobinsonData(names, tc, pc, omega, kij)


def latent_heats_kj_kmol(case: Case, data: Mapping[str, ComponentData],
                         temperature_k: float) -> dict[str, float]:
    """Enthalpy of vaporisation of every component that leaves with the liquid [kJ/kmol].

    DIPPR equation 106 with Perry's coefficients (zero above the critical
    temperature: a dissolved gas, whose heat of solution is neglected).  The
    components that can condense are those with a liquid fraction above zero
    (split fractions) or a vapour pressure below their critical temperature
    (phase equilibrium: Raoult's law); the others dissolve, with 0.  A
    component that can condense without data is refused, so the cooling
    duty never leaves its condensing out.
    """
    if case.separator.split_model == "split_fractions":
        condensing = {c: f"separator.liquid_fraction.{key_part(c)}"
                      for c, split in case.separator.liquid_fraction.items() if split != 0.0}
    else:
        condensing = {c: f"components.{key_part(c)}" for c in case.components
                      if data[c].vapour_pressure_coefficients is not None
                      and temperature_k < data[c].vapour_pressure_coefficients[1]}
    out = {}
    for c, where in condensing.items():
        h = data[c].vaporisation_enthalpy_j_mol(temperature_k)
        if h is None:
            raise CaseError(where, f"no enthalpy of vaporisation data for {c!r}, so "
                            "separator.cooling cannot count the heat of its condensing: give "
                            "an identifier the property library knows, or leave "
                            "separator.cooling out")
        out[c] = h
    return {c: out.get(c, 0.0) for c in case.components}


# ---------------------------------------------------------------------------
# the phase-equilibrium separator

#: CAS numbers of the liquid and the gases of :data:`separation.HENRY_IN_AMMONIA`.
AMMONIA_CAS = "7664-41-7"
GAS_CAS = {"1333-74-0": "H2", "7727-37-9": "N2", "7440-37-1": "Ar", "74-82-8": "CH4"}


def _separator_conditions(case: Case) -> tuple[float, float]:
    """Separator temperature [K] and pressure [bar]: loop pressure less the pressure drop."""
    return (case.separator.temperature_c + KELVIN,
            case.loop.pressure_bar - case.loop.pressure_drop_bar)


def _builtin_henry_bar(case: Case, data: Mapping[str, ComponentData], c: str,
                       temperature_k: float) -> float | None:
    """Henry constant of a gas in liquid ammonia from the built-in table, if it has one."""
    if data[case.loop.product].cas != AMMONIA_CAS or data[c].cas not in GAS_CAS:
        return None
    return separation.henry_constant_bar(*separation.HENRY_IN_AMMONIA[GAS_CAS[data[c].cas]],
                                         temperature_k)


def raoult_k(d: ComponentData, temperature_k: float, pressure_bar: float) -> float | None:
    """K of a component that condenses (below its critical temperature) in an ideal liquid
    solution, else None [-].

    Raoult's law with the Poynting factor of the Rackett liquid volume
    (:func:`purgeplan.physics.separation.raoult_k_value` with gamma = 1); the
    separator's activity coefficients multiply it
    (:func:`purgeplan.coefficients.separator_activity_coefficients`).
    """
    coefficients = d.vapour_pressure_coefficients
    if coefficients is None or temperature_k >= coefficients[1]:
        return None
    psat = d.vapour_pressure_bar(temperature_k)
    volume = separation.rackett_liquid_volume_m3_mol(
        temperature_k, coefficients[1], coefficients[2] / 1e5,
        separation.acentric_factor(d.vapour_pressure_bar(0.7 * coefficients[1]),
                                   coefficients[2] / 1e5))
    poynting = separation.poynting_factor(volume, pressure_bar, psat, temperature_k)
    return separation.raoult_k_value(psat, pressure_bar, poynting)


def separator_k_values(case: Case, data: Mapping[str, ComponentData]) -> dict[str, float] | None:
    """K = y/x of every component in a Henry-Raoult separator [-]; None for another model.

    A gas with a Henry constant (the case's, else the built-in one for gases in
    liquid ammonia) dissolves by Henry's law; any other component below its
    critical temperature condenses by Raoult's law (ideal liquid solution,
    Poynting-corrected).  The product must condense.
    """
    sep = case.separator
    if sep.split_model != "henry_raoult":
        return None
    t, p = _separator_conditions(case)
    product = case.loop.product
    coefficients = data[product].vapour_pressure_coefficients
    if product not in sep.henry_constant_bar and coefficients is not None:
        _check_below_critical(case, product, coefficients[1])
    out = {}
    for c in case.components:
        henry = sep.henry_constant_bar.get(c) or _builtin_henry_bar(case, data, c, t)
        if henry is not None:
            out[c] = separation.henry_k_value(henry, p)
            continue
        try:
            k = raoult_k(data[c], t, p)
        except (ArithmeticError, ValueError) as exc:
            raise CaseError("separator.temperature_c", str(exc)) from None
        if k is None:
            raise CaseError(f"separator.henry_constant_bar.{key_part(c)}",
                            f"{c!r} does not condense at {sep.temperature_c:g} degC and no "
                            "Henry constant is known for it in this liquid: give its Henry "
                            "constant at separator temperature [bar]")
        out[c] = k
    if not out[product] < 1.0:
        raise CaseError("separator.temperature_c",
                        f"the product {product!r} does not condense at {sep.temperature_c:g} "
                        f"degC and {p:g} bar (K = {out[product]:.3g}): cool the separator")
    return out


def separator_activity_data(case: Case, data: Mapping[str, ComponentData]) -> tuple | None:
    """The condensing components of a Henry-Raoult separator and their UNIFAC groups.

    ``(names, groups)``, names in the loop's (sorted) order, when more than one
    component condenses (those without a Henry constant) and the property
    library has original-UNIFAC groups for each
    (:func:`purgeplan.properties.unifac_groups`); their activity coefficients
    then enter Raoult's law.  None otherwise: for another model, for one
    condensing component (its liquid is nearly pure, gamma = 1, as ammonia with
    its dissolved gases), or when a condensing component has no groups (the
    liquid is then taken as an ideal solution).
    """
    sep = case.separator
    if sep.split_model != "henry_raoult":
        return None
    t, _ = _separator_conditions(case)
    names = tuple(c for c in sorted(case.components)
                  if not (sep.henry_constant_bar.get(c) or _builtin_henry_bar(case, data, c, t)))
    if len(names) < 2:
        return None
    groups = tuple(unifac_groups(data[c].cas) for c in names)
    if any(g is None for g in groups):
        return None
    return names, groups


def separator_peng_robinson_data(case: Case, data: Mapping[str, ComponentData]
                                 ) -> tuple | None:
    """Critical constants, acentric factors and stored kij for a Peng-Robinson separator.

    ``(Tc [K], Pc [Pa], omega, kij)`` in the loop's (sorted) component order,
    the same parameters the compressors' gas model uses
    (:func:`purgeplan.properties.peng_robinson_parameters`); None for another model.
    """
    if case.separator.split_model != "peng_robinson":
        return None
    names = tuple(sorted(case.components))  # the order of Loop.components
    try:
        constants = peng_robinson_parameters(tuple(data[c].cas for c in names))
    except LookupError as exc:
        name = next(c for c in names if data[c].cas == exc.args[0])
        raise CaseError(f"components.{key_part(name)}.identifier",
                        "model = 'peng_robinson' needs the critical constants and acentric "
                        "factor of every component: give an identifier the property "
                        "library knows, or use model = 'henry_raoult'") from None
    _check_below_critical(case, case.loop.product, constants[0][names.index(case.loop.product)])
    return constants
