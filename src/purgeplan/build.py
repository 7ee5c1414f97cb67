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

from .case import CapitalItem, Case
from .case_checks import component_data, condensate_vapour_ratio, formation_terms
from .coefficients import equilibrium_rhs, mixture_heat_capacity_ratio
from .loop import KELVIN, Capital, Loop, Prices, Reaction, Source
from .physics import compression
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
        sizing=spec.sizing.model_dump() if spec.sizing else None)


def _with_equilibrium_rhs(r: Reaction, temperature_k: float, pressure_bar: float) -> Reaction:
    if r.equilibrium_method is None:
        return r
    return dataclasses.replace(r, equilibrium_rhs=equilibrium_rhs(r, temperature_k, pressure_bar))


def _capital(item: CapitalItem | None) -> Capital | None:
    if item is None:
        return None
    return Capital(item.reference_cost, item.reference_size, item.exponent)


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

    sources = []
    for sname in case.active_sources:
        s = case.sources[sname]
        work = 0.0
        if s.enters == "makeup" and loop_p > s.supply_pressure_bar:
            gamma = mixture_heat_capacity_ratio(s.composition, data, s.temperature_c + KELVIN)
            work = compression.isentropic_work_kj_kmol(
                s.temperature_c + KELVIN, loop_p / s.supply_pressure_bar, gamma,
                comp_spec.makeup_stages)
        sources.append(Source(sname, {c: s.composition.get(c, 0.0) for c in comps},
                              s.supply_limit_kmol_h, s.enters, work, s.temperature_c))

    split = case.separator.liquid_fraction
    condensing, ratio = condensate_vapour_ratio(case, data)
    liquid = {c: float(split.get(c, 0.0)) for c in comps if c != condensing}

    recovery = None
    recovery_capital = None
    recovery_opex = 0.0
    if case.purge.recovery != "none":
        unit = case.recovery_units[case.purge.recovery]
        recovery = {c: unit.return_fraction.get(c, 0.0) for c in comps}
        recovery_capital = _capital(unit.capital)
        recovery_opex = unit.operating_cost_per_kmol

    econ = case.economics
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
        source_price_per_kmol={s: case.sources[s].price_per_kmol for s in case.active_sources})

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
        streams=tuple(streams))
