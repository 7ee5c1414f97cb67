"""The loop: plain data built from a validated case, and its equations stated once.

The equation families below are written once, over any algebra that supports
``+``, ``-`` and ``*``: the Pyomo model (:mod:`purgeplan.model`) applies them to
Pyomo variables, and the direct steady-state solver (:mod:`purgeplan.engine`)
applies them to linear forms to obtain the same equations as a matrix.  Each
family returns ``(index, residual)`` pairs; every residual must equal zero.

Streams (kmol/h per component): ``makeup`` (fresh make-up gas bought),
``liquid_feed`` (feeds that enter the reactor directly, if any),
``reactor_feed`` = makeup + liquid_feed + recycle (+ ``recovery_return``),
``reactor_outlet``, ``liquid_product``, ``separator_vapour``, ``purge`` = a
separator_vapour, ``recycle`` = (1 - a) separator_vapour, and with a recovery
unit ``recovery_return`` (back to the make-up) and ``recovery_tail_gas``.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Mapping
from dataclasses import dataclass, field

from .case import CapitalItem, Case
from .errors import CaseError
from .physics import compression, reactor, separation, thermo
from .physics.equilibrium import ATM_BAR, log10_ka_ammonia_gillespie_beattie
from .properties import ComponentData, lookup

KELVIN = 273.15

# ---------------------------------------------------------------------------
# plain data


@dataclass(frozen=True)
class Reaction:
    name: str
    stoichiometry: dict[str, float]
    key_reactant: str
    per_pass: str                      # "fixed" | "equilibrium" | "sized"
    per_pass_conversion: float | None
    approach_to_equilibrium: float | None
    equilibrium_constant: str | None   # "ammonia_gillespie_beattie" | "formation_data"
    fugacity: str
    fugacity_correction_factor: float
    delta_h_298_j_mol: float | None
    delta_s_298_j_mol_k: float | None
    delta_cp_coefficients: tuple | None
    sizing: dict | None

    @property
    def key_coefficient(self) -> float:
        return -self.stoichiometry[self.key_reactant]


@dataclass(frozen=True)
class Source:
    name: str
    composition: dict[str, float]
    price_per_kmol: float
    supply_limit_kmol_h: float | None
    enters: str                         # "makeup" | "reactor_feed"
    compression_work_kj_kmol: float     # isentropic, supply to loop pressure
    temperature_c: float


@dataclass(frozen=True)
class Capital:
    reference_cost: float
    reference_size: float
    exponent: float


@dataclass(frozen=True)
class Prices:
    """Prices and economic inputs; every field is a sensitivity lever."""

    currency: str
    hours_per_year: float
    discount_rate: float
    life_years: float
    cost_index_ratio: float
    power_price_per_kwh: float
    fuel_price_per_gj: float
    flare_cost_per_kmol: float
    product_price_per_t: float
    catalyst_price_per_m3: float
    catalyst_life_years: float
    compressor_capital: Capital
    reactor_capital: Capital
    recovery_capital: Capital | None
    recovery_operating_cost_per_kmol: float
    source_price_per_kmol: dict[str, float]


@dataclass(frozen=True)
class Loop:
    """Everything the engine and the model need, as plain picklable data."""

    name: str
    components: tuple[str, ...]
    data: dict[str, ComponentData]
    inerts: tuple[str, ...]
    reactions: tuple[Reaction, ...]
    sources: tuple[Source, ...]
    liquid_fraction: dict[str, float]
    condensing: str | None
    condensate_vapour_ratio: float
    recovery_return_fraction: dict[str, float] | None
    recovery_name: str
    destination: str
    basis: str
    product: str
    production_kmol_h: float | None
    makeup_kmol_h: float | None
    inlet_ratios: tuple[tuple[str, str, float], ...]
    pressure_bar: float
    pressure_drop_bar: float
    reactor_temperature_k: float
    separator_temperature_k: float
    space_velocity_per_h: float
    recycle_inlet_temperature_k: float
    recycle_efficiency: float
    makeup_efficiency: float
    makeup_stages: int
    purge_fraction: float
    purge_fraction_min: float
    purge_fraction_max: float
    max_inert_fraction_reactor_inlet: float | None
    max_recycle_power_kw: float | None
    prices: Prices
    streams: tuple[str, ...] = field(default=())

    @property
    def makeup_sources(self) -> tuple[Source, ...]:
        return tuple(s for s in self.sources if s.enters == "makeup")

    @property
    def disposal_stream(self) -> str:
        return "recovery_tail_gas" if self.recovery_return_fraction is not None else "purge"

    @property
    def sized_reaction(self) -> int | None:
        return next((i for i, r in enumerate(self.reactions) if r.per_pass == "sized"), None)

    @property
    def product_molar_mass(self) -> float:
        return self.data[self.product].molar_mass_kg_kmol


# ---------------------------------------------------------------------------
# building the loop from a case


def resolve_components(case: Case) -> dict[str, ComponentData]:
    """Property data for every declared component, case overrides first."""
    out = {}
    for name, spec in case.components.items():
        ident = spec.identifier or name
        try:
            cas, formula, atoms, mw, lhv, hf, s0, cp, psat = lookup(ident)
        except LookupError:
            if spec.molar_mass_kg_kmol is None or spec.heat_capacity_j_mol_k is None:
                raise CaseError(f"components.{name}",
                                f"unknown component '{ident}': give identifier = a name, "
                                "formula or CAS number the property library knows, or give "
                                "molar_mass_kg_kmol and heat_capacity_j_mol_k") from None
            cas, formula, atoms, mw, lhv, hf, s0, cp, psat = ("", "", (), 0.0, 0.0, None, None,
                                                             None, None)
        if spec.heat_capacity_j_mol_k is not None:
            cp = (spec.heat_capacity_j_mol_k / thermo.R_J_MOL_K,)
        if cp is None:
            raise CaseError(f"components.{name}.heat_capacity_j_mol_k",
                            "no ideal-gas heat capacity data for this component; give one")
        out[name] = ComponentData(
            name=name, cas=cas, formula=formula, atoms=atoms,
            molar_mass_kg_kmol=spec.molar_mass_kg_kmol or mw,
            lhv_kj_mol=(spec.lower_heating_value_kj_mol
                        if spec.lower_heating_value_kj_mol is not None else lhv),
            formation_enthalpy_kj_mol=(spec.formation_enthalpy_kj_mol
                                       if spec.formation_enthalpy_kj_mol is not None else hf),
            standard_entropy_j_mol_k=(spec.standard_entropy_j_mol_k
                                      if spec.standard_entropy_j_mol_k is not None else s0),
            cp_coefficients=tuple(cp), vapour_pressure_coefficients=psat)
    return out


def _element_balance(path: str, nu: Mapping[str, float], data: Mapping[str, ComponentData]):
    if any(not data[c].atoms for c in nu):
        return  # a component defined only by overrides has no formula to check
    totals: dict[str, float] = {}
    for c, coeff in nu.items():
        for element, count in data[c].atoms:
            totals[element] = totals.get(element, 0.0) + coeff * count
    bad = {e: round(v, 9) for e, v in totals.items() if abs(v) > 1e-9}
    if bad:
        raise CaseError(path, f"reaction does not balance its elements: net {bad}")


def _reaction(i: int, spec, data: Mapping[str, ComponentData]) -> Reaction:
    path = f"reactions[{i}]"
    nu = dict(spec.stoichiometry)
    _element_balance(f"{path}.stoichiometry", nu, data)
    eq = spec.equilibrium
    dh = ds = dcp = None
    if eq is not None and eq.constant == "formation_data":
        missing = [c for c in nu if data[c].formation_enthalpy_kj_mol is None
                   or data[c].standard_entropy_j_mol_k is None]
        if missing:
            raise CaseError(f"components.{missing[0]}",
                            "formation data missing: give formation_enthalpy_kj_mol and "
                            "standard_entropy_j_mol_k")
        dh = 1000.0 * sum(v * data[c].formation_enthalpy_kj_mol for c, v in nu.items())
        ds = sum(v * data[c].standard_entropy_j_mol_k for c, v in nu.items())
        width = max(len(data[c].cp_coefficients) for c in nu)
        dcp = tuple(sum(v * (data[c].cp_coefficients + (0.0,) * width)[k] for c, v in nu.items())
                    for k in range(width))
    if eq is not None and eq.constant == "ammonia_gillespie_beattie":
        ratio = nu.get("NH3", 0.0)
        expected = {"N2": -0.5 * ratio, "H2": -1.5 * ratio, "NH3": ratio}
        if ratio <= 0 or set(nu) != set(expected) or any(
                abs(nu[c] - expected[c]) > 1e-12 for c in nu):
            raise CaseError(f"{path}.equilibrium.constant",
                            "ammonia_gillespie_beattie needs the reaction N2 + 3 H2 = 2 NH3 "
                            "(any multiple), with components named N2, H2 and NH3")
    return Reaction(
        name=spec.name, stoichiometry=nu, key_reactant=spec.key_reactant,
        per_pass=spec.per_pass, per_pass_conversion=spec.per_pass_conversion,
        approach_to_equilibrium=spec.approach_to_equilibrium,
        equilibrium_constant=eq.constant if eq else None,
        fugacity=eq.fugacity if eq else "ideal",
        fugacity_correction_factor=eq.fugacity_correction_factor if eq else 1.0,
        delta_h_298_j_mol=dh, delta_s_298_j_mol_k=ds, delta_cp_coefficients=dcp,
        sizing=spec.sizing.model_dump() if spec.sizing else None)


def mixture_heat_capacity_ratio(composition: Mapping[str, float],
                                data: Mapping[str, ComponentData], temperature_k: float) -> float:
    """Ideal-gas gamma of a mixture from mole-fraction-weighted Cp [-]."""
    total = sum(composition.values())
    cp = sum(y * thermo.cp_ideal_gas_j_mol_k(data[c].cp_coefficients, temperature_k)
             for c, y in composition.items()) / total
    return thermo.heat_capacity_ratio(cp)


def _capital(item: CapitalItem | None) -> Capital | None:
    if item is None:
        return None
    return Capital(item.reference_cost, item.reference_size, item.exponent)


def build_loop(case: Case, name: str = "") -> Loop:
    """Plain loop data from a validated case (one alternative)."""
    data = resolve_components(case)
    comps = tuple(sorted(case.components))
    reactions = tuple(_reaction(i, r, data) for i, r in enumerate(case.reactions))
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
                              s.price_per_kmol, s.supply_limit_kmol_h, s.enters, work,
                              s.temperature_c))

    split = case.separator.liquid_fraction
    condensing = next((c for c, v in split.items() if v == "condensation"), None)
    ratio = 0.0
    if condensing is not None:
        t_sep = case.separator.temperature_c + KELVIN
        try:
            psat = data[condensing].vapour_pressure_bar(t_sep)
            ratio = separation.condensate_vapour_ratio(psat, loop_p - case.loop.pressure_drop_bar)
        except ValueError as exc:
            raise CaseError("separator.temperature_c", str(exc)) from None
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
        source_price_per_kmol={s.name: s.price_per_kmol for s in sources})

    product = case.loop.product
    mw = data[product].molar_mass_kg_kmol
    production = (case.loop.production_t_d * 1000.0 / 24.0 / mw
                  if case.loop.production_t_d is not None else None)
    streams = ["makeup"]
    if any(s.enters == "reactor_feed" for s in sources):
        streams.append("liquid_feed")
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
        reactor_temperature_k=case.reactor.temperature_c + KELVIN,
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


# ---------------------------------------------------------------------------
# the equations, stated once


@dataclass
class LoopVariables:
    """The unknowns and design variables the equations are written over.

    ``flow[stream, component]`` [kmol/h], ``extent[r]`` [kmol/h],
    ``source[name]`` [kmol/h]; ``purge_fraction`` a [-] and ``conversion[r]``
    per-pass conversion of each reaction's key reactant [-].  Each may be a
    number, a linear form or a Pyomo component.
    """

    flow: Mapping
    extent: Mapping
    source: Mapping
    purge_fraction: object
    conversion: Mapping


def makeup_blend(v: LoopVariables, loop: Loop):
    """Make-up (and direct feed) from the sources: F_c = sum_s f_s y_s,c."""
    for stream, enters in (("makeup", "makeup"), ("liquid_feed", "reactor_feed")):
        if stream not in loop.streams:
            continue
        for c in loop.components:
            blend = sum(v.source[s.name] * s.composition[c] for s in loop.sources
                        if s.enters == enters and s.composition[c] != 0.0)
            yield (stream, c), v.flow[stream, c] - blend


def mixer_balance(v: LoopVariables, loop: Loop):
    """Reactor feed M_c = F_c + R_c (+ liquid feed + recovery return)."""
    inflows = [s for s in ("makeup", "liquid_feed", "recycle", "recovery_return")
               if s in loop.streams]
    for c in loop.components:
        yield c, v.flow["reactor_feed", c] - sum(v.flow[s, c] for s in inflows)


def reactor_balance(v: LoopVariables, loop: Loop):
    """Reactor outlet S_c = M_c + sum_r nu_rc xi_r."""
    for c in loop.components:
        made = sum(r.stoichiometry[c] * v.extent[i] for i, r in enumerate(loop.reactions)
                   if c in r.stoichiometry)
        yield c, v.flow["reactor_outlet", c] - v.flow["reactor_feed", c] - made


def reaction_extent(v: LoopVariables, loop: Loop):
    """Extent from per-pass conversion of the key reactant: xi_r = X_r M_k / |nu_k|."""
    for i, r in enumerate(loop.reactions):
        yield i, v.extent[i] - v.conversion[i] * v.flow["reactor_feed", r.key_reactant] * (
            1.0 / r.key_coefficient)


def separator_split(v: LoopVariables, loop: Loop):
    """Liquid L_c = s_c S_c; a condensing product: V_p = beta sum_{c != p} V_c; V = S - L."""
    for c in loop.components:
        if c == loop.condensing:
            others = sum(v.flow["separator_vapour", o] for o in loop.components if o != c)
            yield ("liquid", c), (v.flow["separator_vapour", c]
                                  - loop.condensate_vapour_ratio * others)
        else:
            yield ("liquid", c), (v.flow["liquid_product", c]
                                  - loop.liquid_fraction[c] * v.flow["reactor_outlet", c])
        yield ("vapour", c), (v.flow["separator_vapour", c] - v.flow["reactor_outlet", c]
                              + v.flow["liquid_product", c])


def purge_split(v: LoopVariables, loop: Loop):
    """Purge P_c = a V_c and recycle R_c = V_c - P_c."""
    for c in loop.components:
        yield ("purge", c), v.flow["purge", c] - v.purge_fraction * v.flow["separator_vapour", c]
        yield ("recycle", c), (v.flow["recycle", c] - v.flow["separator_vapour", c]
                               + v.flow["purge", c])


def recovery_split(v: LoopVariables, loop: Loop):
    """Recovery return Q_c = rho_c P_c to the make-up; tail gas P_c - Q_c."""
    if loop.recovery_return_fraction is None:
        return
    for c in loop.components:
        rho = loop.recovery_return_fraction[c]
        yield ("return", c), v.flow["recovery_return", c] - rho * v.flow["purge", c]
        yield ("tail", c), (v.flow["recovery_tail_gas", c] - v.flow["purge", c]
                            + v.flow["recovery_return", c])


def basis(v: LoopVariables, loop: Loop):
    """Fixed production of the product in the liquid, or a fixed make-up rate."""
    if loop.basis == "production":
        yield "production", v.flow["liquid_product", loop.product] - loop.production_kmol_h
    else:
        yield "makeup", sum(v.source[s.name] for s in loop.makeup_sources) - loop.makeup_kmol_h


def inlet_ratio(v: LoopVariables, loop: Loop):
    """Reactor-inlet ratios M_num = value M_den (one per direct feed)."""
    for i, (num, den, value) in enumerate(loop.inlet_ratios):
        yield i, v.flow["reactor_feed", num] - value * v.flow["reactor_feed", den]


#: Every equation family of the loop, in the order they are stated.
EQUATION_FAMILIES: tuple[Callable, ...] = (
    makeup_blend, mixer_balance, reactor_balance, reaction_extent, separator_split,
    purge_split, recovery_split, basis, inlet_ratio)


# ---------------------------------------------------------------------------
# quantities that follow from the flows (also stated once)


def recycle_compressor_power_kw(v: LoopVariables, loop: Loop, work_kj_kmol):
    """Recycle compressor shaft power for the loop pressure drop [kW]."""
    total = sum(v.flow["recycle", c] for c in loop.components)
    return compression.shaft_power_kw(total, work_kj_kmol, loop.recycle_efficiency)


def makeup_compressor_power_kw(v: LoopVariables, loop: Loop):
    """Make-up compressor shaft power, supply to loop pressure [kW]."""
    return sum(compression.shaft_power_kw(v.source[s.name], s.compression_work_kj_kmol,
                                          loop.makeup_efficiency)
               for s in loop.makeup_sources if s.compression_work_kj_kmol > 0.0)


def reactor_feed_kmol_h(v: LoopVariables, loop: Loop):
    return sum(v.flow["reactor_feed", c] for c in loop.components)


def reactor_volume_m3(v: LoopVariables, loop: Loop, volume_per_feed_m3_h_kmol):
    """Catalyst volume, proportional to the reactor feed at fixed conversion [m3]."""
    return volume_per_feed_m3_h_kmol * reactor_feed_kmol_h(v, loop)


def inert_kmol_h_reactor_inlet(v: LoopVariables, loop: Loop):
    return sum(v.flow["reactor_feed", c] for c in loop.inerts)


def disposal_kmol_h(v: LoopVariables, loop: Loop):
    return sum(v.flow[loop.disposal_stream, c] for c in loop.components)


def disposal_heat_gj_h(v: LoopVariables, loop: Loop):
    """Lower heating value carried by the purge gas leaving the loop [GJ/h]."""
    return sum(v.flow[loop.disposal_stream, c] * (loop.data[c].lhv_kj_mol / 1000.0)
               for c in loop.components if loop.data[c].lhv_kj_mol > 0.0)


def product_t_h(v: LoopVariables, loop: Loop):
    return v.flow["liquid_product", loop.product] * (loop.product_molar_mass / 1000.0)


def recovery_feed_kmol_h(v: LoopVariables, loop: Loop):
    return sum(v.flow["purge", c] for c in loop.components)


def stream_conditions(loop: Loop) -> dict[str, tuple[float, float]]:
    """Pressure [bar abs] and temperature [degC] of every stream.

    The make-up and direct feeds after compression (or pumping) to loop
    pressure at their supply temperature, the reactor at its (isothermal)
    temperature and loop pressure, the separator and everything leaving it
    at separator temperature and loop pressure less the loop pressure drop,
    the recycle after its compressor (at its inlet temperature, aftercooled).
    """
    p, t_sep = loop.pressure_bar, loop.separator_temperature_k - KELVIN
    low = p - loop.pressure_drop_bar
    t_reactor = loop.reactor_temperature_k - KELVIN
    feeds = {g: [s for s in loop.sources if s.enters == g] for g in ("makeup", "reactor_feed")}
    out = {
        "makeup": (p, min((s.temperature_c for s in feeds["makeup"]), default=t_sep)),
        "liquid_feed": (p, min((s.temperature_c for s in feeds["reactor_feed"]), default=t_sep)),
        "reactor_feed": (p, t_reactor), "reactor_outlet": (p, t_reactor),
        "liquid_product": (low, t_sep), "separator_vapour": (low, t_sep), "purge": (low, t_sep),
        "recycle": (p, loop.recycle_inlet_temperature_k - KELVIN),
        "recovery_return": (low, t_sep), "recovery_tail_gas": (low, t_sep)}
    return {s: out[s] for s in loop.streams}


# ---------------------------------------------------------------------------
# design-dependent coefficients (physics evaluated at the current state)


def recycle_work_kj_kmol(loop: Loop, recycle_composition: Mapping[str, float]) -> float:
    """Isentropic work per kmol of recycle gas over the loop pressure drop [kJ/kmol]."""
    gamma = mixture_heat_capacity_ratio(recycle_composition, loop.data,
                                        loop.recycle_inlet_temperature_k)
    ratio = loop.pressure_bar / (loop.pressure_bar - loop.pressure_drop_bar)
    return compression.isentropic_work_kj_kmol(loop.recycle_inlet_temperature_k, ratio, gamma, 1)


def volume_per_feed(loop: Loop, conversion: Mapping[int, float]) -> float:
    """Catalyst volume per kmol/h of reactor feed [m3 h/kmol].

    A sized reaction uses the reversible first-order plug-flow relation
    calibrated at its reference point; otherwise the set space velocity.
    """
    i = loop.sized_reaction
    if i is None:
        return reactor.catalyst_volume_from_space_velocity_m3(1.0, loop.space_velocity_per_h)
    s = loop.reactions[i].sizing
    g = reactor.first_order_reversible_pfr_ktau
    return (s["reference_volume_m3"] / s["reference_feed_kmol_h"]
            * g(conversion[i], s["equilibrium_conversion"])
            / g(s["reference_conversion"], s["equilibrium_conversion"]))


def ln_k_pressure(loop: Loop, r: Reaction) -> float:
    """Right-hand side of the equilibrium condition of one reaction [-].

    ln K(T) - dnu ln(P/P0) - sum nu ln phi - ln K_phi, with P0 = 1 atm for the
    Gillespie-Beattie correlation (Ka in atm^-1) and 1 bar for formation data.
    """
    from .physics import equilibrium as eq

    t = loop.reactor_temperature_k
    p_bar = loop.pressure_bar
    if r.equilibrium_constant == "ammonia_gillespie_beattie":
        ln_k = math.log(10.0) * log10_ka_ammonia_gillespie_beattie(t) * r.stoichiometry["NH3"]
        p_rel = p_bar / ATM_BAR
    else:
        ln_k = eq.ln_k_from_formation(r.delta_h_298_j_mol, r.delta_s_298_j_mol_k,
                                      r.delta_cp_coefficients, t)
        p_rel = p_bar
    dnu = sum(r.stoichiometry.values())
    rhs = ln_k - dnu * math.log(p_rel) - math.log(r.fugacity_correction_factor)
    if r.fugacity == "dyson_simon":
        phi = eq.dyson_simon_fugacity_coefficients(t, p_bar / ATM_BAR)
        rhs -= eq.ln_fugacity_term(r.stoichiometry, phi)
    return rhs


def equilibrium_conversions(loop: Loop, inlet_kmol_h: Mapping[str, float]) -> dict[int, float]:
    """Equilibrium conversion of the key reactant of each reaction with equilibrium data [-].

    Reactions are solved simultaneously at the reactor inlet composition.
    """
    import numpy as np

    from .physics.equilibrium import equilibrium_extents_kmol_h

    idx = [i for i, r in enumerate(loop.reactions) if r.equilibrium_constant is not None]
    if not idx:
        return {}
    comps = loop.components
    nu = np.array([[loop.reactions[i].stoichiometry.get(c, 0.0) for c in comps] for i in idx])
    rhs = np.array([ln_k_pressure(loop, loop.reactions[i]) for i in idx])
    n0 = np.array([max(inlet_kmol_h[c], 0.0) for c in comps])
    if n0.sum() <= 0.0:
        return {i: 0.0 for i in idx}
    xi = equilibrium_extents_kmol_h(n0, nu, rhs)
    out = {}
    for j, i in enumerate(idx):
        r = loop.reactions[i]
        out[i] = float(xi[j] * r.key_coefficient / max(inlet_kmol_h[r.key_reactant], 1e-300))
    return out

