"""Steady-state results as plain data, computed the same way whoever solved the loop.

Both the direct engine and the Pyomo solve hand their raw values (flows,
extents, source flows) to :func:`make_state`, which evaluates the stated
quantities and cost lines on numbers and recomputes the balances
independently of the equations.  States evaluated during a search leave the
balance closure and the table of adiabatic beds out (NaN, empty) for speed;
:func:`with_balances` adds them to every state that is reported.
"""

from __future__ import annotations

import dataclasses
import math
from dataclasses import dataclass, field

from . import coefficients, costs
from .equations import LoopVariables, quantities
from .loop import KELVIN, Loop
from .physics import kinetics


@dataclass
class LoopState:
    """One steady state of one alternative, with its costs.

    Flows in kmol/h, powers in kW, volume in m3, money in the case currency per year.
    """

    name: str
    purge_fraction: float
    conversion: dict[int, float]
    flows: dict[str, dict[str, float]]
    extents: list[float]
    sources: dict[str, float]
    quantities: dict[str, float]
    costs: dict[str, float]
    tac_per_year: float
    cost_per_tonne_product: float
    lost_reactant_memo_per_year: float
    inert_fraction_reactor_inlet: float
    overall_conversion: float
    species_balance_error: float
    element_balance_error: float
    recycle_work_kj_kmol: float
    catalyst_volume_per_feed_m3_h_kmol: float
    equilibrium_conversion: dict[int, float] = field(default_factory=dict)
    route: str = ""
    #: One-line warnings about this state and its prices (empty when none).
    warnings: list[str] = field(default_factory=list)
    #: Every reactor-inlet ratio the case defines, by name [-].
    inlet_ratio: dict[str, float] = field(default_factory=dict)
    #: The adiabatic beds of the converter in flow order (see :func:`bed_table`); empty for
    #: an isothermal bed, and in states evaluated during a search.
    beds: list[dict] = field(default_factory=list)

    @property
    def first_reaction_conversion(self) -> float:
        """Per-pass conversion of the key reactant of the case's first reaction [-]."""
        return self.conversion[0]

    @property
    def approach_to_equilibrium(self) -> dict[int, float]:
        """Per-pass over equilibrium conversion of each reaction with equilibrium data [-]."""
        return {i: self.conversion[i] / x_e
                for i, x_e in self.equilibrium_conversion.items() if x_e > 0.0}

    @property
    def balance_error(self) -> float:
        return max(self.species_balance_error, self.element_balance_error)


class _Values:
    """Adapter: a nested dict of numbers seen as ``flow[stream, component]``."""

    def __init__(self, nested):
        self.nested = nested

    def __getitem__(self, key):
        stream, comp = key
        return self.nested[stream][comp]


def _balances(loop: Loop, flows, extents) -> tuple[float, float]:
    """Largest relative species and element balance errors over the whole loop [-].

    Recomputed from the streams alone: what enters with the feeds, plus what
    the reactions make, minus what leaves the loop (:attr:`Loop.outlet_streams`:
    the liquid, or the let-down liquid and gas, the purge gas and any
    recovered gas exported).
    """
    feeds = list(loop.feed_streams)
    out_streams = list(loop.outlet_streams)
    scale = max(sum(flows[s][c] for s in feeds for c in loop.components), 1e-300)
    species = 0.0
    for c in loop.components:
        made = sum(r.stoichiometry.get(c, 0.0) * extents[i] for i, r in enumerate(loop.reactions))
        net = (sum(flows[s][c] for s in feeds) + made
               - sum(flows[s][c] for s in out_streams))
        species = max(species, abs(net) / scale)
    elements: dict[str, float] = {}
    element_scale: dict[str, float] = {}
    for c in loop.components:
        net = sum(flows[s][c] for s in feeds) - sum(flows[s][c] for s in out_streams)
        for e, n in loop.data[c].atoms:
            elements[e] = elements.get(e, 0.0) + n * net
            element_scale[e] = element_scale.get(e, 0.0) + n * sum(flows[s][c] for s in feeds)
    # an element the feeds do not carry is measured against all atoms fed
    all_atoms = max(sum(element_scale.values()), 1e-300)
    element = max((abs(v) / (element_scale[e] if element_scale[e] > 0 else all_atoms)
                   for e, v in elements.items()), default=0.0)
    return species, element


def inlet_ratios(loop: Loop, flows) -> dict[str, float]:
    """Every reactor-inlet ratio of the case at the flows, by name [-].

    The ratios of direct feeds (``loop.inlet_ratios``, named "num/den") and
    the ratios of linear forms (``loop.ratios``); NaN where the denominator is 0.
    """
    feed = flows["reactor_feed"]
    out = {f"{num}/{den}": (feed[num] / feed[den] if feed[den] > 0 else math.nan)
           for num, den, _ in loop.inlet_ratios}
    for r in loop.ratios:
        num = sum(k * feed[c] for c, k in r.numerator.items())
        den = sum(k * feed[c] for c, k in r.denominator.items())
        out[r.name] = num / den if den > 0 else math.nan
    return out


#: Relative departure from stoichiometric above which an inlet ratio not held is flagged [-].
RATIO_WARNING_TOLERANCE = 0.01


def ratio_warnings(loop: Loop, ratios: dict[str, float]) -> list[str]:
    """A warning for each inlet ratio the loop does not hold that departs from stoichiometric."""
    held = {r.name for r in loop.ratio_limits}
    out = []
    for r in loop.ratios:
        value = ratios[r.name]
        if r.name in held or not math.isfinite(value):
            continue
        departure = value / r.stoichiometric - 1.0
        if abs(departure) <= RATIO_WARNING_TOLERANCE:
            continue
        why = ("no bound is set" if r.min_ratio is None and r.max_ratio is None else
               "nothing can hold it (a second make-up source or an adjustment source is needed)")
        out.append(f"reactor-inlet ratio {r.name!r} is {value:.4g}, {abs(departure):.1%} "
                   f"{'above' if departure > 0 else 'below'} stoichiometric "
                   f"{r.stoichiometric:.4g}; it is not held: {why}")
    return out


def unit_warnings(loop: Loop) -> list[str]:
    """A warning for a recovery unit whose return is taken at loop pressure for want of data."""
    if loop.recovery_return_fraction is None or loop.recovery_return_pressure_bar is not None:
        return []
    return [f"recovery unit {loop.recovery_name!r} has no return_pressure_bar: its return is "
            "taken at loop pressure and no recompression is charged"]


def rate_warnings(loop: Loop) -> list[str]:
    """A warning where a Temkin-Pyzhev rate works outside the conditions it was fitted over:
    the reactor temperature of an isothermal bed, each inlet temperature of adiabatic beds
    (their outlets are checked on the state, :func:`bed_warnings`); a rate whose
    constants the case gives carries no fitted range here."""
    i = loop.rate_reaction
    if i is None or loop.reactions[i].rate["law"] != "temkin_pyzhev":
        return []
    inlets = loop.reactions[i].rate.get("bed_inlet_temperatures_c")
    if not inlets:
        return kinetics.fitted_range_warnings(loop.reactor_temperature_k, loop.pressure_bar)
    # the pressure's warning once (at any temperature in range), then each bed's inlet
    t_lo, t_hi = kinetics.DYSON_SIMON_TEMPERATURE_RANGE_K
    out = kinetics.fitted_range_warnings(0.5 * (t_lo + t_hi), loop.pressure_bar)
    return out + [f"adiabatic bed {n} enters at {t + KELVIN:.4g} K, outside the {t_lo:g} to "
                  f"{t_hi:g} K the Temkin-Pyzhev rate of Dyson and Simon (1968) was fitted "
                  "over: it is extrapolated"
                  for n, t in enumerate(inlets, start=1) if not t_lo <= t + KELVIN <= t_hi]


def bed_warnings(loop: Loop, beds: list[dict]) -> list[str]:
    """A warning for each adiabatic bed whose outlet leaves the temperatures the rate of
    Dyson and Simon was fitted over (a Temkin-Pyzhev rate only)."""
    i = loop.rate_reaction
    if i is None or loop.reactions[i].rate["law"] != "temkin_pyzhev":
        return []
    t_lo, t_hi = kinetics.DYSON_SIMON_TEMPERATURE_RANGE_K
    return [f"adiabatic bed {n} leaves at {b['outlet_temperature_c'] + KELVIN:.4g} K, outside "
            f"the {t_lo:g} to {t_hi:g} K the Temkin-Pyzhev rate of Dyson and Simon (1968) was "
            "fitted over: it is extrapolated"
            for n, b in enumerate(beds, start=1)
            if not t_lo <= b["outlet_temperature_c"] + KELVIN <= t_hi]


def bed_table(loop: Loop, conversion: dict[int, float],
              flows: dict[str, dict[str, float]]) -> list[dict]:
    """Each adiabatic bed at a state: inlet and outlet temperature [degC], inlet, outlet
    and adiabatic equilibrium conversion of the key reactant counted from the converter
    feed [-], and its catalyst [m3]; in a quench converter also the share of the
    converter feed joining at its inlet [-] (bed 1: the preheated gas, the others: the
    quench gas).  Empty without beds."""
    beds = coefficients.beds_at(loop, conversion, flows["reactor_feed"])
    feed = sum(flows["reactor_feed"].values())
    return [{"inlet_temperature_c": b.inlet_temperature_k - KELVIN,
             "outlet_temperature_c": b.outlet_temperature_k - KELVIN,
             "inlet_conversion": b.inlet_conversion, "outlet_conversion": b.outlet_conversion,
             "equilibrium_conversion": b.equilibrium_conversion,
             "catalyst_m3": b.volume_per_feed_m3_h_kmol * feed,
             **({} if b.feed_share is None else {"feed_share": b.feed_share})} for b in beds]


def costing(loop: Loop) -> tuple[list, dict[str, float]]:
    """The cost lines of a loop and the values of its assumptions."""
    return costs.cost_lines(loop), costs.values(costs.assumptions(loop))


def make_state(loop: Loop, purge_fraction: float, conversion: dict[int, float],
               flows: dict[str, dict[str, float]], extents: list[float],
               sources: dict[str, float], work_kj_kmol: float, volume_per_feed: float,
               equilibrium_conversion: dict[int, float] | None = None,
               pricing: tuple | None = None, balances: bool = True,
               route: str = "") -> LoopState:
    """Evaluate quantities, costs and (with ``balances``) balance closure of a solved loop.

    ``pricing`` is the loop's (cost lines, assumption values) from :func:`costing`,
    for callers that evaluate many states of one loop; ``route`` says which
    solver found the flows.
    """
    v = LoopVariables(flow=_Values(flows), extent=extents, source=sources,
                      purge_fraction=purge_fraction, conversion=conversion)
    q = quantities(v, loop, work_kj_kmol, volume_per_feed)
    q.update({f"equilibrium_conversion:{i}": x_e
              for i, x_e in (equilibrium_conversion or {}).items()})
    cost_lines, table = pricing or costing(loop)
    lines = costs.evaluate(cost_lines, q, table)
    tac = float(sum(lines.values()))
    tonnes = q["product_t_h"] * loop.prices.hours_per_year
    feed = flows["reactor_feed"]
    total_feed = sum(feed.values())
    value = costs.reactant_value_per_kmol(loop, sources)
    lost = sum(flows[s][c] * value[c] for s in ("liquid_product", loop.disposal_stream)
               for c in value)
    key = loop.reactions[0].key_reactant
    fed_key = sum(flows[s][key] for s in loop.feed_streams)
    consumed_key = sum(-r.stoichiometry[key] * extents[i] for i, r in enumerate(loop.reactions)
                       if key in r.stoichiometry)
    species, element = _balances(loop, flows, extents) if balances else (math.nan, math.nan)
    beds = bed_table(loop, conversion, flows) if balances else []
    ratios = inlet_ratios(loop, flows)
    return LoopState(
        name=loop.name, purge_fraction=float(purge_fraction),
        conversion={i: float(x) for i, x in conversion.items()}, flows=flows,
        extents=[float(x) for x in extents], sources=dict(sources),
        quantities={k: float(x) for k, x in q.items()},
        costs={k: float(x) for k, x in lines.items()}, tac_per_year=tac,
        cost_per_tonne_product=tac / tonnes if tonnes > 0 else float("inf"),
        lost_reactant_memo_per_year=lost * loop.prices.hours_per_year,
        inert_fraction_reactor_inlet=(q["inert_kmol_h_reactor_inlet"] / total_feed
                                      if total_feed > 0 else 0.0),
        overall_conversion=consumed_key / fed_key if fed_key > 0 else 0.0,
        species_balance_error=species, element_balance_error=element,
        recycle_work_kj_kmol=float(work_kj_kmol),
        catalyst_volume_per_feed_m3_h_kmol=float(volume_per_feed),
        equilibrium_conversion=dict(equilibrium_conversion or {}), route=route,
        warnings=(costs.price_warnings(loop) + unit_warnings(loop) + rate_warnings(loop)
                  + ratio_warnings(loop, ratios) + bed_warnings(loop, beds)),
        inlet_ratio=ratios, beds=beds)


def with_balances(loop: Loop, state: LoopState) -> LoopState:
    """The state with its species and element balance closure evaluated."""
    species, element = _balances(loop, state.flows, state.extents)
    beds = bed_table(loop, state.conversion, state.flows)
    warnings = state.warnings + [w for w in bed_warnings(loop, beds) if w not in state.warnings]
    return dataclasses.replace(state, species_balance_error=species,
                               element_balance_error=element, beds=beds, warnings=warnings)
