"""The limits a case can set, stated once as a table of records.

Every other place that deals with limits derives from :func:`loop_limits`:
the Pyomo constraints (:func:`purgeplan.model.add_limits`), the margins that
tell a feasible state from an infeasible one, the list of binding limits, the
diagnosis of an infeasible alternative and the ``check`` report.

A limit bounds one quantity of :func:`purgeplan.equations.quantities`, or the
ratio of two (``per``): ``value = q[quantity] / q[per]``.  A ``"state"`` limit
is a constraint of the loop model; a ``"design"`` limit is a bound of the box
the outer search works in (the purge fraction, a sized reactor's conversion).
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass

from .loop import Loop

#: Relative distance from its bound within which a limit is reported as binding [-].
BINDING_TOLERANCE = 1e-6
#: Relative violation up to which a state still counts as meeting a limit [-].
FEASIBILITY_TOLERANCE = 1e-9


@dataclass(frozen=True)
class Limit:
    """One limit: ``value <= bound`` (sense "max") or ``value >= bound`` (sense "min").

    Attributes
    ----------
    name : str
        Name used in the JSON, the workbook and ``binding_constraints``.
    quantity, per : str
        Keys of the bounded quantity and of its denominator ("" for none).
    bound : float
        In the unit of ``value``.
    sense : {"max", "min"}
    kind : {"state", "design"}
    label : str
        The limit in plain words, for people.
    unit : str
    relaxed : bool
        Whether the limit is relaxed while the inner fixed point still moves
        the per-pass conversion (a ratio the blend holds is not: without it
        the blend has no sense to start from).
    in_model : bool
        Whether the limit is a constraint of the linear programme; one over
        the state's coefficients only (the approach to equilibrium) is
        checked on each converged state instead.
    """

    name: str
    quantity: str
    bound: float
    sense: str
    kind: str
    label: str
    unit: str = "-"
    per: str = ""
    relaxed: bool = True
    in_model: bool = True


def loop_limits(loop: Loop) -> tuple[Limit, ...]:
    """Every limit that applies to a loop, state limits first."""
    out = []
    if loop.max_inert_fraction_reactor_inlet is not None:
        out.append(Limit("max_inert_fraction_reactor_inlet", "inert_kmol_h_reactor_inlet",
                         loop.max_inert_fraction_reactor_inlet, "max", "state",
                         "the inert limit at the reactor inlet", "-", per="reactor_feed_kmol_h"))
    if loop.max_recycle_power_kw is not None:
        out.append(Limit("max_recycle_power_kw", "recycle_compressor_power_kw",
                         loop.max_recycle_power_kw, "max", "state",
                         "the recycle compressor power limit", "kW"))
    for r in loop.ratio_limits:
        form = {"quantity": f"inlet_ratio_numerator:{r.name}",
                "per": f"inlet_ratio_denominator:{r.name}"}
        for sense, bound in (("min", r.min_ratio), ("max", r.max_ratio)):
            if bound is not None:
                out.append(Limit(f"inlet_ratio_{sense}:{r.name}", bound=bound, sense=sense,
                                 kind="state", label=f"the {sense}imum reactor-inlet ratio "
                                 f"{r.name!r}", relaxed=False, **form))
    out += [Limit(f"supply_limit_kmol_h:{s.name}", f"source_kmol_h:{s.name}",
                  s.supply_limit_kmol_h, "max", "state", f"the supply limit of '{s.name}'",
                  "kmol/h") for s in loop.sources if s.supply_limit_kmol_h is not None]
    out += [Limit("purge_fraction_min", "purge_fraction", loop.purge_fraction_min, "min",
                  "design", "the smallest purge fraction allowed"),
            Limit("purge_fraction_max", "purge_fraction", loop.purge_fraction_max, "max",
                  "design", "the largest purge fraction allowed")]
    k = loop.sized_reaction
    if k is not None:
        approach = loop.reactions[k].approach_to_equilibrium_max
        if approach is not None:
            out.append(Limit("max_approach_to_equilibrium", f"per_pass_conversion:{k}", approach,
                             "max", "state", "the largest approach to equilibrium allowed",
                             per=f"equilibrium_conversion:{k}", in_model=False))
        lo, hi = loop.reactions[k].conversion_bounds
        out += [Limit("conversion_min", f"per_pass_conversion:{k}", lo, "min",
                      "design", "the smallest per-pass conversion allowed"),
                Limit("conversion_max", f"per_pass_conversion:{k}", hi, "max",
                      "design", "the largest per-pass conversion allowed")]
    return tuple(out)


def state_limits(loop: Loop) -> tuple[Limit, ...]:
    """The limits that are constraints of the loop model."""
    return tuple(lim for lim in loop_limits(loop) if lim.kind == "state")


def value(limit: Limit, q: Mapping[str, float]) -> float:
    """The bounded value of a limit at the quantities ``q``."""
    if not limit.per:
        return float(q[limit.quantity])
    den = float(q[limit.per])
    return float(q[limit.quantity]) / den if den > 0 else 0.0


def margin(limit: Limit, q: Mapping[str, float]) -> float:
    """Relative violation of a limit: negative when met, zero at the bound [-]."""
    v = value(limit, q)
    return v / limit.bound - 1.0 if limit.sense == "max" else 1.0 - v / limit.bound


def worst_margin(limits, q: Mapping[str, float]) -> float:
    """The largest relative violation over the limits (-inf with none) [-]."""
    return max((margin(lim, q) for lim in limits), default=-math.inf)


def binding(limits, q: Mapping[str, float]) -> list[str]:
    """Names of the limits at their bound within :data:`BINDING_TOLERANCE`."""
    return [lim.name for lim in limits if margin(lim, q) >= -BINDING_TOLERANCE]


def violated(limits, q: Mapping[str, float]) -> list[Limit]:
    """The limits a state breaks by more than :data:`FEASIBILITY_TOLERANCE`."""
    return [lim for lim in limits if margin(lim, q) > FEASIBILITY_TOLERANCE]


def describe(limit: Limit, q: Mapping[str, float]) -> str:
    """A limit against its value in plain words, for reports and diagnoses."""
    unit = "" if limit.unit == "-" else f" {limit.unit}"
    return (f"{limit.label} ({limit.bound:g}{unit}) against {value(limit, q):.4g}{unit}")


def ratio_hold(loop: Loop, name: str) -> str:
    """How the loop holds a reactor-inlet ratio: its bounds, the direct feed, or not at all."""
    for num, den, value in loop.inlet_ratios:
        if f"{num}/{den}" == name:
            return f"fixed at {value:g} by the direct feed rate"
    for r in loop.ratio_limits:
        if r.name == name:
            if r.min_ratio is not None and r.max_ratio is not None:
                return f"held between {r.min_ratio:g} and {r.max_ratio:g}"
            if r.min_ratio is not None:
                return f"held at {r.min_ratio:g} or above"
            return f"held at {r.max_ratio:g} or below"
    return "not held"
