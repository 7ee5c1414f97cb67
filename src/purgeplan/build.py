"""Building the loop's plain data (:mod:`purgeplan.loop`) from a validated case, one
alternative at a time: property data resolved, sources, separator, recovery
unit and prices gathered, and the fixed equilibrium terms evaluated at the
reactor's temperature and pressure.

Building finds no fault in the case: every check, those that need property
data included (:mod:`purgeplan.case_checks`), ran when the case was
validated, so a validated case always builds.
"""

from __future__ import annotations

import dataclasses
from collections.abc import Mapping

from .case import CARNOT_FRACTION, CapitalItem, Case, cooling_temperatures_k, stoichiometric_ratio
from .case_checks import (
    component_data,
    condensate_vapour_ratio,
    formation_terms,
    latent_heats_kj_kmol,
    letdown_release,
    peng_robinson_data,
    separator_activity_data,
    separator_k_values,
    separator_peng_robinson_data,
)
from .coefficients import equilibrium_rhs, gas_compressibility, mixture_heat_capacity_ratio
from .loop import KELVIN, Capital, Cooling, InletRatio, Loop, Prices, Reaction, Source
from .physics import compression, economics, refrigeration, separation, thermo
from .physics.equilibrium import ATM_BAR
from .physics.real_gas import PengRobinsonData
from .physics.thermo import R_J_MOL_K
from .properties import ComponentData


def _reaction(spec, data: Mapping[str, ComponentData]) -> Reaction:
    eq = spec.equilibrium
    dh, ds, dcp = formation_terms(spec, data)
    return Reaction(
        name=spec.name, stoichiometry=dict(spec.stoichiometry), key_reactant=spec.key_reactant,
        per_pass=spec.per_pass, per_pass_conversion=spec.per_pass_conversion,
        approach_to_equilibrium=spec.approach_to_equilibrium,
        equilibrium_method=eq.constant if eq else None,
        fugacity=eq.fugacity if eq else "ideal",
        fugacity_correction_factor=eq.fugacity_correction_factor if eq else 1.0,
        delta_h_298_j_mol=dh, delta_s_298_j_mol_k=ds, delta_cp_coefficients=dcp,
        sizing=spec.sizing.model_dump() if spec.sizing else None,
        rate=spec.rate.model_dump() if spec.rate is not None else None)


def _with_equilibrium_rhs(r: Reaction, temperature_k: float, pressure_bar: float) -> Reaction:
    if r.equilibrium_method is None:
        return r
    return dataclasses.replace(r, equilibrium_rhs=equilibrium_rhs(r, temperature_k, pressure_bar))


def _capital(item: CapitalItem | None) -> Capital | None:
    if item is None:
        return None
    return Capital(item.reference_cost, item.reference_size, item.exponent)


def reactor_pressure_factor(case: Case) -> float:
    """Vessel pressure factor at loop pressure over that at the capital reference pressure [-].

    1 without a vessel diameter in the case (Turton et al. eq. 7.10, see
    :func:`purgeplan.physics.economics.vessel_pressure_factor`; gauge pressure
    from absolute with the standard atmosphere, 1.01325 bar).
    """
    r = case.reactor
    if r.vessel_diameter_m is None:
        return 1.0
    factor = economics.vessel_pressure_factor
    return (factor(case.loop.pressure_bar - ATM_BAR, r.vessel_diameter_m)
            / factor(r.capital_reference_pressure_bar - ATM_BAR, r.vessel_diameter_m))


def _source(case: Case, name: str, data: Mapping[str, ComponentData],
            real_gas: PengRobinsonData | None) -> Source:
    """One source with its work per kmol from supply to loop pressure.

    Gas is compressed in the make-up compressor's stages (make-up gas and
    direct feeds alike), as a real gas where ``real_gas`` gives its
    equation of state; a liquid is pumped (reversible work v dP).
    """
    s = case.sources[name]
    loop_p = case.loop.pressure_bar
    t = s.temperature_c + KELVIN
    work = 0.0
    if loop_p > s.supply_pressure_bar and s.phase == "gas":
        gamma = mixture_heat_capacity_ratio(s.composition, data, t)
        work = compression.isentropic_work_kj_kmol(
            t, loop_p / s.supply_pressure_bar, gamma, case.compression.makeup_stages,
            s.supply_pressure_bar, gas_compressibility(real_gas, s.composition))
    elif loop_p > s.supply_pressure_bar:
        mw = sum(y * data[c].molar_mass_kg_kmol for c, y in s.composition.items())
        work = compression.pump_work_kj_kmol(mw, s.liquid_density_kg_m3,
                                             loop_p - s.supply_pressure_bar)
    return Source(name, {c: s.composition.get(c, 0.0) for c in sorted(case.components)},
                  s.supply_limit_kmol_h, s.enters, work, s.temperature_c, s.phase)


def _recompression(case: Case, sources: list[Source], data: Mapping[str, ComponentData],
                   real_gas: PengRobinsonData | None) -> tuple[str, float]:
    """How the recovery return is recompressed to loop pressure, and its work [kJ/kmol].

    The work is isentropic, with the heat-capacity ratio of the gas the unit
    returns from the make-up gas's composition (the mean of the make-up
    sources, each counted once; the return's composition
    from the loop gas varies with the state; the ratio barely does, since the
    return is mostly the reactant the unit recovers).  Through the make-up
    compressor, the return joins at the stage whose suction suits it (stage
    inlets at the temperature of the make-up gas); through a compressor of
    its own, in ``recompression_stages`` intercooled stages from the recycle
    compressor's inlet temperature.  A real gas (``real_gas`` given) at the
    compressibility of that composition.  ("none", 0) without a return pressure.
    """
    rec = case.purge.recovery
    if rec == "none" or case.recovery_units[rec].return_pressure_bar is None:
        return "none", 0.0
    unit = case.recovery_units[rec]
    loop_p, p_ret = case.loop.pressure_bar, unit.return_pressure_bar
    makeup = [s for s in sources if s.enters == "makeup"]
    mean = {c: sum(s.composition[c] for s in makeup) / len(makeup) for c in makeup[0].composition}
    gas = {c: y * unit.return_fraction.get(c, 0.0) for c, y in mean.items()}
    if sum(gas.values()) <= 0.0:
        gas = mean
    gas = {c: y for c, y in gas.items() if y > 0.0}
    z = gas_compressibility(real_gas, gas)
    if unit.recompression == "makeup_compressor":
        first = min(makeup, key=lambda s: case.sources[s.name].supply_pressure_bar)
        t = first.temperature_c + KELVIN
        gamma = mixture_heat_capacity_ratio(gas, data, t)
        work = compression.side_stream_work_kj_kmol(
            t, case.sources[first.name].supply_pressure_bar, loop_p,
            case.compression.makeup_stages, p_ret, gamma, z)
    else:
        t = case.compression.recycle_inlet_temperature_c + KELVIN
        gamma = mixture_heat_capacity_ratio(gas, data, t)
        work = compression.isentropic_work_kj_kmol(t, loop_p / p_ret, gamma,
                                                   unit.recompression_stages, p_ret, z)
    return unit.recompression, work


def _ratio(case: Case, spec) -> InletRatio:
    return InletRatio(spec.name, dict(spec.numerator), dict(spec.denominator), spec.min_ratio,
                      spec.max_ratio, stoichiometric_ratio(case, spec))


def _inventory_kmol(case: Case) -> float | None:
    """Loop gas inventory [kmol]; a volume is taken at loop pressure and separator
    temperature as an ideal gas (n = P V / R T)."""
    loop = case.loop
    if loop.gas_inventory_kmol is not None:
        return loop.gas_inventory_kmol
    if loop.gas_inventory_m3 is None:
        return None
    t = case.separator.temperature_c + KELVIN
    return loop.pressure_bar * 1e5 * loop.gas_inventory_m3 / (R_J_MOL_K * t) / 1000.0


def _enthalpy_drops_kj_kmol(data: Mapping[str, ComponentData], t_hot_k: float,
                            t_cold_k: float) -> dict[str, float]:
    """Ideal-gas h(t_hot) - h(t_cold) of each component [kJ/kmol] (the Poling Cp polynomial)."""
    return {c: thermo.cp_enthalpy_integral_j_mol(d.cp_coefficients, t_cold_k, t_hot_k)
            for c, d in sorted(data.items())}


def _water_vapour_ratio(case: Case, d: ComponentData, temperature_k: float) -> float | None:
    """The condensing product's moles per mole of other vapour at the water cooler's outlet.

    Raoult's law at separator pressure, as in the separator
    (:func:`purgeplan.physics.separation.condensate_vapour_ratio`); None at or
    above its critical temperature or vapour pressure, where nothing condenses.
    """
    p = case.loop.pressure_bar - case.loop.pressure_drop_bar
    if temperature_k >= d.vapour_pressure_coefficients[1]:
        return None
    psat = d.vapour_pressure_bar(temperature_k)
    return separation.condensate_vapour_ratio(psat, p) if psat < p else None


def _cooling(case: Case, data: Mapping[str, ComponentData], condensing: str | None
             ) -> Cooling | None:
    """The separator's cooling duties per kmol and its refrigeration performance.

    None without ``separator.cooling``.  The coefficient of performance is the
    case's, or its fraction of Carnot's (0.55 unless given, common practice)
    between the evaporator and condenser temperatures of
    :func:`purgeplan.case.cooling_temperatures_k`.
    """
    spec = case.separator.cooling
    if spec is None:
        return None
    t_reactor = case.reactor.temperature_c + KELVIN
    t_sep = case.separator.temperature_c + KELVIN
    t_water, t_evap, t_cond = cooling_temperatures_k(case)
    refrigerated = t_water > t_sep
    cop = spec.coefficient_of_performance
    if cop is None:
        fraction = spec.carnot_fraction if spec.carnot_fraction is not None else CARNOT_FRACTION
        cop = fraction * refrigeration.carnot_cop(t_evap, t_cond) if refrigerated else 0.0
    ratio, latent_water = None, 0.0
    if refrigerated and condensing is not None:
        ratio = _water_vapour_ratio(case, data[condensing], t_water)
        latent_water = latent_heats_kj_kmol(case, data, t_water)[condensing]
    return Cooling(
        water_outlet_temperature_k=t_water,
        sensible_kj_kmol=_enthalpy_drops_kj_kmol(data, t_reactor, t_sep),
        latent_kj_kmol=latent_heats_kj_kmol(case, data, t_sep),
        water_sensible_kj_kmol=_enthalpy_drops_kj_kmol(data, t_reactor, t_water),
        water_latent_kj_kmol=latent_water, water_vapour_ratio=ratio,
        refrigerated=refrigerated, coefficient_of_performance=cop)


def build_loop(case: Case, name: str = "") -> Loop:
    """Plain loop data from a validated case (one alternative)."""
    data = component_data(case)
    comps = tuple(sorted(case.components))
    t_reactor = case.reactor.temperature_c + KELVIN
    reactions = tuple(_with_equilibrium_rhs(_reaction(r, data), t_reactor,
                                            case.loop.pressure_bar)
                      for r in case.reactions)
    reacting = {c for r in reactions for c in r.stoichiometry}
    inerts = tuple(c for c in comps if c not in reacting)
    loop_p = case.loop.pressure_bar
    comp_spec = case.compression

    real_gas = peng_robinson_data(case, data)
    sources = [_source(case, sname, data, real_gas) for sname in case.active_sources]

    split = case.separator.liquid_fraction
    condensing, ratio = condensate_vapour_ratio(case, data)
    liquid = {c: float(split.get(c, 0.0)) for c in comps if c != condensing}

    recovery = None
    recovery_capital = None
    recovery_opex = 0.0
    unit = None
    if case.purge.recovery != "none":
        unit = case.recovery_units[case.purge.recovery]
        recovery = {c: unit.return_fraction.get(c, 0.0) for c in comps}
        recovery_capital = _capital(unit.capital)
        recovery_opex = unit.operating_cost_per_kmol
    recompression, recompression_work = _recompression(case, sources, data, real_gas)
    export = ({c: unit.export_fraction.get(c, 0.0) for c in comps}
              if unit is not None and any(x > 0 for x in unit.export_fraction.values()) else None)
    release = letdown_release(case, data)

    econ, cooling = case.economics, case.separator.cooling
    prices = Prices(
        currency=econ.currency, hours_per_year=econ.hours_per_year,
        discount_rate=econ.discount_rate, life_years=econ.life_years,
        cost_index_ratio=econ.cost_index_ratio, power_price_per_kwh=econ.power_price_per_kwh,
        fuel_price_per_gj=econ.fuel_price_per_gj, flare_cost_per_kmol=econ.flare_cost_per_kmol,
        product_price_per_t=econ.product_price_per_t,
        catalyst_price_per_m3=econ.catalyst_price_per_m3,
        catalyst_life_years=econ.catalyst_life_years,
        compressor_capital=_capital(econ.compressor_capital),
        reactor_capital=_capital(econ.reactor_capital),
        recovery_capital=recovery_capital, recovery_operating_cost_per_kmol=recovery_opex,
        source_price_per_kmol={s: case.sources[s].price_per_kmol for s in case.active_sources},
        recovery_export_price_per_kmol=unit.export_price_per_kmol if export else 0.0,
        co2_price_per_t=econ.co2_price_per_t, reactor_pressure_factor=reactor_pressure_factor(case),
        cooling_water_price_per_gj=cooling.water_price_per_gj if cooling else 0.0,
        refrigeration_capital=_capital(cooling.refrigeration_capital) if cooling else None)

    product = case.loop.product
    mw = data[product].molar_mass_kg_kmol
    production = (case.loop.production_t_d * 1000.0 / 24.0 / mw
                  if case.loop.production_t_d is not None else None)
    streams = ["makeup"]
    if any(s.enters == "reactor_feed" for s in sources):
        streams.append("direct_feed")
    streams += ["reactor_feed", "reactor_outlet", "liquid_product", "separator_vapour",
                "purge", "recycle"]
    if recovery is not None:
        streams += ["recovery_return", "recovery_tail_gas"]
    if export is not None:
        streams.append("recovery_export")
    if release is not None:
        streams += ["letdown_gas", "letdown_liquid"]
    return Loop(
        name=name or case.case.name, components=comps, data=data, inerts=inerts,
        reactions=reactions, sources=tuple(sources), liquid_fraction=liquid,
        condensing=condensing, condensate_vapour_ratio=ratio,
        recovery_return_fraction=recovery, recovery_name=case.purge.recovery,
        destination=case.purge.destination, basis=case.loop.basis, product=product,
        production_kmol_h=production, makeup_kmol_h=case.loop.makeup_kmol_h,
        inlet_ratios=tuple((r.numerator, r.denominator, r.value)
                           for r in case.loop.inlet_ratios),
        pressure_bar=loop_p, pressure_drop_bar=case.loop.pressure_drop_bar,
        reactor_temperature_k=t_reactor,
        separator_temperature_k=case.separator.temperature_c + KELVIN,
        space_velocity_per_h=case.reactor.space_velocity_per_h,
        recycle_inlet_temperature_k=comp_spec.recycle_inlet_temperature_c + KELVIN,
        recycle_efficiency=comp_spec.recycle_efficiency,
        makeup_efficiency=comp_spec.makeup_efficiency, makeup_stages=comp_spec.makeup_stages,
        purge_fraction=case.loop.purge_fraction,
        purge_fraction_min=case.loop.purge_fraction_min,
        purge_fraction_max=case.loop.purge_fraction_max,
        max_inert_fraction_reactor_inlet=case.loop.max_inert_fraction_reactor_inlet,
        max_recycle_power_kw=case.loop.max_recycle_power_kw, prices=prices,
        streams=tuple(streams),
        fuel_capacity_gj_h=(case.purge.fuel_capacity_gj_h if case.purge.destination == "fuel"
                            else None),
        compressor_arrangement=comp_spec.arrangement,
        recovery_export_fraction=export, recovery_recompression=recompression,
        recovery_recompression_work_kj_kmol=recompression_work,
        recovery_return_pressure_bar=unit.return_pressure_bar if unit is not None else None,
        letdown_release_fraction=release,
        letdown_pressure_bar=case.separator.letdown_pressure_bar,
        letdown_destination=case.separator.letdown_destination,
        ratios=tuple(_ratio(case, r) for r in case.loop.inlet_ratio_limits),
        gas_inventory_kmol=_inventory_kmol(case), pump_efficiency=comp_spec.pump_efficiency,
        peng_robinson=real_gas,
        cooling=_cooling(case, data, condensing),
        separator_model=case.separator.split_model,
        separator_k_values=separator_k_values(case, data),
        separator_peng_robinson=separator_peng_robinson_data(case, data),
        separator_activity=separator_activity_data(case, data))
