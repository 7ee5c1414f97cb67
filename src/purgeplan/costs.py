"""The cost model: every line of the total annualised cost, stated once as a recipe.

Each cost line is a recipe over one physical quantity of the loop and named
assumption cells.  :func:`evaluate` turns recipes into numbers (or into Pyomo
expressions, since it only uses arithmetic), and the workbook writer turns the
same recipes into spreadsheet formulas over the assumptions sheet, so the
workbook re-prices exactly as the tool does.

Kinds of line (per year of operation, ``hours_per_year`` on stream):

``hourly``
    sign x quantity [unit/h] x price [currency/unit] x hours_per_year.
``capital``
    CRF(discount_rate, life_years) x reference_cost x cost_index_ratio
    x (quantity / reference_size)^exponent [x factor] (capacity scaling, Turton
    et al. eq. 7.1; capital recovery factor, Peters, Timmerhaus and West ch. 7;
    the factor is the reactor vessel's pressure factor, Turton et al. eq. 7.10).
``replacement``
    CRF(discount_rate, life) x quantity x price: a charge bought every
    ``life`` years, annualised like the other capital (catalyst replacement).

Counting reactant losses: the make-up gas is bought at its price, which
already pays for the reactant that leaves in the purge and dissolved in the
liquid product.  The value of that lost reactant is therefore reported as a
memo line (``lost_reactant_memo``) and is *not* added to the total, so nothing
is counted twice.  Each reactant in it is valued at its own source price
(:func:`reactant_value_per_kmol`), not at an average over all reactants.
"""

from __future__ import annotations

from collections.abc import Callable, Mapping
from dataclasses import dataclass

from .loop import Loop
from .physics.economics import capital_recovery_factor, scaled_capital_cost


@dataclass(frozen=True)
class Assumption:
    value: float
    unit: str
    label: str
    source: str = "case file"


@dataclass(frozen=True)
class CostLine:
    key: str
    label: str
    kind: str                 # "hourly" | "capital" | "replacement"
    quantity: str             # key of the physical quantity
    quantity_unit: str
    price: str = ""           # assumption key (hourly, replacement)
    life: str = ""            # assumption key (replacement)
    capital: str = ""         # prefix of the capital assumptions (capital)
    sign: float = 1.0
    factor: str = ""          # assumption key of a factor on the capital (capital)


def assumptions(loop: Loop) -> dict[str, Assumption]:
    """Every price and economic input of the loop as a named, labelled assumption."""
    p = loop.prices
    cur = p.currency
    out = {
        "hours_per_year": Assumption(p.hours_per_year, "h/year", "Hours on stream per year"),
        "discount_rate": Assumption(p.discount_rate, "-", "Discount rate"),
        "life_years": Assumption(p.life_years, "year", "Economic life"),
        "cost_index_ratio": Assumption(p.cost_index_ratio, "-",
                                       "Cost index now / cost index of reference costs"),
        "power_price_per_kwh": Assumption(p.power_price_per_kwh, f"{cur}/kWh", "Power price"),
        "fuel_price_per_gj": Assumption(p.fuel_price_per_gj, f"{cur}/GJ",
                                        "Fuel value of purge gas (LHV basis)"),
        "flare_cost_per_kmol": Assumption(p.flare_cost_per_kmol, f"{cur}/kmol",
                                          "Flaring cost of purge gas"),
        "product_price_per_t": Assumption(p.product_price_per_t, f"{cur}/t", "Product price"),
        "catalyst_price_per_m3": Assumption(p.catalyst_price_per_m3, f"{cur}/m3",
                                            "Catalyst price"),
        "catalyst_life_years": Assumption(p.catalyst_life_years, "year", "Catalyst life"),
    }
    if p.co2_price_per_t is not None:
        out["co2_price_per_t"] = Assumption(p.co2_price_per_t, f"{cur}/t",
                                            "Emission price per tonne of CO2")
    if p.reactor_pressure_factor != 1.0:
        out["reactor_pressure_factor"] = Assumption(
            p.reactor_pressure_factor, "-",
            "Reactor vessel pressure factor at loop pressure / at the reference pressure",
            "Turton et al. eq. 7.10")
    for name, price in sorted(p.source_price_per_kmol.items()):
        out[f"price_per_kmol:{name}"] = Assumption(price, f"{cur}/kmol", f"Price of {name}")
    caps = [("compressor", p.compressor_capital, "kW"), ("reactor", p.reactor_capital, "m3")]
    if p.recovery_capital is not None:
        caps.append(("recovery", p.recovery_capital, "kmol/h"))
        out["recovery_operating_cost_per_kmol"] = Assumption(
            p.recovery_operating_cost_per_kmol, f"{cur}/kmol",
            "Recovery unit operating cost per kmol of purge treated")
    if loop.recovery_export_fraction is not None:
        out["recovery_export_price_per_kmol"] = Assumption(
            p.recovery_export_price_per_kmol, f"{cur}/kmol",
            "Price of recovered gas sold out of the loop")
    if loop.cooling is not None:
        out["cooling_water_price_per_gj"] = Assumption(
            p.cooling_water_price_per_gj, f"{cur}/GJ", "Cooling water price per GJ of heat taken")
    if _refrigeration_capital(loop):
        caps.append(("refrigeration", p.refrigeration_capital, "kW"))
    for prefix, item, unit in caps:
        out[f"{prefix}_reference_cost"] = Assumption(item.reference_cost, cur,
                                                     f"{prefix.title()} reference installed cost")
        out[f"{prefix}_reference_size"] = Assumption(item.reference_size, unit,
                                                     f"{prefix.title()} reference size")
        out[f"{prefix}_exponent"] = Assumption(item.exponent, "-",
                                               f"{prefix.title()} capacity exponent")
    return out


def cost_lines(loop: Loop) -> list[CostLine]:
    """The cost lines that apply to this loop, in report order."""
    lines = [CostLine(f"feed:{s.name}", f"Feed: {s.name}", "hourly", f"source_kmol_h:{s.name}",
                      "kmol/h", price=f"price_per_kmol:{s.name}") for s in loop.sources]
    lines += [
        CostLine("recycle_power", "Recycle compression power", "hourly",
                 "recycle_compressor_power_kw", "kW", price="power_price_per_kwh"),
        CostLine("makeup_power", "Make-up compression power", "hourly",
                 "makeup_compressor_power_kw", "kW", price="power_price_per_kwh"),
        *_compressor_capital(loop),
        CostLine("reactor_capital", "Reactor and catalyst capital (annualised)", "capital",
                 "catalyst_volume_m3", "m3", capital="reactor",
                 factor="reactor_pressure_factor"
                 if loop.prices.reactor_pressure_factor != 1.0 else ""),
        CostLine("catalyst_replacement", "Catalyst replacement", "replacement",
                 "catalyst_volume_m3", "m3", price="catalyst_price_per_m3",
                 life="catalyst_life_years"),
    ]
    if loop.recovery_return_fraction is not None:
        lines += [
            CostLine("recovery_capital", "Recovery unit capital (annualised)", "capital",
                     "recovery_feed_kmol_h", "kmol/h", capital="recovery"),
            CostLine("recovery_operation", "Recovery unit operation", "hourly",
                     "recovery_feed_kmol_h", "kmol/h",
                     price="recovery_operating_cost_per_kmol"),
        ]
    if loop.destination == "fuel" and loop.fuel_capacity_gj_h is not None:
        lines += [
            CostLine("purge_fuel_credit", "Purge gas fuel credit (up to the fuel sink capacity)",
                     "hourly", "fuel_heat_gj_h", "GJ/h", price="fuel_price_per_gj", sign=-1.0),
            CostLine("purge_flaring", "Purge gas beyond the fuel sink capacity, flared",
                     "hourly", "flared_kmol_h", "kmol/h", price="flare_cost_per_kmol")]
    elif loop.destination == "fuel":
        lines.append(CostLine("purge_fuel_credit", "Purge gas fuel credit", "hourly",
                              "disposal_heat_gj_h", "GJ/h", price="fuel_price_per_gj",
                              sign=-1.0))
    else:
        lines.append(CostLine("purge_flaring", "Purge gas flaring", "hourly", "disposal_kmol_h",
                              "kmol/h", price="flare_cost_per_kmol"))
    if loop.prices.co2_price_per_t is not None:
        lines.append(CostLine("co2_emissions", "CO2 from purge gas burned or flared", "hourly",
                              "disposal_co2_t_h", "t/h", price="co2_price_per_t"))
    if loop.basis == "makeup":
        lines.append(CostLine("product_value", "Product value", "hourly", "product_t_h", "t/h",
                              price="product_price_per_t", sign=-1.0))
    return lines + _unit_lines(loop) + _cooling_lines(loop)


def _refrigeration_capital(loop: Loop) -> bool:
    return (loop.cooling is not None and loop.cooling.refrigerated
            and loop.prices.refrigeration_capital is not None)


def _cooling_lines(loop: Loop) -> list[CostLine]:
    """Cooling water, refrigeration power and the refrigeration unit (sized on its duty)."""
    if loop.cooling is None:
        return []
    lines = [CostLine("cooling_water", "Cooling water (separator cooling, refrigeration "
                      "condenser)", "hourly", "cooling_water_duty_gj_h", "GJ/h",
                      price="cooling_water_price_per_gj")]
    if loop.cooling.refrigerated:
        lines.append(CostLine("refrigeration_power", "Refrigeration compressor power", "hourly",
                              "refrigeration_power_kw", "kW", price="power_price_per_kwh"))
    if _refrigeration_capital(loop):
        lines.append(CostLine("refrigeration_capital", "Refrigeration unit capital (annualised)",
                              "capital", "refrigeration_duty_kw", "kW", capital="refrigeration"))
    return lines


def _unit_lines(loop: Loop) -> list[CostLine]:
    """Recovery recompression and export, direct feed compression and pumping, let-down gas."""
    lines = []
    if loop.recovery_recompression != "none":
        lines.append(CostLine("recovery_recompression_power",
                              "Recovery return recompression power", "hourly",
                              "recovery_recompression_power_kw", "kW",
                              price="power_price_per_kwh"))
    if loop.recovery_recompression == "own_compressor":
        lines.append(CostLine("recovery_recompression_capital",
                              "Recovery return compressor capital (annualised)", "capital",
                              "recovery_recompression_power_kw", "kW", capital="compressor"))
    if loop.recovery_export_fraction is not None:
        lines.append(CostLine("recovery_export_sales", "Recovered gas sold", "hourly",
                              "recovery_export_sold_kmol_h", "kmol/h",
                              price="recovery_export_price_per_kmol", sign=-1.0))
    direct = [s for s in loop.sources if s.enters == "reactor_feed"
              and s.compression_work_kj_kmol > 0.0]
    if any(s.phase == "gas" for s in direct):
        lines += [CostLine("direct_feed_compression_power", "Direct feed compression power",
                           "hourly", "direct_feed_compression_power_kw", "kW",
                           price="power_price_per_kwh"),
                  CostLine("direct_feed_compressor_capital",
                           "Direct feed compressor capital (annualised)", "capital",
                           "direct_feed_compression_power_kw", "kW", capital="compressor")]
    if any(s.phase == "liquid" for s in direct):
        lines.append(CostLine("direct_feed_pumping_power", "Direct feed pumping power",
                              "hourly", "direct_feed_pumping_power_kw", "kW",
                              price="power_price_per_kwh"))
    if loop.letdown_release_fraction is not None and loop.letdown_destination == "fuel":
        lines.append(CostLine("letdown_fuel_credit", "Let-down gas fuel credit", "hourly",
                              "letdown_heat_gj_h", "GJ/h", price="fuel_price_per_gj", sign=-1.0))
    elif loop.letdown_release_fraction is not None:
        lines.append(CostLine("letdown_flaring", "Let-down gas flaring", "hourly",
                              "letdown_kmol_h", "kmol/h", price="flare_cost_per_kmol"))
    if loop.letdown_release_fraction is not None and loop.prices.co2_price_per_t is not None:
        lines.append(CostLine("letdown_co2_emissions", "CO2 from let-down gas burned or flared",
                              "hourly", "letdown_co2_t_h", "t/h", price="co2_price_per_t"))
    return lines


def _compressor_capital(loop: Loop) -> list[CostLine]:
    """Two machines costed apart, or one casing with both duties on its total power."""
    if loop.compressor_arrangement == "one_casing":
        return [CostLine("compressor_capital",
                         "Compressor capital, one casing for make-up and recycle (annualised)",
                         "capital", "compressor_power_kw", "kW", capital="compressor")]
    return [
        CostLine("recycle_compressor_capital", "Recycle compressor capital (annualised)",
                 "capital", "recycle_compressor_power_kw", "kW", capital="compressor"),
        CostLine("makeup_compressor_capital", "Make-up compressor capital (annualised)",
                 "capital", _makeup_size(loop), "kW", capital="compressor")]


def _makeup_size(loop: Loop) -> str:
    """The make-up compressor's size: its make-up duty, plus a recovery return it recompresses."""
    return ("makeup_compressor_duty_kw" if loop.recovery_recompression == "makeup_compressor"
            else "makeup_compressor_power_kw")


def exact_capital(line: CostLine, size, a: Mapping[str, float]):
    """Annualised capital of one line at its size [currency/year]."""
    crf = capital_recovery_factor(a["discount_rate"], a["life_years"])
    cost = crf * scaled_capital_cost(a[f"{line.capital}_reference_cost"], size,
                                     a[f"{line.capital}_reference_size"],
                                     a[f"{line.capital}_exponent"], a["cost_index_ratio"])
    return cost * a[line.factor] if line.factor else cost


def evaluate(lines: list[CostLine], quantities: Mapping, a: Mapping[str, float],
             capital: Callable = exact_capital) -> dict:
    """Value of every cost line [currency/year]; numbers or expressions alike.

    Parameters
    ----------
    lines : list of CostLine
    quantities : mapping
        Physical quantities by key, in the units of each line.
    a : mapping
        Assumption values by key.
    capital : callable
        ``capital(line, size, a)``; the default is the exact capacity-scaling
        law, the solve layer passes a tangent of it for its linear programmes.
    """
    out = {}
    for line in lines:
        q = quantities[line.quantity]
        if line.kind == "hourly":
            out[line.key] = line.sign * q * a[line.price] * a["hours_per_year"]
        elif line.kind == "capital":
            out[line.key] = capital(line, q, a)
        else:
            out[line.key] = (capital_recovery_factor(a["discount_rate"], a[line.life])
                             * q * a[line.price])
    return out


def reactant_value_per_kmol(loop: Loop, sources: Mapping[str, float]) -> dict[str, float]:
    """What each reactant costs where it is bought [currency/kmol of the reactant].

    Each source's price is spread over the reactant it carries, mole for mole
    (a hydrogen source at 3.6 per kmol that is 97 % H2 gives H2 at 3.6 / 0.97);
    a reactant bought from several sources is valued at the average over what
    was bought (``sources``, kmol/h by source name).  A reactant no source
    carries (made in the loop) is valued at zero.
    """
    prices = loop.prices.source_price_per_kmol
    reactants = sorted({c for r in loop.reactions for c, nu in r.stoichiometry.items()
                        if nu < 0})
    spend = dict.fromkeys(reactants, 0.0)
    bought = dict.fromkeys(reactants, 0.0)
    for s in loop.sources:
        carried = sum(s.composition[c] for c in reactants)
        if carried <= 0.0:
            continue
        for c in reactants:
            kmol = sources.get(s.name, 0.0) * s.composition[c]
            bought[c] += kmol
            spend[c] += kmol * prices[s.name] / carried
    return {c: spend[c] / bought[c] if bought[c] > 0.0 else 0.0 for c in reactants}


def price_warnings(loop: Loop) -> list[str]:
    """A warning for every bought gas whose fuel value meets or exceeds its price.

    Sent to fuel, such a gas earns more as fuel than it costs, so the
    optimiser would buy it to burn it: the answer is an artefact of the
    prices, not a purge decision.  The fuel value is the gas's lower heating
    value per kmol times the fuel price.
    """
    if loop.destination != "fuel":
        return []
    p = loop.prices
    out = []
    for s in loop.sources:
        lhv_mj_kmol = sum(y * loop.data[c].lhv_kj_mol for c, y in s.composition.items())
        value = lhv_mj_kmol / 1000.0 * p.fuel_price_per_gj
        price = p.source_price_per_kmol[s.name]
        if value > 0.0 and value >= price:
            what = "make-up gas" if s.enters == "makeup" else "direct feed"
            out.append(f"{what} '{s.name}': fuel value {value:.4g} {p.currency}/kmol "
                       f"({lhv_mj_kmol:.1f} MJ/kmol at {p.fuel_price_per_gj:g} "
                       f"{p.currency}/GJ) meets or exceeds its price {price:.4g} "
                       f"{p.currency}/kmol: burning bought gas pays, so the optimum purge "
                       "follows from these prices, not from the loop")
    return out


def values(table: Mapping[str, Assumption]) -> dict[str, float]:
    return {k: v.value for k, v in table.items()}
