"""Coefficients of the loop equations that depend on the state: physics at the current flows.

The balances of :mod:`purgeplan.equations` are linear once these are fixed:
the recycle compressor's work per kmol (from the gas's heat-capacity ratio
and, for a real gas, its compressibility),
the catalyst volume per kmol/h of reactor feed, the equilibrium
conversion of each reaction at the reactor inlet composition, and a
phase-equilibrium separator's K-values.  The inner
fixed point (:mod:`purgeplan.fixed_point`) converges them.
"""

from __future__ import annotations

import math
from collections import OrderedDict
from collections.abc import Callable, Mapping
from functools import partial

import numpy as np

from .loop import KELVIN, Loop, Reaction
from .physics import compression, kinetics, reactor, real_gas, separation, thermo
from .physics import equilibrium as eq
from .physics.real_gas import PengRobinsonData
from .properties import ComponentData


def mixture_heat_capacity_ratio(composition: Mapping[str, float],
                                data: Mapping[str, ComponentData], temperature_k: float) -> float:
    """Ideal-gas gamma of a mixture from mole-fraction-weighted Cp [-]."""
    total = sum(composition.values())
    cp = sum(y * thermo.cp_ideal_gas_j_mol_k(data[c].cp_coefficients, temperature_k)
             for c, y in composition.items()) / total
    return thermo.heat_capacity_ratio(cp)


def gas_compressibility(data: PengRobinsonData | None, composition: Mapping[str, float]
                        ) -> compression.Compressibility | None:
    """Z(T [K], P [bar]) of a gas of this composition by the Peng-Robinson equation.

    None where ``data`` is None: the gas is taken as ideal.
    """
    if data is None:
        return None
    y = [max(composition.get(c, 0.0), 0.0) for c in data.components]
    return partial(real_gas.peng_robinson_compressibility, data, y)


def recycle_work_kj_kmol(loop: Loop, recycle_composition: Mapping[str, float]) -> float:
    """Isentropic work per kmol of recycle gas over the loop pressure drop [kJ/kmol].

    A real gas's work is the ideal gas's times its mean compressibility at
    suction and discharge (:func:`purgeplan.physics.compression.isentropic_work_kj_kmol`).
    """
    gamma = mixture_heat_capacity_ratio(recycle_composition, loop.data,
                                        loop.recycle_inlet_temperature_k)
    suction = loop.pressure_bar - loop.pressure_drop_bar
    return compression.isentropic_work_kj_kmol(
        loop.recycle_inlet_temperature_k, loop.pressure_bar / suction, gamma, 1, suction,
        gas_compressibility(loop.peng_robinson, recycle_composition))


def catalyst_volume_per_feed_m3_h_kmol(loop: Loop, conversion: Mapping[int, float],
                                       equilibrium: Mapping[int, float] | None = None,
                                       inlet_kmol_h: Mapping[str, float] | None = None
                                       ) -> float:
    """Catalyst volume per kmol/h of reactor feed [m3 h/kmol].

    A sized reaction uses the reversible first-order plug-flow relation
    calibrated at its reference point (where the case gives the equilibrium
    conversion); at the state, the equilibrium conversion computed at the
    reactor inlet where the reaction has equilibrium data (``equilibrium``),
    else the case's.  A reaction with a rate expression (a rate-based
    reactor, or an equilibrium reactor sized by its rate) integrates the rate
    over an isothermal bed from the reactor inlet composition
    (``inlet_kmol_h``; the make-up gas's where not given) to its conversion,
    so inerts, which dilute the reactants, cost catalyst.  Either volume
    grows without bound as the conversion nears equilibrium and is infinite
    at or beyond it.  Otherwise the set space velocity.
    """
    i = loop.rate_reaction
    if i is not None:
        return _rate_bed_volume_per_feed(loop, i, conversion[i], equilibrium, inlet_kmol_h)
    i = loop.sized_reaction
    if i is None:
        return reactor.catalyst_volume_from_space_velocity_m3(1.0, loop.space_velocity_per_h)
    s = loop.reactions[i].sizing
    g = reactor.first_order_reversible_pfr_ktau
    x_e = (equilibrium or {}).get(i, s["equilibrium_conversion"])
    if not conversion[i] < x_e:
        return math.inf
    return (s["reference_volume_m3"] / s["reference_feed_kmol_h"]
            * g(conversion[i], x_e)
            / g(s["reference_conversion"], s["equilibrium_conversion"]))


def _rate_bed_volume_per_feed(loop: Loop, i: int, conversion: float,
                              equilibrium: Mapping[int, float] | None,
                              inlet_kmol_h: Mapping[str, float] | None) -> float:
    """Catalyst of a rate-based reaction per kmol/h of feed [m3 h/kmol]: one isothermal bed
    at the reactor temperature, or the adiabatic beds of ``bed_inlet_temperatures_c``."""
    r, comps = loop.reactions[i], loop.components
    y0 = _inlet_fractions(loop, inlet_kmol_h)
    if r.rate.get("bed_inlet_temperatures_c"):
        return adiabatic_beds(loop, i, y0).volume_per_feed_m3_h_kmol(conversion)
    x_e = (equilibrium or {}).get(i)
    if x_e is None:
        x_e = equilibrium_conversions(loop, dict(zip(comps, y0, strict=True)))[i]
    nu = np.array([r.stoichiometry.get(c, 0.0) for c in comps])
    return reactor.isothermal_bed_volume_per_feed_m3_h_kmol(
        rate_function(loop, i, loop.reactor_temperature_k), y0, nu,
        comps.index(r.key_reactant), conversion, x_e)


def _inlet_fractions(loop: Loop, inlet_kmol_h: Mapping[str, float] | None) -> np.ndarray:
    """Reactor inlet mole fractions in the loop's component order (the make-up's where not
    given) [-]."""
    if inlet_kmol_h is None:
        inlet_kmol_h = loop.makeup_sources[0].composition
    y0 = np.array([max(inlet_kmol_h[c], 0.0) for c in loop.components])
    return y0 / y0.sum()


def rate_function(loop: Loop, i: int, temperature_k: float | np.ndarray
                  ) -> Callable[[np.ndarray], np.ndarray]:
    """The effective rate of reaction ``i`` at a bed temperature, as a function of the
    mole fractions [kmol of extent/(m3 bed h)].

    The returned ``rate(y)`` takes mole fractions of shape (C, n) in the
    order of ``loop.components`` at the loop pressure and at ``temperature_k``
    [K], one for all columns or an array of one per column (along an
    adiabatic bed), and includes the effectiveness factor.  The law is the case's ``rate.law``:
    ``temkin_pyzhev`` (:func:`purgeplan.physics.kinetics.temkin_pyzhev_rate_kmol_m3_h`
    per unit of extent), ``power_law``
    (:func:`purgeplan.physics.kinetics.power_law_rate_kmol_m3_h`) or
    ``langmuir_hinshelwood``
    (:func:`purgeplan.physics.kinetics.langmuir_hinshelwood_rate_kmol_m3_h`);
    the last two take their driving force from the reaction's equilibrium at
    that temperature (:func:`equilibrium_rhs`).
    """
    r, comps = loop.reactions[i], loop.components
    spec = r.rate
    t, p = temperature_k, loop.pressure_bar
    eta = spec["effectiveness_factor"]
    if spec["law"] == "temkin_pyzhev":
        at = {c: comps.index(c) for c in ("N2", "H2", "NH3")}
        per_extent = r.stoichiometry["NH3"]

        def temkin(y):
            nh3 = y[at["NH3"]]
            factor = (kinetics.dyson_simon_effectiveness_factor(t, p, nh3)
                      if eta == "dyson_simon" else eta)
            return factor * kinetics.temkin_pyzhev_rate_kmol_m3_h(
                t, p, y[at["N2"]], y[at["H2"]], nh3) / per_extent
        return temkin
    if np.ndim(t) > 0:  # one temperature per column: each column at its own
        columns = [rate_function(loop, i, float(tk)) for tk in np.asarray(t)]
        return lambda y: np.array([f(y[:, [k]])[0] for k, f in enumerate(columns)])
    rhs = (r.equilibrium_rhs if t == loop.reactor_temperature_k and r.equilibrium_rhs is not None
           else equilibrium_rhs(r, t, p))
    nu = np.array([r.stoichiometry.get(c, 0.0) for c in comps])
    orders = np.array([spec["orders"].get(c, 0.0) for c in comps])
    constants = (spec["pre_exponential_kmol_m3_h"], spec["activation_energy_kj_mol"],
                 orders, nu, rhs)
    if spec["law"] == "power_law":
        return lambda y: eta * kinetics.power_law_rate_kmol_m3_h(t, p, y, *constants)
    terms = tuple((a["pre_exponential"], a["heat_of_adsorption_kj_mol"],
                   np.array([a["exponents"].get(c, 0.0) for c in comps]))
                  for a in spec["adsorption"])
    power = spec["denominator_power"]
    return lambda y: eta * kinetics.langmuir_hinshelwood_rate_kmol_m3_h(
        t, p, y, *constants, terms, power)


#: The beds of the last few reactor inlets seen, so that a state's equilibrium conversion
#: and its catalyst share their boundaries: (id of the loop, reaction, inlet) -> (loop, beds),
#: the loop kept so that its id is not reused while its entry lives.
_BEDS: OrderedDict = OrderedDict()
_BEDS_KEPT = 64


def adiabatic_beds(loop: Loop, i: int, inlet_fractions: np.ndarray
                   ) -> reactor.AdiabaticBeds | reactor.QuenchBeds:
    """The adiabatic beds of reaction i at reactor inlet mole fractions [-].

    The reaction enthalpy at 298.15 K from the components' formation
    enthalpies, their ideal-gas heat capacities, the rate of
    :func:`rate_function` and the equilibrium condition of
    :func:`equilibrium_rhs`, all at the local temperature; cooled between beds
    (:class:`purgeplan.physics.reactor.AdiabaticBeds`) or, with
    ``rate.between_beds = "quench"``, quenched with cold feed gas at
    ``rate.quench_temperature_c`` (:class:`purgeplan.physics.reactor.QuenchBeds`).
    """
    y0 = np.asarray(inlet_fractions, dtype=float)
    key = (id(loop), i, y0.tobytes())
    hit = _BEDS.get(key)
    if hit is not None and hit[0] is loop:
        _BEDS.move_to_end(key)
        return hit[1]
    beds = _new_beds(loop, i, y0)
    _BEDS[key] = (loop, beds)
    if len(_BEDS) > _BEDS_KEPT:
        _BEDS.popitem(last=False)
    return beds


def _new_beds(loop: Loop, i: int, inlet_fractions: np.ndarray
              ) -> reactor.AdiabaticBeds | reactor.QuenchBeds:
    r, comps = loop.reactions[i], loop.components
    nu = np.array([r.stoichiometry.get(c, 0.0) for c in comps])
    width = max(len(loop.data[c].cp_coefficients) for c in comps)
    cp = np.array([tuple(loop.data[c].cp_coefficients)
                   + (0.0,) * (width - len(loop.data[c].cp_coefficients)) for c in comps])
    dh = 1000.0 * sum(v * loop.data[c].formation_enthalpy_kj_mol
                      for c, v in r.stoichiometry.items())
    p = loop.pressure_bar
    beds = reactor.AdiabaticBeds(
        inlet_fractions=np.asarray(inlet_fractions, dtype=float), stoichiometry=nu,
        key=comps.index(r.key_reactant), cp_coefficients=cp, delta_h_298_j_mol=dh,
        inlet_temperatures_k=tuple(t + KELVIN for t in r.rate["bed_inlet_temperatures_c"]),
        rate=lambda y, t: rate_function(loop, i, t)(y),
        equilibrium_rhs=lambda t: equilibrium_rhs(r, t, p))
    if r.rate.get("between_beds") == "quench":
        return reactor.QuenchBeds(beds, r.rate["quench_temperature_c"] + KELVIN)
    return beds


def beds_at(loop: Loop, conversion: Mapping[int, float],
            inlet_kmol_h: Mapping[str, float]) -> list[reactor.Bed]:
    """The adiabatic beds of the loop's rate reaction at a state, empty without beds."""
    i = loop.rate_reaction
    if i is None or not loop.reactions[i].rate.get("bed_inlet_temperatures_c"):
        return []
    return adiabatic_beds(loop, i, _inlet_fractions(loop, inlet_kmol_h)).split(conversion[i])


def equilibrium_rhs(r: Reaction, temperature_k: float, pressure_bar: float) -> float:
    """Right-hand side of the equilibrium condition of one reaction [-].

    ln K(T) - dnu ln(P/P0) - sum nu ln phi - ln K_phi, with P0 = 1 atm for the
    Gillespie-Beattie correlation (Ka in atm^-1) and 1 bar for formation data.
    Fixed for a loop: evaluated once when the loop is built.
    """
    t, p_bar = temperature_k, pressure_bar
    if r.equilibrium_method == "ammonia_gillespie_beattie":
        ln_k = (math.log(10.0) * eq.log10_ka_ammonia_gillespie_beattie(t)
                * r.stoichiometry["NH3"])
        p_rel = p_bar / eq.ATM_BAR
    else:
        ln_k = eq.ln_k_from_formation(r.delta_h_298_j_mol, r.delta_s_298_j_mol_k,
                                      r.delta_cp_coefficients, t)
        p_rel = p_bar
    dnu = sum(r.stoichiometry.values())
    rhs = ln_k - dnu * math.log(p_rel) - math.log(r.fugacity_correction_factor)
    if r.fugacity == "dyson_simon":
        phi = eq.dyson_simon_fugacity_coefficients(t, p_bar / eq.ATM_BAR)
        rhs -= eq.ln_fugacity_term(r.stoichiometry, phi)
    return rhs


def equilibrium_conversions(loop: Loop, inlet_kmol_h: Mapping[str, float]) -> dict[int, float]:
    """Equilibrium conversion of the key reactant of each reaction with equilibrium data [-].

    Reactions are solved simultaneously at the reactor inlet composition.  A
    reaction over adiabatic beds has instead the conversion its beds approach,
    the last used bed's adiabatic equilibrium
    (:meth:`purgeplan.physics.reactor.AdiabaticBeds.attainable_conversion`).
    """
    idx = [i for i, r in enumerate(loop.reactions) if r.equilibrium_method is not None]
    if not idx:
        return {}
    comps = loop.components
    nu = np.array([[loop.reactions[i].stoichiometry.get(c, 0.0) for c in comps] for i in idx])
    rhs = np.array([loop.reactions[i].equilibrium_rhs for i in idx])
    n0 = np.array([max(inlet_kmol_h[c], 0.0) for c in comps])
    if n0.sum() <= 0.0:
        return {i: 0.0 for i in idx}
    xi = eq.equilibrium_extents_kmol_h(n0, nu, rhs)
    out = {}
    for j, i in enumerate(idx):
        r = loop.reactions[i]
        out[i] = float(xi[j] * r.key_coefficient / max(inlet_kmol_h[r.key_reactant], 1e-300))
        if r.rate is not None and r.rate.get("bed_inlet_temperatures_c"):
            out[i] = adiabatic_beds(loop, i, n0 / n0.sum()).attainable_conversion()
    return out


def separator_k_values(loop: Loop, liquid_kmol_h: Mapping[str, float] | None = None,
                       vapour_kmol_h: Mapping[str, float] | None = None) -> dict[str, float]:
    """K = y/x of each component in a phase-equilibrium separator [-].

    Henry and Raoult's laws give K-values fixed for the loop (evaluated when it
    is built), but that where several components condense, Raoult's law takes
    their activity coefficients at the liquid's composition
    (:func:`separator_activity_coefficients`).  Peng-Robinson K-values depend
    on the compositions of the liquid and vapour.  Both are evaluated at the
    flows given, and without flows at the start of the inner fixed point, the
    liquid pure product (each other component at infinite dilution in it)
    under a vapour of the first make-up gas.
    """
    if liquid_kmol_h is None:
        liquid_kmol_h = {c: float(c == loop.product) for c in loop.components}
        vapour_kmol_h = loop.makeup_sources[0].composition
    if loop.separator_k_values is not None:
        k = dict(loop.separator_k_values)
        gamma = separator_activity_coefficients(loop, liquid_kmol_h)
        for c, g in gamma.items():  # the modified Raoult's law, y P = x gamma Psat F_P
            k[c] *= g
        return k
    t, p = loop.separator_temperature_k, loop.pressure_bar - loop.pressure_drop_bar
    x, y = (_fractions(liquid_kmol_h, loop.components), _fractions(vapour_kmol_h, loop.components))
    k = separation.peng_robinson_k_values(loop.separator_peng_robinson, t, p, x, y)
    return dict(zip(loop.components, k, strict=True))


def separator_k_values_vary(loop: Loop) -> bool:
    """Whether a phase-equilibrium separator's K-values depend on the state's flows."""
    return loop.separator_k_values is None or loop.separator_activity is not None


def separator_activity_coefficients(loop: Loop, liquid_kmol_h: Mapping[str, float],
                                    temperature_k: float | None = None) -> dict[str, float]:
    """Activity coefficients of a Henry-Raoult separator's condensing components [-].

    By the original UNIFAC
    (:func:`purgeplan.physics.separation.unifac_activity_coefficients`) at the
    separator temperature (or ``temperature_k`` [K]) and the liquid's
    composition on a dissolved-gas-free basis: the dissolved gases are dilute
    (about 1 % of the liquid in a methanol loop) and are left out of the
    solution's non-ideality.  Empty where the loop
    has no activity data (one condensing component, or one without UNIFAC
    groups: gamma = 1).
    """
    if loop.separator_activity is None:
        return {}
    names, groups = loop.separator_activity
    x = [max(liquid_kmol_h.get(c, 0.0), 0.0) for c in names]
    total = sum(x)
    if total <= 0.0:
        return {}
    t = loop.separator_temperature_k if temperature_k is None else temperature_k
    gamma = separation.unifac_activity_coefficients(groups, t, [v / total for v in x])
    return dict(zip(names, gamma, strict=True))


def separator_liquid_shares(loop: Loop, liquid_kmol_h: Mapping[str, float],
                            vapour_kmol_h: Mapping[str, float]) -> dict[str, float]:
    """A phase-equilibrium separator's share of each component leaving in the liquid at a
    state's flows, 1 / (1 + K V/L) [-] (:func:`purgeplan.physics.separation.liquid_share`)."""
    k = separator_k_values(loop, liquid_kmol_h, vapour_kmol_h)
    ratio = sum(vapour_kmol_h.values()) / sum(liquid_kmol_h.values())
    return {c: separation.liquid_share(k[c], ratio) for c in loop.components}


def _fractions(flow: Mapping[str, float], components) -> list[float]:
    total = sum(max(flow[c], 0.0) for c in components)
    return [max(flow[c], 0.0) / total for c in components]
