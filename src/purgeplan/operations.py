"""What operations ask of an optimum: how long until the inert limit if something stops.

A pure function of an optimum state and its loop (solve layer).  With a
loop gas inventory in the case, :func:`time_to_inert_limit` gives the hours
from the optimum state until the inert fraction at the reactor inlet reaches
the case's limit

- ``purge_closed``: the purge valve shuts; inerts leave only dissolved in the
  liquid, and the make-up falls by the reactant the purge gas took out of
  the loop (production held);
- ``recovery_down``: the recovery unit trips; the purge stays, its gas all
  leaves the loop, and the make-up rises by the reactant the unit returned
  (production held), bringing more inerts.

The inventory balance is :func:`purgeplan.physics.inventory.hours_to_inert_limit`:
the loop gas well mixed at the reactor-inlet composition, each inert's
outlets in proportion to its own fraction, and the inerts fed in proportion
to the make-up gas (and direct feeds) bought.
"""

from __future__ import annotations

from .limits import BINDING_TOLERANCE
from .loop import Loop
from .physics.inventory import hours_to_inert_limit
from .results import LoopState


def _reactants(loop: Loop) -> set[str]:
    return {c for r in loop.reactions for c, nu in r.stoichiometry.items() if nu < 0}


def time_to_inert_limit(loop: Loop, state: LoopState) -> dict[str, float | None]:
    """Hours to the inert limit with the purge closed and with the recovery unit down [h].

    Each value is None where it does not apply (no gas inventory or no inert
    limit in the case; ``recovery_down`` without a recovery unit), and
    ``math.inf`` where the inert fraction settles below the limit.
    """
    out: dict[str, float | None] = {"purge_closed": None, "recovery_down": None}
    limit = loop.max_inert_fraction_reactor_inlet
    if loop.gas_inventory_kmol is None or limit is None or not loop.inerts:
        return out
    f = state.flows
    feed = f["reactor_feed"]
    total = sum(feed.values())
    inerts = [c for c in loop.inerts if feed[c] > 0.0]
    if total <= 0.0 or not inerts:
        return out
    y0 = [feed[c] / total for c in inerts]
    if sum(y0) >= limit * (1.0 - BINDING_TOLERANCE):
        # the optimum holds the inert level at its limit: any upset reaches it at once
        return {k: (0.0 if k == "purge_closed" or loop.recovery_return_fraction is not None
                    else None) for k in out}
    fed = {c: sum(f[s][c] for s in loop.feed_streams) for c in loop.components}
    reactants = _reactants(loop)
    bought = sum(fed[c] for c in reactants)
    liquid = [f["liquid_product"][c] / (feed[c] / total) for c in inerts]
    # purge closed: nothing leaves as purge gas, so the reactant it carried out
    # (purge less what a recovery unit returned) is no longer bought
    returned = f.get("recovery_return", {})
    purged_reactant = sum(f["purge"][c] - returned.get(c, 0.0) for c in reactants)
    scale = max(bought - purged_reactant, 0.0) / bought if bought > 0 else 1.0
    out["purge_closed"] = hours_to_inert_limit(
        loop.gas_inventory_kmol, y0, [fed[c] * scale for c in inerts], liquid, limit)
    if loop.recovery_return_fraction is not None:
        scale = (bought + sum(returned[c] for c in reactants)) / bought if bought > 0 else 1.0
        gone = [(f["purge"][c] + f["liquid_product"][c]) / (feed[c] / total) for c in inerts]
        out["recovery_down"] = hours_to_inert_limit(
            loop.gas_inventory_kmol, y0, [fed[c] * scale for c in inerts], gone, limit)
    return out
