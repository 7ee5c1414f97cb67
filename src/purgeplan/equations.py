"""The loop equations, stated once, and the quantities that follow from the flows.

The equation families below are written over any algebra that supports
``+``, ``-`` and ``*``: the Pyomo model (:mod:`purgeplan.model`) applies them to
Pyomo variables, and the direct steady-state solver (:mod:`purgeplan.engine`)
applies them to linear forms to obtain the same equations as a matrix.  Each
family returns ``(index, residual)`` pairs; every residual must equal zero.
Stream names are those of :mod:`purgeplan.loop`.
"""

from __future__ import annotations

from collections.abc import Callable, Mapping
from dataclasses import dataclass

from .loop import KELVIN, Loop
from .physics import compression, emissions


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
    #: Share of each component of the separator feed leaving in the liquid [-], for a
    #: phase-equilibrium separator (see :func:`separator_split`); None otherwise.
    liquid_share: Mapping | None = None
    #: With ``liquid_share``, a weight (1, or 0 for none) and a ratio R of a held
    #: vapour-to-liquid ratio V = R L (see :func:`separator_split`); None for none.
    held_vapour_per_liquid: tuple | None = None


def makeup_blend(v: LoopVariables, loop: Loop):
    """Make-up (and direct feed) from the sources: F_c = sum_s f_s y_s,c."""
    for stream, enters in (("makeup", "makeup"), ("direct_feed", "reactor_feed")):
        if stream not in loop.streams:
            continue
        for c in loop.components:
            blend = sum(v.source[s.name] * s.composition[c] for s in loop.sources
                        if s.enters == enters and s.composition[c] != 0.0)
            yield (stream, c), v.flow[stream, c] - blend


def mixer_balance(v: LoopVariables, loop: Loop):
    """Reactor feed M_c = F_c + R_c (+ direct feed + recovery return)."""
    inflows = [s for s in ("makeup", "direct_feed", "recycle", "recovery_return")
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
    """Liquid L_c = s_c S_c; a condensing product: V_p = beta sum_{c != p} V_c; V = S - L.

    With a phase-equilibrium separator, y_c = K_c x_c gives
    L_c = S_c / (1 + K_c V/L) =: phi_c S_c, the share phi_c (``v.liquid_share``)
    at the K-values and vapour-to-liquid ratio of the inner fixed point
    (:func:`purgeplan.physics.separation.liquid_share`).  A linear programme
    may also hold V = R L at the ratio R the shares were taken at
    (``v.held_vapour_per_liquid``): its choice of feed then meets the split
    exactly (see :mod:`purgeplan.fixed_point`).
    """
    for c in loop.components:
        if v.liquid_share is not None:
            yield ("liquid", c), (v.flow["liquid_product", c]
                                  - v.liquid_share[c] * v.flow["reactor_outlet", c])
        elif c == loop.condensing:
            others = sum(v.flow["separator_vapour", o] for o in loop.components if o != c)
            yield ("liquid", c), (v.flow["separator_vapour", c]
                                  - loop.condensate_vapour_ratio * others)
        else:
            yield ("liquid", c), (v.flow["liquid_product", c]
                                  - loop.liquid_fraction[c] * v.flow["reactor_outlet", c])
        yield ("vapour", c), (v.flow["separator_vapour", c] - v.flow["reactor_outlet", c]
                              + v.flow["liquid_product", c])
    if v.liquid_share is not None and v.held_vapour_per_liquid is not None:
        weight, ratio = v.held_vapour_per_liquid
        yield "vapour_per_liquid", weight * sum(
            v.flow["separator_vapour", c] - ratio * v.flow["liquid_product", c]
            for c in loop.components)


def purge_split(v: LoopVariables, loop: Loop):
    """Purge P_c = a V_c and recycle R_c = V_c - P_c."""
    for c in loop.components:
        yield ("purge", c), v.flow["purge", c] - v.purge_fraction * v.flow["separator_vapour", c]
        yield ("recycle", c), (v.flow["recycle", c] - v.flow["separator_vapour", c]
                               + v.flow["purge", c])


def recovery_split(v: LoopVariables, loop: Loop):
    """Return Q_c = rho_c P_c to the loop, export E_c = e_c P_c; tail gas P_c - Q_c - E_c."""
    if loop.recovery_return_fraction is None:
        return
    export = loop.recovery_export_fraction
    for c in loop.components:
        rho = loop.recovery_return_fraction[c]
        yield ("return", c), v.flow["recovery_return", c] - rho * v.flow["purge", c]
        tail = v.flow["recovery_tail_gas", c] - v.flow["purge", c] + v.flow["recovery_return", c]
        if export is not None:
            yield ("export", c), v.flow["recovery_export", c] - export[c] * v.flow["purge", c]
            tail = tail + v.flow["recovery_export", c]
        yield ("tail", c), tail


def letdown_split(v: LoopVariables, loop: Loop):
    """Let-down gas G_c = lambda_c L_c released from the liquid; the liquid delivered L_c - G_c.

    lambda_c from :func:`purgeplan.case_checks.letdown_release` (Henry's law
    for the dissolved gases; the product stays liquid).
    """
    release = loop.letdown_release_fraction
    if release is None:
        return
    for c in loop.components:
        yield ("gas", c), v.flow["letdown_gas", c] - release[c] * v.flow["liquid_product", c]
        yield ("liquid", c), (v.flow["letdown_liquid", c] - v.flow["liquid_product", c]
                              + v.flow["letdown_gas", c])


def product_kmol_h(v: LoopVariables, loop: Loop):
    """Product made: in the liquid, plus any recovered from the purge and exported [kmol/h]."""
    made = v.flow["liquid_product", loop.product]
    if "recovery_export" in loop.streams:
        made = made + v.flow["recovery_export", loop.product]
    return made


def basis(v: LoopVariables, loop: Loop):
    """Fixed production of the product in the liquid, or a fixed make-up rate."""
    if loop.basis == "production":
        yield "production", product_kmol_h(v, loop) - loop.production_kmol_h
    else:
        yield "makeup", sum(v.source[s.name] for s in loop.makeup_sources) - loop.makeup_kmol_h


def inlet_ratio(v: LoopVariables, loop: Loop):
    """Reactor-inlet ratios M_num = value M_den (one per direct feed)."""
    for i, (num, den, value) in enumerate(loop.inlet_ratios):
        yield i, v.flow["reactor_feed", num] - value * v.flow["reactor_feed", den]


#: Every equation family of the loop, in the order they are stated.
EQUATION_FAMILIES: tuple[Callable, ...] = (
    makeup_blend, mixer_balance, reactor_balance, reaction_extent, separator_split,
    purge_split, recovery_split, letdown_split, basis, inlet_ratio)


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
    """Total reactor feed [kmol/h]."""
    return sum(v.flow["reactor_feed", c] for c in loop.components)


def catalyst_volume_m3(v: LoopVariables, loop: Loop, catalyst_volume_per_feed_m3_h_kmol):
    """Catalyst volume, proportional to the reactor feed at fixed conversion [m3]."""
    return catalyst_volume_per_feed_m3_h_kmol * reactor_feed_kmol_h(v, loop)


def inert_kmol_h_reactor_inlet(v: LoopVariables, loop: Loop):
    """Inerts in the reactor feed [kmol/h]."""
    return sum(v.flow["reactor_feed", c] for c in loop.inerts)


def disposal_kmol_h(v: LoopVariables, loop: Loop):
    """Purge gas leaving the loop (after recovery, if any) [kmol/h]."""
    return sum(v.flow[loop.disposal_stream, c] for c in loop.components)


def disposal_heat_gj_h(v: LoopVariables, loop: Loop):
    """Lower heating value carried by the purge gas leaving the loop [GJ/h]."""
    return sum(v.flow[loop.disposal_stream, c] * (loop.data[c].lhv_kj_mol / 1000.0)
               for c in loop.components if loop.data[c].lhv_kj_mol > 0.0)


def carbon_atoms(loop: Loop, component: str) -> int:
    """Carbon atoms per molecule of a component [-]."""
    return dict(loop.data[component].atoms).get("C", 0)


def disposal_co2_t_h(v: LoopVariables, loop: Loop):
    """CO2 from burning or flaring the purge gas leaving the loop, by its carbon [t/h]."""
    return sum(v.flow[loop.disposal_stream, c] * emissions.co2_t_per_kmol(carbon_atoms(loop, c))
               for c in loop.components if carbon_atoms(loop, c) > 0)


def fuel_sink(heat_gj_h, kmol_h, capacity_gj_h: float, fuel_heat_gj_h=None,
              kmol_per_gj=None) -> tuple:
    """Fuel part [GJ/h] and flared part [kmol/h] of the purge gas sent to a fuel sink.

    The sink takes at most ``capacity_gj_h``; the rest goes to flare.  On
    numbers the fuel part is min(heat, capacity) and the flared part the
    remaining share of the gas, kmol (1 - fuel / heat).  A linear programme
    passes its own ``fuel_heat_gj_h`` (a variable held within both bounds
    by constraints, which the objective drives to the min) and the gas's
    ``kmol_per_gj`` at the current state; the flared part is then the same
    expression, kmol - kmol_per_gj fuel.
    """
    if fuel_heat_gj_h is None:
        if heat_gj_h <= capacity_gj_h:
            return heat_gj_h, 0.0         # all to fuel (exactly, without rounding)
        fuel_heat_gj_h, kmol_per_gj = capacity_gj_h, kmol_h / heat_gj_h
    return fuel_heat_gj_h, kmol_h - kmol_per_gj * fuel_heat_gj_h


def product_t_h(v: LoopVariables, loop: Loop):
    """Product made, in the liquid and any exported from the purge [t/h]."""
    return product_kmol_h(v, loop) * (loop.product_molar_mass / 1000.0)


def recovery_recompression_power_kw(v: LoopVariables, loop: Loop):
    """Shaft power recompressing the recovery return to loop pressure [kW].

    Isentropic work per kmol from the build (:func:`purgeplan.build._recompression`)
    over the make-up compressor's efficiency, whichever machine does it.
    """
    if loop.recovery_recompression == "none":
        return 0.0
    total = sum(v.flow["recovery_return", c] for c in loop.components)
    return compression.shaft_power_kw(total, loop.recovery_recompression_work_kj_kmol,
                                      loop.makeup_efficiency)


def direct_feed_power_kw(v: LoopVariables, loop: Loop, phase: str):
    """Shaft power raising the direct feeds of one phase to loop pressure [kW].

    Gas is compressed (make-up compressor efficiency), a liquid pumped (pump efficiency).
    """
    eff = loop.makeup_efficiency if phase == "gas" else loop.pump_efficiency
    return sum(compression.shaft_power_kw(v.source[s.name], s.compression_work_kj_kmol, eff)
               for s in loop.sources if s.enters == "reactor_feed" and s.phase == phase
               and s.compression_work_kj_kmol > 0.0)


def letdown_kmol_h(v: LoopVariables, loop: Loop):
    """Gas released at let-down [kmol/h]."""
    return sum(v.flow["letdown_gas", c] for c in loop.components)


def letdown_co2_t_h(v: LoopVariables, loop: Loop):
    """CO2 from burning or flaring the let-down gas, by its carbon [t/h]."""
    return sum(v.flow["letdown_gas", c] * emissions.co2_t_per_kmol(carbon_atoms(loop, c))
               for c in loop.components if carbon_atoms(loop, c) > 0)


def letdown_heat_gj_h(v: LoopVariables, loop: Loop):
    """Lower heating value carried by the let-down gas [GJ/h]."""
    return sum(v.flow["letdown_gas", c] * (loop.data[c].lhv_kj_mol / 1000.0)
               for c in loop.components if loop.data[c].lhv_kj_mol > 0.0)


def recovery_export_sold_kmol_h(v: LoopVariables, loop: Loop):
    """Recovered gas sold out of the loop, the product (counted as product) aside [kmol/h]."""
    return sum(v.flow["recovery_export", c] for c in loop.components if c != loop.product)


def inlet_ratio_forms(v: LoopVariables, loop: Loop) -> dict:
    """Numerator and denominator forms of every inlet ratio at the reactor feed [kmol/h]."""
    out = {}
    for r in loop.ratios:
        for part, form in (("numerator", r.numerator), ("denominator", r.denominator)):
            out[f"inlet_ratio_{part}:{r.name}"] = sum(
                k * v.flow["reactor_feed", c] for c, k in form.items() if k != 0.0)
    return out


def recovery_feed_kmol_h(v: LoopVariables, loop: Loop):
    """Purge gas treated by the recovery unit [kmol/h]."""
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
        "direct_feed": (p, min((s.temperature_c for s in feeds["reactor_feed"]), default=t_sep)),
        "reactor_feed": (p, t_reactor), "reactor_outlet": (p, t_reactor),
        "liquid_product": (low, t_sep), "separator_vapour": (low, t_sep), "purge": (low, t_sep),
        "recycle": (p, loop.recycle_inlet_temperature_k - KELVIN),
        "recovery_return": (loop.recovery_return_pressure_bar or low, t_sep),
        "recovery_tail_gas": (low, t_sep), "recovery_export": (low, t_sep),
        "letdown_gas": (loop.letdown_pressure_bar, t_sep),
        "letdown_liquid": (loop.letdown_pressure_bar, t_sep)}
    return {s: out[s] for s in loop.streams}


def separator_cooling_duty_kw(v: LoopVariables, loop: Loop):
    """Heat taken from the reactor outlet to bring it to separator temperature [kW].

    Q = [sum_c S_c (h_c(T_reactor) - h_c(T_separator)) + sum_c L_c lambda_c(T_separator)] / 3600,
    the reactor outlet S cooled as an ideal gas (the Poling Cp polynomial,
    :mod:`purgeplan.physics.thermo`) and the liquid L condensed at separator
    temperature (DIPPR equation 106, Perry's Table 2-150).  Enthalpy is a
    function of state, so the path does not matter, and S = L + V makes the
    duty right whatever the separator's split.  Linear in the flows at fixed
    temperatures.  Neglected: the real-gas enthalpy departure of the loop gas
    at loop pressure, the heat of solution of the gases dissolved in the
    liquid (their latent heat is zero above their critical temperature) and
    the heat of mixing of the liquid.
    """
    k = loop.cooling
    sensible = sum(v.flow["reactor_outlet", c] * k.sensible_kj_kmol[c] for c in loop.components)
    latent = sum(v.flow["liquid_product", c] * k.latent_kj_kmol[c] for c in loop.components
                 if k.latent_kj_kmol[c] != 0.0)
    return (sensible + latent) * (1.0 / 3600.0)


def water_cooler_condensate_kmol_h(v: LoopVariables, loop: Loop, condenses=None):
    """Product condensed in the water cooler, at its outlet temperature [kmol/h].

    Raoult's law as in the separator (:func:`separator_split`), with the
    vapour ratio beta_w at the water cooler's outlet and the other
    components all still gas: S_p - beta_w sum_{c != p} S_c where positive,
    else 0 (the reactor outlet's dew point lies below the outlet).  The other
    components of the liquid are taken to condense or dissolve below it, in
    the refrigerated cooler, which leaves no refrigeration duty out.  On
    numbers the 0 is taken where it applies; a linear programme passes
    ``condenses`` (1 or 0, from the state it starts from).
    """
    beta = loop.cooling.water_vapour_ratio
    if beta is None:
        return 0.0
    p = loop.condensing
    form = v.flow["reactor_outlet", p] - beta * sum(v.flow["reactor_outlet", c]
                                                    for c in loop.components if c != p)
    return max(form, 0.0) if condenses is None else condenses * form


def water_cooler_duty_kw(v: LoopVariables, loop: Loop, condensate_kmol_h):
    """Heat taken by cooling water, reactor to water cooler outlet temperature [kW].

    The reactor outlet cooled as an ideal gas to the outlet temperature, and
    the product condensed there (``condensate_kmol_h``, from
    :func:`water_cooler_condensate_kmol_h`) at its enthalpy of vaporisation at
    that temperature.  All of the separator cooling duty where the water
    cooler reaches separator temperature.
    """
    k = loop.cooling
    if not k.refrigerated:
        return separator_cooling_duty_kw(v, loop)
    sensible = sum(v.flow["reactor_outlet", c] * k.water_sensible_kj_kmol[c]
                   for c in loop.components)
    return (sensible + condensate_kmol_h * k.water_latent_kj_kmol) * (1.0 / 3600.0)


def _cooling_quantities(v: LoopVariables, loop: Loop, condenses=None) -> dict:
    """The separator's cooling duty, split into cooling water and refrigeration.

    Refrigeration takes what the water cooler leaves (duty minus water
    cooler duty) at the coefficient of performance of the loop's cooling;
    cooling water takes the water cooler's duty and the heat the
    refrigeration condenser rejects (refrigeration duty plus power).
    """
    if loop.cooling is None:
        return {}
    k = loop.cooling
    total = separator_cooling_duty_kw(v, loop)
    condensate = water_cooler_condensate_kmol_h(v, loop, condenses)
    water = water_cooler_duty_kw(v, loop, condensate)
    cold = total - water if k.refrigerated else 0.0
    power = cold * (1.0 / k.coefficient_of_performance) if k.refrigerated else 0.0
    return {"separator_cooling_duty_kw": total, "water_cooler_duty_kw": water,
            "water_cooler_condensate_kmol_h": condensate,
            "refrigeration_duty_kw": cold, "refrigeration_power_kw": power,
            "cooling_water_duty_gj_h": (water + cold + power) * (3600.0 / 1e6)}


def _unit_quantities(v: LoopVariables, loop: Loop) -> dict:
    """Quantities of the recovery unit, the direct feeds, the let-down and the inlet ratios."""
    q = {"recovery_recompression_power_kw": recovery_recompression_power_kw(v, loop),
         "direct_feed_compression_power_kw": direct_feed_power_kw(v, loop, "gas"),
         "direct_feed_pumping_power_kw": direct_feed_power_kw(v, loop, "liquid")}
    if "recovery_export" in loop.streams:
        q["recovery_export_sold_kmol_h"] = recovery_export_sold_kmol_h(v, loop)
    if "letdown_gas" in loop.streams:
        q["letdown_kmol_h"] = letdown_kmol_h(v, loop)
        q["letdown_heat_gj_h"] = letdown_heat_gj_h(v, loop)
        q["letdown_co2_t_h"] = letdown_co2_t_h(v, loop)
    q.update(inlet_ratio_forms(v, loop))
    return q


def quantities(v: LoopVariables, loop: Loop, work_kj_kmol, catalyst_volume_per_feed,
               fuel_split: tuple | None = None, water_condensing=None) -> dict:
    """Every physical quantity a cost line or a limit refers to, by key.

    ``work_kj_kmol`` is the recycle compressor's isentropic work per kmol and
    ``catalyst_volume_per_feed`` the catalyst volume per kmol/h of reactor feed
    [m3 h/kmol] (numbers or Pyomo parameters).  ``fuel_split`` is a linear
    programme's (fuel part variable, kmol per GJ) of a fuel sink with a
    capacity (see :func:`fuel_sink`); None on numbers.  ``water_condensing``
    is a linear programme's 1 or 0 for condensation in the water cooler (see
    :func:`water_cooler_condensate_kmol_h`); None on numbers.
    """
    q = {f"source_kmol_h:{s.name}": v.source[s.name] for s in loop.sources}
    q.update({
        "purge_fraction": v.purge_fraction,
        "recycle_compressor_power_kw": recycle_compressor_power_kw(v, loop, work_kj_kmol),
        "makeup_compressor_power_kw": makeup_compressor_power_kw(v, loop),
        "catalyst_volume_m3": catalyst_volume_m3(v, loop, catalyst_volume_per_feed),
        "reactor_feed_kmol_h": reactor_feed_kmol_h(v, loop),
        "inert_kmol_h_reactor_inlet": inert_kmol_h_reactor_inlet(v, loop),
        "disposal_heat_gj_h": disposal_heat_gj_h(v, loop),
        "disposal_kmol_h": disposal_kmol_h(v, loop),
        "product_t_h": product_t_h(v, loop),
        "recovery_feed_kmol_h": recovery_feed_kmol_h(v, loop),
        "disposal_co2_t_h": disposal_co2_t_h(v, loop),
    })
    q.update(_unit_quantities(v, loop))
    q.update(_cooling_quantities(v, loop, water_condensing))
    through_makeup = (q["recovery_recompression_power_kw"]
                      if loop.recovery_recompression == "makeup_compressor" else 0.0)
    q["makeup_compressor_duty_kw"] = q["makeup_compressor_power_kw"] + through_makeup
    q["compressor_power_kw"] = q["recycle_compressor_power_kw"] + q["makeup_compressor_duty_kw"]
    if loop.fuel_capacity_gj_h is not None:
        q["fuel_heat_gj_h"], q["flared_kmol_h"] = fuel_sink(
            q["disposal_heat_gj_h"], q["disposal_kmol_h"], loop.fuel_capacity_gj_h,
            *(fuel_split or ()))
    q.update({f"per_pass_conversion:{i}": v.conversion[i] for i in range(len(loop.reactions))})
    return q
