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
    x (quantity / reference_size)^exponent (capacity scaling, Turton et al.
    eq. 7.1; capital recovery factor, Peters, Timmerhaus and West ch. 7).
``replacement``
    quantity x price / life (catalyst replacement).

Counting reactant losses: the make-up gas is bought at its price, which
already pays for the reactant that leaves in the purge and dissolved in the
liquid product.  The value of that lost reactant is therefore reported as a
memo line (``lost_reactant_memo``) and is *not* added to the total, so nothing
is counted twice.
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
    for name, price in sorted(p.source_price_per_kmol.items()):
        out[f"price_per_kmol:{name}"] = Assumption(price, f"{cur}/kmol", f"Price of {name}")
    caps = [("compressor", p.compressor_capital, "kW"), ("reactor", p.reactor_capital, "m3")]
    if p.recovery_capital is not None:
        caps.append(("recovery", p.recovery_capital, "kmol/h"))
        out["recovery_operating_cost_per_kmol"] = Assumption(
            p.recovery_operating_cost_per_kmol, f"{cur}/kmol",
            "Recovery unit operating cost per kmol of purge treated")
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
        CostLine("recycle_compressor_capital", "Recycle compressor capital (annualised)",
                 "capital", "recycle_compressor_power_kw", "kW", capital="compressor"),
        CostLine("makeup_compressor_capital", "Make-up compressor capital (annualised)",
                 "capital", "makeup_compressor_power_kw", "kW", capital="compressor"),
        CostLine("reactor_capital", "Reactor and catalyst capital (annualised)", "capital",
                 "reactor_volume_m3", "m3", capital="reactor"),
        CostLine("catalyst_replacement", "Catalyst replacement", "replacement",
                 "reactor_volume_m3", "m3", price="catalyst_price_per_m3",
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
    if loop.destination == "fuel":
        lines.append(CostLine("purge_fuel_credit", "Purge gas fuel credit", "hourly",
                              "disposal_heat_gj_h", "GJ/h", price="fuel_price_per_gj",
                              sign=-1.0))
    else:
        lines.append(CostLine("purge_flaring", "Purge gas flaring", "hourly", "disposal_kmol_h",
                              "kmol/h", price="flare_cost_per_kmol"))
    if loop.basis == "makeup":
        lines.append(CostLine("product_value", "Product value", "hourly", "product_t_h", "t/h",
                              price="product_price_per_t", sign=-1.0))
    return lines


def exact_capital(line: CostLine, size, a: Mapping[str, float]):
    """Annualised capital of one line at its size [currency/year]."""
    crf = capital_recovery_factor(a["discount_rate"], a["life_years"])
    return crf * scaled_capital_cost(a[f"{line.capital}_reference_cost"], size,
                                     a[f"{line.capital}_reference_size"],
                                     a[f"{line.capital}_exponent"], a["cost_index_ratio"])


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
            out[line.key] = q * a[line.price] / a[line.life]
    return out


def values(table: Mapping[str, Assumption]) -> dict[str, float]:
    return {k: v.value for k, v in table.items()}
